import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { insertAuditEntry } from './audit';

type Db = Kysely<Database> | Transaction<Database>;

/** A ground station with how much it has been used. */
export interface StationRow {
  id: number;
  key: string;
  name: string;
  latitude_deg: number;
  longitude_deg: number;
  altitude_m: number;
  elevation_mask_deg: number;
  /** Ingest requests and upload chunks received through the station. */
  batches: number;
  /** Pass files uploaded as received through the station. */
  uploads: number;
  /** Predicted passes of any spacecraft in the next 24 h. */
  passesNext24h: number;
}

const FIELDS = ['id', 'key', 'name', 'latitude_deg', 'longitude_deg', 'altitude_m', 'elevation_mask_deg'] as const;
type Station = Pick<StationRow, (typeof FIELDS)[number]>;
/** A new station's fields, as validated by createStationInputSchema. */
export type NewStation = Omit<Station, 'id'>;
/** Changed fields, as validated by updateStationInputSchema. */
export type StationPatch = Partial<Omit<Station, 'id' | 'key'>>;

/** Every ground station, by key, with its use. */
export async function listStations(db: Db, now: Date = new Date()): Promise<StationRow[]> {
  const r = await sql<StationRow>`
    SELECT g.id, g.key, g.name, g.latitude_deg, g.longitude_deg, g.altitude_m, g.elevation_mask_deg,
           (SELECT count(*)::int FROM ingest_batch b WHERE b.station_id = g.id) AS batches,
           (SELECT count(*)::int FROM packet_upload u WHERE u.station_id = g.id) AS uploads,
           (SELECT count(*)::int FROM predicted_pass p WHERE p.station_id = g.id AND p.los_at > ${now} AND p.aos_at < ${new Date(now.getTime() + 86_400_000)}) AS "passesNext24h"
    FROM ground_station g ORDER BY g.key`.execute(db);
  return r.rows;
}

/** A ground station by key. */
export function findStationByKey(db: Db, key: string): Promise<Station | undefined> {
  return db.selectFrom('ground_station').select(FIELDS).where('key', '=', key).executeTakeFirst();
}

/** Add a ground station (409 with a field error when the key is taken); audited. */
export async function insertStation(db: Db, input: NewStation, actorId: string | null): Promise<Station> {
  if (await findStationByKey(db, input.key)) {
    throw new HttpError('CONFLICT', `A ground station with the key ${input.key} exists already.`, { key: [`${input.key} is taken: choose another key.`] });
  }
  const row = await db.insertInto('ground_station').values(input).returning(FIELDS).executeTakeFirstOrThrow();
  const { id: _id, ...detail } = row;
  await insertAuditEntry(db, { actorId, action: 'station.create', targetType: 'ground_station', targetId: row.key, detail });
  return row;
}

/** Change a ground station's fields (404 when there is none); audited with the values before and after. */
export async function updateStation(db: Db, key: string, patch: StationPatch, actorId: string | null): Promise<Station> {
  const before = await db.selectFrom('ground_station').select(FIELDS).where('key', '=', key).forUpdate().executeTakeFirst();
  if (!before) throw new HttpError('NOT_FOUND', `No ground station has the key ${key}.`);
  const changes = Object.fromEntries(Object.entries(patch).filter(([k, v]) => v !== undefined && before[k as keyof Station] !== v)) as StationPatch;
  if (Object.keys(changes).length === 0) return before;
  const after = await db.updateTable('ground_station').set(changes).where('id', '=', before.id).returning(FIELDS).executeTakeFirstOrThrow();
  const was = Object.fromEntries(Object.keys(changes).map((k) => [k, before[k as keyof Station]]));
  await insertAuditEntry(db, { actorId, action: 'station.update', targetType: 'ground_station', targetId: key, detail: { before: was, after: changes } });
  return after;
}

/** Delete a ground station that nothing was ever received through (404 when missing, 409 when used); audited. */
export async function deleteStation(db: Db, key: string, actorId: string | null): Promise<void> {
  const st = await db.selectFrom('ground_station').select(FIELDS).where('key', '=', key).forUpdate().executeTakeFirst();
  if (!st) throw new HttpError('NOT_FOUND', `No ground station has the key ${key}.`);
  const [batches, uploads] = await Promise.all([
    db.selectFrom('ingest_batch').select((eb) => eb.fn.countAll<number>().as('n')).where('station_id', '=', st.id).executeTakeFirstOrThrow(),
    db.selectFrom('packet_upload').select((eb) => eb.fn.countAll<number>().as('n')).where('station_id', '=', st.id).executeTakeFirstOrThrow(),
  ]);
  if (Number(batches.n) > 0 || Number(uploads.n) > 0) {
    throw new HttpError(
      'CONFLICT',
      `${st.name} (${key}) is in use: telemetry arrived through it (${Number(batches.n)} ingest batches, ${Number(uploads.n)} uploads), so it is kept for the record. Change its fields instead.`,
    );
  }
  await db.deleteFrom('ground_station').where('id', '=', st.id).execute();
  const { id: _id, ...detail } = st;
  await insertAuditEntry(db, { actorId, action: 'station.delete', targetType: 'ground_station', targetId: key, detail });
}
