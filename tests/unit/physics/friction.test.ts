import { describe, expect, it } from 'vitest';
import {
  darcyFrictionFactor, frictionPressureLoss, hartmannNumber, hartmannPressureRatio, lossTorque, lossTorqueFunction,
  mhdPressureLoss, rectangularDuctDarcyFRe, reynoldsNumber, LAMINAR_LIMIT_RE,
} from '../../../src/lib/physics/friction';
import { loopGeometry } from '../../../src/lib/physics/loop-geometry';
import { GALINSTAN_DEFAULTS } from '../../../src/lib/spacecraft-sheet.schema';
import { deskLoop } from './fixtures';

describe('duct friction', () => {
  it('laminar Darcy factor 64/Re (Hagen–Poiseuille)', () => {
    for (const re of [10, 100, 1000, 2000]) expect(darcyFrictionFactor(re)).toBeCloseTo(64 / re, 14);
  });

  // Blasius (smooth, 4·10³ < Re < 10⁵): f = 0.3164 Re^−0.25; 1e4 and 1e5 values published, 5e4 derived from the formula
  it('Blasius: 0.03164 at Re 1e4, 0.02116 at 5e4 (derived), 0.01779 at 1e5', () => {
    expect(darcyFrictionFactor(1e4)).toBeCloseTo(0.03164, 5);
    expect(darcyFrictionFactor(5e4)).toBeCloseTo(0.021159, 5);
    expect(darcyFrictionFactor(1e5)).toBeCloseTo(0.01779, 5);
  });

  // Haaland (1983) and Colebrook (1939) smooth at Re 1e4: 0.03089 / 0.03088 — Blasius within 3 %
  it('Blasius at Re 1e4 is within 3 % of Haaland (1983) / Colebrook (1939)', () => {
    expect(Math.abs(darcyFrictionFactor(1e4) / 0.03089 - 1)).toBeLessThan(0.03);
  });

  it('transition at Re 2300 steps up (loss never falls as speed rises)', () => {
    expect(darcyFrictionFactor(LAMINAR_LIMIT_RE - 1e-9) * (LAMINAR_LIMIT_RE - 1e-9) ** 2).toBeLessThan(darcyFrictionFactor(LAMINAR_LIMIT_RE) * LAMINAR_LIMIT_RE ** 2);
  });

  // Shah & London (1978): Fanning f·Re = 24(1 − 1.3553α + …); α 0 → 24, 0.25 → 18.234, 0.5 → 15.557, 1 → 14.2296 (published formula; values derived)
  it('Shah & London rectangular duct f·Re', () => {
    expect(rectangularDuctDarcyFRe(0) / 4).toBeCloseTo(24, 10);
    expect(rectangularDuctDarcyFRe(0.25) / 4).toBeCloseTo(18.234, 3);
    expect(rectangularDuctDarcyFRe(0.5) / 4).toBeCloseTo(15.557, 3);
    expect(rectangularDuctDarcyFRe(1) / 4).toBeCloseTo(14.2296, 4);
    expect(darcyFrictionFactor(1000, 0.5)).toBeCloseTo((4 * 15.557) / 1000, 5);
  });

  it('Darcy–Weisbach loss: signed like v, zero at rest, matches f (L/D) ρ v|v|/2 in both regimes', () => {
    const loop = deskLoop();
    const g = loopGeometry(loop);
    expect(frictionPressureLoss(0, loop)).toBe(0);
    for (const v of [0.01, 0.05, 0.3, 1.2]) {
      const re = reynoldsNumber(v, g.hydraulicDiameter_m, loop.fluid);
      const f = darcyFrictionFactor(re, 0.5);
      const expected = ((f * g.centrelineLength_m) / g.hydraulicDiameter_m) * (6440 * v * v) / 2;
      expect(frictionPressureLoss(v, loop)).toBeCloseTo(expected, 8);
      expect(frictionPressureLoss(-v, loop)).toBeCloseTo(-expected, 8);
    }
  });

  // Liu, Sen & Kim, "Characterization of nontoxic liquid-metal alloy galinstan for applications in microdevices",
  // J. Microelectromech. Syst. 21(2):443 (2012): 6440 kg/m³, 2.4 mPa·s, 3.46 MS/m
  it('Reynolds number ρ|v|D/μ with the Liu, Sen & Kim (2012) Galinstan defaults', () => {
    expect(GALINSTAN_DEFAULTS).toEqual({ density_kg_m3: 6440, viscosity_Pa_s: 0.0024, conductivity_S_m: 3.46e6 });
    expect(reynoldsNumber(-1, 0.01, GALINSTAN_DEFAULTS)).toBeCloseTo((6440 * 0.01) / 0.0024, 8);
  });
});

describe('Hartmann flow', () => {
  // Plane Hartmann flow pressure-gradient ratio to Poiseuille Ha² tanh Ha / (3 (Ha − tanh Ha)): Ha 1 → 1.0648; 10 → 3.7037; 100 → 33.670 (derived)
  it('pressure-gradient ratio values', () => {
    expect(hartmannPressureRatio(1)).toBeCloseTo(1.0648, 4);
    expect(hartmannPressureRatio(10)).toBeCloseTo(3.7037, 4);
    expect(hartmannPressureRatio(100)).toBeCloseTo(33.67, 3);
    expect(hartmannPressureRatio(0)).toBe(1);
    expect(hartmannPressureRatio(1e-4)).toBeCloseTo(1 + 1e-8 / 15, 14);
    expect(hartmannPressureRatio(0.999e-3) / hartmannPressureRatio(1.001e-3)).toBeCloseTo(1, 9);
  });

  it('Hartmann number B (b/2) √(σ/μ) and the MHD excess over the electrode length', () => {
    const loop = deskLoop();
    const st = loop.pumpStations[0]!;
    const ha = hartmannNumber(loop, st);
    expect(ha).toBeCloseTo(0.5 * 0.0025 * Math.sqrt(3.46e6 / 0.0024), 8);
    const g = loopGeometry(loop);
    const perV = (rectangularDuctDarcyFRe(0.5) * 0.0024) / (2 * g.hydraulicDiameter_m ** 2);
    expect(mhdPressureLoss(0.3, loop)).toBeCloseTo(0.02 * (hartmannPressureRatio(ha) - 1) * perV * 0.3, 8);
    expect(mhdPressureLoss(-0.3, loop)).toBeCloseTo(-mhdPressureLoss(0.3, loop), 10);
  });

  it('the precomputed loss-torque function equals the direct formula', () => {
    const loop = deskLoop();
    const f = lossTorqueFunction(loop);
    for (const v of [-1.5, -0.2, -0.001, 0, 0.004, 0.08, 0.6, 2]) expect(f(v)).toBeCloseTo(lossTorque(v, loop), 12);
  });
});
