import { sql, type Kysely } from 'kysely';

// The analyst's Casefile of a trip: its conclusion, the notes thread and the notes' attachments.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('casefile')
    .addColumn('trip_id', 'integer', (c) => c.primaryKey().references('trip.id').onDelete('cascade'))
    .addColumn('conclusion', 'text', (c) => c.notNull())
    .addColumn('updated_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();

  await db.schema
    .createTable('trip_note')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('trip_id', 'integer', (c) => c.notNull().references('trip.id').onDelete('cascade'))
    .addColumn('author_id', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('body', 'text', (c) => c.notNull())
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();
  await db.schema.createIndex('trip_note_trip_idx').on('trip_note').columns(['trip_id', 'created_at']).execute();

  await db.schema
    .createTable('trip_attachment')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('trip_id', 'integer', (c) => c.notNull().references('trip.id').onDelete('cascade'))
    .addColumn('note_id', 'integer', (c) => c.notNull().references('trip_note.id').onDelete('cascade'))
    .addColumn('file_name', 'text', (c) => c.notNull())
    .addColumn('media_type', 'text', (c) => c.notNull().check(sql`media_type IN ('image/png', 'image/jpeg', 'text/csv', 'application/pdf')`))
    .addColumn('bytes', 'integer', (c) => c.notNull().check(sql`bytes > 0`))
    .addColumn('sha256', 'text', (c) => c.notNull())
    .addColumn('stored_path', 'text', (c) => c.notNull())
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();
  await db.schema.createIndex('trip_attachment_note_idx').on('trip_attachment').column('note_id').execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const t of ['trip_attachment', 'trip_note', 'casefile']) await db.schema.dropTable(t).ifExists().execute();
}
