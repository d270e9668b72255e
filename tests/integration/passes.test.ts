import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { eciToGeodetic, gstime, propagate, twoline2satrec } from 'satellite.js';
import { clientAs, db } from './support';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSheet, insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { findPassById, listPasses, recomputePasses, refreshPassesIfStale, PASS_HORIZON_MS, PASS_HISTORY_MS } from '../../src/lib/server/passes';
import { deleteStation, insertStation } from '../../src/lib/server/stations';
import { findPasses, parseTle, stationFromDegrees, type Pass } from '../../src/lib/orbit';
import { independentElevation } from '../unit/orbit/fixtures';
import { EPOCH_2000_UNIX_S } from '../../src/lib/telemetry/types';
import { loadPassWatch } from '../../src/lib/server/live';
import { listPassLog } from '../../src/lib/server/pass-log';

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
const DAY = 24 * HOUR;
let counter = 0;
const tag = () => `${Date.now().toString(36).slice(-5)}${++counter}`;

const sheetOf = (file: 'MR-1' | 'MR-2' | 'MR-3', key: string, effectiveFrom = '2026-01-01T00:00:00Z'): SpacecraftSheet => {
  const s = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync(`ingest/fleet/${file}.json`, 'utf8')));
  return { ...s, spacecraft: { key, name: `Pass test ${key}` }, effectiveFrom };
};

async function newSpacecraft(file: 'MR-1' | 'MR-2' | 'MR-3' = 'MR-1') {
  const key = `PT-${tag()}`.toUpperCase();
  const sheet = sheetOf(file, key);
  const sc = await insertSpacecraftWithSheet(db, sheet, null);
  const sheetRow = await db.selectFrom('spacecraft_sheet').select('id').where('spacecraft_id', '=', sc.id).executeTakeFirstOrThrow();
  return { id: sc.id, key, sheet, sheetId: sheetRow.id };
}

function storedOf(spacecraftId: number, stationId?: number) {
  let q = db.selectFrom('predicted_pass').selectAll().where('spacecraft_id', '=', spacecraftId).orderBy('aos_at');
  if (stationId !== undefined) q = q.where('station_id', '=', stationId);
  return q.execute();
}

/** What findPasses gives for the same window the store covers: whole passes with AOS in [from, to). */
function expected(tle: readonly [string, string], st: { latitude_deg: number; longitude_deg: number; altitude_m: number; elevation_mask_deg: number }, fromMs: number, toMs: number): Pass[] {
  const station = stationFromDegrees(st.latitude_deg, st.longitude_deg, st.altitude_m, st.elevation_mask_deg);
  return findPasses(parseTle(tle[0], tle[1]), station, fromMs - 30 * MINUTE, toMs + 30 * MINUTE).filter(
    (p) => !p.inProgressAtStart && !p.inProgressAtEnd && p.aosMs >= fromMs && p.aosMs < toMs,
  );
}

/** Sub-satellite point of an element set at a time, straight from satellite.js. */
function subpoint(tle: readonly [string, string], ms: number): { lat: number; lon: number } {
  const at = new Date(ms);
  const pv = propagate(twoline2satrec(tle[0], tle[1]), at);
  if (!pv) throw new Error('satellite.js could not propagate');
  const g = eciToGeodetic(pv.position, gstime(at));
  return { lat: (g.latitude * 180) / Math.PI, lon: ((((g.longitude * 180) / Math.PI + 540) % 360) - 180) };
}

const timeTag = (ms: number) => Math.round((ms / 1000 - EPOCH_2000_UNIX_S) * 65536);

