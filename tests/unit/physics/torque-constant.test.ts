import { describe, expect, it } from 'vitest';
import { compensateMagnetTemperature, fitTorqueConstant, torqueFitSeries } from '../../../src/lib/physics/torque-constant';
import { lossTorqueFunction } from '../../../src/lib/physics/friction';
import { momentumPerVelocity } from '../../../src/lib/physics/loop-geometry';
import { idealTorqueConstant } from '../../../src/lib/physics/pump';
import { sgFilter } from '../../../src/lib/physics/savitzky-golay';
import { uniformSegments } from '../../../src/lib/physics/torque';
import { eulerRates, rk4Step } from '../../../src/lib/physics/rigid-body';
import { deskLoop, rng } from './fixtures';

/** A desk loop driven with fast current changes, integrated with RK4: dh/dt = kT·I − τ_loss(v). */
function driven(kTTrue: number, seed: number, flowNoise = 0) {
  const loop = deskLoop();
  const kh = momentumPerVelocity(loop), loss = lossTorqueFunction(loop);
  const I = (t: number) => 16 + 5 * Math.sin((2 * Math.PI * t) / 31) + 2.5 * Math.sin((2 * Math.PI * t) / 6.1);
  const r = rng(seed);
  const n = 3000, dt = 0.1;
  const t = Float64Array.from({ length: n }, (_, i) => i * dt);
  const cur = new Float64Array(n), flow = new Float64Array(n);
  let y = [0.5];
  for (let k = 0; k < 600; k++) y = rk4Step((tt, s) => [(kTTrue * I(0) - loss(s[0]!)) / kh], 0, y, 0.01);
  for (let i = 0; i < n; i++) {
    cur[i] = I(t[i]!) + 0.01 * r.gauss();
    flow[i] = y[0]! + flowNoise * r.gauss();
    for (let k = 0; k < 10; k++) y = rk4Step((tt, s) => [(kTTrue * I(tt) - loss(s[0]!)) / kh], t[i]! + k * 0.01, y, 0.01);
  }
  const h = Float64Array.from(flow, (v) => kh * v);
  const tl = Float64Array.from(flow, (v) => loss(v));
  return { loop, t, cur, flow, h, tl, kh, loss };
}

