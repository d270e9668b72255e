import type pg from 'pg';
import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { analyseSpan, detectDrift, baselineStats } from '../physics/analysis';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../spacecraft-sheet.schema';
import { loadSpanInput, storeSpanAnalysis, unixSecondsOf } from './analysis-store';
import { dataThroughMs, evaluateActiveLimits, type TripChange } from './trip-engine';
import { findPasses, parseTle, stationFromDegrees } from '../orbit';
import { ensurePartitionsAhead } from './telemetry-store';

/** Analysis window, s. */
export const WINDOW_S = 60;
/**
 * Windows of (magnet-compensated) effectiveness that form a loop's drift baseline (from the sheet's effective date on).
 * An hour: with 30 windows the baseline mean alone is off by ~0.2σ, enough for false CUSUM alarms.
 */
export const BASELINE_WINDOWS = 60;
/** Largest span analysed in one piece, s (a long playback is taken in pieces). */
const CHUNK_S = 2 * 3600;

export interface JobSummary {
  spacecraftId: number;
  spacecraftKey: string;
  status: 'done' | 'busy' | 'failed';
  batches: number;
  windows: number;
  rowsWritten: number;
  trips: { opened: number; escalated: number; cleared: number };
  error?: string;
}

/** Called for every trip change inside the job's transaction (the mail outbox hooks in here). */
export type TripChangeHandler = (trx: Transaction<Database>, change: TripChange, ctx: { spacecraftKey: string; nowMs: number }) => Promise<void>;

/** Merge [from, to) window ranges that touch or overlap. */
export function mergeRanges(ranges: [number, number][]): [number, number][] {
  const sorted = [...ranges].sort((a, b) => a[0] - b[0]);
  const out: [number, number][] = [];
  for (const r of sorted) {
    const last = out[out.length - 1];
    if (last && r[0] <= last[1]) last[1] = Math.max(last[1], r[1]);
    else out.push([r[0], r[1]]);
  }
  return out;
}

interface SheetRow {
  id: number;
  effectiveFromS: number;
  sheet: SpacecraftSheet;
}

/** Cut [from, to) at sheet changes: each piece is analysed with the sheet in force over it. */
function pieces(from: number, to: number, sheets: SheetRow[]): { from: number; to: number; sheet: SheetRow }[] {
  const out: { from: number; to: number; sheet: SheetRow }[] = [];
  let a = from;
  while (a < to) {
    const inForce = [...sheets].reverse().find((s) => s.effectiveFromS <= a) ?? sheets[0]!;
    const next = sheets.find((s) => s.effectiveFromS > a);
    const b = Math.min(to, a + CHUNK_S, next ? Math.floor(next.effectiveFromS / WINDOW_S) * WINDOW_S : Infinity);
    out.push({ from: a, to: b > a ? b : to, sheet: inForce });
    a = b > a ? b : to;
  }
  return out;
}

