import { error, json } from '@sveltejs/kit';
import { apiError } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { traceJson } from '$lib/server/entries/json';
import { findEntry } from '$lib/server/entries/queries';
import { mayEdit, readerFor } from '$lib/server/entries/rules';
import { recordEntryChange } from '$lib/server/entries/changes';
import { deleteTrace, findTrace, findTraceCurve, findTraceFile } from '$lib/server/traces/service';
import type { RequestHandler } from './$types';

function notFound(): never {
	error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such trace.' } });
}

/** The trace as the caller may see it: only through an entry they may read (query traces: their own). */
async function visibleTrace(member: Parameters<typeof readerFor>[0] & { orgId: string }, id: string) {
	const trace = await findTrace(db, member.orgId, id);
	if (!trace) return undefined;
	if (trace.entryId) {
		const entry = await findEntry(db, member.orgId, trace.entryId, readerFor(member));
		return entry ? { trace, entry } : undefined;
	}
	return can(member.role, 'entry:editAny') ? { trace, entry: undefined } : undefined;
}

/** `?view=canonical` adds the canonical curve; `?view=raw` downloads the original file. */
export const GET: RequestHandler = async ({ params, url }) => {
	const member = await requireMember(params.org, 'trace:read');
	const found = await visibleTrace(member, params.trace);
	if (!found) notFound();
	const view = url.searchParams.get('view');
	if (view === 'raw') {
		const file = await findTraceFile(db, member.orgId, params.trace);
		if (!file) return apiError(404, 'not_found', 'This trace was simulated: it has no original file.');
		return new Response(new Uint8Array(file.data), {
			headers: {
				'content-type': 'application/octet-stream',
				'content-disposition': `attachment; filename="${file.name.replace(/[^\w.-]+/g, '_')}"`
			}
		});
	}
	const body: Record<string, unknown> = { trace: traceJson(found.trace) };
	if (view === 'canonical') {
		const curve = await findTraceCurve(db, member.orgId, params.trace);
		body.canonical = curve && { v: curve.v, i: curve.i, vn: curve.vn, in: curve.in, periods: curve.periods, periodSpread: curve.periodSpread };
	}
	return json(body);
};

export const DELETE: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'trace:upload');
	const found = await visibleTrace(member, params.trace);
	if (!found) notFound();
	if (found.entry && !mayEdit(member, found.entry)) return apiError(403, 'forbidden', 'Your role does not allow changing this entry in its current state.');
	await db.transaction().execute(async (trx) => {
		await deleteTrace(trx, member.orgId, params.trace);
		if (found.entry) await recordEntryChange(trx, member.orgId, found.entry.id, 'upsert');
	});
	return new Response(null, { status: 204 });
};
