import { error, fail, isHttpError, redirect } from '@sveltejs/kit';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { recordEntryChange } from '$lib/server/entries/changes';
import { traceJson } from '$lib/server/entries/json';
import { findEntry } from '$lib/server/entries/queries';
import { mayEdit, readerFor } from '$lib/server/entries/rules';
import { deleteTrace, findTrace, listEntryTraces, MAX_TRACE_BYTES } from '$lib/server/traces/service';
import { attachSimulatedReference, readSimulationForm } from '$lib/server/traces/simulation';
import { attachUploadedTrace, MAX_UPLOAD_BYTES, readCaptureUpload } from '$lib/server/traces/upload';
import { formDataOf, readBodyWithin } from '$lib/server/api/body';
import { uuid } from '$lib/schemas/traces';
import { SIMULATION_FIELDS } from '$lib/traces/simulation';
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

/** The simulation form's fields are few and short; anything this large is not from the form. */
const MAX_SIMULATION_FORM_BYTES = 16 * 1024;

export const load: PageServerLoad = async ({ params, url }) => {
	const member = await requireMember(params.org, 'trace:upload');
	const entry = await editableEntry(member, params.id);
	const traces = await listEntryTraces(db, member.orgId, entry.id);
	// Without script, choosing another part reloads the page with the form's fields in the query
	// (`?kind=capacitor&…`), so that part's fields show with everything typed so far.
	const simulation: Record<string, string> = {};
	for (const name of SIMULATION_FIELDS) {
		const v = url.searchParams.get(name);
		if (v !== null) simulation[name] = v.slice(0, 200);
	}
	const attachedId = url.searchParams.get('attached');
	const attached = attachedId ? traces.find((t) => t.id === attachedId) : undefined;
	return {
		entry: { id: entry.id, title: entry.title },
		traces: traces.map(traceJson),
		maxBytes: MAX_TRACE_BYTES,
		simulation,
		attached: attached ? { id: attached.id, label: attached.label, class: attached.class } : null
	};
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
		await attachUploadedTrace(db, member, entry.id, read);
		redirect(303, `/o/${member.orgSlug}/entries/${entry.id}/edit`);
	},

	/**
	 * The no-JavaScript simulation picker: the same check and writer as the API's `simulate` body,
	 * then back here, where the stored trace is listed and linked to the entry page.
	 */
	simulate: async ({ params, request }) => {
		const member = await requireMember(params.org, 'trace:upload');
		const entry = await editableEntry(member, params.id);
		const refused = (status: number, sentence: string) => fail(status, { simulation: { values: {}, fieldErrors: {}, error: { sentence, detail: null } } });
		const body = await readBodyWithin(request, MAX_SIMULATION_FORM_BYTES);
		if (!body) return refused(413, 'The form sent more than a simulation needs. Reload the page and fill the form again.');
		const form = await formDataOf(request, body).catch(() => null);
		if (!form) return refused(400, 'The simulation form did not arrive as a form. Reload the page and try again.');
		const read = readSimulationForm(form);
		if (!read.ok) {
			const { status, ...failure } = read.failure;
			return fail(status, { simulation: failure });
		}
		const id = await attachSimulatedReference(db, member, entry.id, read.reference);
		redirect(303, `/o/${member.orgSlug}/entries/${entry.id}/traces/new?attached=${id}`);
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