describe('stored pass predictions', () => {
  it('match findPasses for the same inputs, and satellite.js puts the spacecraft at the mask at AOS and LOS (SGP4: Vallado, Crawford, Hujsak & Kelso 2006)', async () => {
    const sc = await newSpacecraft('MR-1');
    const now = new Date(Math.floor(Date.now() / 1000) * 1000);
    const [r] = await recomputePasses(db, sc.id, { now });
    const stations = await db.selectFrom('ground_station').selectAll().orderBy('id').execute();
    expect(stations.length).toBeGreaterThanOrEqual(6);
    let total = 0;
    for (const st of stations) {
      const want = expected(sc.sheet.orbit.tle, st, now.getTime() - PASS_HISTORY_MS, now.getTime() + PASS_HORIZON_MS);
      const got = await storedOf(sc.id, st.id);
      expect(got.length, st.key).toBe(want.length);
      const el = independentElevation(sc.sheet.orbit.tle, st.latitude_deg, st.longitude_deg, st.altitude_m);
      got.forEach((g, i) => {
        const w = want[i]!;
        expect(Math.abs(g.aos_at.getTime() - w.aosMs)).toBeLessThan(50);
        expect(Math.abs(g.los_at.getTime() - w.losMs)).toBeLessThan(50);
        expect(Math.abs(g.tca_at.getTime() - w.tcaMs)).toBeLessThan(500);
        expect(g.max_elevation_deg).toBeCloseTo(w.maxElevation_deg, 2);
        expect(g.aos_azimuth_deg).toBeCloseTo(w.aosAzimuth_deg, 1);
        expect(g.los_azimuth_deg).toBeCloseTo(w.losAzimuth_deg, 1);
        expect(g.sheet_id).toBe(sc.sheetId);
        // Independent: satellite.js alone, at the stored times.
        expect(Math.abs(el(g.aos_at.getTime()).elevation_deg - st.elevation_mask_deg)).toBeLessThan(0.05);
        expect(Math.abs(el(g.los_at.getTime()).elevation_deg - st.elevation_mask_deg)).toBeLessThan(0.05);
        expect(Math.abs(el(g.tca_at.getTime()).elevation_deg - g.max_elevation_deg)).toBeLessThan(0.05);
      });
      total += got.length;
    }
    // About 15 revolutions a day over six stations, four days stored.
    expect(total).toBeGreaterThan(100);
    expect(r!.upcoming + r!.history).toBe(total);
    const horizon = await db.selectFrom('pass_horizon').selectAll().where('spacecraft_id', '=', sc.id).executeTakeFirstOrThrow();
    expect(horizon.horizon_to.getTime()).toBe(now.getTime() + PASS_HORIZON_MS);

    // Recomputing 90 s later from unchanged inputs keeps every row and its id (and may add one at the far end).
    const before = await storedOf(sc.id);
    await recomputePasses(db, sc.id, { now: new Date(now.getTime() + 90_000) });
    const after = (await storedOf(sc.id)).filter((p) => p.aos_at.getTime() < now.getTime() + PASS_HORIZON_MS);
    expect(after.map((p) => [p.id, p.aos_at.getTime(), p.los_at.getTime()])).toEqual(before.map((p) => [p.id, p.aos_at.getTime(), p.los_at.getTime()]));
  });

  it('predict each pass with the sheet in force at its AOS', async () => {
    const sc = await newSpacecraft('MR-1');
    const now = new Date(Math.floor(Date.now() / 1000) * 1000);
    const switchAt = new Date(now.getTime() + DAY);
    const second = sheetOf('MR-3', sc.key, switchAt.toISOString());
    const secondId = await insertSheet(db, sc.id, second, null);
    await recomputePasses(db, sc.id, { now });
    const st = (await db.selectFrom('ground_station').selectAll().where('key', '=', 'north-fell').executeTakeFirstOrThrow());
    const got = await storedOf(sc.id, st.id);
    const early = got.filter((p) => p.aos_at < switchAt);
    const late = got.filter((p) => p.aos_at >= switchAt);
    expect(early.length).toBeGreaterThan(5);
    expect(late.length).toBeGreaterThan(5);
    expect(new Set(early.map((p) => p.sheet_id))).toEqual(new Set([sc.sheetId]));
    expect(new Set(late.map((p) => p.sheet_id))).toEqual(new Set([secondId]));
    const want = expected(second.orbit.tle, st, switchAt.getTime(), now.getTime() + PASS_HORIZON_MS);
    expect(late.map((p) => Math.round(p.aos_at.getTime() / 1000))).toEqual(want.map((p) => Math.round(p.aosMs / 1000)));
  });

  it('store a pass across midnight UTC whole, as one row', async () => {
    const sc = await newSpacecraft('MR-1');
    const now = new Date(Math.floor(Date.now() / 1000) * 1000);
    const midnight = Math.ceil((now.getTime() + HOUR) / DAY) * DAY;
    // A station right under the spacecraft at midnight: the spacecraft passes overhead then.
    const under = subpoint(sc.sheet.orbit.tle, midnight);
    const st = await insertStation(db, { key: `mid-${tag()}`, name: 'Midnight test', latitude_deg: under.lat, longitude_deg: under.lon, altitude_m: 0, elevation_mask_deg: 5 }, null);
    try {
      await recomputePasses(db, sc.id, { now });
      const across = (await storedOf(sc.id, st.id)).filter((p) => p.aos_at.getTime() < midnight + 20 * MINUTE && p.los_at.getTime() > midnight - 20 * MINUTE);
      expect(across).toHaveLength(1);
      const p = across[0]!;
      expect(p.aos_at.getTime()).toBeLessThan(midnight);
      expect(p.los_at.getTime()).toBeGreaterThan(midnight);
      expect(new Date(p.aos_at).getUTCDate()).not.toBe(new Date(p.los_at).getUTCDate());
      const whole = findPasses(parseTle(sc.sheet.orbit.tle[0], sc.sheet.orbit.tle[1]), stationFromDegrees(under.lat, under.lon, 0, 5), midnight - 2 * HOUR, midnight + 2 * HOUR).find(
        (x) => x.aosMs < midnight && x.losMs > midnight,
      )!;
      expect(Math.abs(p.aos_at.getTime() - whole.aosMs)).toBeLessThan(50);
      expect(Math.abs(p.los_at.getTime() - whole.losMs)).toBeLessThan(50);
      expect(p.los_at.getTime() - p.aos_at.getTime()).toBeGreaterThan(8 * MINUTE);
      expect(p.max_elevation_deg).toBeGreaterThan(80);
    } finally {
      await deleteStation(db, st.key, null);
    }
  });

  it('are recomputed lazily when a sheet changes or the horizon runs short, and left alone otherwise', async () => {
    const sc = await newSpacecraft('MR-2');
    const now = new Date(Math.floor(Date.now() / 1000) * 1000);
    await recomputePasses(db, sc.id, { now });
    const mine = (r: { spacecraftId: number }[]) => r.some((x) => x.spacecraftId === sc.id);
    expect(mine(await refreshPassesIfStale(db, now))).toBe(false);
    expect(mine(await refreshPassesIfStale(db, new Date(now.getTime() + 2 * HOUR)))).toBe(true);
    const later = new Date(now.getTime() + 2 * HOUR);
    expect(mine(await refreshPassesIfStale(db, later))).toBe(false);
    await insertSheet(db, sc.id, sheetOf('MR-3', sc.key, '2026-06-01T00:00:00Z'), null);
    expect(mine(await refreshPassesIfStale(db, later))).toBe(true);
    const stored = await storedOf(sc.id);
    expect(stored.length).toBeGreaterThan(0);
  });
});

