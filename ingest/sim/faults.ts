/**
 * Fault timeline of a scenario: how far each injected fault has progressed at a given time, and the
 * values that the truth model and the link then use.
 */

import type { Fault, Scenario } from '../scenario.schema';
import type { Vec3 } from '../../src/lib/telemetry/types';
import type { Pulsation } from './dynamics';

/** Progress of a fault at t (s from scenario start): 0 before start, rising linearly to 1 over the ramp. */
export function rampFraction(t_s: number, start_s: number, ramp_s: number): number {
  if (t_s < start_s) return 0;
  if (ramp_s <= 0) return 1;
  return Math.min(1, (t_s - start_s) / ramp_s);
}

type LoopFault = Extract<Fault, { loopId: number }>;

/** True effectiveness η of a loop at t: η0 · Π (1 − magnitude · ramp) over its torque-constant losses. */
export function effectivenessAt(eta0: number, faults: readonly Fault[], loopId: number, t_s: number): number {
  let eta = eta0;
  for (const f of faults) {
    if (f.kind === 'torque-constant-loss' && f.loopId === loopId) eta *= 1 - f.magnitude * rampFraction(t_s, f.start_s, f.ramp_s);
  }
  return eta;
}

/** Growth factor Π (1 + (magnitude − 1) · ramp) of the faults of one kind on a loop. */
export function factorAt(faults: readonly Fault[], kind: 'thermal-degradation' | 'electrode-resistance-rise', loopId: number, t_s: number): number {
  let k = 1;
  for (const f of faults) {
    if (f.kind === kind && f.loopId === loopId) k *= 1 + (f.magnitude - 1) * rampFraction(t_s, f.start_s, f.ramp_s);
  }
  return k;
}

/** Pressure pulsations on a loop at t; the amplitude ramps in. */
export function pulsationsAt(faults: readonly Fault[], loopId: number, t_s: number): Pulsation[] {
  const out: Pulsation[] = [];
  for (const f of faults) {
    if (f.kind !== 'pulsation' || f.loopId !== loopId) continue;
    const r = rampFraction(t_s, f.start_s, f.ramp_s);
    if (r > 0) out.push({ amplitude_Pa: f.amplitude_Pa * r, omega_rad_s: 2 * Math.PI * f.frequency_Hz });
  }
  return out;
}

/** Gyro bias at t, rad/s, body axes: the sum of the ramped gyro-bias faults. */
export function gyroBiasAt(faults: readonly Fault[], t_s: number): Vec3 {
  const b: Vec3 = [0, 0, 0];
  for (const f of faults) {
    if (f.kind !== 'gyro-bias') continue;
    const r = rampFraction(t_s, f.start_s, f.ramp_s);
    b[0] += f.bias_rad_s[0] * r;
    b[1] += f.bias_rad_s[1] * r;
    b[2] += f.bias_rad_s[2] * r;
  }
  return b;
}

/** Faults that concern one loop. */
export function loopFaults(scenario: Scenario, loopId: number): LoopFault[] {
  return scenario.faults.filter((f): f is LoopFault => 'loopId' in f && f.loopId === loopId);
}
