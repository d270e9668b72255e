/**
 * Truth model of the spacecraft's rotation and of the fluid in its loops.
 *
 * State y = [ωx, ωy, ωz, q1, q2, q3, q4, v_0 … v_(n−1)]: body rate (rad/s, body axes), attitude
 * quaternion (scalar last, inertial → body) and each loop's mean flow velocity (m/s).
 * - Body: Euler's equations with internal momentum, I ω̇ + ω × (I ω + h) = τ_ext − ḣ
 *   (Markley & Crassidis, 2014, ch. 3), with h = Σ 2ρAS v_i n̂_i + h_bias.
 * - Attitude: q̇ = ½ Ξ(q) ω.
 * - Fluid: ρ L v̇ = Δp_pump − Δp_loss(v) (momentum balance round the centreline; the loss is Darcy
 *   friction plus the MHD drag in the pump gaps). The torque of the pumps on the fluid is, by
 *   reaction, −ḣ on the body.
 * Integrated with the classical fourth-order Runge–Kutta method at a fixed step.
 */

import type { SheetLoop } from '../../src/lib/spacecraft-sheet.schema';
import { loopGeometry, momentumPerVelocity } from '../../src/lib/physics/loop-geometry';
import { eulerRates, rk4Step } from '../../src/lib/physics/rigid-body';
import type { Vec3 } from '../../src/lib/telemetry/types';
import { LossTable } from './loss-table';
import { quatDerivativeInto, quatNormalizeInPlace, rotateToInertial } from './quaternion';

/** One loop as the truth model sees it. */
export interface TruthLoop {
  axis: Vec3;
  /** dh/dv = 2ρAS, N·m·s per m/s. */
  hPerV: number;
  /** ρ·L, kg/m². */
  rhoL: number;
  losses: LossTable;
}

export interface TruthModel {
  inertia: number[][];
  loops: TruthLoop[];
  /** Constant internal momentum besides the loops (a bias rotor), N·m·s, body axes. */
  biasMomentum: Vec3;
}

/** One pressure pulsation: amplitude, Pa, and angular frequency, rad/s. */
export interface Pulsation {
  amplitude_Pa: number;
  omega_rad_s: number;
}

/** Inputs held over one step. */
export interface TruthInputs {
  /** Developed pump pressure of each loop, η·Σ I·B/b, Pa. */
  pumpPressure_Pa: number[];
  /** Pressure pulsations of each loop: sines A·sin(ω t) in the model time t (none: empty list). */
  pulsations: Pulsation[][];
  /** External torque, N·m, body axes. */
  torque_Nm: Vec3;
}

/** Builds the truth model of a spacecraft's loops. */
export function createTruthModel(inertia: readonly (readonly number[])[], loops: readonly SheetLoop[], biasMomentum: Vec3 = [0, 0, 0]): TruthModel {
  return {
    inertia: inertia.map((row) => [...row]),
    loops: loops.map((loop) => ({
      axis: [loop.axis[0], loop.axis[1], loop.axis[2]],
      hPerV: momentumPerVelocity(loop),
      rhoL: loop.fluid.density_kg_m3 * loopGeometry(loop).centrelineLength_m,
      losses: new LossTable(loop),
    })),
    biasMomentum: [...biasMomentum],
  };
}

/** No pump pressure, no pulsation, no torque, for n loops. */
export function zeroInputs(n: number): TruthInputs {
  return {
    pumpPressure_Pa: new Array<number>(n).fill(0),
    pulsations: Array.from({ length: n }, () => []),
    torque_Nm: [0, 0, 0],
  };
}

/** Initial state vector: rate, attitude, loop velocities. */
export function initialState(omega: Vec3, q: readonly number[], v: readonly number[]): number[] {
  return [omega[0], omega[1], omega[2], q[0]!, q[1]!, q[2]!, q[3]!, ...v];
}

/** Writes dy/dt of the truth model into out. */
export function truthDerivativeInto(model: TruthModel, u: TruthInputs, t: number, y: ArrayLike<number>, out: Float64Array | number[]): void {
  const loops = model.loops;
  const n = loops.length;
  let hx = model.biasMomentum[0], hy = model.biasMomentum[1], hz = model.biasMomentum[2];
  let dx = 0, dy = 0, dz = 0;
  for (let i = 0; i < n; i++) {
    const L = loops[i]!;
    const v = y[7 + i]!;
    const pulses = u.pulsations[i]!;
    let dp = u.pumpPressure_Pa[i]! - L.losses.total(v);
    for (let k = 0; k < pulses.length; k++) dp += pulses[k]!.amplitude_Pa * Math.sin(pulses[k]!.omega_rad_s * t);
    const vdot = dp / L.rhoL;
    out[7 + i] = vdot;
    const h = L.hPerV * v, hd = L.hPerV * vdot;
    hx += h * L.axis[0]; hy += h * L.axis[1]; hz += h * L.axis[2];
    dx += hd * L.axis[0]; dy += hd * L.axis[1]; dz += hd * L.axis[2];
  }
  const wx = y[0]!, wy = y[1]!, wz = y[2]!;
  const wd = eulerRates(model.inertia, [wx, wy, wz], [hx, hy, hz], [dx, dy, dz], u.torque_Nm);
  out[0] = wd[0];
  out[1] = wd[1];
  out[2] = wd[2];
  quatDerivativeInto(y[3]!, y[4]!, y[5]!, y[6]!, wx, wy, wz, out, 3);
}