describe('ground stations through the API', () => {
  const key = `itest-${tag()}`;
  const site = { key, name: 'Integration Fell', latitude_deg: 60.2, longitude_deg: 11.1, altitude_m: 200, elevation_mask_deg: 5 };

  it('refuse invalid input with errors by field, and edits by operators', async () => {
    const engineer = await clientAs('engineer');
    const bad = await engineer.post('/api/stations', { key: 'Bad Key', name: ' ', latitude_deg: 95, longitude_deg: -200, altitude_m: 20_000, elevation_mask_deg: 50 });
    expect(bad.status).toBe(400);
    const body = (await bad.json()) as { error: { code: string; fields: Record<string, string[]> } };
    expect(body.error.code).toBe('BAD_REQUEST');
    expect(Object.keys(body.error.fields).sort()).toEqual(['altitude_m', 'elevation_mask_deg', 'key', 'latitude_deg', 'longitude_deg', 'name']);
    expect(body.error.fields.latitude_deg).toEqual(['Latitude must be from -90 to 90 °.']);
    expect(body.error.fields.elevation_mask_deg).toEqual(['Elevation mask must be from 0 to 45 °.']);
    const noNumber = await engineer.request('PATCH', '/api/stations/north-fell', { json: { latitude_deg: 'north', elevation_mask_deg: -1 } });
    expect(noNumber.status).toBe(400);
    const f = ((await noNumber.json()) as { error: { fields: Record<string, string[]> } }).error.fields;
    expect(f).toEqual({ latitude_deg: ['Latitude must be a number.'], elevation_mask_deg: ['Elevation mask must be from 0 to 45 °.'] });
    const empty = await engineer.request('PATCH', '/api/stations/north-fell', { json: {} });
    expect(empty.status).toBe(400);
    const operator = await clientAs('operator');
    expect((await operator.post('/api/stations', site)).status).toBe(403);
    expect((await operator.request('PATCH', '/api/stations/north-fell', { json: { elevation_mask_deg: 7 } })).status).toBe(403);
    const badQuery = await operator.get('/api/passes?from=yesterday');
    expect(badQuery.status).toBe(400);
    expect(Object.keys(((await badQuery.json()) as { error: { fields: Record<string, string[]> } }).error.fields)).toEqual(['from']);
  });

  it('add a station, recompute on an edit of its mask, count what arrived in a past pass, and delete it only when unused', async () => {
    const engineer = await clientAs('engineer');
    const sc = await newSpacecraft('MR-1');
    const created = await engineer.post('/api/stations', site);
    expect(created.status, await created.clone().text()).toBe(201);
    expect(((await created.json()) as { passes: { upcoming: number } }).passes.upcoming).toBeGreaterThan(0);
    const dup = await engineer.post('/api/stations', site);
    expect(dup.status).toBe(409);
    expect(Object.keys(((await dup.json()) as { error: { fields: Record<string, string[]> } }).error.fields)).toEqual(['key']);
    const st = await db.selectFrom('ground_station').selectAll().where('key', '=', key).executeTakeFirstOrThrow();
    const createdAt = Date.now();

    // The new station got its passes for every spacecraft, the last day included.
    const at5 = await storedOf(sc.id, st.id);
    const upcoming5 = at5.filter((p) => p.los_at.getTime() > createdAt);
    expect(at5.some((p) => p.los_at.getTime() < createdAt - HOUR)).toBe(true);
    expect(upcoming5.length).toBeGreaterThan(5);

    // Raise the mask from 5° to 30°: fewer, shorter passes, each rising and setting at 30°.
    const edited = await engineer.request('PATCH', `/api/stations/${key}`, { json: { elevation_mask_deg: 30 } });
    expect(edited.status, await edited.clone().text()).toBe(200);
    const editedAt = Date.now();
    const upcoming30 = (await storedOf(sc.id, st.id)).filter((p) => p.los_at.getTime() > editedAt);
    expect(upcoming30.length).toBeGreaterThan(0);
    expect(upcoming30.length).toBeLessThan(upcoming5.length);
    const el = independentElevation(sc.sheet.orbit.tle, st.latitude_deg, st.longitude_deg, st.altitude_m);
    for (const p of upcoming30) {
      expect(p.max_elevation_deg).toBeGreaterThanOrEqual(30);
      expect(Math.abs(el(p.aos_at.getTime()).elevation_deg - 30)).toBeLessThan(0.05);
      expect(Math.abs(el(p.los_at.getTime()).elevation_deg - 30)).toBeLessThan(0.05);
    }
    const want = expected(sc.sheet.orbit.tle, { ...st, elevation_mask_deg: 30 }, editedAt + 30 * MINUTE, editedAt + PASS_HORIZON_MS - 30 * MINUTE);
    const inner = upcoming30.filter((p) => p.aos_at.getTime() >= editedAt + 30 * MINUTE && p.aos_at.getTime() < editedAt + PASS_HORIZON_MS - 30 * MINUTE);
    expect(inner.map((p) => Math.round(p.aos_at.getTime() / 1000))).toEqual(want.map((p) => Math.round(p.aosMs / 1000)));
    const audit = await db.selectFrom('audit_log').select(['action', 'detail']).where('target_type', '=', 'ground_station').where('target_id', '=', key).orderBy('id').execute();
    expect(audit.map((a) => a.action)).toEqual(['station.create', 'station.update']);
    expect(audit[1]!.detail).toEqual({ before: { elevation_mask_deg: 5 }, after: { elevation_mask_deg: 30 } });

    // A past pass (kept from before the edit, at 5°): what arrived through this station inside it.
    const past = at5.find((p) => p.los_at.getTime() < createdAt - 10 * MINUTE)!;
    const aos = past.aos_at.getTime();
    const los = past.los_at.getTime();
    const other = await db.selectFrom('ground_station').select('id').where('key', '=', 'ribeira').executeTakeFirstOrThrow();
    const otherSc = await newSpacecraft('MR-2');
    await db
      .insertInto('ingest_batch')
      .values([
        batchRow(st.id, sc.id, aos + 10_000, { realtime: 100, playback: 0, bytes: 4000, duplicates: 2, rejected: 1 }),
        batchRow(st.id, sc.id, (aos + los) / 2, { realtime: 20, playback: 300, bytes: 16_000 }),
        batchRow(st.id, sc.id, aos - 5_000, { realtime: 7, playback: 0, bytes: 700 }), // before AOS
        batchRow(st.id, sc.id, los + 5_000, { realtime: 9, playback: 0, bytes: 900 }), // after LOS
        batchRow(other.id, sc.id, aos + 20_000, { realtime: 11, playback: 0, bytes: 1100 }), // another station
        batchRow(st.id, otherSc.id, aos + 20_000, { realtime: 13, playback: 0, bytes: 1300 }), // another spacecraft
      ])
      .execute();
    await db
      .insertInto('sequence_gap')
      .values([
        { spacecraft_id: sc.id, apid: 32, from_seq: 10, to_seq: 14, missing: 5, after_time_tag: timeTag(aos - 60_000), before_time_tag: timeTag(aos + 30_000) },
        { spacecraft_id: sc.id, apid: 32, from_seq: 50, to_seq: 51, missing: 2, after_time_tag: timeTag(los + 10_000), before_time_tag: timeTag(los + 20_000) },
      ])
      .execute();
    const trip = (onsetMs: number) => ({
      spacecraft_id: sc.id,
      loop_id: 0,
      kind: 'electrode-overtemperature',
      quantity: 'electrode_temp_c',
      level: 'caution' as const,
      side: 'high' as const,
      limit_set_version: 1,
      onset_at: new Date(onsetMs),
      raised_at: new Date(onsetMs),
      value: 71,
      peak_value: 72,
      limit_value: 70,
      last_value: 71,
      last_at: new Date(onsetMs),
      evidence: '{}',
    });
    const [inside] = await db.insertInto('trip').values([trip(aos + 60_000), trip(los + 60_000)]).returning('id').execute();

    const summary = (await findPassById(db, past.id))!.received!;
    expect(summary).toEqual({
      batches: 2,
      realtimePackets: 120,
      playbackPackets: 300,
      duplicates: 2,
      rejected: 1,
      bytes: 20_000,
      realtimeBytes: 5000, // 4000 · 100/100 + 16000 · 20/320
      playbackBytes: 15_000,
      gaps: 1,
      missingPackets: 5,
      trips: [{ id: inside!.id, kind: 'electrode-overtemperature', level: 'caution', state: 'open' }],
    });
    // The same through the API, and a pass still to come has nothing yet.
    const res = await engineer.get(`/api/passes?spacecraft=${sc.key}&station=${key}`);
    expect(res.status).toBe(200);
    const list = (await res.json()) as { passes: { id: number; aos: string; received: unknown }[] };
    expect(list.passes.find((p) => p.id === past.id)!.received).toEqual(summary);
    const future = list.passes.find((p) => Date.parse(p.aos) > Date.now() + MINUTE)!;
    expect(future.received).toBeNull();
    const filtered = await listPasses(db, { spacecraft: sc.key, station: key, from: new Date(aos - HOUR), to: new Date(los + HOUR) });
    expect(filtered.map((p) => p.id)).toContain(past.id);
    expect(new Set(filtered.map((p) => `${p.spacecraft}/${p.station}`))).toEqual(new Set([`${sc.key}/${key}`]));

    // Telemetry arrived through the station: it is kept; once nothing refers to it, it can go.
    const refused = await engineer.request('DELETE', `/api/stations/${key}`);
    expect(refused.status).toBe(409);
    expect(((await refused.json()) as { error: { message: string } }).error.message).toMatch(/in use/);
    await db.deleteFrom('ingest_batch').where('station_id', '=', st.id).execute();
    const gone = await engineer.request('DELETE', `/api/stations/${key}`);
    expect(gone.status).toBe(200);
    expect(await storedOf(sc.id, st.id)).toEqual([]);
    const last = await db.selectFrom('audit_log').select('action').where('target_id', '=', key).orderBy('id', 'desc').executeTakeFirstOrThrow();
    expect(last.action).toBe('station.delete');
    expect((await engineer.request('DELETE', `/api/stations/${key}`)).status).toBe(404);
  });
});

