import type { Kysely, Transaction } from 'kysely';
import type { Database, LimitSetStatus } from './db/schema';
import type { SessionUser } from './auth/roles';
import { limitSetInputSchema, loopProblems, type LimitRuleInput, type LimitSetInput } from '../limits/limit-set.schema';
import { DEFAULT_RULES, defaultRulesFor } from '../limits/defaults';
import { quantityInfo } from '../limits/quantities';
import { findActiveLimitSet, findLimitSetById, findPreviousVersion, insertLimitSet, listLimitSets, lockLimitSetById, replaceLimitSetRules, ruleInputOf } from './limit-sets';
import { findSheetInForce } from './spacecraft';
import { insertAuditEntry } from './audit';
import { HttpError, parseWith } from './http';
import { listBacktests, rulesDigest, type BacktestView } from './backtest';
import { handOverLimits, type Handover } from './trip-engine';
import { mailTripsClosedAtHandover } from './mail/trip-mail';

type Db = Kysely<Database> | Transaction<Database>;

/** A limit set as the Limit bench lists it. */
export interface LimitSetSummary {
  id: number;
  version: number;
  name: string;
  status: LimitSetStatus;
  notes: string;
  createdBy: string | null;
  createdByName: string | null;
  createdAt: string;
  activatedAt: string | null;
  retiredAt: string | null;
  ruleCount: number;
}

/** One step of a set's review. */
export interface ReviewEntry {
  id: number;
  action: 'submitted' | 'approved' | 'returned';
  actorName: string | null;
  comment: string;
  at: string;
}

/** A limit set with everything the Limit bench shows about it. */
export interface LimitSetView extends LimitSetSummary {
  spacecraftKey: string;
  rules: LimitRuleInput[];
  rulesDigest: string;
  previous: { id: number; version: number; name: string; status: LimitSetStatus } | null;
  reviews: ReviewEntry[];
  backtests: BacktestView[];
}

const iso = (d: Date | null) => (d ? d.toISOString() : null);

function summaryOf(s: {
  id: number; version: number; name: string; status: LimitSetStatus; notes: string; created_by: string | null; created_by_name: string | null;
  created_at: Date; activated_at: Date | null; retired_at: Date | null;
}, ruleCount: number): LimitSetSummary {
  return {
    id: s.id, version: s.version, name: s.name, status: s.status, notes: s.notes, createdBy: s.created_by, createdByName: s.created_by_name,
    createdAt: s.created_at.toISOString(), activatedAt: iso(s.activated_at), retiredAt: iso(s.retired_at), ruleCount,
  };
}

/** Every limit set of a spacecraft, newest version first. */
export async function listLimitSetSummaries(db: Db, spacecraftId: number): Promise<LimitSetSummary[]> {
  return (await listLimitSets(db, spacecraftId)).map((s) => summaryOf(s, Number(s.rule_count ?? 0)));
}

/** The review trail of a set, oldest first. */
export async function listReviews(db: Db, setId: number): Promise<ReviewEntry[]> {
  const rows = await db
    .selectFrom('limit_set_review as r')
    .leftJoin('app_user as u', 'u.id', 'r.actor_id')
    .select(['r.id', 'r.action', 'r.comment', 'r.at', 'u.name'])
    .where('r.limit_set_id', '=', setId)
    .orderBy('r.at')
    .orderBy('r.id')
    .execute();
  return rows.map((r) => ({ id: r.id, action: r.action, actorName: r.name, comment: r.comment, at: r.at.toISOString() }));
}

/** A limit set with rules, review trail, kept backtests and the version it follows, or 404. */
export async function findLimitSetView(db: Db, id: number): Promise<LimitSetView> {
  const set = await findLimitSetById(db, id);
  if (!set) throw new HttpError('NOT_FOUND', `There is no limit set ${id}.`);
  const sc = await db.selectFrom('spacecraft').select('key').where('id', '=', set.spacecraft_id).executeTakeFirstOrThrow();
  const prev = await findPreviousVersion(db, set.spacecraft_id, set.version);
  const rules = set.rules.map(ruleInputOf);
  return {
    ...summaryOf(set, rules.length),
    spacecraftKey: sc.key,
    rules,
    rulesDigest: rulesDigest(rules),
    previous: prev ? { id: prev.id, version: prev.version, name: prev.name, status: prev.status } : null,
    reviews: await listReviews(db, id),
    backtests: await listBacktests(db, id),
  };
}

