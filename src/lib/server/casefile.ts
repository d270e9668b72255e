import { sql, type Kysely, type Transaction } from 'kysely';
import { jsonArrayFrom } from 'kysely/helpers/postgres';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { insertAuditEntry } from './audit';
import { findTrip, resolveTrip } from './trips';
import { findSheetInForce } from './spacecraft';
import { unixSecondsOf } from './analysis-store';
import { BASELINE_WINDOWS, WINDOW_S } from './analysis-job';
import type { SessionUser } from './auth/roles';
import { mayResolve, RESOLVE_RULE } from '../trips.schema';
import { quantityInfo } from '../limits/quantities';
import { baselineStats, detectDrift, type BaselineStats } from '../physics/drift';
import { lttbIndices } from '../physics/lttb';
import { lossTorqueFunction } from '../physics/friction';
import { momentumPerVelocity } from '../physics/loop-geometry';
import { idealTorqueConstant } from '../physics/pump';
import { findPeaks, type Psd } from '../physics/pulsation';
import { sgOverTime, uniformSegments } from '../physics/torque';
import type { SheetLoop } from '../spacecraft-sheet.schema';
import { formatUtc, formatValue } from '../format';
import {
  conclusionInputSchema,
  DEFAULT_POINTS,
  type CasefileNote,
  type EvidenceKey,
  type EvidenceQuery,
  type EvidenceResponse,
  type LimitLevels,
  type RawWindowResponse,
  RECENT_KEYS,
  RECENT_WINDOWS,
  type RecentMean,
  type ScatterPeriod,
  type Series,
  type SpanProblem,
  spanProblem,
} from '../../features/casefile/casefile.schema';

type Db = Kysely<Database> | Transaction<Database>;
type Trip = Awaited<ReturnType<typeof findTrip>>;

/**
 * The onset detector's CUSUM decision interval, σ: detectDrift's default h = 7σ (k = 0.5σ), with which
 * estimateOnset dates a drift. It raises no trip: trips come from the limit set's drift_cusum_lo rule.
 */
export const CUSUM_DETECTOR_H_SIGMA = 7;
/** Default span around a trip: this long before its onset and after its last point, ms. */
const BEFORE_MS = 45 * 60_000;
const AFTER_MS = 15 * 60_000;
/** Points per scatter period sent to the browser. */
const SCATTER_POINTS = 1200;
/** Most bursts and frequency bins in the waterfall. */
const WATERFALL_BURSTS = 150;
const WATERFALL_BINS = 128;

/** The per-window columns of loop_window the Casefile charts and exports. */
export const LOOP_SERIES = [
  'effectiveness',
  'effectiveness_stderr',
  'compensated_effectiveness',
  'kt_nm_per_a',
  'kt_stderr_nm_per_a',
  'pressure_effectiveness',
  'pressure_constant_pa_per_a',
  'resistance_ohm',
  'thermal_residual_k',
  'electrode_temp_mean_c',
  'magnet_temp_mean_c',
  'current_mean_a',
  'fluid_torque_mean_nm',
  'drift_ewma',
  'drift_ewma_ucl',
  'drift_ewma_lcl',
  'drift_cusum_hi',
  'drift_cusum_lo',
] as const;
type LoopColumn = (typeof LOOP_SERIES)[number];
/** The per-window columns of body_window the Casefile charts and exports. */
export const BODY_SERIES = ['ledger_x_nm', 'ledger_y_nm', 'ledger_z_nm', 'ledger_stderr_x_nm', 'ledger_stderr_y_nm', 'ledger_stderr_z_nm', 'ledger_residual_nm'] as const;
type BodyColumn = (typeof BODY_SERIES)[number];

/** Quantities whose limit levels the charts draw. */
const LIMITED = ['effectiveness', 'compensated_effectiveness', 'drift_cusum_lo', 'pressure_effectiveness', 'resistance_ohm', 'thermal_residual_k', 'ledger_residual_nm', 'electrode_temp_mean_c'];

type LoopRow = { t: number } & Record<LoopColumn, number | null>;
type BodyRow = { t: number } & Record<BodyColumn, number | null>;

const iso = (s: number) => new Date(s * 1000).toISOString();
const fin = (x: number | null | undefined): x is number => typeof x === 'number' && Number.isFinite(x);

// ── span, loop, rows ─────────────────────────────────────────────────────────────────────────

/** The default span around a trip: 45 min before its onset to 15 min after its last point. */
export function defaultSpan(trip: Pick<Trip, 'onset_at' | 'last_at' | 'cleared_at'>): { fromMs: number; toMs: number } {
  const onset = trip.onset_at.getTime();
  const end = Math.max(trip.cleared_at?.getTime() ?? 0, trip.last_at.getTime(), onset);
  return { fromMs: Math.floor((onset - BEFORE_MS) / 60_000) * 60_000, toMs: Math.ceil((end + AFTER_MS) / 60_000) * 60_000 };
}

function spanError(p: { field: SpanProblem['field'] | 'window'; message: string }): HttpError {
  return new HttpError('BAD_REQUEST', p.message, { [p.field]: [p.message] });
}

/**
 * The span an evidence request covers (evidence, CSV, report): the ends given, the other end from the
 * default span around the trip. A missing end keeps the default end when that leaves the span running
 * forward, else sits the default span's length from the given end. The span must run forward and
 * cover at most MAX_SPAN_DAYS; otherwise a 400 naming `from` or `to`.
 */
export function resolveSpan(trip: Pick<Trip, 'onset_at' | 'last_at' | 'cleared_at'>, q: { from?: string; to?: string }): { fromMs: number; toMs: number } {
  const def = defaultSpan(trip);
  const length = def.toMs - def.fromMs;
  const given = { from: q.from !== undefined, to: q.to !== undefined };
  let fromMs = given.from ? Date.parse(q.from!) : def.fromMs;
  let toMs = given.to ? Date.parse(q.to!) : def.toMs;
  if (given.from && !given.to && Number.isFinite(fromMs) && !(def.toMs > fromMs)) toMs = fromMs + length;
  if (given.to && !given.from && Number.isFinite(toMs) && !(def.fromMs < toMs)) fromMs = toMs - length;
  const problem = spanProblem(fromMs, toMs, given);
  if (problem) throw spanError(problem);
  return { fromMs, toMs };
}

/** The span of a raw-samples request: the analysis window (WINDOW_S, aligned) holding an instant; 400 naming `window` when it is not a time. */
export function rawWindowSpan(windowIso: string): { fromMs: number; toMs: number } {
  const at = Date.parse(windowIso);
  if (!Number.isFinite(at)) throw spanError({ field: 'window', message: 'window is not a time: give an ISO 8601 time with a zone.' });
  const fromMs = Math.floor(at / 1000 / WINDOW_S) * WINDOW_S * 1000;
  return { fromMs, toMs: fromMs + WINDOW_S * 1000 };
}

async function loopsOf(db: Db, trip: Trip): Promise<{ loops: SheetLoop[]; effectiveFrom: Date }> {
  const sheet = await findSheetInForce(db, trip.spacecraft_id, trip.onset_at);
  if (!sheet) throw new HttpError('NOT_FOUND', `Spacecraft ${trip.spacecraft} has no sheet.`);
  return { loops: sheet.sheet.loops, effectiveFrom: sheet.effectiveFrom };
}

