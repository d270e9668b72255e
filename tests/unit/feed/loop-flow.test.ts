import { describe, expect, it } from 'vitest';
import { TruthIntegrator, createTruthModel, initialState, zeroInputs } from '../../../ingest/sim/dynamics';
import { LossTable } from '../../../ingest/sim/loss-table';
import { steadySpeed } from '../../../ingest/sim/spacecraft-sim';
import { totalPressureLoss } from '../../../src/lib/physics/friction';
import { loadSheet } from './feed-helpers';

const STEP = 0.01;
const loop = loadSheet('MR-1').loops[0]!;
const rho = loop.fluid.density_kg_m3, mu = loop.fluid.viscosity_Pa_s, sigma = loop.fluid.conductivity_S_m;
const a = loop.channel.alongCurrent_m, b = loop.channel.alongField_m;
const L = 2 * Math.PI * (loop.shape.kind === 'circle' ? loop.shape.radius_m : NaN);
const Dh = (2 * a * b) / (a + b);

// Shah & London (1978), Laminar Flow Forced Convection in Ducts: Darcy f·Re = 4 × 24(1 − 1.3553α + …).
const alpha = Math.min(a, b) / Math.max(a, b);
const fRe = 96 * (1 - 1.3553 * alpha + 1.9467 * alpha ** 2 - 1.7012 * alpha ** 3 + 0.9564 * alpha ** 4 - 0.2537 * alpha ** 5);
const laminarPerV = (fRe * mu * L) / (2 * Dh * Dh);
// Plane Hartmann flow: gradient ratio to Poiseuille Ha² tanh(Ha) / (3 (Ha − tanh Ha)), over each electrode length.
const station = loop.pumpStations[0]!;
const Ha = station.field_T * (b / 2) * Math.sqrt(sigma / mu);
const hartmann = (Ha * Ha * Math.tanh(Ha)) / (3 * (Ha - Math.tanh(Ha)));
const mhdPerV = (station.electrodeLength_m * (hartmann - 1) * fRe * mu) / (2 * Dh * Dh);

function spinUp(pump_Pa: number, seconds: number): number[] {
  const model = createTruthModel([[0.134, 0, 0], [0, 0.129, 0], [0, 0, 0.0835]], [loop]);
  const u = zeroInputs(1);
  u.pumpPressure_Pa = [pump_Pa];
  const integ = new TruthIntegrator(model, u, initialState([0, 0, 0], [0, 0, 0, 1], [0]));
  const v: number[] = [];
  for (let k = 0; k < Math.round(seconds / STEP); k++) {
    integ.step(k * STEP, STEP);
    v.push(integ.y[7]!);
  }
  return v;
}

describe('fluid in a loop: ρ L v̇ = Δp_pump − Δp_loss', () => {
  it('laminar: reaches v = Δp / (C_lam + C_MHD) with time constant ρL / (C_lam + C_MHD)', () => {
    const dp = 300;
    const vSteady = dp / (laminarPerV + mhdPerV);
    const tau = (rho * L) / (laminarPerV + mhdPerV);
    expect(rho * vSteady * Dh / mu).toBeLessThan(2300);
    const v = spinUp(dp, 20);
    expect(v.at(-1)! / vSteady).toBeCloseTo(1, 5);
    const atTau = v[Math.round(tau / STEP) - 1]!;
    // First-order response 1 − e^(−t/τ) at t = τ (within the rounding of τ to a step).
    expect(atTau / vSteady).toBeCloseTo(1 - Math.exp(-Math.round(tau / STEP) * STEP / tau), 3);
  });

  it('turbulent: steady speed where pump pressure equals Blasius friction plus the Hartmann loss', () => {
    const dp = 2000;
    // Blasius (1913): f = 0.3164 Re^−0.25; Darcy–Weisbach Δp = f (L/D) ρ v²/2.
    const loss = (v: number) => 0.3164 * ((rho * v * Dh) / mu) ** -0.25 * (L / Dh) * (rho * v * v) / 2 + mhdPerV * v;
    let lo = 0.05, hi = 2;
    for (let i = 0; i < 100; i++) { const m = (lo + hi) / 2; if (loss(m) < dp) lo = m; else hi = m; }
    const vSteady = (lo + hi) / 2;
    expect((rho * vSteady * Dh) / mu).toBeGreaterThan(2300);
    const v = spinUp(dp, 40);
    expect(v.at(-1)! / vSteady).toBeCloseTo(1, 4);
    expect(steadySpeed(new LossTable(loop), dp) / vSteady).toBeCloseTo(1, 4);
    expect(steadySpeed(new LossTable(loop), -dp) / vSteady).toBeCloseTo(-1, 4);
  });

  it('the loss table matches the physics functions it samples, except inside the grid cell of the laminar–turbulent switch', () => {
    const table = new LossTable(loop);
    const vSwitch = (2300 * mu) / (rho * Dh);
    for (const v of [-3.9, -1.2, -0.31, -0.0123, 0, 0.000731, 0.05, vSwitch - 0.002, vSwitch + 0.002, 0.77, 2.5, 5]) {
      const want = totalPressureLoss(v, loop);
      expect(Math.abs(table.total(v) - want)).toBeLessThanOrEqual(Math.max(1e-6 * Math.abs(want), 1e-9));
    }
    // inside that one cell the table ramps across the jump instead of stepping
    const vMax = table.spacing * table.halfCells;
    const cellEnd = (Math.floor((vSwitch + vMax) / table.spacing) + 1) * table.spacing - vMax;
    const inCell = table.total((vSwitch + cellEnd) / 2);
    expect(inCell).toBeGreaterThan(totalPressureLoss(vSwitch - 1e-9, loop));
    expect(inCell).toBeLessThan(totalPressureLoss(vSwitch + 1e-9, loop));
  });
});
