import { isHttpError } from '@sveltejs/kit';
import { z } from 'zod';
import { matchOptions, traceUpload, type TraceUpload } from '../../schemas/entries';
import { isSignatureError } from '../../signature/errors';
import { formDataOf, readBodyLimited } from '../api/body';
import { MAX_TRACE_BYTES, processCapture, type ProcessedTrace } from '../traces/service';

/** Room for the form fields (and a pasted or carried capture) around the largest capture file. */
export const MAX_MATCH_FORM_BYTES = MAX_TRACE_BYTES + 64 * 1024;
/**
 * A capture up to this size comes back with the result page (as `carried`), so a browser without
 * script can write an entry from it without choosing the file again; a file input cannot be refilled.
 */
export const MAX_CARRIED_BYTES = 512 * 1024;

/** The text fields of the match form, echoed back so nothing typed is lost. */
export interface MatchFormValues {
	sourcePeakV: string;
	sourceResistanceOhm: string;
	frequencyHz: string;
	senseOhm: string;
	componentKind: string;
	assembly: string;
	tags: string;
	traceRole: string;
	limit: string;
	/** Pasted capture text (kept only up to MAX_CARRIED_BYTES). */
	csv: string;
}

export type MatchForm =
	| {
			ok: true;
			values: MatchFormValues;
			upload: TraceUpload;
			options: z.infer<typeof matchOptions>;
			processed: ProcessedTrace;
			file: { name: string; bytes: Uint8Array };
			/** The capture's text, when small enough to carry to the next submit. */
			carried: { name: string; text: string } | null;
	  }
	| { ok: false; status: 400 | 413 | 422; values: MatchFormValues; fieldErrors: Record<string, string[]>; message: string };

const FIELDS = ['sourcePeakV', 'sourceResistanceOhm', 'frequencyHz', 'senseOhm', 'componentKind', 'assembly', 'tags', 'traceRole', 'limit'] as const;

function valuesOf(form: FormData | null): MatchFormValues {
	const get = (k: string) => {
		const v = form?.get(k);
		return typeof v === 'string' ? v.slice(0, 200) : '';
	};
	const csv = form?.get('csv');
	return {
		...(Object.fromEntries(FIELDS.map((k) => [k, get(k)])) as Omit<MatchFormValues, 'csv'>),
		csv: typeof csv === 'string' && csv.length <= MAX_CARRIED_BYTES ? csv : ''
	};
}

/**
 * Reads the match page's form — multipart with a `file`, or a pasted capture in `csv` (or one
 * carried over from the last result in `carried`), beside the test conditions and filters — and
 * runs the engine on it. The body is refused while it streams once it passes its size. Every
 * refusal says what to change, beside the field it concerns; nothing is stored here.
 */
export async function readMatchForm(request: Request): Promise<MatchForm> {
	let form: FormData;
	try {
		form = await formDataOf(request, await readBodyLimited(request, MAX_MATCH_FORM_BYTES));
	} catch (e) {
		if (isHttpError(e, 413)) {
			const message = `The capture is larger than ${Math.round(MAX_TRACE_BYTES / 1024 / 1024)} MB. Export fewer periods or a lower sample rate.`;
			return { ok: false, status: 413, values: valuesOf(null), fieldErrors: { file: [message] }, message };
		}
		if (isHttpError(e)) throw e;
		const message = 'The form could not be read. Choose the capture again and retry.';
		return { ok: false, status: 400, values: valuesOf(null), fieldErrors: { file: [message] }, message };
	}
	const values = valuesOf(form);
	const fail = (status: 400 | 413 | 422, fieldErrors: Record<string, string[]>, message: string): MatchForm => ({ ok: false, status, values, fieldErrors, message });

	const picked = form.get('file');
	const csv = form.get('csv');
	const carriedText = form.get('carried');
	let file: { name: string; bytes: Uint8Array };
	if (picked instanceof File && picked.size > 0) {
		file = { name: picked.name.slice(0, 200) || 'capture', bytes: new Uint8Array(await picked.arrayBuffer()) };
	} else if (typeof csv === 'string' && csv.trim() !== '') {
		file = { name: 'pasted.csv', bytes: new TextEncoder().encode(csv) };
	} else if (typeof carriedText === 'string' && carriedText.trim() !== '') {
		const name = form.get('carriedName');
		file = { name: typeof name === 'string' && name ? name.slice(0, 200) : 'capture.csv', bytes: new TextEncoder().encode(carriedText) };
	} else {
		return fail(400, { file: ['Choose a capture file, drop one here, or paste the CSV.'] }, 'There is no capture to match yet.');
	}
	if (file.bytes.byteLength > MAX_TRACE_BYTES) {
		const message = `The capture is larger than ${Math.round(MAX_TRACE_BYTES / 1024 / 1024)} MB. Export fewer periods or a lower sample rate.`;
		return fail(413, { file: [message] }, message);
	}

	// An emptied field counts as not given, so it gets its default or a plain "enter …" message.
	const fields = Object.fromEntries([...form.entries()].filter(([, v]) => typeof v === 'string' && v.trim() !== ''));
	const upload = traceUpload.safeParse({ ...fields, role: 'fault' });
	if (!upload.success) {
		return fail(400, z.flattenError(upload.error).fieldErrors as Record<string, string[]>, 'Check the test conditions.');
	}
	const options = matchOptions.safeParse({ ...fields, save: false });
	if (!options.success) {
		return fail(400, z.flattenError(options.error).fieldErrors as Record<string, string[]>, 'Check the filters.');
	}
	let processed: ProcessedTrace;
	try {
		processed = processCapture(file.bytes, upload.data);
	} catch (e) {
		if (!isSignatureError(e)) throw e;
		const field = e.code === 'missing_sense_resistance' ? 'senseOhm' : e.code === 'bad_conditions' ? 'sourcePeakV' : 'file';
		return fail(422, { [field]: [e.message] }, e.message);
	}
	const text = file.bytes.byteLength <= MAX_CARRIED_BYTES ? new TextDecoder('utf-8', { fatal: false }).decode(file.bytes) : null;
	return {
		ok: true,
		values,
		upload: upload.data,
		options: options.data,
		processed,
		file,
		carried: text !== null && !text.includes('\u0000') ? { name: file.name, text } : null
	};
}