/** The loops of the spacecraft's sheet in force now. */
export async function loopIdsOf(db: Db, spacecraftId: number, at = new Date()): Promise<number[]> {
  const sheet = await findSheetInForce(db, spacecraftId, at);
  return sheet ? sheet.sheet.loops.map((l) => l.id) : [];
}

/** Validate a limit set for a spacecraft: the shared schema, then that every loop it names exists (400 with fields). */
export async function validateLimitSet(db: Db, spacecraftId: number, value: unknown): Promise<LimitSetInput> {
  const input = parseWith(limitSetInputSchema, value, 'limit set');
  const loops = loopProblems(input, await loopIdsOf(db, spacecraftId));
  if (Object.keys(loops).length) throw new HttpError('BAD_REQUEST', 'The limit set has errors; see fields.', loops);
  return input;
}

/** A new draft for a spacecraft: a copy of its active set, or of the set named, or of the defaults when it has none. */
export async function createDraft(db: Kysely<Database>, spacecraft: { id: number; key: string }, actor: SessionUser, copyOf?: number): Promise<{ id: number; version: number }> {
  return db.transaction().execute(async (trx) => {
    const source = copyOf !== undefined ? await findLimitSetById(trx, copyOf) : await findActiveLimitSet(trx, spacecraft.id);
    if (copyOf !== undefined && (!source || source.spacecraft_id !== spacecraft.id)) throw new HttpError('NOT_FOUND', `${spacecraft.key} has no limit set ${copyOf} to copy.`);
    const inForce = source ? undefined : await findSheetInForce(trx, spacecraft.id, new Date());
    const input: LimitSetInput = source
      ? { name: source.name, notes: '', rules: source.rules.map(ruleInputOf) }
      : { name: 'Default limits', notes: 'Started from the demo defaults (the spacecraft had no active set).', rules: inForce ? defaultRulesFor(inForce.sheet) : DEFAULT_RULES };
    const created = await insertLimitSet(trx, spacecraft.id, input, actor.id, 'draft');
    await insertAuditEntry(trx, {
      actorId: actor.id,
      action: 'limit-set.draft',
      targetType: 'limit_set',
      targetId: created.id,
      detail: { spacecraft: spacecraft.key, version: created.version, copyOf: source ? { id: source.id, version: source.version, status: source.status } : 'defaults' },
    });
    return created;
  });
}

async function lockOrThrow(trx: Transaction<Database>, id: number) {
  const set = await lockLimitSetById(trx, id);
  if (!set) throw new HttpError('NOT_FOUND', `There is no limit set ${id}.`);
  return set;
}

function authorOnly(set: { created_by: string | null; version: number }, actor: SessionUser, what: string): void {
  if (set.created_by !== actor.id) throw new HttpError('FORBIDDEN', `Only the author of draft v${set.version} may ${what} it; make a draft of your own from the active set instead.`);
}

function notAuthor(set: { created_by: string | null; version: number }, actor: SessionUser, what: string): void {
  if (set.created_by === actor.id) throw new HttpError('FORBIDDEN', `You wrote limit set v${set.version}, so you cannot ${what} it: a different engineer or an admin reviews it.`);
}

async function review(trx: Transaction<Database>, setId: number, action: 'submitted' | 'approved' | 'returned', actorId: string, comment: string): Promise<void> {
  await trx.insertInto('limit_set_review').values({ limit_set_id: setId, action, actor_id: actorId, comment }).execute();
}

