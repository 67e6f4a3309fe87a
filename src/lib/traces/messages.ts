import type { SignatureErrorCode } from '../signature/errors';

/**
 * What to tell a technician when the engine refuses a capture or a model: one plain sentence per
 * error code saying what is wrong and what to do, with the engine's own detail beside it. Pure, so
 * the uploader, the no-JavaScript form and the tests share it.
 */
export const ENGINE_ERROR_SENTENCES: Readonly<Record<SignatureErrorCode, string>> = {
	empty: 'The file has no samples in it. Export the capture again and choose the file it writes.',
	binary: 'This is not a text capture. Export the capture as CSV or JSON and choose that file.',
	not_numeric: 'A value in the file is not a number. Check that row, or export the capture again.',
	too_few_samples: 'The capture is too short to trace a curve. Record at least one full period at a higher sample rate.',
	too_many_samples: 'The capture has more samples than we can store. Export fewer periods or a lower sample rate.',
	too_large: 'The file is too large. Export fewer periods or a lower sample rate.',
	not_finite: 'The file holds a value that is not a finite number (NaN or infinity). Export the capture again.',
	ragged: 'A row has a different number of columns from the rows before it. Check that row, or export the capture again.',
	flat: 'The signal does not change: the probes may not have been connected, or the channel was off. Capture again.',
	missing_sense_resistance: 'This oscilloscope export measures current across a sense resistor. Enter its resistance in ohms.',
	unknown_format: 'We could not tell what kind of capture this is. Use a V-I CSV, an oscilloscope CSV export or our JSON capture.',
	bad_json: 'The JSON capture is not in the shape we read. It needs "v" (volts) and "i" (amperes) arrays.',
	bad_conditions: 'The test conditions are out of range. Check the source voltage, source resistance and frequency.',
	no_period: 'We could not find a whole period of the test signal. Check the frequency, or capture for longer.',
	bad_model: 'The component model is not valid. Check its values.',
	no_convergence: 'The simulation did not settle on a curve for these values. Try other values or conditions.'
};

export interface EngineErrorLike {
	code: string;
	message?: string;
	line?: number | null;
}

export interface PlainError {
	/** The sentence to show, naming the line when the engine knew it. */
	sentence: string;
	/** The engine's own detail (without its line prefix), when it adds something. */
	detail: string | null;
}

/** Error codes of the API around the engine, in the same voice. */
const API_SENTENCES: Readonly<Record<string, string>> = {
	invalid_input: 'Some of the details need correcting.',
	forbidden: 'Your role does not allow adding traces to this entry now.',
	not_found: 'This entry no longer exists, or you cannot see it.',
	unauthenticated: 'Your session has ended. Sign in again, then save.'
};

/** The plain sentence for an engine (or API) error code, naming the line when known. */
export function plainError(e: EngineErrorLike): PlainError {
	const base =
		(ENGINE_ERROR_SENTENCES as Record<string, string>)[e.code] ??
		API_SENTENCES[e.code] ??
		'Something went wrong reading this capture. Try again, or export the capture again.';
	const sentence = e.line ? `Line ${e.line}: ${base}` : base;
	const detail = e.message ? e.message.replace(/^Line \d+: /, '') : null;
	return { sentence, detail: detail && detail !== base ? detail : null };
}

/** Bytes as a technician reads a file size: "20 MB", "512 kB". */
export function formatBytes(bytes: number): string {
	if (bytes >= 1024 * 1024) return `${Number((bytes / 1024 / 1024).toPrecision(3))} MB`;
	if (bytes >= 1024) return `${Number((bytes / 1024).toPrecision(3))} kB`;
	return `${bytes} bytes`;
}

/** The browser-side size refusal, with the server's limit. */
export function tooLargeMessage(size: number, maxBytes: number): string {
	return `This file is ${formatBytes(size)}; the largest capture we accept is ${formatBytes(maxBytes)}. Export fewer periods or a lower sample rate.`;
}
