import { sql, type Kysely } from 'kysely';

export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('spacecraft')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('key', 'text', (c) => c.notNull().unique().check(sql`key ~ '^[A-Z0-9-]{2,32}$'`))
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();

  // Effective-dated sheets: the sheet in force at time t is the latest effective_from <= t.
  await db.schema
    .createTable('spacecraft_sheet')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('effective_from', 'timestamptz', (c) => c.notNull())
    .addColumn('sheet', 'jsonb', (c) => c.notNull())
    .addColumn('uploaded_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('uploaded_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addUniqueConstraint('spacecraft_sheet_effective_key', ['spacecraft_id', 'effective_from'])
    .execute();

  await db.schema
    .createTable('ground_station')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('key', 'text', (c) => c.notNull().unique().check(sql`key ~ '^[a-z0-9-]{2,32}$'`))
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('latitude_deg', 'double precision', (c) => c.notNull().check(sql`latitude_deg BETWEEN -90 AND 90`))
    .addColumn('longitude_deg', 'double precision', (c) => c.notNull().check(sql`longitude_deg BETWEEN -180 AND 180`))
    .addColumn('altitude_m', 'double precision', (c) => c.notNull().defaultTo(0))
    .addColumn('elevation_mask_deg', 'double precision', (c) => c.notNull().defaultTo(10).check(sql`elevation_mask_deg BETWEEN 0 AND 45`))
    .execute();

  await db.schema
    .createTable('audit_log')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('actor_id', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('action', 'text', (c) => c.notNull())
    .addColumn('target_type', 'text', (c) => c.notNull())
    .addColumn('target_id', 'text', (c) => c.notNull())
    .addColumn('detail', 'jsonb', (c) => c.notNull().defaultTo(sql`'{}'::jsonb`))
    .execute();
  await db.schema.createIndex('audit_log_at_idx').on('audit_log').column('at').execute();
  await db.schema.createIndex('audit_log_target_idx').on('audit_log').columns(['target_type', 'target_id']).execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('audit_log').execute();
  await db.schema.dropTable('ground_station').execute();
  await db.schema.dropTable('spacecraft_sheet').execute();
  await db.schema.dropTable('spacecraft').execute();
}