/** The loop the evidence is about: the requested one, else the trip's, else the sheet's first. */
function pickLoop(trip: Trip, loops: SheetLoop[], requested: number | undefined): SheetLoop {
  const id = requested ?? trip.loop_id ?? loops[0]?.id;
  const loop = loops.find((l) => l.id === id);
  if (!loop) throw new HttpError('BAD_REQUEST', `Spacecraft ${trip.spacecraft} has no loop ${id ?? ''}.`, { loop: [`one of ${loops.map((l) => l.id).join(', ')}`] });
  return loop;
}

async function loopRows(db: Db, spacecraftId: number, loopId: number, fromMs: number, toMs: number): Promise<LoopRow[]> {
  const r = await db
    .selectFrom('loop_window')
    .select(['window_start', ...LOOP_SERIES])
    .where('spacecraft_id', '=', spacecraftId)
    .where('loop_id', '=', loopId)
    .where('window_start', '>=', new Date(fromMs))
    .where('window_start', '<', new Date(toMs))
    .orderBy('window_start')
    .execute();
  return r.map(({ window_start, ...rest }) => ({ t: window_start.getTime() / 1000, ...rest }));
}

async function bodyRows(db: Db, spacecraftId: number, fromMs: number, toMs: number): Promise<BodyRow[]> {
  const r = await db
    .selectFrom('body_window')
    .select(['window_start', ...BODY_SERIES])
    .where('spacecraft_id', '=', spacecraftId)
    .where('window_start', '>=', new Date(fromMs))
    .where('window_start', '<', new Date(toMs))
    .orderBy('window_start')
    .execute();
  return r.map(({ window_start, ...rest }) => ({ t: window_start.getTime() / 1000, ...rest }));
}

/** Standard error of |r| from the components' standard errors (first-order propagation). */
export function magnitudeStdErr(r: [number, number, number], se: [number, number, number]): number {
  const m = Math.hypot(r[0], r[1], r[2]);
  if (!(m > 0)) return Math.hypot(se[0], se[1], se[2]) / Math.sqrt(3);
  return Math.sqrt(((r[0] * se[0]) ** 2 + (r[1] * se[1]) ** 2 + (r[2] * se[2]) ** 2) / (m * m));
}

/** The finite points of a column, LTTB-downsampled (Steinarsson 2013) to `points`, with the error column at the kept indices. */
export function downsample<R extends { t: number }>(rows: readonly R[], value: (r: R) => number | null, points: number, error?: (r: R) => number | null): Series {
  const t: number[] = [], y: number[] = [], e: number[] = [];
  for (const r of rows) {
    const v = value(r);
    if (!fin(v)) continue;
    t.push(r.t);
    y.push(v);
    if (error) {
      const s = error(r);
      e.push(fin(s) ? s : Number.NaN);
    }
  }
  const keep = lttbIndices(t, y, points);
  const out: Series = { t: Array.from(keep, (i) => t[i]!), y: Array.from(keep, (i) => y[i]!) };
  if (error) out.e = Array.from(keep, (i) => (Number.isFinite(e[i]!) ? e[i]! : 0));
  return out;
}

// ── baseline and onset ───────────────────────────────────────────────────────────────────────

interface Baseline {
  source: EvidenceResponse['baseline']['source'];
  stats: BaselineStats | null;
  from: number | null;
  to: number | null;
}

/**
 * The drift baseline as the analysis job formed it for the trip: the first BASELINE_WINDOWS windows with
 * a magnet-compensated effectiveness from the effective date of the sheet in force at the trip's onset
 * (the sheet loopsOf reads), all before the onset and before any later sheet took over. When those are
 * not there, the (up to BASELINE_WINDOWS) windows with one before the onset stand in. A sheet that
 * came into force after the trip never moves its baseline past it.
 */
async function findBaseline(db: Db, trip: Trip, loopId: number, sheetFrom: Date): Promise<Baseline> {
  const next = await db
    .selectFrom('spacecraft_sheet')
    .select('effective_from')
    .where('spacecraft_id', '=', trip.spacecraft_id)
    .where('effective_from', '>', sheetFrom)
    .orderBy('effective_from')
    .limit(1)
    .executeTakeFirst();
  const until = new Date(Math.min(trip.onset_at.getTime(), next?.effective_from.getTime() ?? Infinity));
  const first = await db
    .selectFrom('loop_window')
    .select(['window_start', 'compensated_effectiveness'])
    .where('spacecraft_id', '=', trip.spacecraft_id)
    .where('loop_id', '=', loopId)
    .where('window_start', '>=', sheetFrom)
    .where('window_start', '<', until)
    .where('compensated_effectiveness', 'is not', null)
    .orderBy('window_start')
    .limit(BASELINE_WINDOWS)
    .execute();
  const pick = (rows: { window_start: Date; compensated_effectiveness: number | null }[], source: Baseline['source']): Baseline => {
    const v = rows.map((r) => r.compensated_effectiveness ?? Number.NaN);
    const ts = rows.map((r) => r.window_start.getTime() / 1000);
    return { source, stats: baselineStats(v), from: Math.min(...ts), to: Math.max(...ts) + WINDOW_S };
  };
  if (first.length >= BASELINE_WINDOWS) return pick(first, 'drift-baseline');
  const before = await db
    .selectFrom('loop_window')
    .select(['window_start', 'compensated_effectiveness'])
    .where('spacecraft_id', '=', trip.spacecraft_id)
    .where('loop_id', '=', loopId)
    .where('window_start', '<', trip.onset_at)
    .where('compensated_effectiveness', 'is not', null)
    .orderBy('window_start', 'desc')
    .limit(BASELINE_WINDOWS)
    .execute();
  if (before.length >= 3) return pick(before.reverse(), 'before-onset');
  return { source: 'none', stats: null, from: null, to: null };
}

/**
 * The most likely window of a step in the mean, between `from` and `to` (inclusive), of a series with
 * known in-control mean μ0: the τ maximising (n − τ + 1)·(x̄_τ…n − μ0)², the Gaussian likelihood ratio
 * of a step at τ (Hinkley 1970, Biometrika 57:1, from memory), with x̄ on the side of `direction`.
 */
export function stepChangePoint(values: ArrayLike<number>, mu0: number, from: number, to: number, direction: 'up' | 'down'): number {
  let best = from, bestScore = -Infinity;
  let n = 0, s = 0;
  // walk τ down from `to` so that each suffix sum is one addition
  for (let tau = to; tau >= from; tau--) {
    const x = values[tau]!;
    if (Number.isFinite(x)) { n++; s += x; }
    if (!n) continue;
    const d = s / n - mu0;
    if ((direction === 'down' ? d < 0 : d > 0) && n * d * d >= bestScore) { bestScore = n * d * d; best = tau; }
  }
  return best;
}

/**
 * The estimated onset: for a drift trip, the step change point (stepChangePoint) between the last
 * window at which the CUSUM in the signal's direction was zero and the window at which the detector
 * signalled (EWMA and tabular CUSUM of the NIST/SEMATECH e-Handbook §6.3.2.4 and §6.3.2.3 against
 * the baseline); otherwise, or when the detector does not signal, the first window of the run that
 * raised the trip.
 */
