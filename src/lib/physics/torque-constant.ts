import { NormalEquations } from './least-squares';
import type { UniformSegment } from './torque';

/*
 * Sign convention. Positive pump current drives the fluid in the loop's positive sense, so the pump puts
 * +kT·I of torque on the fluid about +axis and, by reaction, −kT·I on the body. The fluid's balance is
 * dh/dt = kT·I − τ_loss(v), so the pump torque is recovered as the fluid torque τ_f = dh/dt + τ_loss(v),
 * with τ_loss from the sheet's friction and MHD model. The fit τ_f ≈ kT·I + c1·v + c2·v|v| lets c1, c2
 * take up what the loss model gets wrong (a linear and a quadratic friction term).
 */

/** Result of fitting a loop's torque constant over one window. */
export interface TorqueConstantFit {
  /** Torque constant, N·m/A. */
  kT: number;
  kTStdErr: number;
  /** Correction to the loss model: linear (N·m per m/s) and quadratic (N·m per (m/s)²) terms. */
  c1: number;
  c2: number;
  /** Intercept, N·m (0 unless fitted). */
  c0: number;
  residualSd: number;
  n: number;
  /** Standard deviation of the current over the window, A. */
  currentStd_a: number;
}

/** Options of the torque-constant fit. */
export interface TorqueConstantOptions {
  /** Windows whose current standard deviation is below this are not fitted, A. */
  minCurrentStd_a: number;
  /** Also fit a constant term (default false). */
  intercept?: boolean;
  /** At least this many samples (default 20). */
  minSamples?: number;
  /** Residuals are correlated over about this many samples: clustered standard errors (default 1: none). */
  clusterLength?: number;
}

/**
 * Least-squares fit of τ_f = kT·I + c1·v + c2·v|v| (+ c0) over samples [from, to), with the standard error
 * of kT from s²(XᵀX)⁻¹ (or clustered). `fluidTorque` is dh/dt + τ_loss(v) per sample; `flowAbsFlow`, when
 * given, is the v|v| regressor (otherwise formed from `flow`). Rows with a non-finite value are skipped.
 * Null when the current did not vary (std below the threshold), samples are too few, or the regressors are
 * degenerate.
 */
export function fitTorqueConstant(
  current_a: ArrayLike<number>,
  flow_m_s: ArrayLike<number>,
  fluidTorque_Nm: ArrayLike<number>,
  options: TorqueConstantOptions,
  from = 0,
  to = current_a.length,
  flowAbsFlow?: ArrayLike<number>,
): TorqueConstantFit | null {
  const p = options.intercept ? 4 : 3;
  const ne = new NormalEquations(p, options.clusterLength ?? 1);
  let shift = Number.NaN, sI = 0, sII = 0;
  if (p === 3) {
    // the common case, summed in locals and handed over one cluster at a time (same sums as add())
    const cl = ne.clusterLength;
    let k = 0, s00 = 0, s01 = 0, s02 = 0, s11 = 0, s12 = 0, s22 = 0, t0 = 0, t1 = 0, t2 = 0, yy = 0, ys = 0;
    for (let i = from; i < to; i++) {
      const I = current_a[i]!, v = flow_m_s[i]!, y = fluidTorque_Nm[i]!;
      const vv = flowAbsFlow ? flowAbsFlow[i]! : v * Math.abs(v);
      if (!Number.isFinite(I + v + y + vv)) continue;
      if (Number.isNaN(shift)) shift = I;
      const d = I - shift;
      sI += d; sII += d * d;
      s00 += I * I; s01 += I * v; s02 += I * vv; s11 += v * v; s12 += v * vv; s22 += vv * vv;
      t0 += I * y; t1 += v * y; t2 += vv * y; yy += y * y; ys += y;
      if (++k === cl && cl > 1) {
        ne.addBlock3(k, s00, s01, s02, s11, s12, s22, t0, t1, t2, yy, ys);
        k = s00 = s01 = s02 = s11 = s12 = s22 = t0 = t1 = t2 = yy = ys = 0;
      }
    }
    ne.addBlock3(k, s00, s01, s02, s11, s12, s22, t0, t1, t2, yy, ys);
  } else {
    const row = new Float64Array(p);
    row[3] = 1;
    for (let i = from; i < to; i++) {
      const I = current_a[i]!, v = flow_m_s[i]!, y = fluidTorque_Nm[i]!;
      const vv = flowAbsFlow ? flowAbsFlow[i]! : v * Math.abs(v);
      if (!Number.isFinite(I) || !Number.isFinite(v) || !Number.isFinite(y) || !Number.isFinite(vv)) continue;
      if (Number.isNaN(shift)) shift = I;
      sI += I - shift; sII += (I - shift) ** 2;
      row[0] = I; row[1] = v; row[2] = vv;
      ne.add(row, y);
    }
  }
  const n = ne.n;
  if (n < (options.minSamples ?? 20)) return null;
  const std = n > 1 ? Math.sqrt(Math.max(0, (sII - (sI * sI) / n) / (n - 1))) : 0;
  if (!(std >= options.minCurrentStd_a)) return null;
  const fit = ne.solve();
  if (!fit) return null;
  return {
    kT: fit.coef[0]!,
    kTStdErr: fit.stdErr[0]!,
    c1: fit.coef[1]!,
    c2: fit.coef[2]!,
    c0: options.intercept ? fit.coef[3]! : 0,
    residualSd: fit.residualSd,
    n,
    currentStd_a: std,
  };
}

