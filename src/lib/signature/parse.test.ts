import { describe, expect, it } from 'vitest';
import { SignatureError } from './errors';
import { classifyHeader, parseCapture, parseQuantity } from './parse';
import type { ParseOptions, SignatureErrorCode } from './index';

// Sources for the expected values:
// - unit prefixes m = 1e-3, µ = 1e-6, n = 1e-9, k = 1e3: the SI Brochure (BIPM, 9th edition, 2019);
// - I = V/R for the sense resistor: Ohm's law;
// - delimited text and its quoting: RFC 4180; JSON: RFC 8259; the byte-order mark U+FEFF: the
//   Unicode Standard, §23.8;
// - decimal commas with semicolon delimiters, `#` comments, scope preambles before a header:
//   common practice of bench exports, no source.

const N = 64;
/** Known samples: v = 5 sin, i = 2 mA cos (distinct, so swaps and scales are visible). */
const V = Array.from({ length: N }, (_, k) => Number((5 * Math.sin((2 * Math.PI * k) / 20)).toFixed(4)));
const I = Array.from({ length: N }, (_, k) => Number((0.002 * Math.cos((2 * Math.PI * k) / 20)).toFixed(7)));

function lines(fn: (k: number) => string): string[] {
	return Array.from({ length: N }, (_, k) => fn(k));
}

function expectClose(actual: number[], expected: number[], rel = 1e-9): void {
	expect(actual.length).toBe(expected.length);
	for (let k = 0; k < expected.length; k++) {
		expect(Math.abs(actual[k] - expected[k])).toBeLessThanOrEqual(rel * Math.max(1e-12, Math.abs(expected[k])) + 1e-15);
	}
}

function expectError(fn: () => unknown, code: SignatureErrorCode, line?: number): SignatureError {
	try {
		fn();
	} catch (e) {
		expect(e).toBeInstanceOf(SignatureError);
		const err = e as SignatureError;
		expect(err.code).toBe(code);
		if (line !== undefined) {
			expect(err.line).toBe(line);
			expect(err.message).toContain(`Line ${line}`);
		}
		expect(err.message.length).toBeGreaterThan(20);
		return err;
	}
	throw new Error(`expected a ${code} error`);
}

