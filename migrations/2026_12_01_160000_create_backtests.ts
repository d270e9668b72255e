import { sql, type Kysely } from 'kysely';

// The Limit bench: backtests of a limit set over stored history (a background job with progress
// and a kept result), and the review trail of each set (submitted, approved, returned with comments).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('backtest')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('limit_set_id', 'integer', (c) => c.notNull().references('limit_set.id').onDelete('cascade'))
    // The set it is compared with (the active one when it was asked for), if any.
    .addColumn('baseline_set_id', 'integer', (c) => c.references('limit_set.id').onDelete('set null'))
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('from_at', 'timestamptz', (c) => c.notNull())
    .addColumn('to_at', 'timestamptz', (c) => c.notNull())
    // Digest of the rules replayed, so a result made before the draft's last edit can say so.
    .addColumn('rules_digest', 'text', (c) => c.notNull())
    .addColumn('status', 'text', (c) => c.notNull().defaultTo('queued').check(sql`status IN ('queued', 'running', 'done', 'cancelled', 'failed')`))
    .addColumn('progress', 'smallint', (c) => c.notNull().defaultTo(0).check(sql`progress BETWEEN 0 AND 100`))
    .addColumn('result', 'jsonb')
    .addColumn('error', 'text')
    .addColumn('requested_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('started_at', 'timestamptz')
    .addColumn('finished_at', 'timestamptz')
    .addCheckConstraint('backtest_span_check', sql`to_at > from_at`)
    .execute();
  await db.schema.createIndex('backtest_set_idx').on('backtest').columns(['limit_set_id', 'created_at']).execute();
  await sql`CREATE INDEX backtest_pending_idx ON backtest (created_at) WHERE status IN ('queued', 'running')`.execute(db);

  await db.schema
    .createTable('limit_set_review')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('limit_set_id', 'integer', (c) => c.notNull().references('limit_set.id').onDelete('cascade'))
    .addColumn('action', 'text', (c) => c.notNull().check(sql`action IN ('submitted', 'approved', 'returned')`))
    .addColumn('actor_id', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('comment', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();
  await db.schema.createIndex('limit_set_review_set_idx').on('limit_set_review').columns(['limit_set_id', 'at']).execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('limit_set_review').ifExists().execute();
  await db.schema.dropTable('backtest').ifExists().execute();
}
