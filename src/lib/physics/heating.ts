import type { SheetLoop } from '../spacecraft-sheet.schema';
import { olsFit } from './least-squares';
import { backEmf } from './pump';

/*
 * Electrode heating. Electrode voltage V = I·R + E, where E = Σ v·B·a is the back-EMF of the moving
 * fluid (positive current drives positive flow, so E opposes it). R lumps the fluid gap, the electrode
 * contacts and the leads between the voltage taps. The power dissipated as heat is (V − E)·I = I²R;
 * E·I is the power that goes into the flow.
 */

/**
 * Window resistance, Ω: least squares through the origin of (V − E) on I, R = Σ(V − E)I / ΣI² (Ohm's
 * law with the back-EMF removed). Null when the RMS current is below `minRmsCurrent_a`.
 */
export function windowResistance(
  current_a: ArrayLike<number>,
  voltage_v: ArrayLike<number>,
  flow_m_s: ArrayLike<number>,
  loop: SheetLoop,
  from = 0,
  to = current_a.length,
  minRmsCurrent_a = 0,
): number | null {
  let sxy = 0, sxx = 0, n = 0;
  const emfPerV = backEmf(1, loop);
  for (let i = from; i < to; i++) {
    const I = current_a[i]!, V = voltage_v[i]!, v = flow_m_s[i]!;
    if (!Number.isFinite(I) || !Number.isFinite(V) || !Number.isFinite(v)) continue;
    sxy += (V - emfPerV * v) * I;
    sxx += I * I;
    n++;
  }
  if (n === 0 || !(sxx > 0) || Math.sqrt(sxx / n) < minRmsCurrent_a) return null;
  return sxy / sxx;
}

/** Mean Joule power over samples, W: mean of (V − E)·I = I²R. */
export function meanJoulePower(
  current_a: ArrayLike<number>,
  voltage_v: ArrayLike<number>,
  flow_m_s: ArrayLike<number>,
  loop: SheetLoop,
  from = 0,
  to = current_a.length,
): number {
  const emfPerV = backEmf(1, loop);
  let s = 0, n = 0;
  for (let i = from; i < to; i++) {
    const p = (voltage_v[i]! - emfPerV * flow_m_s[i]!) * current_a[i]!;
    if (Number.isFinite(p)) { s += p; n++; }
  }
  return n > 0 ? s / n : Number.NaN;
}

/** First-order thermal model C dT/dt = P − (T − T_env)/R_th (lumped capacitance, Newton cooling). */
export interface ThermalModel {
  /** Thermal resistance to the environment, K/W. */
  rth_k_w: number;
  /** Heat capacity, J/K. */
  capacity_j_k: number;
  /** Time constant τ = C·R_th, s. */
  tau_s: number;
  /** Environment temperature, °C. */
  env_c: number;
}

/** Analytic response at constant P: T(t) = T∞ + (T₀ − T∞) e^(−t/τ), T∞ = T_env + P·R_th. */
export function thermalResponse(m: ThermalModel, power_w: number, t0_c: number, t_s: number): number {
  const tInf = m.env_c + power_w * m.rth_k_w;
  return tInf + (t0_c - tInf) * Math.exp(-t_s / m.tau_s);
}

/**
 * Time for the temperature to reach `limit_c` at constant power from `now_c`, s: τ ln((T∞ − T)/(T∞ − T_lim));
 * 0 when already at or above the limit, null when T∞ ≤ limit (never reached).
 */
export function timeToLimit(m: ThermalModel, power_w: number, now_c: number, limit_c: number): number | null {
  if (now_c >= limit_c) return 0;
  const tInf = m.env_c + power_w * m.rth_k_w;
  if (!(tInf > limit_c)) return null;
  return m.tau_s * Math.log((tInf - now_c) / (tInf - limit_c));
}

/** Thermal model fitted from history. */
export interface ThermalFit extends ThermalModel {
  /** RMS one-step prediction residual, K. */
  rmsResidual_k: number;
  /** Pairs of consecutive steps used. */
  n: number;
}

/**
 * Fits the first-order model from a uniformly stepped history (step Δt) of temperature T_k and power P_k
 * held over each step. The model discretised with a zero-order hold (exact for piecewise-constant P) is
 * T_{k+1} − T_k = (1 − φ)(T_env + R_th P_k − T_k), φ = e^(−Δt/τ); linear regression
 * ΔT = a P + b T + c gives φ = 1 + b, R_th = −a/b, T_env = −c/b, τ = −Δt/ln φ, C = τ/R_th.
 * `valid[k]` = 0 marks a step k → k+1 that must not be used (a gap). Null when P does not vary enough,
 * or the fit is not a stable, heat-absorbing system.
 */
export function fitThermalModel(
  temp_c: ArrayLike<number>,
  power_w: ArrayLike<number>,
  dt_s: number,
  valid?: ArrayLike<number>,
): ThermalFit | null {
  const P: number[] = [], T: number[] = [], one: number[] = [], dT: number[] = [];
  for (let k = 0; k + 1 < temp_c.length; k++) {
    if (valid && !valid[k]) continue;
    const t0 = temp_c[k]!, t1 = temp_c[k + 1]!, p = power_w[k]!;
    if (!Number.isFinite(t0) || !Number.isFinite(t1) || !Number.isFinite(p)) continue;
    P.push(p); T.push(t0); one.push(1); dT.push(t1 - t0);
  }
  if (P.length < 6) return null;
  const fit = olsFit([P, T, one], dT);
  if (!fit) return null;
  const [a, b, c] = fit.coef as [number, number, number];
  if (!(a > 0) || !(b < 0) || !(b > -1)) return null;
  const phi = 1 + b;
  const rth = -a / b;
  const tau = -dt_s / Math.log(phi);
  return { rth_k_w: rth, capacity_j_k: tau / rth, tau_s: tau, env_c: -c / b, rmsResidual_k: fit.residualSd, n: fit.n };
}

/** One-step prediction of the discretised model: T_{k+1} = T∞ + (T_k − T∞) e^(−Δt/τ). */
export function predictNextTemperature(m: ThermalModel, temp_c: number, power_w: number, dt_s: number): number {
  return thermalResponse(m, power_w, temp_c, dt_s);
}
