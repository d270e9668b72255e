import fs from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import { db, clientAs, Client } from './support';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import type { TripState } from '../../src/lib/server/db/schema';
import { tripRow } from './trip-rows';

/**
 * GET /api/trips over trips written straight into the table: two fresh spacecraft, a known set of
 * trips with onsets in a span of its own (2011) so no other test's trips fall in it.
 */
const RUN = Date.now().toString(36).toUpperCase().slice(-5);
const A = `TA-${RUN}`;
const B = `TB-${RUN}`;
const T0 = Date.UTC(2011, 5, 1, 0, 0);
const min = (n: number) => new Date(T0 + n * 60_000);

interface Seed {
  sc: string;
  loop: number | null;
  kind: string;
  quantity: string;
  level: 'caution' | 'warning';
  state: TripState;
  onsetMin: number;
}

// 12 trips on A and 3 on B, onsets one minute apart (A: minutes 0–11, B: 20–22).
const SEEDS: Seed[] = [
  ...Array.from({ length: 12 }, (_, i): Seed => ({
    sc: A,
    loop: i % 4 === 3 ? null : i % 3,
    kind: i % 4 === 3 ? 'telemetry-gap' : i % 2 ? 'temperature-rise' : 'torque-constant-drift',
    quantity: i % 4 === 3 ? 'missing_packets' : i % 2 ? 'electrode_temp_mean_c' : 'effectiveness',
    level: i % 5 === 0 ? 'warning' : 'caution',
    state: (['open', 'acknowledged', 'resolved'] as const)[i % 3]!,
    onsetMin: i,
  })),
  { sc: B, loop: 0, kind: 'flow-pulsation', quantity: 'pulsation_peak', level: 'caution', state: 'open', onsetMin: 20 },
  { sc: B, loop: 1, kind: 'flow-pulsation', quantity: 'pulsation_peak', level: 'warning', state: 'open', onsetMin: 21 },
  { sc: B, loop: 1, kind: 'momentum-margin', quantity: 'margin_in_use_pct', level: 'caution', state: 'resolved', onsetMin: 22 },
];

const ids = new Map<Seed, number>();
let analyst: Client;

type TripsBody = { total: number; page: number; pageSize: number; nextPage: number | null; trips: { id: number; spacecraft: string; loop_id: number | null; kind: string; state: string; level: string; onset_at: string; quantityLabel: string }[] };
type ErrorBody = { error: { code: string; message: string; fields?: Record<string, string[]> } };

async function list(query: string): Promise<TripsBody> {
  const res = await analyst.get(`/api/trips?${query}`);
  expect(res.status, `${query}: ${res.status}`).toBe(200);
  return (await res.json()) as TripsBody;
}

async function bad(query: string): Promise<Record<string, string[]>> {
  const res = await analyst.get(`/api/trips?${query}`);
  expect(res.status, query).toBe(400);
  const body = (await res.json()) as ErrorBody;
  expect(body.error.code).toBe('BAD_REQUEST');
  return body.error.fields ?? {};
}

/** Ids of the seeds that satisfy a predicate, newest onset first (the API's default order). */
const expected = (pred: (s: Seed) => boolean) =>
  SEEDS.filter(pred)
    .sort((x, y) => y.onsetMin - x.onsetMin)
    .map((s) => ids.get(s)!);

