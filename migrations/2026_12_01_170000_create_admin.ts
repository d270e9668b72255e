import { sql, type Kysely } from 'kysely';

// People administration: one-time links (invitations and password resets) and the counters that
// rate-limit reset requests.
export async function up(db: Kysely<any>): Promise<void> {
  // A one-time link. Only the SHA-256 digest of the token is kept; the clear token is in the mail.
  await db.schema
    .createTable('user_token')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('user_id', 'text', (c) => c.notNull().references('app_user.id').onDelete('cascade'))
    .addColumn('purpose', 'text', (c) => c.notNull().check(sql`purpose IN ('invite', 'reset')`))
    .addColumn('token_hash', 'text', (c) => c.notNull().unique())
    .addColumn('created_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('expires_at', 'timestamptz', (c) => c.notNull())
    .addColumn('used_at', 'timestamptz')
    .addCheckConstraint('user_token_expiry_check', sql`expires_at > created_at`)
    .execute();
  await db.schema.createIndex('user_token_user_idx').on('user_token').columns(['user_id', 'purpose']).execute();

  // Reset requests per window, by the address asked for (whether or not it has an account) and by
  // the requesting client's network address.
  await db.schema
    .createTable('password_reset_attempt')
    .addColumn('scope', 'text', (c) => c.notNull().check(sql`scope IN ('email', 'address')`))
    .addColumn('key', 'text', (c) => c.notNull())
    .addColumn('window_start', 'timestamptz', (c) => c.notNull())
    .addColumn('requests', 'integer', (c) => c.notNull().defaultTo(0))
    .addPrimaryKeyConstraint('password_reset_attempt_pkey', ['scope', 'key', 'window_start'])
    .execute();

  // The audit page filters by actor (time and target already have indexes).
  await db.schema.createIndex('audit_log_actor_idx').on('audit_log').columns(['actor_id', 'at']).execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropIndex('audit_log_actor_idx').ifExists().execute();
  await db.schema.dropTable('password_reset_attempt').ifExists().execute();
  await db.schema.dropTable('user_token').ifExists().execute();
}