/** An ingest batch row of a spacecraft through a station, received at a time. */
function batchRow(stationId: number, spacecraftId: number, atMs: number, n: { realtime: number; playback: number; bytes: number; duplicates?: number; rejected?: number }) {
  return {
    spacecraft_id: spacecraftId,
    station_id: stationId,
    source: 'post' as const,
    received_at: new Date(atMs),
    bytes: n.bytes,
    accepted: n.realtime + n.playback,
    duplicates: n.duplicates ?? 0,
    rejected: n.rejected ?? 0,
    idle: 0,
    realtime: n.realtime,
    playback: n.playback,
    first_time_tag: timeTag(atMs - 1000),
    last_time_tag: timeTag(atMs),
  };
}

interface ApiPass {
  id: number;
  station: string;
  aos: string;
  los: string;
}

describe('Pass watch and the pass log', () => {
  it('show the stored passes, the same as the Passes API, after a station edit: past passes as they were predicted, upcoming ones at the new mask', async () => {
    const engineer = await clientAs('engineer');
    const sc = await newSpacecraft('MR-1');
    const key = `pw-${tag()}`;
    const created = await engineer.post('/api/stations', { key, name: 'Pass watch Fell', latitude_deg: 62.4, longitude_deg: 17.3, altitude_m: 150, elevation_mask_deg: 5 });
    expect(created.status, await created.clone().text()).toBe(201);
    const createdAt = Date.now();
    try {
      const edited = await engineer.request('PATCH', `/api/stations/${key}`, { json: { elevation_mask_deg: 25 } });
      expect(edited.status, await edited.clone().text()).toBe(200);
      const nowMs = Date.now();
      const res = await engineer.get(`/api/passes?spacecraft=${sc.key}`);
      expect(res.status).toBe(200);
      const api = ((await res.json()) as { passes: ApiPass[] }).passes.map((p) => ({ id: p.id, station: p.station, aosMs: Date.parse(p.aos), losMs: Date.parse(p.los) }));
      const row = (p: { id: number | null; station: string; aosMs: number; losMs: number }) => [p.id, p.station, p.aosMs, p.losMs];

      // Pass watch: the stored passes of the day either side of now, ids and times as the Passes API gives them.
      const inner = (p: { aosMs: number; losMs: number }) => p.losMs >= nowMs - DAY + HOUR && p.aosMs <= nowMs + DAY - HOUR;
      const snap = await loadPassWatch(db, { id: sc.id, key: sc.key, name: sc.sheet.spacecraft.name }, nowMs);
      expect(snap.passError).toBeNull();
      const watched = snap.passes.filter(inner);
      expect(watched.length).toBeGreaterThan(20);
      expect(watched.map(row)).toEqual(api.filter(inner).map(row));

      // The pass log (through its API): the begun passes of the last day, newest first, each the stored pass.
      const logRes = await engineer.get(`/api/pass-log/${sc.key}`);
      expect(logRes.status).toBe(200);
      const log = (await logRes.json()) as { passes: { passId: number | null; station: string; aos: string; los: string }[]; error: string | null };
      expect(log.error).toBeNull();
      const begun = (p: { aosMs: number }) => p.aosMs >= nowMs - DAY + HOUR && p.aosMs <= nowMs;
      const logged = log.passes.map((p) => ({ id: p.passId, station: p.station, aosMs: Date.parse(p.aos), losMs: Date.parse(p.los) })).filter(begun);
      expect(logged.map(row)).toEqual(
        api
          .filter(begun)
          .sort((a, b) => b.aosMs - a.aosMs)
          .map(row),
      );

      // Over the edited station: passes that ended before the edit keep their 5° prediction (satellite.js alone puts
      // the spacecraft at 5° at AOS and LOS), upcoming ones rise and set at 25°. A fresh prediction would give 25° for both.
      const st = await db.selectFrom('ground_station').selectAll().where('key', '=', key).executeTakeFirstOrThrow();
      const el = independentElevation(sc.sheet.orbit.tle, st.latitude_deg, st.longitude_deg, st.altitude_m);
      const pastHere = logged.filter((p) => p.station === key && p.losMs < createdAt);
      expect(pastHere.length).toBeGreaterThan(3);
      for (const p of pastHere) {
        expect(Math.abs(el(p.aosMs).elevation_deg - 5)).toBeLessThan(0.05);
        expect(Math.abs(el(p.losMs).elevation_deg - 5)).toBeLessThan(0.05);
      }
      const upcomingHere = watched.filter((p) => p.station === key && p.aosMs > nowMs);
      expect(upcomingHere.length).toBeGreaterThan(0);
      for (const p of upcomingHere) expect(Math.abs(el(p.aosMs).elevation_deg - 25)).toBeLessThan(0.05);
    } finally {
      expect((await engineer.request('DELETE', `/api/stations/${key}`)).status).toBe(200);
    }
  });

  it('count in each pass only what came through its own station, when passes over two stations overlap, as the Passes page does', async () => {
    const sc = await newSpacecraft('MR-1');
    // Two stations about 70 km apart: every pass over one overlaps a pass over the other.
    const a = await insertStation(db, { key: `ova-${tag()}`, name: 'Overlap A', latitude_deg: 62.4, longitude_deg: 17.3, altitude_m: 0, elevation_mask_deg: 5 }, null);
    const b = await insertStation(db, { key: `ovb-${tag()}`, name: 'Overlap B', latitude_deg: 63.0, longitude_deg: 18.0, altitude_m: 0, elevation_mask_deg: 5 }, null);
    try {
      const nowMs = Date.now();
      await recomputePasses(db, sc.id, { now: new Date(nowMs) });
      const pa = (await storedOf(sc.id, a.id)).filter((p) => p.los_at.getTime() < nowMs - 10 * MINUTE);
      const pb = await storedOf(sc.id, b.id);
      const pair = pa
        .map((x) => ({ x, y: pb.find((y) => y.aos_at < x.los_at && y.los_at > x.aos_at) }))
        .find((q) => q.y && Math.min(q.x.los_at.getTime(), q.y.los_at.getTime()) - Math.max(q.x.aos_at.getTime(), q.y.aos_at.getTime()) > 2 * MINUTE)!;
      expect(pair, 'an overlapping pair of ended passes').toBeDefined();
      const { x, y } = pair as { x: (typeof pa)[number]; y: (typeof pb)[number] };
      const mid = (Math.max(x.aos_at.getTime(), y!.aos_at.getTime()) + Math.min(x.los_at.getTime(), y!.los_at.getTime())) / 2;
      await db
        .insertInto('ingest_batch')
        .values([
          batchRow(a.id, sc.id, mid, { realtime: 10, playback: 1, bytes: 1100, duplicates: 1 }),
          batchRow(b.id, sc.id, mid + 1000, { realtime: 20, playback: 2, bytes: 2200, rejected: 3 }),
          batchRow(b.id, sc.id, mid + 2000, { realtime: 30, playback: 0, bytes: 3000 }),
        ])
        .execute();
      const log = await listPassLog(db, { id: sc.id, key: sc.key }, nowMs);
      const ea = log.passes.find((e) => e.passId === x.id)!;
      const eb = log.passes.find((e) => e.passId === y!.id)!;
      expect(ea.station).toBe(a.key);
      expect(eb.station).toBe(b.key);
      expect(ea.data).toEqual({ batches: 1, accepted: 11, realtime: 10, playback: 1, duplicates: 1, rejected: 0, missing: 0 });
      expect(eb.data).toEqual({ batches: 2, accepted: 52, realtime: 50, playback: 2, duplicates: 0, rejected: 3, missing: 0 });
      // The Passes page counts the same for the same passes.
      for (const [entry, id] of [
        [ea, x.id],
        [eb, y!.id],
      ] as const) {
        const r = (await findPassById(db, id, new Date(nowMs)))!.received!;
        expect({ batches: r.batches, realtime: r.realtimePackets, playback: r.playbackPackets, duplicates: r.duplicates, rejected: r.rejected, missing: r.missingPackets }).toEqual({
          batches: entry.data.batches,
          realtime: entry.data.realtime,
          playback: entry.data.playback,
          duplicates: entry.data.duplicates,
          rejected: entry.data.rejected,
          missing: entry.data.missing,
        });
      }
    } finally {
      await db.deleteFrom('ingest_batch').where('station_id', 'in', [a.id, b.id]).execute();
      await deleteStation(db, a.key, null);
      await deleteStation(db, b.key, null);
    }
  });
});