describe('parseCapture: two-column V-I files', () => {
	const cases: [string, string, string, ParseOptions?][] = [
		// [label, header, row template (values in the header's units), options]
		['voltage_V,current_mA', 'voltage_V,current_mA', 'mA'],
		['V,I (SI defaults)', 'V,I', 'A'],
		['U [V];I [mA] with decimal commas', 'U [V];I [mA]', 'mA;'],
		['Voltage (V)\tCurrent (µA)', 'Voltage (V)\tCurrent (µA)', 'uA\t'],
		['Greek mu: I (μA)', 'V,I (μA)', 'uA'],
		['current (mA) before voltage (V)', 'current (mA),voltage (V)', 'mA-swapped'],
		['mV and mA as bare units', 'mV,mA', 'mV-mA'],
		['I/uA with slash', 'V,I/uA', 'uA']
	];
	it.each(cases)('reads %s', (_label, header, mode) => {
		const rows = lines((k) => {
			const v = V[k];
			const i = I[k];
			switch (mode) {
				case 'mA':
					return `${v},${i * 1e3}`;
				case 'A':
					return `${v},${i}`;
				case 'mA;':
					return `${String(v).replace('.', ',')};${String(i * 1e3).replace('.', ',')}`;
				case 'uA\t':
					return `${v}\t${i * 1e6}`;
				case 'uA':
					return `${v},${i * 1e6}`;
				case 'mA-swapped':
					return `${i * 1e3},${v}`;
				case 'mV-mA':
					return `${v * 1e3},${i * 1e3}`;
				default:
					throw new Error(mode);
			}
		});
		const p = parseCapture([header, ...rows].join('\n'));
		expect(p.format).toBe('vi-csv');
		expect(p.count).toBe(N);
		// SI prefixes (BIPM SI Brochure): values come back in volts and amperes.
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
		expect(p.samples.t).toBeUndefined();
	});

	it('reads a file without a header, units from the options', () => {
		const text = lines((k) => `${V[k] * 1e3}, ${I[k] * 1e3}`).join('\n');
		const p = parseCapture(text, { voltageUnit: 'mV', currentUnit: 'mA' });
		expect(p.format).toBe('vi-csv');
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
	});

	it('takes the header unit over the option', () => {
		const text = ['V,I (mA)', ...lines((k) => `${V[k]},${I[k] * 1e3}`)].join('\n');
		const p = parseCapture(text, { currentUnit: 'uA' });
		expectClose(p.samples.i, I);
	});

	it('splits on runs of whitespace', () => {
		const text = lines((k) => `   ${V[k]}    \t ${I[k]}  `).join('\n');
		const p = parseCapture(text);
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
	});

	it('handles a BOM, CRLF, comments, blank lines and a trailing delimiter', () => {
		const text =
			'\uFEFF# exported by the bench\r\n# probe 1 to probe 2\r\n\r\nV;I\r\n' +
			lines((k) => `${V[k]};${I[k]};`).join('\r\n\r\n') +
			'\r\n';
		const p = parseCapture(text);
		expect(p.format).toBe('vi-csv');
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
	});

	it('handles mixed line endings and a lone CR', () => {
		const rows = lines((k) => `${V[k]},${I[k]}`);
		const text = 'V,I\r' + rows.slice(0, 10).join('\n') + '\r\n' + rows.slice(10).join('\r');
		const p = parseCapture(text);
		expectClose(p.samples.v, V);
	});

	it('reads UTF-16 exports and single-byte µ (Windows-1252)', () => {
		const text = ['V,I (µA)', ...lines((k) => `${V[k]},${I[k] * 1e6}`)].join('\r\n');
		const utf16 = new Uint8Array(2 + text.length * 2);
		utf16[0] = 0xff;
		utf16[1] = 0xfe;
		for (let k = 0; k < text.length; k++) {
			utf16[2 + 2 * k] = text.charCodeAt(k) & 0xff;
			utf16[3 + 2 * k] = text.charCodeAt(k) >> 8;
		}
		expectClose(parseCapture(utf16).samples.i, I);
		// Windows-1252 encodes µ as the single byte 0xB5 (and ASCII as itself).
		const latin = Uint8Array.from(text, (ch) => ch.charCodeAt(0));
		expectClose(parseCapture(latin).samples.i, I);
	});

	it('reads a quoted header (RFC 4180)', () => {
		const text = ['"Voltage, V","Current, mA"', ...lines((k) => `${V[k]},${I[k] * 1e3}`)].join('\n');
		const p = parseCapture(text);
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
	});

	it('reads a time column and a sample-index column', () => {
		const dt = 1e-4;
		const withTime = ['t (ms),V,I (mA)', ...lines((k) => `${k * dt * 1e3},${V[k]},${I[k] * 1e3}`)].join('\n');
		const p = parseCapture(withTime);
		expect(p.format).toBe('vi-csv');
		expectClose(p.samples.t!, V.map((_, k) => k * dt), 1e-9);
		expectClose(p.samples.i, I);
		const indexed = ['#,V,I', ...lines((k) => `${k},${V[k]},${I[k]}`)].join('\n');
		const q = parseCapture(indexed);
		expect(q.samples.t).toBeUndefined();
		expectClose(q.samples.v, V);
		const headerless = lines((k) => `${k},${V[k]},${I[k]}`).join('\n');
		expectClose(parseCapture(headerless).samples.v, V);
	});

	it('keeps exponent notation and signs exact', () => {
		const text = ['V,I', ...lines((k) => `${V[k].toExponential(6)},${I[k].toExponential(6).replace('e', 'E')}`)].join('\n');
		const p = parseCapture(text);
		expectClose(p.samples.v, V, 1e-6);
		expectClose(p.samples.i, I, 1e-6);
	});

	it('skips a few non-numeric rows with a warning naming the first line', () => {
		const rows = lines((k) => `${V[k]},${I[k]}`);
		rows.splice(20, 0, 'overload');
		const p = parseCapture(['V,I', ...rows].join('\n'));
		expect(p.count).toBe(N);
		expect(p.warnings.join(' ')).toContain('line 22');
	});

	it('reads quoted numbers, V(V)/I(A) headers and a footer line', () => {
		const quoted = ['"V","I"', ...lines((k) => `"${V[k]}","${I[k]}"`)].join('\n');
		expectClose(parseCapture(quoted).samples.i, I);
		const compact = ['V(V),I(A)', ...lines((k) => `${V[k]},${I[k]}`), 'End of data'].join('\n');
		const p = parseCapture(compact);
		expectClose(p.samples.v, V);
		expect(p.warnings).toHaveLength(1);
		const long = ['v_volts,i_amps', ...lines((k) => `${V[k]},${I[k]}`)].join('\n');
		expectClose(parseCapture(long).samples.i, I);
	});

	it('applies the axis inversions', () => {
		const text = ['V,I', ...lines((k) => `${V[k]},${I[k]}`)].join('\n');
		const p = parseCapture(text, { invertVoltage: true, invertCurrent: true });
		expectClose(p.samples.v, V.map((x) => -x));
		expectClose(p.samples.i, I.map((x) => -x));
	});
});

