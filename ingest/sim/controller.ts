/**
 * On-board attitude control of the simulated spacecraft: cascaded attitude and rate loops with
 * gyroscopic feed-forward, allocation of the wanted torque to the loops, loop current
 * commands through the ideal torque constant, and cross-product momentum unloading through a
 * magnetic torquer (Markley & Crassidis, 2014, ch. 7; Wertz & Larson, Space Mission Analysis and
 * Design, 3rd ed., ch. 11, from memory).
 */

import { invertSmall } from '../../src/lib/physics/least-squares';
import type { Vec3 } from '../../src/lib/telemetry/types';

/**
 * Least-squares allocation of a body torque to loop axes: minimises |Σ u_i n̂_i − τ| and, with more
 * loops than axes, |u|. Returns the matrix M (k×3, row-major) with u = M τ.
 */
export function allocationMatrix(axes: readonly Vec3[]): Float64Array {
  const k = axes.length;
  const M = new Float64Array(k * 3);
  if (k <= 3) {
    // (NᵀN)⁻¹ Nᵀ
    const ntn = new Float64Array(k * k);
    for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) ntn[i * k + j] = dot(axes[i]!, axes[j]!);
    const inv = invertSmall(ntn, k);
    if (!inv) throw new Error('loop axes are not independent');
    for (let i = 0; i < k; i++) for (let c = 0; c < 3; c++) {
      let s = 0;
      for (let j = 0; j < k; j++) s += inv[i * k + j]! * axes[j]![c]!;
      M[i * 3 + c] = s;
    }
    return M;
  }
  // Nᵀ (N Nᵀ)⁻¹, minimum-norm
  const nnt = new Float64Array(9);
  for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) {
    let s = 0;
    for (const a of axes) s += a[r]! * a[c]!;
    nnt[r * 3 + c] = s;
  }
  const inv = invertSmall(nnt, 3);
  if (!inv) throw new Error('loop axes do not span three axes');
  for (let i = 0; i < k; i++) for (let c = 0; c < 3; c++) {
    let s = 0;
    for (let r = 0; r < 3; r++) s += axes[i]![r]! * inv[r * 3 + c]!;
    M[i * 3 + c] = s;
  }
  return M;
}

/** Gains of the cascaded attitude controller, per body axis. */
export interface AttitudeGains {
  /** Outer loop: commanded rate −k θ, 1/s. */
  attitudeGain_1_s: number;
  /** Inner rate loop bandwidth ω_r (rad/s) and damping ζ: τ = I (2ζω_r e + ω_r² ∫e). */
  rateBandwidth_rad_s: number;
  zeta: number;
  /** Largest commanded body rate per axis, rad/s. */
  maxRate_rad_s: Vec3;
  /** Largest torque the rate integral may hold per axis, N·m (anti-windup). */
  maxIntegralTorque_Nm: Vec3;
}

/**
 * Cascaded attitude control: an outer proportional loop on the attitude error θ (rotation vector,
 * body axes) commands a rate ω_cmd = clamp(−k θ, ±ω_max); an inner PI loop on the rate error
 * e = ω_cmd − ω asks for τ = I_jj (2ζω_r e + ω_r² ∫e) per axis, plus the gyroscopic term
 * ω × (I ω + h). The rate integral takes up steady torque deficits (friction the feed-forward
 * misses, a weaker pump than assumed), bounded by the anti-windup limit.
 */
export class AttitudeController {
  private readonly g: AttitudeGains;
  private readonly integral: Vec3 = [0, 0, 0];

  constructor(gains: AttitudeGains) {
    this.g = gains;
  }

  /** Clears the rate integral. */
  reset(): void {
    this.integral[0] = this.integral[1] = this.integral[2] = 0;
  }

  /** Wanted body torque, N·m, after dt seconds; with `holdRateOnly` the rate is driven to zero. */
  torque(inertia: readonly (readonly number[])[], theta: Vec3, omega: Vec3, h: Vec3, dt: number, holdRateOnly: boolean): Vec3 {
    const g = this.g;
    const kp = 2 * g.zeta * g.rateBandwidth_rad_s;
    const ki = g.rateBandwidth_rad_s * g.rateBandwidth_rad_s;
    const out: Vec3 = [0, 0, 0];
    for (let j = 0; j < 3; j++) {
      const lim = g.maxRate_rad_s[j]!;
      const wc = holdRateOnly ? 0 : Math.max(-lim, Math.min(lim, -g.attitudeGain_1_s * theta[j]!));
      const e = wc - omega[j]!;
      const Ijj = inertia[j]![j]!;
      const iLim = Ijj > 0 && ki > 0 ? g.maxIntegralTorque_Nm[j]! / (Ijj * ki) : 0;
      this.integral[j] = Math.max(-iLim, Math.min(iLim, this.integral[j]! + e * dt));
      out[j] = Ijj * (kp * e + ki * this.integral[j]!);
    }
    const Iw = [0, 1, 2].map((r) => inertia[r]![0]! * omega[0] + inertia[r]![1]! * omega[1] + inertia[r]![2]! * omega[2]);
    const Hx = Iw[0]! + h[0], Hy = Iw[1]! + h[1], Hz = Iw[2]! + h[2];
    out[0] += omega[1] * Hz - omega[2] * Hy;
    out[1] += omega[2] * Hx - omega[0] * Hz;
    out[2] += omega[0] * Hy - omega[1] * Hx;
    return out;
  }
}

/**
 * Cross-product unloading law: dipole m = k (h × B)/|B|², so that m × B = −k h⊥ (the component of
 * the stored momentum across the field is bled off), each component clamped to ±mMax (A·m²).
 */
export function unloadDipole(h: Vec3, b_T: Vec3, gain_1_s: number, mMax_Am2: number): Vec3 {
  const b2 = b_T[0] * b_T[0] + b_T[1] * b_T[1] + b_T[2] * b_T[2];
  if (!(b2 > 0)) return [0, 0, 0];
  const k = gain_1_s / b2;
  const m: Vec3 = [k * (h[1] * b_T[2] - h[2] * b_T[1]), k * (h[2] * b_T[0] - h[0] * b_T[2]), k * (h[0] * b_T[1] - h[1] * b_T[0])];
  return m.map((x) => Math.max(-mMax_Am2, Math.min(mMax_Am2, x))) as Vec3;
}

function dot(a: Vec3, b: Vec3): number {
  return a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
}

/**
 * Magnetic rate damping of the axes the loops cannot act on: m = k (ω × B)/|B|², so that
 * m × B = −k ω⊥ (the B-dot law written with Ḃ ≈ −ω × B; Markley & Crassidis, 2014, ch. 7).
 */
export function rateDampingDipole(omega: Vec3, b_T: Vec3, gain_Nms: number): Vec3 {
  const b2 = b_T[0] * b_T[0] + b_T[1] * b_T[1] + b_T[2] * b_T[2];
  if (!(b2 > 0)) return [0, 0, 0];
  const k = gain_Nms / b2;
  return [
    k * (omega[1] * b_T[2] - omega[2] * b_T[1]),
    k * (omega[2] * b_T[0] - omega[0] * b_T[2]),
    k * (omega[0] * b_T[1] - omega[1] * b_T[0]),
  ];
}
