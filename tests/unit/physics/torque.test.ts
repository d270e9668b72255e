import { describe, expect, it } from 'vitest';
import { bodyTorque, interpolateAddAlongAxis, interpolateAt, ledgerResidual, medianSpacing, uniformSegments } from '../../../src/lib/physics/torque';
import { eulerRates } from '../../../src/lib/physics/rigid-body';
import { momentumPerWatt, torquePerWatt } from '../../../src/lib/physics/efficiency';
import type { Vec3 } from '../../../src/lib/physics/vector3';

// Euler's equations with internal momentum I ω̇ + ω × (I ω + h) = τ_ext − ḣ (Markley & Crassidis, Fundamentals
// of Spacecraft Attitude Determination and Control, 2014, ch. 3 — chapter from memory)
describe('body torque and momentum ledger', () => {
  it('τ_body from the rates Euler predicts, plus ḣ, gives back the external torque', () => {
    const I = [[2, 0.1, -0.05], [0.1, 3, 0.2], [-0.05, 0.2, 4]];
    const w: Vec3 = [0.02, -0.01, 0.03], h: Vec3 = [0.004, -0.002, 0.001], hd: Vec3 = [1e-3, 2e-4, -5e-4], tau: Vec3 = [3e-5, -1e-5, 2e-5];
    const wd = eulerRates(I, w, h, hd, tau);
    const res = ledgerResidual(bodyTorque(I, w, wd, h), hd);
    for (let k = 0; k < 3; k++) expect(res[k]).toBeCloseTo(tau[k]!, 15);
  });
});

describe('sampling helpers', () => {
  it('interpolates linearly and refuses gaps and the outside', () => {
    const ts = [0, 1, 2, 5, 6], y = [0, 10, 20, 50, 60];
    const out = interpolateAt(ts, y, [-1, 0, 0.5, 1.5, 3, 5.5, 6, 7], 1.5);
    expect(Array.from(out)).toEqual([NaN, 0, 5, 15, NaN, 55, 60, NaN]);
    const ox = new Float64Array(2), oy = new Float64Array(2), oz = new Float64Array(2);
    const px = new Float64Array(2), py = new Float64Array(2), pz = new Float64Array(2);
    interpolateAddAlongAxis(ts, y, y.map((v) => -v), [0.5, 1.5], [0.6, 0.8, 0], 1.5, ox, oy, oz, px, py, pz);
    expect(ox[1]).toBeCloseTo(9, 12);
    expect(oy[0]).toBeCloseTo(4, 12);
    expect(pz[0]).toBe(0);
    expect(px[1]).toBeCloseTo(-9, 12);
  });

  it('splits at gaps and at non-increasing steps', () => {
    const t = [0, 0.1, 0.2, 0.3, 0.3, 0.4, 0.5, 2, 2.1];
    expect(medianSpacing(t)).toBeCloseTo(0.1, 12);
    expect(uniformSegments(t).map((s) => [s.from, s.to])).toEqual([[0, 4], [4, 7], [7, 9]]);
  });
});

describe('efficiency figures', () => {
  it('torque and momentum per watt, null without input power', () => {
    expect(torquePerWatt(6e-3, 22)).toBeCloseTo(6e-3 / 22, 15);
    expect(momentumPerWatt(3e-3, 20)).toBeCloseTo(1.5e-4, 15);
    expect(torquePerWatt(6e-3, 0)).toBeNull();
    expect(momentumPerWatt(Number.NaN, 10)).toBeNull();
  });
});