describe('parseCapture: oscilloscope exports', () => {
	const R = 10;
	const scopeRows = (d: string, dc = false) =>
		lines((k) => {
			const cells = [k * 1e-5, V[k], I[k] * R].map((x) => (dc ? String(x).replace('.', ',') : String(x)));
			return cells.join(d);
		});

	it('reads a preamble, time and two channels, I = V_sense / R_sense (Ohm’s law)', () => {
		const text = [
			'Instrument,bench scope',
			'Record length,64',
			'Sense resistance,10 ohm',
			'Time (s),CH1 (V),CH2 (V)',
			...scopeRows(',')
		].join('\n');
		const p = parseCapture(text);
		expect(p.format).toBe('scope-csv');
		expect(p.metadata['Sense resistance']).toBe('10 ohm');
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
		expectClose(p.samples.t!, V.map((_, k) => k * 1e-5));
	});

	it.each([
		['shunt_ohm: 10', ':'],
		['R sense = 10R', '='],
		['# sense resistor: 0.01 kΩ', '#']
	])('finds the sense resistance in "%s"', (line) => {
		const text = [line, 'Time,CH1,CH2', ...scopeRows(';', true)].join('\r\n');
		const p = parseCapture(text);
		expect(p.format).toBe('scope-csv');
		expectClose(p.samples.i, I);
	});

	it('takes the sense resistance from the options and swaps channels', () => {
		const text = [
			'Sample interval: 10 us',
			'CH1 (mV)\tCH2 (mV)',
			...lines((k) => `${I[k] * R * 1e3}\t${V[k] * 1e3}`)
		].join('\n');
		const p = parseCapture(text, { senseOhm: R, swapChannels: true });
		expect(p.format).toBe('scope-csv');
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
		// No time column: the preamble's sample interval gives the time axis.
		expectClose(p.samples.t!, V.map((_, k) => k * 1e-5));
	});

	it('recognises a channel named sense whichever column it is', () => {
		const text = ['Time (s),V sense (V),V dut (V)', ...lines((k) => `${k * 1e-5},${I[k] * R},${V[k]}`)].join('\n');
		const p = parseCapture(text, { senseOhm: R });
		expect(p.format).toBe('scope-csv');
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
	});

	it('reads unnamed X/Y columns as channels when a sense resistance is entered', () => {
		const text = ['X,Y', ...lines((k) => `${V[k]},${I[k] * R}`)].join('\n');
		const p = parseCapture(text, { senseOhm: R });
		expect(p.format).toBe('scope-csv');
		expectClose(p.samples.i, I);
	});

	it('reads a units row under the header and a sample rate in the preamble', () => {
		const text = ['Sampling rate: 100 kSa/s', 'Sense Resistor (ohm),10', '', 'Time,CH1,CH2', '(s),(V),(V)', ...scopeRows(',')].join('\n');
		const p = parseCapture(text);
		expect(p.format).toBe('scope-csv');
		expectClose(p.samples.i, I);
		expectClose(p.samples.t!, V.map((_, k) => k * 1e-5));
		const noTime = ['Sampling rate: 100 kSa/s', 'Sense Resistor (ohm),10', '', 'CH1,CH2', ...lines((k) => `${V[k]},${I[k] * R}`)].join('\n');
		// 100 kSa/s is one sample every 10 µs (SI prefixes).
		expectClose(parseCapture(noTime).samples.t!, V.map((_, k) => k * 1e-5));
	});

	it('takes a channel in amperes (a current probe) as the current itself', () => {
		const text = ['Time (s),CH1 (V),CH2 (mA)', ...lines((k) => `${k * 1e-5},${V[k]},${I[k] * 1e3}`)].join('\n');
		const p = parseCapture(text);
		expect(p.format).toBe('scope-csv');
		expectClose(p.samples.i, I);
	});

	it('refuses a scope export without the sense resistance', () => {
		const text = ['Record length,64', 'Time (s),CH1 (V),CH2 (V)', ...scopeRows(',')].join('\n');
		expectError(() => parseCapture(text), 'missing_sense_resistance');
	});
});

