import pg from 'pg';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { evaluateRule, type Point } from '../../../src/lib/limits/evaluate';
import { quantityInfo, type QuantityInfo } from '../../../src/lib/limits/quantities';
import { BODY, type StoredRule } from '../../../src/lib/server/trip-engine';
import { CHART_POINTS, DEFAULT_SPAN_MS, defaultSpan, parseTimestamptz, replayLimitSets, rulesDigest, type SeriesLoader } from '../../../src/lib/server/backtest';

const MIN = 60_000;
const T0 = Date.UTC(2026, 10, 1);

let nextId = 1;
function rule(quantity: string, loopId: number | null, levels: Partial<StoredRule>): StoredRule {
  return {
    id: nextId++, limitSetId: 1, limitSetVersion: 1, quantity, loopId,
    cautionHigh: null, warningHigh: null, cautionLow: null, warningLow: null, clearHigh: null, clearLow: null, persistence: 1,
    ...levels,
  };
}
const ref = (id: number, version: number) => ({ id, version, name: `v${version}`, status: 'draft' });

/** Windows stored at 60 s starts, read as the scheduler's loader reads them: start > from, start + 60 s ≤ to. */
function windowLoader(values: Record<number, (number | null)[]>, calls: string[] = []): SeriesLoader {
  return async (info: QuantityInfo, loopId: number, fromMs: number, toMs: number) => {
    calls.push(`${info.key}|${loopId}|${fromMs}|${toMs}`);
    const v = values[loopId] ?? [];
    const out: Point[] = [];
    for (let i = 0; i < v.length; i++) {
      const t = T0 + i * MIN;
      if (t > fromMs && t + MIN <= toMs) out.push({ t, value: v[i]! });
    }
    return out;
  };
}

const high = { cautionHigh: 10, warningHigh: 20, clearHigh: 8, persistence: 3 };

