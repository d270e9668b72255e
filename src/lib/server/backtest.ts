import { createHash } from 'node:crypto';
import pg from 'pg';
import { Kysely, PostgresDialect, sql, type Transaction } from 'kysely';
import type { BacktestStatus, Database } from './db/schema';
import { evaluateRule, initialRuleState, type Level, type Point, type Rule, type RuleState, type Side } from '../limits/evaluate';
import { quantityInfo, type QuantityInfo } from '../limits/quantities';
import { BODY, dataThroughMs, loadQuantitySeries, toStoredRule, type StoredRule } from './trip-engine';
import { findSheetInForce } from './spacecraft';
import { lttb } from '../physics/lttb';
import { unixSecondsOf } from './analysis-store';
import { insertAuditEntry } from './audit';
import { HttpError } from './http';
import { config } from './config';

type Db = Kysely<Database> | Transaction<Database>;

/** The span a backtest replays when none is chosen: the last 30 days the database holds. */
export const DEFAULT_SPAN_MS = 30 * 86_400_000;
/** The longest span one backtest may replay. */
export const MAX_SPAN_MS = 400 * 86_400_000;
/** Points kept per chart series (the replay itself uses every point). */
export const CHART_POINTS = 900;

/** How much history one series query covers: raw channels an hour (36 000 samples at 10 Hz), analysed figures a month (43 200 windows). */
const CHUNK_MS: Record<QuantityInfo['source'], number> = {
  loop_window: 30 * 86_400_000,
  body_window: 30 * 86_400_000,
  burst_analysis: 30 * 86_400_000,
  loop_sample: 3600_000,
  attitude_sample: 3600_000,
  // Link bookkeeping fills windows without gaps with zeros between its bounds: one query, so that
  // the points are the ones a single evaluation over the span sees.
  link: Number.POSITIVE_INFINITY,
};

const RAW_SOURCES = new Set<QuantityInfo['source']>(['loop_sample', 'attitude_sample']);

export type SetRole = 'draft' | 'baseline';

/** A limit set as a backtest names it. */
export interface BacktestSetRef {
  id: number;
  version: number;
  name: string;
  status: string;
}

/** One trip a replayed rule would have raised. */
export interface BacktestTrip {
  set: SetRole;
  ruleIndex: number;
  quantity: string;
  /** The loop, or null for a whole-spacecraft quantity. */
  loopId: number | null;
  level: Level;
  side: Side;
  onsetMs: number;
  raisedMs: number;
  escalatedMs: number | null;
  /** When the value came back inside the clear level; null while it still persisted at the end of the span. */
  clearedMs: number | null;
  value: number;
  peak: number;
  limit: number;
  lastValue: number;
  /** Consecutive points the rule asks for before it raises. */
  persistence: number;
}

/** What a backtest says about one rule of one set. */
export interface BacktestRuleSummary {
  set: SetRole;
  ruleIndex: number;
  ruleId: number;
  quantity: string;
  label: string;
  unit: string;
  /** The loop the rule names; null for all loops or a whole-spacecraft quantity. */
  loopId: number | null;
  levels: Rule;
  replayable: boolean;
  note: string | null;
  points: number;
  trips: number;
}

/** A quantity's series as the chart draws it (downsampled; the replay used every point). */
export interface BacktestSeries {
  quantity: string;
  loopId: number | null;
  label: string;
  unit: string;
  /** Points replayed. */
  points: number;
  t: number[];
  v: number[];
}

export interface BacktestResult {
  fromMs: number;
  toMs: number;
  loopIds: number[];
  draft: BacktestSetRef;
  baseline: BacktestSetRef | null;
  rules: BacktestRuleSummary[];
  trips: BacktestTrip[];
  series: BacktestSeries[];
  elapsedMs: number;
}

/** Load the points of a quantity in (fromMs, toMs]; the default is the scheduler's own loader. */
export type SeriesLoader = (info: QuantityInfo, loopId: number, fromMs: number, toMs: number) => Promise<Point[]>;

/** A stable digest of a set's rules (what a backtest replayed), independent of row ids. */
export function rulesDigest(rules: readonly (Rule & { quantity: string; loopId: number | null })[]): string {
  const canon = rules.map((r) => [r.quantity, r.loopId, r.cautionHigh, r.warningHigh, r.cautionLow, r.warningLow, r.clearHigh, r.clearLow, r.persistence]);
  return createHash('sha256').update(JSON.stringify(canon)).digest('hex').slice(0, 16);
}