beforeAll(async () => {
  const raw = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8')));
  const scIds = new Map<string, number>();
  for (const key of [A, B]) {
    const sheet: SpacecraftSheet = { ...raw, spacecraft: { key, name: `Trips API ${key}` } };
    const sc = await db.transaction().execute((trx) => insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2010-01-01T00:00:00Z' }, null));
    scIds.set(key, sc.id);
  }
  for (const s of SEEDS) {
    const onset = min(s.onsetMin);
    const row = await db
      .insertInto('trip')
      .values(
        tripRow({ spacecraftId: scIds.get(s.sc)!, loop: s.loop, kind: s.kind, quantity: s.quantity, level: s.level, state: s.state, onset }, 30_000, {
          value: 1,
          peak_value: 1,
          limit_value: 0.5,
          last_value: 1,
          evidence: JSON.stringify({}),
        }),
      )
      .returning('id')
      .executeTakeFirstOrThrow();
    ids.set(s, row.id);
  }
  analyst = await clientAs('analyst');
});

describe('GET /api/trips filters', () => {
  it('filters by spacecraft', async () => {
    const a = await list(`spacecraft=${A}&pageSize=200`);
    expect(a.total).toBe(12);
    expect(a.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === A));
    expect(new Set(a.trips.map((t) => t.spacecraft))).toEqual(new Set([A]));
    const b = await list(`spacecraft=${B}`);
    expect(b.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === B));
  });

  it('filters by state, by kind and by both', async () => {
    for (const state of ['open', 'acknowledged', 'resolved']) {
      const r = await list(`spacecraft=${A}&state=${state}`);
      expect(r.trips.map((t) => t.id), state).toEqual(expected((s) => s.sc === A && s.state === state));
      expect(r.total).toBe(4);
    }
    const gaps = await list(`spacecraft=${A}&kind=telemetry-gap`);
    expect(gaps.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === A && s.kind === 'telemetry-gap'));
    expect(gaps.total).toBe(3);
    const both = await list(`spacecraft=${A}&kind=torque-constant-drift&state=open`);
    expect(both.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === A && s.kind === 'torque-constant-drift' && s.state === 'open'));
    expect(both.total).toBeGreaterThan(0);
  });

  it('filters by loop, and "none" gives the trips of the whole spacecraft', async () => {
    for (const loop of [0, 1, 2, 3]) {
      const r = await list(`spacecraft=${A}&loop=${loop}`);
      expect(r.trips.map((t) => t.id), `loop ${loop}`).toEqual(expected((s) => s.sc === A && s.loop === loop));
      expect(r.trips.every((t) => t.loop_id === loop)).toBe(true);
    }
    expect((await list(`spacecraft=${A}&loop=3`)).total).toBe(0);
    const whole = await list(`spacecraft=${A}&loop=none`);
    expect(whole.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === A && s.loop === null));
    expect(whole.total).toBe(3);
    // blank means no filter, not loop 0
    expect((await list(`spacecraft=${A}&loop=&state=&kind=&from=&to=`)).total).toBe(12);
  });

  it('filters by onset between from (inclusive) and to (exclusive), in either accepted form', async () => {
    const r = await list(`from=${min(3).toISOString()}&to=${min(7).toISOString()}&pageSize=200`);
    expect(r.trips.map((t) => t.id)).toEqual(expected((s) => s.onsetMin >= 3 && s.onsetMin < 7));
    expect(r.total).toBe(4);
    const plain = await list(`from=${encodeURIComponent('2011-06-01 00:03')}&to=${encodeURIComponent('2011-06-01 00:07')}`);
    expect(plain.trips.map((t) => t.id)).toEqual(r.trips.map((t) => t.id));
    const zoned = await list(`from=${encodeURIComponent('2011-06-01T02:03:00+02:00')}&to=${min(7).toISOString()}`);
    expect(zoned.trips.map((t) => t.id)).toEqual(r.trips.map((t) => t.id));
    const onlyFrom = await list(`spacecraft=${B}&from=${min(21).toISOString()}`);
    expect(onlyFrom.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === B && s.onsetMin >= 21));
    const onlyTo = await list(`spacecraft=${A}&to=${min(2).toISOString()}`);
    expect(onlyTo.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === A && s.onsetMin < 2));
  });

  it('combines spacecraft, state, kind, loop and time', async () => {
    const r = await list(`spacecraft=${A}&state=open&kind=torque-constant-drift&loop=0&from=${min(0).toISOString()}&to=${min(12).toISOString()}`);
    expect(r.trips.map((t) => t.id)).toEqual(expected((s) => s.sc === A && s.state === 'open' && s.kind === 'torque-constant-drift' && s.loop === 0));
    expect(r.total).toBe(r.trips.length);
    expect(r.total).toBeGreaterThan(0);
  });
});