/** Recompute the drift statistics of a loop's magnet-compensated effectiveness from `fromS` on (EWMA and CUSUM against its baseline). */
async function updateDrift(trx: Transaction<Database>, spacecraftId: number, loopId: number, sheetStartS: number, fromS: number): Promise<number> {
  const rows = await trx
    .selectFrom('loop_window')
    .select(['window_start', 'compensated_effectiveness'])
    .where('spacecraft_id', '=', spacecraftId)
    .where('loop_id', '=', loopId)
    .where('window_start', '>=', new Date(sheetStartS * 1000))
    .orderBy('window_start')
    .execute();
  if (!rows.length) return 0;
  const t = Float64Array.from(rows, (r) => r.window_start.getTime() / 1000);
  // on the magnet-compensated series: a change the magnets' temperature explains is not a drift
  const v = Float64Array.from(rows, (r) => (r.compensated_effectiveness === null ? Number.NaN : r.compensated_effectiveness));
  let end = 0;
  for (let seen = 0; end < v.length && seen < BASELINE_WINDOWS; end++) if (Number.isFinite(v[end]!)) seen++;
  const base = baselineStats(v, 0, end);
  if (base.n < BASELINE_WINDOWS || !(base.sd > 0)) return 0;
  const d = detectDrift(t, v, base);
  const idx: number[] = [];
  for (let i = 0; i < t.length; i++) if (t[i]! >= fromS) idx.push(i);
  if (!idx.length) return 0;
  const num = (x: number) => (Number.isFinite(x) ? x : null);
  await sql`
    UPDATE loop_window w SET drift_ewma = u.e, drift_ewma_ucl = u.ucl, drift_ewma_lcl = u.lcl, drift_cusum_hi = u.hi, drift_cusum_lo = u.lo
    FROM unnest(${idx.map((i) => new Date(t[i]! * 1000).toISOString())}::timestamptz[], ${idx.map((i) => num(d.ewma.ewma[i]!))}::float8[],
                ${idx.map((i) => num(d.ewma.ucl[i]!))}::float8[], ${idx.map((i) => num(d.ewma.lcl[i]!))}::float8[],
                ${idx.map((i) => num(d.cusum.sHi[i]! / base.sd))}::float8[], ${idx.map((i) => num(d.cusum.sLo[i]! / base.sd))}::float8[])
         AS u(ws, e, ucl, lcl, hi, lo)
    WHERE w.spacecraft_id = ${spacecraftId} AND w.loop_id = ${loopId} AND w.window_start = u.ws`.execute(trx);
  return idx.length;
}

/** Data age points for a pass in progress (no point outside passes: silence between passes is expected). */
async function dataAgePoints(trx: Transaction<Database>, spacecraftId: number, sheet: SpacecraftSheet, nowMs: number): Promise<{ t: number; value: number }[]> {
  const stations = await trx.selectFrom('ground_station').select(['latitude_deg', 'longitude_deg', 'altitude_m', 'elevation_mask_deg']).execute();
  if (!stations.length) return [];
  let inPass = false;
  try {
    const sat = parseTle(sheet.orbit.tle[0], sheet.orbit.tle[1]);
    for (const s of stations) {
      const st = stationFromDegrees(s.latitude_deg, s.longitude_deg, s.altitude_m, s.elevation_mask_deg);
      if (findPasses(sat, st, nowMs - 3 * 3600_000, nowMs + 1000).some((p) => p.aosMs + 60_000 <= nowMs && nowMs <= p.losMs)) inPass = true;
    }
  } catch {
    return [];
  }
  if (!inPass) return [];
  const r = await sql<{ tt: number | null }>`SELECT max(time_tag) AS tt FROM attitude_sample WHERE spacecraft_id = ${spacecraftId} AND t > ${new Date(nowMs - 6 * 3600_000)}`.execute(trx);
  const tt = r.rows[0]?.tt;
  const ageS = tt === null || tt === undefined ? 6 * 3600 : nowMs / 1000 - unixSecondsOf(Number(tt));
  return [{ t: nowMs, value: Math.max(0, ageS) }];
}

/** Failed attempts after which a batch is given up (kept unanalysed, its error recorded), so it blocks nothing. */
export const MAX_BATCH_ATTEMPTS = 3;

/** Batches taken in one piece of work: every clean one, or one that failed before, on its own. */
type BatchGroup = 'clean' | number;

/**
 * Analyse the given batches in one transaction guarded by an advisory lock (only one instance
 * analyses a spacecraft at a time): the windows their data touches (late playback re-analyses
 * exactly those), drift statistics, the active limits from the earliest re-analysed time on; then
 * mark the batches analysed. `tried` receives the batch ids as soon as they are known.
 */
