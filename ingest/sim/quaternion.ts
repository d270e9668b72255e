/**
 * Attitude quaternions, scalar last (q1 q2 q3 vector, q4 scalar), inertial → body, in the
 * convention of Markley & Crassidis, Fundamentals of Spacecraft Attitude Determination and
 * Control, 2014, ch. 2–3: A(q) maps inertial vectors into the body frame, A(q ⊗ p) = A(q) A(p),
 * and the kinematics are q̇ = ½ Ξ(q) ω with ω the body rate in body axes.
 */

import type { Vec3 } from '../../src/lib/telemetry/types';

export type Quat = [number, number, number, number];

/** Quaternion product q ⊗ p with A(q ⊗ p) = A(q) A(p) (Markley & Crassidis, 2014, eq. 2.82b). */
export function quatMultiply(q: readonly number[], p: readonly number[]): Quat {
  const q1 = q[0]!, q2 = q[1]!, q3 = q[2]!, q4 = q[3]!;
  const p1 = p[0]!, p2 = p[1]!, p3 = p[2]!, p4 = p[3]!;
  return [
    q4 * p1 + p4 * q1 - (q2 * p3 - q3 * p2),
    q4 * p2 + p4 * q2 - (q3 * p1 - q1 * p3),
    q4 * p3 + p4 * q3 - (q1 * p2 - q2 * p1),
    q4 * p4 - (q1 * p1 + q2 * p2 + q3 * p3),
  ];
}

/** Conjugate (inverse of a unit quaternion). */
export function quatConjugate(q: readonly number[]): Quat {
  return [-q[0]!, -q[1]!, -q[2]!, q[3]!];
}

/** Unit quaternion of a rotation by angle (rad) about a unit axis. */
export function quatFromAxisAngle(axis: readonly number[], angle: number): Quat {
  const s = Math.sin(angle / 2);
  return [axis[0]! * s, axis[1]! * s, axis[2]! * s, Math.cos(angle / 2)];
}

/** Scales q to unit length in place. */
export function quatNormalizeInPlace(q: number[] | Float64Array, offset = 0): void {
  const n = Math.hypot(q[offset]!, q[offset + 1]!, q[offset + 2]!, q[offset + 3]!);
  q[offset] = q[offset]! / n;
  q[offset + 1] = q[offset + 1]! / n;
  q[offset + 2] = q[offset + 2]! / n;
  q[offset + 3] = q[offset + 3]! / n;
}

/**
 * v_body = A(q) v_inertial, A(q) = (q4² − |q_v|²) I + 2 q_v q_vᵀ − 2 q4 [q_v×]
 * (Markley & Crassidis, 2014, eq. 2.125).
 */
export function rotateToBody(q: readonly number[], v: readonly number[]): Vec3 {
  const q1 = q[0]!, q2 = q[1]!, q3 = q[2]!, q4 = q[3]!;
  const x = v[0]!, y = v[1]!, z = v[2]!;
  const s = q4 * q4 - (q1 * q1 + q2 * q2 + q3 * q3);
  const d = 2 * (q1 * x + q2 * y + q3 * z);
  // −2 q4 (q_v × v)
  const cx = q2 * z - q3 * y, cy = q3 * x - q1 * z, cz = q1 * y - q2 * x;
  return [s * x + d * q1 - 2 * q4 * cx, s * y + d * q2 - 2 * q4 * cy, s * z + d * q3 - 2 * q4 * cz];
}

/** v_inertial = A(q)ᵀ v_body. */
export function rotateToInertial(q: readonly number[], v: readonly number[]): Vec3 {
  return rotateToBody(quatConjugate(q), v);
}

/**
 * Writes q̇ = ½ Ξ(q) ω into out[offset..offset+3]: q̇_v = ½ (q4 ω + q_v × ω), q̇4 = −½ q_v·ω
 * (Markley & Crassidis, 2014, eq. 3.20).
 */
export function quatDerivativeInto(
  q1: number,
  q2: number,
  q3: number,
  q4: number,
  wx: number,
  wy: number,
  wz: number,
  out: number[] | Float64Array,
  offset: number,
): void {
  out[offset] = 0.5 * (q4 * wx + (q2 * wz - q3 * wy));
  out[offset + 1] = 0.5 * (q4 * wy + (q3 * wx - q1 * wz));
  out[offset + 2] = 0.5 * (q4 * wz + (q1 * wy - q2 * wx));
  out[offset + 3] = -0.5 * (q1 * wx + q2 * wy + q3 * wz);
}

/**
 * Rotation vector (rad, body axes) of the error attitude q ⊗ q_ref⁻¹: the body's rotation away from
 * the reference, taken the short way round.
 */
export function attitudeErrorVector(q: readonly number[], qRef: readonly number[]): Vec3 {
  const e = quatMultiply(q, quatConjugate(qRef));
  const sign = e[3] < 0 ? -1 : 1;
  const sinHalf = Math.hypot(e[0], e[1], e[2]);
  if (sinHalf < 1e-12) return [2 * sign * e[0], 2 * sign * e[1], 2 * sign * e[2]];
  const angle = 2 * Math.atan2(sinHalf, Math.abs(e[3]));
  const k = (sign * angle) / sinHalf;
  return [k * e[0], k * e[1], k * e[2]];
}
