import type { Kysely } from 'kysely';
import pg from 'pg';
import { compare, descriptor } from '../../signature/compare';
import type { CanonicalCurve, Comparison } from '../../signature/types';
import type { Database } from '../db/connect';
import { ENTRY_CHANGE_CHANNEL, type EntryChange } from '../entries/changes';
import type { Reader } from '../entries/queries';
import { findTraceCurves } from '../traces/service';
import { DescriptorIndex, type Candidate, type TraceMeta } from './descriptor-index';
import { compareUntilSettled } from './rerank';

/** What the index keeps beside each descriptor, for filtering without a database round trip. */
export interface TraceFacts {
	entryId: string;
	role: string;
	status: string;
	authorId: string | null;
	componentKind: string;
	assembly: string;
	tags: string[];
}

/**
 * Approximate bytes one indexed trace costs: 256 for the descriptor, the rest for its metadata
 * object and strings (measured by `npm run bench -- match`). Used for the memory bound.
 */
export const BYTES_PER_TRACE = 900;

interface Loaded {
	index: DescriptorIndex<TraceFacts>;
	byEntry: Map<string, Set<string>>;
	lastUsed: number;
}

/**
 * The match indexes of this app process, one per organisation, loaded on first use and evicted
 * least-recently-used past `maxBytes`. Changes reach it through Postgres NOTIFY (see
 * recordEntryChange), so every instance behind a load balancer refreshes the entry that changed.
 */
export class MatchIndexes {
	private loaded = new Map<string, Loaded>();
	private loading = new Map<string, Promise<Loaded>>();
	private listener: pg.Client | undefined;
	private closed = false;

	constructor(
		private readonly db: Kysely<Database>,
		private readonly options: { maxBytes?: number } = {}
	) {}

	get maxBytes(): number {
		return this.options.maxBytes ?? 512 * 1024 * 1024;
	}

	/** Traces held across every loaded organisation. */
	get size(): number {
		let n = 0;
		for (const l of this.loaded.values()) n += l.index.size;
		return n;
	}

	async forOrg(orgId: string): Promise<DescriptorIndex<TraceFacts>> {
		const hit = this.loaded.get(orgId);
		if (hit) {
			hit.lastUsed = Date.now();
			return hit.index;
		}
		let pending = this.loading.get(orgId);
		if (!pending) {
			pending = this.load(orgId).finally(() => this.loading.delete(orgId));
			this.loading.set(orgId, pending);
		}
		return (await pending).index;
	}

	private async load(orgId: string): Promise<Loaded> {
		const loaded: Loaded = { index: new DescriptorIndex(), byEntry: new Map(), lastUsed: Date.now() };
		await this.fill(loaded, orgId);
		this.loaded.set(orgId, loaded);
		this.evict(orgId);
		return loaded;
	}

	private async fill(loaded: Loaded, orgId: string, entryId?: string): Promise<void> {
		let q = this.db
			.selectFrom('trace')
			.innerJoin('entry', 'entry.id', 'trace.entryId')
			.select([
				'trace.id',
				'trace.entryId',
				'trace.role',
				'trace.sourcePeakV',
				'trace.sourceResistanceOhm',
				'trace.frequencyHz',
				'trace.descriptor',
				'trace.descriptorTail',
				'entry.status',
				'entry.authorId',
				'entry.componentKind',
				'entry.assembly',
				'entry.tags'
			])
			.where('trace.orgId', '=', orgId)
			.where('entry.orgId', '=', orgId)
			.where('entry.deletedAt', 'is', null);
		if (entryId) q = q.where('trace.entryId', '=', entryId);
		for (const r of await q.execute()) {
			const meta: TraceMeta<TraceFacts> = {
				traceId: r.id,
				conditions: { sourcePeakV: r.sourcePeakV, sourceResistanceOhm: r.sourceResistanceOhm, frequencyHz: r.frequencyHz },
				data: {
					entryId: r.entryId!,
					role: r.role,
					status: r.status,
					authorId: r.authorId,
					componentKind: r.componentKind,
					assembly: r.assembly,
					tags: r.tags
				}
			};
			// A tail not computed yet (a trace from before the column; see backfillDescriptorTails) ranks as before.
			loaded.index.upsert(meta, r.descriptor, r.descriptorTail ?? 0);
			let set = loaded.byEntry.get(meta.data.entryId);
			if (!set) loaded.byEntry.set(meta.data.entryId, (set = new Set()));
			set.add(r.id);
		}
	}

	private evict(keep: string): void {
		let bytes = this.size * BYTES_PER_TRACE;
		const byAge = [...this.loaded.entries()].filter(([id]) => id !== keep).sort((a, b) => a[1].lastUsed - b[1].lastUsed);
		for (const [orgId, l] of byAge) {
			if (bytes <= this.maxBytes) break;
			bytes -= l.index.size * BYTES_PER_TRACE;
			this.loaded.delete(orgId);
		}
	}

	/** Re-reads one entry's traces into its organisation's index, if that index is loaded. */
	async refreshEntry(change: EntryChange): Promise<void> {
		const loaded = this.loaded.get(change.orgId);
		if (!loaded) return;
		for (const traceId of loaded.byEntry.get(change.entryId) ?? []) loaded.index.remove(traceId);
		loaded.byEntry.delete(change.entryId);
		await this.fill(loaded, change.orgId, change.entryId);
	}

	/** Forgets everything (after a lost listener connection, when notifications may have been missed). */
	clear(): void {
		this.loaded.clear();
	}

