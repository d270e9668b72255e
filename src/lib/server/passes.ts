import { createHash } from 'node:crypto';
import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { findPasses, parseTle, stationFromDegrees, type GroundStation, type Pass, type Satellite } from '../orbit';
import { EPOCH_2000_UNIX_S } from '../telemetry/types';

type Db = Kysely<Database> | Transaction<Database>;

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
const DAY = 24 * HOUR;

/** Passes are predicted and stored this far ahead. */
export const PASS_HORIZON_MS = 3 * DAY;
/** On a fresh start (or for a new station) the last day is predicted too, so there are past passes to look back on. */
export const PASS_HISTORY_MS = DAY;
/** Stored passes are recomputed once the horizon has shrunk by this much. */
export const PASS_REFRESH_MS = HOUR;
/** Scan margin beyond each end of a window: longer than any pass of a low Earth orbit, so every kept pass is whole. */
const SCAN_MARGIN_MS = 30 * MINUTE;
/**
 * Scans start on whole minutes: the coarse grid of findPasses (30 s) then falls on the same instants
 * whatever the clock, so recomputing from unchanged inputs gives identical AOS times and stored
 * passes keep their ids.
 */
const SCAN_GRID_MS = MINUTE;
/** Advisory-lock namespace of pass recomputation ("PASS"). */
const LOCK_NS = 0x50415353;

/** A station as pass prediction reads it. */
export interface StationInput {
  id: number;
  key: string;
  latitude_deg: number;
  longitude_deg: number;
  altitude_m: number;
  elevation_mask_deg: number;
}

/** A sheet as pass prediction reads it: the element set is `sheet.orbit.tle`. */
export interface SheetInput {
  id: number;
  spacecraft_id: number;
  effective_from: Date;
  tle: unknown;
}

/** One predicted pass, before it is stored. */
export interface PredictedPass {
  stationId: number;
  sheetId: number;
  aosMs: number;
  tcaMs: number;
  losMs: number;
  maxElevation_deg: number;
  aosAzimuth_deg: number;
  losAzimuth_deg: number;
}

function readStations(db: Db): Promise<StationInput[]> {
  return db.selectFrom('ground_station').select(['id', 'key', 'latitude_deg', 'longitude_deg', 'altitude_m', 'elevation_mask_deg']).orderBy('id').execute();
}

function readSheets(db: Db, spacecraftId?: number): Promise<SheetInput[]> {
  let q = db
    .selectFrom('spacecraft_sheet')
    .select(['id', 'spacecraft_id', 'effective_from', sql<unknown>`sheet->'orbit'->'tle'`.as('tle')])
    .orderBy('spacecraft_id')
    .orderBy('effective_from');
  if (spacecraftId !== undefined) q = q.where('spacecraft_id', '=', spacecraftId);
  return q.execute();
}

/** Digest of everything a spacecraft's predictions depend on: every station and the spacecraft's sheets. */
function inputsDigest(stations: readonly StationInput[], sheets: readonly SheetInput[]): string {
  const h = createHash('sha256');
  for (const s of stations) h.update(JSON.stringify([s.id, s.latitude_deg, s.longitude_deg, s.altitude_m, s.elevation_mask_deg]));
  h.update('|');
  for (const s of sheets) h.update(JSON.stringify([s.id, s.effective_from.toISOString(), s.tle]));
  return h.digest('hex');
}

/** The element set of a sheet, or null (logged) when SGP4 cannot take it. */
function satelliteOf(sheet: SheetInput): Satellite | null {
  const tle = sheet.tle;
  if (!Array.isArray(tle) || typeof tle[0] !== 'string' || typeof tle[1] !== 'string') {
    console.error(`[passes] sheet ${sheet.id} has no element set; no passes predicted from it`);
    return null;
  }
  try {
    return parseTle(tle[0], tle[1]);
  } catch (err) {
    console.error(`[passes] sheet ${sheet.id}: ${(err as Error).message}; no passes predicted from it`);
    return null;
  }
}

/**
 * Spans of [fromMs, toMs) with the sheet in force in each (the latest effective_from at or before the
 * span's start; before the first sheet, the first sheet, as findSheetInForce does). Sheets sorted by effective_from.
 */
