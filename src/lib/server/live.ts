import pg from 'pg';
import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { config } from './config';
import { findSheetInForce, STALE_AFTER_S } from './spacecraft';
import { findActiveLimitSet } from './limit-sets';
import { findTrip, listTrips, type TripRow } from './trips';
import { storedPasses, type PassInfo } from './pass-log';
import { loopMomentum } from '../physics/loop-geometry';
import { momentumCapacity, momentumMarginInUse } from '../physics/momentum';
import { EPOCH_2000_UNIX_S } from '../telemetry/types';
import type { SheetLoop } from '../spacecraft-sheet.schema';

type Db = Kysely<Database> | Transaction<Database>;

/** The PostgreSQL notification channel the ingest and trip triggers write to. */
export const LIVE_CHANNEL = 'millrace_live';
/** Live series are thinned to at most this many points per second per series. */
export const LIVE_POINTS_PER_S = 10;
/** The page's history is thinned to this many points per second. */
export const HISTORY_POINTS_PER_S = 1;
/** Samples more than this much older than their batch's arrival are playback: not pushed to the charts. */
export const LIVE_HORIZON_MS = 30 * 60_000;
/** How much history Pass watch loads outside a pass. */
export const HISTORY_MS = 15 * 60_000;
/** The latest known state of each loop and of the body is looked for this far back. */
export const LATEST_LOOKBACK_MS = 7 * 86_400_000;
/** Comment lines keep idle connections (and proxies) open. */
export const HEARTBEAT_MS = 15_000;
/** Batches per catch-up query. */
const CATCH_UP_CHUNK = 50;

/** Body rates in columns; t in Unix ms, rates in rad/s. */
export interface AttitudeSeries {
  t: number[];
  x: number[];
  y: number[];
  z: number[];
}

/** One loop's channels in columns; momentum (N·m·s) and margin in use (%) derived from the flow. */
export interface LoopSeries {
  loopId: number;
  t: number[];
  current: number[];
  flow: number[];
  pressure: number[];
  fluidTemp: number[];
  electrodeTemp: number[];
  magnetTemp: number[];
  momentum: (number | null)[];
  margin: (number | null)[];
}

/** A run of missing sequence counts, with the sample times on either side (Unix ms). */
export interface LiveGap {
  apid: number;
  from: number;
  to: number;
  missing: number;
  afterMs: number;
  beforeMs: number;
}

/** The samples of a stretch of telemetry as the charts use them. */
export interface LiveSeries {
  attitude: AttitudeSeries;
  loops: LoopSeries[];
  /** Housekeeping packets stored per second of sample time: [second start (Unix ms), count]. */
  packets: [number, number][];
  gaps: LiveGap[];
}

/** The `samples` event: one committed ingest batch. Its `seq` is the event id. */
export interface BatchEvent extends LiveSeries {
  seq: number;
  batchId: number;
  receivedAt: string;
  station: string | null;
  source: 'post' | 'upload';
  accepted: number;
  duplicates: number;
  rejected: number;
  realtime: number;
  playback: number;
}

/** A limit rule's levels as the charts draw them. */
export interface LimitLevels {
  quantity: string;
  loopId: number | null;
  cautionHigh: number | null;
  warningHigh: number | null;
  cautionLow: number | null;
  warningLow: number | null;
}

/** The latest analysed window of a loop. */
export interface LoopAnalysed {
  loopId: number;
  windowStart: string;
  effectiveness: number | null;
  marginInUse_pct: number | null;
  momentumAbsMean_nms: number | null;
  electrodeTempMean_c: number | null;
}

/** A trip as Pass watch lists it (the trip list's row). */
export type LiveTrip = TripRow;

/** Everything Pass watch paints first, read in one snapshot; `seq` is where the live stream continues. */
export interface PassWatchSnapshot {
  spacecraft: { key: string; name: string };
  generatedAtMs: number;
  seq: number;
  staleAfterS: number;
  loops: { id: number; ratedCurrent_A: number; capacity_Nms: number }[];
  limitSet: { version: number; name: string } | null;
  limits: LimitLevels[];
  passes: PassInfo[];
  passError: string | null;
  historyFromMs: number;
  history: LiveSeries;
  /**
   * The newest stored sample of the body and of each loop (at most one point per series, whatever its
   * age), so that readouts show the latest known state when the history holds nothing.
   */
  latest: { attitude: AttitudeSeries; loops: LoopSeries[] };
  trips: LiveTrip[];
  analysed: LoopAnalysed[];
  lastDataMs: number | null;
}

