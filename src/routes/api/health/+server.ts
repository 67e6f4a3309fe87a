import { json } from '@sveltejs/kit';
import { version } from '$app/environment';
import { appDatabaseStatus } from '$lib/server/db';
import type { RequestHandler } from './$types';

/** Liveness and readiness for load balancers and the start script. Public: reveals no data. */
export const GET: RequestHandler = async () => {
	const database = await appDatabaseStatus();
	return json(
		{ status: database.reachable ? 'ok' : 'unavailable', version, database },
		{ status: database.reachable ? 200 : 503, headers: { 'cache-control': 'no-store' } }
	);
};
