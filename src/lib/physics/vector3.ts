import type { Vec3 } from '../telemetry/types';

export type { Vec3 };

/** 3×3 matrix as rows. */
export type Mat3 = readonly (readonly number[])[];

/** Cross product a × b. */
export function cross(a: Vec3, b: Vec3): Vec3 {
  return [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
}

/** Dot product a · b. */
export function dot(a: Vec3, b: Vec3): number {
  return a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
}

/** Euclidean norm |a|. */
export function norm(a: Vec3): number {
  return Math.hypot(a[0], a[1], a[2]);
}

/** Matrix–vector product M a. */
export function matVec(m: Mat3, a: Vec3): Vec3 {
  const r0 = m[0]!, r1 = m[1]!, r2 = m[2]!;
  return [
    r0[0]! * a[0] + r0[1]! * a[1] + r0[2]! * a[2],
    r1[0]! * a[0] + r1[1]! * a[1] + r1[2]! * a[2],
    r2[0]! * a[0] + r2[1]! * a[1] + r2[2]! * a[2],
  ];
}

/** Inverse of a 3×3 matrix by the adjugate; throws when singular. */
export function inverse3(m: Mat3): number[][] {
  const a = m[0]![0]!, b = m[0]![1]!, c = m[0]![2]!;
  const d = m[1]![0]!, e = m[1]![1]!, f = m[1]![2]!;
  const g = m[2]![0]!, h = m[2]![1]!, i = m[2]![2]!;
  const A = e * i - f * h, B = -(d * i - f * g), C = d * h - e * g;
  const det = a * A + b * B + c * C;
  if (det === 0 || !Number.isFinite(det)) throw new Error('matrix is singular');
  return [
    [A / det, -(b * i - c * h) / det, (b * f - c * e) / det],
    [B / det, (a * i - c * g) / det, -(a * f - c * d) / det],
    [C / det, -(a * h - b * g) / det, (a * e - b * d) / det],
  ];
}
