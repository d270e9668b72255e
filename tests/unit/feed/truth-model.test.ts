import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { TruthIntegrator, createTruthModel, initialState, stepTruth, systemMomentumInertial, zeroInputs } from '../../../ingest/sim/dynamics';
import { attitudeErrorVector, quatFromAxisAngle, quatMultiply, rotateToBody } from '../../../ingest/sim/quaternion';
import type { Vec3 } from '../../../src/lib/telemetry/types';
import { loadSheet } from './feed-helpers';

const STEP = 0.01;

function run(inertia: number[][], omega0: Vec3, hz: number, seconds: number): TruthIntegrator {
  const model = createTruthModel(inertia, [], [0, 0, hz]);
  const integ = new TruthIntegrator(model, zeroInputs(0), initialState(omega0, [0, 0, 0, 1], []));
  for (let k = 0; k < Math.round(seconds / STEP); k++) integ.step(k * STEP, STEP);
  return integ;
}

const I_SYM = [[100, 0, 0], [0, 100, 0], [0, 0, 150]];

describe('torque-free axisymmetric body, RK4 at 100 Hz', () => {
  // Markley & Crassidis, Fundamentals of Spacecraft Attitude Determination and Control, 2014, ch. 3 [memory: chapter]:
  // body-frame precession Ω = (I3 − I1)/I1 · ω3; values derived analytically.
  it('precesses at Ω = 0.05 rad/s: ω(10 s) = (0.0087758, 0.0047943, 0.1)', () => {
    const y = run(I_SYM, [0.01, 0, 0.1], 0, 10).y;
    expect(y[0]).toBeCloseTo(0.0087758, 7);
    expect(y[1]).toBeCloseTo(0.0047943, 7);
    expect(y[2]).toBeCloseTo(0.1, 12);
    const rate = Math.atan2(y[1]!, y[0]!) / 10;
    expect(rate).toBeCloseTo(0.05, 9);
  });

  it('conserves |H| = 15.03330 N·m·s and T = 0.755 J over 1000 s', () => {
    const y = run(I_SYM, [0.01, 0, 0.1], 0, 1000).y;
    const H = Math.hypot(100 * y[0]!, 100 * y[1]!, 150 * y[2]!);
    const T = 0.5 * (100 * y[0]! ** 2 + 100 * y[1]! ** 2 + 150 * y[2]! ** 2);
    expect(H).toBeCloseTo(15.0333, 4);
    expect(Math.abs(H - Math.sqrt(226)) / Math.sqrt(226)).toBeLessThan(1e-10);
    expect(Math.abs(T - 0.755) / 0.755).toBeLessThan(1e-10);
  });

  it('with internal momentum h_z = 0.5 precesses at Ω = 0.055 rad/s: ω(10 s) = (0.0085252, 0.0052269, 0.1)', () => {
    const y = run(I_SYM, [0.01, 0, 0.1], 0.5, 10).y;
    expect(y[0]).toBeCloseTo(0.0085252, 7);
    expect(y[1]).toBeCloseTo(0.0052269, 7);
    expect(Math.atan2(y[1]!, y[0]!) / 10).toBeCloseTo(0.055, 9);
  });

  it('the in-place integrator is the same scheme as the physics rk4Step (Kutta, 1901)', () => {
    const sheet = loadSheet('MR-3');
    const model = createTruthModel(sheet.massProperties.inertia_kg_m2, sheet.loops);
    const u = zeroInputs(3);
    u.pumpPressure_Pa = [900, -400, 250];
    u.pulsations[0] = [{ amplitude_Pa: 30, omega_rad_s: 2 * Math.PI * 23 }];
    u.torque_Nm = [1e-6, -2e-6, 5e-7];
    const y0 = initialState([0.002, -0.001, 0.003], [0.1, 0.2, 0.3, Math.sqrt(1 - 0.14)], [0.05, -0.02, 0.1]);
    const integ = new TruthIntegrator(model, u, y0);
    let y = y0;
    for (let k = 0; k < 200; k++) {
      integ.step(k * STEP, STEP);
      y = stepTruth(model, u, k * STEP, y, STEP);
    }
    for (let i = 0; i < y.length; i++) expect(integ.y[i]).toBeCloseTo(y[i]!, 14);
  });
});

