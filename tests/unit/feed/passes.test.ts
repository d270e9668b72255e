import { describe, expect, it } from 'vitest';
import { DEFAULT_STATIONS, lastPassBefore, passAt, passSchedule } from '../../../ingest/passes';
import { T0 } from './feed-helpers';

const DAY = 86_400_000;

describe('passSchedule', () => {
  it('gives a 10-minute pass every 15 minutes, in order and never overlapping', () => {
    for (const key of ['MR-1', 'MR-2', 'MR-3']) {
      const passes = passSchedule(key, T0, T0 + DAY);
      expect(passes.length).toBeGreaterThanOrEqual(96);
      expect(passes.length).toBeLessThanOrEqual(97);
      for (const [i, p] of passes.entries()) {
        expect(p.losMs - p.aosMs).toBe(600_000);
        expect(DEFAULT_STATIONS).toContain(p.station);
        if (i > 0) {
          expect(p.aosMs).toBeGreaterThanOrEqual(passes[i - 1]!.losMs);
          expect(p.aosMs - passes[i - 1]!.aosMs).toBe(900_000);
          expect(p.station).not.toBe(passes[i - 1]!.station);
        }
      }
    }
  });

  it('returns exactly the passes overlapping the window', () => {
    const all = passSchedule('MR-2', T0 - DAY, T0 + 2 * DAY);
    const from = T0 + 123_456, to = T0 + 5_000_000;
    const want = all.filter((p) => p.losMs > from && p.aosMs < to);
    expect(passSchedule('MR-2', from, to)).toEqual(want);
    expect(passSchedule('MR-2', to, from)).toEqual([]);
  });

  it('staggers spacecraft and rotates through the given stations', () => {
    const a = passSchedule('MR-1', T0, T0 + DAY).map((p) => p.aosMs % 900_000);
    const phases = new Set(['MR-1', 'MR-2', 'MR-3', 'MR-4', 'MR-5'].map((k) => passSchedule(k, T0, T0 + DAY)[0]!.aosMs % 900_000));
    expect(new Set(a).size).toBe(1);
    expect(phases.size).toBeGreaterThan(1);
    const own = passSchedule('MR-3', T0, T0 + 3_600_000, { stations: ['alpha', 'beta'] });
    expect(new Set(own.map((p) => p.station))).toEqual(new Set(['alpha', 'beta']));
  });

  it('passAt and lastPassBefore agree with the schedule', () => {
    const passes = passSchedule('MR-1', T0, T0 + DAY);
    const p = passes[10]!;
    expect(passAt('MR-1', p.aosMs)).toEqual(p);
    expect(passAt('MR-1', p.losMs - 1)).toEqual(p);
    expect(passAt('MR-1', p.losMs)).toBeNull();
    expect(lastPassBefore('MR-1', p.losMs + 1000)).toEqual(p);
    expect(lastPassBefore('MR-1', p.losMs - 1000)).toEqual(passes[9]);
  });

  it('refuses a pass as long as the period', () => {
    expect(() => passSchedule('MR-1', T0, T0 + DAY, { periodMs: 600_000, durationMs: 600_000 })).toThrow(RangeError);
  });
});