// The expected trips below are worked by hand from the rule's definition (common practice for
// persistence-and-hysteresis limits: raise after n consecutive points beyond, clear inside the clear level).
describe('replayLimitSets', () => {
  it('replays a hand-worked sequence: onset, raise, escalation in place, clear below the clear level', async () => {
    const vals = [5, 11, 12, 13, 21, 22, 23, 9, 7, 5];
    const r = (await replayLimitSets({
      load: windowLoader({ 0: vals }),
      loopIds: [0],
      fromMs: T0 - MIN,
      toMs: T0 + vals.length * MIN,
      draft: { ref: ref(1, 2), rules: [rule('electrode_temp_mean_c', 0, high)] },
      baseline: null,
    }))!;
    expect(r.trips).toHaveLength(1);
    expect(r.trips[0]).toEqual({
      set: 'draft', ruleIndex: 0, quantity: 'electrode_temp_mean_c', loopId: 0, level: 'warning', side: 'high',
      onsetMs: T0 + 1 * MIN, raisedMs: T0 + 3 * MIN, escalatedMs: T0 + 6 * MIN, clearedMs: T0 + 8 * MIN,
      value: 13, peak: 23, limit: 20, lastValue: 7, persistence: 3,
    });
    expect(r.rules[0]).toMatchObject({ replayable: true, points: 10, trips: 1, loopId: 0 });
  });

  it('replays every window exactly once across chunks, and finds the same trips as one pass of evaluateRule', async () => {
    // 65 days of windows (three 30-day reads), with a sag that straddles the first read's end: the
    // run starts in one read and raises in the next, so the rule state must carry over.
    const n = 65 * 1440;
    const s0 = 43_197;
    const vals = Array.from({ length: n }, (_, i) => (i >= s0 && i < s0 + 3 ? 0.55 : i >= s0 + 3 && i < s0 + 10 ? 0.4 : i % 997 === 0 ? null : 0.7 - ((i * 7919) % 8) * 0.01));
    const low = rule('effectiveness', null, { cautionLow: 0.6, warningLow: 0.5, clearLow: 0.62, persistence: 3 });
    const calls: string[] = [];
    const r = (await replayLimitSets({ load: windowLoader({ 0: vals, 2: vals }, calls), loopIds: [0, 2], fromMs: T0 - MIN, toMs: T0 + n * MIN, draft: { ref: ref(1, 2), rules: [low] }, baseline: null }))!;
    const all: Point[] = vals.map((value, i) => ({ t: T0 + i * MIN, value }));
    const one = evaluateRule(low, all).events;
    expect(one.map((e) => e.type)).toEqual(['opened', 'escalated', 'cleared']);
    expect(r.rules[0]!.points).toBe(2 * n);
    expect(r.trips.map((t) => t.loopId)).toEqual([0, 2]);
    for (const t of r.trips) {
      expect(t).toMatchObject({ onsetMs: one[0]!.trip.onsetT, raisedMs: one[0]!.t, escalatedMs: one[1]!.t, clearedMs: one[2]!.t, level: 'warning', peak: 0.4 });
      // By hand: the sag starts at window s0, the third point beyond caution raises it, the third beyond warning escalates it.
      expect(t.onsetMs).toBe(T0 + s0 * MIN);
      expect(t.raisedMs).toBe(T0 + (s0 + 2) * MIN);
      expect(t.escalatedMs).toBe(T0 + (s0 + 5) * MIN);
      expect(t.clearedMs).toBe(T0 + (s0 + 10) * MIN);
    }
    // The first read ends inside the run that raised the trip.
    const firstEnd = Number(calls.find((c) => c.startsWith('effectiveness|0|'))!.split('|')[3]);
    expect(firstEnd).toBeGreaterThan(T0 + s0 * MIN);
    expect(firstEnd).toBeLessThan(T0 + (s0 + 3) * MIN);
    expect(calls.filter((c) => c.startsWith('effectiveness|0|')).length).toBeGreaterThan(2);
  });

  it('names the same targets as the scheduler: every loop, the named loop, or the whole spacecraft', async () => {
    const calls: string[] = [];
    const r = (await replayLimitSets({
      load: windowLoader({}, calls),
      loopIds: [0, 1, 2],
      fromMs: T0,
      toMs: T0 + 60 * MIN,
      draft: {
        ref: ref(1, 2),
        rules: [rule('effectiveness', null, { cautionLow: 0.5 }), rule('resistance_ohm', 1, { cautionHigh: 1 }), rule('ledger_residual_nm', null, { cautionHigh: 1 }), rule('data_age_s', null, { cautionHigh: 30 })],
      },
      baseline: null,
    }))!;
    const targets = new Set(calls.map((c) => c.split('|').slice(0, 2).join('|')));
    expect([...targets].sort()).toEqual(['effectiveness|0', 'effectiveness|1', 'effectiveness|2', `ledger_residual_nm|${BODY}`, 'resistance_ohm|1'].sort());
    const age = r.rules.find((x) => x.quantity === 'data_age_s')!;
    expect(age.replayable).toBe(false);
    expect(age.note).toMatch(/only at evaluation time/);
    expect(r.series.find((s) => s.quantity === 'ledger_residual_nm')!.loopId).toBeNull();
  });

  it('reads a series once for both sets, and keeps each set’s trips apart', async () => {
    const calls: string[] = [];
    const vals = [0.7, 0.5, 0.5, 0.5, 0.5, 0.7, 0.7];
    const r = (await replayLimitSets({
      load: windowLoader({ 0: vals }, calls),
      loopIds: [0],
      fromMs: T0 - MIN,
      toMs: T0 + vals.length * MIN,
      draft: { ref: ref(7, 3), rules: [rule('effectiveness', 0, { cautionLow: 0.6, persistence: 2 })] },
      baseline: { ref: ref(5, 2), rules: [rule('effectiveness', null, { cautionLow: 0.55, persistence: 5 })] },
    }))!;
    expect(calls).toHaveLength(1);
    expect(r.trips.map((t) => `${t.set}:${t.raisedMs - T0}`)).toEqual([`draft:${2 * MIN}`]);
    expect(r.rules.map((x) => `${x.set}:${x.trips}`)).toEqual(['draft:1', 'baseline:0']);
    expect(r.baseline).toEqual(ref(5, 2));
  });

  it('reports a trip still beyond its level at the end of the span as persisting, with its worst value', async () => {
    const vals = [1, 12, 14, 13, 15, 11];
    const r = (await replayLimitSets({ load: windowLoader({ 0: vals }), loopIds: [0], fromMs: T0 - MIN, toMs: T0 + vals.length * MIN, draft: { ref: ref(1, 1), rules: [rule('electrode_temp_mean_c', null, high)] }, baseline: null }))!;
    expect(r.trips).toHaveLength(1);
    expect(r.trips[0]).toMatchObject({ clearedMs: null, level: 'caution', peak: 15, lastValue: 11, value: 13 });
  });

  it('stops when progress is refused, and reports progress that never goes back and ends at 1', async () => {
    const n = 20 * 1440;
    const vals = Array.from({ length: n }, () => 0.7);
    const seen: number[] = [];
    const rules = [rule('effectiveness', null, { cautionLow: 0.5 }), rule('resistance_ohm', null, { cautionHigh: 1 })];
    const done = await replayLimitSets({ load: windowLoader({ 0: vals, 1: vals }), loopIds: [0, 1], fromMs: T0, toMs: T0 + n * MIN, draft: { ref: ref(1, 1), rules }, baseline: null, parallel: 2, onProgress: (f) => (seen.push(f), true) });
    expect(done).not.toBeNull();
    for (let i = 1; i < seen.length; i++) expect(seen[i]!).toBeGreaterThanOrEqual(seen[i - 1]!);
    expect(seen[seen.length - 1]).toBe(1);
    expect(seen.some((f) => f > 0 && f < 1)).toBe(true);
    let loads = 0;
    const stopped = await replayLimitSets({
      load: async (...a) => (loads++, windowLoader({ 0: vals, 1: vals })(...a)),
      loopIds: [0, 1], fromMs: T0, toMs: T0 + n * MIN, draft: { ref: ref(1, 1), rules }, baseline: null,
      onProgress: (f) => f < 0.1,
    });
    expect(stopped).toBeNull();
    expect(loads).toBeLessThan(4);
  });

  it('jumps over the silence between passes for raw channels and never replays a sample twice', async () => {
    // Two passes of 10 Hz current, four days apart; sample times carry sub-millisecond parts.
    const passes = [T0 + 3 * 3600_000, T0 + 4 * 86_400_000];
    const samples: Point[] = [];
    for (const p of passes) for (let i = 0; i < 6000; i++) samples.push({ t: p + i * 100 + 0.37, value: i >= 3000 && i < 3010 ? 40 : 10 });
    const info = quantityInfo('measured_current_a')!;
    let loads = 0;
    // Stored times are to the microsecond, the cursor to the millisecond: a boundary sample can come back.
    const load: SeriesLoader = async (_i, _l, fromMs, toMs) => (loads++, samples.filter((s) => Math.floor(s.t) > fromMs - 1 && s.t <= toMs));
    const nextAfter = async (_i: QuantityInfo, _l: number, afterMs: number) => samples.find((s) => s.t > afterMs)?.t ?? null;
    const r = (await replayLimitSets({ load, nextAfter, loopIds: [0], fromMs: T0, toMs: T0 + 30 * 86_400_000, draft: { ref: ref(1, 1), rules: [rule(info.key, 0, { cautionHigh: 28, clearHigh: 26, persistence: 5 })] }, baseline: null }))!;
    expect(r.rules[0]!.points).toBe(samples.length);
    expect(r.trips.map((t) => t.onsetMs)).toEqual(passes.map((p) => p + 3000 * 100 + 0.37));
    // 30 days of hourly chunks would be 720 reads; the jumps leave a handful.
    expect(loads).toBeLessThan(12);
  });

  it('keeps the chart to CHART_POINTS points with the first, the last and the spike (LTTB, Steinarsson 2013)', async () => {
    const n = 14 * 1440;
    const vals = Array.from({ length: n }, (_, i) => (i === 9000 ? 5 : Math.sin(i / 50)));
    const r = (await replayLimitSets({ load: windowLoader({ 0: vals }), loopIds: [0], fromMs: T0 - MIN, toMs: T0 + n * MIN, draft: { ref: ref(1, 1), rules: [rule('effectiveness', 0, { cautionLow: -2 })] }, baseline: null }))!;
    const s = r.series[0]!;
    expect(s.points).toBe(n);
    expect(s.t.length).toBeLessThanOrEqual(CHART_POINTS);
    expect(s.t[0]).toBe(T0);
    expect(s.t[s.t.length - 1]).toBe(T0 + (n - 1) * MIN);
    expect(Math.max(...s.v)).toBe(5);
  });
});

