// Backtest benchmark: a 10-limit draft and the active set replayed over 30 days of one
// three-loop spacecraft's derived series (60 s loop and body windows, bursts every 10 min), in a
// throwaway database. Run with `DATABASE_URL=postgres://millrace@127.0.0.1:54329/millrace npx tsx
// scripts/bench-backtest.ts` (the launcher's private cluster; the database named here is made and dropped).
import { pathToFileURL } from 'node:url';
import { sql, type Kysely } from 'kysely';
import type { Database } from '../src/lib/server/db/schema';
import type { LimitRuleInput } from '../src/lib/limits/limit-set.schema';

const WINDOW_S = 60;
const BURST_EVERY_S = 600;

/** A small seeded generator (mulberry32), so every run inserts the same history. */
function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Insert `days` of synthetic derived series ending at `endMs` for a spacecraft: per loop a 60 s
 * window every minute, body windows, and a pressure burst analysis every 10 minutes. Loop 0's
 * effectiveness sags for a day near the end, loop 1 shows a pulsation for two hours, and the
 * momentum margin rises once a day; the rest is noise around healthy values.
 */
export async function insertSyntheticHistory(db: Kysely<Database>, spacecraftId: number, loopIds: readonly number[], endMs: number, days: number) {
  const rand = mulberry32(0x5eed + spacecraftId);
  const noise = (s: number) => (rand() + rand() + rand() - 1.5) * s;
  const n = Math.round((days * 86_400) / WINDOW_S);
  const startS = Math.floor(endMs / 1000 / WINDOW_S) * WINDOW_S - n * WINDOW_S;
  const sagFrom = startS + Math.round(n * 0.8) * WINDOW_S;
  const sagTo = sagFrom + 86_400;
  const pulseFrom = startS + Math.round(n * 0.4) * WINDOW_S;
  const pulseTo = pulseFrom + 7200;
  const BATCH = 20_000;
  let loopRows = 0;
  let bursts = 0;
  for (const loopId of loopIds) {
    for (let i0 = 0; i0 < n; i0 += BATCH) {
      const ts: string[] = [];
      const eff: number[] = [], comp: number[] = [], cusum: number[] = [], peff: number[] = [], res: number[] = [], joule: number[] = [];
      const temp: number[] = [], rise: number[] = [], resid: number[] = [], margin: number[] = [];
      let cus = 0;
      for (let i = i0; i < Math.min(n, i0 + BATCH); i++) {
        const s = startS + i * WINDOW_S;
        const day = ((s % 86_400) / 86_400) * 2 * Math.PI;
        const sag = loopId === loopIds[0] && s >= sagFrom && s < sagTo ? 0.2 : 0;
        const e = 0.7 - sag + noise(0.012);
        cus = Math.max(0, cus + (0.7 - e) / 0.007 - 0.5);
        ts.push(new Date(s * 1000).toISOString());
        eff.push(e);
        comp.push(e + noise(0.004));
        cusum.push(cus);
        peff.push(0.68 - sag * 0.9 + noise(0.015));
        res.push(0.011 + noise(0.0004));
        joule.push(4 + noise(0.6));
        const tc = 34 + 6 * Math.sin(day) + noise(0.8);
        temp.push(tc);
        rise.push(0.003 * Math.cos(day) + noise(0.002));
        resid.push(noise(0.4));
        margin.push(45 + 33 * Math.max(0, Math.sin(day * 3)) ** 8 + noise(3));
      }
      await sql`
        INSERT INTO loop_window (spacecraft_id, loop_id, window_start, window_s, samples, effectiveness, compensated_effectiveness, drift_cusum_lo,
          pressure_effectiveness, resistance_ohm, joule_power_w, electrode_temp_mean_c, rate_of_rise_k_s, thermal_residual_k, margin_in_use_pct)
        SELECT ${spacecraftId}, ${loopId}, u.ws, ${WINDOW_S}, 600, u.e, u.c, u.cu, u.pe, u.r, u.j, u.t, u.ri, u.re, u.m
        FROM unnest(${ts}::timestamptz[], ${eff}::float8[], ${comp}::float8[], ${cusum}::float8[], ${peff}::float8[], ${res}::float8[], ${joule}::float8[],
                    ${temp}::float8[], ${rise}::float8[], ${resid}::float8[], ${margin}::float8[]) AS u(ws, e, c, cu, pe, r, j, t, ri, re, m)`.execute(db);
      loopRows += ts.length;
    }
    const bt: string[] = [], peak: number[] = [], band: number[] = [];
    for (let s = startS + BURST_EVERY_S; s < startS + n * WINDOW_S; s += BURST_EVERY_S) {
      const pulse = loopId === loopIds[1 % loopIds.length] && s >= pulseFrom && s < pulseTo ? 70 : 0;
      bt.push(new Date(s * 1000).toISOString());
      peak.push(Math.abs(8 + pulse + noise(4)));
      band.push(Math.abs(60 + pulse * pulse + noise(20)));
    }
    await sql`
      INSERT INTO burst_analysis (spacecraft_id, loop_id, channel, t, sample_rate_hz, samples, mean, rms, top_peak_hz, top_peak_amplitude, band_power, peaks, frequencies_hz, psd)
      SELECT ${spacecraftId}, ${loopId}, 0, u.t, 200, 1024, 0, u.p / 2, 37.5, u.p, u.b, '[]'::jsonb, '{}'::real[], '{}'::real[]
      FROM unnest(${bt}::timestamptz[], ${peak}::float8[], ${band}::float8[]) AS u(t, p, b)`.execute(db);
    bursts += bt.length;
  }
  for (let i0 = 0; i0 < n; i0 += BATCH) {
    const ts: string[] = [], h: number[] = [], ledger: number[] = [];
    for (let i = i0; i < Math.min(n, i0 + BATCH); i++) {
      const s = startS + i * WINDOW_S;
      ts.push(new Date(s * 1000).toISOString());
      h.push(0.012 + noise(0.002));
      ledger.push(Math.abs(3e-6 + noise(2e-6)));
    }
    await sql`
      INSERT INTO body_window (spacecraft_id, window_start, window_s, samples, system_momentum_nms, ledger_residual_nm)
      SELECT ${spacecraftId}, u.ws, ${WINDOW_S}, 600, u.h, u.l FROM unnest(${ts}::timestamptz[], ${h}::float8[], ${ledger}::float8[]) AS u(ws, h, l)`.execute(db);
  }
  return { loopWindows: loopRows, bodyWindows: n, bursts, fromMs: startS * 1000, toMs: (startS + n * WINDOW_S) * 1000, sagFromMs: sagFrom * 1000, pulseFromMs: pulseFrom * 1000 };
}

