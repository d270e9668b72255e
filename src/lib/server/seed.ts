import fs from 'node:fs';
import path from 'node:path';
import { sql, type Kysely } from 'kysely';
import type { Database, Role } from './db/schema';
import { spacecraftSheetSchema } from '../spacecraft-sheet.schema';
import { findSpacecraftByKey, insertSheet, insertSpacecraftWithSheet } from './spacecraft';
import { findUserByEmail, insertUser } from './users';
import { insertLimitSet } from './limit-sets';
import { defaultRulesFor } from '../limits/defaults';

/** Invented demo people: one account per role, plus a second engineer for reviews. */
export const DEMO_USERS: { email: string; name: string; roles: Role[] }[] = [
  { email: 'operator@millrace.test', name: 'Tomas Reyes-Lind', roles: ['operator'] },
  { email: 'analyst@millrace.test', name: 'Priya Halvorsen', roles: ['analyst'] },
  { email: 'engineer@millrace.test', name: 'Mateo Brandt', roles: ['engineer'] },
  { email: 'engineer2@millrace.test', name: 'Yuki Adeyemi', roles: ['engineer'] },
  { email: 'admin@millrace.test', name: 'Sana Kowalczyk', roles: ['admin'] },
];

/**
 * Invented ground stations at plausible latitudes. The last three (all invented too) keep the demo
 * lively: a high-latitude site near 78° N sees a polar orbit nearly every revolution, and two
 * mid-latitude sites in the Americas and East Asia cover the 53° orbit, so that each demo spacecraft
 * has a pass about once an hour on average (one every 55–71 min over three days).
 */
export const DEMO_STATIONS = [
  { key: 'north-fell', name: 'North Fell', latitude_deg: 67.88, longitude_deg: 21.07, altitude_m: 380, elevation_mask_deg: 5 },
  { key: 'ribeira', name: 'Ribeira', latitude_deg: 41.15, longitude_deg: -8.61, altitude_m: 90, elevation_mask_deg: 10 },
  { key: 'karoo-ridge', name: 'Karoo Ridge', latitude_deg: -31.52, longitude_deg: 21.93, altitude_m: 1210, elevation_mask_deg: 10 },
  { key: 'isbre-point', name: 'Isbre Point', latitude_deg: 78.2, longitude_deg: 15.6, altitude_m: 450, elevation_mask_deg: 5 },
  { key: 'high-mesa', name: 'High Mesa', latitude_deg: 39.7, longitude_deg: -104.9, altitude_m: 1620, elevation_mask_deg: 10 },
  { key: 'kita-cape', name: 'Kita Cape', latitude_deg: 43.06, longitude_deg: 141.35, altitude_m: 20, elevation_mask_deg: 10 },
];

/** The demo fleet's sheets, from ingest/fleet/*.json (the same files the simulated feed flies). */
export function loadDemoSheets(folder = path.resolve(process.cwd(), 'ingest/fleet')) {
  return fs
    .readdirSync(folder)
    .filter((f) => f.endsWith('.json'))
    .sort()
    .map((f) => spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync(path.join(folder, f), 'utf8'))));
}

/** Tables the seed owns, in an order safe to truncate. */
async function appTables(db: Kysely<Database>): Promise<string[]> {
  const r = await sql<{ tablename: string }>`
    SELECT tablename FROM pg_tables
    WHERE schemaname = 'public' AND tablename NOT LIKE 'kysely_%'`.execute(db);
  return r.rows.map((x) => x.tablename);
}

/** Remove every row of the app's tables (tests and `--reset` only). */
export async function truncateAll(db: Kysely<Database>): Promise<void> {
  const tables = await appTables(db);
  if (tables.length) await sql.raw(`TRUNCATE ${tables.map((t) => `"${t}"`).join(', ')} RESTART IDENTITY CASCADE`).execute(db);
}

/** Insert whatever of the demo data is missing; running it twice changes nothing. */
export async function seedDemo(db: Kysely<Database>, password: string): Promise<{ users: number; spacecraft: number; stations: number }> {
  let users = 0;
  let spacecraft = 0;
  let stations = 0;
  await db.transaction().execute(async (trx) => {
    for (const u of DEMO_USERS) {
      if (await findUserByEmail(trx, u.email)) continue;
      await insertUser(trx, { ...u, password });
      users++;
    }
    for (const s of DEMO_STATIONS) {
      const r = await trx.insertInto('ground_station').values(s).onConflict((oc) => oc.column('key').doNothing()).executeTakeFirst();
      stations += Number(r.numInsertedOrUpdatedRows ?? 0);
    }
    for (const sheet of loadDemoSheets()) {
      const existing = await findSpacecraftByKey(trx, sheet.spacecraft.key);
      if (!existing) {
        await insertSpacecraftWithSheet(trx, sheet, null);
        spacecraft++;
        continue;
      }
      const has = await trx
        .selectFrom('spacecraft_sheet')
        .select('id')
        .where('spacecraft_id', '=', existing.id)
        .where('effective_from', '=', new Date(sheet.effectiveFrom))
        .executeTakeFirst();
      if (!has) await insertSheet(trx, existing.id, sheet, null);
    }
    // Each demo spacecraft starts with the default limits active (see src/lib/limits/defaults.ts),
    // its current limits taken from the rated currents of its newest sheet.
    for (const sc of await trx.selectFrom('spacecraft').select(['id', 'key']).execute()) {
      const any = await trx.selectFrom('limit_set').select('id').where('spacecraft_id', '=', sc.id).executeTakeFirst();
      if (any) continue;
      const newest = await trx.selectFrom('spacecraft_sheet').select('sheet').where('spacecraft_id', '=', sc.id).orderBy('effective_from', 'desc').limit(1).executeTakeFirst();
      if (!newest) throw new Error(`seed: spacecraft ${sc.key} has no sheet, so its default limits cannot be derived`);
      const sheet = spacecraftSheetSchema.parse(newest.sheet);
      await insertLimitSet(trx, sc.id, { name: 'Default limits', notes: 'Seeded defaults; each limit says where it comes from.', rules: defaultRulesFor(sheet) }, null, 'active');
    }
  });
  return { users, spacecraft, stations };
}
