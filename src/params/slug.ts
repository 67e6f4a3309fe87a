import type { ParamMatcher } from '@sveltejs/kit';
import { SLUG_PATTERN } from '$lib/schemas/orgs';

/** Organisation slugs as the database allows them; anything else 404s before a load runs. */
export const match: ParamMatcher = (param) => SLUG_PATTERN.test(param);
