/**
 * Component values as technicians type them, with engineering prefixes: `4k7`, `2.2u`, `100n`,
 * `1M`, `4R7`, `10 µF`, `1e-6`. Pure; shared by the simulation form and its tests.
 */

/** SI prefixes (BIPM SI Brochure), plus the trade's `u` for micro and `meg`, and `R` as the ohms point. */
const PREFIX_SCALE: Record<string, number> = {
	T: 1e12,
	G: 1e9,
	M: 1e6,
	meg: 1e6,
	k: 1e3,
	K: 1e3,
	R: 1,
	r: 1,
	m: 1e-3,
	u: 1e-6,
	µ: 1e-6,
	μ: 1e-6,
	n: 1e-9,
	p: 1e-12,
	f: 1e-15
};

export type EngineeringParse = { ok: true; value: number } | { ok: false; message: string };

const UNIT_WORDS = /(?:ohms?|Ω|Ω|F|H|V|A|Hz)$/;

/**
 * Parses a value with an optional engineering prefix, written either as a suffix (`2.2u`, `100 nF`)
 * or in place of the decimal point (`4k7` = 4.7 k, `4R7` = 4.7). A trailing unit symbol is allowed
 * and ignored (`unit` names the one expected, for the message only).
 */
export function parseEngineering(input: string, unit = ''): EngineeringParse {
	let text = input.trim().replace(/\s+/g, '').replace(',', '.');
	if (text === '') return { ok: false, message: `Enter a value${unit ? ` in ${unit}` : ''}.` };
	const bad = { ok: false as const, message: `“${input.trim()}” is not a value. Write it like 4k7, 2.2u, 100n or 0.001${unit ? ` (${unit})` : ''}.` };
	// Drop a trailing unit, but keep the prefix: "100nF" → "100n", "4.7kΩ" → "4.7k". A bare "F", "H"
	// or "m" is a prefix or unit by position: only strip when something numeric or a prefix precedes it.
	const unitMatch = text.match(UNIT_WORDS);
	if (unitMatch && unitMatch.index! > 0) text = text.slice(0, unitMatch.index);
	// Plain number, with an exponent if given.
	if (/^[+-]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i.test(text)) return finite(Number(text), bad);
	// Prefix as a suffix: 2.2u, 100n, 1meg.
	let m = text.match(/^([+-]?(?:\d+\.?\d*|\.\d+))(meg|[TGMkKRrmuµμnpf])$/);
	if (m) return finite(Number(m[1]) * PREFIX_SCALE[m[2]], bad);
	// Prefix in place of the point: 4k7, 4R7, 2u2, 1M5.
	m = text.match(/^(\d+)(meg|[TGMkKRrmuµμnpf])(\d+)$/);
	if (m) return finite(Number(`${m[1]}.${m[3]}`) * PREFIX_SCALE[m[2]], bad);
	return bad;
}

function finite(n: number, bad: EngineeringParse): EngineeringParse {
	return Number.isFinite(n) ? { ok: true, value: n } : bad;
}
