import { CONDITION_TOLERANCE, DESCRIPTOR_LENGTH } from '../../signature/compare';
import type { TestConditions } from '../../signature/types';

/**
 * The candidate index behind "match a capture": every stored trace's descriptor packed into one
 * Float32Array (DESCRIPTOR_LENGTH floats per trace, 256 bytes), scanned linearly with early
 * abandoning against the current k-th best, so a query reads each descriptor at most once and
 * usually stops after its first few harmonics. Pure: no I/O; the caller loads rows into it and
 * re-ranks the candidates with the exact shape distance.
 *
 * Why a flat scan and not a tree or graph index: the descriptor distance is a truncated Parseval
 * sum, whose leading terms (mean and first harmonics) carry most of a curve's energy, so early
 * abandoning already skips most of the work; a scan has no build cost, no recall loss, handles
 * deletes by a swap, and its speed is bounded below by memory bandwidth, which is what the
 * benchmark compares it with.
 */

export interface TraceMeta<M = unknown> {
	traceId: string;
	conditions: TestConditions;
	/** Whatever the caller filters on (entry id, role, kind, status…), kept beside the vector. */
	data: M;
}

export interface Candidate<M = unknown> {
	meta: TraceMeta<M>;
	/** Descriptor (Euclidean) distance to the query. */
	descriptorDistance: number;
	comparable: boolean;
}

const D = DESCRIPTOR_LENGTH;
/** Dimensions between early-abandon checks. */
const BLOCK = 8;
/**
 * Leading coefficients kept in an array of their own. Most traces are abandoned within them, so
 * a scan streams 64 bytes per trace instead of the whole 256-byte vector (struct-of-arrays).
 */
const HEAD = 16;
const REST = D - HEAD;
if (DESCRIPTOR_LENGTH % BLOCK !== 0 || DESCRIPTOR_LENGTH < 16) throw new Error('the descriptor length must be a multiple of the scan block');

export class DescriptorIndex<M = unknown> {
	private heads = new Float32Array(0);
	private rests = new Float32Array(0);
	/** Vs, Rs, f of each slot, packed, so the comparability test reads no objects. */
	private conds = new Float64Array(0);
	/** Squared energy of each curve's harmonics beyond the descriptor (see `descriptorTail`). */
	private tails = new Float32Array(0);
	private metas: TraceMeta<M>[] = [];
	private slotOf = new Map<string, number>();

	get size(): number {
		return this.metas.length;
	}

	/** Bytes held by the packed vectors (the metadata objects come on top; see the benchmark). */
	get vectorBytes(): number {
		return this.heads.byteLength + this.rests.byteLength;
	}

	/**
	 * Adds or replaces one trace. `tail` is the curve's energy beyond the descriptor's harmonics
	 * (`descriptorTail`): mostly bench noise, different for every capture, and part of the exact
	 * distance that the descriptor alone cannot see. 0 when unknown.
	 */
	upsert(meta: TraceMeta<M>, descriptor: ArrayLike<number>, tail = 0): void {
		if (descriptor.length !== D) throw new RangeError(`descriptor must have ${D} numbers, not ${descriptor.length}`);
		let slot = this.slotOf.get(meta.traceId);
		if (slot === undefined) {
			slot = this.metas.length;
			this.ensureCapacity(slot + 1);
			this.metas.push(meta);
			this.slotOf.set(meta.traceId, slot);
		} else {
			this.metas[slot] = meta;
		}
		for (let t = 0; t < HEAD; t++) this.heads[slot * HEAD + t] = descriptor[t];
		for (let t = 0; t < REST; t++) this.rests[slot * REST + t] = descriptor[HEAD + t];
		const c = meta.conditions;
		this.conds[slot * 3] = c.sourcePeakV;
		this.conds[slot * 3 + 1] = c.sourceResistanceOhm;
		this.conds[slot * 3 + 2] = c.frequencyHz;
		this.tails[slot] = tail * tail;
	}

	/** Removes a trace by moving the last one into its slot. */
	remove(traceId: string): boolean {
		const slot = this.slotOf.get(traceId);
		if (slot === undefined) return false;
		const last = this.metas.length - 1;
		if (slot !== last) {
			this.heads.copyWithin(slot * HEAD, last * HEAD, last * HEAD + HEAD);
			this.rests.copyWithin(slot * REST, last * REST, last * REST + REST);
			this.conds.copyWithin(slot * 3, last * 3, last * 3 + 3);
			this.tails[slot] = this.tails[last];
			this.metas[slot] = this.metas[last];
			this.slotOf.set(this.metas[slot].traceId, slot);
		}
		this.metas.pop();
		this.slotOf.delete(traceId);
		return true;
	}

	has(traceId: string): boolean {
		return this.slotOf.has(traceId);
	}

