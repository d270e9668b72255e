import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { evaluateRule, initialRuleState, type Point, type Rule, type RuleState, type TripEvent } from '../limits/evaluate';
import { quantityInfo, type QuantityInfo } from '../limits/quantities';
import { unixSecondsOf } from './analysis-store';
import { formatUtc } from '../format';

type Db = Kysely<Database> | Transaction<Database>;

/** A stored limit rule with the version of its set. */
export interface StoredRule extends Rule {
  id: number;
  limitSetId: number;
  limitSetVersion: number;
  quantity: string;
  loopId: number | null;
}

/** Body-scope rules use this loop id in cursors. */
export const BODY = -1;

/** The cursor loop ids a rule is judged on: the body, its one loop, or every loop of the sheet. */
function ruleTargets(info: QuantityInfo, loopId: number | null, loopIds: readonly number[]): readonly number[] {
  return info.scope === 'body' ? [BODY] : loopId !== null ? [loopId] : loopIds;
}

/** The rules of the spacecraft's active limit set. */
export async function findActiveRules(db: Db, spacecraftId: number): Promise<StoredRule[]> {
  const rows = await db
    .selectFrom('limit_rule as r')
    .innerJoin('limit_set as s', 's.id', 'r.limit_set_id')
    .select(['r.id', 'r.limit_set_id', 's.version', 'r.quantity', 'r.loop_id', 'r.caution_high', 'r.warning_high', 'r.caution_low', 'r.warning_low', 'r.clear_high', 'r.clear_low', 'r.persistence'])
    .where('s.spacecraft_id', '=', spacecraftId)
    .where('s.status', '=', 'active')
    .orderBy('r.id')
    .execute();
  return rows.map(toStoredRule);
}

/** Map a limit_rule row (with its set's version) to the engine's rule. */
export function toStoredRule(r: {
  id: number; limit_set_id: number; version: number; quantity: string; loop_id: number | null;
  caution_high: number | null; warning_high: number | null; caution_low: number | null; warning_low: number | null; clear_high: number | null; clear_low: number | null; persistence: number;
}): StoredRule {
  return {
    id: r.id,
    limitSetId: r.limit_set_id,
    limitSetVersion: r.version,
    quantity: r.quantity,
    loopId: r.loop_id,
    cautionHigh: r.caution_high,
    warningHigh: r.warning_high,
    cautionLow: r.caution_low,
    warningLow: r.warning_low,
    clearHigh: r.clear_high,
    clearLow: r.clear_low,
    persistence: r.persistence,
  };
}

/**
 * The points of a quantity in (fromMs, toMs]: per-window figures at their window start (only
 * windows that end by toMs, so a window still filling is not judged), raw channels per sample,
 * burst figures per burst, missing packets per 60 s window.
 */
export async function loadQuantitySeries(db: Db, spacecraftId: number, info: QuantityInfo, loopId: number, fromMs: number, toMs: number): Promise<Point[]> {
  const from = new Date(fromMs);
  const to = new Date(toMs);
  const col = sql.ref(info.column);
  switch (info.source) {
    case 'loop_window': {
      const r = await sql<{ t: Date; v: number | null }>`
        SELECT window_start AS t, ${col} AS v FROM loop_window
        WHERE spacecraft_id = ${spacecraftId} AND loop_id = ${loopId} AND window_start > ${from}
          AND window_start + make_interval(secs => window_s) <= ${to}
        ORDER BY window_start`.execute(db);
      return r.rows.map((x) => ({ t: x.t.getTime(), value: x.v }));
    }
    case 'body_window': {
      const r = await sql<{ t: Date; v: number | null }>`
        SELECT window_start AS t, ${col} AS v FROM body_window
        WHERE spacecraft_id = ${spacecraftId} AND window_start > ${from} AND window_start + make_interval(secs => window_s) <= ${to}
        ORDER BY window_start`.execute(db);
      return r.rows.map((x) => ({ t: x.t.getTime(), value: x.v }));
    }
    case 'burst_analysis': {
      const r = await sql<{ t: Date; v: number | null }>`
        SELECT t, ${col} AS v FROM burst_analysis
        WHERE spacecraft_id = ${spacecraftId} AND loop_id = ${loopId} AND channel = 0 AND t > ${from} AND t <= ${to}
        ORDER BY t`.execute(db);
      return r.rows.map((x) => ({ t: x.t.getTime(), value: x.v }));
    }
    case 'loop_sample': {
      const r = await sql<{ tt: number; v: number }>`
        SELECT time_tag AS tt, ${col} AS v FROM loop_sample
        WHERE spacecraft_id = ${spacecraftId} AND loop_id = ${loopId} AND t > ${from} AND t <= ${to}
        ORDER BY time_tag, seq`.execute(db);
      return r.rows.map((x) => ({ t: unixSecondsOf(Number(x.tt)) * 1000, value: x.v }));
    }
    case 'attitude_sample': {
      const r = await sql<{ tt: number; v: number }>`
        SELECT time_tag AS tt, ${col} AS v FROM attitude_sample
        WHERE spacecraft_id = ${spacecraftId} AND t > ${from} AND t <= ${to}
        ORDER BY time_tag, seq`.execute(db);
      return r.rows.map((x) => ({ t: unixSecondsOf(Number(x.tt)) * 1000, value: x.v }));
    }
    case 'link': {
      if (info.key !== 'missing_packets') return [];
      // One point per 60 s window that saw a gap end in it; windows without gaps count as 0.
      const r = await sql<{ w: number; n: number }>`
        SELECT floor((946684800 + before_time_tag / 65536.0) / 60)::bigint * 60000 AS w, sum(missing)::int AS n
        FROM sequence_gap WHERE spacecraft_id = ${spacecraftId}
          AND before_time_tag > ${Math.floor((fromMs / 1000 - 946684800) * 65536)} AND before_time_tag <= ${Math.floor((toMs / 1000 - 946684800) * 65536)}
        GROUP BY 1 ORDER BY 1`.execute(db);
      const points: Point[] = [];
      let last = fromMs;
      for (const row of r.rows) {
        if (row.w - last > 60_000) points.push({ t: last + 60_000, value: 0 });
        points.push({ t: Number(row.w), value: row.n });
        last = Number(row.w);
      }
      if (toMs - last >= 120_000) points.push({ t: toMs - 60_000, value: 0 });
      return points;
    }
  }
}