describe('GET /api/trips sorting and pagination', () => {
  it('pages through with page size, total and the next page, without loss or repeat', async () => {
    const all = expected((s) => s.sc === A);
    const seen: number[] = [];
    let page: number | null = 1;
    const sizes: number[] = [];
    while (page !== null) {
      const r: TripsBody = await list(`spacecraft=${A}&pageSize=5&page=${page}`);
      expect(r.total).toBe(12);
      expect(r.pageSize).toBe(5);
      expect(r.page).toBe(page);
      sizes.push(r.trips.length);
      seen.push(...r.trips.map((t) => t.id));
      page = r.nextPage;
    }
    expect(sizes).toEqual([5, 5, 2]);
    expect(seen).toEqual(all);
    const past = await list(`spacecraft=${A}&pageSize=5&page=4`);
    expect(past.trips).toEqual([]);
    expect(past.nextPage).toBeNull();
    expect(past.total).toBe(12);
  });

  it('sorts by onset either way, by state in its workflow order and by level by severity', async () => {
    const asc = await list(`spacecraft=${A}&sort=onset_at&order=asc`);
    expect(asc.trips.map((t) => t.id)).toEqual([...expected((s) => s.sc === A)].reverse());
    const byState = await list(`spacecraft=${A}&sort=state&order=asc`);
    const rank = { open: 0, acknowledged: 1, resolved: 2 } as Record<string, number>;
    const states = byState.trips.map((t) => rank[t.state]!);
    expect(states).toEqual([...states].sort((x, y) => x - y));
    expect(byState.trips[0]!.state).toBe('open');
    const byLevel = await list(`spacecraft=${A}&sort=level&order=desc`);
    const levels = byLevel.trips.map((t) => t.level);
    expect(levels.slice(0, 3)).toEqual(['warning', 'warning', 'warning']);
    expect(levels.slice(3).every((l) => l === 'caution')).toBe(true);
  });
});

describe('GET /api/trips rejects a bad filter with 400 naming the field', () => {
  it.each([
    ['state=closed', 'state', /state must be one of open, acknowledged, resolved/],
    ['kind=leak', 'kind', /kind must be one of/],
    ['spacecraft=mr%201', 'spacecraft', /spacecraft key/],
    ['loop=7', 'loop', /loop must be a loop id 0–3/],
    ['loop=one', 'loop', /loop must be a loop id 0–3/],
    ['loop=1.5', 'loop', /loop must be a loop id 0–3/],
    ['from=yesterday', 'from', /from must be a UTC date and time/],
    ['to=2011-02-30%2000:00', 'to', /to must be a UTC date and time/],
    ['sort=value', 'sort', /sort must be one of/],
    ['order=up', 'order', /order must be asc or desc/],
    ['page=0', 'page', /page must be a whole number from 1/],
    ['page=x', 'page', /page must be a whole number from 1/],
    ['pageSize=500', 'pageSize', /pageSize must be a whole number 1–200/],
    ['stat=open', 'stat', /stat is not a trip filter/],
  ])('%s', async (query, field, message) => {
    const fields = await bad(query);
    expect(Object.keys(fields)).toEqual([field]);
    expect(fields[field]!.join(' ')).toMatch(message);
  });

  it('to not later than from is an error on to', async () => {
    const same = await bad(`from=${min(5).toISOString()}&to=${min(5).toISOString()}`);
    expect(same).toEqual({ to: ['to must be later than from'] });
    const before = await bad(`from=${encodeURIComponent('2011-06-01 00:05')}&to=${encodeURIComponent('2011-06-01 00:04')}`);
    expect(before).toEqual({ to: ['to must be later than from'] });
  });

  it('names every bad field at once', async () => {
    const fields = await bad('state=closed&loop=9&order=sideways');
    expect(Object.keys(fields).sort()).toEqual(['loop', 'order', 'state']);
  });

  it('asks for a session', async () => {
    const res = await new Client().get(`/api/trips?spacecraft=${A}`);
    expect(res.status).toBe(401);
  });
});

describe('the Trips page with a bad filter in the address', () => {
  it('leaves out only the bad filter and names it', async () => {
    const res = await analyst.get(`/trips?spacecraft=${A}&state=closed&kind=telemetry-gap`);
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain('data-testid="dropped-filters"');
    expect(html).toContain('state=closed');
    expect(html).toMatch(/state must be one of open, acknowledged, resolved/);
    // the good filters still apply: the three telemetry-gap trips of A, and only those
    const gapIds = expected((s) => s.sc === A && s.kind === 'telemetry-gap');
    for (const id of gapIds) expect(html).toContain(`href="/trips/${id}"`);
    for (const id of expected((s) => !(s.sc === A && s.kind === 'telemetry-gap'))) expect(html).not.toContain(`href="/trips/${id}"`);
  });

  it('shows no notice when every filter is understood', async () => {
    const html = await (await analyst.get(`/trips?spacecraft=${A}&loop=none`)).text();
    expect(html).not.toContain('data-testid="dropped-filters"');
  });
});