/** Replace the rules of a draft (its author only); every loop must exist on the spacecraft. */
export async function updateDraft(db: Kysely<Database>, id: number, value: unknown, actor: SessionUser): Promise<void> {
  await db.transaction().execute(async (trx) => {
    const set = await lockOrThrow(trx, id);
    if (set.status !== 'draft') throw new HttpError('CONFLICT', `Limit set v${set.version} is ${set.status}; only a draft can be edited. Make a new draft to change it.`);
    authorOnly(set, actor, 'edit');
    const input = await validateLimitSet(trx, set.spacecraft_id, value);
    const before = (await findLimitSetById(trx, id))!.rules.map(ruleInputOf);
    await replaceLimitSetRules(trx, id, input);
    const d = diffRules(before, input.rules);
    await insertAuditEntry(trx, { actorId: actor.id, action: 'limit-set.update', targetType: 'limit_set', targetId: id, detail: { version: set.version, rules: input.rules.length, added: d.added.length, removed: d.removed.length, changed: d.changed.length } });
  });
}

/** Send a draft for review (its author only; a set without limits cannot go). */
export async function submitDraft(db: Kysely<Database>, id: number, actor: SessionUser, comment: string): Promise<void> {
  await db.transaction().execute(async (trx) => {
    const set = await lockOrThrow(trx, id);
    if (set.status !== 'draft') throw new HttpError('CONFLICT', `Limit set v${set.version} is ${set.status}; only a draft can be submitted.`);
    authorOnly(set, actor, 'submit');
    const n = await trx.selectFrom('limit_rule').select((eb) => eb.fn.countAll<number>().as('n')).where('limit_set_id', '=', id).executeTakeFirstOrThrow();
    if (Number(n.n) === 0) throw new HttpError('BAD_REQUEST', 'A limit set without limits cannot be submitted; add a limit first.');
    await trx.updateTable('limit_set').set({ status: 'in review' }).where('id', '=', id).execute();
    await review(trx, id, 'submitted', actor.id, comment);
    await insertAuditEntry(trx, { actorId: actor.id, action: 'limit-set.submit', targetType: 'limit_set', targetId: id, detail: { version: set.version, comment } });
  });
}

/**
 * Approve a set in review (not its author): it becomes active and the one in force retires, in
 * one transaction. The spacecraft's row is locked first so that two approvals take turns, and the
 * old set retires before the new one activates (one active set per spacecraft is a unique index).
 */
export async function approveSet(db: Kysely<Database>, id: number, actor: SessionUser, comment: string): Promise<{ activated: number; retired: number | null; handover: Handover | null }> {
  return db.transaction().execute(async (trx) => {
    const peek = await trx.selectFrom('limit_set').select('spacecraft_id').where('id', '=', id).executeTakeFirst();
    if (!peek) throw new HttpError('NOT_FOUND', `There is no limit set ${id}.`);
    await trx.selectFrom('spacecraft').select('id').where('id', '=', peek.spacecraft_id).forUpdate().executeTakeFirst();
    const set = await lockOrThrow(trx, id);
    if (set.status !== 'in review') throw new HttpError('CONFLICT', `Limit set v${set.version} is ${set.status}; only a set in review can be approved.`);
    notAuthor(set, actor, 'approve');
    const now = new Date();
    const old = await trx.selectFrom('limit_set').select(['id', 'version']).where('spacecraft_id', '=', set.spacecraft_id).where('status', '=', 'active').forUpdate().executeTakeFirst();
    if (old) {
      await trx.updateTable('limit_set').set({ status: 'retired', retired_at: now }).where('id', '=', old.id).execute();
      await insertAuditEntry(trx, { actorId: actor.id, action: 'limit-set.retire', targetType: 'limit_set', targetId: old.id, detail: { version: old.version, replacedBy: { id, version: set.version } } });
    }
    await trx.updateTable('limit_set').set({ status: 'active', activated_at: now }).where('id', '=', id).execute();
    const handover = old ? await handOverLimits(trx, set.spacecraft_id, old, { id, version: set.version }, await loopIdsOf(trx, set.spacecraft_id, now), now) : null;
    if (handover && handover.closed.length > 0) await mailTripsClosedAtHandover(trx, handover.closed, now);
    await review(trx, id, 'approved', actor.id, comment);
    await insertAuditEntry(trx, {
      actorId: actor.id, action: 'limit-set.approve', targetType: 'limit_set', targetId: id,
      detail: { version: set.version, comment, retired: old ? { id: old.id, version: old.version } : null, handover: handover ? { seededCursors: handover.seeded.length, closedTrips: handover.closed } : null },
    });
    return { activated: id, retired: old?.id ?? null, handover };
  });
}

