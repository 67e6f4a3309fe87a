import { traceUpload, type TraceUpload } from '../../schemas/entries';
import { isSignatureError } from '../../signature/errors';
import { apiError, toApiIssues } from '../api/errors';
import { formDataOf, readBodyLimited } from '../api/body';
import type { Kysely } from 'kysely';
import type { Database } from '../db/connect';
import { recordEntryChange } from '../entries/changes';
import { insertTrace, MAX_TRACE_BYTES, processCapture, type ProcessedTrace } from './service';

/** Room for the form fields around the largest capture file. */
export const MAX_UPLOAD_BYTES = MAX_TRACE_BYTES + 64 * 1024;

export type UploadResult =
	| {
			ok: true;
			upload: TraceUpload;
			processed: ProcessedTrace;
			file: { name: string; bytes: Uint8Array };
			/** Every other field sent with the capture, for the caller's own options. */
			fields: Record<string, unknown>;
	  }
	| { ok: false; response: Response };

/**
 * Reads a capture upload — multipart (`file` + condition fields) or JSON (`capture` as our JSON
 * capture object or as file text, beside the same fields) — and runs the engine on it. Bad input
 * becomes a 400/413/422 response with a stable code; nothing is stored here.
 */
export async function readCaptureUpload(request: Request): Promise<UploadResult> {
	const body = await readBodyLimited(request, MAX_UPLOAD_BYTES);
	const type = request.headers.get('content-type') ?? '';
	let fields: Record<string, unknown>;
	let file: { name: string; bytes: Uint8Array };
	if (type.startsWith('multipart/form-data')) {
		const form = await formDataOf(request, body);
		const f = form.get('file');
		if (!(f instanceof File) || f.size === 0) {
			return { ok: false, response: apiError(400, 'invalid_input', 'Choose a capture file to upload.', [{ path: 'file', message: 'Choose a capture file.' }]) };
		}
		fields = Object.fromEntries([...form.entries()].filter(([k]) => k !== 'file'));
		file = { name: f.name.slice(0, 200) || 'capture', bytes: new Uint8Array(await f.arrayBuffer()) };
	} else {
		let parsed: unknown;
		try {
			parsed = JSON.parse(new TextDecoder().decode(body));
		} catch {
			return { ok: false, response: apiError(400, 'invalid_input', 'Send multipart/form-data with a file, or a JSON object with a "capture".') };
		}
		if (!parsed || typeof parsed !== 'object' || !('capture' in parsed)) {
			return { ok: false, response: apiError(400, 'invalid_input', 'The JSON body needs a "capture": samples as {"v":[…],"i":[…]} or the file text.', [{ path: 'capture', message: 'Required.' }]) };
		}
		const { capture, ...rest } = parsed as { capture: unknown };
		fields = rest;
		const text = typeof capture === 'string' ? capture : JSON.stringify(capture);
		file = { name: typeof (rest as { fileName?: unknown }).fileName === 'string' ? String((rest as { fileName: string }).fileName).slice(0, 200) : 'capture.json', bytes: new TextEncoder().encode(text) };
	}
	const upload = traceUpload.safeParse(fields);
	if (!upload.success) {
		return { ok: false, response: apiError(400, 'invalid_input', 'Check the test conditions.', toApiIssues(upload.error.issues)) };
	}
	try {
		return { ok: true, upload: upload.data, processed: processCapture(file.bytes, upload.data), file, fields };
	} catch (e) {
		if (!isSignatureError(e)) throw e;
		const issue = { path: 'file', message: e.message };
		return {
			ok: false,
			response: new Response(JSON.stringify({ error: { code: 'invalid_capture', message: e.message, reason: e.code, line: e.line ?? null, issues: [issue] } }), {
				status: 422,
				headers: { 'content-type': 'application/json', 'cache-control': 'no-store' }
			})
		};
	}
}

/**
 * Stores a read capture as a trace of the entry and tells the match and search indexes, in one
 * transaction (the API and the no-script page both use this; simulated references have
 * `attachSimulatedReference`). Returns the trace id.
 */
export async function attachUploadedTrace(
	db: Kysely<Database>,
	member: { orgId: string; userId: string },
	entryId: string,
	read: Extract<UploadResult, { ok: true }>
): Promise<string> {
	return db.transaction().execute(async (trx) => {
		const traceId = await insertTrace(trx, member.orgId, {
			entryId,
			role: read.upload.role,
			label: read.upload.label,
			createdBy: member.userId,
			processed: read.processed,
			file: read.file
		});
		await recordEntryChange(trx, member.orgId, entryId, 'upsert');
		return traceId;
	});
}
