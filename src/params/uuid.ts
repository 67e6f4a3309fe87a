import type { ParamMatcher } from '@sveltejs/kit';

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** Row ids; anything else 404s before a load runs (and never reaches Postgres as a bad uuid). */
export const match: ParamMatcher = (param) => UUID.test(param);
