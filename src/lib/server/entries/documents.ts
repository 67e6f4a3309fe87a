import { type Kysely, sql } from 'kysely';
import { popularityOf, type EntryDocument } from '../../../../search/settings';
import type { Database } from '../db/connect';
import { stripMarkdown } from '../markdown';

/**
 * Search documents for entries, read from Postgres (the only source of truth). The outbox worker
 * calls `loadEntryDocuments` for the ids it drains; a reindex walks `allEntryDocuments`.
 * Deleted entries do not load, so the worker removes them from the index.
 */
export async function loadEntryDocuments(db: Kysely<Database>, ids: string[]): Promise<EntryDocument[]> {
	if (ids.length === 0) return [];
	const rows = await db
		.selectFrom('entry')
		.selectAll()
		.select([
			sql<string | null>`(select t.class from trace t where t.entry_id = entry.id and t.role = 'fault' order by t.created_at limit 1)`.as('faultClass'),
			sql<string[]>`coalesce((select array_agg(distinct t.class) from trace t where t.entry_id = entry.id), '{}')`.as('traceClasses')
		])
		.where('id', 'in', ids)
		.where('deletedAt', 'is', null)
		.execute();
	return rows.map((r) => ({
		id: r.id,
		orgId: r.orgId,
		status: r.status,
		authorId: r.authorId,
		componentKind: r.componentKind,
		class: r.faultClass,
		tags: r.tags,
		assembly: r.assembly || null,
		partNumber: r.partNumber || null,
		title: r.title,
		symptom: [r.symptom, stripMarkdown(r.symptomDetail)].filter(Boolean).join('\n'),
		cause: stripMarkdown(r.cause),
		fix: stripMarkdown(r.fix),
		body: stripMarkdown(r.body),
		traceClasses: r.traceClasses,
		createdAt: r.createdAt.getTime(),
		updatedAt: r.updatedAt.getTime(),
		publishedAt: r.publishedAt?.getTime() ?? null,
		views: r.viewCount,
		helpedCount: r.helpedCount,
		popularity: popularityOf(r.viewCount, r.helpedCount)
	}));
}

/** Every live entry's document, in batches, for a rebuild. Deliberately across all organisations. */
export async function* allEntryDocuments(db: Kysely<Database>, batch = 500): AsyncIterable<EntryDocument[]> {
	let after = '00000000-0000-0000-0000-000000000000';
	for (;;) {
		const ids = await db
			.selectFrom('entry')
			.select('id')
			.where('deletedAt', 'is', null)
			.where('id', '>', after)
			.orderBy('id')
			.limit(batch)
			.execute();
		if (ids.length === 0) return;
		yield await loadEntryDocuments(db, ids.map((r) => r.id));
		after = ids[ids.length - 1].id;
	}
}