describe('parseCapture: JSON (RFC 8259)', () => {
	it('reads {"v","i"}', () => {
		const p = parseCapture(JSON.stringify({ v: V, i: I }));
		expect(p.format).toBe('json');
		expectClose(p.samples.v, V);
		expectClose(p.samples.i, I);
	});

	it('reads {"t","v","i"} from bytes', () => {
		const t = V.map((_, k) => k * 1e-4);
		const p = parseCapture(new TextEncoder().encode(JSON.stringify({ t, v: V, i: I })));
		expectClose(p.samples.t!, t);
	});

	it('reads the scope form {"t","ch1","ch2","senseOhm"}', () => {
		const t = V.map((_, k) => k * 1e-4);
		const p = parseCapture(JSON.stringify({ t, ch1: V, ch2: I.map((x) => x * 47), senseOhm: 47 }));
		expect(p.format).toBe('json');
		expectClose(p.samples.i, I);
		expectError(() => parseCapture(JSON.stringify({ t, ch1: V, ch2: I })), 'missing_sense_resistance');
	});

	it('reads arrays nested under "samples"', () => {
		const p = parseCapture(JSON.stringify({ conditions: { vs: 10 }, samples: { v: V, i: I } }));
		expectClose(p.samples.v, V);
	});

	it('reads rows of [v, i] and a units object', () => {
		const p = parseCapture(JSON.stringify(V.map((v, k) => [v, I[k]])));
		expectClose(p.samples.i, I);
		const q = parseCapture(JSON.stringify({ v: V.map((x) => x * 1e3), i: I.map((x) => x * 1e3), units: { v: 'mV', i: 'mA' } }));
		expectClose(q.samples.v, V);
		expectClose(q.samples.i, I);
	});

	it('names the line of malformed JSON', () => {
		const text = '{\n"v": [1, 2,\n3 4],\n"i": []}';
		const err = expectError(() => parseCapture(text), 'bad_json');
		expect(err.line).toBe(3);
	});

	it('refuses null, strings and arrays of different lengths', () => {
		expectError(() => parseCapture(JSON.stringify({ v: [...V.slice(1), null], i: I })), 'not_finite');
		expectError(() => parseCapture(JSON.stringify({ v: [...V.slice(1), 'x'], i: I })), 'not_numeric');
		expectError(() => parseCapture(JSON.stringify({ v: V, i: I.slice(1) })), 'ragged');
	});
});

