import type { Kysely, Transaction } from 'kysely';
import type { Database, LimitSetStatus } from './db/schema';
import type { LimitRuleInput, LimitSetInput } from '../limits/limit-set.schema';
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
  await insertRules(db, set.id, input.rules);
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

/** A stored rule as the shared limit schema reads it. */
export function ruleInputOf(r: {
  quantity: string; loop_id: number | null; caution_high: number | null; warning_high: number | null; caution_low: number | null; warning_low: number | null;
  clear_high: number | null; clear_low: number | null; persistence: number; rationale: string;
}): LimitRuleInput {
  return {
    quantity: r.quantity,
    loopId: r.loop_id,
    cautionHigh: r.caution_high,
    warningHigh: r.warning_high,
    cautionLow: r.caution_low,
    warningLow: r.warning_low,
    clearHigh: r.clear_high,
    clearLow: r.clear_low,
    persistence: r.persistence,
    rationale: r.rationale,
  };
}

const SET_COLUMNS = ['s.id', 's.spacecraft_id', 's.version', 's.name', 's.status', 's.notes', 's.created_by', 's.created_at', 's.activated_at', 's.retired_at'] as const;

/** A limit set with its rules (in stored order) and its author's name, or undefined. */
export async function findLimitSetById(db: Db, id: number) {
  const set = await db
    .selectFrom('limit_set as s')
    .leftJoin('app_user as u', 'u.id', 's.created_by')
    .select([...SET_COLUMNS, 'u.name as created_by_name'])
    .where('s.id', '=', id)
    .executeTakeFirst();
  if (!set) return undefined;
  const rules = await db.selectFrom('limit_rule').selectAll().where('limit_set_id', '=', id).orderBy('id').execute();
  return { ...set, rules };
}

/** Lock a limit set's row for the rest of the transaction; returns it, or undefined. */
export function lockLimitSetById(trx: Transaction<Database>, id: number) {
  return trx.selectFrom('limit_set').selectAll().where('id', '=', id).forUpdate().executeTakeFirst();
}

/** Every limit set of a spacecraft, newest version first, with its number of rules and author's name. */
export function listLimitSets(db: Db, spacecraftId: number) {
  return db
    .selectFrom('limit_set as s')
    .leftJoin('app_user as u', 'u.id', 's.created_by')
    .select([...SET_COLUMNS, 'u.name as created_by_name'])
    .select((eb) => eb.selectFrom('limit_rule as r').select((e) => e.fn.countAll<number>().as('n')).whereRef('r.limit_set_id', '=', 's.id').as('rule_count'))
    .where('s.spacecraft_id', '=', spacecraftId)
    .orderBy('s.version', 'desc')
    .execute();
}

/** Replace a set's name, notes and rules (the caller checks that it is a draft and locks it). */
export async function replaceLimitSetRules(trx: Transaction<Database>, id: number, input: LimitSetInput): Promise<void> {
  await trx.updateTable('limit_set').set({ name: input.name, notes: input.notes }).where('id', '=', id).execute();
  await trx.deleteFrom('limit_rule').where('limit_set_id', '=', id).execute();
  await insertRules(trx, id, input.rules);
}

/** Store a set's rules, in their order. */
async function insertRules(db: Db, setId: number, rules: LimitSetInput['rules']): Promise<void> {
  if (!rules.length) return;
  await db
    .insertInto('limit_rule')
    .values(
      rules.map((r) => ({
        limit_set_id: setId,
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

/** The version before a set: the newest earlier version that was ever in force, or undefined. */
export async function findPreviousVersion(db: Db, spacecraftId: number, version: number) {
  const prev = await db
    .selectFrom('limit_set')
    .select('id')
    .where('spacecraft_id', '=', spacecraftId)
    .where('version', '<', version)
    .where('activated_at', 'is not', null)
    .orderBy('version', 'desc')
    .limit(1)
    .executeTakeFirst();
  return prev ? findLimitSetById(db, prev.id) : undefined;
}