describe('a new sheet through the API', () => {
  it('recomputes the passes in the transaction that stores it: stored rows and the Passes API follow the new element set at once', async () => {
    const engineer = await clientAs('engineer');
    const sc = await newSpacecraft('MR-1');
    await recomputePasses(db, sc.id);
    const effective = new Date(Math.floor(Date.now() / 1000) * 1000 - MINUTE);
    const second = sheetOf('MR-3', sc.key, effective.toISOString());
    const res = await engineer.post(`/api/spacecraft/${sc.key}/sheets`, second);
    expect(res.status, await res.clone().text()).toBe(201);
    const secondId = ((await res.json()) as { id: number }).id;
    const postedAt = Date.now();

    // Read straight from the store, before any reader or the scheduler could refresh it.
    const st = await db.selectFrom('ground_station').selectAll().where('key', '=', 'north-fell').executeTakeFirstOrThrow();
    const upcoming = (await storedOf(sc.id, st.id)).filter((p) => p.los_at.getTime() > postedAt);
    expect(upcoming.length).toBeGreaterThan(5);
    expect(new Set(upcoming.filter((p) => p.aos_at >= effective).map((p) => p.sheet_id))).toEqual(new Set([secondId]));
    const from = postedAt + 30 * MINUTE;
    const to = postedAt + PASS_HORIZON_MS - 30 * MINUTE;
    const want = expected(second.orbit.tle, st, from, to).map((p) => Math.round(p.aosMs / 1000));
    const mr1 = expected(sc.sheet.orbit.tle, st, from, to).map((p) => Math.round(p.aosMs / 1000));
    expect(want).not.toEqual(mr1);
    const inner = (p: { aos_at: Date }) => p.aos_at.getTime() >= from && p.aos_at.getTime() < to;
    expect(upcoming.filter(inner).map((p) => Math.round(p.aos_at.getTime() / 1000))).toEqual(want);
    const horizon = await db.selectFrom('pass_horizon').select('computed_at').where('spacecraft_id', '=', sc.id).executeTakeFirstOrThrow();
    expect(horizon.computed_at.getTime()).toBeGreaterThanOrEqual(effective.getTime());
    expect((await refreshPassesIfStale(db)).some((r) => r.spacecraftId === sc.id)).toBe(false);

    // The Passes API lists the same.
    const api = (await (await engineer.get(`/api/passes?spacecraft=${sc.key}&station=north-fell`)).json()) as { passes: (ApiPass & { sheetId: number })[] };
    const apiInner = api.passes.filter((p) => Date.parse(p.aos) >= from && Date.parse(p.aos) < to);
    expect(apiInner.map((p) => Math.round(Date.parse(p.aos) / 1000))).toEqual(want);
    expect(new Set(apiInner.map((p) => p.sheetId))).toEqual(new Set([secondId]));
  });
});
