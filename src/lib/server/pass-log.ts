import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { insertAuditEntry } from './audit';
import { findSheetInForce } from './spacecraft';
import { parseTle } from '../orbit';
import { listPasses, refreshPassesIfStale } from './passes';
import { quantityInfo } from '../limits/quantities';
import { EPOCH_2000_UNIX_S } from '../telemetry/types';
import type { SessionUser } from './auth/roles';

type Db = Kysely<Database> | Transaction<Database>;

/** A stored pass over one ground station (times Unix ms). */
export interface PassInfo {
  /** The stored pass (predicted_pass id), as the Passes page lists it. */
  id: number;
  station: string;
  stationName: string;
  aosMs: number;
  tcaMs: number;
  losMs: number;
  maxElevation_deg: number;
}

/** A note is matched to a predicted pass of its station when their AOS differ by no more than this. */
export const PASS_MATCH_MS = 2 * 60_000;
/** Trips acknowledged or resolved up to this long after LOS count as handled in the pass (the handover). */
export const HANDOVER_MS = 15 * 60_000;
/** The pass log looks back this far. */
export const PASS_LOG_LOOKBACK_MS = 24 * 3600_000;

/** Why a spacecraft has no stored passes, when something the prediction needs is missing or unusable. */
async function whyNoPasses(db: Db, spacecraftId: number, nowMs: number): Promise<string | null> {
  const [sheet, station] = await Promise.all([
    findSheetInForce(db, spacecraftId, new Date(nowMs)),
    db.selectFrom('ground_station').select('id').limit(1).executeTakeFirst(),
  ]);
  if (!sheet) return 'The spacecraft has no sheet, so its passes cannot be predicted.';
  if (!station) return 'No ground stations are registered, so there are no passes to predict.';
  try {
    parseTle(sheet.sheet.orbit.tle[0], sheet.sheet.orbit.tle[1]);
  } catch (err) {
    return `The element set of the sheet in force cannot be used: ${(err as Error).message}`;
  }
  return null;
}

/**
 * The stored passes of a spacecraft overlapping [fromMs, toMs], in AOS order: the same rows the
 * Passes page lists (each predicted with the sheet in force at its AOS, past passes kept as they
 * were predicted), recomputed first when they are stale.
 */
export async function storedPasses(db: Db, sc: { id: number; key: string }, fromMs: number, toMs: number, nowMs = Date.now()): Promise<{ passes: PassInfo[]; error: string | null }> {
  const now = new Date(nowMs);
  await refreshPassesIfStale(db, now);
  const rows = await listPasses(db, { spacecraft: sc.key, from: new Date(fromMs), to: new Date(toMs) }, now);
  const passes = rows.map((p) => ({
    id: p.id,
    station: p.station,
    stationName: p.stationName,
    aosMs: Date.parse(p.aos),
    tcaMs: Date.parse(p.tca),
    losMs: Date.parse(p.los),
    maxElevation_deg: p.maxElevation_deg,
  }));
  return { passes, error: passes.length ? null : await whyNoPasses(db, sc.id, nowMs) };
}

/** What reached the ground through the pass's station during the pass (batches received from AOS to LOS). */
export interface PassData {
  batches: number;
  accepted: number;
  realtime: number;
  playback: number;
  duplicates: number;
  rejected: number;
  /** Packets missing in sequence gaps whose later side falls in the pass. */
  missing: number;
}

/** A trip raised, acknowledged or resolved during a pass (or in its handover). */
export interface PassTrip {
  id: number;
  level: 'caution' | 'warning';
  state: 'open' | 'acknowledged' | 'resolved';
  kind: string;
  loopId: number | null;
  quantityLabel: string;
  onsetAt: string;
  acknowledgedAt: string | null;
  acknowledgedBy: string | null;
  acknowledgeNote: string | null;
}

export interface PassNote {
  id: number;
  note: string;
  author: string | null;
  createdAt: string;
}

/** One pass as the pass log lists it (times ISO, UTC). */
export interface PassLogEntry {
  /** The stored pass this entry is (as the Passes page lists it); null for a note on a pass no longer predicted. */
  passId: number | null;
  station: string;
  stationName: string;
  aos: string;
  los: string;
  maxElevation_deg: number | null;
  status: 'in progress' | 'ended';
  notes: PassNote[];
  trips: PassTrip[];
  data: PassData;
}

