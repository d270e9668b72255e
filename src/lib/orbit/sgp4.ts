import { SatRecError, ecfToLookAngles, eciToEcf, gstime, sgp4, twoline2satrec, type SatRec } from 'satellite.js';
import type { GroundStation } from './station';

/** A vector in kilometres or kilometres per second. */
export type Vec3 = [number, number, number];

/** A parsed two-line element set, ready for SGP4. */
export interface Satellite {
  /** satellite.js's SGP4 state; SGP4 writes its last time and error code into it on every call. */
  readonly satrec: SatRec;
  readonly catalogNumber: string;
  /** Epoch of the element set, Unix ms (UTC). */
  readonly epochMs: number;
  readonly meanMotion_revPerDay: number;
  readonly period_min: number;
  readonly line1: string;
  readonly line2: string;
}

/** Position and velocity in the TEME frame of SGP4. */
export interface EciState {
  position_km: Vec3;
  velocity_km_s: Vec3;
}

/** Azimuth (from north through east), elevation and slant range seen from a ground station. */
export interface LookAngles {
  azimuth_deg: number;
  elevation_deg: number;
  range_km: number;
}

/** The element set could not be read; `line` says which line (or null for both). */
export class TleError extends Error {
  override readonly name = 'TleError';
  constructor(
    readonly line: 1 | 2 | null,
    message: string,
  ) {
    super(line === null ? message : `TLE line ${line}: ${message}`);
  }
}

/** SGP4 gave no position: the orbit has decayed or its elements left their valid range. */
export class PropagationError extends Error {
  override readonly name = 'PropagationError';
  constructor(
    readonly catalogNumber: string,
    readonly atMs: number,
    readonly code: SatRecError,
  ) {
    super(`SGP4 cannot propagate satellite ${catalogNumber} to ${new Date(atMs).toISOString()}: ${describeSatRecError(code)}`);
  }
}

const REASONS: Record<number, string> = {
  [SatRecError.MeanEccentricityOutOfRange]: 'mean eccentricity left the range 0 ≤ e < 1',
  [SatRecError.MeanMotionBelowZero]: 'mean motion fell below zero',
  [SatRecError.PerturbedEccentricityOutOfRange]: 'perturbed eccentricity left the range 0 ≤ e < 1',
  [SatRecError.SemiLatusRectumBelowZero]: 'semi-latus rectum fell below zero',
  [SatRecError.Decayed]: 'the orbit has decayed (position below the Earth’s surface)',
};

/** Words for an SGP4 error code. */
export function describeSatRecError(code: SatRecError): string {
  return REASONS[code] ?? `SGP4 error code ${code}`;
}

const MS_PER_DAY = 86_400_000;
const UNIX_EPOCH_JD = 2_440_587.5;

/** Modulo-10 checksum of a TLE line: digits count their value, '-' counts 1 (common practice of the format). */
export function tleChecksum(line: string): number {
  let sum = 0;
  for (const ch of line.slice(0, 68)) sum += ch === '-' ? 1 : ch >= '0' && ch <= '9' ? ch.charCodeAt(0) - 48 : 0;
  return sum % 10;
}

function checkLine(n: 1 | 2, raw: unknown, verifyChecksum: boolean): string {
  if (typeof raw !== 'string') throw new TleError(n, 'must be a string');
  const line = raw.trimEnd();
  if (line.length !== 69) throw new TleError(n, `must be 69 characters (it has ${line.length})`);
  if (!line.startsWith(`${n} `)) throw new TleError(n, `must start with "${n} "`);
  if (verifyChecksum) {
    const expected = tleChecksum(line);
    if (line[68] !== String(expected)) {
      throw new TleError(n, `checksum is wrong (column 69 has "${line[68]}", the line sums to ${expected})`);
    }
  }
  return line;
}

function field(n: 1 | 2, line: string, from: number, to: number, what: string, pattern: RegExp): void {
  const text = line.slice(from - 1, to);
  if (!pattern.test(text)) throw new TleError(n, `${what} (columns ${from}–${to}) is not readable: "${text}"`);
}

const DECIMAL = /^ *[-+]?\d*\.?\d+ *$|^ *[-+]?\d+\.\d* *$/;
const IMPLIED_DECIMAL = /^[ +-][ \d]{5}[-+ ]\d$/;

export interface ParseTleOptions {
  /** Reject lines whose checksum digit is wrong (default true). */
  verifyChecksum?: boolean;
}