describe('backtest helpers', () => {
  it('defaults to the 30 days that end at the newest data held', () => {
    expect(defaultSpan(null)).toBeNull();
    expect(defaultSpan(T0)).toEqual({ fromMs: T0 - 30 * 86_400_000, toMs: T0 });
    expect(DEFAULT_SPAN_MS).toBe(2_592_000_000);
  });

  it('digests what a backtest replays, not the row ids', () => {
    const a = [rule('effectiveness', null, { cautionLow: 0.5 })];
    const b = [{ ...a[0]!, id: 999 }];
    expect(rulesDigest(a)).toBe(rulesDigest(b));
    expect(rulesDigest(a)).not.toBe(rulesDigest([{ ...a[0]!, cautionLow: 0.51 }]));
    expect(rulesDigest(a)).not.toBe(rulesDigest([{ ...a[0]!, loopId: 1 }]));
  });

  // The reference is node-postgres's own timestamptz parser (the postgres-date package), an independent library.
  it('reads PostgreSQL timestamps exactly as node-postgres does', () => {
    const standard = pg.types.getTypeParser(1184, 'text') as (s: string) => Date;
    const fixed = ['2026-11-30 00:00:00+00', '2026-11-30 23:59:59.999999+00', '2000-01-01 00:00:00.5+00', '2026-03-01 12:00:00+05:30', '0050-06-01 00:00:00+00', '1999-12-31 23:59:59.0001+00', '2026-11-30 00:00:00-07'];
    for (const s of fixed) expect(parseTimestamptz(s).getTime(), s).toBe(standard(s).getTime());
    fc.assert(
      fc.property(fc.integer({ min: Date.UTC(1970, 0, 1), max: Date.UTC(2100, 0, 1) }), fc.integer({ min: 0, max: 999_999 }), fc.integer({ min: 0, max: 6 }), (ms, micros, digits) => {
        const base = new Date(ms - (ms % 1000)).toISOString().slice(0, 19).replace('T', ' ');
        const frac = digits ? `.${String(micros).padStart(6, '0').slice(0, digits)}` : '';
        const s = `${base}${frac}+00`;
        expect(parseTimestamptz(s).getTime()).toBe(standard(s).getTime());
      }),
      { numRuns: 3000 },
    );
  });
});