const tt = (ms: number) => Math.floor((ms / 1000 - EPOCH_2000_UNIX_S) * 65536);

/** Counted as the Passes page counts a pass: batches of this spacecraft through this station from AOS to LOS. */
async function passData(db: Db, spacecraftId: number, station: string, aosMs: number, losMs: number): Promise<PassData> {
  const [b, g] = await Promise.all([
    sql<Omit<PassData, 'missing'>>`
      SELECT count(*)::int AS batches, coalesce(sum(accepted), 0)::int AS accepted, coalesce(sum(realtime), 0)::int AS realtime,
             coalesce(sum(playback), 0)::int AS playback, coalesce(sum(duplicates), 0)::int AS duplicates, coalesce(sum(rejected), 0)::int AS rejected
      FROM ingest_batch
      WHERE spacecraft_id = ${spacecraftId} AND station_id = (SELECT id FROM ground_station WHERE key = ${station})
        AND received_at >= ${new Date(aosMs)} AND received_at <= ${new Date(losMs)}`.execute(db),
    sql<{ missing: number }>`
      SELECT coalesce(sum(missing), 0)::int AS missing FROM sequence_gap
      WHERE spacecraft_id = ${spacecraftId} AND before_time_tag BETWEEN ${tt(aosMs)} AND ${tt(losMs)}`.execute(db),
  ]);
  return { ...b.rows[0]!, missing: g.rows[0]!.missing };
}

async function passTrips(db: Db, spacecraftId: number, aosMs: number, losMs: number): Promise<PassTrip[]> {
  const aos = new Date(aosMs);
  const los = new Date(losMs);
  const handover = new Date(losMs + HANDOVER_MS);
  const rows = await db
    .selectFrom('trip as t')
    .leftJoin('app_user as u', 'u.id', 't.acknowledged_by')
    .select(['t.id', 't.level', 't.state', 't.kind', 't.loop_id', 't.quantity', 't.onset_at', 't.acknowledged_at', 't.acknowledge_note', 'u.name as acknowledged_by'])
    .where('t.spacecraft_id', '=', spacecraftId)
    .where((eb) =>
      eb.or([
        eb.and([eb('t.onset_at', '>=', aos), eb('t.onset_at', '<=', los)]),
        eb.and([eb('t.acknowledged_at', '>=', aos), eb('t.acknowledged_at', '<=', handover)]),
        eb.and([eb('t.resolved_at', '>=', aos), eb('t.resolved_at', '<=', handover)]),
      ]),
    )
    .orderBy('t.onset_at')
    .orderBy('t.id')
    .execute();
  return rows.map((r) => ({
    id: r.id,
    level: r.level,
    state: r.state,
    kind: r.kind,
    loopId: r.loop_id,
    quantityLabel: quantityInfo(r.quantity)?.label ?? r.quantity,
    onsetAt: r.onset_at.toISOString(),
    acknowledgedAt: r.acknowledged_at ? r.acknowledged_at.toISOString() : null,
    acknowledgedBy: r.acknowledged_by,
    acknowledgeNote: r.acknowledge_note,
  }));
}

/**
 * The pass log of a spacecraft: passes of the last day that have begun, newest first, each with its
 * handover notes, the trips handled in it and the data received; notes on passes no longer
 * predicted (a new element set) are kept as their own entries.
 */
