import { describe, expect, it } from 'vitest';
import { conditionsComparable, descriptor, DESCRIPTOR_LENGTH, descriptorDistance, descriptorTail } from '../../signature/compare';
import { DescriptorIndex } from './descriptor-index';

const c1 = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
const c2 = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 50 }; // 20 % off in f: not comparable

function rng(seed: number) {
	let s = seed >>> 0;
	return () => ((s = (s * 1664525 + 1013904223) >>> 0) / 2 ** 32);
}

function randomVector(r: () => number): Float32Array {
	// Decaying spectrum like a real descriptor: most energy in the first harmonics.
	return Float32Array.from({ length: DESCRIPTOR_LENGTH }, (_, k) => (r() - 0.5) / (1 + k / 4));
}

describe('DescriptorIndex', () => {
	it('returns exactly the k nearest of a brute-force scan, early abandoning notwithstanding', () => {
		const r = rng(5);
		const index = new DescriptorIndex<{ n: number }>();
		const vectors: Float32Array[] = [];
		for (let n = 0; n < 2000; n++) {
			const v = randomVector(r);
			vectors.push(v);
			index.upsert({ traceId: `t${n}`, conditions: c1, data: { n } }, v);
		}
		for (let q = 0; q < 20; q++) {
			const query = randomVector(r);
			const got = index.search(query, c1, { candidates: 10 }).map((c) => c.meta.traceId);
			const want = vectors
				.map((v, n) => ({ n, d: descriptorDistance(v, query) }))
				.sort((a, b) => a.d - b.d)
				.slice(0, 10)
				.map((x) => `t${x.n}`);
			expect(got).toEqual(want);
		}
	});

	it('ranks every comparable trace above the incomparable ones and marks them', () => {
		const index = new DescriptorIndex();
		const base = new Float32Array(DESCRIPTOR_LENGTH);
		const near = base.map((_, k) => (k === 0 ? 0.001 : 0));
		const far = base.map((_, k) => (k === 0 ? 0.5 : 0));
		index.upsert({ traceId: 'same-shape-other-conditions', conditions: c2, data: null }, near);
		index.upsert({ traceId: 'other-shape-same-conditions', conditions: c1, data: null }, far);
		const result = index.search(base, c1, { candidates: 5 });
		expect(result.map((c) => [c.meta.traceId, c.comparable])).toEqual([
			['other-shape-same-conditions', true],
			['same-shape-other-conditions', false]
		]);
	});

	it('filters by metadata, replaces on upsert and forgets removed traces', () => {
		const index = new DescriptorIndex<{ published: boolean }>();
		const zero = new Float32Array(DESCRIPTOR_LENGTH);
		index.upsert({ traceId: 'a', conditions: c1, data: { published: true } }, zero);
		index.upsert({ traceId: 'b', conditions: c1, data: { published: false } }, zero);
		index.upsert({ traceId: 'c', conditions: c1, data: { published: true } }, zero);
		expect(index.search(zero, c1, { candidates: 10, accept: (m) => m.data.published }).map((c) => c.meta.traceId).sort()).toEqual(['a', 'c']);
		index.upsert({ traceId: 'a', conditions: c1, data: { published: false } }, zero);
		expect(index.size).toBe(3);
		expect(index.remove('b')).toBe(true);
		expect(index.remove('b')).toBe(false);
		expect(index.search(zero, c1, { candidates: 10 }).map((c) => c.meta.traceId).sort()).toEqual(['a', 'c']);
		expect(() => index.upsert({ traceId: 'x', conditions: c1, data: { published: true } }, [1, 2, 3])).toThrow(RangeError);
	});
});

