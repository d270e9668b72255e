import fc from 'fast-check';
import { propagate, twoline2satrec } from 'satellite.js';
import { describe, expect, it } from 'vitest';
import {
  PropagationError,
  TleError,
  julianDateFromUnixMs,
  lookAngles,
  parseTle,
  propagateEci,
  stationFromDegrees,
  tleChecksum,
  type Vec3,
} from '../../../src/lib/orbit';
import { MR1_TLE, MR2_TLE, MR3_TLE, STATIONS, withChecksum } from './fixtures';

const dist = (a: Vec3, b: readonly number[]) => Math.hypot(a[0] - b[0]!, a[1] - b[1]!, a[2] - b[2]!);

describe('SGP4 on published verification cases', () => {
  // Vallado, Crawford, Hujsak & Kelso (2006), "Revisiting Spacetrack Report #3", AIAA 2006-6753: case 00005.
  // The element set is from memory (the paper's test file); it reproduces the published t = 0 state to
  // well under 1 km, so it is used.
  const v5 = parseTle(
    '1 00005U 58002B   00179.78495062  .00000023  00000-0  28098-4 0  4753',
    '2 00005  34.2682 348.7242 1859667 331.7664  19.3264 10.82419157413667',
  );

  it('00005 at t = 0 and t = 360 min matches the published positions to 1 cm', () => {
    const r0 = propagateEci(v5, v5.epochMs);
    const r360 = propagateEci(v5, v5.epochMs + 360 * 60_000);
    expect(r0).not.toBeNull();
    expect(r360).not.toBeNull();
    expect(dist(r0!.position_km, [7022.46529266, -1400.08296755, 0.03995155])).toBeLessThan(1e-5);
    expect(dist(r360!.position_km, [-7154.03120202, -3783.17682504, -3536.19412294])).toBeLessThan(1e-5);
  });

  it('00005 epoch: 2000, day 179.78495062 → 2000-06-27T18:50:19.733568Z', () => {
    // Day-of-year convention of the element set (day 1.0 = 1 January 00:00 UTC), common practice of the format.
    expect(v5.epochMs).toBeCloseTo(Date.UTC(2000, 5, 27, 18, 50, 19, 733) + 0.568, 2);
    expect(v5.catalogNumber).toBe('00005');
  });

  // Hoots & Roehrich (1980), Spacetrack Report #3: test orbit 88888. Element set from memory; it reproduces
  // the published t = 0 state to within 1 km (in fact to about a metre), so it is used. satellite.js's
  // constants differ slightly from the report's: tolerance 100 m.
  const r3 = parseTle(
    '1 88888U          80275.98708465  .00073094  13844-3  66816-4 0    87',
    '2 88888  72.8435 115.9689 0086731  52.6988 110.5714 16.05824518  1058',
  );

  it('88888 at t = 0 (position and velocity) and t = 360 min matches the report', () => {
    const s0 = propagateEci(r3, r3.epochMs)!;
    const s360 = propagateEci(r3, r3.epochMs + 360 * 60_000)!;
    expect(dist(s0.position_km, [2328.97048951, -5995.22076416, 1719.97067261])).toBeLessThan(0.1);
    expect(dist(s0.velocity_km_s, [2.9120723, -0.98341546, -7.09081703])).toBeLessThan(1e-4);
    expect(dist(s360.position_km, [2456.10705566, -6071.9385376, 1222.89727783])).toBeLessThan(0.1);
  });
});