function sheetSpans(sheets: readonly SheetInput[], fromMs: number, toMs: number): { sheet: SheetInput; fromMs: number; toMs: number }[] {
  if (sheets.length === 0) return [];
  let current = sheets[0]!;
  for (const s of sheets) if (s.effective_from.getTime() <= fromMs) current = s;
  const spans: { sheet: SheetInput; fromMs: number; toMs: number }[] = [];
  let start = fromMs;
  for (const s of sheets) {
    const at = s.effective_from.getTime();
    if (at <= fromMs || at >= toMs || s === current) continue;
    spans.push({ sheet: current, fromMs: start, toMs: at });
    current = s;
    start = at;
  }
  spans.push({ sheet: current, fromMs: start, toMs });
  return spans;
}

/**
 * Whole passes with AOS in [fromMs, toMs) of a spacecraft over each station, each predicted with the
 * sheet in force at its AOS. Sheets sorted by effective_from.
 */
export function predictPasses(sheets: readonly SheetInput[], stations: readonly StationInput[], fromMs: number, toMs: number): PredictedPass[] {
  const out: PredictedPass[] = [];
  const sites = new Map<number, GroundStation>(
    stations.map((s) => [s.id, stationFromDegrees(s.latitude_deg, s.longitude_deg, s.altitude_m, s.elevation_mask_deg)]),
  );
  for (const span of sheetSpans(sheets, fromMs, toMs)) {
    const sat = satelliteOf(span.sheet);
    if (!sat) continue;
    const scanFrom = Math.floor((span.fromMs - SCAN_MARGIN_MS) / SCAN_GRID_MS) * SCAN_GRID_MS;
    const scanTo = span.toMs + SCAN_MARGIN_MS;
    for (const st of stations) {
      let found: Pass[];
      try {
        found = findPasses(sat, sites.get(st.id)!, scanFrom, scanTo);
      } catch (err) {
        console.error(`[passes] sheet ${span.sheet.id} over ${st.key}: ${(err as Error).message}`);
        continue;
      }
      for (const p of found) {
        if (p.inProgressAtStart || p.inProgressAtEnd || p.aosMs < span.fromMs || p.aosMs >= span.toMs) continue;
        out.push({
          stationId: st.id,
          sheetId: span.sheet.id,
          aosMs: p.aosMs,
          tcaMs: p.tcaMs,
          losMs: p.losMs,
          maxElevation_deg: p.maxElevation_deg,
          aosAzimuth_deg: p.aosAzimuth_deg,
          losAzimuth_deg: p.losAzimuth_deg,
        });
      }
    }
  }
  return out.sort((a, b) => a.aosMs - b.aosMs || a.stationId - b.stationId);
}

function columns(passes: readonly PredictedPass[]) {
  const iso = (ms: number) => new Date(ms).toISOString();
  return {
    station: passes.map((p) => p.stationId),
    sheet: passes.map((p) => p.sheetId),
    aos: passes.map((p) => iso(p.aosMs)),
    tca: passes.map((p) => iso(p.tcaMs)),
    los: passes.map((p) => iso(p.losMs)),
    maxEl: passes.map((p) => p.maxElevation_deg),
    aosAz: passes.map((p) => p.aosAzimuth_deg),
    losAz: passes.map((p) => p.losAzimuth_deg),
  };
}

function unnestPasses(passes: readonly PredictedPass[]) {
  const c = columns(passes);
  return sql`unnest(${c.station}::int[], ${c.sheet}::int[], ${c.aos}::timestamptz[], ${c.tca}::timestamptz[], ${c.los}::timestamptz[],
    ${c.maxEl}::float8[], ${c.aosAz}::float8[], ${c.losAz}::float8[]) AS u(station_id, sheet_id, aos_at, tca_at, los_at, max_el, aos_az, los_az)`;
}

/** What one recomputation stored for one spacecraft. */
export interface RecomputeResult {
  spacecraftId: number;
  /** Passes whose LOS is after now, as stored now. */
  upcoming: number;
  /** Past passes added to the history (a fresh start or a new station). */
  history: number;
  /** Upcoming passes removed because the inputs no longer give them. */
  removed: number;
}