async function analyseGroup(
  db: Kysely<Database>,
  pool: pg.Pool,
  sc: { id: number; key: string },
  group: BatchGroup,
  nowMs: number,
  summary: JobSummary,
  tried: number[],
  onTripChange?: TripChangeHandler,
): Promise<'done' | 'busy'> {
  return db.transaction().execute(async (trx) => {
    const lock = await sql<{ ok: boolean }>`SELECT pg_try_advisory_xact_lock(hashtext('millrace.analysis'), ${sc.id}) AS ok`.execute(trx);
    if (!lock.rows[0]?.ok) return 'busy';
    // Committed batches not yet analysed, in any id order (ids are reserved before a batch commits).
    let q = trx
      .selectFrom('ingest_batch')
      .select(['id', 'first_time_tag', 'last_time_tag'])
      .where('spacecraft_id', '=', sc.id)
      .where('analysed_at', 'is', null)
      .where('analysis_attempts', '<', MAX_BATCH_ATTEMPTS);
    q = group === 'clean' ? q.where('analysis_attempts', '=', 0) : q.where('id', '=', group);
    const batches = await q.orderBy('id').limit(20_000).execute();
    if (!batches.length) return 'done';
    tried.push(...batches.map((b) => b.id));
    const sheetRows: SheetRow[] = (
      await trx.selectFrom('spacecraft_sheet').select(['id', 'effective_from', 'sheet']).where('spacecraft_id', '=', sc.id).orderBy('effective_from').execute()
    ).map((r) => ({ id: r.id, effectiveFromS: r.effective_from.getTime() / 1000, sheet: spacecraftSheetSchema.parse(r.sheet) }));
    if (!sheetRows.length) return 'done';
    summary.batches += batches.length;
    const ranges = mergeRanges(
      batches
        .filter((b) => b.first_time_tag !== null && b.last_time_tag !== null)
        .map((b) => [Math.floor(unixSecondsOf(b.first_time_tag!) / WINDOW_S) * WINDOW_S, (Math.floor(unixSecondsOf(b.last_time_tag!) / WINDOW_S) + 1) * WINDOW_S]),
    );
    const earliestByLoop = new Map<number, number>();
    for (const [from, to] of ranges) {
      for (const p of pieces(from, to, sheetRows)) {
        const input = await loadSpanInput(pool, sc.id, p.from - WINDOW_S, p.to + WINDOW_S);
        if (!input.loops.length && !input.attitude.t_s.length) continue;
        const analysis = analyseSpan(input, p.sheet.sheet, { window_s: WINDOW_S });
        const stored = await storeSpanAnalysis(trx, sc.id, p.sheet.id, analysis, p.from, p.to);
        summary.windows += stored.windows;
        summary.rowsWritten += stored.rows;
        for (const l of analysis.loops) earliestByLoop.set(l.loopId, Math.min(earliestByLoop.get(l.loopId) ?? Infinity, p.from));
      }
    }
    const current = [...sheetRows].reverse().find((s) => s.effectiveFromS * 1000 <= nowMs) ?? sheetRows[0]!;
    for (const [loopId, fromS] of earliestByLoop) summary.rowsWritten += await updateDrift(trx, sc.id, loopId, current.effectiveFromS, fromS);

    const through = await dataThroughMs(trx, sc.id);
    if (through !== null) {
      const changes = await evaluateActiveLimits(trx, sc.id, current.sheet.loops.map((l) => l.id), {
        nowMs,
        throughMs: through,
        extraPoints: { data_age_s: await dataAgePoints(trx, sc.id, current.sheet, nowMs) },
        // windows, drift statistics, samples and gaps are new or changed from the first range on
        reevaluateFromMs: ranges.length ? ranges[0]![0] * 1000 : undefined,
      });
      for (const c of changes) {
        summary.trips[c.event.type]++;
        await onTripChange?.(trx, c, { spacecraftKey: sc.key, nowMs });
      }
    }
    await sql`UPDATE ingest_batch SET analysed_at = now(), analysis_error = NULL WHERE id = ANY(${batches.map((b) => b.id)}::int[])`.execute(trx);
    return 'done';
  });
}

/**
 * Analyse what arrived for one spacecraft and is not analysed yet (late playback re-analyses exactly
 * the windows it touches), update drift statistics, evaluate the active limits. Idempotent.
 *
 * The clean batches go in one transaction. When it fails, each of its batches counts a failed attempt
 * and is taken on its own from the next run on, so one bad batch holds up the others for one run
 * only; after MAX_BATCH_ATTEMPTS failures it is given up, with its error kept on the batch and in the
 * job run.
 */
