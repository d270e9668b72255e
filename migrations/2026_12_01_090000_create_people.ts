import { sql, type Kysely } from 'kysely';

export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('app_user')
    .addColumn('id', 'text', (c) => c.primaryKey())
    .addColumn('email', 'text', (c) => c.notNull())
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('password_hash', 'text')
    .addColumn('disabled_at', 'timestamptz')
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();
  await sql`CREATE UNIQUE INDEX app_user_email_key ON app_user (lower(email))`.execute(db);

  await db.schema
    .createTable('user_role')
    .addColumn('user_id', 'text', (c) => c.notNull().references('app_user.id').onDelete('cascade'))
    .addColumn('role', 'text', (c) => c.notNull().check(sql`role IN ('operator', 'analyst', 'engineer', 'admin')`))
    .addPrimaryKeyConstraint('user_role_pkey', ['user_id', 'role'])
    .execute();

  // Session table in the shape lucia's PostgreSQL adapter expects (id, user_id, expires_at).
  await db.schema
    .createTable('user_session')
    .addColumn('id', 'text', (c) => c.primaryKey())
    .addColumn('user_id', 'text', (c) => c.notNull().references('app_user.id').onDelete('cascade'))
    .addColumn('expires_at', 'timestamptz', (c) => c.notNull())
    .execute();
  await db.schema.createIndex('user_session_user_idx').on('user_session').column('user_id').execute();

  // Failed sign-in counters, one row per (scope, key, window).
  await db.schema
    .createTable('sign_in_attempt')
    .addColumn('scope', 'text', (c) => c.notNull().check(sql`scope IN ('account', 'address')`))
    .addColumn('key', 'text', (c) => c.notNull())
    .addColumn('window_start', 'timestamptz', (c) => c.notNull())
    .addColumn('failures', 'integer', (c) => c.notNull().defaultTo(0))
    .addPrimaryKeyConstraint('sign_in_attempt_pkey', ['scope', 'key', 'window_start'])
    .execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('sign_in_attempt').execute();
  await db.schema.dropTable('user_session').execute();
  await db.schema.dropTable('user_role').execute();
  await db.schema.dropTable('app_user').execute();
}
