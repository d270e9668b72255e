import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { sql } from 'kysely';
import { db } from './support';
import { pool } from '../../src/lib/server/db';
import { PacketStream, generatePackets } from '../../ingest/generator';
import { parseScenario } from '../../ingest/scenario.schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import { ingestBody } from '../../src/lib/server/ingest';
import { runAnalysisJob } from '../../src/lib/server/analysis-job';
import { PacketBatch, reserveBatchId, storeBatch } from '../../src/lib/server/telemetry-store';
import { decodeBuffer } from '../../src/lib/telemetry';
import { evaluateActiveLimits } from '../../src/lib/server/trip-engine';
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
async function fly(file: string, scenarioName: string | object, minutes: number, opts: { endMs?: number; rules?: typeof DEFAULT_RULES; chunkBytes?: number } = {}) {
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
  for (const chunk of generatePackets({ sheet, scenario, startMs, durationMs: minutes * 60_000, chunkBytes: opts.chunkBytes ?? 4 << 20 })) {
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

  it('the shipped pulsation scenario raises a flow-pulsation trip on loop 0, onset at the first burst after the fault', async () => {
    const { sc, startMs, scenario } = await fly('MR-1', 'pulsation', 20);
    await job(sc);
    const trips = await tripsOf(sc.id);
    expect(trips.map((t) => `${t.kind}:${t.loop_id}`)).toEqual(['flow-pulsation:0']);
    // The fault is in from t = 10 s; bursts are captured every 5 min from t = 60 s and the default rule
    // wants two bursts above 40 Pa: onset is the first capture after the fault, within 2 min of it.
    const faultAt = startMs + scenario.faults[0]!.start_s * 1000;
    const delay = trips[0]!.onset_at.getTime() - faultAt;
    console.log(`pulsation: onset ${delay / 1000} s after the fault`);
    expect(delay).toBeGreaterThanOrEqual(0);
    expect(delay).toBeLessThan(2 * 60_000);
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
    const delay = trips[0]!.onset_at.getTime() - (a.startMs + 600_000);
    console.log(`thermal degradation (tuned limit): onset ${delay / 1000} s after the fault's start`);
    // onset after the fault's start, and within 15 min of it (the electrodes take minutes to warm)
    expect(delay).toBeGreaterThan(0);
    expect(delay).toBeLessThan(15 * 60_000);
    expect(await tripsOf(b.sc.id)).toEqual([]);
  });

  it('the shipped link-dropout scenario raises a telemetry-gap trip in the minute of the gap that clears when data flows again', async () => {
    // 300 loop packets lost at t = 2 min, beyond the 200-packet warning (one window, persistence 1).
    const { sc, startMs, scenario } = await fly('MR-1', 'link-dropout', 15);
    await job(sc);
    const trips = await tripsOf(sc.id);
    expect(trips.map((t) => `${t.kind}:${t.level}`)).toEqual(['telemetry-gap:warning']);
    expect(trips[0]!.loop_id).toBeNull();
    expect(trips[0]!.cleared_at).not.toBeNull();
    // the gap ends 30 s after it starts: onset is the window it ends in, at most 2 min after its start
    const delay = trips[0]!.onset_at.getTime() - (startMs + scenario.faults[0]!.start_s * 1000);
    console.log(`link dropout: onset ${delay / 1000} s after the gap's start`);
    expect(delay).toBeGreaterThanOrEqual(-60_000);
    expect(delay).toBeLessThan(2 * 60_000);
  });

  it('the shipped sequence-gap scenario (9 packets) stays below the caution and raises nothing', async () => {
    const { sc } = await fly('MR-1', 'sequence-gap', 5);
    await job(sc);
    const gaps = await db.selectFrom('sequence_gap').select((eb) => eb.fn.sum<number>('missing').as('n')).where('spacecraft_id', '=', sc.id).executeTakeFirst();
    expect(Number(gaps?.n)).toBe(9);
    expect(await tripsOf(sc.id)).toEqual([]);
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
    await db.updateTable('ingest_batch').set({ analysed_at: null }).where('spacecraft_id', '=', sc.id).execute();
    await job(sc);
    expect(await windowHash(sc.id)).toEqual(hash);
    expect(await tripsOf(sc.id)).toEqual(trips);
  });

  it('a lower-id playback committed after the job ran past a higher-id batch is analysed, and its fault inside analysed time trips once', async () => {
    // 20 min of MR-1: minutes 0–8 and 14–20 arrive live; 8–14 is played back last although its batch id
    // was reserved first (ids are reserved before decoding). The playback holds a 30 s link dropout at
    // minute 10 (300 loop packets missing): a fault inside time the job has already judged.
    const key = `T${Date.now().toString(36).toUpperCase().slice(-5)}-${++counter}`;
    const sheet = sheetOf('MR-1', key);
    const sc = await db.transaction().execute(async (trx) => {
      const created = await insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2026-01-01T00:00:00Z' }, null);
      await insertLimitSet(trx, created.id, { name: 'Default limits', notes: '', rules: DEFAULT_RULES }, null, 'active');
      return { id: created.id, key };
    });
    const base = parseScenario(JSON.parse(fs.readFileSync('ingest/scenarios/link-dropout.json', 'utf8')));
    const scenario = { ...base, faults: base.faults.map((f) => ({ ...f, start_s: 600 })) };
    const endMs = Math.floor(Date.now() / 60_000) * 60_000 - 60_000;
    const startMs = endMs - 20 * 60_000;
    lastEnd.set(sc.id, endMs);
    const stream = new PacketStream({ sheet, scenario, startMs, chunkBytes: 4 << 20 });
    const take = (untilMs: number) => {
      stream.advanceTo(untilMs);
      return stream.flush();
    };
    const first = take(startMs + 8 * 60_000);
    const playback = take(startMs + 14 * 60_000);
    const last = take(endMs);
    const meta = { spacecraftId: sc.id, stationId: null, tokenId: null };
    const pending = new PacketBatch(sc.id, await reserveBatchId(pool), endMs + 5_000);
    for (const c of [...first, ...last]) await ingestBody(pool, db, c, meta, endMs + 5_000);
    const s1 = await job(sc, { onTripChange: tripMailHandler });
    expect(s1.status).toBe('done');
    expect(await tripsOf(sc.id)).toEqual([]);
    const before = await db.selectFrom('loop_window').select(['window_start', 'analysed_at']).where('spacecraft_id', '=', sc.id).orderBy('window_start').execute();
    const higher = await db.selectFrom('ingest_batch').select((eb) => eb.fn.max('id').as('id')).where('spacecraft_id', '=', sc.id).executeTakeFirstOrThrow();
    expect(pending.batchId).toBeLessThan(higher.id!);

    for (const c of playback) {
      pending.bytes += c.byteLength;
      decodeBuffer(c, { loopIds: new Set(sheet.loops.map((l) => l.id)) }, pending);
    }
    await storeBatch(pool, pending, { spacecraftId: sc.id, stationId: null, source: 'upload' });
    const s2 = await job(sc, { onTripChange: tripMailHandler });
    expect(s2).toMatchObject({ status: 'done', batches: 1 });
    const batch = await db.selectFrom('ingest_batch').select('analysed_at').where('id', '=', pending.batchId).executeTakeFirstOrThrow();
    expect(batch.analysed_at).not.toBeNull();
    // exactly the windows of the playback (plus the one each side it shares) were re-analysed
    const after = await db.selectFrom('loop_window').select(['window_start', 'analysed_at']).where('spacecraft_id', '=', sc.id).orderBy('window_start').execute();
    const touched = after.filter((w) => !before.some((b) => b.window_start.getTime() === w.window_start.getTime() && b.analysed_at.getTime() === w.analysed_at.getTime()));
    expect(touched.length).toBeGreaterThanOrEqual(5);
    expect(touched.every((w) => w.window_start.getTime() >= startMs + 7 * 60_000 && w.window_start.getTime() < startMs + 15 * 60_000)).toBe(true);
    // the dropout in the playback is judged although every rule had judged past it: one trip, onset in minute 10
    const trips = await tripsOf(sc.id);
    expect(trips.map((t) => `${t.kind}:${t.level}`)).toEqual(['telemetry-gap:warning']);
    const delay = trips[0]!.onset_at.getTime() - (startMs + 600_000);
    console.log(`late playback: link dropout onset ${delay / 1000} s after its start`);
    expect(delay).toBeGreaterThanOrEqual(0);
    expect(delay).toBeLessThan(2 * 60_000);
    expect(trips[0]!.cleared_at).not.toBeNull();
    const mail = await db.selectFrom('outbox').select('message_key').where('trip_id', '=', trips[0]!.id).execute();
    const digest = await db.selectFrom('mail_digest_item').select('trip_id').where('trip_id', '=', trips[0]!.id).execute();
    expect(mail.length + digest.length).toBeGreaterThan(0);

    // a second run changes nothing
    const hash = await windowHash(sc.id);
    const s3 = await job(sc, { onTripChange: tripMailHandler });
    expect(s3).toMatchObject({ status: 'done', batches: 0, windows: 0, trips: { opened: 0, escalated: 0, cleared: 0 } });
    expect(await tripsOf(sc.id)).toEqual(trips);
    expect(await windowHash(sc.id)).toEqual(hash);
    // and re-analysing the playback again (same data) judges the same excursion without a second trip
    await db.updateTable('ingest_batch').set({ analysed_at: null }).where('id', '=', pending.batchId).execute();
    const s4 = await job(sc, { onTripChange: tripMailHandler });
    expect(s4).toMatchObject({ status: 'done', batches: 1, trips: { opened: 0, escalated: 0, cleared: 0 } });
    expect(await tripsOf(sc.id)).toEqual(trips);
  }, 120_000);

  it('a batch whose analysis keeps failing is given up after three attempts without holding up the others', async () => {
    const { sc } = await fly('MR-1', 'healthy', 3, { chunkBytes: 64 << 10 });
    const all = await db.selectFrom('ingest_batch').select('id').where('spacecraft_id', '=', sc.id).orderBy('id').execute();
    expect(all.length).toBeGreaterThanOrEqual(3);
    const bad = all[1]!;
    // A batch row whose recorded time span cannot be analysed (a time tag outside any date the job can
    // load, as a corrupt row would have): the analysis of any piece of work holding it throws.
    await db.updateTable('ingest_batch').set({ first_time_tag: -1e18, last_time_tag: -1e18 + 65536 }).where('id', '=', bad.id).execute();
    const runs = [];
    for (let i = 0; i < 4; i++) runs.push(await job(sc));
    expect(runs.map((r) => r.status)).toEqual(['failed', 'failed', 'failed', 'done']);
    expect(runs[2]!.error).toMatch(new RegExp(`given up .*batch(es)? .*${bad.id}`));
    const rows = await db.selectFrom('ingest_batch').select(['id', 'analysed_at', 'analysis_attempts', 'analysis_error']).where('spacecraft_id', '=', sc.id).orderBy('id').execute();
    const b = rows.find((r) => r.id === bad.id)!;
    expect(b).toMatchObject({ analysed_at: null, analysis_attempts: 3 });
    expect(b.analysis_error).toBeTruthy();
    // every other batch was analysed (on the run after the first failure, each on its own)
    expect(rows.filter((r) => r.id !== bad.id).every((r) => r.analysed_at !== null)).toBe(true);
    const failedRun = await db.selectFrom('job_run').select(['error']).where('spacecraft_id', '=', sc.id).where('error', 'is not', null).execute();
    expect(failedRun.length).toBe(3);
  });
});

