import { sql, type Kysely } from 'kysely';

// The outbox and the digest items name the trip they are about, but until now without a foreign key
// (the mail tables were created before the trip table, and the trip table's migration did not add the
// reference). Here it is added, ON DELETE SET NULL: a message already queued or sent about a trip stays
// on record when the trip goes. A digest item's trip may therefore be null from now on. References to
// trips that do not exist (none should) are cleared first, so the constraint can be validated.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`UPDATE outbox o SET trip_id = NULL WHERE trip_id IS NOT NULL AND NOT EXISTS (SELECT 1 FROM trip t WHERE t.id = o.trip_id)`.execute(db);
  await sql`ALTER TABLE mail_digest_item ALTER COLUMN trip_id DROP NOT NULL`.execute(db);
  await sql`UPDATE mail_digest_item d SET trip_id = NULL WHERE NOT EXISTS (SELECT 1 FROM trip t WHERE t.id = d.trip_id)`.execute(db);
  await sql`ALTER TABLE outbox ADD CONSTRAINT outbox_trip_id_fkey FOREIGN KEY (trip_id) REFERENCES trip (id) ON DELETE SET NULL`.execute(db);
  await sql`ALTER TABLE mail_digest_item ADD CONSTRAINT mail_digest_item_trip_id_fkey FOREIGN KEY (trip_id) REFERENCES trip (id) ON DELETE SET NULL`.execute(db);
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE mail_digest_item DROP CONSTRAINT IF EXISTS mail_digest_item_trip_id_fkey`.execute(db);
  await sql`ALTER TABLE outbox DROP CONSTRAINT IF EXISTS outbox_trip_id_fkey`.execute(db);
  // The column was NOT NULL before: items whose trip was deleted cannot be kept under that rule.
  await sql`DELETE FROM mail_digest_item WHERE trip_id IS NULL`.execute(db);
  await sql`ALTER TABLE mail_digest_item ALTER COLUMN trip_id SET NOT NULL`.execute(db);
}