// ── time and thinning ───────────────────────────────────────────────────────────────────────
const msOfTimeTag = (tt: number) => (EPOCH_2000_UNIX_S + tt / 65536) * 1000;
const timeTagOfMs = (ms: number) => Math.floor((ms / 1000 - EPOCH_2000_UNIX_S) * 65536);
const r6 = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(6)) : v);
const r6n = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(6)) : null);

/**
 * Indices to keep so that no whole second of sample time holds more than `perSecond` points:
 * seconds within the budget are kept whole, fuller ones are thinned evenly. `t` is ascending.
 */
export function thinPerSecond(t: readonly number[], perSecond: number): number[] {
  const out: number[] = [];
  let i = 0;
  while (i < t.length) {
    const sec = Math.floor(t[i]! / 1000);
    let j = i;
    while (j < t.length && Math.floor(t[j]! / 1000) === sec) j++;
    const n = j - i;
    if (n <= perSecond) for (let k = i; k < j; k++) out.push(k);
    else for (let k = 0; k < perSecond; k++) out.push(i + Math.floor((k * n) / perSecond));
    i = j;
  }
  return out;
}

// ── samples ─────────────────────────────────────────────────────────────────────────────────
interface AttRow {
  batch_id: number;
  time_tag: number;
  rate_x_rad_s: number;
  rate_y_rad_s: number;
  rate_z_rad_s: number;
}
interface LoopRow {
  batch_id: number;
  loop_id: number;
  time_tag: number;
  measured_current_a: number;
  flow_velocity_m_s: number;
  pressure_rise_pa: number;
  fluid_temp_c: number;
  electrode_temp_c: number;
  magnet_temp_c: number;
}

interface LoopMeta {
  loop: SheetLoop;
  capacity: number;
}

const sheetCache = new Map<number, { at: number; loops: Map<number, LoopMeta> }>();

/** The loops of the sheet in force now with their momentum capacity; cached for half a minute. */
async function loopMetaOf(db: Db, spacecraftId: number, nowMs = Date.now()): Promise<Map<number, LoopMeta>> {
  const hit = sheetCache.get(spacecraftId);
  if (hit && nowMs - hit.at < 30_000) return hit.loops;
  const sheet = await findSheetInForce(db, spacecraftId, new Date(nowMs));
  const loops = new Map<number, LoopMeta>((sheet?.sheet.loops ?? []).map((l) => [l.id, { loop: l, capacity: momentumCapacity(l) }]));
  sheetCache.set(spacecraftId, { at: nowMs, loops });
  return loops;
}

