import { sql, type Kysely } from 'kysely';

// Mail to the on-call operators. The outbox is written in the same transaction as the change that
// causes a message, and a worker sends it later, so a relay outage delays mail but loses none.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('outbox')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('message_key', 'text', (c) => c.notNull().unique())
    .addColumn('kind', 'text', (c) => c.notNull())
    .addColumn('to_addresses', sql`text[]`, (c) => c.notNull())
    .addColumn('subject', 'text', (c) => c.notNull())
    .addColumn('text_body', 'text', (c) => c.notNull())
    .addColumn('html_body', 'text')
    // The trips table arrives later; the reference is added by the migration that creates it.
    .addColumn('trip_id', 'integer')
    .addColumn('state', 'text', (c) => c.notNull().defaultTo('queued').check(sql`state IN ('queued', 'sent', 'failed')`))
    .addColumn('attempts', 'integer', (c) => c.notNull().defaultTo(0).check(sql`attempts >= 0`))
    .addColumn('next_attempt_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('last_error', 'text')
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('sent_at', 'timestamptz')
    .execute();
  await sql`CREATE INDEX outbox_due_idx ON outbox (next_attempt_at) WHERE state = 'queued'`.execute(db);
  await db.schema.createIndex('outbox_created_idx').on('outbox').column('created_at').execute();
  await db.schema.createIndex('outbox_trip_idx').on('outbox').column('trip_id').execute();

  // Who is on call for a spacecraft, as half-open intervals [starts_at, ends_at).
  await db.schema
    .createTable('on_call_shift')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('user_id', 'text', (c) => c.notNull().references('app_user.id').onDelete('cascade'))
    .addColumn('starts_at', 'timestamptz', (c) => c.notNull())
    .addColumn('ends_at', 'timestamptz', (c) => c.notNull())
    .addColumn('created_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addCheckConstraint('on_call_shift_order_check', sql`ends_at > starts_at`)
    .execute();
  await db.schema.createIndex('on_call_shift_sc_time_idx').on('on_call_shift').columns(['spacecraft_id', 'starts_at', 'ends_at']).execute();

  // Caution openings waiting for their spacecraft's digest; digested_at is set when the digest is queued.
  await db.schema
    .createTable('mail_digest_item')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('trip_id', 'integer', (c) => c.notNull().unique())
    .addColumn('period_start', 'timestamptz', (c) => c.notNull())
    .addColumn('to_addresses', sql`text[]`, (c) => c.notNull())
    .addColumn('facts', 'jsonb', (c) => c.notNull())
    .addColumn('cleared_at', 'timestamptz')
    .addColumn('digested_at', 'timestamptz')
    .addColumn('outbox_id', 'integer', (c) => c.references('outbox.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();
  await sql`CREATE INDEX mail_digest_item_pending_idx ON mail_digest_item (period_start) WHERE digested_at IS NULL`.execute(db);
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('mail_digest_item').execute();
  await db.schema.dropTable('on_call_shift').execute();
  await db.schema.dropTable('outbox').execute();
}