async function estimateOnset(db: Db, trip: Trip, loopId: number, base: Baseline): Promise<EvidenceResponse['onset']> {
  const limitAt = trip.onset_at.toISOString();
  const fallback: EvidenceResponse['onset'] = { at: limitAt, method: 'limit', limitAt, signalAt: null, signalMethod: null };
  if (trip.kind !== 'torque-constant-drift' || !base.stats || !(base.stats.sd > 0) || base.from === null) return fallback;
  const end = Math.max(trip.last_at.getTime(), trip.cleared_at?.getTime() ?? 0) + WINDOW_S * 1000;
  const rows = await db
    .selectFrom('loop_window')
    .select(['window_start', 'compensated_effectiveness'])
    .where('spacecraft_id', '=', trip.spacecraft_id)
    .where('loop_id', '=', loopId)
    .where('window_start', '>=', new Date(base.from * 1000))
    .where('window_start', '<', new Date(end))
    .where('compensated_effectiveness', 'is not', null)
    .orderBy('window_start')
    .execute();
  const t = rows.map((r) => r.window_start.getTime() / 1000);
  const v = rows.map((r) => r.compensated_effectiveness ?? Number.NaN);
  const d = detectDrift(t, v, base.stats, { cusumH_sigma: CUSUM_DETECTOR_H_SIGMA });
  if (!d.detected || d.signalTime_s === null || d.onsetTime_s === null) return fallback;
  const sums = d.direction === 'up' ? d.cusum.sHi : d.cusum.sLo;
  const signal = t.indexOf(d.signalTime_s);
  let last = -1;
  for (let i = signal - 1; i >= 0; i--) if (sums[i] === 0) { last = i; break; }
  const onsetS = t[stepChangePoint(v, base.stats.mean, last + 1, signal, d.direction === 'up' ? 'up' : 'down')] ?? t[0]!;
  return { at: iso(onsetS), method: 'cusum', limitAt, signalAt: iso(d.signalTime_s), signalMethod: d.method };
}

// ── limits ───────────────────────────────────────────────────────────────────────────────────

async function limitLevels(db: Db, trip: Trip, loopId: number): Promise<Record<string, LimitLevels>> {
  if (trip.limit_set_id === null) return {};
  const rules = await db
    .selectFrom('limit_rule')
    .select(['quantity', 'loop_id', 'caution_high', 'warning_high', 'caution_low', 'warning_low'])
    .where('limit_set_id', '=', trip.limit_set_id)
    .where('quantity', 'in', LIMITED)
    .execute();
  const out: Record<string, LimitLevels> = {};
  // a rule for this loop wins over one for all loops
  for (const r of [...rules].sort((a, b) => (a.loop_id === null ? 0 : 1) - (b.loop_id === null ? 0 : 1))) {
    if (r.loop_id !== null && r.loop_id !== loopId) continue;
    out[r.quantity] = { cautionHigh: r.caution_high, warningHigh: r.warning_high, cautionLow: r.caution_low, warningLow: r.warning_low };
  }
  return out;
}

// ── torque vs current per sample ────────────────────────────────────────────────────────────

/**
 * Per-sample pump torque on the fluid over [fromS, toS): τ_f = dh/dt + τ_loss(v) with h = 2ρAS·v
 * (loop-geometry momentumPerVelocity) and dh/dt from the Savitzky–Golay derivative (Savitzky &
 * Golay 1964; half-width 10, order 2, as the analysis job), against the measured current.
 */
async function torqueSamples(db: Db, spacecraftId: number, loop: SheetLoop, fromS: number, toS: number) {
  const r = await sql<{ tt: number; i: number; v: number; m: number }>`
    SELECT time_tag AS tt, measured_current_a AS i, flow_velocity_m_s AS v, magnet_temp_c AS m FROM loop_sample
    WHERE spacecraft_id = ${spacecraftId} AND loop_id = ${loop.id} AND t >= ${new Date(fromS * 1000)} AND t < ${new Date(toS * 1000)}
    ORDER BY time_tag, seq`.execute(db);
  const n = r.rows.length;
  const t = new Float64Array(n), v = new Float64Array(n);
  r.rows.forEach((x, k) => {
    t[k] = unixSecondsOf(Number(x.tt));
    v[k] = x.v;
  });
  const kh = momentumPerVelocity(loop);
  const loss = lossTorqueFunction(loop);
  const vdot = n > 21 ? sgOverTime(t, v, { halfWidth: 10, order: 2, derivative: 1 }, uniformSegments(t)) : new Float64Array(n).fill(Number.NaN);
  const current: number[] = [], torque: number[] = [], temp: number[] = [];
  const stride = Math.max(1, Math.ceil(n / SCATTER_POINTS));
  let samples = 0;
  for (let k = 0; k < n; k++) {
    const tau = kh * vdot[k]! + loss(v[k]!);
    if (!Number.isFinite(tau) || !Number.isFinite(r.rows[k]!.i)) continue;
    samples++;
    if (k % stride !== 0) continue;
    current.push(r.rows[k]!.i);
    torque.push(tau);
    temp.push(r.rows[k]!.m);
  }
  return { current, torque, temp, samples };
}

/** Inverse-variance weighted mean of per-window kT fits and its standard error. */
export function weightedKt(rows: readonly { kt: number | null; se: number | null }[]): { kT: number | null; kTStdErr: number | null } {
  let sw = 0, swx = 0;
  for (const r of rows) {
    if (!fin(r.kt) || !fin(r.se) || !(r.se > 0)) continue;
    const w = 1 / (r.se * r.se);
    sw += w;
    swx += w * r.kt;
  }
  return sw > 0 ? { kT: swx / sw, kTStdErr: 1 / Math.sqrt(sw) } : { kT: null, kTStdErr: null };
}

async function scatterPeriod(db: Db, spacecraftId: number, loop: SheetLoop, windows: { t: number; kt: number | null; se: number | null }[]): Promise<ScatterPeriod | null> {
  if (!windows.length) return null;
  const from = windows[0]!.t, to = windows[windows.length - 1]!.t + WINDOW_S;
  const s = await torqueSamples(db, spacecraftId, loop, from, to);
  return { from, to, windows: windows.length, samples: s.samples, current_a: s.current, torque_nm: s.torque, magnetTemp_c: s.temp, ...weightedKt(windows) };
}

async function scatterOf(db: Db, trip: Trip, loop: SheetLoop, base: Baseline, spanToMs: number): Promise<EvidenceResponse['scatter']> {
  const baseWindows =
    base.from !== null && base.to !== null
      ? await db
          .selectFrom('loop_window')
          .select(['window_start', 'kt_nm_per_a', 'kt_stderr_nm_per_a'])
          .where('spacecraft_id', '=', trip.spacecraft_id)
          .where('loop_id', '=', loop.id)
          .where('window_start', '>=', new Date(base.from * 1000))
          .where('window_start', '<', new Date(base.to * 1000))
          .where('kt_nm_per_a', 'is not', null)
          .orderBy('window_start')
          .execute()
      : [];
  const recentWindows = (
    await db
      .selectFrom('loop_window')
      .select(['window_start', 'kt_nm_per_a', 'kt_stderr_nm_per_a'])
      .where('spacecraft_id', '=', trip.spacecraft_id)
      .where('loop_id', '=', loop.id)
      .where('window_start', '<', new Date(spanToMs))
      .where('kt_nm_per_a', 'is not', null)
      .orderBy('window_start', 'desc')
      .limit(RECENT_WINDOWS)
      .execute()
  ).reverse();
  const map = (rows: typeof recentWindows) => rows.map((r) => ({ t: r.window_start.getTime() / 1000, kt: r.kt_nm_per_a, se: r.kt_stderr_nm_per_a }));
  const [baseline, recent] = await Promise.all([scatterPeriod(db, trip.spacecraft_id, loop, map(baseWindows)), scatterPeriod(db, trip.spacecraft_id, loop, map(recentWindows))]);
  return { kind: 'per-sample', baseline, recent, idealKt: idealTorqueConstant(loop) };
}