/** The default span: the 30 days that end at the newest data held (null when there is none). */
export function defaultSpan(newestMs: number | null): { fromMs: number; toMs: number } | null {
  if (newestMs === null) return null;
  return { fromMs: newestMs - DEFAULT_SPAN_MS, toMs: newestMs };
}

/** The newest time the database holds data for a spacecraft: housekeeping, else analysed windows and bursts. */
export async function newestDataMs(db: Db, spacecraftId: number): Promise<number | null> {
  const through = await dataThroughMs(db, spacecraftId);
  if (through !== null) return through;
  const r = await sql<{ t: Date | null }>`
    SELECT greatest(
      (SELECT max(window_start + make_interval(secs => window_s)) FROM loop_window WHERE spacecraft_id = ${spacecraftId}),
      (SELECT max(window_start + make_interval(secs => window_s)) FROM body_window WHERE spacecraft_id = ${spacecraftId}),
      (SELECT max(t) FROM burst_analysis WHERE spacecraft_id = ${spacecraftId})) AS t`.execute(db);
  const t = r.rows[0]?.t;
  return t ? t.getTime() : null;
}

interface RuleEntry {
  set: SetRole;
  ruleIndex: number;
  rule: StoredRule;
}

interface Group {
  info: QuantityInfo;
  loopId: number;
  members: { entry: RuleEntry; state: RuleState; open: BacktestTrip | null }[];
}

function notReplayable(info: QuantityInfo): string | null {
  if (info.source === 'link' && info.key === 'data_age_s') return 'Data age exists only at evaluation time during a pass; no stored history can replay it.';
  return null;
}

/**
 * Replay limit sets over (fromMs, toMs] through the trip logic the scheduler uses: each rule's
 * series comes from the scheduler's loader and runs through evaluateRule from initialRuleState.
 * Rules on the same quantity and loop share one pass over the series, taken in chunks; each chunk
 * starts after the last point of the one before, as the scheduler's cursor does, and carries the
 * rule states on. `onProgress` gets 0–1 after each chunk; when it answers false the replay stops
 * and returns null.
 */
