import type { Kysely } from 'kysely';

// A trip whose limit set retires is closed at the handover with a note saying so, so that it is never
// mistaken for a condition that returned within its limits.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('trip').addColumn('cleared_note', 'text').execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('trip').dropColumn('cleared_note').execute();
}