describe('traces under other conditions', () => {
	it('are scanned only while fewer comparable traces than `enough` pass the filter', () => {
		const index = new DescriptorIndex<{ published: boolean }>();
		const zero = new Float32Array(DESCRIPTOR_LENGTH);
		index.upsert({ traceId: 'here-1', conditions: c1, data: { published: true } }, zero);
		index.upsert({ traceId: 'here-2', conditions: c1, data: { published: false } }, zero);
		index.upsert({ traceId: 'elsewhere', conditions: c2, data: { published: true } }, zero);
		const ids = (enough: number, accept?: (m: { data: { published: boolean } }) => boolean) =>
			index.search(zero, c1, { candidates: 10, enough, accept }).map((c) => c.meta.traceId);
		expect(ids(2)).toEqual(['here-1', 'here-2']);
		expect(ids(3)).toEqual(['here-1', 'here-2', 'elsewhere']);
		// Only accepted comparable traces count towards `enough`.
		expect(ids(2, (m) => m.data.published)).toEqual(['here-1', 'elsewhere']);
	});

	it('move when a trace’s conditions change, and leave no copy behind', () => {
		const index = new DescriptorIndex();
		const zero = new Float32Array(DESCRIPTOR_LENGTH);
		index.upsert({ traceId: 'a', conditions: c1, data: null }, zero);
		index.upsert({ traceId: 'a', conditions: c2, data: null }, zero);
		expect(index.size).toBe(1);
		expect(index.search(zero, c1, { candidates: 10 }).map((c) => [c.meta.traceId, c.comparable])).toEqual([['a', false]]);
		expect(index.remove('a')).toBe(true);
		expect(index.search(zero, c2, { candidates: 10 })).toEqual([]);
		expect(index.vectorBytes).toBe(0);
	});
});

describe('comparable conditions in the index', () => {
	it('agree with the engine’s own rule for random pairs around the tolerance', () => {
		const r = rng(9);
		const zero = new Float32Array(DESCRIPTOR_LENGTH);
		for (let n = 0; n < 300; n++) {
			const a = { sourcePeakV: 1 + 20 * r(), sourceResistanceOhm: 100 + 1e4 * r(), frequencyHz: 50 + 1000 * r() };
			const jitter = () => 1 + (r() - 0.5) * 0.14; // ±7 %: both sides of the 5 % tolerance
			const b = { sourcePeakV: a.sourcePeakV * jitter(), sourceResistanceOhm: a.sourceResistanceOhm * jitter(), frequencyHz: a.frequencyHz * jitter() };
			const index = new DescriptorIndex();
			index.upsert({ traceId: 'b', conditions: b, data: null }, zero);
			expect(index.search(zero, a, { candidates: 1 })[0].comparable).toBe(conditionsComparable(a, b));
		}
	});
});

describe('descriptor tail', () => {
	it('completes the descriptor to the curve’s whole energy (Parseval’s theorem)', () => {
		const r = rng(21);
		const n = 256;
		const vn = Array.from({ length: n }, (_, k) => Math.sin((2 * Math.PI * k) / n) * 0.6 + (r() - 0.5) * 0.05);
		const cn = Array.from({ length: n }, (_, k) => Math.sin((2 * Math.PI * k) / n) * 0.3 + (r() - 0.5) * 0.05);
		const curve = { conditions: c1, v: vn, i: cn, vn, in: cn, periods: 1, periodSpread: null, simulated: false };
		const d = descriptor(curve);
		const energy = vn.reduce((s, x, k) => s + x * x + cn[k] * cn[k], 0) / (2 * n);
		const kept = d.reduce((s, x) => s + x * x, 0);
		expect(kept + descriptorTail(curve) ** 2).toBeCloseTo(energy, 6);
		expect(descriptorTail(curve)).toBeGreaterThan(0);
	});

	it('ranks, among equal descriptor distances, the trace with less energy beyond the descriptor first', () => {
		const index = new DescriptorIndex();
		const zero = new Float32Array(DESCRIPTOR_LENGTH);
		index.upsert({ traceId: 'noisy', conditions: c1, data: null }, zero, 0.05);
		index.upsert({ traceId: 'clean', conditions: c1, data: null }, zero, 0.01);
		expect(index.search(zero, c1, { candidates: 2 }).map((c) => c.meta.traceId)).toEqual(['clean', 'noisy']);
	});
});
