import { sql, type Kysely } from 'kysely';

// Pass watch: the live feed's commit-ordered event log and the operators' handover notes.
//
// Batch ids come from a sequence taken before decoding, so two requests for one spacecraft may
// commit in the other order; a reader resuming "after batch 41" could then miss batch 40. Each
// stored batch therefore gets a per-spacecraft event number from a counter row, bumped by a
// trigger as the last write of the ingest transaction: the row lock makes the numbers follow the
// commit order, and a reader that resumes after number n misses nothing. The notification is
// sent by the same transaction and delivered by PostgreSQL only once it has committed.
// Trip changes only notify (no counter, so the analysis job's long transaction holds no lock that
// ingest waits on); trips are state, re-read in full by the reader.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('live_counter')
    .addColumn('spacecraft_id', 'integer', (c) => c.primaryKey().references('spacecraft.id').onDelete('cascade'))
    .addColumn('seq', 'bigint', (c) => c.notNull())
    .execute();

  await db.schema
    .createTable('live_batch')
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('seq', 'bigint', (c) => c.notNull())
    .addColumn('batch_id', 'integer', (c) => c.notNull().unique().references('ingest_batch.id').onDelete('cascade'))
    .addPrimaryKeyConstraint('live_batch_pkey', ['spacecraft_id', 'seq'])
    .execute();

  // storeBatch writes the batch's counts with one UPDATE at the end of its transaction.
  await sql`
    CREATE FUNCTION millrace_live_batch() RETURNS trigger LANGUAGE plpgsql AS $$
    DECLARE n bigint;
    BEGIN
      IF NEW.accepted + NEW.rejected = 0 OR EXISTS (SELECT 1 FROM live_batch WHERE batch_id = NEW.id) THEN
        RETURN NULL;
      END IF;
      INSERT INTO live_counter AS c (spacecraft_id, seq) VALUES (NEW.spacecraft_id, 1)
        ON CONFLICT (spacecraft_id) DO UPDATE SET seq = c.seq + 1
        RETURNING c.seq INTO n;
      INSERT INTO live_batch (spacecraft_id, seq, batch_id) VALUES (NEW.spacecraft_id, n, NEW.id);
      PERFORM pg_notify('millrace_live', 'b:' || NEW.spacecraft_id || ':' || n);
      RETURN NULL;
    END $$`.execute(db);
  await sql`CREATE TRIGGER ingest_batch_live AFTER UPDATE OF accepted ON ingest_batch FOR EACH ROW EXECUTE FUNCTION millrace_live_batch()`.execute(db);

  await sql`
    CREATE FUNCTION millrace_live_trip() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      PERFORM pg_notify('millrace_live', 't:' || NEW.spacecraft_id || ':' || NEW.id);
      RETURN NULL;
    END $$`.execute(db);
  await sql`CREATE TRIGGER trip_live AFTER INSERT OR UPDATE ON trip FOR EACH ROW EXECUTE FUNCTION millrace_live_trip()`.execute(db);

  // A handover note on one pass (station, AOS, LOS as predicted when it was written).
  await db.schema
    .createTable('pass_note')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('station_id', 'integer', (c) => c.notNull().references('ground_station.id').onDelete('cascade'))
    .addColumn('aos_at', 'timestamptz', (c) => c.notNull())
    .addColumn('los_at', 'timestamptz', (c) => c.notNull())
    .addColumn('note', 'text', (c) => c.notNull())
    .addColumn('author_id', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addCheckConstraint('pass_note_order_check', sql`los_at > aos_at`)
    .execute();
  await db.schema.createIndex('pass_note_sc_aos_idx').on('pass_note').columns(['spacecraft_id', 'aos_at']).execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('pass_note').ifExists().execute();
  await sql`DROP TRIGGER IF EXISTS trip_live ON trip`.execute(db);
  await sql`DROP FUNCTION IF EXISTS millrace_live_trip()`.execute(db);
  await sql`DROP TRIGGER IF EXISTS ingest_batch_live ON ingest_batch`.execute(db);
  await sql`DROP FUNCTION IF EXISTS millrace_live_batch()`.execute(db);
  await db.schema.dropTable('live_batch').ifExists().execute();
  await db.schema.dropTable('live_counter').ifExists().execute();
}