/** Recompute one spacecraft's passes under its advisory lock; with onlyIfStale, skip when inputs and horizon are current. */
async function recomputeOne(trx: Transaction<Database>, spacecraftId: number, nowMs: number, onlyIfStale: boolean): Promise<RecomputeResult | null> {
  await sql`SELECT pg_advisory_xact_lock(${LOCK_NS}::int, ${spacecraftId}::int)`.execute(trx);
  const [stations, sheets, horizon] = await Promise.all([
    readStations(trx),
    readSheets(trx, spacecraftId),
    trx.selectFrom('pass_horizon').select(['inputs', 'horizon_to']).where('spacecraft_id', '=', spacecraftId).executeTakeFirst(),
  ]);
  const inputs = inputsDigest(stations, sheets);
  if (onlyIfStale && horizon && !isStale(horizon, inputs, nowMs)) return null;

  const passes = predictPasses(sheets, stations, nowMs - PASS_HISTORY_MS, nowMs + PASS_HORIZON_MS);
  const past = passes.filter((p) => p.losMs <= nowMs);
  const upcoming = passes.filter((p) => p.losMs > nowMs);
  const now = new Date(nowMs);
  const computedAt = new Date();

  let history = 0;
  if (past.length > 0) {
    // Past passes are history: they keep the prediction they had. Only after the newest stored past
    // pass of a station (none on a fresh start or for a new station) are past passes added.
    const r = await sql`
      INSERT INTO predicted_pass (spacecraft_id, station_id, sheet_id, aos_at, tca_at, los_at, max_elevation_deg, aos_azimuth_deg, los_azimuth_deg, computed_at)
      SELECT ${spacecraftId}, u.station_id, u.sheet_id, u.aos_at, u.tca_at, u.los_at, u.max_el, u.aos_az, u.los_az, ${computedAt}
      FROM ${unnestPasses(past)}
      WHERE u.aos_at > coalesce((SELECT max(p.los_at) FROM predicted_pass p
                                 WHERE p.spacecraft_id = ${spacecraftId} AND p.station_id = u.station_id AND p.los_at <= ${now}), '-infinity')
      ON CONFLICT (spacecraft_id, station_id, aos_at) DO NOTHING`.execute(trx);
    history = Number(r.numAffectedRows ?? 0);
  }

  const c = columns(upcoming);
  const removed = await sql`
    DELETE FROM predicted_pass p
    WHERE p.spacecraft_id = ${spacecraftId} AND p.los_at > ${now}
      AND NOT EXISTS (SELECT 1 FROM unnest(${c.station}::int[], ${c.aos}::timestamptz[]) AS u(station_id, aos_at)
                      WHERE u.station_id = p.station_id AND u.aos_at = p.aos_at)`.execute(trx);
  if (upcoming.length > 0) {
    await sql`
      INSERT INTO predicted_pass (spacecraft_id, station_id, sheet_id, aos_at, tca_at, los_at, max_elevation_deg, aos_azimuth_deg, los_azimuth_deg, computed_at)
      SELECT ${spacecraftId}, u.station_id, u.sheet_id, u.aos_at, u.tca_at, u.los_at, u.max_el, u.aos_az, u.los_az, ${computedAt}
      FROM ${unnestPasses(upcoming)}
      ON CONFLICT (spacecraft_id, station_id, aos_at) DO UPDATE SET
        sheet_id = EXCLUDED.sheet_id, tca_at = EXCLUDED.tca_at, los_at = EXCLUDED.los_at, max_elevation_deg = EXCLUDED.max_elevation_deg,
        aos_azimuth_deg = EXCLUDED.aos_azimuth_deg, los_azimuth_deg = EXCLUDED.los_azimuth_deg, computed_at = EXCLUDED.computed_at`.execute(trx);
  }
  await trx
    .insertInto('pass_horizon')
    .values({ spacecraft_id: spacecraftId, computed_at: computedAt, horizon_to: new Date(nowMs + PASS_HORIZON_MS), inputs })
    .onConflict((oc) => oc.column('spacecraft_id').doUpdateSet({ computed_at: computedAt, horizon_to: new Date(nowMs + PASS_HORIZON_MS), inputs }))
    .execute();
  return { spacecraftId, upcoming: upcoming.length, history, removed: Number(removed.numAffectedRows ?? 0) };
}

function isStale(horizon: { inputs: string; horizon_to: Date }, inputs: string, nowMs: number): boolean {
  return horizon.inputs !== inputs || horizon.horizon_to.getTime() < nowMs + PASS_HORIZON_MS - PASS_REFRESH_MS;
}

function inTransaction<T>(db: Db, fn: (trx: Transaction<Database>) => Promise<T>): Promise<T> {
  return db.isTransaction ? fn(db as Transaction<Database>) : db.transaction().execute(fn);
}

/**
 * Predict and store the passes of one spacecraft (or of all) over every ground station for the next
 * three days, from the sheets in force; call after a sheet or station change.
 */
export async function recomputePasses(db: Db, spacecraftId?: number, opts: { now?: Date } = {}): Promise<RecomputeResult[]> {
  const nowMs = (opts.now ?? new Date()).getTime();
  let ids: number[];
  if (spacecraftId === undefined) ids = (await db.selectFrom('spacecraft').select('id').orderBy('id').execute()).map((r) => r.id);
  else ids = [spacecraftId];
  const out: RecomputeResult[] = [];
  // One spacecraft at a time, in id order: concurrent callers take the locks in the same order.
  for (const id of ids) out.push((await inTransaction(db, (trx) => recomputeOne(trx, id, nowMs, false)))!);
  return out;
}

