import { type Kysely, type Selectable, type Transaction, sql } from 'kysely';
import { EDITABLE_FIELDS, type EntryFields, type EntryListQuery, type EntryStatus } from '../../schemas/entries';
import type { Database } from '../db/connect';
import type { Entry as EntryRow } from '../db/schema';

type Db = Kysely<Database> | Transaction<Database>;

/** An entry as the rest of the app sees it (camelCase, no soft-delete bookkeeping). */
export interface Entry extends EntryFields {
	id: string;
	orgId: string;
	status: EntryStatus;
	authorId: string | null;
	authorName: string | null;
	reviewerId: string | null;
	reviewComment: string | null;
	version: number;
	createdAt: Date;
	updatedAt: Date;
	submittedAt: Date | null;
	publishedAt: Date | null;
	viewCount: number;
	helpedCount: number;
	/** The engine's class of the entry's first fault trace, if it has one. */
	signatureClass: string | null;
}

/** Who is asking, for visibility: viewers see published entries; contributors also their own. */
export interface Reader {
	userId: string;
	/** May see every entry of the organisation, whatever its status (authors and admins). */
	seesAll: boolean;
	/** May see entries in review and drafts they wrote (contributors). */
	seesOwn: boolean;
}


/** The editable fields of an entry, as stored in a revision snapshot. */
export function snapshotOf(entry: EntryFields): EntryFields {
	return Object.fromEntries(EDITABLE_FIELDS.map((k) => [k, entry[k]])) as EntryFields;
}

function toEntry(row: Selectable<EntryRow> & { authorName: string | null; signatureClass: string | null }): Entry {
	return {
		id: row.id,
		orgId: row.orgId,
		title: row.title,
		componentKind: row.componentKind as Entry['componentKind'],
		partNumber: row.partNumber,
		package: row.package,
		assembly: row.assembly,
		testPoint: row.testPoint,
		symptom: row.symptom,
		symptomDetail: row.symptomDetail,
		cause: row.cause,
		fix: row.fix,
		body: row.body,
		tags: row.tags,
		status: row.status,
		authorId: row.authorId,
		authorName: row.authorName,
		reviewerId: row.reviewerId,
		reviewComment: row.reviewComment,
		version: row.version,
		createdAt: row.createdAt,
		updatedAt: row.updatedAt,
		submittedAt: row.submittedAt,
		publishedAt: row.publishedAt,
		viewCount: row.viewCount,
		helpedCount: row.helpedCount,
		signatureClass: row.signatureClass
	};
}

function baseQuery(db: Db, orgId: string) {
	return db
		.selectFrom('entry')
		.selectAll('entry')
		// "User" is an Auth.js table the camelCase plugin would misspell; raw SQL names it as it is.
		.select(sql<string | null>`(select coalesce(u.name, u.email) from "User" u where u.id = entry.author_id)`.as('authorName'))
		.select(
			sql<string | null>`(select t.class from trace t where t.entry_id = entry.id and t.role = 'fault' order by t.created_at, t.id limit 1)`.as(
				'signatureClass'
			)
		)
		.where('entry.orgId', '=', orgId)
		.where('entry.deletedAt', 'is', null);
}

function visibleTo<QB extends ReturnType<typeof baseQuery>>(qb: QB, reader: Reader): QB {
	if (reader.seesAll) return qb;
	return qb.where((eb) =>
		reader.seesOwn
			? eb.or([eb('entry.status', '=', 'published'), eb('entry.authorId', '=', reader.userId)])
			: eb('entry.status', '=', 'published')
	) as QB;
}

/** One entry the reader may see; undefined when it does not exist, is deleted, or is hidden from them. */
export async function findEntry(db: Db, orgId: string, id: string, reader: Reader): Promise<Entry | undefined> {
	const row = await visibleTo(baseQuery(db, orgId), reader).where('entry.id', '=', id).executeTakeFirst();
	return row ? toEntry(row) : undefined;
}

/** Locks the entry row for the rest of the transaction (for version checks and transitions). */
export async function lockEntry(trx: Transaction<Database>, orgId: string, id: string): Promise<Entry | undefined> {
	const row = await baseQuery(trx, orgId).where('entry.id', '=', id).forUpdate().executeTakeFirst();
	return row ? toEntry(row) : undefined;
}

export interface EntryPage {
	entries: Entry[];
	/** Opaque cursor for the next page, or null on the last page. */
	nextCursor: string | null;
}

const SORT_COLUMN = { updated: 'entry.updatedAt', created: 'entry.createdAt', title: 'entry.title' } as const;

