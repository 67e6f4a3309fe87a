import { conditionsComparable, DESCRIPTOR_LENGTH } from '../../signature/compare';
import type { TestConditions } from '../../signature/types';

/**
 * The candidate index behind "match a capture": every stored trace's descriptor packed into
 * typed arrays, one set per distinct test conditions (DESCRIPTOR_LENGTH floats per trace, 256
 * bytes). A query is a linear pass over the traces whose conditions are comparable with its own,
 * with early abandoning against the current k-th best, so it reads each descriptor at most once
 * and usually stops after its first few harmonics. Traces under other conditions are scanned only
 * when too few comparable ones exist: results list comparable conditions first, so otherwise none
 * of them could be shown — and most of a library is usually under other conditions than any one
 * capture.
 *
 * Why a flat scan and not a tree or graph index: the descriptor distance is a truncated Parseval
 * sum, whose leading terms (mean and first harmonics) carry most of a curve's energy, so early
 * abandoning already skips most of the work; a scan has no build cost, no recall loss, handles
 * deletes by a swap, and its speed is bounded below by memory bandwidth, which is what the
 * benchmark compares it with. Pure: no I/O; the caller loads rows into it and re-ranks the
 * candidates with the exact shape distance.
 */

export interface TraceMeta<M = unknown> {
	traceId: string;
	conditions: TestConditions;
	/** Whatever the caller filters on (entry id, role, kind, status…), kept beside the vector. */
	data: M;
}

export interface Candidate<M = unknown> {
	meta: TraceMeta<M>;
	/** Descriptor distance to the query, with the trace's tail (see `upsert`). */
	descriptorDistance: number;
	comparable: boolean;
}

export interface SearchOptions<M> {
	/** Candidates returned per list (comparable, then incomparable conditions). */
	candidates: number;
	/**
	 * Incomparable traces are scanned only when fewer than this many comparable ones pass
	 * `accept` (default: always scanned).
	 */
	enough?: number;
	/** Filter by metadata (tenancy is by index: one per organisation). */
	accept?: (meta: TraceMeta<M>) => boolean;
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

/** The traces stored under one set of test conditions. */
class Group<M> {
	heads = new Float32Array(0);
	rests = new Float32Array(0);
	/** Squared energy of each curve's harmonics beyond the descriptor (see `descriptorTail`). */
	tails = new Float32Array(0);
	metas: TraceMeta<M>[] = [];
	slotOf = new Map<string, number>();

	constructor(readonly conditions: TestConditions) {}

	get size(): number {
		return this.metas.length;
	}

	put(meta: TraceMeta<M>, descriptor: ArrayLike<number>, tail: number): void {
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
			this.tails[slot] = this.tails[last];
			this.metas[slot] = this.metas[last];
			this.slotOf.set(this.metas[slot].traceId, slot);
		}
		this.metas.pop();
		this.slotOf.delete(traceId);
		return true;
	}

	/** The whole descriptor of one slot, into `out`. */
	read(slot: number, out: Float64Array): void {
		for (let t = 0; t < HEAD; t++) out[t] = this.heads[slot * HEAD + t];
		for (let t = 0; t < REST; t++) out[HEAD + t] = this.rests[slot * REST + t];
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
		const tails = new Float32Array(capacity);
		tails.set(this.tails.subarray(0, this.metas.length));
		this.tails = tails;
	}

	/**
	 * Pushes every accepted trace that beats the heap's bound, by zero-shift descriptor distance plus
	 * tail. Returns how many traces passed `accept`.
	 */
	scan(q: Float32Array, heap: TopK<Group<M>>, accept?: (meta: TraceMeta<M>) => boolean): number {
		const hv = this.heads;
		const rv = this.rests;
		const tails = this.tails;
		const n = this.metas.length;
		let accepted = 0;
		for (let slot = 0; slot < n; slot++) {
			if (accept && !accept(this.metas[slot])) continue;
			accepted++;
			const bound = heap.bound;
			// Two noisy curves' tails are uncorrelated, so the exact squared distance is about the
			// descriptor's plus both tails; the query's tail is the same for every trace and left out.
			let s = tails[slot];
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
			if (s < bound) heap.push(s, this, slot);
		}
		return accepted;
	}
}

const keyOf = (c: TestConditions) => `${c.sourcePeakV}|${c.sourceResistanceOhm}|${c.frequencyHz}`;