describe('parseCapture: bad input', () => {
	const good = ['V,I', ...lines((k) => `${V[k]},${I[k]}`)];

	it('empty file', () => {
		expectError(() => parseCapture(''), 'empty');
		expectError(() => parseCapture(' \n\r\n\t'), 'empty');
		expectError(() => parseCapture(new Uint8Array(0)), 'empty');
	});

	it('binary file', () => {
		const bytes = new Uint8Array(4096);
		for (let k = 0; k < bytes.length; k++) bytes[k] = (k * 37) % 256;
		expectError(() => parseCapture(bytes), 'binary');
		expectError(() => parseCapture('PK\u0003\u0004\u0000\u0000' + good.join('\n')), 'binary');
		expectError(() => parseCapture('\x01\x02\x03\x04\x05\x06\x07\x08'.repeat(8) + good.join('\n')), 'binary');
	});

	it('non-numeric rows past the tolerance, naming the first line', () => {
		const rows = [...good];
		for (let k = 0; k < 10; k++) rows.splice(30 + 2 * k, 0, 'n/a,n/a');
		expectError(() => parseCapture(rows.join('\n')), 'not_numeric', 31);
		expectError(() => parseCapture('just some text\nand more text\n'), 'not_numeric');
	});

	it('fewer than 32 samples', () => {
		expectError(() => parseCapture(good.slice(0, 31).join('\n')), 'too_few_samples');
	});

	it('more than 2 000 000 samples', () => {
		const text = '1,2\n2,1\n'.repeat(1_000_001);
		expectError(() => parseCapture(text), 'too_many_samples');
	});

	it('more than 20 MB', () => {
		expectError(() => parseCapture(new Uint8Array(21 * 1024 * 1024)), 'too_large');
		expectError(() => parseCapture('1,2\n'.repeat(5_300_000)), 'too_large');
	});

	it('NaN or Infinity, naming the line', () => {
		const rows = [...good];
		rows[40] = 'NaN,0.001';
		expectError(() => parseCapture(rows.join('\n')), 'not_finite', 41);
		rows[40] = '1.5,-Infinity';
		expectError(() => parseCapture(rows.join('\n')), 'not_finite', 41);
		rows[40] = '1.5,1e999';
		expectError(() => parseCapture(rows.join('\n')), 'not_finite', 41);
		rows[40] = '1.5;inf';
		expectError(() => parseCapture(rows.join('\n').replace(/,/g, ';')), 'not_finite', 41);
	});

	it('ragged rows, naming the line', () => {
		const rows = [...good];
		rows[50] = '1.0,2.0,3.0';
		expectError(() => parseCapture(rows.join('\n')), 'ragged', 51);
		rows[50] = '1.0';
		expectError(() => parseCapture(rows.join('\n')), 'ragged', 51);
		rows[50] = '1.0 2.0 3.0';
		expectError(() => parseCapture(rows.join('\n').replace(/,/g, '  ')), 'ragged', 51);
	});

	it('a flat capture', () => {
		expectError(() => parseCapture(['V,I', ...lines(() => '0.5,0.001')].join('\n')), 'flat');
	});
});

describe('header words and quantities', () => {
	it.each([
		['voltage_V', 'voltage', 1],
		['V', 'voltage', 1],
		['U', 'voltage', null],
		['I', 'current', null],
		['current (mA)', 'current', 1e-3],
		['I [µA]', 'current', 1e-6],
		['Time (ms)', 'time', 1e-3],
		['CH1 (V)', 'channel', 1],
		['V_sense', 'sense', 1],
		['Sample', 'index', null]
	] as const)('%s → %s ×%s', (text, role, scale) => {
		const c = classifyHeader(text);
		expect(c.role).toBe(role);
		expect(c.scale).toBe(scale);
	});

	it.each([
		['10', 10],
		['10 ohm', 10],
		['4.7 kΩ', 4700],
		['10R', 10],
		['1e-5 s', 1e-5],
		['10 us', 1e-5],
		['0,47', 0.47]
	] as const)('"%s" = %s (SI prefixes)', (text, value) => {
		expect(parseQuantity(text)).toBeCloseTo(value, 12);
	});
});

describe('parseCapture: the command line’s own CSV', () => {
	// `signature simulate --csv` writes a source-phase column in degrees: it orders the points, it
	// is not a clock. Read as seconds it would imply a frequency of 1/360 of a period per degree.
	it('reads a phase_deg column as an index, not as time', () => {
		const n = 256;
		const rows = ['phase_deg,voltage_V,current_A'];
		for (let k = 0; k < n; k++) {
			const e = 10 * Math.sin((2 * Math.PI * k) / n);
			// A 2.2 kΩ resistor behind 1 kΩ (Ohm's law: i = e / 3200 Ω).
			rows.push(`${(360 * k) / n},${(e * 2200) / 3200},${e / 3200}`);
		}
		const parsed = parseCapture(rows.join('\n'));
		expect(parsed.samples.t).toBeUndefined();
		expect(parsed.samples.v).toHaveLength(n);
		expect(parsed.samples.i[64]).toBeCloseTo(10 / 3200, 9);
	});
});