export async function replayLimitSets(opts: {
  load: SeriesLoader;
  loopIds: readonly number[];
  fromMs: number;
  toMs: number;
  draft: { ref: BacktestSetRef; rules: readonly StoredRule[] };
  baseline: { ref: BacktestSetRef; rules: readonly StoredRule[] } | null;
  onProgress?: (fraction: number) => Promise<boolean> | boolean;
  /** The time (Unix ms) of the first stored raw sample after a time, or null; lets the replay skip silence between passes. */
  nextAfter?: (info: QuantityInfo, loopId: number, afterMs: number) => Promise<number | null>;
  /** Series replayed at once (default 1). */
  parallel?: number;
  clock?: () => number;
}): Promise<BacktestResult | null> {
  const clock = opts.clock ?? (() => performance.now());
  const started = clock();
  const { fromMs, toMs } = opts;
  const summaries: BacktestRuleSummary[] = [];
  const groups = new Map<string, Group>();
  const summaryOf = new Map<RuleEntry, BacktestRuleSummary>();
  const sets: [SetRole, readonly StoredRule[]][] = [['draft', opts.draft.rules]];
  if (opts.baseline) sets.push(['baseline', opts.baseline.rules]);
  for (const [set, rules] of sets) {
    rules.forEach((rule, ruleIndex) => {
      const info = quantityInfo(rule.quantity);
      const entry: RuleEntry = { set, ruleIndex, rule };
      const levels: Rule = { cautionHigh: rule.cautionHigh, warningHigh: rule.warningHigh, cautionLow: rule.cautionLow, warningLow: rule.warningLow, clearHigh: rule.clearHigh, clearLow: rule.clearLow, persistence: rule.persistence };
      const note = info ? notReplayable(info) : `Millrace knows no quantity "${rule.quantity}".`;
      const s: BacktestRuleSummary = { set, ruleIndex, ruleId: rule.id, quantity: rule.quantity, label: info?.label ?? rule.quantity, unit: info?.unit ?? '', loopId: info?.scope === 'body' ? null : rule.loopId, levels, replayable: note === null, note, points: 0, trips: 0 };
      summaries.push(s);
      summaryOf.set(entry, s);
      if (!info || note) return;
      // The same targets as the scheduler: the whole spacecraft, the named loop, or every loop.
      const targets = info.scope === 'body' ? [BODY] : rule.loopId !== null ? [rule.loopId] : [...opts.loopIds];
      for (const loopId of targets) {
        const key = `${info.key}|${loopId}`;
        let g = groups.get(key);
        if (!g) groups.set(key, (g = { info, loopId, members: [] }));
        g.members.push({ entry, state: initialRuleState(), open: null });
      }
    });
  }

  const trips: BacktestTrip[] = [];
  const series: BacktestSeries[] = [];
  const span = Math.max(1, toMs - fromMs);
  const all = [...groups.values()];
  const done = new Float64Array(all.length);
  let stopped = false;
  const report = async (gi: number, fraction: number): Promise<boolean> => {
    done[gi] = Math.min(1, fraction);
    if (!opts.onProgress) return true;
    let sum = 0;
    for (const f of done) sum += f;
    if (!(await opts.onProgress(Math.min(1, sum / Math.max(1, all.length))))) stopped = true;
    return !stopped;
  };

  const replayGroup = async (gi: number): Promise<void> => {
    const g = all[gi]!;
    const chunk = CHUNK_MS[g.info.source];
    const loopId = g.loopId === BODY ? null : g.loopId;
    const chartT: number[] = [];
    const chartV: number[] = [];
    let count = 0;
    let from = fromMs;
    let lastT = Number.NEGATIVE_INFINITY;
    let end = Math.min(toMs, from + chunk);
    for (;;) {
      const loaded = await opts.load(g.info, g.loopId, from, end);
      // A raw sample's time has sub-millisecond parts that the cursor (a timestamp) drops; never replay a point twice.
      const points = loaded.length && loaded[0]!.t <= lastT ? loaded.filter((p) => p.t > lastT) : loaded;
      count += points.length;
      for (const m of g.members) {
        const { events, state } = evaluateRule(m.entry.rule, points, m.state);
        m.state = state;
        for (const e of events) {
          if (e.type === 'opened') {
            m.open = {
              set: m.entry.set, ruleIndex: m.entry.ruleIndex, quantity: g.info.key, loopId, level: e.trip.level, side: e.trip.side,
              onsetMs: e.trip.onsetT, raisedMs: e.t, escalatedMs: null, clearedMs: null, value: e.trip.value, peak: e.trip.peak, limit: e.trip.limit, lastValue: e.trip.value, persistence: m.entry.rule.persistence,
            };
            trips.push(m.open);
          } else if (m.open) {
            m.open.peak = e.trip.peak;
            m.open.level = e.trip.level;
            m.open.limit = e.trip.limit;
            if (e.type === 'escalated') {
              m.open.escalatedMs = e.t;
              m.open.lastValue = e.trip.value;
            } else {
              m.open.clearedMs = e.t;
              m.open.lastValue = e.value;
              m.open = null;
            }
          }
        }
      }
      appendChart(points, chartT, chartV, Math.max(2, Math.ceil((CHART_POINTS * Math.min(span, end - from)) / span)));
      if (points.length) lastT = points[points.length - 1]!.t;
      if (!(await report(gi, (end - fromMs) / span)) || end >= toMs) break;
      if (points.length) {
        // The scheduler's cursor rule: the next query starts at the last point seen.
        from = Math.max(from, lastT);
        end = Math.min(toMs, end + chunk);
      } else if (opts.nextAfter && RAW_SOURCES.has(g.info.source)) {
        // Raw channels are stored only for passes: jump over the silence to the next stored sample.
        const next = await opts.nextAfter(g.info, g.loopId, end);
        if (next === null || next > toMs) {
          await report(gi, 1);
          break;
        }
        end = Math.min(toMs, Math.max(end, Math.floor(next)) + chunk);
      } else {
        end = Math.min(toMs, end + chunk);
      }
    }
    if (stopped) return;
    for (const m of g.members) {
      const s = summaryOf.get(m.entry)!;
      s.points += count;
      if (m.open && m.state.open) {
        m.open.peak = m.state.open.peak;
        m.open.lastValue = m.state.open.value;
      }
    }
    const down = chartT.length > CHART_POINTS ? lttb(chartT, chartV, CHART_POINTS) : { x: chartT, y: chartV };
    series.push({ quantity: g.info.key, loopId, label: g.info.label, unit: g.info.unit, points: count, t: Array.from(down.x), v: Array.from(down.y) });
  };

  // A few series at once, so that one series' database time overlaps another's evaluation.
  let nextGroup = 0;
  const worker = async () => {
    while (!stopped && nextGroup < all.length) await replayGroup(nextGroup++);
  };
  await Promise.all(Array.from({ length: Math.max(1, Math.min(opts.parallel ?? 1, all.length)) }, worker));
  if (stopped) return null;
  for (const t of trips) summaries.find((s) => s.set === t.set && s.ruleIndex === t.ruleIndex)!.trips++;
  trips.sort((a, b) => a.onsetMs - b.onsetMs || (a.set === b.set ? a.ruleIndex - b.ruleIndex : a.set === 'draft' ? -1 : 1) || (a.loopId ?? -1) - (b.loopId ?? -1));
  series.sort((a, b) => a.quantity.localeCompare(b.quantity) || (a.loopId ?? -1) - (b.loopId ?? -1));
  if (opts.onProgress && !(await opts.onProgress(1))) return null;
  return { fromMs, toMs, loopIds: [...opts.loopIds], draft: opts.draft.ref, baseline: opts.baseline?.ref ?? null, rules: summaries, trips, series, elapsedMs: clock() - started };
}