/** Read a two-line element set (fixed columns of the format) and initialise SGP4 for it (Vallado et al. 2006). */
export function parseTle(line1: string, line2: string, options: ParseTleOptions = {}): Satellite {
  const verify = options.verifyChecksum ?? true;
  const l1 = checkLine(1, line1, verify);
  const l2 = checkLine(2, line2, verify);
  if (l1.slice(2, 7) !== l2.slice(2, 7)) {
    throw new TleError(null, `the two lines name different satellites ("${l1.slice(2, 7)}" and "${l2.slice(2, 7)}")`);
  }
  field(1, l1, 19, 20, 'epoch year', /^\d\d$/);
  field(1, l1, 21, 32, 'epoch day', DECIMAL);
  field(1, l1, 34, 43, 'first derivative of mean motion', DECIMAL);
  field(1, l1, 45, 52, 'second derivative of mean motion', IMPLIED_DECIMAL);
  field(1, l1, 54, 61, 'drag term B*', IMPLIED_DECIMAL);
  field(2, l2, 9, 16, 'inclination', DECIMAL);
  field(2, l2, 18, 25, 'right ascension of the ascending node', DECIMAL);
  field(2, l2, 27, 33, 'eccentricity', /^[ \d]{7}$/);
  field(2, l2, 35, 42, 'argument of perigee', DECIMAL);
  field(2, l2, 44, 51, 'mean anomaly', DECIMAL);
  field(2, l2, 53, 63, 'mean motion', DECIMAL);

  const epochDay = Number(l1.slice(20, 32));
  if (!(epochDay >= 1 && epochDay < 367)) throw new TleError(1, `epoch day must be from 1 to 366.99… (got ${epochDay})`);
  const inclination = Number(l2.slice(8, 16));
  if (!(inclination >= 0 && inclination <= 180)) throw new TleError(2, `inclination must be 0–180° (got ${inclination})`);
  const meanMotion = Number(l2.slice(52, 63));
  if (!(meanMotion > 0 && meanMotion < 20)) {
    throw new TleError(2, `mean motion must be above 0 and below 20 rev/day (got ${meanMotion})`);
  }

  let satrec: SatRec;
  try {
    satrec = twoline2satrec(l1, l2);
  } catch (err) {
    throw new TleError(null, `SGP4 could not initialise: ${err instanceof Error ? err.message : String(err)}`);
  }
  if (satrec.error !== SatRecError.None) {
    throw new TleError(null, `SGP4 rejects the element set: ${describeSatRecError(satrec.error)}`);
  }
  // Two-digit epoch years: 57–99 are 1957–1999, 00–56 are 2000–2056 (common practice of the format).
  const yy = Number(l1.slice(18, 20));
  const year = yy < 57 ? 2000 + yy : 1900 + yy;
  const epochMs = Date.UTC(year, 0, 1) + (satrec.epochdays - 1) * MS_PER_DAY;
  return Object.freeze({
    satrec,
    catalogNumber: l1.slice(2, 7).trim(),
    epochMs,
    meanMotion_revPerDay: meanMotion,
    period_min: 1440 / meanMotion,
    line1: l1,
    line2: l2,
  });
}

/** Julian date (UTC) of a Unix time in ms. */
export function julianDateFromUnixMs(unixMs: number): number {
  return unixMs / MS_PER_DAY + UNIX_EPOCH_JD;
}

/** SGP4 position and velocity (TEME, km and km/s) at a Unix time, or null when SGP4 fails (Hoots & Roehrich 1980). */
export function propagateEci(sat: Satellite, unixMs: number): EciState | null {
  if (!Number.isFinite(unixMs)) return null;
  // Minutes since epoch from the millisecond difference: keeps sub-millisecond precision that a
  // difference of two Julian dates (≈2.46e6 d) would lose.
  const pv = sgp4(sat.satrec, (unixMs - sat.epochMs) / 60_000);
  if (pv === null) return null;
  const { position: r, velocity: v } = pv;
  if (![r.x, r.y, r.z, v.x, v.y, v.z].every(Number.isFinite)) return null;
  return { position_km: [r.x, r.y, r.z], velocity_km_s: [v.x, v.y, v.z] };
}

/**
 * Azimuth, elevation and range of the satellite from a station at a Unix time, or null when SGP4 fails.
 * TEME is turned to Earth-fixed by Greenwich mean sidereal time alone (Vallado 2004, eq. 3-45, as satellite.js's
 * gstime), with UTC standing in for UT1 and polar motion ignored: errors of well under a kilometre at the satellite.
 */
export function lookAngles(sat: Satellite, station: GroundStation, unixMs: number): LookAngles | null {
  const state = propagateEci(sat, unixMs);
  if (state === null) return null;
  const [x, y, z] = state.position_km;
  const ecf = eciToEcf({ x, y, z }, gstime(julianDateFromUnixMs(unixMs)));
  const la = ecfToLookAngles(station.geodetic, ecf);
  const az = (la.azimuth * 180) / Math.PI;
  return {
    azimuth_deg: az >= 360 ? az - 360 : az < 0 ? az + 360 : az,
    elevation_deg: (la.elevation * 180) / Math.PI,
    range_km: la.rangeSat,
  };
}