/** Turn stored rows (ascending in time per loop) into thinned chart columns and per-second counts. */
function buildSeries(att: readonly AttRow[], loopRows: readonly LoopRow[], meta: Map<number, LoopMeta>, perSecond: number): Omit<LiveSeries, 'gaps'> {
  const counts = new Map<number, number>();
  const count = (ms: number) => {
    const s = Math.floor(ms / 1000) * 1000;
    counts.set(s, (counts.get(s) ?? 0) + 1);
  };
  const at = att.map((r) => msOfTimeTag(r.time_tag));
  at.forEach(count);
  const keep = thinPerSecond(at, perSecond);
  const attitude: AttitudeSeries = {
    t: keep.map((i) => Math.round(at[i]! * 10) / 10),
    x: keep.map((i) => r6(att[i]!.rate_x_rad_s)),
    y: keep.map((i) => r6(att[i]!.rate_y_rad_s)),
    z: keep.map((i) => r6(att[i]!.rate_z_rad_s)),
  };
  const byLoop = new Map<number, LoopRow[]>();
  for (const r of loopRows) {
    let list = byLoop.get(r.loop_id);
    if (!list) byLoop.set(r.loop_id, (list = []));
    list.push(r);
  }
  const loops: LoopSeries[] = [...byLoop.entries()]
    .sort((a, b) => a[0] - b[0])
    .map(([loopId, rows]) => {
      const lt = rows.map((r) => msOfTimeTag(r.time_tag));
      lt.forEach(count);
      const k = thinPerSecond(lt, perSecond);
      const m = meta.get(loopId);
      const h = k.map((i) => (m ? loopMomentum(m.loop, rows[i]!.flow_velocity_m_s) : Number.NaN));
      return {
        loopId,
        t: k.map((i) => Math.round(lt[i]! * 10) / 10),
        current: k.map((i) => r6(rows[i]!.measured_current_a)),
        flow: k.map((i) => r6(rows[i]!.flow_velocity_m_s)),
        pressure: k.map((i) => r6(rows[i]!.pressure_rise_pa)),
        fluidTemp: k.map((i) => r6(rows[i]!.fluid_temp_c)),
        electrodeTemp: k.map((i) => r6(rows[i]!.electrode_temp_c)),
        magnetTemp: k.map((i) => r6(rows[i]!.magnet_temp_c)),
        momentum: h.map(r6n),
        margin: h.map((v) => (m ? r6n(momentumMarginInUse(v, m.capacity)) : null)),
      };
    });
  return { attitude, loops, packets: [...counts.entries()].sort((a, b) => a[0] - b[0]) };
}

async function loadRows(db: Db, spacecraftId: number, fromMs: number, toMs: number, batchIds: number[] | null) {
  const lo = timeTagOfMs(fromMs);
  const hi = timeTagOfMs(toMs) + 1;
  const byBatch = batchIds ? sql`AND batch_id = ANY(${batchIds}::int[])` : sql``;
  const [att, loops] = await Promise.all([
    sql<AttRow>`SELECT batch_id, time_tag, rate_x_rad_s, rate_y_rad_s, rate_z_rad_s FROM attitude_sample
      WHERE spacecraft_id = ${spacecraftId} AND time_tag BETWEEN ${lo} AND ${hi} AND t BETWEEN ${new Date(fromMs - 1)} AND ${new Date(toMs + 1)} ${byBatch}
      ORDER BY time_tag, seq`.execute(db),
    sql<LoopRow>`SELECT batch_id, loop_id, time_tag, measured_current_a, flow_velocity_m_s, pressure_rise_pa, fluid_temp_c, electrode_temp_c, magnet_temp_c FROM loop_sample
      WHERE spacecraft_id = ${spacecraftId} AND time_tag BETWEEN ${lo} AND ${hi} AND t BETWEEN ${new Date(fromMs - 1)} AND ${new Date(toMs + 1)} ${byBatch}
      ORDER BY loop_id, time_tag, seq`.execute(db),
  ]);
  return { att: att.rows, loops: loops.rows };
}

interface GapRow {
  apid: number;
  from_seq: number;
  to_seq: number;
  missing: number;
  after_time_tag: number;
  before_time_tag: number;
  detected_at: Date;
}
const toGap = (g: GapRow): LiveGap => ({ apid: g.apid, from: g.from_seq, to: g.to_seq, missing: g.missing, afterMs: msOfTimeTag(g.after_time_tag), beforeMs: msOfTimeTag(g.before_time_tag) });

/** Thinned samples, per-second counts and open gaps of a spacecraft between two times (Unix ms). */
export async function loadSeries(db: Db, spacecraftId: number, fromMs: number, toMs: number, perSecond = HISTORY_POINTS_PER_S): Promise<LiveSeries> {
  const [rows, meta, gaps] = await Promise.all([
    loadRows(db, spacecraftId, fromMs, toMs, null),
    loopMetaOf(db, spacecraftId),
    sql<GapRow>`SELECT apid, from_seq, to_seq, missing, after_time_tag, before_time_tag, detected_at FROM sequence_gap
      WHERE spacecraft_id = ${spacecraftId} AND filled_at IS NULL AND before_time_tag >= ${timeTagOfMs(fromMs)} AND after_time_tag <= ${timeTagOfMs(toMs)}
      ORDER BY after_time_tag`.execute(db),
  ]);
  return { ...buildSeries(rows.att, rows.loops, meta, perSecond), gaps: gaps.rows.map(toGap) };
}