/** Append a chunk's points to a chart series, downsampled (LTTB) to about `budget` points. */
function appendChart(points: readonly Point[], t: number[], v: number[], budget: number): void {
  const xs: number[] = [];
  const ys: number[] = [];
  for (const p of points) {
    if (p.value === null || !Number.isFinite(p.value)) continue;
    xs.push(p.t);
    ys.push(p.value);
  }
  if (xs.length <= budget) {
    t.push(...xs);
    v.push(...ys);
    return;
  }
  const d = lttb(xs, ys, budget);
  for (let i = 0; i < d.x.length; i++) {
    t.push(d.x[i]!);
    v.push(d.y[i]!);
  }
}

// ── the background job ────────────────────────────────────────────────────────────────────────

/** The time (Unix ms) of a spacecraft's first stored raw sample of a channel after `afterMs`, or null. */
export async function nextSampleAfterMs(db: Db, spacecraftId: number, info: QuantityInfo, loopId: number, afterMs: number): Promise<number | null> {
  const after = new Date(afterMs);
  const r =
    info.source === 'loop_sample'
      ? await sql<{ tt: number | null }>`SELECT min(time_tag) AS tt FROM loop_sample WHERE spacecraft_id = ${spacecraftId} AND loop_id = ${loopId} AND t > ${after}`.execute(db)
      : info.source === 'attitude_sample'
        ? await sql<{ tt: number | null }>`SELECT min(time_tag) AS tt FROM attitude_sample WHERE spacecraft_id = ${spacecraftId} AND t > ${after}`.execute(db)
        : null;
  const tt = r?.rows[0]?.tt;
  return tt === null || tt === undefined ? null : unixSecondsOf(Number(tt)) * 1000;
}

/** The stored rules of a set in the scheduler's form. */
async function storedRulesOf(db: Db, setId: number): Promise<{ ref: BacktestSetRef; rules: StoredRule[] } | null> {
  const set = await db.selectFrom('limit_set').select(['id', 'version', 'name', 'status']).where('id', '=', setId).executeTakeFirst();
  if (!set) return null;
  const rows = await db
    .selectFrom('limit_rule')
    .select(['id', 'limit_set_id', 'quantity', 'loop_id', 'caution_high', 'warning_high', 'caution_low', 'warning_low', 'clear_high', 'clear_low', 'persistence'])
    .where('limit_set_id', '=', setId)
    .orderBy('id')
    .execute();
  return { ref: { id: set.id, version: set.version, name: set.name, status: set.status }, rules: rows.map((r) => toStoredRule({ ...r, version: set.version })) };
}

const TIMESTAMPTZ_OID = 1184;
const standardTimestamptz = pg.types.getTypeParser(TIMESTAMPTZ_OID, 'text') as (text: string) => Date;
const digit = (s: string, i: number) => s.charCodeAt(i) - 48;

/**
 * PostgreSQL's text form of a UTC timestamptz ("2026-11-30 00:01:00.25+00") read without regular
 * expressions; anything else (other offsets, years before 100, BC, infinity) goes to the standard
 * parser. For the fast shape it computes the same Date as the standard parser.
 */