function encodeCursor(value: string, id: string): string {
	return Buffer.from(JSON.stringify([value, id])).toString('base64url');
}

function decodeCursor(cursor: string): [string, string] | undefined {
	try {
		const parsed = JSON.parse(Buffer.from(cursor, 'base64url').toString('utf8'));
		if (Array.isArray(parsed) && parsed.length === 2 && parsed.every((p) => typeof p === 'string')) return parsed as [string, string];
	} catch {
		// fall through: a tampered cursor starts from the beginning
	}
	return undefined;
}

/**
 * A page of the entries the reader may see, filtered and sorted, with keyset (cursor)
 * pagination: stable while entries are added, and as fast on page 100 as on page 1.
 */
export async function listEntries(db: Db, orgId: string, reader: Reader, query: EntryListQuery): Promise<EntryPage> {
	let qb = visibleTo(baseQuery(db, orgId), reader);
	if (query.status?.length) qb = qb.where('entry.status', 'in', query.status as EntryStatus[]);
	if (query.kind?.length) qb = qb.where('entry.componentKind', 'in', query.kind);
	if (query.tag?.length) qb = qb.where(sql<boolean>`entry.tags @> ${sql.val(query.tag)}::text[]`);
	if (query.author) qb = qb.where('entry.authorId', '=', query.author);
	if (query.assembly) qb = qb.where('entry.assembly', 'ilike', `%${escapeLike(query.assembly)}%`);
	if (query.class?.length) {
		const classes = query.class;
		qb = qb.where((eb) =>
			eb.exists(
				eb
					.selectFrom('trace')
					.select(sql`1`.as('one'))
					.whereRef('trace.entryId', '=', 'entry.id')
					.where('trace.orgId', '=', orgId)
					.where('trace.role', '=', 'fault')
					.where('trace.class', 'in', classes)
			)
		);
	}
	if (query.q) {
		const like = `%${escapeLike(query.q)}%`;
		qb = qb.where((eb) => eb.or([eb('entry.title', 'ilike', like), eb('entry.symptom', 'ilike', like), eb('entry.partNumber', 'ilike', like)]));
	}
	const column = SORT_COLUMN[query.sort];
	const dir = query.order;
	const after = query.cursor ? decodeCursor(query.cursor) : undefined;
	if (after) {
		const [value, id] = after;
		const typed = query.sort === 'title' ? sql`${value}` : sql`${value}::timestamptz`;
		qb = qb.where(sql<boolean>`(${sql.ref(column)}, entry.id) ${sql.raw(dir === 'desc' ? '<' : '>')} (${typed}, ${id}::uuid)`);
	}
	const rows = await qb.orderBy(column, dir).orderBy('entry.id', dir).limit(query.limit + 1).execute();
	const page = rows.slice(0, query.limit).map(toEntry);
	const last = page.at(-1);
	const nextCursor =
		rows.length > query.limit && last
			? encodeCursor(query.sort === 'title' ? last.title : (query.sort === 'created' ? last.createdAt : last.updatedAt).toISOString(), last.id)
			: null;
	return { entries: page, nextCursor };
}

export function escapeLike(s: string): string {
	return s.replace(/[\\%_]/g, (c) => `\\${c}`);
}

export async function insertEntry(trx: Db, orgId: string, authorId: string, fields: EntryFields): Promise<string> {
	const row = await trx
		.insertInto('entry')
		.values({ orgId, authorId, ...snapshotOf(fields) })
		.returning('id')
		.executeTakeFirstOrThrow();
	return row.id;
}

/**
 * Writes new field values and bumps the version, only if the entry is still at `expectedVersion`.
 * Returns the new version, or undefined when someone saved a newer version first.
 */
export async function updateEntryFields(
	trx: Db,
	orgId: string,
	id: string,
	expectedVersion: number,
	fields: EntryFields
): Promise<number | undefined> {
	const row = await trx
		.updateTable('entry')
		.set({ ...snapshotOf(fields), version: sql`version + 1`, updatedAt: sql`now()` })
		.where('orgId', '=', orgId)
		.where('id', '=', id)
		.where('version', '=', expectedVersion)
		.where('deletedAt', 'is', null)
		.returning('version')
		.executeTakeFirst();
	return row?.version;
}

export async function insertRevision(
	trx: Db,
	orgId: string,
	entryId: string,
	version: number,
	savedBy: string,
	snapshot: EntryFields,
	note = ''
): Promise<void> {
	await trx
		.insertInto('entryRevision')
		.values({ orgId, entryId, version, savedBy, snapshot: JSON.stringify(snapshot), note })
		.execute();
}

