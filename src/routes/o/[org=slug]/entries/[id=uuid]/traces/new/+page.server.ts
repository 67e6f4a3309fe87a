import { error, fail, isHttpError, redirect } from '@sveltejs/kit';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { recordEntryChange } from '$lib/server/entries/changes';
import { traceJson } from '$lib/server/entries/json';
import { findEntry } from '$lib/server/entries/queries';
import { mayEdit, readerFor } from '$lib/server/entries/rules';
import { deleteTrace, findTrace, insertTrace, listEntryTraces, MAX_TRACE_BYTES } from '$lib/server/traces/service';
import { MAX_UPLOAD_BYTES, readCaptureUpload } from '$lib/server/traces/upload';
import { uuid } from '$lib/schemas/traces';
import type { Actions, PageServerLoad } from './$types';

/** The fields a failed upload sends back into the form (never the file: browsers cannot refill it). */
const TOO_LARGE = `The upload is larger than ${Math.round(MAX_UPLOAD_BYTES / 1024 / 1024)} MB. Export fewer periods or a lower sample rate, then choose the file again.`;

const KEPT_FIELDS = ['role', 'label', 'sourcePeakV', 'sourceResistanceOhm', 'frequencyHz', 'senseOhm'] as const;

async function editableEntry(member: Awaited<ReturnType<typeof requireMember>>, id: string) {
	const entry = await findEntry(db, member.orgId, id, readerFor(member));
	if (!entry) error(404, { message: 'No such entry.' });
	if (!mayEdit(member, entry)) error(403, { message: 'Your role does not allow adding traces to this entry in its current state.' });
	return entry;
}

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'trace:upload');
	const entry = await editableEntry(member, params.id);
	const traces = await listEntryTraces(db, member.orgId, entry.id);
	return { entry: { id: entry.id, title: entry.title }, traces: traces.map(traceJson), maxBytes: MAX_TRACE_BYTES };
};

export const actions: Actions = {
	/** The no-JavaScript upload: the same reader and writer as the API, then back to the editor. */
	upload: async ({ params, request }) => {
		const member = await requireMember(params.org, 'trace:upload');
		const entry = await editableEntry(member, params.id);
		const tooLarge = (message: string) => fail(413, { values: {}, error: { code: 'too_large', message, line: null }, fieldErrors: { file: [message] } });
		// Refuse a declared oversize before copying the stream: a copy nobody reads would hold it open.
		if (Number(request.headers.get('content-length') ?? NaN) > MAX_UPLOAD_BYTES) return tooLarge(TOO_LARGE);
		// A copy of the body, read only when the upload is refused, to send the typed fields back.
		const copy = request.clone();
		let read: Awaited<ReturnType<typeof readCaptureUpload>>;
		try {
			read = await readCaptureUpload(request);
		} catch (e) {
			await copy.body?.cancel();
			if (isHttpError(e) && e.status === 413) return tooLarge(e.body.message);
			throw e;
		}
		if (!read.ok) {
			const values = await keptValues(copy);
			const body = (await read.response.json()) as { error: { code: string; message: string; reason?: string; line?: number | null; issues?: { path: string; message: string }[] } };
			const fieldErrors: Record<string, string[]> = {};
			for (const issue of body.error.issues ?? []) (fieldErrors[issue.path] ??= []).push(issue.message);
			return fail(read.response.status, {
				values,
				error: { code: body.error.reason ?? body.error.code, message: body.error.message, line: body.error.line ?? null },
				fieldErrors
			});
		}
		await copy.body?.cancel();
		await db.transaction().execute(async (trx) => {
			await insertTrace(trx, member.orgId, {
				entryId: entry.id,
				role: read.upload.role,
				label: read.upload.label,
				createdBy: member.userId,
				processed: read.processed,
				file: read.file
			});
			await recordEntryChange(trx, member.orgId, entry.id, 'upsert');
		});
		redirect(303, `/o/${member.orgSlug}/entries/${entry.id}/edit`);
	},

	/** Removes one of the entry's traces (the list's no-JavaScript delete). */
	delete: async ({ params, request }) => {
		const member = await requireMember(params.org, 'trace:upload');
		const entry = await editableEntry(member, params.id);
		const id = uuid.safeParse((await request.formData()).get('traceId'));
		const trace = id.success ? await findTrace(db, member.orgId, id.data) : undefined;
		if (!trace || trace.entryId !== entry.id) return fail(404, { deleteNotice: 'That trace is already gone.' });
		await db.transaction().execute(async (trx) => {
			await deleteTrace(trx, member.orgId, trace.id);
			await recordEntryChange(trx, member.orgId, entry.id, 'upsert');
		});
		return { deleteNotice: `Deleted the trace “${trace.label || trace.role}”.` };
	}
};

async function keptValues(copy: Request): Promise<Record<string, string>> {
	try {
		const form = await copy.formData();
		return Object.fromEntries(KEPT_FIELDS.flatMap((k) => (typeof form.get(k) === 'string' ? [[k, String(form.get(k))]] : [])));
	} catch {
		return {};
	}
}
