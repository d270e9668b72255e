import { sgFilter } from './savitzky-golay';
import { medianInPlace } from './robust';
import { cross, matVec, type Mat3, type Vec3 } from './vector3';

/** A run of samples [from, to) with near-uniform spacing dt. */
export interface UniformSegment {
  from: number;
  to: number;
  dt: number;
}

/**
 * Splits ascending sample times into runs of near-uniform spacing: a step larger than `gapFactor` × the
 * median step (or not positive) starts a new run. Filters that assume uniform sampling run per segment.
 */
export function uniformSegments(t: ArrayLike<number>, gapFactor = 1.5, medianStep_s = medianSpacing(t)): UniformSegment[] {
  const n = t.length;
  if (n === 0) return [];
  if (n === 1) return [{ from: 0, to: 1, dt: Number.NaN }];
  const med = medianStep_s;
  const segs: UniformSegment[] = [];
  let start = 0;
  for (let i = 1; i <= n; i++) {
    const step = i < n ? t[i]! - t[i - 1]! : Number.NaN;
    if (i === n || !(step > 0) || step > gapFactor * med) {
      const len = i - start;
      segs.push({ from: start, to: i, dt: len > 1 ? (t[i - 1]! - t[start]!) / (len - 1) : med });
      start = i;
    }
  }
  return segs;
}

/**
 * Median spacing of ascending sample times, s (NaN for fewer than two samples). Past 65 536 steps it is
 * the median of 65 536 steps taken at an even stride, which is all gap detection needs.
 */
export function medianSpacing(t: ArrayLike<number>): number {
  const steps = t.length - 1;
  if (steps < 1) return Number.NaN;
  const m = Math.min(steps, 65_536);
  const stride = steps / m;
  const d = new Float64Array(m);
  for (let k = 0; k < m; k++) {
    const i = 1 + Math.floor(k * stride);
    d[k] = t[i]! - t[i - 1]!;
  }
  return medianInPlace(d);
}

/** Savitzky–Golay settings for derivatives of telemetry. */
export interface DerivativeOptions {
  halfWidth: number;
  order: number;
}

/** Savitzky–Golay derivative (or smoothing with derivative 0) of y over t, segment by segment. */
export function sgOverTime(
  t: ArrayLike<number>,
  y: ArrayLike<number>,
  options: DerivativeOptions & { derivative?: number },
  segments: readonly UniformSegment[] = uniformSegments(t),
): Float64Array {
  const out = new Float64Array(y.length);
  for (const s of segments) sgFilter(y, { ...options, derivative: options.derivative ?? 1, dt: s.dt }, out, s.from, s.to);
  return out;
}

/**
 * Body torque from the gyro, N·m: τ_body = I ω̇ + ω × (I ω + h) (Euler's equations with internal momentum,
 * Markley & Crassidis 2014, ch. 3). With the loops' ḣ, τ_body + ḣ = τ_ext.
 */
export function bodyTorque(inertia: Mat3, omega: Vec3, omegaDot: Vec3, h: Vec3): Vec3 {
  const a = matVec(inertia, omegaDot);
  const Iw = matVec(inertia, omega);
  const g = cross(omega, [Iw[0] + h[0], Iw[1] + h[1], Iw[2] + h[2]]);
  return [a[0] + g[0], a[1] + g[1], a[2] + g[2]];
}

/** Momentum ledger: τ_ext estimate = τ_body + Σ ḣ_i n̂_i (what the gyro saw plus what the loops absorbed). */
export function ledgerResidual(tauBody: Vec3, hdotTotal: Vec3): Vec3 {
  return [tauBody[0] + hdotTotal[0], tauBody[1] + hdotTotal[1], tauBody[2] + hdotTotal[2]];
}

/**
 * Linear interpolation of y(ts) at query times tq (both ascending): NaN outside [ts₀, ts_last] or across a
 * source step longer than maxStep.
 */
export function interpolateAt(
  ts: ArrayLike<number>,
  y: ArrayLike<number>,
  tq: ArrayLike<number>,
  maxStep = Infinity,
  out: Float64Array = new Float64Array(tq.length),
): Float64Array {
  const n = ts.length;
  let j = 0;
  for (let i = 0; i < tq.length; i++) {
    const q = tq[i]!;
    if (n === 0 || q < ts[0]! || q > ts[n - 1]!) { out[i] = Number.NaN; continue; }
    while (j < n - 2 && ts[j + 1]! < q) j++;
    const t0 = ts[j]!, t1 = ts[Math.min(j + 1, n - 1)]!;
    if (t1 - t0 > maxStep) { out[i] = Number.NaN; continue; }
    const u = t1 > t0 ? (q - t0) / (t1 - t0) : 0;
    out[i] = y[j]! + u * (y[Math.min(j + 1, n - 1)]! - y[j]!);
  }
  return out;
}

/**
 * Adds scale·axis·y(tq) to three body-frame accumulators, with y linearly interpolated from (ts, y) as in
 * interpolateAt (NaN outside the source range or across a step longer than maxStep). Two series share
 * one walk: y → (ox, oy, oz), y2 → (px, py, pz).
 */
export function interpolateAddAlongAxis(
  ts: ArrayLike<number>,
  y: ArrayLike<number>,
  y2: ArrayLike<number>,
  tq: ArrayLike<number>,
  axis: Vec3,
  maxStep: number,
  ox: Float64Array, oy: Float64Array, oz: Float64Array,
  px: Float64Array, py: Float64Array, pz: Float64Array,
): void {
  const n = ts.length;
  const [ax, ay, az] = axis;
  let j = 0;
  for (let i = 0; i < tq.length; i++) {
    const q = tq[i]!;
    let a = Number.NaN, b = Number.NaN;
    if (n > 0 && q >= ts[0]! && q <= ts[n - 1]!) {
      while (j < n - 2 && ts[j + 1]! < q) j++;
      const j1 = Math.min(j + 1, n - 1);
      const t0 = ts[j]!, t1 = ts[j1]!;
      if (t1 - t0 <= maxStep) {
        const u = t1 > t0 ? (q - t0) / (t1 - t0) : 0;
        a = y[j]! + u * (y[j1]! - y[j]!);
        b = y2[j]! + u * (y2[j1]! - y2[j]!);
      }
    }
    ox[i] = ox[i]! + a * ax; oy[i] = oy[i]! + a * ay; oz[i] = oz[i]! + a * az;
    px[i] = px[i]! + b * ax; py[i] = py[i]! + b * ay; pz[i] = pz[i]! + b * az;
  }
}