/** The newest sample time of the spacecraft's housekeeping (Unix ms), or null. */
export async function dataThroughMs(db: Db, spacecraftId: number): Promise<number | null> {
  const r = await sql<{ tt: number | null }>`SELECT max(time_tag) AS tt FROM loop_sample WHERE spacecraft_id = ${spacecraftId}`.execute(db);
  const tt = r.rows[0]?.tt;
  return tt === null || tt === undefined ? null : unixSecondsOf(Number(tt)) * 1000;
}

/** What the trip engine tells its caller about each change, inside the same transaction. */
export interface TripChange {
  event: TripEvent;
  tripId: number;
  rule: StoredRule;
  info: QuantityInfo;
  loopId: number | null;
}

/**
 * Evaluate the active limits over what arrived since each rule's cursor and write the trips.
 * `extraPoints` supplies points that exist only at evaluation time (data age during a pass).
 */
export async function evaluateActiveLimits(
  trx: Transaction<Database>,
  spacecraftId: number,
  loopIds: readonly number[],
  opts: { nowMs: number; throughMs: number; lookbackMs?: number; extraPoints?: Record<string, Point[]> },
): Promise<TripChange[]> {
  const rules = await findActiveRules(trx, spacecraftId);
  const changes: TripChange[] = [];
  for (const rule of rules) {
    const info = quantityInfo(rule.quantity);
    if (!info) continue;
    for (const loopId of ruleTargets(info, rule.loopId, loopIds)) {
      const cur = await trx.selectFrom('rule_cursor').select(['evaluated_through', 'state']).where('rule_id', '=', rule.id).where('loop_id', '=', loopId).executeTakeFirst();
      const fromMs = cur ? cur.evaluated_through.getTime() : opts.throughMs - (opts.lookbackMs ?? 24 * 3600_000);
      const points = info.source === 'link' && info.key === 'data_age_s' ? (opts.extraPoints?.[info.key] ?? []).filter((p) => p.t > fromMs) : await loadQuantitySeries(trx, spacecraftId, info, loopId, fromMs, opts.throughMs);
      const state: RuleState = cur ? (cur.state as RuleState) : initialRuleState();
      const { events, state: next } = evaluateRule(rule, points, state);
      for (const event of events) changes.push(await applyEvent(trx, spacecraftId, rule, info, loopId === BODY ? null : loopId, event, points, opts.nowMs));
      const through = points.length ? Math.max(fromMs, points[points.length - 1]!.t) : fromMs;
      await trx
        .insertInto('rule_cursor')
        .values({ rule_id: rule.id, loop_id: loopId, evaluated_through: new Date(through), state: JSON.stringify(next) })
        .onConflict((oc) => oc.columns(['rule_id', 'loop_id']).doUpdateSet({ evaluated_through: new Date(through), state: JSON.stringify(next) }))
        .execute();
    }
  }
  return changes;
}

/** What a limit-set handover did. */
export interface Handover {
  /** Cursors of the new set's rules started where the retired set's rule on the same quantity and loop stood. */
  seeded: { ruleId: number; loopId: number; through: string }[];
  /** Trips of the retired set whose condition was still live, closed with a note. */
  closed: number[];
}

/**
 * Hands a spacecraft's limits over from the retiring set to the newly active one, inside the approval's
 * transaction. Where the retired set watched the same quantity on the same loop, the new rule starts at
 * the point the old one had judged through, so the next run does not judge that history again and raise
 * a second trip for an excursion that already has one; a quantity the old set did not watch judges the
 * engine's usual look-back, as a first set does. Trips of the retired set whose condition was still live
 * can no longer clear (their rule is no longer evaluated): they are closed at the handover with a note
 * saying so, and stay open for acknowledgement and resolution. If the condition persists, the new rule
 * raises its own trip after its persistence.
 */
