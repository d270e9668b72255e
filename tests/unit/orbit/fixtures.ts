import { ecfToLookAngles, eciToEcf, gstime, propagate, twoline2satrec } from 'satellite.js';

/** Invented element sets of the demo fleet (copied from the demo sheets MR-1, MR-2, MR-3). */
export const MR1_TLE = [
  '1 99101U 26912A   26298.41736111  .00000812  00000-0  41220-4 0  9984',
  '2 99101  97.5500 312.4418 0011324  84.2031 276.0452 15.07121874  4129',
] as const;
export const MR2_TLE = [
  '1 99102U 26912C   26301.57291667  .00000812  00000-0  38761-4 0  9974',
  '2 99102  53.0200 128.9032 0004871 141.6627 218.4870 15.15322385  4688',
] as const;
export const MR3_TLE = [
  '1 99103U 26934B   26303.20833333  .00000812  00000-0  29974-4 0  9991',
  '2 99103  70.0100  47.2116 0015590  12.8844 347.3309 14.92546055  1810',
] as const;

/** Invented demo stations (as seeded): latitude, longitude, altitude m, mask. */
export const STATIONS = {
  northFell: [67.88, 21.07, 380, 5],
  ribeira: [41.15, -8.61, 90, 10],
  karooRidge: [-31.52, 21.93, 1210, 10],
} as const satisfies Record<string, readonly [number, number, number, number]>;

/** Replace the checksum digit of a TLE line with the right one. */
export function withChecksum(line: string): string {
  let sum = 0;
  for (const ch of line.slice(0, 68)) sum += ch === '-' ? 1 : ch >= '0' && ch <= '9' ? Number(ch) : 0;
  return line.slice(0, 68) + String(sum % 10);
}

/**
 * Elevation (deg) computed straight through satellite.js's own chain — propagate(satrec, Date), gstime(Date),
 * eciToEcf, ecfToLookAngles — with no code of ours in the way.
 */
export function independentElevation(lines: readonly [string, string], lat_deg: number, lon_deg: number, alt_m: number) {
  const satrec = twoline2satrec(lines[0], lines[1]);
  const observer = { latitude: (lat_deg * Math.PI) / 180, longitude: (lon_deg * Math.PI) / 180, height: alt_m / 1000 };
  return (unixMs: number): { elevation_deg: number; azimuth_deg: number } => {
    const date = new Date(unixMs);
    const pv = propagate(satrec, date);
    if (!pv) throw new Error(`satellite.js could not propagate to ${date.toISOString()}`);
    const la = ecfToLookAngles(observer, eciToEcf(pv.position, gstime(date)));
    return { elevation_deg: (la.elevation * 180) / Math.PI, azimuth_deg: (la.azimuth * 180) / Math.PI };
  };
}

export interface BruteCrossing {
  /** Sign change of elevation − mask, located by linear interpolation between 1 s samples. */
  atMs: number;
  rising: boolean;
}

/** Brute-force scan of elevation at 1 s; returns the samples so several masks can share them. */
export function scanElevation(elevation: (ms: number) => number, fromMs: number, toMs: number, stepMs = 1000) {
  const times: number[] = [];
  const els: number[] = [];
  for (let t = fromMs; t <= toMs; t += stepMs) {
    times.push(t);
    els.push(elevation(t));
  }
  return { times, els };
}

/** Mask crossings of a 1 s scan, and the sampled peak of each arc. */
export function bruteCrossings(scan: { times: number[]; els: number[] }, mask: number): BruteCrossing[] {
  const out: BruteCrossing[] = [];
  for (let i = 1; i < scan.times.length; i++) {
    const a = scan.els[i - 1]! - mask;
    const b = scan.els[i]! - mask;
    if ((a >= 0) !== (b >= 0)) {
      const t0 = scan.times[i - 1]!;
      const t1 = scan.times[i]!;
      out.push({ atMs: t0 + ((t1 - t0) * -a) / (b - a), rising: b >= 0 });
    }
  }
  return out;
}

/** Highest sampled elevation between two times. */
export function brutePeak(scan: { times: number[]; els: number[] }, fromMs: number, toMs: number) {
  let best = { atMs: NaN, el: -Infinity };
  scan.times.forEach((t, i) => {
    if (t >= fromMs && t <= toMs && scan.els[i]! > best.el) best = { atMs: t, el: scan.els[i]! };
  });
  return best;
}
