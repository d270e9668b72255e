import { describe, expect, it } from 'vitest';
import { forecastSaturation, momentumCapacity, momentumMarginInUse, steadyFlowVelocity, systemMomentum } from '../../../src/lib/physics/momentum';
import { hartmannNumber, hartmannPressureRatio, rectangularDuctDarcyFRe, reynoldsNumber, totalPressureLoss } from '../../../src/lib/physics/friction';
import { loopGeometry, loopMomentum } from '../../../src/lib/physics/loop-geometry';
import { idealPumpPressure } from '../../../src/lib/physics/pump';
import { deskLoop } from './fixtures';

describe('steady flow and capacity', () => {
  it('pump pressure equals friction + MHD loss at the solved velocity (turbulent)', () => {
    const loop = deskLoop();
    const v = steadyFlowVelocity(25, loop);
    expect(reynoldsNumber(v, loopGeometry(loop).hydraulicDiameter_m, loop.fluid)).toBeGreaterThan(2300);
    expect(totalPressureLoss(v, loop) / idealPumpPressure(25, loop)).toBeCloseTo(1, 9);
    expect(steadyFlowVelocity(-25, loop)).toBeCloseTo(-v, 12);
    expect(steadyFlowVelocity(0, loop)).toBe(0);
  });

  it('laminar case has the closed form v = Δp · 2D²/(C μ (L + Σ l (ratio − 1)))', () => {
    const loop = deskLoop();
    const I = 0.05;
    const g = loopGeometry(loop);
    const st = loop.pumpStations[0]!;
    const C = rectangularDuctDarcyFRe(0.5);
    const len = g.centrelineLength_m + st.electrodeLength_m * (hartmannPressureRatio(hartmannNumber(loop, st)) - 1);
    const expected = (idealPumpPressure(I, loop) * 2 * g.hydraulicDiameter_m ** 2) / (C * 0.0024 * len);
    expect(steadyFlowVelocity(I, loop) / expected).toBeCloseTo(1, 9);
  });

  it('capacity is h of the steady flow at rated current; margin in use is a percentage of it', () => {
    const loop = deskLoop();
    const cap = momentumCapacity(loop);
    expect(cap).toBeCloseTo(loopMomentum(loop, steadyFlowVelocity(30, loop)), 14);
    expect(momentumCapacity(loop, 0.8)).toBeLessThan(cap);
    expect(momentumMarginInUse(-cap / 4, cap)).toBeCloseTo(25, 12);
  });
});

describe('saturation forecast', () => {
  it('extrapolates a rising trend to the capacity and refuses a flat or falling one', () => {
    const t = Array.from({ length: 10 }, (_, i) => 60 * i);
    const rising = t.map((x) => 1e-3 + 2e-6 * x);
    const f = forecastSaturation(t, rising, 4e-3)!;
    expect(f.slope_Nms_per_s).toBeCloseTo(2e-6, 12);
    expect(f.timeToSaturation_s).toBeCloseTo((4e-3 - rising[9]!) / 2e-6, 6);
    expect(forecastSaturation(t, t.map(() => 1e-3), 4e-3)).toBeNull();
    expect(forecastSaturation(t, t.map((x) => 3e-3 - 1e-6 * x), 4e-3)).toBeNull();
    expect(forecastSaturation(t.slice(0, 2), rising.slice(0, 2), 4e-3)).toBeNull();
  });
});

describe('system momentum', () => {
  // H_sys = I ω + Σ h n̂ (Markley & Crassidis 2014, ch. 3 — chapter from memory)
  it('adds the loops along their axes to the body momentum of the full tensor', () => {
    const I = [[2, 0.1, 0], [0.1, 3, 0.2], [0, 0.2, 4]];
    const s = systemMomentum(I, [0.01, -0.02, 0.03], [{ axis: [1, 0, 0], h: 0.002 }, { axis: [0, 0.6, 0.8], h: -0.005 }]);
    expect(s.body[0]).toBeCloseTo(2 * 0.01 + 0.1 * -0.02, 15);
    expect(s.body[1]).toBeCloseTo(0.1 * 0.01 + 3 * -0.02 + 0.2 * 0.03, 15);
    expect(s.body[2]).toBeCloseTo(0.2 * -0.02 + 4 * 0.03, 15);
    expect(s.total[0]).toBeCloseTo(s.body[0] + 0.002, 15);
    expect(s.total[1]).toBeCloseTo(s.body[1] - 0.003, 15);
    expect(s.total[2]).toBeCloseTo(s.body[2] - 0.004, 15);
    expect(s.magnitude).toBeCloseTo(Math.hypot(...s.total), 15);
  });
});