/** Return a set in review to its author as a draft, with comments (not by its author). */
export async function returnSet(db: Kysely<Database>, id: number, actor: SessionUser, comment: string): Promise<void> {
  await db.transaction().execute(async (trx) => {
    const set = await lockOrThrow(trx, id);
    if (set.status !== 'in review') throw new HttpError('CONFLICT', `Limit set v${set.version} is ${set.status}; only a set in review can be returned.`);
    notAuthor(set, actor, 'return');
    await trx.updateTable('limit_set').set({ status: 'draft' }).where('id', '=', id).execute();
    await review(trx, id, 'returned', actor.id, comment);
    await insertAuditEntry(trx, { actorId: actor.id, action: 'limit-set.return', targetType: 'limit_set', targetId: id, detail: { version: set.version, comment } });
  });
}

// ── differences between versions ──────────────────────────────────────────────────────────────

export const RULE_FIELDS = ['cautionLow', 'warningLow', 'cautionHigh', 'warningHigh', 'clearLow', 'clearHigh', 'persistence', 'rationale'] as const;
export type RuleField = (typeof RULE_FIELDS)[number];

/** A limit named by its quantity and loop (the nth limit on them, when there are several). */
export interface DiffLimit {
  key: string;
  quantity: string;
  label: string;
  loopId: number | null;
  rule: LimitRuleInput;
}

export interface RuleDiff {
  added: DiffLimit[];
  removed: DiffLimit[];
  changed: { key: string; quantity: string; label: string; loopId: number | null; fields: { field: RuleField; before: number | string | null; after: number | string | null }[] }[];
  unchanged: number;
}

function keyed(rules: readonly LimitRuleInput[]): Map<string, DiffLimit> {
  const seen = new Map<string, number>();
  const out = new Map<string, DiffLimit>();
  for (const rule of rules) {
    const base = `${rule.quantity}|${rule.loopId ?? 'all'}`;
    const n = (seen.get(base) ?? 0) + 1;
    seen.set(base, n);
    const key = n === 1 ? base : `${base}|${n}`;
    out.set(key, { key, quantity: rule.quantity, label: quantityInfo(rule.quantity)?.label ?? rule.quantity, loopId: rule.loopId, rule });
  }
  return out;
}

/** Added, removed and changed limits between two versions, field by field; limits pair up by quantity and loop. */
export function diffRules(before: readonly LimitRuleInput[], after: readonly LimitRuleInput[]): RuleDiff {
  const a = keyed(before);
  const b = keyed(after);
  const out: RuleDiff = { added: [], removed: [], changed: [], unchanged: 0 };
  for (const [key, old] of a) {
    const now = b.get(key);
    if (!now) {
      out.removed.push(old);
      continue;
    }
    const fields = RULE_FIELDS.filter((f) => (old.rule[f] ?? null) !== (now.rule[f] ?? null)).map((f) => ({ field: f, before: old.rule[f] ?? null, after: now.rule[f] ?? null }));
    if (fields.length) out.changed.push({ key, quantity: now.quantity, label: now.label, loopId: now.loopId, fields });
    else out.unchanged++;
  }
  for (const [key, now] of b) if (!a.has(key)) out.added.push(now);
  return out;
}

/** A set against the version before it (the newest earlier version that was in force). */
export async function limitSetDiff(db: Db, id: number) {
  const set = await findLimitSetById(db, id);
  if (!set) throw new HttpError('NOT_FOUND', `There is no limit set ${id}.`);
  const prev = await findPreviousVersion(db, set.spacecraft_id, set.version);
  return {
    set: { id: set.id, version: set.version, name: set.name, status: set.status },
    previous: prev ? { id: prev.id, version: prev.version, name: prev.name, status: prev.status } : null,
    diff: diffRules(prev ? prev.rules.map(ruleInputOf) : [], set.rules.map(ruleInputOf)),
  };
}