describe('propagateEci and lookAngles', () => {
  const sat = parseTle(MR1_TLE[0], MR1_TLE[1]);
  const t = Date.UTC(2026, 9, 27, 6, 30, 0);

  it('agrees with satellite.js propagate(satrec, Date), an independent time path, to 2 m', () => {
    const ref = propagate(twoline2satrec(MR1_TLE[0], MR1_TLE[1]), new Date(t))!;
    const mine = propagateEci(sat, t)!;
    expect(dist(mine.position_km, [ref.position.x, ref.position.y, ref.position.z])).toBeLessThan(0.002);
    expect(dist(mine.velocity_km_s, [ref.velocity.x, ref.velocity.y, ref.velocity.z])).toBeLessThan(1e-5);
  });

  it('Julian date of J2000.0, 2000-01-01T12:00:00Z, is 2451545.0 (IAU definition of the epoch)', () => {
    expect(julianDateFromUnixMs(Date.UTC(2000, 0, 1, 12))).toBe(2_451_545);
  });

  // Independent topocentric check: WGS-84 (a = 6378.137 km, f = 1/298.257223563, NIMA TR8350.2, from memory),
  // station position N·cosφ… and the east-north-up basis, written out here without satellite.js's transforms.
  it('azimuth from north through east, elevation and range match a hand-built topocentric frame', () => {
    const [lat, lon, alt] = STATIONS.ribeira;
    const station = stationFromDegrees(lat, lon, alt, 10);
    for (const dt of [0, 137_000, 911_000, 2_400_000, 5_000_000]) {
      const when = t + dt;
      const la = lookAngles(sat, station, when)!;
      const r = propagateEci(sat, when)!.position_km;
      // GMST per Vallado (2004) eq. 3-45 (the IAU-82 polynomial), seconds of time → radians.
      const tu = (julianDateFromUnixMs(when) - 2451545) / 36525;
      const gmstSec = 67310.54841 + (876600 * 3600 + 8640184.812866) * tu + 0.093104 * tu * tu - 6.2e-6 * tu ** 3;
      const th = ((((gmstSec % 86400) + 86400) % 86400) / 86400) * 2 * Math.PI;
      const ecf = [r[0] * Math.cos(th) + r[1] * Math.sin(th), -r[0] * Math.sin(th) + r[1] * Math.cos(th), r[2]];
      const a = 6378.137;
      const f = 1 / 298.257223563;
      const e2 = f * (2 - f);
      const p = (lat * Math.PI) / 180;
      const l = (lon * Math.PI) / 180;
      const N = a / Math.sqrt(1 - e2 * Math.sin(p) ** 2);
      const h = alt / 1000;
      const obs = [(N + h) * Math.cos(p) * Math.cos(l), (N + h) * Math.cos(p) * Math.sin(l), (N * (1 - e2) + h) * Math.sin(p)];
      const d = [ecf[0]! - obs[0]!, ecf[1]! - obs[1]!, ecf[2]! - obs[2]!];
      const east = -Math.sin(l) * d[0]! + Math.cos(l) * d[1]!;
      const north = -Math.sin(p) * Math.cos(l) * d[0]! - Math.sin(p) * Math.sin(l) * d[1]! + Math.cos(p) * d[2]!;
      const up = Math.cos(p) * Math.cos(l) * d[0]! + Math.cos(p) * Math.sin(l) * d[1]! + Math.sin(p) * d[2]!;
      const range = Math.hypot(east, north, up);
      const az = ((Math.atan2(east, north) * 180) / Math.PI + 360) % 360;
      expect(la.range_km).toBeCloseTo(range, 3);
      expect(la.elevation_deg).toBeCloseTo((Math.asin(up / range) * 180) / Math.PI, 5);
      expect(Math.abs(((la.azimuth_deg - az + 540) % 360) - 180)).toBeLessThan(1e-5);
      expect(la.azimuth_deg).toBeGreaterThanOrEqual(0);
      expect(la.azimuth_deg).toBeLessThan(360);
    }
  });

  // An invented element set with eccentricity 0.2 at 15 rev/day: perigee lies below the surface.
  const sunk = parseTle(MR1_TLE[0], withChecksum(MR1_TLE[1].slice(0, 26) + '2000000' + MR1_TLE[1].slice(33)));

  it('returns null when SGP4 reports the orbit decayed, and the error code explains it', () => {
    expect(propagateEci(sunk, sunk.epochMs)).not.toBeNull();
    expect(propagateEci(sunk, sunk.epochMs + 10 * 60_000)).toBeNull();
    expect(sunk.satrec.error).toBe(6);
    expect(lookAngles(sunk, stationFromDegrees(0, 0, 0, 0), sunk.epochMs + 10 * 60_000)).toBeNull();
    expect(new PropagationError('99101', sunk.epochMs, 6).message).toMatch(/decayed/);
    expect(propagateEci(sat, Number.NaN)).toBeNull();
  });
});

