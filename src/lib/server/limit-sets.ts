import type { Kysely, Transaction } from 'kysely';
import type { Database, LimitSetStatus } from './db/schema';
import type { LimitSetInput } from '../limits/limit-set.schema';
import { insertAuditEntry } from './audit';

type Db = Kysely<Database> | Transaction<Database>;

/** Store a limit set (next version for the spacecraft) with its rules; returns its id and version. */
export async function insertLimitSet(db: Db, spacecraftId: number, input: LimitSetInput, actorId: string | null, status: LimitSetStatus = 'draft'): Promise<{ id: number; version: number }> {
  const last = await db.selectFrom('limit_set').select((eb) => eb.fn.max('version').as('v')).where('spacecraft_id', '=', spacecraftId).executeTakeFirst();
  const version = (last?.v ?? 0) + 1;
  const set = await db
    .insertInto('limit_set')
    .values({ spacecraft_id: spacecraftId, version, name: input.name, notes: input.notes, status, created_by: actorId, activated_at: status === 'active' ? new Date() : null })
    .returning('id')
    .executeTakeFirstOrThrow();
  if (input.rules.length) {
    await db
      .insertInto('limit_rule')
      .values(
        input.rules.map((r) => ({
          limit_set_id: set.id,
          quantity: r.quantity,
          loop_id: r.loopId,
          caution_high: r.cautionHigh,
          warning_high: r.warningHigh,
          caution_low: r.cautionLow,
          warning_low: r.warningLow,
          clear_high: r.clearHigh,
          clear_low: r.clearLow,
          persistence: r.persistence,
          rationale: r.rationale,
        })),
      )
      .execute();
  }
  await insertAuditEntry(db, { actorId, action: 'limit-set.create', targetType: 'limit_set', targetId: set.id, detail: { spacecraftId, version, status, rules: input.rules.length } });
  return { id: set.id, version };
}

/** The active limit set of a spacecraft with its rules, or undefined. */
export async function findActiveLimitSet(db: Db, spacecraftId: number) {
  const set = await db.selectFrom('limit_set').selectAll().where('spacecraft_id', '=', spacecraftId).where('status', '=', 'active').executeTakeFirst();
  if (!set) return undefined;
  const rules = await db.selectFrom('limit_rule').selectAll().where('limit_set_id', '=', set.id).orderBy('id').execute();
  return { ...set, rules };
}