/** Pump-pressure constant from the pressure channel. */
export interface PressureConstantFit {
  /** Δp/I, Pa/A. */
  kp: number;
  kpStdErr: number;
  /** Pressure at zero current, Pa. */
  offset_pa: number;
  n: number;
}

/**
 * OLS of the pump's developed pressure on current, Δp + k_MHD·v = kp·I + offset, when the current varied.
 * The taps of the pressure channel sit at the ends of the pump section, so the rise they report is the
 * Lorentz pressure η·Σ I·B/b less the Hartmann (MHD) loss in the pump gaps, k_MHD·v (linear in v, see
 * mhdPressureLoss). Because the flow follows the current, leaving that loss in would bias kp low by
 * k_MHD·cov(v, I)/var(I); with `flow_m_s` and `mhdPerVelocity_pa_s_m` it is added back sample by sample
 * first, so kp/kp_ideal is the pump's effectiveness η. Without them the raw rise is fitted.
 */
export function fitPressureConstant(
  current_a: ArrayLike<number>,
  pressure_pa: ArrayLike<number>,
  minCurrentStd_a: number,
  from = 0,
  to = current_a.length,
  minSamples = 20,
  flow_m_s?: ArrayLike<number>,
  mhdPerVelocity_pa_s_m = 0,
): PressureConstantFit | null {
  // straight-line least squares from sums about the first sample (shifted for accuracy)
  let n = 0, i0 = Number.NaN, p0 = 0, sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0;
  for (let i = from; i < to; i++) {
    const I = current_a[i]!, p = flow_m_s ? pressure_pa[i]! + mhdPerVelocity_pa_s_m * flow_m_s[i]! : pressure_pa[i]!;
    if (!Number.isFinite(I) || !Number.isFinite(p)) continue;
    if (Number.isNaN(i0)) { i0 = I; p0 = p; }
    const x = I - i0, y = p - p0;
    n++; sx += x; sy += y; sxx += x * x; sxy += x * y; syy += y * y;
  }
  if (n < Math.max(3, minSamples)) return null;
  const Sxx = sxx - (sx * sx) / n, Sxy = sxy - (sx * sy) / n, Syy = syy - (sy * sy) / n;
  if (!(Sxx > 0) || !(Math.sqrt(Sxx / (n - 1)) >= minCurrentStd_a)) return null;
  const kp = Sxy / Sxx;
  const rss = Math.max(0, Syy - kp * Sxy);
  const offset = p0 + sy / n - kp * (i0 + sx / n);
  return { kp, kpStdErr: Math.sqrt(rss / (n - 2) / Sxx), offset_pa: offset, n };
}

/**
 * NdFeB remanence falls by about 0.1 %/K with temperature (a typical datasheet coefficient, from memory),
 * and the pump force with it. Compensated effectiveness = effectiveness / (1 − α (T_mag − T_ref)).
 */
export const NDFEB_REMANENCE_COEFF_PER_K = 0.001;

/** Effectiveness referred to the magnet reference temperature. */
export function compensateMagnetTemperature(
  effectiveness: number,
  magnetTemp_c: number,
  refTemp_c = 20,
  coeff_per_k = NDFEB_REMANENCE_COEFF_PER_K,
): number {
  return effectiveness / (1 - coeff_per_k * (magnetTemp_c - refTemp_c));
}

/** Simpson's weights of the three-point mean over ±Δt: outer samples and the centre. */
const S1 = 1 / 6, S0 = 2 / 3;

/** Series for a torque-constant fit, aligned so that dh/dt = kT·I − τ_loss(v) holds between them. */
export interface TorqueFitSeries {
  /** F[(h_{i+1} − h_{i−1})/2Δt + M[τ_loss(v)]_i]: the fluid torque, N·m. */
  fluidTorque: Float64Array;
  /** F[M[I]], F[M[v]], F[M[v|v|]], with M the three-point Simpson mean (⅙, ⅔, ⅙) and F a moving mean. */
  current: Float64Array;
  flow: Float64Array;
  flowAbsFlow: Float64Array;
}

