import { type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../spacecraft-sheet.schema';
import { insertAuditEntry } from './audit';

type Db = Kysely<Database> | Transaction<Database>;

/** A loop as the Fleet shows it. */
export interface FleetLoop {
  id: number;
  shape: SpacecraftSheet['loops'][number]['shape'];
  axis: [number, number, number];
  ratedCurrent_A: number;
  pumpStations: number;
}

export interface FleetSpacecraft {
  key: string;
  name: string;
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

/** Every spacecraft with the loops of its sheet in force now. */
export async function listFleet(db: Db, now = new Date()): Promise<FleetSpacecraft[]> {
  const [craft, sheets] = await Promise.all([
    db.selectFrom('spacecraft').select(['id', 'key', 'name']).orderBy('key').execute(),
    db.selectFrom('spacecraft_sheet').select(['spacecraft_id', 'effective_from', 'sheet']).execute(),
  ]);
  return craft.map((c) => {
    const cur = pickSheetInForce(sheets.filter((s) => s.spacecraft_id === c.id), now);
    const sheet = cur ? (cur.sheet as SpacecraftSheet) : null;
    return {
      key: c.key,
      name: c.name,
      sheetEffectiveFrom: cur ? cur.effective_from.toISOString() : null,
      loops: (sheet?.loops ?? []).map((l) => ({
        id: l.id,
        shape: l.shape,
        axis: l.axis,
        ratedCurrent_A: l.ratedCurrent_A,
        pumpStations: l.pumpStations.length,
      })),
    };
  });
}

/** Create a spacecraft from its first sheet (or add the sheet when the key exists and upsert is set). */
export async function insertSpacecraftWithSheet(db: Db, sheet: SpacecraftSheet, actorId: string | null): Promise<{ id: number; key: string }> {
  const sc = await db
    .insertInto('spacecraft')
    .values({ key: sheet.spacecraft.key, name: sheet.spacecraft.name })
    .returning(['id', 'key'])
    .executeTakeFirstOrThrow();
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