describe('torque-constant regression series', () => {
  it('recovers kT where a smoothing derivative against raw current would be biased', () => {
    const kT = 0.8 * idealTorqueConstant(deskLoop());
    const d = driven(kT, 5);
    const segs = uniformSegments(d.t);
    const s = torqueFitSeries(d.h, d.cur, d.flow, d.tl, segs, 10);
    const fit = fitTorqueConstant(s.current, s.flow, s.fluidTorque, { minCurrentStd_a: 0.5, clusterLength: 42 }, 0, d.t.length, s.flowAbsFlow)!;
    expect(Math.abs(fit.kT / kT - 1)).toBeLessThan(0.003);
    expect(Math.abs(fit.kT - kT)).toBeLessThan(3 * fit.kTStdErr);
    // the naive route: quadratic Savitzky–Golay ḣ over 2.1 s against the raw current (Savitzky & Golay 1964)
    const hd = sgFilter(d.h, { halfWidth: 10, order: 2, derivative: 1, dt: 0.1 });
    const tau = Float64Array.from(hd, (x, i) => x + d.tl[i]!);
    const naive = fitTorqueConstant(d.cur, d.flow, tau, { minCurrentStd_a: 0.5 }, 10, d.t.length - 10)!;
    expect(Math.abs(naive.kT / kT - 1)).toBeGreaterThan(0.02);
  });

  it('stays unbiased with flowmeter noise', () => {
    const kT = 0.9 * idealTorqueConstant(deskLoop());
    const d = driven(kT, 6, 1e-3);
    const s = torqueFitSeries(d.h, d.cur, d.flow, d.tl, uniformSegments(d.t), 10);
    const fit = fitTorqueConstant(s.current, s.flow, s.fluidTorque, { minCurrentStd_a: 0.5, clusterLength: 42 }, 0, d.t.length, s.flowAbsFlow)!;
    expect(Math.abs(fit.kT - kT)).toBeLessThan(3 * fit.kTStdErr);
    expect(Math.abs(fit.kT / kT - 1)).toBeLessThan(0.01);
  });

  it('the regressor mean is Simpson’s (⅙, ⅔, ⅙): exact to O((ωΔt)⁴) where the trapezoid errs by (ωΔt)²/12', () => {
    // dh/dt = kT·I with I = sin ωt sampled at 10 Hz: h = −kT cos(ωt)/ω; the central difference of h is the
    // mean of dh/dt over ±Δt, kT·I·sin(ωΔt)/(ωΔt), and Simpson's rule gives kT·I·(2 + cos ωΔt)/3 (Simpson's
    // rule error term, Abramowitz & Stegun 1964, 25.4.5 — from memory)
    const kT = 1e-4, w = 3.46, dt = 0.1, n = 2000;
    const t = Float64Array.from({ length: n }, (_, i) => i * dt);
    const I = Float64Array.from(t, (x) => Math.sin(w * x));
    const h = Float64Array.from(t, (x) => (-kT * Math.cos(w * x)) / w);
    const zero = new Float64Array(n);
    const s = torqueFitSeries(h, I, zero, zero, uniformSegments(t), 10);
    let sxy = 0, sxx = 0;
    for (let i = 0; i < n; i++) if (Number.isFinite(s.current[i]!)) { sxy += s.current[i]! * s.fluidTorque[i]!; sxx += s.current[i]! ** 2; }
    const ratio = sxy / sxx / kT;
    const x = w * dt;
    expect(ratio).toBeCloseTo(Math.sin(x) / x / ((2 + Math.cos(x)) / 3), 10);
    expect(Math.abs(ratio - 1)).toBeLessThan(1.05 * (x ** 4 / 180)); // leading term of the error
    // the trapezoid would have biased it by about (ωΔt)²/12 = 1 %
    expect(Math.abs(Math.sin(x) / x / ((1 + Math.cos(x)) / 2) - 1)).toBeGreaterThan(0.009);
  });

  it('moving mean and Simpson mean leave NaN only at segment edges', () => {
    const d = driven(2e-4, 7);
    const s = torqueFitSeries(d.h, d.cur, d.flow, d.tl, uniformSegments(d.t), 10);
    expect(Number.isNaN(s.current[10])).toBe(true);
    expect(Number.isFinite(s.current[11]!)).toBe(true);
    expect(Number.isFinite(s.current[d.t.length - 12]!)).toBe(true);
    expect(Number.isNaN(s.current[d.t.length - 11])).toBe(true);
    // a moving mean of the Simpson mean of a line is the line
    const line = Float64Array.from(d.t, (x) => 3 + 2 * x);
    const s2 = torqueFitSeries(line, line, line, new Float64Array(line.length), uniformSegments(d.t), 10);
    expect(s2.current[500]).toBeCloseTo(line[500]!, 10);
    expect(s2.fluidTorque[500]).toBeCloseTo(2, 10);
  });
});

// NdFeB remanence about −0.1 %/K (typical datasheet coefficient — from memory)
describe('magnet temperature compensation', () => {
  it('refers the effectiveness to the reference temperature', () => {
    expect(compensateMagnetTemperature(0.99, 30)).toBeCloseTo(1, 12);
    expect(compensateMagnetTemperature(0.8, 20)).toBe(0.8);
    expect(compensateMagnetTemperature(0.805, 15)).toBeCloseTo(0.805 / 1.005, 12);
  });
});

describe('Euler rates under loop torque', () => {
  it('a loop spinning up along z turns the body the other way (conservation of momentum)', () => {
    const I = [[0.6, 0, 0], [0, 0.7, 0], [0, 0, 0.8]];
    const w = eulerRates(I, [0, 0, 0], [0, 0, 0], [0, 0, 5e-3], [0, 0, 0]);
    expect(w[2]).toBeCloseTo(-5e-3 / 0.8, 15);
  });
});