export async function runAnalysisJob(
  db: Kysely<Database>,
  pool: pg.Pool,
  sc: { id: number; key: string },
  opts: { nowMs?: number; onTripChange?: TripChangeHandler } = {},
): Promise<JobSummary> {
  const nowMs = opts.nowMs ?? Date.now();
  const summary: JobSummary = { spacecraftId: sc.id, spacecraftKey: sc.key, status: 'done', batches: 0, windows: 0, rowsWritten: 0, trips: { opened: 0, escalated: 0, cleared: 0 } };
  const run = await db.insertInto('job_run').values({ job: 'analysis', spacecraft_id: sc.id, started_at: new Date() }).returning('id').executeTakeFirstOrThrow();
  const errors: string[] = [];
  const failed: number[] = [];
  const givenUp: number[] = [];
  try {
    const retries = await db
      .selectFrom('ingest_batch')
      .select('id')
      .where('spacecraft_id', '=', sc.id)
      .where('analysed_at', 'is', null)
      .where('analysis_attempts', '>', 0)
      .where('analysis_attempts', '<', MAX_BATCH_ATTEMPTS)
      .orderBy('id')
      .execute();
    const groups: BatchGroup[] = ['clean', ...retries.map((r) => r.id)];
    for (const group of groups) {
      const tried: number[] = [];
      const before = { ...summary, trips: { ...summary.trips } };
      try {
        if ((await analyseGroup(db, pool, sc, group, nowMs, summary, tried, opts.onTripChange)) === 'busy') {
          summary.status = 'busy';
          break;
        }
      } catch (err) {
        // the transaction rolled back: nothing it counted was written
        Object.assign(summary, { batches: before.batches, windows: before.windows, rowsWritten: before.rowsWritten, trips: before.trips });
        const message = err instanceof Error ? err.message : String(err);
        console.error(`[jobs] analysis of ${sc.key} failed (batches ${tried.join(', ') || 'none'}):`, err);
        if (!tried.length) throw err;
        const marked = await db
          .updateTable('ingest_batch')
          .set((eb) => ({ analysis_attempts: eb('analysis_attempts', '+', 1), analysis_error: message.slice(0, 2000) }))
          .where('id', 'in', tried)
          .returning(['id', 'analysis_attempts'])
          .execute();
        failed.push(...tried);
        for (const m of marked) if (m.analysis_attempts >= MAX_BATCH_ATTEMPTS) givenUp.push(m.id);
        errors.push(group === 'clean' ? `batches ${tried[0]}–${tried[tried.length - 1]} (${tried.length}): ${message}` : `batch ${group}: ${message}`);
      }
    }
  } catch (err) {
    errors.push(err instanceof Error ? err.message : String(err));
    console.error(`[jobs] analysis of ${sc.key} failed:`, err);
  }
  if (givenUp.length) errors.push(`given up after ${MAX_BATCH_ATTEMPTS} failed attempts: batch${givenUp.length > 1 ? 'es' : ''} ${givenUp.join(', ')}`);
  if (errors.length && summary.status !== 'busy') {
    summary.status = 'failed';
    summary.error = errors.join('; ');
  }
  await db
    .updateTable('job_run')
    .set({
      finished_at: new Date(),
      windows: summary.windows,
      rows_written: summary.rowsWritten,
      detail: JSON.stringify({ status: summary.status, batches: summary.batches, trips: summary.trips, ...(failed.length ? { failedBatches: failed, givenUpBatches: givenUp } : {}) }),
      error: summary.error ?? null,
    })
    .where('id', '=', run.id)
    .execute();
  return summary;
}

/** Run all due work for every spacecraft: partitions ahead, then analysis. One failing spacecraft does not stop the others. */
export async function runDueJobs(db: Kysely<Database>, pool: pg.Pool, opts: { nowMs?: number; onTripChange?: TripChangeHandler } = {}): Promise<JobSummary[]> {
  await ensurePartitionsAhead(pool, new Date(opts.nowMs ?? Date.now()));
  const fleet = await db.selectFrom('spacecraft').select(['id', 'key']).orderBy('key').execute();
  const out: JobSummary[] = [];
  for (const sc of fleet) out.push(await runAnalysisJob(db, pool, sc, opts));
  return out;
}
