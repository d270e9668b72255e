import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../spacecraft-sheet.schema';
import { insertAuditEntry } from './audit';
import { HttpError } from './http';
import { EPOCH_2000_UNIX_S } from '../telemetry/types';
import { EFFECTIVENESS_LOOKBACK_H } from '../../features/fleet/lookback';

type Db = Kysely<Database> | Transaction<Database>;

/** A loop as the Fleet shows it. */
export interface FleetLoop {
  id: number;
  /** nominal · caution · warning · stale, from live trips and data age. */
  state: 'nominal' | 'caution' | 'warning' | 'stale';
  /** Latest analysed window of the loop, if any. */
  latest: { windowStart: string; effectiveness: number | null; electrodeTemp_c: number | null; marginInUse_pct: number | null } | null;
  /**
   * The newest effectiveness estimate (kT over the ideal one) within EFFECTIVENESS_LOOKBACK_H hours
   * before the latest window, with that window's start; null when there is none. Windows with too
   * little current excitation carry no estimate, so the latest window alone is often blank.
   */
  effectiveness: { value: number; windowStart: string } | null;
  liveTrips: number;
  shape: SpacecraftSheet['loops'][number]['shape'];
  axis: [number, number, number];
  ratedCurrent_A: number;
  pumpStations: number;
}

export interface FleetSpacecraft {
  key: string;
  name: string;
  /** Time of the newest sample received (ISO), or null. */
  lastDataAt: string | null;
  /** Live trips of the whole spacecraft (not of one loop). */
  bodyTrips: { level: 'caution' | 'warning'; n: number }[];
  sheetEffectiveFrom: string | null;
  loops: FleetLoop[];
}

/** Find a spacecraft by key. */
export function findSpacecraftByKey(db: Db, key: string) {
  return db.selectFrom('spacecraft').select(['id', 'key', 'name', 'created_at']).where('key', '=', key).executeTakeFirst();
}

/** The sheet in force at time t (latest effective_from ≤ t), or the earliest one when t precedes all. */
export async function findSheetInForce(db: Db, spacecraftId: number, at: Date): Promise<{ id: number; effectiveFrom: Date; sheet: SpacecraftSheet } | undefined> {
  const row =
    (await db
      .selectFrom('spacecraft_sheet')
      .select(['id', 'effective_from', 'sheet'])
      .where('spacecraft_id', '=', spacecraftId)
      .where('effective_from', '<=', at)
      .orderBy('effective_from', 'desc')
      .limit(1)
      .executeTakeFirst()) ??
    (await db
      .selectFrom('spacecraft_sheet')
      .select(['id', 'effective_from', 'sheet'])
      .where('spacecraft_id', '=', spacecraftId)
      .orderBy('effective_from', 'asc')
      .limit(1)
      .executeTakeFirst());
  if (!row) return undefined;
  return { id: row.id, effectiveFrom: row.effective_from, sheet: spacecraftSheetSchema.parse(row.sheet) };
}

/** Pick the sheet in force at `at` from a spacecraft's sheets (earliest when `at` precedes them all). */
export function pickSheetInForce<T extends { effective_from: Date }>(sheets: readonly T[], at: Date): T | undefined {
  let best: T | undefined;
  for (const s of sheets) {
    if (s.effective_from <= at && (!best || s.effective_from > best.effective_from)) best = s;
  }
  return best ?? [...sheets].sort((x, y) => x.effective_from.getTime() - y.effective_from.getTime())[0];
}

/** Data older than this makes a loop stale. */
export const STALE_AFTER_S = 120;