/**
 * Prepares the kT regression so that differentiation cannot bias it. A smoothing derivative filter
 * attenuates fast changes (a quadratic Savitzky–Golay derivative over 2 s loses 8 % at a 7 s period) and
 * would bias kT against unfiltered current. The central difference of h is exactly the mean of dh/dt over
 * ±Δt, so the regressors are averaged over the same ±Δt by Simpson's rule, (⅙, ⅔, ⅙): its error in that
 * mean is O((ωΔt)⁴) (ω⁴Δt⁴/180 at angular frequency ω), where the three-point trapezoid (¼, ½, ¼) errs by
 * (ωΔt)²/12 and biases kT high by as much (0.2 % for a 4 s line at 10 Hz; Abramowitz & Stegun 1964,
 * 25.4.5, Simpson's rule, from memory). The same holds for samples that are 100 ms means (integrating
 * converters): the central difference of means is the mean of dh/dt over a box convolved with a 2Δt box,
 * and Simpson's weights match the 2Δt box's second moment (Δt²/3) exactly, the trapezoid's do not.
 * One moving mean F of 2·halfWidth + 1 samples is then applied to every
 * series alike (a linear filter keeps the relation and its coefficients) to cut sensor noise in the
 * regressors, which would otherwise bias kT towards zero (errors in variables). Samples whose filter
 * window leaves the segment are NaN. The residuals are then correlated over the filter length: fit with
 * clustered standard errors (olsFit's clusterLength).
 *
 * The fit separates kT from the loss terms only through the fluid's inertia (dh/dt), so current and flow
 * must be sampled at the same instant: on a desk loop whose flow settles in about 0.4 s, a 10 ms lag of
 * one against the other biases kT by about 1 %, 50 ms by about 6 % (our own simulation).
 */
export function torqueFitSeries(
  h: ArrayLike<number>,
  current_a: ArrayLike<number>,
  flow_m_s: ArrayLike<number>,
  lossTorque_Nm: ArrayLike<number>,
  segments: readonly UniformSegment[],
  halfWidth = 10,
): TorqueFitSeries {
  const n = h.length;
  const out = {
    fluidTorque: new Float64Array(n).fill(Number.NaN),
    current: new Float64Array(n).fill(Number.NaN),
    flow: new Float64Array(n).fill(Number.NaN),
    flowAbsFlow: new Float64Array(n).fill(Number.NaN),
  };
  const len = 2 * halfWidth + 1;
  const ring = new Float64Array(4 * len); // the last len Simpson values of the four series
  for (const s of segments) {
    const k2 = 1 / (2 * s.dt);
    const from = s.from + 1, to = s.to - 1;
    if (to - from < len) continue;
    let s0 = 0, s1 = 0, s2 = 0, s3 = 0, bad = 0;
    for (let i = from; i < to; i++) {
      const slot = 4 * ((i - from) % len);
      if (i - from >= len) {
        const r0 = ring[slot]!, r1 = ring[slot + 1]!, r2 = ring[slot + 2]!, r3 = ring[slot + 3]!;
        if (Number.isFinite(r0 + r1 + r2 + r3)) { s0 -= r0; s1 -= r1; s2 -= r2; s3 -= r3; } else bad--;
      }
      const a = flow_m_s[i - 1]!, b = flow_m_s[i]!, c = flow_m_s[i + 1]!;
      const r0 = (h[i + 1]! - h[i - 1]!) * k2 + S1 * (lossTorque_Nm[i - 1]! + lossTorque_Nm[i + 1]!) + S0 * lossTorque_Nm[i]!;
      const r1 = S1 * (current_a[i - 1]! + current_a[i + 1]!) + S0 * current_a[i]!;
      const r2 = S1 * (a + c) + S0 * b;
      const r3 = S1 * (a * Math.abs(a) + c * Math.abs(c)) + S0 * b * Math.abs(b);
      ring[slot] = r0; ring[slot + 1] = r1; ring[slot + 2] = r2; ring[slot + 3] = r3;
      if (Number.isFinite(r0 + r1 + r2 + r3)) { s0 += r0; s1 += r1; s2 += r2; s3 += r3; } else bad++;
      if (i - from >= len - 1 && bad === 0) {
        const c0 = i - halfWidth;
        out.fluidTorque[c0] = s0 / len; out.current[c0] = s1 / len; out.flow[c0] = s2 / len; out.flowAbsFlow[c0] = s3 / len;
      }
    }
  }
  return out;
}
