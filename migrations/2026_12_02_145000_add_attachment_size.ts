import { type Kysely, sql } from 'kysely';

/**
 * A photo's pixel size, read from its header when it is stored, so pages can reserve its space
 * (width and height on the img) and the export can carry it. Null only for rows written before.
 * The byte limit backs the upload's own (8 MB), and the recorded size must be the stored size.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema.alterTable('attachment').addColumn('width', 'integer').addColumn('height', 'integer').execute();
	await sql`alter table attachment add constraint attachment_size_positive check (width > 0 and height > 0)`.execute(db);
	await sql`alter table attachment add constraint attachment_bytes_limit check (bytes > 0 and bytes <= 8388608 and bytes = octet_length(data))`.execute(db);
}

export async function down(db: Kysely<any>): Promise<void> {
	await sql`alter table attachment drop constraint attachment_bytes_limit`.execute(db);
	await sql`alter table attachment drop constraint attachment_size_positive`.execute(db);
	await db.schema.alterTable('attachment').dropColumn('width').dropColumn('height').execute();
}