describe('parseTle', () => {
  it('reads the invented fleet element sets and their epochs', () => {
    const s1 = parseTle(MR1_TLE[0], MR1_TLE[1]);
    expect(s1.catalogNumber).toBe('99101');
    // 2026 day 298.41736111 = 25 October 2026, 10:00:59.999904 UTC.
    expect(s1.epochMs).toBeCloseTo(Date.UTC(2026, 9, 25, 10, 0, 59, 999) + 0.904, 2);
    expect(s1.meanMotion_revPerDay).toBe(15.07121874);
    expect(s1.period_min).toBeCloseTo(1440 / 15.07121874, 12);
    for (const tle of [MR2_TLE, MR3_TLE]) expect(() => parseTle(tle[0], tle[1])).not.toThrow();
  });

  it('tolerates trailing whitespace and CR, as pasted from files', () => {
    expect(parseTle(`${MR1_TLE[0]}  \r`, `${MR1_TLE[1]}\r`).line1).toBe(MR1_TLE[0]);
  });

  it.each([
    ['short line 1', MR1_TLE[0].slice(0, 60), MR1_TLE[1], /line 1: must be 69 characters \(it has 60\)/],
    ['lines swapped', MR1_TLE[1], MR1_TLE[0], /line 1: must start with "1 "/],
    ['wrong checksum', MR1_TLE[0].slice(0, 68) + '0', MR1_TLE[1], /line 1: checksum is wrong .* sums to 4/],
    ['other satellite on line 2', MR1_TLE[0], MR2_TLE[1], /different satellites \("99101" and "99102"\)/],
    ['letters in inclination', MR1_TLE[0], withChecksum(MR1_TLE[1].slice(0, 8) + ' 97.5x00' + MR1_TLE[1].slice(16)), /line 2: inclination \(columns 9–16\) is not readable/],
    ['bad B* field', withChecksum(MR1_TLE[0].slice(0, 53) + ' 4122.-4' + MR1_TLE[0].slice(61)), MR1_TLE[1], /line 1: drag term B\* \(columns 54–61\)/],
    ['inclination above 180', MR1_TLE[0], withChecksum(MR1_TLE[1].slice(0, 8) + '197.5500' + MR1_TLE[1].slice(16)), /inclination must be 0–180/],
    ['zero mean motion', MR1_TLE[0], withChecksum(MR1_TLE[1].slice(0, 52) + ' 0.00000000' + MR1_TLE[1].slice(63)), /mean motion must be above 0/],
    ['epoch day 0', withChecksum(MR1_TLE[0].slice(0, 20) + '000.41736111' + MR1_TLE[0].slice(32)), MR1_TLE[1], /epoch day must be from 1/],
  ])('rejects %s with a clear TleError', (_name, l1, l2, message) => {
    expect(() => parseTle(l1, l2)).toThrow(TleError);
    expect(() => parseTle(l1, l2)).toThrow(message);
  });

  it('accepts a wrong checksum only when asked not to check it', () => {
    const l1 = MR1_TLE[0].slice(0, 68) + '0';
    expect(parseTle(l1, MR1_TLE[1], { verifyChecksum: false }).catalogNumber).toBe('99101');
  });

  it('checksum digit of every fleet line and both published cases', () => {
    for (const line of [...MR1_TLE, ...MR2_TLE, ...MR3_TLE]) expect(String(tleChecksum(line))).toBe(line[68]);
  });

  // Property: any one-character change to a valid set (checksum repaired) either parses to a usable
  // satellite or fails with a TleError — never another exception, never NaN.
  it('one-character corruptions either parse cleanly or raise TleError', () => {
    const chars = '0123456789 .-+xA';
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 1 }), fc.integer({ min: 0, max: 67 }), fc.integer({ min: 0, max: chars.length - 1 }), (which, col, c) => {
        const lines: [string, string] = [MR1_TLE[0], MR1_TLE[1]];
        const src = lines[which]!;
        lines[which] = withChecksum(src.slice(0, col) + chars[c] + src.slice(col + 1));
        let sat;
        try {
          sat = parseTle(lines[0], lines[1]);
        } catch (err) {
          expect(err).toBeInstanceOf(TleError);
          return;
        }
        expect(Number.isFinite(sat.epochMs)).toBe(true);
        const s = propagateEci(sat, sat.epochMs + 3_600_000);
        if (s !== null) expect(s.position_km.every(Number.isFinite)).toBe(true);
      }),
      { numRuns: 400 },
    );
  });
});

describe('stationFromDegrees', () => {
  it('keeps degrees and metres and converts to radians and kilometres for SGP4', () => {
    const s = stationFromDegrees(41.15, -8.61, 90, 10);
    expect(s.geodetic.latitude).toBeCloseTo((41.15 * Math.PI) / 180, 15);
    expect(s.geodetic.longitude).toBeCloseTo((-8.61 * Math.PI) / 180, 15);
    expect(s.geodetic.height).toBeCloseTo(0.09, 15);
    expect(s.elevationMask_deg).toBe(10);
  });

  it.each([
    [91, 0, 0, 10, /latitude_deg/],
    [0, 400, 0, 10, /longitude_deg/],
    [0, 0, 20_000, 10, /altitude_m/],
    [0, 0, 0, 90, /elevation_mask_deg/],
    [Number.NaN, 0, 0, 10, /finite/],
  ])('rejects (%s, %s, %s, %s)', (lat, lon, alt, mask, message) => {
    expect(() => stationFromDegrees(lat, lon, alt, mask)).toThrow(message);
  });
});
