import { describe, expect, it } from 'vitest';
import { DEFAULT_STATIONS, MIN_HANDOVER_MS, contactPlan, createPassSchedule, lastPassBefore, passAt, passSchedule } from '../../../ingest/passes';
import type { FeedStation, Pass, PredictedScheduleOptions } from '../../../ingest/passes';
import { bruteCrossings, independentElevation, scanElevation } from '../orbit/fixtures';
import { T0, loadSheet } from './feed-helpers';

const DAY = 86_400_000;
const HOUR = 3_600_000;
const FIXED = { schedule: 'fixed' } as const;

describe('passSchedule, fixed', () => {
  it('gives a 10-minute pass every 15 minutes, in order and never overlapping', () => {
    for (const key of ['MR-1', 'MR-2', 'MR-3']) {
      const passes = passSchedule(key, T0, T0 + DAY, FIXED);
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
    const all = passSchedule('MR-2', T0 - DAY, T0 + 2 * DAY, FIXED);
    const from = T0 + 123_456, to = T0 + 5_000_000;
    const want = all.filter((p) => p.losMs > from && p.aosMs < to);
    expect(passSchedule('MR-2', from, to, FIXED)).toEqual(want);
    expect(passSchedule('MR-2', to, from, FIXED)).toEqual([]);
  });

  it('staggers spacecraft and rotates through the given stations', () => {
    const a = passSchedule('MR-1', T0, T0 + DAY, FIXED).map((p) => p.aosMs % 900_000);
    const phases = new Set(['MR-1', 'MR-2', 'MR-3', 'MR-4', 'MR-5'].map((k) => passSchedule(k, T0, T0 + DAY, FIXED)[0]!.aosMs % 900_000));
    expect(new Set(a).size).toBe(1);
    expect(phases.size).toBeGreaterThan(1);
    const own = passSchedule('MR-3', T0, T0 + 3_600_000, { schedule: 'fixed', stations: ['alpha', 'beta'] });
    expect(new Set(own.map((p) => p.station))).toEqual(new Set(['alpha', 'beta']));
  });

  it('passAt and lastPassBefore agree with the schedule', () => {
    const passes = passSchedule('MR-1', T0, T0 + DAY, FIXED);
    const p = passes[10]!;
    expect(passAt('MR-1', p.aosMs, FIXED)).toEqual(p);
    expect(passAt('MR-1', p.losMs - 1, FIXED)).toEqual(p);
    expect(passAt('MR-1', p.losMs, FIXED)).toBeNull();
    expect(lastPassBefore('MR-1', p.losMs + 1000, FIXED)).toEqual(p);
    expect(lastPassBefore('MR-1', p.losMs - 1000, FIXED)).toEqual(passes[9]);
  });

  it('refuses a pass as long as the period', () => {
    expect(() => passSchedule('MR-1', T0, T0 + DAY, { schedule: 'fixed', periodMs: 600_000, durationMs: 600_000 })).toThrow(RangeError);
  });
});

describe('contactPlan', () => {
  it('keeps one station at a time: the first to acquire keeps the link, the next takes over for the rest of its pass', () => {
    const m = 60_000;
    const passes: Pass[] = [
      { station: 'b', aosMs: 5 * m, losMs: 15 * m },
      { station: 'a', aosMs: 0, losMs: 10 * m },
      { station: 'c', aosMs: 12 * m, losMs: 15 * m + 30_000 }, // overlaps b, would add only 30 s: dropped
      { station: 'a', aosMs: 20 * m, losMs: 30 * m },
      { station: 'd', aosMs: 22 * m, losMs: 28 * m }, // inside a's pass: dropped
    ];
    expect(contactPlan(passes)).toEqual([
      { station: 'a', aosMs: 0, losMs: 10 * m },
      { station: 'b', aosMs: 10 * m, losMs: 15 * m },
      { station: 'a', aosMs: 20 * m, losMs: 30 * m },
    ]);
    expect(MIN_HANDOVER_MS).toBe(60_000);
  });
});

describe('passSchedule, predicted by SGP4 over the demo stations', () => {
  // The demo ground stations as seeded (invented sites).
  const stations: FeedStation[] = [
    { key: 'north-fell', latitude_deg: 67.88, longitude_deg: 21.07, altitude_m: 380, elevation_mask_deg: 5 },
    { key: 'ribeira', latitude_deg: 41.15, longitude_deg: -8.61, altitude_m: 90, elevation_mask_deg: 10 },
    { key: 'karoo-ridge', latitude_deg: -31.52, longitude_deg: 21.93, altitude_m: 1210, elevation_mask_deg: 10 },
    { key: 'isbre-point', latitude_deg: 78.2, longitude_deg: 15.6, altitude_m: 450, elevation_mask_deg: 5 },
    { key: 'high-mesa', latitude_deg: 39.7, longitude_deg: -104.9, altitude_m: 1620, elevation_mask_deg: 10 },
    { key: 'kita-cape', latitude_deg: 43.06, longitude_deg: 141.35, altitude_m: 20, elevation_mask_deg: 10 },
  ];
  const optsOf = (key: 'MR-1' | 'MR-2' | 'MR-3'): PredictedScheduleOptions => ({ tle: loadSheet(key).orbit.tle, stations });

  it('matches a 2 s elevation scan through satellite.js alone (SGP4: Vallado, Crawford, Hujsak & Kelso 2006), 12 h of MR-1', () => {
    const from = T0, to = T0 + 12 * HOUR;
    const contacts = passSchedule('MR-1', from, to, optsOf('MR-1'));
    // Windows above each station's mask from the independent scan, then the same one-station-at-a-time rule.
    const brute: Pass[] = [];
    const tle = optsOf('MR-1').tle;
    for (const s of stations) {
      const el = independentElevation(tle, s.latitude_deg, s.longitude_deg, s.altitude_m);
      const x = bruteCrossings(scanElevation((t) => el(t).elevation_deg, from - HOUR, to + HOUR, 2000), s.elevation_mask_deg);
      const first = x.findIndex((c) => c.rising);
      for (let i = first; i + 1 < x.length; i += 2) brute.push({ station: s.key, aosMs: x[i]!.atMs, losMs: x[i + 1]!.atMs });
    }
    const want = contactPlan(brute).filter((p) => p.losMs > from && p.aosMs < to);
    expect(contacts.length).toBeGreaterThanOrEqual(6);
    expect(contacts.map((c) => c.station)).toEqual(want.map((c) => c.station));
    contacts.forEach((c, i) => {
      expect(Math.abs(c.aosMs - want[i]!.aosMs)).toBeLessThan(1000);
      expect(Math.abs(c.losMs - want[i]!.losMs)).toBeLessThan(1000);
    });
  });

  it('gives each demo spacecraft a pass at least every 100 minutes on average over three days, never two at once', () => {
    for (const key of ['MR-1', 'MR-2', 'MR-3'] as const) {
      const contacts = passSchedule(key, T0, T0 + 3 * DAY, optsOf(key));
      expect((3 * DAY) / contacts.length / 60_000, key).toBeLessThan(100);
      for (let i = 1; i < contacts.length; i++) expect(contacts[i]!.aosMs).toBeGreaterThanOrEqual(contacts[i - 1]!.losMs);
      // The site near 78° N sees the polar orbit nearly every revolution (about 14.6 a day at 15.07 rev/day).
      if (key === 'MR-1') expect(contacts.filter((c) => c.station === 'isbre-point').length).toBeGreaterThanOrEqual(3 * 10);
    }
  });

  it('gives the same contacts whatever window is asked for, and passAt / lastPassBefore agree with them', () => {
    const opts = optsOf('MR-3');
    const day = passSchedule('MR-3', T0, T0 + DAY, opts);
    const pieces = [0, 5, 11, 17].flatMap((h, i, hs) => passSchedule('MR-3', T0 + h * HOUR, T0 + (hs[i + 1] ?? 24) * HOUR, opts));
    const unique = pieces.filter((p, i) => pieces.findIndex((q) => q.aosMs === p.aosMs && q.station === p.station) === i);
    expect(unique).toEqual(day);
    const schedule = createPassSchedule('MR-3', opts);
    const p = day[5]!;
    expect(schedule.at(p.aosMs)).toEqual(p);
    expect(passAt('MR-3', (p.aosMs + p.losMs) / 2, opts)).toEqual(p);
    expect(schedule.at(p.losMs)).not.toEqual(p);
    expect(lastPassBefore('MR-3', p.losMs + 1, opts)).toEqual(p);
    expect(schedule.lastBefore(p.aosMs)).toEqual(day[4]);
  });
});