/**
 * Recompute the passes of every spacecraft whose stored horizon is short or whose sheets or the
 * stations changed since; the scheduler calls it, and so does every reader of passes.
 */
export async function refreshPassesIfStale(db: Db, now: Date = new Date()): Promise<RecomputeResult[]> {
  const nowMs = now.getTime();
  const [craft, stations, sheets, horizons] = await Promise.all([
    db.selectFrom('spacecraft').select('id').orderBy('id').execute(),
    readStations(db),
    readSheets(db),
    db.selectFrom('pass_horizon').select(['spacecraft_id', 'inputs', 'horizon_to']).execute(),
  ]);
  const out: RecomputeResult[] = [];
  for (const sc of craft) {
    const h = horizons.find((x) => x.spacecraft_id === sc.id);
    if (h && !isStale(h, inputsDigest(stations, sheets.filter((s) => s.spacecraft_id === sc.id)), nowMs)) continue;
    const r = await inTransaction(db, (trx) => recomputeOne(trx, sc.id, nowMs, true));
    if (r) out.push(r);
  }
  return out;
}

/** What arrived through the pass's station while the pass lasted, and what happened in it. */
export interface PassReceived {
  /** Ingest requests and upload chunks received from AOS to LOS through this station. */
  batches: number;
  realtimePackets: number;
  playbackPackets: number;
  duplicates: number;
  rejected: number;
  bytes: number;
  /** Octets of each request shared between real time and playback by packet count. */
  realtimeBytes: number;
  playbackBytes: number;
  /** Sequence gaps that ended (the first packet after them) between AOS and LOS. */
  gaps: number;
  missingPackets: number;
  /** Trips with onset between AOS and LOS. */
  trips: { id: number; kind: string; level: 'caution' | 'warning'; state: string }[];
}

/** A stored pass as the API and the Passes page show it (times ISO, UTC). */
export interface PassRow {
  id: number;
  spacecraft: string;
  spacecraftName: string;
  station: string;
  stationName: string;
  aos: string;
  tca: string;
  los: string;
  maxElevation_deg: number;
  aosAzimuth_deg: number;
  losAzimuth_deg: number;
  sheetId: number | null;
  computedAt: string;
  /** For a pass that has begun; null for one still to come. */
  received: PassReceived | null;
}

export interface PassFilter {
  spacecraft?: string;
  station?: string;
  /** Passes overlapping [from, to]. */
  from: Date;
  to: Date;
  limit?: number;
}

/** The largest number of passes one list returns. */
export const MAX_PASS_ROWS = 2000;

interface RawPassRow {
  id: number;
  spacecraft: string;
  spacecraft_name: string;
  station: string;
  station_name: string;
  aos_at: Date;
  tca_at: Date;
  los_at: Date;
  max_elevation_deg: number;
  aos_azimuth_deg: number;
  los_azimuth_deg: number;
  sheet_id: number | null;
  computed_at: Date;
  batches: number | null;
  realtime: number | null;
  playback: number | null;
  duplicates: number | null;
  rejected: number | null;
  bytes: number | null;
  realtime_bytes: number | null;
  gaps: number | null;
  missing: number | null;
  trips: PassReceived['trips'] | null;
}

/** A time as a CUC time tag of the telemetry contract (2⁻¹⁶ s since 2000-01-01T00:00:00Z), in SQL. */
const timeTag = (col: ReturnType<typeof sql.ref>) => sql`((extract(epoch FROM ${col}) - ${EPOCH_2000_UNIX_S}) * 65536)::bigint`;