// ── pulsation ────────────────────────────────────────────────────────────────────────────────

interface BurstRow {
  t: number;
  freq: number[];
  psd: number[];
  peaks: { frequency_hz: number; amplitude: number }[];
}

function bandPowerOf(freq: readonly number[], psd: readonly number[]): number {
  if (freq.length < 2) return 0;
  const df = freq[1]! - freq[0]!;
  let s = 0;
  for (let k = 1; k < psd.length; k++) s += psd[k]! * df;
  return s;
}

function peaksOf(raw: unknown): BurstRow['peaks'] {
  if (!Array.isArray(raw)) return [];
  return raw
    .map((p) => ({ frequency_hz: Number((p as { frequency_hz?: unknown }).frequency_hz), amplitude: Number((p as { amplitude?: unknown }).amplitude) }))
    .filter((p) => Number.isFinite(p.frequency_hz) && Number.isFinite(p.amplitude))
    .sort((a, b) => b.amplitude - a.amplitude)
    .slice(0, 5);
}

async function burstRows(db: Db, spacecraftId: number, loopId: number, where: { from?: number; to?: number; order: 'asc' | 'desc'; limit: number }): Promise<BurstRow[]> {
  let q = db
    .selectFrom('burst_analysis')
    .select(['t', 'frequencies_hz', 'psd', 'peaks'])
    .where('spacecraft_id', '=', spacecraftId)
    .where('loop_id', '=', loopId)
    .where('channel', '=', 0);
  if (where.from !== undefined) q = q.where('t', '>=', new Date(where.from * 1000));
  if (where.to !== undefined) q = q.where('t', '<', new Date(where.to * 1000));
  const rows = await q.orderBy('t', where.order).limit(where.limit).execute();
  return rows.map((r) => ({ t: r.t.getTime() / 1000, freq: r.frequencies_hz.map(Number), psd: r.psd.map(Number), peaks: peaksOf(r.peaks) }));
}

function meanSpectrum(rows: BurstRow[]): { freq: number[]; psd: number[] } | null {
  const grid = rows[0]?.freq;
  if (!grid) return null;
  const same = rows.filter((r) => r.freq.length === grid.length && r.freq[1] === grid[1]);
  const psd = new Array<number>(grid.length).fill(0);
  for (const r of same) for (let k = 0; k < grid.length; k++) psd[k]! += r.psd[k]! / same.length;
  return { freq: grid, psd };
}

/** The bursts of the span, at most WATERFALL_BURSTS evenly picked (the last one always), spectra included. */
async function spanBursts(db: Db, spacecraftId: number, loopId: number, fromMs: number, toMs: number): Promise<BurstRow[]> {
  const times = await db
    .selectFrom('burst_analysis')
    .select('t')
    .where('spacecraft_id', '=', spacecraftId)
    .where('loop_id', '=', loopId)
    .where('channel', '=', 0)
    .where('t', '>=', new Date(fromMs))
    .where('t', '<', new Date(toMs))
    .orderBy('t')
    .execute();
  if (!times.length) return [];
  const stride = Math.max(1, Math.ceil(times.length / WATERFALL_BURSTS));
  const picked = times.filter((_, i) => i % stride === 0 || i === times.length - 1).map((r) => r.t);
  const rows = await db
    .selectFrom('burst_analysis')
    .select(['t', 'frequencies_hz', 'psd', 'peaks'])
    .where('spacecraft_id', '=', spacecraftId)
    .where('loop_id', '=', loopId)
    .where('channel', '=', 0)
    .where('t', 'in', picked)
    .orderBy('t')
    .execute();
  return rows.map((r) => ({ t: r.t.getTime() / 1000, freq: r.frequencies_hz.map(Number), psd: r.psd.map(Number), peaks: peaksOf(r.peaks) }));
}

async function pulsationOf(db: Db, trip: Trip, loopId: number, base: Baseline, fromMs: number, toMs: number): Promise<EvidenceResponse['pulsation']> {
  const inSpan = await spanBursts(db, trip.spacecraft_id, loopId, fromMs, toMs);
  const latestRow = inSpan[inSpan.length - 1] ?? (await burstRows(db, trip.spacecraft_id, loopId, { to: toMs / 1000, order: 'desc', limit: 1 }))[0] ?? null;
  let baseRows: BurstRow[] = [];
  let source: 'baseline-period' | 'earliest' = 'baseline-period';
  if (base.from !== null && base.to !== null) baseRows = await burstRows(db, trip.spacecraft_id, loopId, { from: base.from, to: base.to, order: 'asc', limit: 200 });
  if (!baseRows.length) {
    baseRows = await burstRows(db, trip.spacecraft_id, loopId, { order: 'asc', limit: 1 });
    source = 'earliest';
  }
  const mean = meanSpectrum(baseRows);
  const baseline = mean
    ? { freq_hz: mean.freq, psd: mean.psd, peaks: baseRows.length === 1 ? baseRows[0]!.peaks : [], bandPower: bandPowerOf(mean.freq, mean.psd), bursts: baseRows.length, source }
    : null;
  if (baseline && baseRows.length > 1 && baseline.freq_hz.length > 2) {
    // peaks of the mean spectrum, picked as the analysis picks them per burst (Hann window: ENBW 1.5 bins)
    const psd: Psd = {
      freq_hz: Float64Array.from(baseline.freq_hz),
      density: Float64Array.from(baseline.psd),
      df_hz: baseline.freq_hz[1]! - baseline.freq_hz[0]!,
      sampleRate_hz: 2 * baseline.freq_hz[baseline.freq_hz.length - 1]!,
      segmentLength: 2 * (baseline.freq_hz.length - 1),
      segments: baseRows.length,
      enbw_bins: 1.5,
      coherentGain: 0.5,
    };
    baseline.peaks = findPeaks(psd, { maxPeaks: 5 }).map((p) => ({ frequency_hz: p.frequency_hz, amplitude: p.amplitude }));
  }
  const latest = latestRow ? { t: latestRow.t, freq_hz: latestRow.freq, psd: latestRow.psd, peaks: latestRow.peaks, bandPower: bandPowerOf(latestRow.freq, latestRow.psd) } : null;
  let waterfall: EvidenceResponse['pulsation']['waterfall'] = null;
  const grid = latestRow?.freq;
  if (grid && inSpan.length) {
    const picked = inSpan.filter((r) => r.freq.length === grid.length && r.freq[1] === grid[1]);
    const binStride = Math.max(1, Math.ceil(grid.length / WATERFALL_BINS));
    const freq: number[] = [];
    for (let k = 0; k < grid.length; k += binStride) freq.push(grid[k]!);
    const rows = picked.map((r) => {
      const out: number[] = [];
      for (let k = 0; k < grid.length; k += binStride) {
        let s = 0, c = 0;
        for (let j = k; j < Math.min(grid.length, k + binStride); j++) { s += r.psd[j]!; c++; }
        const m = s / c;
        out.push(m > 0 ? Math.round(Math.log10(m) * 1000) / 1000 : -12);
      }
      return out;
    });
    waterfall = { t: picked.map((r) => r.t), freq_hz: freq, log10psd: rows };
  }
  return { channel: 0, unit: 'Pa', baseline, latest, waterfall };
}