export interface Revision {
	version: number;
	savedBy: string | null;
	savedByName: string | null;
	savedAt: Date;
	note: string;
	snapshot: EntryFields;
}

export async function listRevisions(db: Db, orgId: string, entryId: string): Promise<Revision[]> {
	const rows = await db
		.selectFrom('entryRevision')
		.select(['entryRevision.version', 'entryRevision.savedBy', 'entryRevision.savedAt', 'entryRevision.note', 'entryRevision.snapshot'])
		.select(sql<string | null>`(select coalesce(u.name, u.email) from "User" u where u.id = entry_revision.saved_by)`.as('savedByName'))
		.where('entryRevision.orgId', '=', orgId)
		.where('entryRevision.entryId', '=', entryId)
		.orderBy('entryRevision.version', 'desc')
		.limit(500)
		.execute();
	return rows.map((r) => ({ ...r, snapshot: r.snapshot as unknown as EntryFields }));
}

export async function setEntryStatus(
	trx: Db,
	orgId: string,
	id: string,
	patch: { status: EntryStatus; reviewerId?: string | null; reviewComment?: string | null; submittedAt?: Date | null; publishedAt?: Date | null }
): Promise<void> {
	await trx
		.updateTable('entry')
		.set({ ...patch, updatedAt: sql`now()` })
		.where('orgId', '=', orgId)
		.where('id', '=', id)
		.execute();
}

export async function softDeleteEntry(trx: Db, orgId: string, id: string, by: string): Promise<boolean> {
	const r = await trx
		.updateTable('entry')
		.set({ deletedAt: sql`now()`, deletedBy: by })
		.where('orgId', '=', orgId)
		.where('id', '=', id)
		.where('deletedAt', 'is', null)
		.executeTakeFirst();
	return Number(r.numUpdatedRows) === 1;
}

/** Restores a soft-deleted entry while it is inside the restore window. */
export async function restoreEntry(trx: Db, orgId: string, id: string, windowDays: number): Promise<boolean> {
	const r = await trx
		.updateTable('entry')
		.set({ deletedAt: null, deletedBy: null })
		.where('orgId', '=', orgId)
		.where('id', '=', id)
		.where('deletedAt', '>', sql<Date>`now() - make_interval(days => ${windowDays})`)
		.executeTakeFirst();
	return Number(r.numUpdatedRows) === 1;
}

/** The tags in use on entries the reader may see, most used first (for the table's filter). */
export async function listEntryTags(db: Db, orgId: string, reader: Reader, limit = 200): Promise<{ tag: string; count: number }[]> {
	const visible = visibleTo(baseQuery(db, orgId), reader).clearSelect().select('entry.tags');
	const { rows } = await sql<{ tag: string; count: number }>`
		select tag, count(*)::int as count
		from (${visible}) as e, unnest(e.tags) as tag
		group by tag order by count desc, tag limit ${limit}
	`.execute(db);
	return rows;
}

/** The writers of entries the reader may see (for the table's filter), by name. */
export async function listEntryAuthors(db: Db, orgId: string, reader: Reader): Promise<{ id: string; name: string }[]> {
	const visible = visibleTo(baseQuery(db, orgId), reader).clearSelect().select('entry.authorId').where('entry.authorId', 'is not', null).distinct();
	const { rows } = await sql<{ id: string; name: string }>`
		select u.id, coalesce(u.name, u.email) as name from "User" u where u.id in (${visible}) order by 2 limit 500
	`.execute(db);
	return rows;
}

/** Counts of entries waiting for review, for the authors' badge. */
export async function countInReview(db: Db, orgId: string): Promise<number> {
	const r = await db
		.selectFrom('entry')
		.select(sql<number>`count(*)::int`.as('n'))
		.where('orgId', '=', orgId)
		.where('status', '=', 'in_review')
		.where('deletedAt', 'is', null)
		.executeTakeFirstOrThrow();
	return r.n;
}

/** Several entries the reader may see, by id (for match results); missing ones are left out. */
export async function findEntriesByIds(db: Db, orgId: string, ids: string[], reader: Reader): Promise<Map<string, Entry>> {
	if (ids.length === 0) return new Map();
	const rows = await visibleTo(baseQuery(db, orgId), reader).where('entry.id', 'in', ids).limit(ids.length).execute();
	return new Map(rows.map((r) => [r.id, toEntry(r)]));
}