/** Every spacecraft with the loops of its sheet in force now and each loop's health. */
export async function listFleet(db: Db, now = new Date()): Promise<FleetSpacecraft[]> {
  const [craft, sheets, lastData, latest, trips] = await Promise.all([
    db.selectFrom('spacecraft').select(['id', 'key', 'name']).orderBy('key').execute(),
    db.selectFrom('spacecraft_sheet').select(['spacecraft_id', 'effective_from', 'sheet']).execute(),
    sql<{ spacecraft_id: number; tt: number | null }>`
      SELECT spacecraft_id, max(last_time_tag) AS tt FROM ingest_batch WHERE received_at > ${new Date(now.getTime() - 7 * 86_400_000)} GROUP BY 1`.execute(db),
    sql<{ spacecraft_id: number; loop_id: number; window_start: Date; effectiveness: number | null; electrode_temp_mean_c: number | null; margin_in_use_pct: number | null; eff_value: number | null; eff_at: Date | null }>`
      SELECT l.*, e.effectiveness AS eff_value, e.window_start AS eff_at
      FROM (SELECT DISTINCT ON (spacecraft_id, loop_id) spacecraft_id, loop_id, window_start, effectiveness, electrode_temp_mean_c, margin_in_use_pct
            FROM loop_window ORDER BY spacecraft_id, loop_id, window_start DESC) l
      LEFT JOIN LATERAL (
        SELECT w.window_start, w.effectiveness FROM loop_window w
        WHERE w.spacecraft_id = l.spacecraft_id AND w.loop_id = l.loop_id AND w.effectiveness IS NOT NULL
          AND w.window_start <= l.window_start AND w.window_start > l.window_start - make_interval(hours => ${EFFECTIVENESS_LOOKBACK_H})
        ORDER BY w.window_start DESC LIMIT 1) e ON true`.execute(db),
    sql<{ spacecraft_id: number; loop_id: number | null; level: 'caution' | 'warning'; n: number }>`
      SELECT spacecraft_id, loop_id, level, count(*)::int AS n FROM trip WHERE state <> 'resolved' AND cleared_at IS NULL GROUP BY 1, 2, 3`.execute(db),
  ]);
  return craft.map((c) => {
    const cur = pickSheetInForce(sheets.filter((s) => s.spacecraft_id === c.id), now);
    const sheet = cur ? (cur.sheet as SpacecraftSheet) : null;
    const tt = lastData.rows.find((r) => r.spacecraft_id === c.id)?.tt;
    const lastMs = tt === null || tt === undefined ? null : (EPOCH_2000_UNIX_S + Number(tt) / 65536) * 1000;
    const stale = lastMs === null || now.getTime() - lastMs > STALE_AFTER_S * 1000;
    const myTrips = trips.rows.filter((t) => t.spacecraft_id === c.id);
    return {
      key: c.key,
      name: c.name,
      lastDataAt: lastMs === null ? null : new Date(lastMs).toISOString(),
      bodyTrips: myTrips.filter((t) => t.loop_id === null).map((t) => ({ level: t.level, n: t.n })),
      sheetEffectiveFrom: cur ? cur.effective_from.toISOString() : null,
      loops: (sheet?.loops ?? []).map((l) => {
        const lt = myTrips.filter((t) => t.loop_id === l.id);
        const w = latest.rows.find((r) => r.spacecraft_id === c.id && r.loop_id === l.id);
        const state: FleetLoop['state'] = lt.some((t) => t.level === 'warning') ? 'warning' : lt.length ? 'caution' : stale ? 'stale' : 'nominal';
        return {
        id: l.id,
        state,
        liveTrips: lt.reduce((n, t) => n + t.n, 0),
        latest: w ? { windowStart: w.window_start.toISOString(), effectiveness: w.effectiveness, electrodeTemp_c: w.electrode_temp_mean_c, marginInUse_pct: w.margin_in_use_pct } : null,
        effectiveness: w && w.eff_value !== null && w.eff_at !== null ? { value: w.eff_value, windowStart: w.eff_at.toISOString() } : null,
        shape: l.shape,
        axis: l.axis,
        ratedCurrent_A: l.ratedCurrent_A,
        pumpStations: l.pumpStations.length,
        };
      }),
    };
  });
}

/** Create a spacecraft from its first sheet; 409 naming `spacecraft.key` when the key is taken. */
export async function insertSpacecraftWithSheet(db: Db, sheet: SpacecraftSheet, actorId: string | null): Promise<{ id: number; key: string }> {
  const sc = await db
    .insertInto('spacecraft')
    .values({ key: sheet.spacecraft.key, name: sheet.spacecraft.name })
    .returning(['id', 'key'])
    .executeTakeFirstOrThrow()
    .catch((err: unknown) => {
      // The unique key decides (a check before the insert would race a concurrent create).
      const e = err as { code?: string; constraint?: string };
      if (e.code === '23505' && e.constraint === 'spacecraft_key_key') {
        const key = sheet.spacecraft.key;
        throw new HttpError('CONFLICT', `A spacecraft with the key ${key} already exists; a new sheet for it goes to /api/spacecraft/${key}/sheets.`, {
          'spacecraft.key': [`${key} is taken by an existing spacecraft`],
        });
      }
      throw err;
    });
  await insertSheet(db, sc.id, sheet, actorId);
  await insertAuditEntry(db, { actorId, action: 'spacecraft.create', targetType: 'spacecraft', targetId: sc.key, detail: { name: sheet.spacecraft.name } });
  return sc;
}

/** Store a validated sheet for a spacecraft. */
export async function insertSheet(db: Db, spacecraftId: number, sheet: SpacecraftSheet, actorId: string | null): Promise<number> {
  const row = await db
    .insertInto('spacecraft_sheet')
    .values({ spacecraft_id: spacecraftId, effective_from: sheet.effectiveFrom, sheet: JSON.stringify(sheet), uploaded_by: actorId })
    .returning('id')
    .executeTakeFirstOrThrow();
  return row.id;
}
