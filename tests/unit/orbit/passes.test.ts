import { describe, expect, it } from 'vitest';
import { DEFAULT_PASS_STEP_MS, PropagationError, findPasses, lookAngles, parseTle, stationFromDegrees, type Pass } from '../../../src/lib/orbit';
import { MR1_TLE, MR2_TLE, MR3_TLE, STATIONS, bruteCrossings, brutePeak, independentElevation, scanElevation, withChecksum } from './fixtures';

const HOUR = 3_600_000;
const DAY = 24 * HOUR;
const sat = parseTle(MR1_TLE[0], MR1_TLE[1]);
const [RLAT, RLON, RALT] = STATIONS.ribeira;
const dayStart = Date.UTC(2026, 9, 26);

// One 1 s brute-force scan of elevation over 24 h, through satellite.js alone; shared by the mask cases.
const independent = independentElevation(MR1_TLE, RLAT, RLON, RALT);
const scan = scanElevation((t) => independent(t).elevation_deg, dayStart, dayStart + DAY);

function expectSortedDisjoint(passes: Pass[]) {
  for (const p of passes) {
    expect(p.aosMs).toBeLessThanOrEqual(p.tcaMs);
    expect(p.tcaMs).toBeLessThanOrEqual(p.losMs);
  }
  for (let i = 1; i < passes.length; i++) expect(passes[i]!.aosMs).toBeGreaterThan(passes[i - 1]!.losMs);
}

describe('findPasses against a 1 s brute-force elevation scan (24 h, MR-1, a station at 41.15° N)', () => {
  // 0°, 5° and 10° masks are all in use, 10° a common default (common practice).
  it.each([0, 5, 10])('mask %s°: same passes, AOS/LOS within 0.5 s, elevation at AOS/LOS = mask ± 0.05°', (mask) => {
    const station = stationFromDegrees(RLAT, RLON, RALT, mask);
    const passes = findPasses(sat, station, dayStart, dayStart + DAY);
    const brute = bruteCrossings(scan, mask);
    expect(brute.length).toBeGreaterThanOrEqual(6);
    expect(brute[0]!.rising).toBe(true); // the window opens and closes with the spacecraft below every mask
    expect(passes).toHaveLength(brute.length / 2);
    passes.forEach((p, i) => {
      const aos = brute[2 * i]!;
      const los = brute[2 * i + 1]!;
      expect(aos.rising && !los.rising).toBe(true);
      expect(Math.abs(p.aosMs - aos.atMs)).toBeLessThan(500);
      expect(Math.abs(p.losMs - los.atMs)).toBeLessThan(500);
      expect(Math.abs(independent(p.aosMs).elevation_deg - mask)).toBeLessThan(0.05);
      expect(Math.abs(independent(p.losMs).elevation_deg - mask)).toBeLessThan(0.05);
      const peak = brutePeak(scan, aos.atMs, los.atMs);
      expect(p.maxElevation_deg).toBeGreaterThanOrEqual(peak.el - 1e-6);
      expect(p.maxElevation_deg - peak.el).toBeLessThan(0.5);
      expect(Math.abs(p.tcaMs - peak.atMs)).toBeLessThan(2000);
      expect(Math.abs(((p.aosAzimuth_deg - independent(p.aosMs).azimuth_deg + 540) % 360) - 180)).toBeLessThan(1e-3);
      expect(Math.abs(((p.losAzimuth_deg - independent(p.losMs).azimuth_deg + 540) % 360) - 180)).toBeLessThan(1e-3);
      expect(p.inProgressAtStart || p.inProgressAtEnd).toBe(false);
    });
    expectSortedDisjoint(passes);
  });

  it('a coarser (60 s) or finer (10 s) scan finds the same passes to 0.1 s', () => {
    const station = stationFromDegrees(RLAT, RLON, RALT, 10);
    const ref = findPasses(sat, station, dayStart, dayStart + DAY);
    expect(DEFAULT_PASS_STEP_MS).toBe(30_000);
    for (const stepMs of [10_000, 60_000]) {
      const other = findPasses(sat, station, dayStart, dayStart + DAY, { stepMs });
      expect(other).toHaveLength(ref.length);
      other.forEach((p, i) => {
        expect(Math.abs(p.aosMs - ref[i]!.aosMs)).toBeLessThan(100);
        expect(Math.abs(p.losMs - ref[i]!.losMs)).toBeLessThan(100);
        expect(p.maxElevation_deg).toBeCloseTo(ref[i]!.maxElevation_deg, 3);
      });
    }
  });
});

