import { describe, expect, it } from 'vitest';
import { analyseCapture } from '../signature/index';
import { SignatureError, type SignatureErrorCode } from '../signature/errors';
import { parseModel, simulate } from '../signature/simulate';
import { ENGINE_ERROR_SENTENCES, formatBytes, plainError, tooLargeMessage } from './messages';

// Every code of the SignatureErrorCode union (src/lib/signature/errors.ts). The Record type of
// ENGINE_ERROR_SENTENCES already makes the compiler demand one sentence per code; this list makes a
// code removed from the mapping fail here too.
const CODES: SignatureErrorCode[] = [
	'empty',
	'binary',
	'not_numeric',
	'too_few_samples',
	'too_many_samples',
	'too_large',
	'not_finite',
	'ragged',
	'flat',
	'missing_sense_resistance',
	'unknown_format',
	'bad_json',
	'bad_conditions',
	'no_period',
	'bad_model',
	'no_convergence'
];

const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

function engineError(run: () => unknown): SignatureError {
	try {
		run();
	} catch (e) {
		if (e instanceof SignatureError) return e;
		throw e;
	}
	throw new Error('the engine accepted the input');
}

describe('plain error sentences', () => {
	it('has a distinct sentence for every engine error code, each saying what to do', () => {
		expect(Object.keys(ENGINE_ERROR_SENTENCES).sort()).toEqual([...CODES].sort());
		const sentences = CODES.map((c) => ENGINE_ERROR_SENTENCES[c]);
		expect(new Set(sentences).size).toBe(CODES.length);
		for (const s of sentences) {
			expect(s).toMatch(/\.$/);
			expect(s).not.toMatch(/_/); // no code names leak into the words
		}
	});

	it.each(CODES)('maps %s, and names the line when the engine knows it', (code) => {
		const withLine = plainError({ code, message: `Line 12: detail for ${code}`, line: 12 });
		expect(withLine.sentence).toBe(`Line 12: ${ENGINE_ERROR_SENTENCES[code]}`);
		expect(withLine.detail).toBe(`detail for ${code}`);
		expect(plainError({ code }).sentence).toBe(ENGINE_ERROR_SENTENCES[code]);
	});

	it('maps errors the engine really throws', () => {
		// A V-I CSV with one row of three values: refused naming that line (line 1 is the header).
		const rows = ['voltage (V),current (A)', ...Array.from({ length: 40 }, (_, k) => `${Math.sin(k / 3)},${Math.sin(k / 3) / 1000}`)];
		rows[8] = '0.5,1,2';
		const e = engineError(() => analyseCapture(rows.join('\n'), conditions));
		const plain = plainError(e);
		expect(e.code).toBe('ragged');
		expect(e.line).toBe(9);
		expect(plain.sentence).toBe(`Line 9: ${ENGINE_ERROR_SENTENCES.ragged}`);
		expect(plain.detail).toMatch(/3 values/);

		expect(plainError(engineError(() => analyseCapture('', conditions))).sentence).toBe(ENGINE_ERROR_SENTENCES.empty);
		expect(plainError(engineError(() => parseModel({ kind: 'resistor', ohms: -1 }))).sentence).toBe(ENGINE_ERROR_SENTENCES.bad_model);
		expect(plainError(engineError(() => simulate({ kind: 'short' }, { ...conditions, frequencyHz: 0 }))).sentence).toBe(ENGINE_ERROR_SENTENCES.bad_conditions);
	});

	it('speaks for the API errors around the engine, and falls back for unknown codes', () => {
		expect(plainError({ code: 'forbidden' }).sentence).toMatch(/role/);
		expect(plainError({ code: 'something_new' }).sentence).toMatch(/Try again/);
	});
});

describe('size messages', () => {
	it('formats sizes in kB and MB (1 kB = 1024 bytes here, as file managers commonly show; common practice, no source)', () => {
		expect(formatBytes(20 * 1024 * 1024)).toBe('20 MB');
		expect(formatBytes(1536)).toBe('1.5 kB');
		expect(tooLargeMessage(21 * 1024 * 1024, 20 * 1024 * 1024)).toMatch(/21 MB.*20 MB/);
	});
});