// ── readings ─────────────────────────────────────────────────────────────────────────────────

const hhmm = (s: number | string) => `${formatUtc(typeof s === 'number' ? s * 1000 : s).slice(11, 16)} UTC`;
const pct = (x: number) => `${x >= 0 ? '+' : '−'}${Math.abs(x * 100).toFixed(Math.abs(x) < 0.1 ? 1 : 0)} %`;

function meanOf(values: readonly (number | null)[]): number | null {
  const f = values.filter(fin);
  return f.length ? f.reduce((a, b) => a + b, 0) / f.length : null;
}

/** The mean of a column over the last RECENT_WINDOWS windows of the span that have a value (full rows, not downsampled). */
export function recentMean<R extends { t: number }>(rows: readonly R[], value: (r: R) => number | null): RecentMean {
  const last = rows.filter((r) => fin(value(r))).slice(-RECENT_WINDOWS);
  return { mean: meanOf(last.map(value)), windows: last.length, from: last[0]?.t ?? null, to: last[last.length - 1]?.t ?? null };
}

/** Mean of a column over the baseline period and over the last RECENT_WINDOWS windows with a value in the span. */
function beforeAfter(rows: LoopRow[], col: LoopColumn, base: Baseline, allBase: LoopRow[]): { before: number | null; after: number | null } {
  const inBase = base.from !== null && base.to !== null ? allBase.filter((r) => r.t >= base.from! && r.t < base.to!) : [];
  return { before: meanOf(inBase.map((r) => r[col])), after: recentMean(rows, (r) => r[col]).mean };
}

/** The ledger residual's mean and largest value over the span's windows. */
function ledgerOf(body: readonly BodyRow[]): EvidenceResponse['ledger'] {
  const v = body.map((b) => b.ledger_residual_nm).filter(fin);
  return { windows: v.length, mean_nm: meanOf(v), max_nm: v.length ? Math.max(...v) : null };
}

/** The downward and upward CUSUM of the span against the limit set's levels and the onset detector's h. */
export function cusumOf(rows: readonly { t: number; drift_cusum_lo: number | null; drift_cusum_hi: number | null }[], limits: LimitLevels | undefined, limitSetVersion: number): EvidenceResponse['cusum'] {
  let peakLo: { value: number; t: number } | null = null, peakHi: { value: number; t: number } | null = null;
  for (const r of rows) {
    if (fin(r.drift_cusum_lo) && (!peakLo || r.drift_cusum_lo > peakLo.value)) peakLo = { value: r.drift_cusum_lo, t: r.t };
    if (fin(r.drift_cusum_hi) && (!peakHi || r.drift_cusum_hi > peakHi.value)) peakHi = { value: r.drift_cusum_hi, t: r.t };
  }
  const caution = limits?.cautionHigh ?? null, warning = limits?.warningHigh ?? null;
  const firstAt = (level: number | null) => (level === null ? null : (rows.find((r) => fin(r.drift_cusum_lo) && r.drift_cusum_lo >= level)?.t ?? null));
  return {
    detectorH_sigma: CUSUM_DETECTOR_H_SIGMA,
    caution_sigma: caution,
    warning_sigma: warning,
    limitSetVersion,
    peakLo,
    peakHi,
    firstAtDetector: firstAt(CUSUM_DETECTOR_H_SIGMA),
    firstAtCaution: firstAt(caution),
    firstAtWarning: firstAt(warning),
  };
}

