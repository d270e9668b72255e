import { cross, inverse3, matVec, type Mat3, type Vec3 } from './vector3';

export type { Vec3 };

/**
 * Euler's equations with internal momentum h (Markley & Crassidis 2014, ch. 3; Hughes 1986):
 * I ω̇ + ω × (I ω + h) = τ_ext − ḣ, solved for ω̇. Inertia about the centre of mass, body frame.
 */
export function eulerRates(inertia: number[][], omega: Vec3, h: Vec3, hdot: Vec3, torque: Vec3): Vec3 {
  const Iw = matVec(inertia, omega);
  const gyro = cross(omega, [Iw[0] + h[0], Iw[1] + h[1], Iw[2] + h[2]]);
  const rhs: Vec3 = [torque[0] - hdot[0] - gyro[0], torque[1] - hdot[1] - gyro[1], torque[2] - hdot[2] - gyro[2]];
  return matVec(inverse3(inertia), rhs);
}

/** Alias of eulerRates: ω̇ from Euler's equations with internal momentum. */
export const eulerDerivative = eulerRates;

/** One classical fourth-order Runge–Kutta step of dy/dt = f(t, y) over dt (Kutta, 1901). */
export function rk4Step<T extends readonly number[]>(f: (t: number, y: T) => T, t: number, y: T, dt: number): T {
  const n = y.length;
  const add = (base: T, k: T, s: number): T => {
    const out = new Array<number>(n);
    for (let i = 0; i < n; i++) out[i] = base[i]! + s * k[i]!;
    return out as unknown as T;
  };
  const k1 = f(t, y);
  const k2 = f(t + dt / 2, add(y, k1, dt / 2));
  const k3 = f(t + dt / 2, add(y, k2, dt / 2));
  const k4 = f(t + dt, add(y, k3, dt));
  const out = new Array<number>(n);
  for (let i = 0; i < n; i++) out[i] = y[i]! + (dt / 6) * (k1[i]! + 2 * k2[i]! + 2 * k3[i]! + k4[i]!);
  return out as unknown as T;
}

/** Body angular momentum H = I ω, N·m·s, with the full inertia tensor. */
export function bodyMomentum(inertia: Mat3, omega: Vec3): Vec3 {
  return matVec(inertia, omega);
}

/** Rotational kinetic energy T = ½ ωᵀ I ω, J. */
export function rotationalEnergy(inertia: Mat3, omega: Vec3): number {
  const H = matVec(inertia, omega);
  return 0.5 * (H[0] * omega[0] + H[1] * omega[1] + H[2] * omega[2]);
}
