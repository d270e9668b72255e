// Fly a scenario on a fresh test spacecraft and ingest it, as the trips tests do: shared by the
// mail and job tests.
import fs from 'node:fs';
import { db } from './support';
import { pool } from '../../src/lib/server/db';
import { generatePackets } from '../../ingest/generator';
import { parseScenario } from '../../ingest/scenario.schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import type { LimitRuleInput } from '../../src/lib/limits/limit-set.schema';
import { ingestBody } from '../../src/lib/server/ingest';

let counter = 0;

export const sheetOf = (file: string, key: string): SpacecraftSheet => {
  const s = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync(`ingest/fleet/${file}.json`, 'utf8')));
  return { ...s, spacecraft: { key, name: `Test ${key}` } };
};

/** A fresh spacecraft (sheet `file`) flying `scenario` for `minutes` up to `endMs`, ingested, with `rules` active. */
export async function fly(file: string, scenario: string | object, minutes: number, opts: { endMs?: number; rules: LimitRuleInput[]; prefix?: string }) {
  const key = `${opts.prefix ?? 'F'}${Date.now().toString(36).toUpperCase().slice(-5)}-${++counter}`;
  const sheet = sheetOf(file, key);
  const sc = await db.transaction().execute(async (trx) => {
    const created = await insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2026-01-01T00:00:00Z' }, null);
    await insertLimitSet(trx, created.id, { name: 'Test limits', notes: '', rules: opts.rules }, null, 'active');
    return created;
  });
  const parsed = parseScenario(typeof scenario === 'string' ? JSON.parse(fs.readFileSync(`ingest/scenarios/${scenario}.json`, 'utf8')) : scenario);
  const endMs = opts.endMs ?? Math.floor(Date.now() / 60_000) * 60_000 - 60_000;
  const startMs = endMs - minutes * 60_000;
  for (const chunk of generatePackets({ sheet, scenario: parsed, startMs, durationMs: minutes * 60_000, chunkBytes: 4 << 20 })) {
    await ingestBody(pool, db, chunk.slice(), { spacecraftId: sc.id, stationId: null, tokenId: null }, endMs + 5_000);
  }
  return { sc: { id: sc.id, key }, startMs, endMs };
}
