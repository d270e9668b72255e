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

/** Spacing of the per-window figures, ms (the analysis window). */
const WINDOW_MS = 60_000;

/**
 * How far before a re-evaluation's start its rule state is rebuilt from: enough points for a run of
 * `persistence` to be counted again (windows and link counts every 60 s, bursts every few minutes,
 * raw channels at 10 Hz or faster).
 */
export function rebuildMarginMs(info: QuantityInfo, persistence: number): number {
  const n = Math.max(1, persistence) + 1;
  switch (info.source) {
    case 'loop_window':
    case 'body_window':
    case 'link':
      return n * WINDOW_MS;
    case 'burst_analysis':
      return n * 15 * 60_000;
    case 'loop_sample':
    case 'attitude_sample':
      return Math.max(60_000, n * 1000);
  }
}

/**
 * The rule's state at `atMs` for a re-evaluation: no run under way, and open if a trip of the rule
 * on this loop was live then (onset at or before, not cleared by then). The run counters rebuild
 * from the points of the margin before the re-analysed time.
 */
async function stateAt(trx: Transaction<Database>, rule: StoredRule, loopId: number | null, atMs: number): Promise<RuleState> {
  const at = new Date(atMs);
  const t = await trx
    .selectFrom('trip')
    .select(['level', 'side', 'onset_at', 'raised_at', 'last_value', 'peak_value', 'limit_value'])
    .where('rule_id', '=', rule.id)
    .where(sql<boolean>`coalesce(loop_id, -1) = ${loopId ?? -1}`)
    .where('onset_at', '<=', at)
    .where((eb) => eb.or([eb('cleared_at', 'is', null), eb('cleared_at', '>', at)]))
    .orderBy('onset_at', 'desc')
    .limit(1)
    .executeTakeFirst();
  const s = initialRuleState();
  if (t) s.open = { level: t.level, side: t.side, onsetT: t.onset_at.getTime(), raisedT: t.raised_at.getTime(), value: t.last_value, peak: t.peak_value, limit: t.limit_value };
  return s;
}

/**
 * Evaluate the active limits over what arrived since each rule's cursor and write the trips.
 * `extraPoints` supplies points that exist only at evaluation time (data age during a pass).
 * `reevaluateFromMs` is the earliest time the caller has just (re)analysed: a rule whose cursor is
 * past it is judged again from there (less a margin that rebuilds its run), so late playback is
 * checked against the limits too. An excursion that already has a trip of the rule (live or
 * cleared, overlapping in time) is not raised again.
 */
