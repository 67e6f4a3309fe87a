import { json } from '@sveltejs/kit';
import { importOptions, MAX_BUNDLE_BYTES } from '$lib/schemas/bundle';
import { readBodyWithin } from '$lib/server/api/body';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { BundleContentError, importBundle } from '$lib/server/transfer/import';
import { readBundle } from '$lib/server/transfer/read';
import type { RequestHandler } from './$types';

function bundleError(status: number, message: string, issues: { path: string; message: string }[] = []) {
	return json({ error: { code: status === 413 ? 'too_large' : 'invalid_bundle', message, issues } }, { status, headers: { 'cache-control': 'no-store' } });
}

/**
 * Imports a bundle (the JSON an export produced) into this organisation, in one transaction.
 * `?onConflict=skip` (default) leaves entries whose title and assembly already exist alone;
 * `?onConflict=copy` imports them beside the originals as drafts titled "… (imported)".
 * Admins only: it writes many entries under the importer's name at once.
 */
export const POST: RequestHandler = async ({ params, request, url }) => {
	const member = await requireMember(params.org, 'org:settings');
	const read = readBundle(await readBodyWithin(request, MAX_BUNDLE_BYTES));
	if (!read.ok) return bundleError(read.status, read.message, read.issues);
	const options = importOptions.parse({ onConflict: url.searchParams.get('onConflict') ?? undefined });
	try {
		const report = await importBundle(db, member, read.bundle, options);
		return json({ report }, { headers: { 'cache-control': 'no-store' } });
	} catch (e) {
		if (e instanceof BundleContentError) return bundleError(422, e.message, [{ path: e.path, message: e.message }]);
		throw e;
	}
};
