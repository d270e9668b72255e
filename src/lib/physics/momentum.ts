import type { SheetLoop } from '../spacecraft-sheet.schema';
import { totalPressureLoss } from './friction';
import { loopMomentum } from './loop-geometry';
import { idealPumpPressure } from './pump';
import { lineFit } from './least-squares';
import { matVec, norm, type Mat3, type Vec3 } from './vector3';

/** System angular momentum: body part, loop parts and their sum (body frame, N·m·s). */
export interface SystemMomentum {
  body: Vec3;
  loops: Vec3;
  total: Vec3;
  magnitude: number;
}

/** H_sys = I ω + Σ h_i n̂_i (Markley & Crassidis 2014, ch. 3): body momentum with the full tensor plus loop momenta along their axes. */
export function systemMomentum(inertia: Mat3, omega: Vec3, loops: readonly { axis: Vec3; h: number }[]): SystemMomentum {
  const body = matVec(inertia, omega);
  const l: Vec3 = [0, 0, 0];
  for (const { axis, h } of loops) { l[0] += h * axis[0]; l[1] += h * axis[1]; l[2] += h * axis[2]; }
  const total: Vec3 = [body[0] + l[0], body[1] + l[1], body[2] + l[2]];
  return { body, loops: l, total, magnitude: norm(total) };
}

/**
 * Root of a function that is non-decreasing on [lo, hi] with f(lo) ≤ 0 ≤ f(hi), by bisection to a
 * relative tolerance (a jump across zero converges onto the jump).
 */
export function bisect(f: (x: number) => number, lo: number, hi: number, relTol = 1e-12, maxIter = 200): number {
  let a = lo, b = hi;
  for (let i = 0; i < maxIter && b - a > relTol * Math.max(Math.abs(a), Math.abs(b), 1e-300); i++) {
    const mid = 0.5 * (a + b);
    if (f(mid) <= 0) a = mid;
    else b = mid;
  }
  return 0.5 * (a + b);
}

/**
 * Steady flow velocity at a pump current, m/s: the v where pump pressure = friction + MHD loss
 * (Δp_pump(I) = Δp_f(v) + Δp_MHD(v)), solved by bisection. `pressureScale` scales the ideal pump pressure
 * (1 = ideal, or a measured effectiveness).
 */
export function steadyFlowVelocity(current_a: number, loop: SheetLoop, pressureScale = 1): number {
  const dp = Math.abs(idealPumpPressure(current_a, loop) * pressureScale);
  if (dp === 0) return 0;
  let hi = 1e-3;
  while (totalPressureLoss(hi, loop) < dp && hi < 1e6) hi *= 2;
  const v = bisect((x) => totalPressureLoss(x, loop) - dp, 0, hi);
  return Math.sign(current_a * pressureScale) * v;
}

/** Momentum capacity of a loop, N·m·s: |h| of the steady flow at rated current. */
export function momentumCapacity(loop: SheetLoop, pressureScale = 1): number {
  return Math.abs(loopMomentum(loop, steadyFlowVelocity(loop.ratedCurrent_A, loop, pressureScale)));
}

/** Momentum margin in use, %: 100·|h| / capacity. */
export function momentumMarginInUse(h_Nms: number, capacity_Nms: number): number {
  return capacity_Nms > 0 ? (100 * Math.abs(h_Nms)) / capacity_Nms : Number.NaN;
}

/** Forecast of the time left before a loop saturates. */
export interface SaturationForecast {
  /** Seconds from the last window's time until |h| reaches capacity on the fitted trend. */
  timeToSaturation_s: number;
  /** Fitted rate of rise of |h|, N·m·s per s. */
  slope_Nms_per_s: number;
  slopeStdErr: number;
}

/**
 * Time to saturation from a linear fit of |h| against time over the last `n` points: null when the trend
 * is not rising (slope ≤ 0, or not above 2 standard errors when there are more than 2 points), or when
 * there are fewer than 3 points.
 */
export function forecastSaturation(
  t_s: ArrayLike<number>,
  absH: ArrayLike<number>,
  capacity_Nms: number,
  n = 10,
): SaturationForecast | null {
  const ts: number[] = [], hs: number[] = [];
  for (let i = t_s.length - 1; i >= 0 && ts.length < n; i--) {
    if (Number.isFinite(absH[i]!) && Number.isFinite(t_s[i]!)) { ts.unshift(t_s[i]!); hs.unshift(absH[i]!); }
  }
  if (ts.length < 3) return null;
  const fit = lineFit(ts, hs);
  if (!fit || !(fit.slope > 0) || !(fit.slope > 2 * fit.slopeStdErr)) return null;
  const tLast = ts[ts.length - 1]!;
  const hNow = fit.intercept + fit.slope * tLast;
  return { timeToSaturation_s: Math.max(0, (capacity_Nms - hNow) / fit.slope), slope_Nms_per_s: fit.slope, slopeStdErr: fit.slopeStdErr };
}