async function selectPasses(db: Db, where: ReturnType<typeof sql>, now: Date, limit: number): Promise<PassRow[]> {
  const begun = sql`p.aos_at <= ${now}`;
  const r = await sql<RawPassRow>`
    SELECT p.id, s.key AS spacecraft, s.name AS spacecraft_name, g.key AS station, g.name AS station_name,
           p.aos_at, p.tca_at, p.los_at, p.max_elevation_deg, p.aos_azimuth_deg, p.los_azimuth_deg, p.sheet_id, p.computed_at,
           b.batches, b.realtime, b.playback, b.duplicates, b.rejected, b.bytes, b.realtime_bytes, q.gaps, q.missing, t.trips
    FROM predicted_pass p
    JOIN spacecraft s ON s.id = p.spacecraft_id
    JOIN ground_station g ON g.id = p.station_id
    LEFT JOIN LATERAL (
      SELECT count(*)::int AS batches, coalesce(sum(realtime), 0)::int AS realtime, coalesce(sum(playback), 0)::int AS playback,
             coalesce(sum(duplicates), 0)::int AS duplicates, coalesce(sum(rejected), 0)::int AS rejected, coalesce(sum(bytes), 0)::bigint AS bytes,
             coalesce(round(sum(bytes::float8 * realtime / nullif(realtime + playback, 0))), 0)::bigint AS realtime_bytes
      FROM ingest_batch x
      WHERE x.spacecraft_id = p.spacecraft_id AND x.station_id = p.station_id AND x.received_at >= p.aos_at AND x.received_at <= p.los_at
    ) b ON ${begun}
    LEFT JOIN LATERAL (
      SELECT count(*)::int AS gaps, coalesce(sum(missing), 0)::int AS missing
      FROM sequence_gap x
      WHERE x.spacecraft_id = p.spacecraft_id AND x.before_time_tag BETWEEN ${timeTag(sql.ref('p.aos_at'))} AND ${timeTag(sql.ref('p.los_at'))}
    ) q ON ${begun}
    LEFT JOIN LATERAL (
      SELECT coalesce(jsonb_agg(jsonb_build_object('id', x.id, 'kind', x.kind, 'level', x.level, 'state', x.state) ORDER BY x.onset_at, x.id), '[]'::jsonb) AS trips
      FROM trip x
      WHERE x.spacecraft_id = p.spacecraft_id AND x.onset_at >= p.aos_at AND x.onset_at <= p.los_at
    ) t ON ${begun}
    WHERE ${where}
    ORDER BY p.aos_at, s.key, g.key
    LIMIT ${limit}`.execute(db);
  return r.rows.map((x) => ({
    id: x.id,
    spacecraft: x.spacecraft,
    spacecraftName: x.spacecraft_name,
    station: x.station,
    stationName: x.station_name,
    aos: x.aos_at.toISOString(),
    tca: x.tca_at.toISOString(),
    los: x.los_at.toISOString(),
    maxElevation_deg: x.max_elevation_deg,
    aosAzimuth_deg: x.aos_azimuth_deg,
    losAzimuth_deg: x.los_azimuth_deg,
    sheetId: x.sheet_id,
    computedAt: x.computed_at.toISOString(),
    received:
      x.batches === null
        ? null
        : {
            batches: x.batches,
            realtimePackets: x.realtime ?? 0,
            playbackPackets: x.playback ?? 0,
            duplicates: x.duplicates ?? 0,
            rejected: x.rejected ?? 0,
            bytes: x.bytes ?? 0,
            realtimeBytes: x.realtime_bytes ?? 0,
            playbackBytes: (x.bytes ?? 0) - (x.realtime_bytes ?? 0),
            gaps: x.gaps ?? 0,
            missingPackets: x.missing ?? 0,
            trips: x.trips ?? [],
          },
  }));
}

/** Stored passes overlapping [from, to], optionally of one spacecraft and one station (keys), in AOS order. */
export function listPasses(db: Db, filter: PassFilter, now: Date = new Date()): Promise<PassRow[]> {
  const conditions = [sql`p.los_at >= ${filter.from}`, sql`p.aos_at <= ${filter.to}`];
  if (filter.spacecraft) conditions.push(sql`s.key = ${filter.spacecraft}`);
  if (filter.station) conditions.push(sql`g.key = ${filter.station}`);
  return selectPasses(db, sql.join(conditions, sql` AND `), now, Math.min(filter.limit ?? MAX_PASS_ROWS, MAX_PASS_ROWS));
}

/** One stored pass with what was received during it, or undefined. */
export async function findPassById(db: Db, id: number, now: Date = new Date()): Promise<PassRow | undefined> {
  return (await selectPasses(db, sql`p.id = ${id}`, now, 1))[0];
}

/** When the stored passes were last computed and how far ahead they reach (earliest over the fleet). */
export async function passHorizon(db: Db): Promise<{ computedAt: string | null; horizonTo: string | null }> {
  const r = await db
    .selectFrom('pass_horizon')
    .select((eb) => [eb.fn.max('computed_at').as('computed_at'), eb.fn.min('horizon_to').as('horizon_to')])
    .executeTakeFirst();
  return { computedAt: r?.computed_at ? new Date(r.computed_at).toISOString() : null, horizonTo: r?.horizon_to ? new Date(r.horizon_to).toISOString() : null };
}