/** dy/dt of the truth model. */
export function truthDerivative(model: TruthModel, u: TruthInputs, t: number, y: readonly number[]): number[] {
  const out = new Array<number>(7 + model.loops.length);
  truthDerivativeInto(model, u, t, y, out);
  return out;
}

/**
 * Fixed-step classical RK4 (Kutta, 1901) of the truth model working in place on preallocated
 * arrays: the same scheme as rk4Step, without the per-stage allocations that would dominate a
 * 24-hour run at 100 Hz.
 */
export class TruthIntegrator {
  readonly y: Float64Array;
  private readonly k1: Float64Array;
  private readonly k2: Float64Array;
  private readonly k3: Float64Array;
  private readonly k4: Float64Array;
  private readonly tmp: Float64Array;
  private readonly model: TruthModel;
  private readonly u: TruthInputs;

  constructor(model: TruthModel, u: TruthInputs, y0: readonly number[]) {
    this.model = model;
    this.u = u;
    const n = y0.length;
    this.y = Float64Array.from(y0);
    this.k1 = new Float64Array(n);
    this.k2 = new Float64Array(n);
    this.k3 = new Float64Array(n);
    this.k4 = new Float64Array(n);
    this.tmp = new Float64Array(n);
  }

  /** Advances y from t by dt; the quaternion is renormalised after the step. */
  step(t: number, dt: number): void {
    const { y, k1, k2, k3, k4, tmp, model, u } = this;
    const n = y.length;
    const h2 = dt / 2;
    truthDerivativeInto(model, u, t, y, k1);
    for (let i = 0; i < n; i++) tmp[i] = y[i]! + h2 * k1[i]!;
    truthDerivativeInto(model, u, t + h2, tmp, k2);
    for (let i = 0; i < n; i++) tmp[i] = y[i]! + h2 * k2[i]!;
    truthDerivativeInto(model, u, t + h2, tmp, k3);
    for (let i = 0; i < n; i++) tmp[i] = y[i]! + dt * k3[i]!;
    truthDerivativeInto(model, u, t + dt, tmp, k4);
    const h6 = dt / 6;
    for (let i = 0; i < n; i++) y[i] = y[i]! + h6 * (k1[i]! + 2 * k2[i]! + 2 * k3[i]! + k4[i]!);
    quatNormalizeInPlace(y, 3);
  }
}

/** One RK4 step of the truth model from t over dt; the quaternion is renormalised after the step. */
export function stepTruth(model: TruthModel, u: TruthInputs, t: number, y: readonly number[], dt: number): number[] {
  const next = rk4Step<number[]>((tt, yy) => truthDerivative(model, u, tt, yy), t, y as number[], dt);
  quatNormalizeInPlace(next, 3);
  return next;
}

/** Internal momentum of the loops (and bias rotor), N·m·s, body axes. */
export function internalMomentum(model: TruthModel, y: readonly number[]): Vec3 {
  const h: Vec3 = [model.biasMomentum[0], model.biasMomentum[1], model.biasMomentum[2]];
  model.loops.forEach((L, i) => {
    const hi = L.hPerV * y[7 + i]!;
    h[0] += hi * L.axis[0];
    h[1] += hi * L.axis[1];
    h[2] += hi * L.axis[2];
  });
  return h;
}

/** System angular momentum I ω + h, N·m·s, in body axes. */
export function systemMomentumBody(model: TruthModel, y: readonly number[]): Vec3 {
  const I = model.inertia;
  const h = internalMomentum(model, y);
  const w = [y[0]!, y[1]!, y[2]!];
  return [0, 1, 2].map((r) => I[r]![0]! * w[0]! + I[r]![1]! * w[1]! + I[r]![2]! * w[2]! + h[r]!) as Vec3;
}

/** System angular momentum Aᵀ(q)(I ω + h), N·m·s, in inertial axes (constant without external torque). */
export function systemMomentumInertial(model: TruthModel, y: readonly number[]): Vec3 {
  return rotateToInertial([y[3]!, y[4]!, y[5]!, y[6]!], systemMomentumBody(model, y));
}