/** The newest stored row of the body and of each loop of a spacecraft, sampled at or before `toMs`, as one-point series. */
export async function loadLatest(db: Db, spacecraftId: number, toMs: number, meta?: Map<number, LoopMeta>): Promise<{ attitude: AttitudeSeries; loops: LoopSeries[] }> {
  const loops = meta ?? (await loopMetaOf(db, spacecraftId));
  const hi = timeTagOfMs(toMs) + 1;
  const lo = timeTagOfMs(toMs - LATEST_LOOKBACK_MS);
  const tFrom = new Date(toMs - LATEST_LOOKBACK_MS - 1);
  const tTo = new Date(toMs + 1);
  const [att, loopRows] = await Promise.all([
    sql<AttRow>`SELECT batch_id, time_tag, rate_x_rad_s, rate_y_rad_s, rate_z_rad_s FROM attitude_sample
      WHERE spacecraft_id = ${spacecraftId} AND time_tag BETWEEN ${lo} AND ${hi} AND t BETWEEN ${tFrom} AND ${tTo}
      ORDER BY time_tag DESC, seq DESC LIMIT 1`.execute(db),
    sql<LoopRow>`SELECT x.* FROM unnest(${[...loops.keys()]}::int[]) AS l(loop_id)
      CROSS JOIN LATERAL (
        SELECT batch_id, loop_id, time_tag, measured_current_a, flow_velocity_m_s, pressure_rise_pa, fluid_temp_c, electrode_temp_c, magnet_temp_c FROM loop_sample
        WHERE spacecraft_id = ${spacecraftId} AND loop_id = l.loop_id AND time_tag BETWEEN ${lo} AND ${hi} AND t BETWEEN ${tFrom} AND ${tTo}
        ORDER BY time_tag DESC, seq DESC LIMIT 1
      ) x
      ORDER BY x.loop_id`.execute(db),
  ]);
  const s = buildSeries(att.rows, loopRows.rows, loops, 1);
  return { attitude: s.attitude, loops: s.loops };
}

// ── the event log ───────────────────────────────────────────────────────────────────────────
/** The newest event number of a spacecraft (0 before its first stored batch). */
export async function currentLiveSeq(db: Db, spacecraftId: number): Promise<number> {
  const r = await db.selectFrom('live_counter').select('seq').where('spacecraft_id', '=', spacecraftId).executeTakeFirst();
  return r ? Number(r.seq) : 0;
}

/**
 * The batch events after event number `afterSeq`, oldest first, with their samples thinned to
 * LIVE_POINTS_PER_S. Samples older than LIVE_HORIZON_MS before the batch arrived (playback) are
 * counted in the batch figures but not sent as points.
 */
