import { type Kysely, sql } from 'kysely';

/**
 * Traces stored before `descriptor_tail` existed got 0, which the match index cannot tell from a
 * measured 0. Make "not computed yet" explicit (null); the server computes the missing tails from
 * each trace's stored canonical curve at start-up (`backfillDescriptorTails`). A trace whose tail
 * really is 0 is simply computed again, to the same 0.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await sql`alter table trace alter column descriptor_tail drop not null, alter column descriptor_tail drop default`.execute(db);
	await sql`update trace set descriptor_tail = null where descriptor_tail = 0`.execute(db);
	await sql`create index trace_descriptor_tail_missing_index on trace (id) where descriptor_tail is null`.execute(db);
}

export async function down(db: Kysely<any>): Promise<void> {
	await sql`drop index trace_descriptor_tail_missing_index`.execute(db);
	await sql`update trace set descriptor_tail = 0 where descriptor_tail is null`.execute(db);
	await sql`alter table trace alter column descriptor_tail set default 0, alter column descriptor_tail set not null`.execute(db);
}