export class DescriptorIndex<M = unknown> {
	private groups = new Map<string, Group<M>>();
	private groupOf = new Map<string, Group<M>>();

	get size(): number {
		return this.groupOf.size;
	}

	/** Bytes held by the packed vectors (the metadata objects come on top; see the benchmark). */
	get vectorBytes(): number {
		let n = 0;
		for (const g of this.groups.values()) n += g.heads.byteLength + g.rests.byteLength + g.tails.byteLength;
		return n;
	}

	/**
	 * Adds or replaces one trace. `tail` is the curve's energy beyond the descriptor's harmonics
	 * (`descriptorTail`): mostly bench noise, different for every capture, and part of the exact
	 * distance that the descriptor alone cannot see. 0 when unknown.
	 */
	upsert(meta: TraceMeta<M>, descriptor: ArrayLike<number>, tail = 0): void {
		if (descriptor.length !== D) throw new RangeError(`descriptor must have ${D} numbers, not ${descriptor.length}`);
		const key = keyOf(meta.conditions);
		const before = this.groupOf.get(meta.traceId);
		if (before && keyOf(before.conditions) !== key) this.removeFrom(before, meta.traceId);
		let group = this.groups.get(key);
		if (!group) this.groups.set(key, (group = new Group<M>({ ...meta.conditions })));
		group.put(meta, descriptor, tail);
		this.groupOf.set(meta.traceId, group);
	}

	remove(traceId: string): boolean {
		const group = this.groupOf.get(traceId);
		if (!group) return false;
		this.removeFrom(group, traceId);
		this.groupOf.delete(traceId);
		return true;
	}

	private removeFrom(group: Group<M>, traceId: string): void {
		group.remove(traceId);
		if (group.size === 0) this.groups.delete(keyOf(group.conditions));
	}

	has(traceId: string): boolean {
		return this.groupOf.has(traceId);
	}

	/**
	 * The nearest traces among those with comparable conditions, then (see `enough`) among the
	 * rest — incomparable conditions rank below comparable ones — each list nearest first.
	 */
	search(query: ArrayLike<number>, conditions: TestConditions, options: SearchOptions<M>): Candidate<M>[] {
		const q = Float32Array.from(query);
		const k = options.candidates;
		const near = new TopK<Group<M>>(k);
		const far = new TopK<Group<M>>(k);
		const others: Group<M>[] = [];
		let comparableSeen = 0;
		for (const group of this.groups.values()) {
			if (conditionsComparable(group.conditions, conditions)) comparableSeen += group.scan(q, near, options.accept);
			else others.push(group);
		}
		if (options.enough === undefined || comparableSeen < options.enough) {
			for (const group of others) group.scan(q, far, options.accept);
		}
		const out: Candidate<M>[] = [];
		for (const [heap, comparable] of [
			[near, true],
			[far, false]
		] as const) {
			for (const { d2, owner, slot } of heap.sorted()) {
				out.push({ meta: owner.metas[slot], descriptorDistance: Math.sqrt(d2), comparable });
			}
		}
		return out;
	}
}

/** The k smallest values seen, as a bounded max-heap. */
class TopK<O> {
	private d2: number[] = [];
	private slots: number[] = [];
	private owners: O[] = [];

	constructor(private readonly k: number) {}

	/** Anything at or above this cannot enter. */
	get bound(): number {
		return this.d2.length < this.k ? Infinity : this.d2[0];
	}

	push(d2: number, owner: O, slot: number): void {
		if (this.k <= 0) return;
		if (this.d2.length < this.k) {
			this.d2.push(d2);
			this.slots.push(slot);
			this.owners.push(owner);
			this.up(this.d2.length - 1);
		} else if (d2 < this.d2[0]) {
			this.d2[0] = d2;
			this.slots[0] = slot;
			this.owners[0] = owner;
			this.down(0);
		}
	}

	/** What the heap holds, nearest first (ties in insertion order of their owners' slots). */
	sorted(): { d2: number; owner: O; slot: number }[] {
		return this.d2.map((d2, i) => ({ d2, owner: this.owners[i], slot: this.slots[i] })).sort((a, b) => a.d2 - b.d2 || a.slot - b.slot);
	}

	private swap(a: number, b: number): void {
		[this.d2[a], this.d2[b]] = [this.d2[b], this.d2[a]];
		[this.slots[a], this.slots[b]] = [this.slots[b], this.slots[a]];
		[this.owners[a], this.owners[b]] = [this.owners[b], this.owners[a]];
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