export async function listBatchEventsAfter(db: Db, spacecraftId: number, afterSeq: number, limit = CATCH_UP_CHUNK): Promise<BatchEvent[]> {
  const batches = await db
    .selectFrom('live_batch as l')
    .innerJoin('ingest_batch as b', 'b.id', 'l.batch_id')
    .leftJoin('ground_station as g', 'g.id', 'b.station_id')
    .select(['l.seq', 'b.id', 'b.received_at', 'b.source', 'b.accepted', 'b.duplicates', 'b.rejected', 'b.realtime', 'b.playback', 'b.first_time_tag', 'b.last_time_tag', 'g.key as station'])
    .where('l.spacecraft_id', '=', spacecraftId)
    .where('l.seq', '>', afterSeq)
    .orderBy('l.seq')
    .limit(limit)
    .execute();
  if (!batches.length) return [];
  const spans = batches.map((b) => {
    const rec = b.received_at.getTime();
    const first = b.first_time_tag === null ? null : msOfTimeTag(Number(b.first_time_tag));
    const last = b.last_time_tag === null ? null : msOfTimeTag(Number(b.last_time_tag));
    if (first === null || last === null) return null;
    const from = Math.max(first, rec - LIVE_HORIZON_MS);
    const to = Math.min(last, rec + 5 * 60_000);
    return from <= to ? { from, to } : null;
  });
  const live = batches.filter((_, i) => spans[i] !== null);
  const fromMs = Math.min(...spans.filter((s) => s !== null).map((s) => s.from));
  const toMs = Math.max(...spans.filter((s) => s !== null).map((s) => s.to));
  const [rows, meta, gaps] = await Promise.all([
    live.length ? loadRows(db, spacecraftId, fromMs, toMs, live.map((b) => b.id)) : Promise.resolve({ att: [], loops: [] }),
    loopMetaOf(db, spacecraftId),
    // A batch's new gaps are the rows its own transaction wrote: both carry that transaction's now().
    sql<GapRow & { batch_id: number }>`SELECT b.id AS batch_id, g.apid, g.from_seq, g.to_seq, g.missing, g.after_time_tag, g.before_time_tag, g.detected_at
      FROM ingest_batch b JOIN sequence_gap g ON g.spacecraft_id = b.spacecraft_id AND g.detected_at = b.received_at
      WHERE b.id = ANY(${batches.map((b) => b.id)}::int[]) AND g.spacecraft_id = ${spacecraftId}
      ORDER BY g.apid, g.after_time_tag`.execute(db),
  ]);
  return batches.map((b, i) => {
    const span = spans[i] ?? null;
    const inSpan = (r: { batch_id: number; time_tag: number }) => {
      if (r.batch_id !== b.id || span === null) return false;
      const ms = msOfTimeTag(r.time_tag);
      return ms >= span.from - 1 && ms <= span.to + 1;
    };
    const series = buildSeries(rows.att.filter(inSpan), rows.loops.filter(inSpan), meta, LIVE_POINTS_PER_S);
    return {
      seq: Number(b.seq),
      batchId: b.id,
      receivedAt: b.received_at.toISOString(),
      station: b.station,
      source: b.source,
      accepted: b.accepted,
      duplicates: b.duplicates,
      rejected: b.rejected,
      realtime: b.realtime,
      playback: b.playback,
      ...series,
      gaps: gaps.rows.filter((g) => g.batch_id === b.id).map(toGap),
    };
  });
}

/** Trips of a spacecraft that are not resolved, newest first. */
export async function listUnresolvedTrips(db: Db, spacecraftKey: string): Promise<LiveTrip[]> {
  const base = { spacecraft: spacecraftKey, sort: 'onset_at' as const, order: 'desc' as const, page: 1, pageSize: 200 };
  const [open, acked] = await Promise.all([listTrips(db, { ...base, state: 'open' }), listTrips(db, { ...base, state: 'acknowledged' })]);
  return [...open.trips, ...acked.trips].sort((a, b) => b.onset_at.getTime() - a.onset_at.getTime());
}

async function findLiveTrip(db: Db, id: number): Promise<LiveTrip | null> {
  try {
    const { evidence: _e, rule_id: _r, limit_set_id: _l, spacecraft_id: _s, ...row } = await findTrip(db, id);
    return row;
  } catch {
    return null;
  }
}