export function parseTimestamptz(s: string): Date {
  const n = s.length;
  const shape = s.charCodeAt(4) === 45 && s.charCodeAt(7) === 45 && s.charCodeAt(10) === 32 && s.charCodeAt(13) === 58 && s.charCodeAt(16) === 58;
  if (n >= 22 && shape && s.charCodeAt(n - 3) === 43 && s.charCodeAt(n - 2) === 48 && s.charCodeAt(n - 1) === 48 && (n === 22 || s.charCodeAt(19) === 46)) {
    const year = digit(s, 0) * 1000 + digit(s, 1) * 100 + digit(s, 2) * 10 + digit(s, 3);
    if (year >= 100) {
      const ms = n > 22 ? 1000 * parseFloat(s.slice(19, n - 3)) : 0;
      return new Date(Date.UTC(year, digit(s, 5) * 10 + digit(s, 6) - 1, digit(s, 8) * 10 + digit(s, 9), digit(s, 11) * 10 + digit(s, 12), digit(s, 14) * 10 + digit(s, 15), digit(s, 17) * 10 + digit(s, 18), ms));
    }
  }
  return standardTimestamptz(s);
}

/**
 * A small pool of its own for reading the series a backtest replays: a 30-day replay then holds
 * none of the request pool's connections, and its timestamps are parsed by parseTimestamptz
 * (reading them is most of a replay's time). Every other type is parsed as in db/index.ts.
 */
export function createBacktestReader(connectionString: string, max = 4): Kysely<Database> {
  const pool = new pg.Pool({
    connectionString,
    max,
    types: { getTypeParser: ((oid: number, format?: 'text' | 'binary') => (oid === TIMESTAMPTZ_OID && format !== 'binary' ? parseTimestamptz : pg.types.getTypeParser(oid, format ?? 'text'))) as typeof pg.types.getTypeParser },
  });
  pool.on('error', (err) => console.error('[backtest] idle client error:', err.message));
  return new Kysely<Database>({ dialect: new PostgresDialect({ pool }) });
}

let processReader: Kysely<Database> | null = null;

/** Run one stored backtest to its end (or until it is cancelled), writing progress as the series finish; `reader` reads the series. */
export async function executeBacktest(db: Kysely<Database>, id: number, reader: Kysely<Database> = db): Promise<BacktestStatus> {
  const claimed = await db
    .updateTable('backtest')
    .set({ status: 'running', started_at: new Date(), progress: 0 })
    .where('id', '=', id)
    .where('status', '=', 'queued')
    .returning(['spacecraft_id', 'limit_set_id', 'baseline_set_id', 'from_at', 'to_at'])
    .executeTakeFirst();
  if (!claimed) return (await db.selectFrom('backtest').select('status').where('id', '=', id).executeTakeFirst())?.status ?? 'cancelled';
  try {
    const draft = await storedRulesOf(db, claimed.limit_set_id);
    if (!draft) throw new Error('the limit set is gone');
    const baseline = claimed.baseline_set_id !== null ? await storedRulesOf(db, claimed.baseline_set_id) : null;
    const sheet = await findSheetInForce(db, claimed.spacecraft_id, claimed.to_at);
    const loopIds = sheet ? sheet.sheet.loops.map((l) => l.id) : [];
    await db.updateTable('backtest').set({ rules_digest: rulesDigest(draft.rules) }).where('id', '=', id).execute();
    let written = 0;
    let writtenAt = Number.NEGATIVE_INFINITY;
    const result = await replayLimitSets({
      load: (info, loopId, fromMs, toMs) => loadQuantitySeries(reader, claimed.spacecraft_id, info, loopId, fromMs, toMs),
      loopIds,
      fromMs: claimed.from_at.getTime(),
      toMs: claimed.to_at.getTime(),
      draft,
      baseline,
      nextAfter: (info, loopId, afterMs) => nextSampleAfterMs(reader, claimed.spacecraft_id, info, loopId, afterMs),
      parallel: 3,
      onProgress: async (f) => {
        const pct = Math.min(99, Math.floor(f * 100));
        // At most a few writes a second: each one is a round trip the replay waits for.
        if (pct === written || performance.now() - writtenAt < 200) return true;
        writtenAt = performance.now();
        // Writing progress doubles as the cancellation check: a cancelled job no longer matches.
        const r = await db.updateTable('backtest').set({ progress: pct }).where('id', '=', id).where('status', '=', 'running').returning('id').executeTakeFirst();
        written = pct;
        return r !== undefined;
      },
    });
    if (!result) return 'cancelled';
    const done = await db
      .updateTable('backtest')
      .set({ status: 'done', progress: 100, result: JSON.stringify(result), finished_at: new Date() })
      .where('id', '=', id)
      .where('status', '=', 'running')
      .returning('id')
      .executeTakeFirst();
    return done ? 'done' : 'cancelled';
  } catch (err) {
    console.error(`[backtest] ${id} failed:`, err);
    await db
      .updateTable('backtest')
      .set({ status: 'failed', error: err instanceof Error ? err.message : String(err), finished_at: new Date() })
      .where('id', '=', id)
      .where('status', '=', 'running')
      .execute();
    return 'failed';
  }
}