function readingsOf(ev: Omit<EvidenceResponse, 'readings'>, rows: LoopRow[], baseRows: LoopRow[], base: Baseline): Record<EvidenceKey, string> {
  const b = ev.baseline;
  const out = {} as Record<EvidenceKey, string>;
  const eff = beforeAfter(rows, 'effectiveness', base, baseRows);
  const baseText =
    b.source === 'drift-baseline'
      ? `the drift baseline (the first ${b.n} windows with a magnet-compensated effectiveness from the sheet's effective date, ${hhmm(b.from!)}–${hhmm(b.to!)})`
      : b.source === 'before-onset'
        ? `the ${b.n} windows before the onset (the drift baseline needs ${b.required} windows and is not formed yet)`
        : '';
  const onsetText = ev.onset.method === 'cusum' ? `The most likely step in the mean is at ${hhmm(ev.onset.at)}; the ${ev.onset.signalMethod === 'ewma' ? 'EWMA' : 'CUSUM'} signalled at ${hhmm(ev.onset.signalAt!)}` : `The limit engine puts the onset at ${hhmm(ev.onset.limitAt)} (first window of the run that raised the trip)`;
  if (!rows.some((r) => fin(r.effectiveness))) {
    out.effectiveness = 'No window in this span has an effectiveness: the pump current did not vary enough in any window to fit kT (the fit needs a current standard deviation of at least 2 % of rated). Widen the span or look at a period with manoeuvres.';
  } else if (b.mean === null || eff.after === null) {
    out.effectiveness = `Effectiveness averages ${formatValue(meanOf(rows.map((r) => r.effectiveness)), 3)} in this span; there are too few windows before the onset to form a baseline. ${onsetText}.`;
  } else {
    const rel = eff.after / b.mean - 1;
    const z = b.sd && b.sd > 0 ? (eff.after - b.mean) / b.sd : null;
    out.effectiveness = `Against ${baseText} the effectiveness was ${formatValue(b.mean, 3)} (σ ${formatValue(b.sd, 2)}); the last ${Math.min(RECENT_WINDOWS, rows.filter((r) => fin(r.effectiveness)).length)} windows of the span average ${formatValue(eff.after, 3)}, ${pct(rel)}${z !== null ? ` (${z >= 0 ? '+' : '−'}${Math.abs(z).toFixed(1)}σ)` : ''}. ${onsetText}.${Math.abs(rel) < 0.03 ? ' That is within a few per cent of the baseline: the pump is delivering its usual torque.' : rel < 0 ? ' The pump now delivers less torque per ampere than it did.' : ''}`;
  }
  const cu = ev.cusum;
  if (!cu.peakLo) {
    out.drift = b.source === 'drift-baseline' ? 'No drift statistics are stored in this span.' : `Drift statistics start once the baseline of ${b.required} windows with a compensated effectiveness is formed (${b.n} so far before the onset).`;
  } else {
    const sig = (x: number) => `${formatValue(x, 3)}σ`;
    const set = `limit set v${cu.limitSetVersion}`;
    const ewmaOut = rows.find((r) => fin(r.drift_ewma) && fin(r.drift_ewma_lcl) && (r.drift_ewma! < r.drift_ewma_lcl! || r.drift_ewma! > r.drift_ewma_ucl!));
    const peak = `${cu.peakLo.value.toFixed(1)}σ at ${hhmm(cu.peakLo.t)}`;
    let limitText: string;
    if (cu.caution_sigma === null && cu.warning_sigma === null) limitText = `The downward CUSUM reached ${peak}; ${set} has no limit on it, so it raised no trip here.`;
    else if (cu.firstAtCaution !== null || cu.firstAtWarning !== null) {
      const parts = [
        cu.caution_sigma !== null ? (cu.firstAtCaution !== null ? `its caution limit of ${sig(cu.caution_sigma)} at ${hhmm(cu.firstAtCaution)}` : null) : null,
        cu.warning_sigma !== null ? (cu.firstAtWarning !== null ? `its warning limit of ${sig(cu.warning_sigma)} at ${hhmm(cu.firstAtWarning)}` : null) : null,
      ].filter((x): x is string => x !== null);
      const below = cu.warning_sigma !== null && cu.firstAtWarning === null ? ` and stayed below the warning limit of ${sig(cu.warning_sigma)}` : '';
      limitText = `The downward CUSUM crossed ${parts.join(' and ')} (${set}), reaching ${peak}${below}.`;
    } else {
      const levels = [cu.caution_sigma !== null ? `caution ${sig(cu.caution_sigma)}` : null, cu.warning_sigma !== null ? `warning ${sig(cu.warning_sigma)}` : null].filter(Boolean).join(', ');
      limitText = `The downward CUSUM stayed below the limits of ${set} (${levels}); largest ${peak}, upward largest ${(cu.peakHi?.value ?? 0).toFixed(1)}σ.`;
    }
    const detector = cu.firstAtDetector !== null ? `The onset detector's own decision level, h = ${sig(cu.detectorH_sigma)}, was crossed at ${hhmm(cu.firstAtDetector)}; it dates the onset and raises no trip.` : `The onset detector's own decision level, h = ${sig(cu.detectorH_sigma)} (it dates the onset and raises no trip), was not crossed.`;
    const ewma = ewmaOut ? ` The EWMA left its control limits at ${hhmm(ewmaOut.t)}.` : ' The EWMA stayed inside its control limits.';
    const verdict = cu.firstAtDetector !== null ? ' A sustained rise like this means the mean moved down, not a single bad window.' : ewmaOut ? '' : ' No sustained shift in this span.';
    out.drift = `${limitText} ${detector}${ewma}${verdict}`;
  }
  const comp = rows.filter((r) => fin(r.effectiveness) && fin(r.compensated_effectiveness));
  const mags = rows.map((r) => r.magnet_temp_mean_c).filter(fin);
  if (!comp.length) out.compensation = 'No window in this span has both the raw and the compensated effectiveness.';
  else {
    const maxMove = Math.max(...comp.map((r) => Math.abs(r.compensated_effectiveness! / r.effectiveness! - 1)));
    const c = beforeAfter(rows, 'compensated_effectiveness', base, baseRows);
    const cRel = c.before !== null && c.after !== null ? c.after / c.before - 1 : null;
    const rRel = eff.after !== null && b.mean !== null ? eff.after / b.mean - 1 : null;
    out.compensation = `Magnet temperature ranged ${formatValue(Math.min(...mags), 3)}–${formatValue(Math.max(...mags), 3)} °C; referring the effectiveness to 20 °C moves it by at most ${(maxMove * 100).toFixed(1)} %.${cRel !== null && rRel !== null ? ` Compensated, the change from the baseline is ${pct(cRel)} against ${pct(rRel)} raw: ${Math.abs(rRel) > 0.03 && Math.abs(cRel) > 0.5 * Math.abs(rRel) ? 'the change is not a magnet-temperature effect.' : Math.abs(rRel) > 0.03 ? 'most of the change goes with the magnet temperature.' : 'both stay near the baseline.'}` : ''}`;
  }
  const p = beforeAfter(rows, 'pressure_effectiveness', base, baseRows);
  if (p.after === null) out.pressure = 'No window in this span has a pump-pressure constant (it too needs the current to vary).';
  else if (p.before === null) out.pressure = `The pump-pressure constant averages ${formatValue(p.after, 3)} of ideal in the last windows; there is no baseline period to compare with.`;
  else {
    const pRel = p.after / p.before - 1;
    const eRel = eff.after !== null && b.mean !== null ? eff.after / b.mean - 1 : 0;
    const agree = Math.abs(eRel) > 0.03 && Math.sign(pRel) === Math.sign(eRel) && Math.abs(pRel) > 0.5 * Math.abs(eRel);
    out.pressure = `The pump-pressure constant, measured independently from the pressure taps, went from ${formatValue(p.before, 3)} to ${formatValue(p.after, 3)} of ideal (${pct(pRel)}). ${agree ? 'It agrees with the torque estimate: the pump itself develops less pressure per ampere (magnet, electrodes or wetting), not a torque-model or flowmeter artefact.' : Math.abs(eRel) > 0.03 ? 'It does not follow the torque estimate: suspect the torque path (flowmeter, loss model) before the pump.' : 'Both estimates stay near their baseline.'}`;
  }
  const r = beforeAfter(rows, 'resistance_ohm', base, baseRows);
  const res = rows.map((x) => x.thermal_residual_k).filter(fin);
  const resText = res.length ? `the thermal-model residual averages ${formatValue(meanOf(res), 2)} K (largest ${formatValue(Math.max(...res.map(Math.abs)), 2)} K)` : 'no thermal-model residual is stored';
  if (r.after === null) out.heating = `No window in this span has a resistance (it needs an RMS current of at least 5 % of rated); ${resText}.`;
  else {
    const rRel = r.before !== null ? r.after / r.before - 1 : null;
    const hot = (rRel !== null && rRel > 0.05) || (res.length > 0 && Math.max(...res.map(Math.abs)) > 1);
    out.heating = `Electrode-circuit resistance ${r.before !== null ? `${formatValue(r.before, 3)} → ` : ''}${formatValue(r.after, 3)} Ω${rRel !== null ? ` (${pct(rRel)})` : ''}; ${resText}. ${hot ? 'The electrodes are heating beyond what the fitted thermal model expects: look at contact resistance and wetting.' : 'No sign of electrode heating or contact degradation.'}`;
  }
  const sc = ev.scatter;
  // in mN·m/A, as the chart's axis and legend
  const mNm = (k: number | null) => `${formatValue(k === null ? null : k * 1e3, 3)} mN·m/A`;
  if (!sc.recent || sc.recent.kT === null) out.scatter = 'No window with a fitted kT in the recent period.';
  else {
    const bk = sc.baseline?.kT ?? null;
    out.scatter = `Each dot is one 10 Hz sample: pump current against the fluid torque dh/dt + τ_loss. Recent kT ${mNm(sc.recent.kT)} (${sc.recent.windows} windows)${bk !== null ? `, baseline ${mNm(bk)} (${sc.baseline!.windows} windows): the slope changed ${pct(sc.recent.kT / bk - 1)}` : ''}; the ideal kT of the sheet is ${mNm(sc.idealKt)}. The lines are τ = kT·I through the origin: only the slope of the windows' fits, which also carry loss-correction terms in v and v|v| that are not drawn, so dots may sit off a line where the loss model is off without kT having changed. Colour shows magnet temperature: if the colours separate along the slope, temperature explains the change.`;
  }
  const pu = ev.pulsation;
  if (!pu.latest) out.spectrum = 'No pressure burst was captured for this loop up to the end of the span.';
  else {
    const lp = pu.latest.peaks[0];
    const bp = pu.baseline?.peaks[0];
    const ratio = pu.baseline && pu.baseline.bandPower > 0 ? pu.latest.bandPower / pu.baseline.bandPower : null;
    out.spectrum = `Latest burst (${hhmm(pu.latest.t)}): ${lp ? `largest line ${formatValue(lp.frequency_hz, 3)} Hz at ${formatValue(lp.amplitude, 3)} Pa` : 'no distinct line'}. ${pu.baseline ? `Baseline (${pu.baseline.source === 'baseline-period' ? `mean of ${pu.baseline.bursts} bursts in the baseline period` : 'the earliest burst stored'}): ${bp ? `${formatValue(bp.frequency_hz, 3)} Hz at ${formatValue(bp.amplitude, 3)} Pa` : 'no distinct line'}.` : ''}${ratio !== null ? ` Band power ×${formatValue(ratio, 2)} the baseline's${ratio > 3 ? ': a new or stronger pulsation.' : ratio < 1 / 3 ? ': quieter than the baseline.' : ': pulsation unchanged.'}` : ''}`;
  }
  const wf = pu.waterfall;
  out.waterfall = wf && wf.t.length ? `${wf.t.length} bursts in the span, ${hhmm(wf.t[0]!)}–${hhmm(wf.t[wf.t.length - 1]!)}; brighter is more power. A horizontal streak that appears or brightens is a line that came and stayed; a vertical one is a single noisy burst.` : 'No pressure bursts in this span.';
  if (!ev.ledger.windows) out.ledger = 'No momentum ledger in this span (it needs attitude and every loop in the same window).';
  else {
    const m = ev.ledger.mean_nm;
    const se = meanOf(ev.series.ledger_residual_nm?.e ?? []);
    const lim = ev.limits.ledger_residual_nm?.cautionHigh ?? null;
    const u = (x: number | null) => `${formatValue(x === null ? null : x * 1e6, 2)} µN·m`;
    out.ledger = `The ledger residual |τ_ext| averages ${u(m)} (largest ${u(ev.ledger.max_nm)}) with a typical standard error of ${u(se)}${lim !== null ? ` against a caution level of ${u(lim)}` : ''}. ${m !== null && se !== null && m > 3 * se ? 'The residual stands above its uncertainty: something outside the ledger is torquing the body, or a loop torque is misestimated.' : 'The residual is within its uncertainty: body and loop momentum balance.'}`;
  }
  return out;
}