// ── the page snapshot ───────────────────────────────────────────────────────────────────────
/** Everything Pass watch paints first, read in one repeatable-read snapshot so that the live stream continues exactly after it. */
export async function loadPassWatch(db: Kysely<Database>, sc: { id: number; key: string; name: string }, nowMs = Date.now()): Promise<PassWatchSnapshot> {
  const { passes, error: passError } = await storedPasses(db, sc, nowMs - 24 * 3600_000, nowMs + 24 * 3600_000, nowMs);
  const current = passes.find((p) => p.aosMs <= nowMs && nowMs <= p.losMs);
  const historyFromMs = Math.min(nowMs - HISTORY_MS, current ? current.aosMs - 2 * 60_000 : Infinity);
  return db
    .transaction()
    .setIsolationLevel('repeatable read')
    .execute(async (trx) => {
      const seq = await currentLiveSeq(trx, sc.id);
      const meta = await loopMetaOf(trx, sc.id, nowMs);
      const [limitSet, history, latest, trips, analysed, last] = await Promise.all([
        findActiveLimitSet(trx, sc.id),
        loadSeries(trx, sc.id, historyFromMs, nowMs + 60_000),
        loadLatest(trx, sc.id, nowMs + 60_000, meta),
        listUnresolvedTrips(trx, sc.key),
        sql<{ loop_id: number; window_start: Date; effectiveness: number | null; margin_in_use_pct: number | null; momentum_abs_mean_nms: number | null; electrode_temp_mean_c: number | null }>`
          SELECT DISTINCT ON (loop_id) loop_id, window_start, effectiveness, margin_in_use_pct, momentum_abs_mean_nms, electrode_temp_mean_c
          FROM loop_window WHERE spacecraft_id = ${sc.id} ORDER BY loop_id, window_start DESC`.execute(trx),
        sql<{ tt: number | null }>`SELECT max(last_time_tag) AS tt FROM ingest_batch WHERE spacecraft_id = ${sc.id} AND received_at > ${new Date(nowMs - 7 * 86_400_000)}`.execute(trx),
      ]);
      const tt = last.rows[0]?.tt;
      return {
        spacecraft: { key: sc.key, name: sc.name },
        generatedAtMs: nowMs,
        seq,
        staleAfterS: STALE_AFTER_S,
        loops: [...meta.values()].map((m) => ({ id: m.loop.id, ratedCurrent_A: m.loop.ratedCurrent_A, capacity_Nms: m.capacity })),
        limitSet: limitSet ? { version: limitSet.version, name: limitSet.name } : null,
        limits: (limitSet?.rules ?? []).map((r) => ({
          quantity: r.quantity,
          loopId: r.loop_id,
          cautionHigh: r.caution_high,
          warningHigh: r.warning_high,
          cautionLow: r.caution_low,
          warningLow: r.warning_low,
        })),
        passes,
        passError,
        historyFromMs,
        history,
        latest,
        trips,
        analysed: analysed.rows.map((w) => ({
          loopId: w.loop_id,
          windowStart: w.window_start.toISOString(),
          effectiveness: w.effectiveness,
          marginInUse_pct: w.margin_in_use_pct,
          momentumAbsMean_nms: w.momentum_abs_mean_nms,
          electrodeTempMean_c: w.electrode_temp_mean_c,
        })),
        lastDataMs: tt === null || tt === undefined ? null : msOfTimeTag(Number(tt)),
      };
    });
}

// ── notifications ───────────────────────────────────────────────────────────────────────────
/** What a notification (or a reconnect of the listener) tells a subscriber. */
export type LiveSignal = { kind: 'batch'; seq: number } | { kind: 'trip'; tripId: number } | { kind: 'resync' };

/** Parse a payload of the live channel: "b:<spacecraft>:<seq>" or "t:<spacecraft>:<trip id>". */
export function parseLivePayload(payload: string): { spacecraftId: number; signal: LiveSignal } | null {
  const m = /^([bt]):(\d+):(\d+)$/.exec(payload);
  if (!m) return null;
  const spacecraftId = Number(m[2]);
  const n = Number(m[3]);
  return { spacecraftId, signal: m[1] === 'b' ? { kind: 'batch', seq: n } : { kind: 'trip', tripId: n } };
}

type Listener = (s: LiveSignal) => void;

/**
 * One LISTEN connection per process, on a client of its own (a pooled client cannot hold a
 * LISTEN), fanned out to the open streams by spacecraft. Every app instance has its own, so the
 * notifications of one instance's ingest reach the streams of all. After a lost connection it
 * reconnects and tells every stream to re-read from the database, so nothing is missed.
 */
export class LiveHub {
  private client: pg.Client | null = null;
  private connecting: Promise<void> | null = null;
  private readonly subs = new Map<number, Set<Listener>>();
  private retryMs = 500;
  private stopped = false;

  constructor(private readonly connectionString: string) {}

