import { sql, type Kysely } from 'kysely';

// Each ingest batch records whether the analysis has taken it in. A batch id is reserved before its
// packets are decoded, so batches commit out of id order; a cursor on the highest analysed id would
// skip a lower-id batch that committed after it. The job now takes every committed batch not yet
// analysed and marks it in the same transaction. A batch whose analysis keeps failing is given up
// after a few attempts with its error kept, so it no longer blocks the others.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .alterTable('ingest_batch')
    .addColumn('analysed_at', 'timestamptz')
    .addColumn('analysis_attempts', 'smallint', (c) => c.notNull().defaultTo(0))
    .addColumn('analysis_error', 'text')
    .execute();
  // What the cursor said was analysed is taken as analysed.
  await sql`UPDATE ingest_batch b SET analysed_at = c.updated_at FROM analysis_cursor c WHERE b.spacecraft_id = c.spacecraft_id AND b.id <= c.last_batch_id`.execute(db);
  await sql`CREATE INDEX ingest_batch_unanalysed_idx ON ingest_batch (spacecraft_id, id) WHERE analysed_at IS NULL`.execute(db);
  await db.schema.dropTable('analysis_cursor').execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('analysis_cursor')
    .addColumn('spacecraft_id', 'integer', (c) => c.primaryKey().references('spacecraft.id').onDelete('cascade'))
    .addColumn('last_batch_id', 'integer', (c) => c.notNull().defaultTo(0))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();
  // The cursor stands below the first batch not analysed (the old job reads everything above it).
  await sql`INSERT INTO analysis_cursor (spacecraft_id, last_batch_id, updated_at)
    SELECT spacecraft_id, coalesce(min(id) FILTER (WHERE analysed_at IS NULL) - 1, max(id)), coalesce(max(analysed_at), now())
    FROM ingest_batch GROUP BY spacecraft_id`.execute(db);
  await sql`DROP INDEX IF EXISTS ingest_batch_unanalysed_idx`.execute(db);
  await db.schema.alterTable('ingest_batch').dropColumn('analysed_at').dropColumn('analysis_attempts').dropColumn('analysis_error').execute();
}
