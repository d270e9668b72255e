import { describe, expect, it } from 'vitest';
import { bodyMomentum, eulerRates, rk4Step, rotationalEnergy } from '../../../src/lib/physics/rigid-body';
import { inverse3, norm, type Vec3 } from '../../../src/lib/physics/vector3';

const I = [[100, 0, 0], [0, 100, 0], [0, 0, 150]];

function integrate(h: Vec3, until: number, dt = 0.01): number[] {
  let y: number[] = [0.01, 0, 0.1];
  const f = (_t: number, s: number[]) => [...eulerRates(I, [s[0]!, s[1]!, s[2]!], h, [0, 0, 0], [0, 0, 0])];
  const steps = Math.round(until / dt);
  for (let k = 0; k < steps; k++) y = rk4Step(f, k * dt, y, dt);
  return y;
}

// Euler's equations I ω̇ + ω × (I ω + h) = τ_ext − ḣ (Markley & Crassidis, Fundamentals of Spacecraft Attitude
// Determination and Control, 2014, ch. 3; Hughes, Spacecraft Attitude Dynamics, 1986 — chapter from memory)
describe('torque-free axisymmetric body, I = diag(100, 100, 150), ω₀ = (0.01, 0, 0.1)', () => {
  it('precesses at Ω = 0.05 rad/s: ω(10 s) = (0.0087758, 0.0047943, 0.1)', () => {
    const w = integrate([0, 0, 0], 10);
    expect(w[0]).toBeCloseTo(0.0087758, 7);
    expect(w[1]).toBeCloseTo(0.0047943, 7);
    expect(w[2]).toBeCloseTo(0.1, 12);
  });

  it('|H| = 15.03330 N·m·s and T = 0.755 J, conserved over 1000 s', () => {
    const w0: Vec3 = [0.01, 0, 0.1];
    expect(norm(bodyMomentum(I, w0))).toBeCloseTo(15.0333, 4);
    expect(rotationalEnergy(I, w0)).toBeCloseTo(0.755, 12);
    const w = integrate([0, 0, 0], 1000, 0.05);
    const v: Vec3 = [w[0]!, w[1]!, w[2]!];
    expect(Math.abs(norm(bodyMomentum(I, v)) / Math.sqrt(226) - 1)).toBeLessThan(1e-9);
    expect(Math.abs(rotationalEnergy(I, v) / 0.755 - 1)).toBeLessThan(1e-9);
  });

  it('with constant h_z = 0.5 N·m·s: Ω = 0.055 rad/s, ω(10 s) = (0.0085252, 0.0052269, 0.1)', () => {
    const w = integrate([0, 0, 0.5], 10);
    expect(w[0]).toBeCloseTo(0.0085252, 7);
    expect(w[1]).toBeCloseTo(0.0052269, 7);
    const v: Vec3 = [w[0]!, w[1]!, w[2]!];
    const H = bodyMomentum(I, v);
    expect(norm([H[0], H[1], H[2] + 0.5])).toBeCloseTo(Math.hypot(1, 15.5), 9);
  });

  it('ḣ enters as a reaction torque: I ω̇ = −ḣ at rest', () => {
    const w = eulerRates(I, [0, 0, 0], [0, 0, 0], [0, 0, 3e-3], [0, 0, 1e-3]);
    expect(w[2]).toBeCloseTo(-2e-3 / 150, 15);
  });
});

describe('3×3 inverse used by the Euler rates', () => {
  it('M · M⁻¹ = 1 for a full symmetric tensor (adjugate formula, Cramer 1750)', () => {
    const M = [[2, 0.1, -0.05], [0.1, 3, 0.2], [-0.05, 0.2, 4]];
    const inv = inverse3(M);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) {
      let s = 0;
      for (let k = 0; k < 3; k++) s += M[i]![k]! * inv[k]![j]!;
      expect(s).toBeCloseTo(i === j ? 1 : 0, 14);
    }
    expect(() => inverse3([[1, 2, 3], [2, 4, 6], [0, 0, 1]])).toThrow();
  });
});
