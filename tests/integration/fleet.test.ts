import fs from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import { db, clientAs, type Client } from './support';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import type { FleetResponse } from '../../src/features/fleet/fleet.queries';
import { EFFECTIVENESS_LOOKBACK_H } from '../../src/features/fleet/lookback';

/**
 * The Fleet's effectiveness per loop over windows written straight into loop_window: a window
 * without enough excitation carries no estimate, so the Fleet shows the newest estimate within the
 * look-back before the latest window, with that window's time.
 */
const RUN = Date.now().toString(36).toUpperCase().slice(-5);
const THREE = `FL-${RUN}`;
const EMPTY = `FE-${RUN}`;
const L = Math.floor(Date.now() / 60_000) * 60_000 - 10 * 60_000;
const at = (minutesBefore: number) => new Date(L - minutesBefore * 60_000);
const H = 60;

// loop 0: the two newest windows without an estimate, one 2 h earlier.
// loop 1: the latest window has one.
// loop 2: nothing within the look-back; one exactly at its edge (excluded) and one beyond.
const WINDOWS: { loop: number; before: number; eff: number | null }[] = [
  { loop: 0, before: 0, eff: null },
  { loop: 0, before: 1, eff: null },
  { loop: 0, before: 2 * H, eff: 0.931 },
  { loop: 0, before: 5 * H, eff: 0.95 },
  { loop: 1, before: 0, eff: 0.88 },
  { loop: 1, before: 1, eff: 0.9 },
  { loop: 2, before: 0, eff: null },
  { loop: 2, before: 3 * H, eff: null },
  { loop: 2, before: EFFECTIVENESS_LOOKBACK_H * H, eff: 0.97 },
  { loop: 2, before: 8 * H, eff: 0.99 },
];

let analyst: Client;

beforeAll(async () => {
  const sheetOf = (file: string, key: string): SpacecraftSheet => ({ ...spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync(`ingest/fleet/${file}.json`, 'utf8'))), spacecraft: { key, name: `Fleet ${key}` } });
  const three = await db.transaction().execute((trx) => insertSpacecraftWithSheet(trx, { ...sheetOf('MR-3', THREE), effectiveFrom: '2026-01-01T00:00:00Z' }, null));
  await db.transaction().execute((trx) => insertSpacecraftWithSheet(trx, { ...sheetOf('MR-1', EMPTY), effectiveFrom: '2026-01-01T00:00:00Z' }, null));
  await db
    .insertInto('loop_window')
    .values(WINDOWS.map((w) => ({ spacecraft_id: three.id, loop_id: w.loop, window_start: at(w.before), window_s: 60, samples: 600, effectiveness: w.eff, electrode_temp_mean_c: 24.5, margin_in_use_pct: 12 })))
    .execute();
  analyst = await clientAs('analyst');
});

async function fleet() {
  const res = await analyst.get('/api/spacecraft');
  expect(res.status).toBe(200);
  return ((await res.json()) as FleetResponse).spacecraft;
}

describe('GET /api/spacecraft: each loop’s effectiveness', () => {
  it('falls back to the newest estimate within the look-back when the latest window has none', async () => {
    const sc = (await fleet()).find((s) => s.key === THREE)!;
    expect(sc.loops.map((l) => l.id)).toEqual([0, 1, 2]);
    const [l0, l1, l2] = sc.loops;
    // loop 0: latest window is the newest, without an estimate; the one 2 h before is shown
    expect(l0!.latest).toMatchObject({ windowStart: at(0).toISOString(), effectiveness: null });
    expect(l0!.effectiveness).toEqual({ value: 0.931, windowStart: at(2 * H).toISOString() });
    // loop 1: the latest window's own estimate
    expect(l1!.effectiveness).toEqual({ value: 0.88, windowStart: at(0).toISOString() });
    expect(l1!.latest?.effectiveness).toBe(0.88);
    // loop 2: the estimate at exactly the look-back's edge and the older one are out of reach
    expect(l2!.latest).not.toBeNull();
    expect(l2!.effectiveness).toBeNull();
  });

  it('has neither for a spacecraft without analysed windows', async () => {
    const sc = (await fleet()).find((s) => s.key === EMPTY)!;
    expect(sc.loops).toHaveLength(1);
    expect(sc.loops[0]!.latest).toBeNull();
    expect(sc.loops[0]!.effectiveness).toBeNull();
  });

  it('the Fleet page shows the estimate with its window time, and a dash only when there is none', async () => {
    const html = await (await analyst.get('/')).text();
    const start = html.indexOf(`aria-label="Spacecraft ${THREE}"`);
    expect(start).toBeGreaterThan(0);
    const card = html.slice(start, html.indexOf('</article>', start));
    const rows = card.split('<tr').slice(2); // after the header row
    expect(rows).toHaveLength(3);
    const hhmm = at(2 * H).toISOString().slice(11, 16);
    expect(rows[0]).toContain('0.93');
    expect(rows[0]).toContain(`at ${hhmm}`);
    expect(rows[1]).toContain('0.88');
    expect(rows[1]).not.toMatch(/>at \d\d:\d\d</);
    expect(rows[2]).toContain('No effectiveness estimate within 6 h');
    expect(rows[2]).toContain('>—<');
  });
});
