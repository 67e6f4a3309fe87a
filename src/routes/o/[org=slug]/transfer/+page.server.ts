import { fail } from '@sveltejs/kit';
import { importOptions, MAX_BUNDLE_BYTES } from '$lib/schemas/bundle';
import { formDataOf, readBodyWithin } from '$lib/server/api/body';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { BundleContentError, importBundle } from '$lib/server/transfer/import';
import { BUNDLE_TOO_LARGE, readBundle } from '$lib/server/transfer/read';
import type { Actions, PageServerLoad } from './$types';

/** Export the organisation as a bundle, or import one (admins): the page around the two endpoints. */
export const load: PageServerLoad = async ({ params }) => {
	await requireMember(params.org, 'org:settings');
	return { maxBytes: MAX_BUNDLE_BYTES };
};

type Issue = { path: string; message: string };
const refuse = (status: number, error: string, onConflict: 'skip' | 'copy' = 'skip', issues: Issue[] = []) =>
	fail(status, { error, issues: issues.slice(0, 5), onConflict });

export const actions: Actions = {
	import: async ({ params, request }) => {
		const member = await requireMember(params.org, 'org:settings');
		// The file plus a few fields: the multipart framing is small next to the limit.
		const body = await readBodyWithin(request, MAX_BUNDLE_BYTES + 64 * 1024);
		if (!body) return refuse(413, BUNDLE_TOO_LARGE);
		let form: FormData;
		try {
			form = await formDataOf(request, body);
		} catch {
			return refuse(400, 'The upload could not be read. Choose the bundle file again.');
		}
		const options = importOptions.parse({ onConflict: form.get('onConflict') ?? undefined });
		const file = form.get('bundle');
		if (!(file instanceof File) || file.size === 0) return refuse(400, 'Choose the bundle file (.json) an export produced.', options.onConflict);
		const read = readBundle(new Uint8Array(await file.arrayBuffer()));
		if (!read.ok) return refuse(read.status, read.message, options.onConflict, read.issues);
		try {
			const report = await importBundle(db, member, read.bundle, options);
			return { report, from: read.bundle.source.organisation.name, onConflict: options.onConflict };
		} catch (e) {
			if (e instanceof BundleContentError) return refuse(422, e.message, options.onConflict, [{ path: e.path, message: e.message }]);
			throw e;
		}
	}
};