describe('system momentum with pumps running and no external torque', () => {
  // I ω̇ + ω × (I ω + h) = −ḣ keeps Aᵀ(q)(I ω + h) constant (Markley & Crassidis, 2014, ch. 3).
  it('Aᵀ(I ω + h) stays fixed in inertial space while the loops spin up and reverse', () => {
    const sheet = loadSheet('MR-3');
    const model = createTruthModel(sheet.massProperties.inertia_kg_m2, sheet.loops);
    const u = zeroInputs(3);
    const integ = new TruthIntegrator(model, u, initialState([0.003, -0.002, 0.004], [0, 0, 0, 1], [0, 0, 0]));
    const H0 = systemMomentumInertial(model, Array.from(integ.y));
    let maxV = 0;
    for (let k = 0; k < 30_000; k++) {
      const t = k * STEP;
      u.pumpPressure_Pa = [1500 * Math.sin(0.05 * t), 1200 * Math.cos(0.031 * t), t < 150 ? 1800 : -1800];
      integ.step(t, STEP);
      maxV = Math.max(maxV, Math.abs(integ.y[7]!), Math.abs(integ.y[9]!));
    }
    const H1 = systemMomentumInertial(model, Array.from(integ.y));
    expect(maxV).toBeGreaterThan(0.1); // the loops really moved momentum around
    const scale = Math.hypot(...H0);
    for (let j = 0; j < 3; j++) expect(Math.abs(H1[j]! - H0[j]!) / scale).toBeLessThan(1e-8);
  });

  it('a loop spinning up alone turns the body the other way: I_zz ω_z = −h', () => {
    const sheet = loadSheet('MR-1');
    const inertia = [[0.134, 0, 0], [0, 0.129, 0], [0, 0, 0.0835]];
    const model = createTruthModel(inertia, sheet.loops);
    const u = zeroInputs(1);
    u.pumpPressure_Pa = [1000];
    const integ = new TruthIntegrator(model, u, initialState([0, 0, 0], [0, 0, 0, 1], [0]));
    for (let k = 0; k < 500; k++) integ.step(k * STEP, STEP);
    const h = model.loops[0]!.hPerV * integ.y[7]!;
    expect(h).toBeGreaterThan(1e-4);
    expect(0.0835 * integ.y[2]!).toBeCloseTo(-h, 12);
  });
});

describe('attitude quaternions (scalar last, inertial → body)', () => {
  const unit = fc.tuple(fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }))
    .filter((v) => Math.hypot(...v) > 0.1)
    .map((v) => { const n = Math.hypot(...v); return [v[0] / n, v[1] / n, v[2] / n] as Vec3; });
  const angle = fc.double({ min: -Math.PI, max: Math.PI, noNaN: true });
  const vec = fc.tuple(fc.double({ min: -10, max: 10, noNaN: true }), fc.double({ min: -10, max: 10, noNaN: true }), fc.double({ min: -10, max: 10, noNaN: true }));

  it('A(q) agrees with the Rodrigues rotation formula for the frame rotated by θ about n̂', () => {
    // Rodrigues (1840): a frame turned by θ about n̂ sees v as v cosθ − (n̂ × v) sinθ + n̂ (n̂·v)(1 − cosθ).
    fc.assert(fc.property(unit, angle, vec, (n, th, v) => {
      const got = rotateToBody(quatFromAxisAngle(n, th), v);
      const c = Math.cos(th), s = Math.sin(th), d = n[0] * v[0] + n[1] * v[1] + n[2] * v[2];
      const cx = n[1] * v[2] - n[2] * v[1], cy = n[2] * v[0] - n[0] * v[2], cz = n[0] * v[1] - n[1] * v[0];
      const want = [v[0] * c - cx * s + n[0] * d * (1 - c), v[1] * c - cy * s + n[1] * d * (1 - c), v[2] * c - cz * s + n[2] * d * (1 - c)];
      for (let i = 0; i < 3; i++) expect(got[i]).toBeCloseTo(want[i]!, 9);
    }));
  });

  it('A(q ⊗ p) = A(q) A(p)', () => {
    fc.assert(fc.property(unit, angle, unit, angle, vec, (n1, a1, n2, a2, v) => {
      const q = quatFromAxisAngle(n1, a1), p = quatFromAxisAngle(n2, a2);
      const left = rotateToBody(quatMultiply(q, p), v);
      const right = rotateToBody(q, rotateToBody(p, v));
      for (let i = 0; i < 3; i++) expect(left[i]).toBeCloseTo(right[i]!, 9);
    }));
  });

  it('q̇ = ½ Ξ(q) ω integrated at a constant body rate gives the rotation ωt about that axis', () => {
    const model = createTruthModel([[1, 0, 0], [0, 1, 0], [0, 0, 1]], []);
    const integ = new TruthIntegrator(model, zeroInputs(0), initialState([0, 0, 0.02], [0, 0, 0, 1], []));
    for (let k = 0; k < 5000; k++) integ.step(k * STEP, STEP);
    const q = Array.from(integ.y.subarray(3, 7));
    const want = quatFromAxisAngle([0, 0, 1], 0.02 * 50);
    for (let i = 0; i < 4; i++) expect(q[i]).toBeCloseTo(want[i]!, 10);
    const err = attitudeErrorVector(q, [0, 0, 0, 1]);
    expect(err[2]).toBeCloseTo(1.0, 9);
  });
});
