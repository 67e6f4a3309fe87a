import { error, json } from '@sveltejs/kit';
import { apiError } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { traceJson } from '$lib/server/entries/json';
import { findEntry } from '$lib/server/entries/queries';
import { mayEdit, readerFor } from '$lib/server/entries/rules';
import { findTrace, listEntryTraces } from '$lib/server/traces/service';
import { attachSimulatedReference, readSimulationUpload } from '$lib/server/traces/simulation';
import { attachUploadedTrace, MAX_UPLOAD_BYTES, readCaptureUpload } from '$lib/server/traces/upload';
import { readBodyLimited } from '$lib/server/api/body';
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
 * A JSON body with `simulate: { model }` (and the conditions) asks for a simulated known-good
 * reference instead of a capture; anything else goes to the capture reader unchanged.
 */
async function readSimulationRequest(request: Request): Promise<{ simulation: ReturnType<typeof readSimulationUpload> } | { request: Request }> {
	if (!(request.headers.get('content-type') ?? '').startsWith('application/json')) return { request };
	const body = await readBodyLimited(request, MAX_UPLOAD_BYTES);
	let parsed: unknown;
	try {
		parsed = JSON.parse(new TextDecoder().decode(body));
	} catch {
		parsed = undefined;
	}
	if (parsed && typeof parsed === 'object' && 'simulate' in parsed) return { simulation: readSimulationUpload(parsed) };
	return { request: new Request(request.url, { method: 'POST', headers: request.headers, body }) };
}

/**
 * Uploads a capture to the entry: the server parses and analyses it again (it is the authority),
 * then stores the trace, the original file and the analysis in one transaction. With
 * `simulate: { model }` in a JSON body it stores the model's predicted curve instead, as a
 * simulated known-good reference.
 */
export const POST: RequestHandler = async ({ params, request }) => {
	const member = await requireMember(params.org, 'trace:upload');
	const entry = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!entry) notFound();
	if (!mayEdit(member, entry)) return apiError(403, 'forbidden', 'Your role does not allow adding traces to this entry in its current state.');
	const incoming = await readSimulationRequest(request);
	const read = 'simulation' in incoming ? incoming.simulation : await readCaptureUpload(incoming.request);
	if (!read.ok) return read.response;
	const id =
		'model' in read
			? await attachSimulatedReference(db, member, entry.id, read)
			: await attachUploadedTrace(db, member, entry.id, read);
	const trace = await findTrace(db, member.orgId, id);
	return json(
		{ trace: trace && traceJson(trace), canonical: { v: read.processed.curve.v, i: read.processed.curve.i } },
		{ status: 201, headers: { location: `/api/v1/orgs/${member.orgSlug}/traces/${id}` } }
	);
};
