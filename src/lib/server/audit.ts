import type { Kysely, Transaction } from 'kysely';
import type { Database } from './db/schema';

/** Record who did what to what; written in the same transaction as the change. */
export async function insertAuditEntry(
  db: Kysely<Database> | Transaction<Database>,
  entry: { actorId: string | null; action: string; targetType: string; targetId: string | number; detail?: unknown },
): Promise<void> {
  await db
    .insertInto('audit_log')
    .values({
      actor_id: entry.actorId,
      action: entry.action,
      target_type: entry.targetType,
      target_id: String(entry.targetId),
      detail: JSON.stringify(entry.detail ?? {}),
    })
    .execute();
}
