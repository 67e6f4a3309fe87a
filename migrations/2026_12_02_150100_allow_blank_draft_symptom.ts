import { type Kysely, sql } from 'kysely';

/**
 * A draft written from an unknown capture starts with no symptom: the technician has a curve, not
 * yet words for it. Drafts may leave the symptom blank; an entry needs one to leave draft (the
 * lifecycle rules refuse submit and publish without it, and this constraint backs them).
 */
export async function up(db: Kysely<any>): Promise<void> {
	await sql`alter table entry drop constraint entry_symptom_length`.execute(db);
	await sql`alter table entry add constraint entry_symptom_length
		check (char_length(symptom) <= 200 and (status = 'draft' or char_length(symptom) >= 1))`.execute(db);
}

export async function down(db: Kysely<any>): Promise<void> {
	await sql`update entry set symptom = 'No symptom written yet' where char_length(symptom) = 0`.execute(db);
	await sql`alter table entry drop constraint entry_symptom_length`.execute(db);
	await sql`alter table entry add constraint entry_symptom_length check (char_length(symptom) between 1 and 200)`.execute(db);
}
