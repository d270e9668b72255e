import { describe, expect, it } from 'vitest';
import { backEmf, idealPressureConstant, idealPumpPressure, idealTorqueConstant } from '../../../src/lib/physics/pump';
import { loopGeometry } from '../../../src/lib/physics/loop-geometry';
import { deskLoop } from './fixtures';

describe('DC conduction pump', () => {
  // Δp = J·l·B = I·B/b (Young & Freedman, University Physics — the electromagnetic pump problem)
  it('ideal pressure rise I·B/b, summed over stations', () => {
    const loop = deskLoop();
    expect(idealPumpPressure(25, loop)).toBeCloseTo((25 * 0.5) / 0.005, 9);
    const two = deskLoop({ pumpStations: [{ field_T: 0.5, electrodeLength_m: 0.02 }, { field_T: 0.3, electrodeLength_m: 0.01 }] });
    expect(idealPumpPressure(10, two)).toBeCloseTo((10 * 0.8) / 0.005, 9);
  });

  it('ideal torque constant: circle with one station is B·a·R; in general (Δp/I)·A·2S/L', () => {
    expect(idealTorqueConstant(deskLoop())).toBeCloseTo(0.5 * 0.01 * 0.05, 14);
    const sq = deskLoop({ shape: { kind: 'rounded-rectangle', width_m: 0.12, height_m: 0.08, cornerRadius_m: 0.01 } });
    const g = loopGeometry(sq);
    expect(idealTorqueConstant(sq)).toBeCloseTo(idealPressureConstant(sq) * g.crossSection_m2 * g.leverArm_m, 14);
  });

  // Back-EMF E = v·B·a and hydraulic power Δp·Q = E·I (derived)
  it('back-EMF v·B·a and power balance Δp·Q = E·I', () => {
    const loop = deskLoop();
    const v = 0.7, I = 22;
    expect(backEmf(v, loop)).toBeCloseTo(v * 0.5 * 0.01, 14);
    const Q = v * loopGeometry(loop).crossSection_m2;
    expect(idealPumpPressure(I, loop) * Q).toBeCloseTo(backEmf(v, loop) * I, 12);
  });

  // Common practice, no published source: a desk-built conduction-pumped loop of a few cm radius draws 20–30 A at about
  // 1 V (≈0.04 Ω) and reaches a few mN·m — about 6 mN·m at ~22 W (≈0.3 mN·m/W).
  it('plausibility: desk loop gives about 6 mN·m at about 22 W', () => {
    const loop = deskLoop();
    const R = 0.04;
    const I = Math.sqrt(22 / R);
    expect(I).toBeGreaterThan(20);
    expect(I).toBeLessThan(30);
    expect(I * R).toBeGreaterThan(0.8);
    expect(I * R).toBeLessThan(1.2);
    const tau = idealTorqueConstant(loop) * I;
    expect(tau).toBeGreaterThan(4e-3);
    expect(tau).toBeLessThan(8e-3);
    expect(tau / 22).toBeGreaterThan(0.2e-3);
    expect(tau / 22).toBeLessThan(0.4e-3);
  });
});
