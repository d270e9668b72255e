import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { sql } from 'kysely';
import { db } from './support';
import { pool } from '../../src/lib/server/db';
import { generatePackets } from '../../ingest/generator';
import { parseScenario } from '../../ingest/scenario.schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import { ingestBody } from '../../src/lib/server/ingest';
import { runAnalysisJob } from '../../src/lib/server/analysis-job';
import { tripMailHandler } from '../../src/lib/server/trip-mail';

let counter = 0;
const lastEnd = new Map<number, number>();
/** Run the job as if just after the flight's last sample (data age during a predicted pass then stays small). */
const job = (sc: { id: number; key: string }, opts: Parameters<typeof runAnalysisJob>[3] = {}) => runAnalysisJob(db, pool, sc, { nowMs: (lastEnd.get(sc.id) ?? Date.now()) + 5_000, ...opts });
const sheetOf = (file: string, key: string): SpacecraftSheet => {
  const s = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync(`ingest/fleet/${file}.json`, 'utf8')));
  return { ...s, spacecraft: { key, name: `Test ${key}` } };
};

/** A fresh spacecraft flying a scenario for `minutes`, ingested, with the default limits active. */
async function fly(file: string, scenarioName: string | object, minutes: number, opts: { endMs?: number; rules?: typeof DEFAULT_RULES } = {}) {
  const key = `T${Date.now().toString(36).toUpperCase().slice(-5)}-${++counter}`;
  const sheet = sheetOf(file, key);
  const sc = await db.transaction().execute(async (trx) => {
    const created = await insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2026-01-01T00:00:00Z' }, null);
    await insertLimitSet(trx, created.id, { name: 'Default limits', notes: '', rules: opts.rules ?? DEFAULT_RULES }, null, 'active');
    return created;
  });
  const scenario = parseScenario(typeof scenarioName === 'string' ? JSON.parse(fs.readFileSync(`ingest/scenarios/${scenarioName}.json`, 'utf8')) : scenarioName);
  const endMs = opts.endMs ?? Math.floor(Date.now() / 60_000) * 60_000 - 60_000;
  const startMs = endMs - minutes * 60_000;
  for (const chunk of generatePackets({ sheet, scenario, startMs, durationMs: minutes * 60_000, chunkBytes: 4 << 20 })) {
    await ingestBody(pool, db, chunk.slice(), { spacecraftId: sc.id, stationId: null, tokenId: null }, endMs + 5_000);
  }
  lastEnd.set(sc.id, endMs);
  return { sc: { id: sc.id, key }, startMs, endMs, scenario };
}

async function tripsOf(spacecraftId: number) {
  return db.selectFrom('trip').select(['id', 'kind', 'quantity', 'loop_id', 'level', 'onset_at', 'cleared_at', 'value', 'limit_value']).where('spacecraft_id', '=', spacecraftId).orderBy('id').execute();
}

async function windowHash(spacecraftId: number) {
  const r = await sql<{ h: string; n: number }>`SELECT md5(string_agg(x::text, '|' ORDER BY loop_id, window_start)) AS h, count(*)::int AS n FROM (
      SELECT loop_id, window_start, effectiveness, resistance_ohm, drift_cusum_lo FROM loop_window WHERE spacecraft_id = ${spacecraftId}) x`.execute(db);
  return r.rows[0]!;
}