describe('short low passes', () => {
  // A mask set 0.02° below one pass's peak leaves a pass of a few seconds, far shorter than the scan step.
  const base = findPasses(sat, stationFromDegrees(RLAT, RLON, RALT, 10), dayStart, dayStart + DAY);
  const low = base.reduce((a, b) => (b.maxElevation_deg < a.maxElevation_deg ? b : a));

  it('a pass peaking 0.02° above the mask is found with a 60 s step and matches the brute scan', () => {
    const mask = low.maxElevation_deg - 0.02;
    // The window starts so that the peak falls midway between two 60 s samples: no sample sees the pass.
    const from = low.tcaMs - HOUR - 30_000;
    const passes = findPasses(sat, stationFromDegrees(RLAT, RLON, RALT, mask), from, low.tcaMs + HOUR, { stepMs: 60_000 });
    expect(passes).toHaveLength(1);
    const p = passes[0]!;
    expect(p.losMs - p.aosMs).toBeLessThan(30_000);
    expect(Math.floor((p.aosMs - from) / 60_000)).toBe(Math.floor((p.losMs - from) / 60_000));
    const brute = bruteCrossings(scan, mask).filter((c) => c.atMs > low.aosMs - HOUR && c.atMs < low.losMs + HOUR);
    expect(brute).toHaveLength(2);
    expect(Math.abs(p.aosMs - brute[0]!.atMs)).toBeLessThan(1000);
    expect(Math.abs(p.losMs - brute[1]!.atMs)).toBeLessThan(1000);
    expect(Math.abs(p.tcaMs - low.tcaMs)).toBeLessThan(1000);
  });

  it('a mask 0.02° above the peak gives no pass', () => {
    const mask = low.maxElevation_deg + 0.02;
    expect(findPasses(sat, stationFromDegrees(RLAT, RLON, RALT, mask), low.tcaMs - HOUR - 30_000, low.tcaMs + HOUR, { stepMs: 60_000 })).toEqual([]);
  });
});

describe('window edges', () => {
  // An invented mid-latitude station at 41.15° N, 85° W: MR-1 passes over it from about 23:59 on
  // 30 October 2026 to 00:07 on 31 October, across midnight UTC.
  const lake = stationFromDegrees(41.15, -85, 180, 10);
  const midnight = Date.UTC(2026, 9, 31);

  it('a pass spanning midnight UTC is found whole, and splitting the window at midnight flags both halves', () => {
    const whole = findPasses(sat, lake, midnight - 12 * HOUR, midnight + 12 * HOUR).filter((p) => p.aosMs < midnight && p.losMs > midnight);
    expect(whole).toHaveLength(1);
    const p = whole[0]!;
    expect(p.inProgressAtStart || p.inProgressAtEnd).toBe(false);
    expect(midnight - p.aosMs).toBeGreaterThan(30_000);
    expect(p.losMs - midnight).toBeGreaterThan(60_000);

    const before = findPasses(sat, lake, midnight - DAY, midnight).at(-1)!;
    const after = findPasses(sat, lake, midnight, midnight + DAY)[0]!;
    expect(before.inProgressAtEnd).toBe(true);
    expect(before.losMs).toBe(midnight);
    expect(Math.abs(before.aosMs - p.aosMs)).toBeLessThan(20);
    expect(after.inProgressAtStart).toBe(true);
    expect(after.aosMs).toBe(midnight);
    expect(Math.abs(after.losMs - p.losMs)).toBeLessThan(20);
    expect(after.aosAzimuth_deg).toBeCloseTo(lookAngles(sat, lake, midnight)!.azimuth_deg, 9);
    expect(Math.max(before.maxElevation_deg, after.maxElevation_deg)).toBeCloseTo(p.maxElevation_deg, 3);
  });

  it('a window inside one pass gives one pass flagged at both ends', () => {
    const p = findPasses(sat, lake, midnight - 12 * HOUR, midnight + 12 * HOUR).find((q) => q.aosMs < midnight && q.losMs > midnight)!;
    const inside = findPasses(sat, lake, p.aosMs + 60_000, p.losMs - 60_000);
    expect(inside).toHaveLength(1);
    expect(inside[0]).toMatchObject({ aosMs: p.aosMs + 60_000, losMs: p.losMs - 60_000, inProgressAtStart: true, inProgressAtEnd: true });
    expect(inside[0]!.maxElevation_deg).toBeCloseTo(p.maxElevation_deg, 3);
  });

  it('an empty window gives no passes; a reversed one is refused', () => {
    expect(findPasses(sat, lake, midnight, midnight)).toEqual([]);
    expect(() => findPasses(sat, lake, midnight, midnight - 1)).toThrow(RangeError);
    expect(() => findPasses(sat, lake, midnight, midnight + DAY, { stepMs: 0 })).toThrow(/stepMs/);
  });
});

describe('fleet over three days', () => {
  it('every spacecraft × station: passes sorted, disjoint, inside the window, peaks above the mask', () => {
    const from = Date.UTC(2026, 9, 30);
    for (const tle of [MR1_TLE, MR2_TLE, MR3_TLE]) {
      const s = parseTle(tle[0], tle[1]);
      for (const [lat, lon, alt, mask] of Object.values(STATIONS)) {
        const passes = findPasses(s, stationFromDegrees(lat, lon, alt, mask), from, from + 3 * DAY);
        expect(passes.length).toBeGreaterThan(3);
        expectSortedDisjoint(passes);
        for (const p of passes) {
          expect(p.aosMs).toBeGreaterThanOrEqual(from);
          expect(p.losMs).toBeLessThanOrEqual(from + 3 * DAY);
          expect(p.maxElevation_deg).toBeGreaterThanOrEqual(mask);
          expect(p.maxElevation_deg).toBeLessThanOrEqual(90);
        }
      }
    }
  });

  it('an element set whose orbit dips below the surface raises PropagationError', () => {
    const sunk = parseTle(MR1_TLE[0], withChecksum(MR1_TLE[1].slice(0, 26) + '2000000' + MR1_TLE[1].slice(33)));
    expect(() => findPasses(sunk, stationFromDegrees(RLAT, RLON, RALT, 10), sunk.epochMs, sunk.epochMs + HOUR)).toThrow(PropagationError);
  });
});