export async function handOverLimits(
  trx: Transaction<Database>,
  spacecraftId: number,
  retired: { id: number; version: number },
  active: { id: number; version: number },
  loopIds: readonly number[],
  at: Date,
): Promise<Handover> {
  const old = await trx
    .selectFrom('rule_cursor as c')
    .innerJoin('limit_rule as r', 'r.id', 'c.rule_id')
    .select(['r.quantity', 'c.loop_id', 'c.evaluated_through'])
    .where('r.limit_set_id', '=', retired.id)
    .execute();
  const through = new Map<string, Date>();
  for (const c of old) {
    const key = `${c.quantity}:${c.loop_id}`;
    const seen = through.get(key);
    if (!seen || c.evaluated_through > seen) through.set(key, c.evaluated_through);
  }
  const rules = await trx.selectFrom('limit_rule').select(['id', 'quantity', 'loop_id']).where('limit_set_id', '=', active.id).orderBy('id').execute();
  const cursors: { rule_id: number; loop_id: number; evaluated_through: Date; state: string }[] = [];
  for (const rule of rules) {
    const info = quantityInfo(rule.quantity);
    if (!info) continue;
    for (const loopId of ruleTargets(info, rule.loop_id, loopIds)) {
      const t = through.get(`${rule.quantity}:${loopId}`);
      if (t) cursors.push({ rule_id: rule.id, loop_id: loopId, evaluated_through: t, state: JSON.stringify(initialRuleState()) });
    }
  }
  if (cursors.length) await trx.insertInto('rule_cursor').values(cursors).onConflict((oc) => oc.columns(['rule_id', 'loop_id']).doNothing()).execute();
  const closed = await trx
    .updateTable('trip')
    .set({ cleared_at: at, cleared_note: `Closed at the handover: limit set v${retired.version} retired and v${active.version} judges this quantity from ${formatUtc(at)} UTC.` })
    .where('spacecraft_id', '=', spacecraftId)
    .where('limit_set_id', '=', retired.id)
    .where('cleared_at', 'is', null)
    .returning('id')
    .execute();
  return {
    seeded: cursors.map((c) => ({ ruleId: c.rule_id, loopId: c.loop_id, through: c.evaluated_through.toISOString() })),
    closed: closed.map((r) => r.id),
  };
}

async function applyEvent(
  trx: Transaction<Database>,
  spacecraftId: number,
  rule: StoredRule,
  info: QuantityInfo,
  loopId: number | null,
  event: TripEvent,
  points: Point[],
  nowMs: number,
): Promise<TripChange> {
  const liveTrip = () =>
    trx
      .selectFrom('trip')
      .select('id')
      .where('rule_id', '=', rule.id)
      .where(sql<boolean>`coalesce(loop_id, -1) = ${loopId ?? -1}`)
      .where('cleared_at', 'is', null)
      .executeTakeFirst();
  const t = event.trip;
  if (event.type === 'opened') {
    const recent = points.filter((p) => p.t <= event.t).slice(-20);
    const row = await trx
      .insertInto('trip')
      .values({
        spacecraft_id: spacecraftId,
        loop_id: loopId,
        kind: info.kind,
        quantity: info.key,
        level: t.level,
        side: t.side,
        limit_set_id: rule.limitSetId,
        limit_set_version: rule.limitSetVersion,
        rule_id: rule.id,
        onset_at: new Date(t.onsetT),
        raised_at: new Date(nowMs),
        value: t.value,
        peak_value: t.peak,
        limit_value: t.limit,
        last_value: t.value,
        last_at: new Date(event.t),
        evidence: JSON.stringify({
          rule: { cautionHigh: rule.cautionHigh, warningHigh: rule.warningHigh, cautionLow: rule.cautionLow, warningLow: rule.warningLow, clearHigh: rule.clearHigh, clearLow: rule.clearLow, persistence: rule.persistence },
          quantity: { key: info.key, label: info.label, unit: info.unit, source: info.source },
          points: recent,
          window: { from: recent[0]?.t ?? event.t, to: event.t },
        }),
      })
      .returning('id')
      .executeTakeFirstOrThrow();
    return { event, tripId: row.id, rule, info, loopId };
  }
  const live = await liveTrip();
  if (!live) throw new Error(`trip engine: no live trip for rule ${rule.id} loop ${loopId} to ${event.type}`);
  if (event.type === 'escalated') {
    await trx.updateTable('trip').set({ level: 'warning', escalated_at: new Date(event.t), limit_value: t.limit, peak_value: t.peak, last_value: t.value, last_at: new Date(event.t) }).where('id', '=', live.id).execute();
  } else {
    await trx.updateTable('trip').set({ cleared_at: new Date(event.t), peak_value: t.peak, last_value: event.value, last_at: new Date(event.t) }).where('id', '=', live.id).execute();
  }
  return { event, tripId: live.id, rule, info, loopId };
}