describe('scheduled analysis raises the expected trips from injected faults', () => {
  it('a torque-constant loss on loop 0 raises a torque-constant-drift trip on loop 0 within minutes of the ramp', async () => {
    const { sc, startMs, scenario } = await fly('MR-1', 'torque-constant-loss', 25);
    const s = await job(sc, { onTripChange: tripMailHandler });
    expect(s.status).toBe('done');
    const trips = await tripsOf(sc.id);
    const drift = trips.filter((t) => t.kind === 'torque-constant-drift');
    expect(drift.length).toBeGreaterThan(0);
    expect(new Set(drift.map((t) => t.loop_id))).toEqual(new Set([0]));
    expect(trips.filter((t) => t.kind !== 'torque-constant-drift')).toEqual([]);
    const fault = scenario.faults[0]!;
    const rampStart = startMs + fault.start_s * 1000;
    const first = Math.min(...drift.map((t) => t.onset_at.getTime()));
    // Onset within 10 min of the ramp's start (stated detection time).
    expect(first).toBeGreaterThanOrEqual(rampStart - 60_000);
    expect(first - rampStart).toBeLessThan(10 * 60_000);
    // The outbox holds the mail of every change, in the same transaction.
    const queued = await db.selectFrom('outbox').select('trip_id').where('trip_id', 'in', drift.map((t) => t.id)).execute();
    const digest = await db.selectFrom('mail_digest_item').select('trip_id').where('trip_id', 'in', drift.map((t) => t.id)).execute();
    expect(queued.length + digest.length).toBeGreaterThan(0);
  });

  it('a pulsation raises a flow-pulsation trip on the loop', async () => {
    const { sc } = await fly('MR-1', 'pulsation', 20);
    await job(sc);
    const trips = await tripsOf(sc.id);
    expect(trips.map((t) => `${t.kind}:${t.loop_id}`)).toEqual(['flow-pulsation:0']);
  });

  it('thermal degradation raises a temperature-rise trip under a limit tuned to the loop, and its healthy twin does not', async () => {
    // The demo loops dissipate well under a watt, so the default 55 °C caution is never near; an
    // engineer tunes an electrode-temperature limit to the loop's duty (here a heavy calibration
    // dither) between its healthy and its degraded behaviour.
    const duty = { enabled: true, amplitude: 0.5, period_s: 12 };
    const rules = [{ quantity: 'electrode_temp_mean_c', loopId: 0, cautionHigh: 29, warningHigh: 40, cautionLow: null, warningLow: null, clearHigh: 28, clearLow: null, persistence: 3, rationale: 'tuned for the test' }];
    const degraded = { name: 'thermal', seed: 22, excitation: duty, faults: [{ kind: 'thermal-degradation', loopId: 0, start_s: 600, ramp_s: 120, magnitude: 10 }] };
    const healthy = { name: 'thermal-twin', seed: 22, excitation: duty, faults: [] };
    // A fixed span: the radiator's temperature swings along the orbit, so the tuned level holds for
    // this stretch of orbit (the simulation is seeded, hence repeatable).
    const endMs = Date.UTC(2026, 11, 2, 0, 20);
    const a = await fly('MR-1', degraded, 40, { rules, endMs });
    const b = await fly('MR-1', healthy, 40, { rules, endMs });
    await job(a.sc);
    await job(b.sc);
    const trips = await tripsOf(a.sc.id);
    expect(trips.map((t) => `${t.kind}:${t.loop_id}`)).toEqual(['temperature-rise:0']);
    expect(trips[0]!.onset_at.getTime()).toBeGreaterThan(a.startMs + 600_000);
    expect(await tripsOf(b.sc.id)).toEqual([]);
  });

  it('a sequence gap raises a telemetry-gap trip that clears when data flows again', async () => {
    // 30 s of loop housekeeping lost on the link: 300 packets, beyond the 200-packet warning.
    const { sc } = await fly('MR-1', { name: 'long-gap', seed: 26, faults: [{ kind: 'sequence-gap', apid: 32, start_s: 120, count: 300 }] }, 15);
    await job(sc);
    const trips = await tripsOf(sc.id);
    expect(trips.map((t) => t.kind)).toEqual(['telemetry-gap']);
    expect(trips[0]!.loop_id).toBeNull();
    expect(trips[0]!.cleared_at).not.toBeNull();
  });

  it('a healthy spacecraft over three hours raises no trip', async () => {
    // A fixed, seeded stretch of orbit so the run is repeatable.
    const { sc } = await fly('MR-3', 'healthy', 180, { endMs: Date.UTC(2026, 11, 1, 21, 0) });
    const s = await job(sc);
    expect(s.windows).toBeGreaterThan(170 * 4);
    expect(await tripsOf(sc.id)).toEqual([]);
  }, 240_000);

  it('a re-run changes nothing, and two schedulers at once do the work once', async () => {
    const { sc } = await fly('MR-1', 'torque-constant-loss', 15);
    const [a, b] = await Promise.all([job(sc), job(sc)]);
    expect([a.status, b.status].sort()).toEqual(['busy', 'done']);
    const trips = await tripsOf(sc.id);
    const hash = await windowHash(sc.id);
    const again = await job(sc);
    expect(again).toMatchObject({ status: 'done', batches: 0, windows: 0 });
    expect(await tripsOf(sc.id)).toEqual(trips);
    expect(await windowHash(sc.id)).toEqual(hash);
    // Forcing a re-analysis of the same data writes the same values.
    await db.deleteFrom('analysis_cursor').where('spacecraft_id', '=', sc.id).execute();
    await job(sc);
    expect(await windowHash(sc.id)).toEqual(hash);
    expect(await tripsOf(sc.id)).toEqual(trips);
  });

  it('late playback inside analysed time re-analyses exactly the windows it touches', async () => {
    const { sc, startMs } = await fly('MR-1', 'healthy', 10);
    await job(sc);
    const before = await db.selectFrom('loop_window').select(['window_start', 'analysed_at']).where('spacecraft_id', '=', sc.id).orderBy('window_start').execute();
    // A playback of two minutes earlier than everything, then of minute 5 again (all duplicates).
    const sheet = sheetOf('MR-1', sc.key);
    const scenario = parseScenario(JSON.parse(fs.readFileSync('ingest/scenarios/healthy.json', 'utf8')));
    for (const c of generatePackets({ sheet, scenario, startMs: startMs - 3 * 60_000, durationMs: 2 * 60_000 })) await ingestBody(pool, db, c.slice(), { spacecraftId: sc.id, stationId: null, tokenId: null });
    const s = await job(sc);
    expect(s.batches).toBeGreaterThan(0);
    const after = await db.selectFrom('loop_window').select(['window_start', 'analysed_at']).where('spacecraft_id', '=', sc.id).orderBy('window_start').execute();
    const touched = after.filter((w) => !before.some((b) => b.window_start.getTime() === w.window_start.getTime() && b.analysed_at.getTime() === w.analysed_at.getTime()));
    expect(touched.every((w) => w.window_start.getTime() < startMs)).toBe(true);
    expect(touched.length).toBeGreaterThanOrEqual(2);
  });
});