/** Backtests run in the server process, at most this many at once; the rest wait in order. */
const MAX_RUNNING = 2;
const waiting: number[] = [];
const running = new Set<number>();
const processStartedAt = new Date();
let recovered: Promise<void> | null = null;

/**
 * Once per process: a backtest left queued or running by an earlier process (a restart) will
 * never finish; mark it failed so that its page says so.
 */
export function recoverInterruptedBacktests(db: Kysely<Database>): Promise<void> {
  recovered ??= db
    .updateTable('backtest')
    .set({ status: 'failed', error: 'Millrace restarted while this backtest ran; run it again.', finished_at: new Date() })
    .where('status', 'in', ['queued', 'running'])
    .where('created_at', '<', processStartedAt)
    .execute()
    .then(() => undefined);
  return recovered;
}

function pump(db: Kysely<Database>): void {
  while (running.size < MAX_RUNNING && waiting.length) {
    const id = waiting.shift()!;
    running.add(id);
    processReader ??= createBacktestReader(config().DATABASE_URL);
    void executeBacktest(db, id, processReader).finally(() => {
      running.delete(id);
      pump(db);
    });
  }
}

/** Queue a stored backtest to run in this process without holding up the request that asked for it. */
export function scheduleBacktest(db: Kysely<Database>, id: number): void {
  waiting.push(id);
  setImmediate(() => pump(db));
}

const BACKTEST_COLUMNS = ['id', 'limit_set_id', 'baseline_set_id', 'spacecraft_id', 'from_at', 'to_at', 'rules_digest', 'status', 'progress', 'error', 'requested_by', 'created_at', 'started_at', 'finished_at'] as const;

/** Store a queued backtest of a limit set against the spacecraft's active set, and audit it. */
export async function insertBacktest(
  db: Kysely<Database>,
  setId: number,
  span: { fromMs?: number; toMs?: number },
  actorId: string | null,
): Promise<{ id: number; fromMs: number; toMs: number }> {
  return db.transaction().execute(async (trx) => {
    const set = await trx.selectFrom('limit_set').select(['id', 'spacecraft_id', 'version', 'status']).where('id', '=', setId).executeTakeFirst();
    if (!set) throw new HttpError('NOT_FOUND', `There is no limit set ${setId}.`);
    let fromMs = span.fromMs;
    let toMs = span.toMs;
    if (fromMs === undefined || toMs === undefined) {
      const d = defaultSpan(await newestDataMs(trx, set.spacecraft_id));
      if (!d) throw new HttpError('BAD_REQUEST', 'This spacecraft has no stored history to replay yet: ingest telemetry (or upload a pass) first.');
      toMs ??= d.toMs;
      fromMs ??= toMs - DEFAULT_SPAN_MS;
    }
    if (!(toMs > fromMs)) throw new HttpError('BAD_REQUEST', 'The span has errors; see fields.', { to: ['must be after the start'] });
    if (toMs - fromMs > MAX_SPAN_MS) throw new HttpError('BAD_REQUEST', 'The span has errors; see fields.', { from: [`a backtest replays at most ${MAX_SPAN_MS / 86_400_000} days`] });
    const active = await trx.selectFrom('limit_set').select('id').where('spacecraft_id', '=', set.spacecraft_id).where('status', '=', 'active').executeTakeFirst();
    const rules = await storedRulesOf(trx, set.id);
    const row = await trx
      .insertInto('backtest')
      .values({
        limit_set_id: set.id,
        baseline_set_id: active && active.id !== set.id ? active.id : null,
        spacecraft_id: set.spacecraft_id,
        from_at: new Date(fromMs),
        to_at: new Date(toMs),
        rules_digest: rulesDigest(rules?.rules ?? []),
        requested_by: actorId,
      })
      .returning('id')
      .executeTakeFirstOrThrow();
    await insertAuditEntry(trx, { actorId, action: 'backtest.start', targetType: 'limit_set', targetId: set.id, detail: { backtestId: row.id, version: set.version, from: new Date(fromMs).toISOString(), to: new Date(toMs).toISOString(), baselineSetId: active?.id ?? null } });
    return { id: row.id, fromMs, toMs };
  });
}