export async function evaluateActiveLimits(
  trx: Transaction<Database>,
  spacecraftId: number,
  loopIds: readonly number[],
  opts: { nowMs: number; throughMs: number; lookbackMs?: number; extraPoints?: Record<string, Point[]>; reevaluateFromMs?: number },
): Promise<TripChange[]> {
  const rules = await findActiveRules(trx, spacecraftId);
  const changes: TripChange[] = [];
  for (const rule of rules) {
    const info = quantityInfo(rule.quantity);
    if (!info) continue;
    const atEvaluation = info.source === 'link' && info.key === 'data_age_s';
    for (const loopId of ruleTargets(info, rule.loopId, loopIds)) {
      const tripLoop = loopId === BODY ? null : loopId;
      const cur = await trx.selectFrom('rule_cursor').select(['evaluated_through', 'state']).where('rule_id', '=', rule.id).where('loop_id', '=', loopId).executeTakeFirst();
      let fromMs: number;
      let state: RuleState;
      if (!cur) {
        fromMs = opts.throughMs - (opts.lookbackMs ?? 24 * 3600_000);
        state = initialRuleState();
      } else if (!atEvaluation && opts.reevaluateFromMs !== undefined && opts.reevaluateFromMs < cur.evaluated_through.getTime()) {
        fromMs = opts.reevaluateFromMs - rebuildMarginMs(info, rule.persistence);
        state = await stateAt(trx, rule, tripLoop, fromMs);
      } else {
        fromMs = cur.evaluated_through.getTime();
        state = cur.state as RuleState;
      }
      const points = atEvaluation ? (opts.extraPoints?.[info.key] ?? []).filter((p) => p.t > fromMs) : await loadQuantitySeries(trx, spacecraftId, info, loopId, fromMs, opts.throughMs);
      const { events, state: next } = evaluateRule(rule, points, state);
      changes.push(...(await applyEvents(trx, spacecraftId, rule, info, tripLoop, state, events, points, opts.nowMs)));
      const through = Math.max(fromMs, cur?.evaluated_through.getTime() ?? -Infinity, points.length ? points[points.length - 1]!.t : -Infinity);
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

/** One excursion of a rule's value: from its opening (or a trip already open) to its clearing, if seen. */
interface Excursion {
  onsetT: number;
  opened: Extract<TripEvent, { type: 'opened' }> | null;
  escalated: Extract<TripEvent, { type: 'escalated' }> | null;
  cleared: Extract<TripEvent, { type: 'cleared' }> | null;
}

/** Group a run's events into excursions; a leading escalation or clearing continues the trip open in `from`. */
function excursionsOf(from: RuleState, events: readonly TripEvent[]): Excursion[] {
  const out: Excursion[] = [];
  let cur: Excursion | null = from.open ? { onsetT: from.open.onsetT, opened: null, escalated: null, cleared: null } : null;
  for (const e of events) {
    if (e.type === 'opened') {
      if (cur) out.push(cur);
      cur = { onsetT: e.trip.onsetT, opened: e, escalated: null, cleared: null };
      continue;
    }
    cur ??= { onsetT: e.trip.onsetT, opened: null, escalated: null, cleared: null };
    if (e.type === 'escalated') cur.escalated ??= e;
    else {
      cur.cleared = e;
      out.push(cur);
      cur = null;
    }
  }
  if (cur) out.push(cur);
  return out.filter((x) => x.opened || x.escalated || x.cleared);
}

/**
 * Write the trips of a run's events. Each excursion goes to the trip of the rule on this loop that
 * already covers it (the live one, else one whose onset..clear span overlaps it): a live trip takes
 * its escalation and clearing, a cleared one takes nothing. An excursion no trip covers is raised,
 * written at once in its final form (so an excursion found in the past, already over, never collides
 * with the live trip of a later one).
 */
async function applyEvents(
  trx: Transaction<Database>,
  spacecraftId: number,
  rule: StoredRule,
  info: QuantityInfo,
  loopId: number | null,
  from: RuleState,
  events: readonly TripEvent[],
  points: Point[],
  nowMs: number,
): Promise<TripChange[]> {
  const changes: TripChange[] = [];
  for (const x of excursionsOf(from, events)) {
    const endT = x.cleared ? x.cleared.t : null;
    const covering = await trx
      .selectFrom('trip')
      .select(['id', 'level', 'cleared_at'])
      .where('rule_id', '=', rule.id)
      .where(sql<boolean>`coalesce(loop_id, -1) = ${loopId ?? -1}`)
      .where((eb) =>
        eb.or([
          eb('cleared_at', 'is', null),
          eb.and([eb('cleared_at', '>=', new Date(x.onsetT)), ...(endT === null ? [] : [eb('onset_at', '<=', new Date(endT))])]),
        ]),
      )
      .orderBy(sql`cleared_at IS NULL`, 'desc')
      .orderBy('onset_at', 'desc')
      .limit(1)
      .executeTakeFirst();
    if (covering) {
      if (covering.cleared_at !== null) continue;
      if (x.escalated && covering.level === 'caution') {
        const e = x.escalated;
        await trx.updateTable('trip').set({ level: 'warning', escalated_at: new Date(e.t), limit_value: e.trip.limit, peak_value: e.trip.peak, last_value: e.trip.value, last_at: new Date(e.t) }).where('id', '=', covering.id).execute();
        changes.push({ event: e, tripId: covering.id, rule, info, loopId });
      }
      if (x.cleared) {
        const e = x.cleared;
        await trx.updateTable('trip').set({ cleared_at: new Date(e.t), peak_value: e.trip.peak, last_value: e.value, last_at: new Date(e.t) }).where('id', '=', covering.id).execute();
        changes.push({ event: e, tripId: covering.id, rule, info, loopId });
      }
      continue;
    }
    // No trip covers it: only an excursion seen opening can be raised.
    if (!x.opened) continue;
    const o = x.opened;
    const last = x.cleared ?? x.escalated ?? o;
    const recent = points.filter((p) => p.t <= o.t).slice(-20);
    const row = await trx
      .insertInto('trip')
      .values({
        spacecraft_id: spacecraftId,
        loop_id: loopId,
        kind: info.kind,
        quantity: info.key,
        level: x.escalated ? 'warning' : o.trip.level,
        side: o.trip.side,
        limit_set_id: rule.limitSetId,
        limit_set_version: rule.limitSetVersion,
        rule_id: rule.id,
        onset_at: new Date(o.trip.onsetT),
        raised_at: new Date(nowMs),
        escalated_at: x.escalated ? new Date(x.escalated.t) : null,
        cleared_at: x.cleared ? new Date(x.cleared.t) : null,
        value: o.trip.value,
        peak_value: last.trip.peak,
        limit_value: x.escalated ? x.escalated.trip.limit : o.trip.limit,
        last_value: x.cleared ? x.cleared.value : last.trip.value,
        last_at: new Date(last.t),
        evidence: JSON.stringify({
          rule: { cautionHigh: rule.cautionHigh, warningHigh: rule.warningHigh, cautionLow: rule.cautionLow, warningLow: rule.warningLow, clearHigh: rule.clearHigh, clearLow: rule.clearLow, persistence: rule.persistence },
          quantity: { key: info.key, label: info.label, unit: info.unit, source: info.source },
          points: recent,
          window: { from: recent[0]?.t ?? o.t, to: o.t },
        }),
      })
      .returning('id')
      .executeTakeFirstOrThrow();
    for (const e of [o, x.escalated, x.cleared]) if (e) changes.push({ event: e, tripId: row.id, rule, info, loopId });
  }
  return changes;
}