// ── evidence ─────────────────────────────────────────────────────────────────────────────────

/** The Casefile's evidence of a trip over a span: stored derived series (LTTB-downsampled), baseline, onset, scatter, pulsation and readings. */
export async function loadEvidence(db: Db, tripId: number, q: EvidenceQuery): Promise<EvidenceResponse> {
  const trip = await findTrip(db, tripId);
  const { loops, effectiveFrom } = await loopsOf(db, trip);
  const loop = pickLoop(trip, loops, q.loop);
  const def = defaultSpan(trip);
  const { fromMs, toMs } = resolveSpan(trip, q);
  const points = q.points ?? DEFAULT_POINTS;
  const base = await findBaseline(db, trip, loop.id, effectiveFrom);
  const [rows, body, onset, limits, scatter, pulsation] = await Promise.all([
    loopRows(db, trip.spacecraft_id, loop.id, fromMs, toMs),
    bodyRows(db, trip.spacecraft_id, fromMs, toMs),
    estimateOnset(db, trip, loop.id, base),
    limitLevels(db, trip, loop.id),
    scatterOf(db, trip, loop, base, toMs),
    pulsationOf(db, trip, loop.id, base, fromMs, toMs),
  ]);
  const baseRows = base.from !== null && base.to !== null ? await loopRows(db, trip.spacecraft_id, loop.id, base.from * 1000, base.to * 1000) : [];
  const series: Record<string, Series> = {};
  const col = (c: LoopColumn) => (r: LoopRow) => r[c];
  series.effectiveness = downsample(rows, col('effectiveness'), points, col('effectiveness_stderr'));
  for (const c of ['compensated_effectiveness', 'pressure_effectiveness', 'resistance_ohm', 'thermal_residual_k', 'electrode_temp_mean_c', 'magnet_temp_mean_c', 'drift_ewma', 'drift_ewma_ucl', 'drift_ewma_lcl', 'drift_cusum_hi', 'drift_cusum_lo'] as const) {
    series[c] = downsample(rows, col(c), points);
  }
  series.ledger_residual_nm = downsample(body, (r) => r.ledger_residual_nm, points, (r) =>
    fin(r.ledger_x_nm) && fin(r.ledger_y_nm) && fin(r.ledger_z_nm) && fin(r.ledger_stderr_x_nm) && fin(r.ledger_stderr_y_nm) && fin(r.ledger_stderr_z_nm)
      ? magnitudeStdErr([r.ledger_x_nm, r.ledger_y_nm, r.ledger_z_nm], [r.ledger_stderr_x_nm, r.ledger_stderr_y_nm, r.ledger_stderr_z_nm])
      : null,
  );
  const partial: Omit<EvidenceResponse, 'readings'> = {
    tripId: trip.id,
    spacecraft: trip.spacecraft,
    loopId: loop.id,
    loops: loops.map((l) => l.id),
    windowS: WINDOW_S,
    points,
    span: { from: new Date(fromMs).toISOString(), to: new Date(toMs).toISOString(), defaultFrom: new Date(def.fromMs).toISOString(), defaultTo: new Date(def.toMs).toISOString() },
    onset,
    baseline: { source: base.source, from: base.from, to: base.to, n: base.stats?.n ?? 0, mean: base.stats && fin(base.stats.mean) ? base.stats.mean : null, sd: base.stats && fin(base.stats.sd) ? base.stats.sd : null, required: BASELINE_WINDOWS },
    cusum: cusumOf(rows, limits.drift_cusum_lo, trip.limit_set_version),
    recent: Object.fromEntries(RECENT_KEYS.map((k) => [k, recentMean(rows, (r) => r[k])])) as Record<(typeof RECENT_KEYS)[number], RecentMean>,
    ledger: ledgerOf(body),
    limitSetVersion: trip.limit_set_version,
    limits,
    series,
    scatter,
    pulsation,
    windows: rows.length,
  };
  return { ...partial, readings: readingsOf(partial, rows, baseRows, base) };
}

/** CSV of the evidence series at full resolution (one row per 60 s window) over a span. */
export async function evidenceCsv(db: Db, tripId: number, q: EvidenceQuery): Promise<{ fileName: string; csv: string }> {
  const trip = await findTrip(db, tripId);
  const { loops } = await loopsOf(db, trip);
  const loop = pickLoop(trip, loops, q.loop);
  const { fromMs, toMs } = resolveSpan(trip, q);
  const [rows, body] = await Promise.all([loopRows(db, trip.spacecraft_id, loop.id, fromMs, toMs), bodyRows(db, trip.spacecraft_id, fromMs, toMs)]);
  const byT = new Map(body.map((b) => [b.t, b]));
  const times = [...new Set([...rows.map((r) => r.t), ...body.map((b) => b.t)])].sort((a, b) => a - b);
  const byLoop = new Map(rows.map((r) => [r.t, r]));
  const header = ['window_start_utc', 'spacecraft', 'loop_id', ...LOOP_SERIES, ...BODY_SERIES];
  const cell = (v: number | null | undefined) => (fin(v) ? String(v) : '');
  const lines = [header.join(',')];
  for (const t of times) {
    const r = byLoop.get(t);
    const b = byT.get(t);
    lines.push([iso(t), trip.spacecraft, String(loop.id), ...LOOP_SERIES.map((c) => cell(r?.[c])), ...BODY_SERIES.map((c) => cell(b?.[c]))].join(','));
  }
  return { fileName: `trip-${trip.id}-${trip.spacecraft}-L${loop.id}-evidence.csv`, csv: lines.join('\r\n') + '\r\n' };
}