	private ensureCapacity(n: number): void {
		if (n <= this.tails.length) return;
		const capacity = Math.max(n, Math.ceil(this.metas.length * 1.5), 64);
		const heads = new Float32Array(capacity * HEAD);
		heads.set(this.heads.subarray(0, this.metas.length * HEAD));
		this.heads = heads;
		const rests = new Float32Array(capacity * REST);
		rests.set(this.rests.subarray(0, this.metas.length * REST));
		this.rests = rests;
		const conds = new Float64Array(capacity * 3);
		conds.set(this.conds.subarray(0, this.metas.length * 3));
		this.conds = conds;
		const tails = new Float32Array(capacity);
		tails.set(this.tails.subarray(0, this.metas.length));
		this.tails = tails;
	}

	/**
	 * The `k` nearest traces by descriptor distance among those with comparable conditions, then
	 * the `k` nearest among the rest (incomparable conditions rank below comparable ones), each
	 * list nearest first. `accept` filters by metadata (tenancy is by index: one per organisation).
	 */
	search(
		query: ArrayLike<number>,
		conditions: TestConditions,
		k: number,
		accept?: (meta: TraceMeta<M>) => boolean
	): Candidate<M>[] {
		const q = Float32Array.from(query);
		const near = new TopK(k);
		const far = new TopK(k);
		const hv = this.heads;
		const rv = this.rests;
		const cs = this.conds;
		// Comparable: each of Vs, Rs, f within its tolerance as a ratio (conditionsComparable's rule,
		// written as multiplications so the hot loop does no division and calls nothing).
		const [tv, tr, tf] = [CONDITION_TOLERANCE.sourcePeakV, CONDITION_TOLERANCE.sourceResistanceOhm, CONDITION_TOLERANCE.frequencyHz].map((t) => 1 + t + 1e-12);
		const qv = conditions.sourcePeakV;
		const qr = conditions.sourceResistanceOhm;
		const qf = conditions.frequencyHz;
		const n = this.metas.length;
		for (let slot = 0; slot < n; slot++) {
			if (accept && !accept(this.metas[slot])) continue;
			const sv = cs[slot * 3];
			const sr = cs[slot * 3 + 1];
			const sf = cs[slot * 3 + 2];
			const comparable = sv <= qv * tv && qv <= sv * tv && sr <= qr * tr && qr <= sr * tr && sf <= qf * tf && qf <= sf * tf;
			const heap = comparable ? near : far;
			const bound = heap.bound;
			// Two noisy curves' tails are uncorrelated, so the exact squared distance is about the
			// descriptor's plus both tails; the query's tail is the same for every trace and left out.
			let s = this.tails[slot];
			const hb = slot * HEAD;
			for (let t = 0; t < BLOCK; t++) {
				const d = hv[hb + t] - q[t];
				s += d * d;
			}
			if (s < bound) {
				for (let t = BLOCK; t < HEAD; t++) {
					const d = hv[hb + t] - q[t];
					s += d * d;
				}
				const rb = slot * REST;
				for (let j = 0; s < bound && j < REST; j += BLOCK) {
					for (let t = j; t < j + BLOCK; t++) {
						const d = rv[rb + t] - q[HEAD + t];
						s += d * d;
					}
				}
			}
			if (s < bound) heap.push(s, slot);
		}
		const out: Candidate<M>[] = [];
		for (const [heap, comparable] of [
			[near, true],
			[far, false]
		] as const) {
			for (const { d2, slot } of heap.sorted()) {
				out.push({ meta: this.metas[slot], descriptorDistance: Math.sqrt(d2), comparable });
			}
		}
		return out;
	}
}

/** The k smallest values seen, as a bounded max-heap. */
class TopK {
	private d2: number[] = [];
	private slots: number[] = [];

	constructor(private readonly k: number) {}

	/** Anything at or above this cannot enter. */
	get bound(): number {
		return this.d2.length < this.k ? Infinity : this.d2[0];
	}

	push(d2: number, slot: number): void {
		if (this.k <= 0) return;
		if (this.d2.length < this.k) {
			this.d2.push(d2);
			this.slots.push(slot);
			this.up(this.d2.length - 1);
		} else if (d2 < this.d2[0]) {
			this.d2[0] = d2;
			this.slots[0] = slot;
			this.down(0);
		}
	}

	sorted(): { d2: number; slot: number }[] {
		return this.d2.map((d2, i) => ({ d2, slot: this.slots[i] })).sort((a, b) => a.d2 - b.d2 || a.slot - b.slot);
	}

	private swap(a: number, b: number): void {
		[this.d2[a], this.d2[b]] = [this.d2[b], this.d2[a]];
		[this.slots[a], this.slots[b]] = [this.slots[b], this.slots[a]];
	}

	private up(i: number): void {
		while (i > 0) {
			const p = (i - 1) >> 1;
			if (this.d2[p] >= this.d2[i]) return;
			this.swap(p, i);
			i = p;
		}
	}

	private down(i: number): void {
		const n = this.d2.length;
		for (;;) {
			const l = 2 * i + 1;
			const r = l + 1;
			let m = i;
			if (l < n && this.d2[l] > this.d2[m]) m = l;
			if (r < n && this.d2[r] > this.d2[m]) m = r;
			if (m === i) return;
			this.swap(m, i);
			i = m;
		}
	}
}