export async function listPassLog(db: Db, sc: { id: number; key: string }, nowMs = Date.now()): Promise<{ passes: PassLogEntry[]; error: string | null }> {
  const fromMs = nowMs - PASS_LOG_LOOKBACK_MS;
  const [{ passes, error }, notes] = await Promise.all([
    storedPasses(db, sc, fromMs, nowMs, nowMs),
    db
      .selectFrom('pass_note as n')
      .innerJoin('ground_station as g', 'g.id', 'n.station_id')
      .leftJoin('app_user as u', 'u.id', 'n.author_id')
      .select(['n.id', 'n.aos_at', 'n.los_at', 'n.note', 'n.created_at', 'g.key as station', 'g.name as station_name', 'u.name as author'])
      .where('n.spacecraft_id', '=', sc.id)
      .where('n.los_at', '>=', new Date(fromMs))
      .orderBy('n.created_at')
      .execute(),
  ]);
  const begun = passes.filter((p) => p.aosMs <= nowMs);
  const entries = begun.map((p) => ({ passId: p.id as number | null, station: p.station, stationName: p.stationName, aosMs: p.aosMs, losMs: p.losMs, maxElevation_deg: p.maxElevation_deg as number | null, notes: [] as PassNote[] }));
  for (const n of notes) {
    const note = { id: n.id, note: n.note, author: n.author, createdAt: n.created_at.toISOString() };
    const hit = entries.find((e) => e.station === n.station && Math.abs(e.aosMs - n.aos_at.getTime()) <= PASS_MATCH_MS);
    if (hit) hit.notes.push(note);
    else entries.push({ passId: null, station: n.station, stationName: n.station_name, aosMs: n.aos_at.getTime(), losMs: n.los_at.getTime(), maxElevation_deg: null, notes: [note] });
  }
  entries.sort((a, b) => b.aosMs - a.aosMs);
  const out: PassLogEntry[] = [];
  for (const e of entries) {
    const [data, trips] = await Promise.all([passData(db, sc.id, e.station, e.aosMs, e.losMs), passTrips(db, sc.id, e.aosMs, e.losMs)]);
    out.push({
      passId: e.passId,
      station: e.station,
      stationName: e.stationName,
      aos: new Date(e.aosMs).toISOString(),
      los: new Date(e.losMs).toISOString(),
      maxElevation_deg: e.maxElevation_deg,
      status: e.losMs <= nowMs ? 'ended' : 'in progress',
      notes: e.notes,
      trips,
      data,
    });
  }
  return { passes: out, error };
}

/**
 * Store a handover note on a pass that has ended. The pass is named by station and AOS; it must be
 * a predicted pass of that station (AOS within PASS_MATCH_MS), and its predicted AOS and LOS are stored.
 */
export async function insertPassNote(
  db: Kysely<Database>,
  sc: { id: number; key: string },
  input: { station: string; aos: string; note: string },
  user: SessionUser,
  nowMs = Date.now(),
): Promise<PassLogEntry> {
  const aosMs = new Date(input.aos).getTime();
  const { passes, error } = await storedPasses(db, sc, aosMs - 3 * 3600_000, aosMs + 3 * 3600_000, nowMs);
  if (error) throw new HttpError('CONFLICT', error);
  const pass = passes.find((p) => p.station === input.station && Math.abs(p.aosMs - aosMs) <= PASS_MATCH_MS);
  if (!pass) throw new HttpError('BAD_REQUEST', `No predicted pass of ${sc.key} over ${input.station} begins near ${input.aos}.`, { aos: ['pick one of the passes the log lists'] });
  if (pass.losMs < nowMs - PASS_LOG_LOOKBACK_MS) throw new HttpError('BAD_REQUEST', 'That pass ended more than a day ago; the pass log takes notes on the passes of the last day.', { aos: ['pick one of the passes the log lists'] });
  if (pass.losMs > nowMs) throw new HttpError('CONFLICT', `The pass over ${pass.stationName} is still in progress; write the handover note after LOS (${new Date(pass.losMs).toISOString().slice(11, 19)} UTC).`);
  const station = await db.selectFrom('ground_station').select('id').where('key', '=', pass.station).executeTakeFirstOrThrow();
  await db.transaction().execute(async (trx) => {
    const row = await trx
      .insertInto('pass_note')
      .values({ spacecraft_id: sc.id, station_id: station.id, aos_at: new Date(pass.aosMs), los_at: new Date(pass.losMs), note: input.note, author_id: user.id })
      .returning('id')
      .executeTakeFirstOrThrow();
    await insertAuditEntry(trx, { actorId: user.id, action: 'pass.note', targetType: 'pass_note', targetId: row.id, detail: { spacecraft: sc.key, station: pass.station, aos: new Date(pass.aosMs).toISOString() } });
  });
  const log = await listPassLog(db, sc, nowMs);
  const entry = log.passes.find((e) => e.station === pass.station && Math.abs(new Date(e.aos).getTime() - pass.aosMs) <= PASS_MATCH_MS);
  if (!entry) throw new HttpError('INTERNAL_SERVER_ERROR', 'The note was stored but its pass could not be read back.');
  return entry;
}