/** The loop_sample rows of the analysis window holding `windowIso` (aligned to 60 s). */
export async function findRawWindow(db: Db, tripId: number, windowIso: string, loopParam?: number): Promise<RawWindowResponse> {
  const trip = await findTrip(db, tripId);
  const { loops } = await loopsOf(db, trip);
  const loop = pickLoop(trip, loops, loopParam);
  const span = rawWindowSpan(windowIso);
  const startS = span.fromMs / 1000;
  const r = await db
    .selectFrom('loop_sample')
    .select(['t', 'time_tag', 'seq', 'status', 'commanded_current_a', 'measured_current_a', 'electrode_voltage_v', 'flow_velocity_m_s', 'pressure_rise_pa', 'fluid_temp_c', 'electrode_temp_c', 'magnet_temp_c'])
    .where('spacecraft_id', '=', trip.spacecraft_id)
    .where('loop_id', '=', loop.id)
    .where('t', '>=', new Date(startS * 1000))
    .where('t', '<', new Date((startS + WINDOW_S) * 1000))
    .orderBy('time_tag')
    .orderBy('seq')
    .limit(20_000)
    .execute();
  return { loopId: loop.id, window: { from: iso(startS), to: iso(startS + WINDOW_S) }, rows: r.map((x) => ({ ...x, t: x.t.toISOString(), time_tag: Number(x.time_tag) })) };
}

// ── notes, conclusion, related trips ─────────────────────────────────────────────────────────

/** The notes of a trip, oldest first, with their attachments. */
export async function listNotes(db: Db, tripId: number): Promise<CasefileNote[]> {
  const rows = await db
    .selectFrom('trip_note as n')
    .leftJoin('app_user as u', 'u.id', 'n.author_id')
    .select((eb) => [
      'n.id',
      'n.body',
      'n.created_at',
      'u.name as author',
      jsonArrayFrom(eb.selectFrom('trip_attachment as a').select(['a.id', 'a.file_name', 'a.media_type', 'a.bytes']).whereRef('a.note_id', '=', 'n.id').orderBy('a.id')).as('attachments'),
    ])
    .where('n.trip_id', '=', tripId)
    .orderBy('n.created_at')
    .orderBy('n.id')
    .execute();
  return rows.map((r) => ({
    id: r.id,
    body: r.body,
    author: r.author,
    createdAt: new Date(r.created_at).toISOString(),
    attachments: r.attachments.map((a) => ({ id: a.id, fileName: a.file_name, mediaType: a.media_type, bytes: Number(a.bytes), url: `/api/trips/${tripId}/attachments/${a.id}` })),
  }));
}

/** The saved conclusion of a trip's Casefile, or null. */
export async function findConclusion(db: Db, tripId: number) {
  const r = await db
    .selectFrom('casefile as c')
    .leftJoin('app_user as u', 'u.id', 'c.updated_by')
    .select(['c.conclusion', 'c.updated_at', 'u.name as updated_by'])
    .where('c.trip_id', '=', tripId)
    .executeTakeFirst();
  return r ? { conclusion: r.conclusion, updatedAt: r.updated_at.toISOString(), updatedBy: r.updated_by } : null;
}

async function upsertConclusion(trx: Transaction<Database>, tripId: number, userId: string, text: string) {
  await trx
    .insertInto('casefile')
    .values({ trip_id: tripId, conclusion: text, updated_by: userId, updated_at: new Date() })
    .onConflict((oc) => oc.column('trip_id').doUpdateSet({ conclusion: text, updated_by: userId, updated_at: new Date() }))
    .execute();
}

/** Save the Casefile's conclusion draft; whoever may resolve the trip writes it, and a resolved trip's is final. */
export async function saveConclusion(db: Kysely<Database>, tripId: number, user: SessionUser, text: string) {
  const input = conclusionInputSchema.parse({ conclusion: text });
  return db.transaction().execute(async (trx) => {
    const t = await trx.selectFrom('trip').select(['id', 'kind', 'state']).where('id', '=', tripId).forUpdate().executeTakeFirst();
    if (!t) throw new HttpError('NOT_FOUND', `No trip ${tripId}.`);
    if (!mayResolve(user.roles, t.kind)) throw new HttpError('FORBIDDEN', `Your roles may not write the conclusion of a ${t.kind} trip. ${RESOLVE_RULE}`);
    if (t.state === 'resolved') throw new HttpError('CONFLICT', `Trip ${tripId} is resolved; its conclusion is final.`);
    await upsertConclusion(trx, tripId, user.id, input.conclusion);
    await insertAuditEntry(trx, { actorId: user.id, action: 'trip.conclusion', targetType: 'trip', targetId: tripId, detail: { conclusion: input.conclusion } });
    return findConclusion(trx, tripId);
  });
}

/**
 * Resolve a trip with the Casefile's conclusion: the one sent now (saved to the Casefile in the same
 * transaction) or the one saved before. Without a conclusion the trip cannot be resolved.
 */
export async function resolveWithConclusion(db: Kysely<Database>, tripId: number, user: SessionUser, sent: string | undefined) {
  return resolveTrip(db, tripId, user, async (trx) => {
    const text = sent && sent.trim() ? sent.trim() : (await findConclusion(trx, tripId))?.conclusion ?? '';
    if (text.length < 3) throw new HttpError('BAD_REQUEST', 'Write the conclusion in the Casefile before resolving: what it was and what was done.', { conclusion: ['Write the conclusion: what it was and what was done.'] });
    await upsertConclusion(trx, tripId, user.id, text);
    return text;
  });
}

/** Trips related to one: the same spacecraft and loop, and the same kind on other loops of the fleet. */
export async function findRelatedTrips(db: Db, trip: Trip) {
  const pick = ['t.id', 's.key as spacecraft', 't.loop_id', 't.kind', 't.quantity', 't.level', 't.state', 't.onset_at', 't.value', 't.limit_value'] as const;
  const base = () => db.selectFrom('trip as t').innerJoin('spacecraft as s', 's.id', 't.spacecraft_id').select([...pick]).where('t.id', '<>', trip.id);
  const sameLoop = await base()
    .where('t.spacecraft_id', '=', trip.spacecraft_id)
    .where(sql<boolean>`coalesce(t.loop_id, -1) = ${trip.loop_id ?? -1}`)
    .orderBy('t.onset_at', 'desc')
    .limit(20)
    .execute();
  const sameKind = await base()
    .where('t.kind', '=', trip.kind)
    .where(sql<boolean>`(t.spacecraft_id <> ${trip.spacecraft_id} OR coalesce(t.loop_id, -1) <> ${trip.loop_id ?? -1})`)
    .orderBy('t.onset_at', 'desc')
    .limit(20)
    .execute();
  const shape = (r: (typeof sameLoop)[number]) => ({ ...r, onset_at: r.onset_at.toISOString(), quantityLabel: quantityInfo(r.quantity)?.label ?? r.quantity, unit: quantityInfo(r.quantity)?.unit ?? '' });
  return { sameLoop: sameLoop.map(shape), sameKind: sameKind.map(shape) };
}