/** A backtest as the API sends it: the job's state, and its result once done. */
export interface BacktestView {
  id: number;
  limitSetId: number;
  baselineSetId: number | null;
  from: string;
  to: string;
  rulesDigest: string;
  status: BacktestStatus;
  progress: number;
  error: string | null;
  requestedBy: string | null;
  createdAt: string;
  startedAt: string | null;
  finishedAt: string | null;
  result: BacktestResult | null;
}

function viewOf(r: {
  id: number; limit_set_id: number; baseline_set_id: number | null; from_at: Date; to_at: Date; rules_digest: string; status: BacktestStatus; progress: number;
  error: string | null; requested_by_name: string | null; created_at: Date; started_at: Date | null; finished_at: Date | null; result?: unknown;
}): BacktestView {
  return {
    id: r.id,
    limitSetId: r.limit_set_id,
    baselineSetId: r.baseline_set_id,
    from: r.from_at.toISOString(),
    to: r.to_at.toISOString(),
    rulesDigest: r.rules_digest,
    status: r.status,
    progress: r.progress,
    error: r.error,
    requestedBy: r.requested_by_name,
    createdAt: r.created_at.toISOString(),
    startedAt: r.started_at?.toISOString() ?? null,
    finishedAt: r.finished_at?.toISOString() ?? null,
    result: (r.result ?? null) as BacktestResult | null,
  };
}

/** One backtest with its result, or undefined. */
export async function findBacktest(db: Db, id: number): Promise<BacktestView | undefined> {
  const r = await db
    .selectFrom('backtest as b')
    .leftJoin('app_user as u', 'u.id', 'b.requested_by')
    .select(BACKTEST_COLUMNS.map((c) => `b.${c}` as const))
    .select(['b.result', 'u.name as requested_by_name'])
    .where('b.id', '=', id)
    .executeTakeFirst();
  return r ? viewOf(r) : undefined;
}

/** The backtests kept with a limit set, newest first, without their results. */
export async function listBacktests(db: Db, setId: number): Promise<BacktestView[]> {
  const rows = await db
    .selectFrom('backtest as b')
    .leftJoin('app_user as u', 'u.id', 'b.requested_by')
    .select(BACKTEST_COLUMNS.map((c) => `b.${c}` as const))
    .select('u.name as requested_by_name')
    .where('b.limit_set_id', '=', setId)
    .orderBy('b.created_at', 'desc')
    .orderBy('b.id', 'desc')
    .limit(50)
    .execute();
  return rows.map(viewOf);
}

/** Cancel a queued or running backtest (the job stops at its next progress step); audited. */
export async function cancelBacktest(db: Kysely<Database>, id: number, actorId: string): Promise<BacktestView> {
  return db.transaction().execute(async (trx) => {
    const b = await trx.selectFrom('backtest').select(['id', 'status', 'limit_set_id']).where('id', '=', id).forUpdate().executeTakeFirst();
    if (!b) throw new HttpError('NOT_FOUND', `There is no backtest ${id}.`);
    if (b.status !== 'queued' && b.status !== 'running') throw new HttpError('CONFLICT', `Backtest ${id} is already ${b.status}; only a queued or running backtest can be cancelled.`);
    await trx.updateTable('backtest').set({ status: 'cancelled', finished_at: new Date() }).where('id', '=', id).execute();
    await insertAuditEntry(trx, { actorId, action: 'backtest.cancel', targetType: 'limit_set', targetId: b.limit_set_id, detail: { backtestId: id } });
    return (await findBacktest(trx, id))!;
  });
}
