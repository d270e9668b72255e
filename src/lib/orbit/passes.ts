import { brentRoot, goldenSectionMaximum } from './refine';
import { PropagationError, lookAngles, type Satellite } from './sgp4';
import type { GroundStation } from './station';

export { stationFromDegrees, type GroundStation } from './station';

/** One pass of a spacecraft over a ground station, above the station's elevation mask. */
export interface Pass {
  /** Acquisition of signal: elevation rises through the mask (or the window start, if already up). */
  aosMs: number;
  /** Time of maximum elevation. */
  tcaMs: number;
  /** Loss of signal: elevation sets through the mask (or the window end, if still up). */
  losMs: number;
  maxElevation_deg: number;
  aosAzimuth_deg: number;
  losAzimuth_deg: number;
  /** The spacecraft was already above the mask at the window start; aosMs is the window start. */
  inProgressAtStart: boolean;
  /** The spacecraft was still above the mask at the window end; losMs is the window end. */
  inProgressAtEnd: boolean;
}

export interface FindPassesOptions {
  /** Coarse scan step, ms (default 30 s; 1 s to 10 min allowed). */
  stepMs?: number;
  /** AOS and LOS are refined to within this, ms (default 10 ms). */
  crossingToleranceMs?: number;
  /** The time of maximum elevation is refined to within this, ms (default 100 ms). */
  maximumToleranceMs?: number;
}

/**
 * Default coarse step. The scan does not rely on a pass straddling a sample: every sampled local
 * maximum of elevation that lies below the mask is refined as well, so a grazing pass shorter than
 * the step is still found. The step need only keep elevation unimodal across two steps, so that each
 * true maximum lies between the neighbours of a sampled one; for an Earth orbit the maxima of
 * elevation come about one orbit apart (88 min or more), far longer than 60 s.
 */
export const DEFAULT_PASS_STEP_MS = 30_000;

/** Passes of a satellite over a station between two Unix times (ms), sorted and non-overlapping. */
export function findPasses(
  sat: Satellite,
  station: GroundStation,
  fromMs: number,
  toMs: number,
  options: FindPassesOptions = {},
): Pass[] {
  const stepMs = options.stepMs ?? DEFAULT_PASS_STEP_MS;
  const rootTol = options.crossingToleranceMs ?? 10;
  const maxTol = options.maximumToleranceMs ?? 100;
  if (!Number.isFinite(fromMs) || !Number.isFinite(toMs)) throw new RangeError('fromMs and toMs must be finite Unix times in ms');
  if (toMs < fromMs) throw new RangeError(`toMs (${toMs}) is before fromMs (${fromMs})`);
  if (!(stepMs >= 1000 && stepMs <= 600_000)) throw new RangeError(`stepMs must be 1000–600000 (got ${stepMs})`);
  if (!(rootTol > 0 && rootTol <= 500)) throw new RangeError(`crossingToleranceMs must be above 0 and at most 500 (got ${rootTol})`);
  if (!(maxTol > 0 && maxTol <= 5000)) throw new RangeError(`maximumToleranceMs must be above 0 and at most 5000 (got ${maxTol})`);
  if (toMs === fromMs) return [];

  const mask = station.elevationMask_deg;
  const look = (t: number) => {
    const la = lookAngles(sat, station, t);
    if (la === null) throw new PropagationError(sat.catalogNumber, t, sat.satrec.error);
    return la;
  };
  /** Elevation above the mask, degrees. */
  const g = (t: number) => look(t).elevation_deg - mask;

  const times: number[] = [];
  for (let i = 0; fromMs + i * stepMs < toMs; i++) times.push(fromMs + i * stepMs);
  times.push(toMs);
  const n = times.length;
  const vals = times.map(g);
  const t = (i: number) => times[i]!;
  const v = (i: number) => vals[i]!;

  const passes: Pass[] = [];
  const build = (aosMs: number, losMs: number, tca: { x: number; fx: number }, atStart: boolean, atEnd: boolean): Pass => ({
    aosMs,
    tcaMs: tca.x,
    losMs,
    maxElevation_deg: tca.fx + mask,
    aosAzimuth_deg: look(aosMs).azimuth_deg,
    losAzimuth_deg: look(losMs).azimuth_deg,
    inProgressAtStart: atStart,
    inProgressAtEnd: atEnd,
  });
  /** Maximum of g on [lo, hi], endpoints included (they may be the window edges). */
  const maximum = (lo: number, hi: number) => {
    let best = goldenSectionMaximum(g, lo, hi, maxTol);
    for (const x of [lo, hi]) {
      const fx = g(x);
      if (fx > best.fx) best = { x, fx };
    }
    return best;
  };

  let i = 0;
  while (i < n) {
    if (v(i) >= 0) {
      // A run of samples at or above the mask.
      let j = i;
      while (j + 1 < n && v(j + 1) >= 0) j++;
      const atStart = i === 0;
      const atEnd = j === n - 1;
      const aos = atStart ? fromMs : brentRoot(g, t(i - 1), t(i), v(i - 1), v(i), rootTol);
      const los = atEnd ? toMs : brentRoot(g, t(j), t(j + 1), v(j), v(j + 1), rootTol);
      let k = i;
      for (let m = i + 1; m <= j; m++) if (v(m) > v(k)) k = m;
      const lo = Math.max(aos, k > 0 ? t(k - 1) : fromMs);
      const hi = Math.min(los, k < n - 1 ? t(k + 1) : toMs);
      passes.push(build(aos, los, maximum(lo, hi), atStart, atEnd));
      i = j + 1;
      continue;
    }
    // Below the mask: a sampled local maximum may hide a short pass between its neighbours.
    const rising = i === 0 || v(i) > v(i - 1);
    const notRisingNext = i === n - 1 || v(i) >= v(i + 1);
    if (rising && notRisingNext && n > 1) {
      const lo = t(Math.max(0, i - 1));
      const hi = t(Math.min(n - 1, i + 1));
      const peak = goldenSectionMaximum(g, lo, hi, maxTol);
      if (peak.fx >= 0) {
        const aos = brentRoot(g, lo, peak.x, g(lo), peak.fx, rootTol);
        const los = brentRoot(g, peak.x, hi, peak.fx, g(hi), rootTol);
        passes.push(build(aos, los, peak, false, false));
      }
    }
    i++;
  }
  return passes;
}
