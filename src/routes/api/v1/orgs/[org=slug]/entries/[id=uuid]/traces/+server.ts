import { error, json } from '@sveltejs/kit';
import { apiError } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { traceJson } from '$lib/server/entries/json';
import { findEntry } from '$lib/server/entries/queries';
import { mayEdit, readerFor } from '$lib/server/entries/rules';
import { recordEntryChange } from '$lib/server/entries/changes';
import { findTrace, insertTrace, listEntryTraces } from '$lib/server/traces/service';
import { readCaptureUpload } from '$lib/server/traces/upload';
import type { RequestHandler } from './$types';

function notFound(): never {
	error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such entry.' } });
}

export const GET: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'trace:read');
	const entry = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!entry) notFound();
	return json({ traces: (await listEntryTraces(db, member.orgId, entry.id)).map(traceJson) });
};

/**
 * Uploads a capture to the entry: the server parses and analyses it again (it is the authority),
 * then stores the trace, the original file and the analysis in one transaction.
 */
export const POST: RequestHandler = async ({ params, request }) => {
	const member = await requireMember(params.org, 'trace:upload');
	const entry = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!entry) notFound();
	if (!mayEdit(member, entry)) return apiError(403, 'forbidden', 'Your role does not allow adding traces to this entry in its current state.');
	const read = await readCaptureUpload(request);
	if (!read.ok) return read.response;
	const id = await db.transaction().execute(async (trx) => {
		const traceId = await insertTrace(trx, member.orgId, {
			entryId: entry.id,
			role: read.upload.role,
			label: read.upload.label,
			createdBy: member.userId,
			processed: read.processed,
			file: read.file
		});
		await recordEntryChange(trx, member.orgId, entry.id, 'upsert');
		return traceId;
	});
	const trace = await findTrace(db, member.orgId, id);
	return json(
		{ trace: trace && traceJson(trace), canonical: { v: read.processed.curve.v, i: read.processed.curve.i } },
		{ status: 201, headers: { location: `/api/v1/orgs/${member.orgSlug}/traces/${id}` } }
	);
};