  /** Subscribe to one spacecraft's signals; resolves (with the unsubscribe function) once LISTEN is in place. */
  async subscribe(spacecraftId: number, fn: Listener): Promise<() => void> {
    let set = this.subs.get(spacecraftId);
    if (!set) this.subs.set(spacecraftId, (set = new Set()));
    set.add(fn);
    const off = () => {
      const s = this.subs.get(spacecraftId);
      s?.delete(fn);
      if (s && s.size === 0) this.subs.delete(spacecraftId);
    };
    try {
      await this.ensureConnected();
    } catch (err) {
      off();
      throw err;
    }
    return off;
  }

  /** Number of subscribed streams (for tests and diagnostics). */
  get subscribers(): number {
    let n = 0;
    for (const s of this.subs.values()) n += s.size;
    return n;
  }

  private dispatch(spacecraftId: number | null, signal: LiveSignal): void {
    const targets = spacecraftId === null ? [...this.subs.values()] : [this.subs.get(spacecraftId) ?? new Set<Listener>()];
    for (const set of targets) for (const fn of [...set]) fn(signal);
  }

  private ensureConnected(): Promise<void> {
    if (this.client) return Promise.resolve();
    this.connecting ??= this.connect().finally(() => (this.connecting = null));
    return this.connecting;
  }

  private async connect(): Promise<void> {
    const client = new pg.Client({ connectionString: this.connectionString, application_name: 'millrace-live' });
    client.on('notification', (msg) => {
      if (msg.channel !== LIVE_CHANNEL || !msg.payload) return;
      const p = parseLivePayload(msg.payload);
      if (p) this.dispatch(p.spacecraftId, p.signal);
    });
    const lost = (err?: Error) => {
      if (this.client !== client) return;
      this.client = null;
      client.removeAllListeners('notification');
      client.end().catch(() => undefined);
      if (err) console.error('[live] listener connection lost:', err.message);
      this.scheduleReconnect();
    };
    client.on('error', lost);
    client.on('end', () => lost());
    await client.connect();
    await client.query(`LISTEN ${LIVE_CHANNEL}`);
    this.client = client;
    this.retryMs = 500;
  }

  private scheduleReconnect(): void {
    if (this.stopped || this.subs.size === 0) return;
    setTimeout(() => {
      this.ensureConnected()
        .then(() => this.dispatch(null, { kind: 'resync' }))
        .catch((err: Error) => {
          console.error('[live] listener reconnect failed:', err.message);
          this.retryMs = Math.min(this.retryMs * 2, 10_000);
          this.scheduleReconnect();
        });
    }, this.retryMs).unref();
  }

  /** Close the LISTEN connection. */
  async stop(): Promise<void> {
    this.stopped = true;
    const c = this.client;
    this.client = null;
    await c?.end().catch(() => undefined);
  }
}

let hub: LiveHub | undefined;
/** The process's hub, on the configured database. */
export function liveHub(): LiveHub {
  hub ??= new LiveHub(config().DATABASE_URL);
  return hub;
}

// ── the stream ──────────────────────────────────────────────────────────────────────────────
/** One server-sent event (WHATWG HTML, server-sent events): optional id, event name, one data line of JSON. */
export function formatSse(event: string, data: unknown, id?: number): string {
  return `${id !== undefined ? `id: ${id}\n` : ''}event: ${event}\ndata: ${JSON.stringify(data)}\n\n`;
}

export interface LiveStreamOptions {
  db: Kysely<Database>;
  spacecraft: { id: number; key: string };
  /** Continue after this event number (Last-Event-ID or the page's snapshot); null: from now. */
  afterSeq: number | null;
  /** Send what is there and end the stream (scripts and tests). */
  once?: boolean;
  signal?: AbortSignal;
  hub?: LiveHub;
  heartbeatMs?: number;
}

/**
 * A text/event-stream response for one spacecraft. On open it sends a `trips` event (the trips not
 * yet resolved), then every `samples` event after `afterSeq` from the database, then each new
 * batch as it commits (id = the batch's event number) and a `trip` event for each trip change.
 * A database reset behind the client's id is answered with a `reset` event.
 */