	/**
	 * Listens for entry changes on a connection of its own. If the connection drops, every index is
	 * dropped (changes may have been missed) and the listener reconnects after a pause.
	 */
	async listen(connectionString: string): Promise<void> {
		if (this.closed || this.listener) return;
		const client = new pg.Client({ connectionString });
		this.listener = client;
		const retry = () => {
			if (this.listener !== client) return;
			this.listener = undefined;
			this.clear();
			if (!this.closed) setTimeout(() => void this.listen(connectionString).catch(() => retry()), 2000).unref();
		};
		client.on('error', retry);
		client.on('end', retry);
		client.on('notification', (n) => {
			if (n.channel !== ENTRY_CHANGE_CHANNEL || !n.payload) return;
			try {
				void this.refreshEntry(JSON.parse(n.payload) as EntryChange).catch(() => this.clear());
			} catch {
				// A payload we did not write: ignore it.
			}
		});
		await client.connect();
		await client.query(`listen ${ENTRY_CHANGE_CHANNEL}`);
		// Anything that changed before LISTEN took effect is not in an index loaded after this point,
		// but an index loaded earlier may be stale: start clean.
		this.clear();
	}

	async close(): Promise<void> {
		this.closed = true;
		const client = this.listener;
		this.listener = undefined;
		await client?.end().catch(() => undefined);
	}
}

export interface MatchFilters {
	componentKind?: string;
	assembly?: string;
	tags?: string[];
	role?: string;
}

export interface MatchResult {
	traceId: string;
	entryId: string;
	role: string;
	comparison: Comparison;
	curve: CanonicalCurve;
}

/** Fewest descriptor candidates a query may re-rank with the exact distance, whatever the library size. */
export const MIN_CANDIDATES = 40;
/** Candidates per 100 000 stored traces (measured by `npm run bench -- match`). */
export const CANDIDATES_PER_100K = 128;
export const MAX_CANDIDATES = 4096;

/**
 * How many descriptor candidates a query may re-rank exactly in a library of `size` traces (most
 * stop earlier: see `compareUntilSettled`). The descriptor
 * score (truncated Parseval sum plus each trace's tail) orders traces like the exact distance up to
 * bench noise, so the true top ten sit among the traces whose score lies within a noise band of
 * theirs — and the number of traces in that band grows in proportion to the library. A fixed count
 * loses recall in large libraries and wastes exact comparisons in small ones; this one scales.
 */
export function candidatesFor(size: number, limit: number): number {
	const scaled = Math.ceil((size * CANDIDATES_PER_100K) / 100_000);
	return Math.min(MAX_CANDIDATES, Math.max(MIN_CANDIDATES, limit * 3, scaled));
}

/**
 * Stored traces ranked by shape against `query`: descriptor candidates from the index, re-ranked
 * by the exact engine distance until the top `limit` are settled (their curves loaded a batch at a
 * time), comparable conditions first. Only traces of entries the reader may
 * see; tenancy is the organisation's own index.
 */
export async function rankTraces(
	db: Kysely<Database>,
	indexes: MatchIndexes,
	orgId: string,
	reader: Reader,
	query: CanonicalCurve,
	options: { limit: number; filters?: MatchFilters }
): Promise<MatchResult[]> {
	const index = await indexes.forOrg(orgId);
	const f = options.filters ?? {};
	const accept = (m: TraceMeta<TraceFacts>) => {
		const d = m.data;
		const visible = reader.seesAll || d.status === 'published' || (reader.seesOwn && d.authorId === reader.userId);
		return (
			visible &&
			(!f.componentKind || d.componentKind === f.componentKind) &&
			(!f.assembly || d.assembly.toLowerCase().includes(f.assembly.toLowerCase())) &&
			(!f.role || d.role === f.role) &&
			(!f.tags?.length || f.tags.every((t) => d.tags.includes(t)))
		);
	};
	// Incomparable traces are only needed when comparable ones cannot fill the results (they rank below).
	const pool = index.search(descriptor(query), query.conditions, {
		candidates: candidatesFor(index.size, options.limit),
		enough: options.limit,
		accept
	});
	const compared = new Map<string, { comparison: Comparison; curve: CanonicalCurve }>();
	const exact = async (batch: Candidate<TraceFacts>[]) => {
		const curves = await findTraceCurves(db, orgId, batch.map((c) => c.meta.traceId));
		return batch.map((c) => {
			const curve = curves.get(c.meta.traceId);
			if (!curve) return undefined;
			const comparison = compare(query, curve);
			compared.set(c.meta.traceId, { comparison, curve });
			return comparison.distance;
		});
	};
	const score = (c: Candidate<TraceFacts>) => c.descriptorDistance;
	const near = await compareUntilSettled(
		pool.filter((c) => c.comparable),
		options.limit,
		score,
		exact
	);
	// Incomparable candidates come only when the comparable ones cannot fill the results.
	const rest = options.limit - near.length;
	const far = rest > 0 ? await compareUntilSettled(pool.filter((c) => !c.comparable), rest, score, exact) : [];
	return [...near, ...far]
		.map(({ candidate: c }) => ({ traceId: c.meta.traceId, entryId: c.meta.data.entryId, role: c.meta.data.role, ...compared.get(c.meta.traceId)! }))
		.sort((a, b) => Number(b.comparison.comparable) - Number(a.comparison.comparable) || a.comparison.distance - b.comparison.distance)
		.slice(0, options.limit);
}