/** Ten limits on derived quantities: the benchmark's draft (tighter than the defaults on purpose). */
export const BENCH_RULES: LimitRuleInput[] = [
  { quantity: 'effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: 0.6, warningLow: 0.5, clearHigh: null, clearLow: 0.64, persistence: 3, rationale: 'bench' },
  { quantity: 'compensated_effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: 0.6, warningLow: 0.5, clearHigh: null, clearLow: 0.64, persistence: 3, rationale: 'bench' },
  { quantity: 'drift_cusum_lo', loopId: null, cautionHigh: 5, warningHigh: 10, cautionLow: null, warningLow: null, clearHigh: 1, clearLow: null, persistence: 1, rationale: 'bench' },
  { quantity: 'pressure_effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: 0.58, warningLow: 0.5, clearHigh: null, clearLow: 0.62, persistence: 3, rationale: 'bench' },
  { quantity: 'electrode_temp_mean_c', loopId: null, cautionHigh: 42, warningHigh: 50, cautionLow: null, warningLow: null, clearHigh: 40, clearLow: null, persistence: 2, rationale: 'bench' },
  { quantity: 'rate_of_rise_k_s', loopId: null, cautionHigh: 0.01, warningHigh: 0.03, cautionLow: null, warningLow: null, clearHigh: 0.005, clearLow: null, persistence: 3, rationale: 'bench' },
  { quantity: 'margin_in_use_pct', loopId: null, cautionHigh: 75, warningHigh: 90, cautionLow: null, warningLow: null, clearHigh: 65, clearLow: null, persistence: 3, rationale: 'bench' },
  { quantity: 'pulsation_peak', loopId: null, cautionHigh: 30, warningHigh: 100, cautionLow: null, warningLow: null, clearHigh: 20, clearLow: null, persistence: 2, rationale: 'bench' },
  { quantity: 'ledger_residual_nm', loopId: null, cautionHigh: 1e-5, warningHigh: 1e-4, cautionLow: null, warningLow: null, clearHigh: 8e-6, clearLow: null, persistence: 5, rationale: 'bench' },
  { quantity: 'system_momentum_nms', loopId: null, cautionHigh: 0.02, warningHigh: 0.03, cautionLow: null, warningLow: null, clearHigh: 0.018, clearLow: null, persistence: 3, rationale: 'bench' },
];

async function main(): Promise<void> {
  const { createDb, createPool } = await import('../src/lib/server/db');
  const { migrateToLatest } = await import('../src/lib/server/db/migrate');
  const { seedDemo, truncateAll } = await import('../src/lib/server/seed');
  const { insertLimitSet } = await import('../src/lib/server/limit-sets');
  const { createBacktestReader, executeBacktest, findBacktest, insertBacktest } = await import('../src/lib/server/backtest');
  const { loopIdsOf } = await import('../src/lib/server/limit-review');

  const baseUrl = process.env.DATABASE_URL ?? 'postgres://millrace@127.0.0.1:54329/millrace';
  const benchUrl = new URL(baseUrl);
  benchUrl.pathname = '/millrace_backtest_bench';
  const admin = createPool(baseUrl, 1);
  await admin.query('DROP DATABASE IF EXISTS millrace_backtest_bench WITH (FORCE)');
  await admin.query('CREATE DATABASE millrace_backtest_bench');
  const pool = createPool(benchUrl.toString(), 4);
  const db = createDb(pool);
  const reader = createBacktestReader(benchUrl.toString());
  try {
    await migrateToLatest(db);
    await truncateAll(db);
    await seedDemo(db, 'bench-only-password');
    const sc = await db.selectFrom('spacecraft').select(['id', 'key']).where('key', '=', 'MR-3').executeTakeFirstOrThrow();
    const loopIds = await loopIdsOf(db, sc.id);
    const endMs = Date.UTC(2026, 10, 30);
    let t = performance.now();
    const h = await insertSyntheticHistory(db, sc.id, loopIds, endMs, 30);
    await sql`ANALYZE loop_window, body_window, burst_analysis`.execute(db);
    console.log(`[bench:backtest] inserted 30 days of ${sc.key} (${loopIds.length} loops): ${h.loopWindows} loop windows, ${h.bodyWindows} body windows, ${h.bursts} bursts (${((performance.now() - t) / 1000).toFixed(1)} s, not counted)`);

    const draft = await insertLimitSet(db, sc.id, { name: 'Bench draft', notes: '', rules: BENCH_RULES }, null, 'draft');
    const runs: number[] = [];
    let last = null;
    for (let i = 0; i < 3; i++) {
      const b = await insertBacktest(db, draft.id, {}, null);
      t = performance.now();
      const status = await executeBacktest(db, b.id, reader);
      runs.push((performance.now() - t) / 1000);
      if (status !== 'done') throw new Error(`the backtest ended ${status}`);
      last = await findBacktest(db, b.id);
    }
    const r = last!.result!;
    const draftTrips = r.trips.filter((x) => x.set === 'draft').length;
    const baseTrips = r.trips.filter((x) => x.set === 'baseline').length;
    const points = r.series.reduce((a, s) => a + s.points, 0);
    const worst = Math.max(...runs);
    console.log(
      `[bench:backtest] ${BENCH_RULES.length}-limit draft beside the active set (${r.rules.filter((x) => x.set === 'baseline').length} limits) over ${((r.toMs - r.fromMs) / 86_400_000).toFixed(0)} days: ` +
        `${r.series.length} series, ${points} points, ${draftTrips} draft trips and ${baseTrips} active-set trips; ` +
        `job wall time ${runs.map((x) => x.toFixed(2)).join(' / ')} s (worst ${worst.toFixed(2)} s; target ≤ 5 s) ${worst <= 5 ? 'PASS' : 'FAIL'}`,
    );
    if (worst > 5) process.exitCode = 1;
  } finally {
    await reader.destroy();
    await db.destroy();
    await admin.query('DROP DATABASE IF EXISTS millrace_backtest_bench WITH (FORCE)');
    await admin.end();
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) await main();