export function openLiveStream(opts: LiveStreamOptions): Response {
  const { db, spacecraft } = opts;
  const h = opts.hub ?? liveHub();
  const enc = new TextEncoder();
  let closed = false;
  let unsubscribe: (() => void) | null = null;
  let heartbeat: ReturnType<typeof setInterval> | null = null;
  let lastSeq = 0;
  let running = false;
  let wantBatches = true;
  let wantSnapshot = true;
  const tripIds = new Set<number>();
  let ctrl: ReadableStreamDefaultController<Uint8Array> | null = null;

  const cleanup = () => {
    if (closed) return;
    closed = true;
    unsubscribe?.();
    if (heartbeat) clearInterval(heartbeat);
    opts.signal?.removeEventListener('abort', finish);
  };
  function finish() {
    const c = ctrl;
    cleanup();
    try {
      c?.close();
    } catch {
      // already closed by the reader
    }
  }
  const send = (text: string) => {
    if (closed || !ctrl) return;
    try {
      ctrl.enqueue(enc.encode(text));
    } catch {
      cleanup();
    }
  };

  const pump = async (): Promise<void> => {
    if (running || closed) return;
    running = true;
    try {
      while (!closed && (wantSnapshot || wantBatches || tripIds.size)) {
        if (wantSnapshot) {
          wantSnapshot = false;
          tripIds.clear();
          send(formatSse('trips', { trips: await listUnresolvedTrips(db, spacecraft.key) }));
        }
        if (tripIds.size) {
          const ids = [...tripIds];
          tripIds.clear();
          for (const id of ids) {
            const trip = await findLiveTrip(db, id);
            if (trip && trip.spacecraft === spacecraft.key) send(formatSse('trip', { trip }));
          }
        }
        if (wantBatches) {
          wantBatches = false;
          for (;;) {
            const events = await listBatchEventsAfter(db, spacecraft.id, lastSeq);
            for (const e of events) {
              send(formatSse('samples', e, e.seq));
              lastSeq = e.seq;
            }
            if (events.length < CATCH_UP_CHUNK || closed) break;
          }
        }
      }
    } catch (err) {
      // The client reconnects with its last id and continues from the database.
      console.error(`[live] stream of ${spacecraft.key} failed:`, err);
      finish();
    } finally {
      running = false;
    }
    if (!closed && (wantSnapshot || wantBatches || tripIds.size)) return pump();
  };

  const stream = new ReadableStream<Uint8Array>({
    async start(controller) {
      ctrl = controller;
      opts.signal?.addEventListener('abort', finish);
      send(`retry: 2000\n: Pass watch of ${spacecraft.key}\n\n`);
      try {
        if (!opts.once) {
          unsubscribe = await h.subscribe(spacecraft.id, (s) => {
            if (s.kind === 'batch') wantBatches = true;
            else if (s.kind === 'trip') tripIds.add(s.tripId);
            else wantSnapshot = wantBatches = true;
            void pump();
          });
          if (closed) unsubscribe();
        }
        const current = await currentLiveSeq(db, spacecraft.id);
        if (opts.afterSeq !== null && opts.afterSeq > current) {
          send(formatSse('reset', { reason: 'The live log restarted (the database was reset); reload the page.', seq: current }));
          finish();
          return;
        }
        lastSeq = opts.afterSeq ?? current;
        send(formatSse('ready', { seq: lastSeq, serverTimeMs: Date.now() }));
        await pump();
        if (opts.once) {
          finish();
          return;
        }
        heartbeat = setInterval(() => {
          send(`: keepalive ${new Date().toISOString()}\n\n`);
          // A safety net for a notification lost while the listener reconnected.
          wantBatches = true;
          void pump();
        }, opts.heartbeatMs ?? HEARTBEAT_MS);
      } catch (err) {
        console.error(`[live] could not open the stream of ${spacecraft.key}:`, err);
        finish();
      }
    },
    cancel() {
      cleanup();
    },
  });
  return new Response(stream, {
    status: 200,
    headers: {
      'content-type': 'text/event-stream; charset=utf-8',
      'cache-control': 'no-store, no-transform',
      connection: 'keep-alive',
      'x-accel-buffering': 'no',
    },
  });
}
