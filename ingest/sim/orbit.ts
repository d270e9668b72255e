/**
 * Environment along the orbit: a circular orbit from the sheet's element set with J2 nodal drift,
 * a tilted-dipole geomagnetic field and the gravity-gradient torque. Simple on purpose: the feed
 * needs a plausible, smoothly varying environment, not a precise ephemeris.
 */

import type { Vec3 } from '../../src/lib/telemetry/types';

/** Earth's gravitational parameter, m³/s² (WGS 84). */
export const MU_EARTH = 3.986004418e14;
/** Earth's equatorial radius, m (WGS 84). */
export const R_EARTH = 6_378_137;
/** Second zonal harmonic (EGM96, from memory). */
const J2 = 1.08263e-3;
/** Dipole term M of the geomagnetic field, T·m³ (B ≈ λ M / R³ with λ 1 at the equator, 2 at the pole). */
export const EARTH_DIPOLE_T_M3 = 7.8e15;
/** North geomagnetic pole near 2020 (IGRF-13 dipole, from memory): 80.65° N, 72.68° W. */
const POLE_LAT = (80.65 * Math.PI) / 180;
const POLE_LON = (-72.68 * Math.PI) / 180;

const DEG = Math.PI / 180;

/** Mean elements of a circular orbit. */
export interface CircularOrbit {
  /** Semi-major axis, m. */
  a_m: number;
  inclination_rad: number;
  /** Right ascension of the ascending node at epoch, rad. */
  raan_rad: number;
  /** Argument of latitude at epoch (argument of perigee + mean anomaly), rad. */
  u0_rad: number;
  /** Mean motion, rad/s. */
  n_rad_s: number;
  /** Nodal drift from J2, rad/s. */
  raanRate_rad_s: number;
  epochMs: number;
}

/** Unix ms of a two-line element set's epoch field (columns 19–32 of line 1: yyddd.dddddddd). */
export function tleEpochMs(line1: string): number {
  const yy = Number(line1.slice(18, 20));
  const day = Number(line1.slice(20, 32));
  const year = yy < 57 ? 2000 + yy : 1900 + yy;
  return Date.UTC(year, 0, 1) + (day - 1) * 86_400_000;
}

/**
 * Circular orbit from a two-line element set: inclination, node, argument of perigee, mean
 * anomaly and mean motion (line 2 columns 9–16, 18–25, 35–42, 44–51, 53–63); eccentricity ignored.
 * Nodal drift dΩ/dt = −3/2 n J2 (R/a)² cos i (Vallado, Fundamentals of Astrodynamics and
 * Applications, 4th ed., 2013, from memory).
 */
export function circularOrbitFromTle(tle: readonly [string, string]): CircularOrbit {
  const [l1, l2] = tle;
  const inc = Number(l2.slice(8, 16)) * DEG;
  const raan = Number(l2.slice(17, 25)) * DEG;
  const argp = Number(l2.slice(34, 42)) * DEG;
  const ma = Number(l2.slice(43, 51)) * DEG;
  const revPerDay = Number(l2.slice(52, 63));
  const n = (revPerDay * 2 * Math.PI) / 86_400;
  const a = Math.cbrt(MU_EARTH / (n * n));
  const raanRate = -1.5 * n * J2 * (R_EARTH / a) ** 2 * Math.cos(inc);
  return { a_m: a, inclination_rad: inc, raan_rad: raan, u0_rad: argp + ma, n_rad_s: n, raanRate_rad_s: raanRate, epochMs: tleEpochMs(l1) };
}

/** Orbital period, s. */
export function orbitPeriod(orbit: CircularOrbit): number {
  return (2 * Math.PI) / orbit.n_rad_s;
}

/** Inertial (true-of-date, treated as J2000) position of the circular orbit at Unix ms, m. */
export function orbitPosition(orbit: CircularOrbit, ms: number): Vec3 {
  const dt = (ms - orbit.epochMs) / 1000;
  const u = orbit.u0_rad + orbit.n_rad_s * dt;
  const raan = orbit.raan_rad + orbit.raanRate_rad_s * dt;
  const cu = Math.cos(u), su = Math.sin(u);
  const co = Math.cos(raan), so = Math.sin(raan);
  const ci = Math.cos(orbit.inclination_rad), si = Math.sin(orbit.inclination_rad);
  const a = orbit.a_m;
  return [a * (cu * co - su * ci * so), a * (cu * so + su * ci * co), a * su * si];
}

/**
 * Greenwich mean sidereal angle, rad: 280.46061837° + 360.98564736629° · (JD − 2451545.0)
 * (Meeus, Astronomical Algorithms, 2nd ed., 1998, eq. 12.4, from memory).
 */
export function greenwichSiderealAngle(ms: number): number {
  const days = (ms - 946_728_000_000) / 86_400_000; // JD 2451545.0 = 2000-01-01T12:00:00Z
  const deg = 280.46061837 + 360.98564736629 * days;
  return (((deg % 360) + 360) % 360) * DEG;
}

/**
 * Tilted-dipole geomagnetic field at inertial position r (m), Unix ms, in tesla:
 * B = (M / |r|³) [3 (m̂·r̂) r̂ − m̂], m̂ pointing to the south geomagnetic pole, which gives λ M / R³
 * with λ = 1 on the magnetic equator and 2 at the poles.
 */
export function dipoleField(r: readonly number[], ms: number): Vec3 {
  const theta = greenwichSiderealAngle(ms);
  const lon = POLE_LON + theta;
  // unit vector to the north geomagnetic pole, inertial; the moment points the other way
  const mx = -Math.cos(POLE_LAT) * Math.cos(lon);
  const my = -Math.cos(POLE_LAT) * Math.sin(lon);
  const mz = -Math.sin(POLE_LAT);
  const rn = Math.hypot(r[0]!, r[1]!, r[2]!);
  const rx = r[0]! / rn, ry = r[1]! / rn, rz = r[2]! / rn;
  const k = EARTH_DIPOLE_T_M3 / (rn * rn * rn);
  const mr = 3 * (mx * rx + my * ry + mz * rz);
  return [k * (mr * rx - mx), k * (mr * ry - my), k * (mr * rz - mz)];
}

/**
 * Gravity-gradient torque in body axes, N·m: τ = 3 μ / R³ · (r̂ × I r̂), r̂ the body-frame unit
 * vector from the Earth's centre to the spacecraft (Wertz & Larson, Space Mission Analysis and
 * Design, 3rd ed., ch. 11; Markley & Crassidis, 2014, ch. 3).
 */
export function gravityGradientTorque(inertia: readonly (readonly number[])[], rBodyUnit: readonly number[], radius_m: number): Vec3 {
  const x = rBodyUnit[0]!, y = rBodyUnit[1]!, z = rBodyUnit[2]!;
  const i0 = inertia[0]!, i1 = inertia[1]!, i2 = inertia[2]!;
  const ix = i0[0]! * x + i0[1]! * y + i0[2]! * z;
  const iy = i1[0]! * x + i1[1]! * y + i1[2]! * z;
  const iz = i2[0]! * x + i2[1]! * y + i2[2]! * z;
  const k = (3 * MU_EARTH) / radius_m ** 3;
  return [k * (y * iz - z * iy), k * (z * ix - x * iz), k * (x * iy - y * ix)];
}
