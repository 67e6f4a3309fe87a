import { error, fail, redirect } from '@sveltejs/kit';
import { diffRevisions } from '$lib/entries/revision-diff';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { findEntry, listRevisions } from '$lib/server/entries/queries';
import { readerFor } from '$lib/server/entries/rules';
import { updateEntry } from '$lib/server/entries/service';
import type { Actions, PageServerLoad } from './$types';

const versionParam = (v: string | null) => (v && /^\d{1,9}$/.test(v) ? Number(v) : undefined);

/** Every saved version of an entry, and what changed between any two of them (`?from=2&to=5`). */
export const load: PageServerLoad = async ({ params, url }) => {
	const member = await requireMember(params.org, 'entry:read');
	const entry = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!entry) error(404, 'Not found');
	const revisions = await listRevisions(db, member.orgId, entry.id);
	const versions = revisions.map((r) => r.version);
	const latest = versions[0] ?? entry.version;
	let to = versionParam(url.searchParams.get('to')) ?? latest;
	let from = versionParam(url.searchParams.get('from')) ?? versions.find((v) => v < to) ?? to;
	if (!versions.includes(to)) to = latest;
	if (!versions.includes(from)) from = versions.find((v) => v < to) ?? to;
	const byVersion = new Map(revisions.map((r) => [r.version, r]));
	const a = byVersion.get(from);
	const b = byVersion.get(to);
	return {
		entry: { id: entry.id, title: entry.title, version: entry.version },
		revisions: revisions.map((r) => ({ version: r.version, savedBy: r.savedByName ?? 'a former member', savedAt: r.savedAt.toISOString(), note: r.note })),
		from,
		to,
		changes: a && b ? diffRevisions(a.snapshot, b.snapshot) : [],
		mayRestore: can(member.role, 'entry:editAny')
	};
};

export const actions: Actions = {
	/** Makes an old version's content the newest version (the history keeps everything). */
	restore: async ({ params, request }) => {
		const member = await requireMember(params.org, 'entry:editAny');
		const form = await request.formData();
		const restore = versionParam(String(form.get('restore') ?? ''));
		const expected = versionParam(String(form.get('version') ?? ''));
		if (restore === undefined || expected === undefined) return fail(400, { message: 'Choose a version to restore.' });
		const revision = (await listRevisions(db, member.orgId, params.id)).find((r) => r.version === restore);
		if (!revision) error(404, 'Not found');
		const result = await updateEntry(db, member, params.id, { ...revision.snapshot, version: expected }, `Restored version ${restore}`);
		if (result.kind === 'not_found') error(404, 'Not found');
		if (result.kind === 'forbidden') return fail(403, { message: 'Your role does not allow editing this entry.' });
		if (result.kind === 'conflict') {
			return fail(409, {
				message: `Someone saved version ${result.current.version} while you were looking. Nothing was restored; look at the newest changes and try again.`
			});
		}
		redirect(303, `/o/${member.orgSlug}/entries/${params.id}/history?restored=${restore}`);
	}
};