describe('the trip engine on stored windows', () => {
  /** A spacecraft with the default limits and no telemetry: windows are written by the test. */
  async function bare() {
    const key = `E${Date.now().toString(36).toUpperCase().slice(-5)}-${++counter}`;
    return db.transaction().execute(async (trx) => {
      const created = await insertSpacecraftWithSheet(trx, { ...sheetOf('MR-1', key), effectiveFrom: '2026-01-01T00:00:00Z' }, null);
      await insertLimitSet(trx, created.id, { name: 'Default limits', notes: '', rules: DEFAULT_RULES }, null, 'active');
      return created.id;
    });
  }
  const T = Date.UTC(2026, 11, 1, 12, 0);
  const at = (i: number) => new Date(T + i * 60_000);
  const evaluate = (id: number, throughMs: number, extra: Parameters<typeof evaluateActiveLimits>[3] = { nowMs: 0, throughMs: 0 }) =>
    db.transaction().execute((trx) => evaluateActiveLimits(trx, id, [0], { ...extra, nowMs: throughMs + 5_000, throughMs }));

  it('momentum margin in use above 80 % for three windows raises a momentum-margin trip that clears below 70 %', async () => {
    const id = await bare();
    const margin = [50, 85, 86, 96, 97, 98, 75, 65, 60];
    await db.insertInto('loop_window').values(margin.map((m, i) => ({ spacecraft_id: id, loop_id: 0, window_start: at(i), window_s: 60, samples: 600, margin_in_use_pct: m }))).execute();
    const changes = await evaluate(id, T + margin.length * 60_000);
    // by hand from the default rule (caution 80, warning 95, clear 70, three windows): opens at the third
    // window above 80 (index 3, onset index 1), escalates at the third above 95 (index 5), clears at 65
    expect(changes.map((c) => `${c.event.type}:${c.info.kind}`)).toEqual(['opened:momentum-margin', 'escalated:momentum-margin', 'cleared:momentum-margin']);
    const [trip] = await tripsOf(id);
    expect(trip).toMatchObject({ kind: 'momentum-margin', loop_id: 0, level: 'warning', onset_at: at(1), cleared_at: at(7) });
  });

  it('a persistent ledger residual raises a body-level ledger-residual trip', async () => {
    const id = await bare();
    const r = [1e-6, 2e-6, 5e-5, 6e-5, 4e-5, 5e-5, 7e-5, 3e-5, 5e-6];
    await db.insertInto('body_window').values(r.map((v, i) => ({ spacecraft_id: id, window_start: at(i), window_s: 60, samples: 600, ledger_residual_nm: v }))).execute();
    const changes = await evaluate(id, T + r.length * 60_000);
    // caution 2e-5 for five windows: opens at index 6 (onset index 2), clears below 1e-5 at index 8
    expect(changes.map((c) => `${c.event.type}:${c.info.kind}:${c.loopId}`)).toEqual(['opened:ledger-residual:null', 'cleared:ledger-residual:null']);
    const [trip] = await tripsOf(id);
    expect(trip).toMatchObject({ kind: 'ledger-residual', loop_id: null, level: 'caution', onset_at: at(2), cleared_at: at(8) });
  });

  it('stale data during a pass raises a telemetry-gap trip on the data age', async () => {
    const id = await bare();
    const now = T + 3600_000;
    // the job supplies the data age only while a pass is in progress; 45 s is beyond the 30 s caution
    const changes = await evaluate(id, now - 60_000, { nowMs: now, throughMs: now - 60_000, extraPoints: { data_age_s: [{ t: now, value: 45 }] } });
    expect(changes.map((c) => `${c.event.type}:${c.info.key}:${c.event.trip.level}`)).toEqual(['opened:data_age_s:caution']);
    const again = await evaluate(id, now, { nowMs: now + 60_000, throughMs: now, extraPoints: { data_age_s: [{ t: now + 60_000, value: 2 }] } });
    expect(again.map((c) => c.event.type)).toEqual(['cleared']);
  });

  it('re-evaluating from a late window raises an excursion found in judged time once, and not an excursion that already has a trip', async () => {
    const id = await bare();
    const v = [0.7, 0.7, 0.7, 0.5, 0.5, 0.5, 0.7, 0.7, 0.7, 0.7, 0.7, 0.7];
    const rows = (idx: number[]) => idx.map((i) => ({ spacecraft_id: id, loop_id: 0, window_start: at(i), window_s: 60, samples: 600, effectiveness: v[i]! }));
    // windows 0–2 and 6–11 first; the low run 3–5 arrives later (playback)
    await db.insertInto('loop_window').values(rows([0, 1, 2, 6, 7, 8, 9, 10, 11])).execute();
    const through = T + 12 * 60_000;
    expect(await evaluate(id, through)).toEqual([]);
    await db.insertInto('loop_window').values(rows([3, 4, 5])).execute();
    // without a re-evaluation the cursor is past them: nothing
    expect(await evaluate(id, through)).toEqual([]);
    const late = await evaluate(id, through, { nowMs: 0, throughMs: 0, reevaluateFromMs: at(3).getTime() });
    expect(late.map((c) => `${c.event.type}:${c.info.key}`)).toEqual(['opened:effectiveness', 'cleared:effectiveness']);
    const trips = await tripsOf(id);
    expect(trips).toHaveLength(1);
    expect(trips[0]).toMatchObject({ onset_at: at(3), cleared_at: at(6) });
    // judging the same time again finds the same excursion: it already has its trip
    expect(await evaluate(id, through, { nowMs: 0, throughMs: 0, reevaluateFromMs: at(0).getTime() })).toEqual([]);
    expect(await tripsOf(id)).toEqual(trips);
  });
});
