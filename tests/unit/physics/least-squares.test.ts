import { describe, expect, it } from 'vitest';
import { linearRegression } from 'simple-statistics';
import MLR from 'ml-regression-multivariate-linear';
import { lineFit, NormalEquations, olsFit } from '../../../src/lib/physics/least-squares';
import { fitPressureConstant, fitTorqueConstant } from '../../../src/lib/physics/torque-constant';
import { rng } from './fixtures';

describe('ordinary least squares', () => {
  it('one regressor with intercept agrees with simple-statistics linearRegression', () => {
    const r = rng(2);
    const x = Array.from({ length: 200 }, (_, i) => i * 0.1 + r.gauss());
    const y = x.map((v) => 0.37 * v - 1.2 + 0.3 * r.gauss());
    const ref = linearRegression(x.map((v, i) => [v, y[i]!]));
    const fit = olsFit([x, x.map(() => 1)], y)!;
    expect(fit.coef[0]).toBeCloseTo(ref.m, 10);
    expect(fit.coef[1]).toBeCloseTo(ref.b, 10);
    const line = lineFit(x, y)!;
    expect(line.slope).toBeCloseTo(ref.m, 10);
    expect(line.slopeStdErr).toBeCloseTo(fit.stdErr[0]!, 10);
  });

  it('several regressors agree with ml-regression-multivariate-linear (coefficients and standard errors)', () => {
    const r = rng(3);
    const n = 300;
    const I = Array.from({ length: n }, (_, i) => 15 + 8 * Math.sin(i / 17) + r.gauss());
    const v = I.map((c) => 0.03 * c + 0.02 * r.gauss());
    const vv = v.map((s) => s * Math.abs(s));
    const y = I.map((c, i) => 2.5e-4 * c - 1e-3 * v[i]! - 4e-3 * vv[i]! + 2e-5 * r.gauss());
    const ref = new MLR(I.map((c, i) => [c, v[i]!, vv[i]!]), y.map((t) => [t]), { intercept: false });
    const fit = olsFit([I, v, vv], y)!;
    for (let j = 0; j < 3; j++) {
      expect(fit.coef[j]! / ref.weights[j]![0]!).toBeCloseTo(1, 8);
      expect(fit.stdErr[j]! / ref.stdErrors[j]!).toBeCloseTo(1, 6);
    }
    expect(fit.residualSd / ref.stdError).toBeCloseTo(1, 8);
    const withIntercept = new MLR(I.map((c, i) => [c, v[i]!, vv[i]!]), y.map((t) => [t]));
    const f4 = olsFit([I, v, vv, I.map(() => 1)], y)!;
    for (let j = 0; j < 4; j++) expect(f4.stdErr[j]! / withIntercept.stdErrors[j]!).toBeCloseTo(1, 6);
  });

  it('returns null when the regressors are degenerate', () => {
    const x = [1, 2, 3, 4, 5];
    expect(olsFit([x, x.map((v) => 2 * v)], [1, 2, 3, 4, 5])).toBeNull();
    expect(olsFit([[1, 2], [3, 5]], [1, 2])).toBeNull();
  });
});

describe('torque constant fit', () => {
  it('recovers a known kT within its standard error (checked against ml-regression-multivariate-linear)', () => {
    const kT = 2.1e-4;
    let inside = 0;
    for (let trial = 0; trial < 40; trial++) {
      const r = rng(100 + trial);
      const n = 600;
      const I = Float64Array.from({ length: n }, (_, i) => 18 + 6 * Math.sin(i / 40 + trial) + 2 * r.gauss());
      const v = Float64Array.from(I, (c) => 0.025 * c + 0.05 * r.gauss());
      const tau = Float64Array.from(I, (c, i) => kT * c + 2e-4 * v[i]! - 3e-4 * v[i]! * Math.abs(v[i]!) + 1e-4 * r.gauss());
      const fit = fitTorqueConstant(I, v, tau, { minCurrentStd_a: 0.5 })!;
      if (trial === 0) {
        const ref = new MLR(Array.from(I, (c, i) => [c, v[i]!, v[i]! * Math.abs(v[i]!)]), Array.from(tau, (t) => [t]), { intercept: false });
        expect(fit.kT / ref.weights[0]![0]!).toBeCloseTo(1, 8);
        expect(fit.kTStdErr / ref.stdErrors[0]!).toBeCloseTo(1, 6);
      }
      if (Math.abs(fit.kT - kT) <= fit.kTStdErr) inside++;
    }
    // about 68 % of fits lie within one standard error of the truth
    expect(inside).toBeGreaterThanOrEqual(20);
    expect(inside).toBeLessThanOrEqual(36);
  });

  it('skips windows where the current did not vary', () => {
    const I = new Float64Array(100).fill(20);
    expect(fitTorqueConstant(I, I, I, { minCurrentStd_a: 0.1 })).toBeNull();
    expect(fitPressureConstant(I, I, 0.1)).toBeNull();
  });

  it('pressure constant Δp/I from the pressure channel', () => {
    const r = rng(8);
    const I = Float64Array.from({ length: 400 }, () => 20 + 5 * r.gauss());
    const p = Float64Array.from(I, (c) => 95 * c - 40 + 3 * r.gauss());
    const fit = fitPressureConstant(I, p, 0.5)!;
    expect(Math.abs(fit.kp - 95)).toBeLessThan(4 * fit.kpStdErr);
    expect(fit.offset_pa).toBeCloseTo(-40, 0);
  });

  it('pressure constant with the pump gaps’ MHD loss added back: unbiased where the raw rise is not', () => {
    // the taps see η·kp·I − k_MHD·v; the flow follows the current, so the raw slope is η·kp − k_MHD·dv/dI
    const r = rng(9);
    const kMhd = 650, kp = 96;
    const I = Float64Array.from({ length: 600 }, () => 4 + 3 * r.gauss());
    const v = Float64Array.from(I, (c) => 0.012 * c + 0.002 * r.gauss());
    const p = Float64Array.from(I, (c, i) => kp * c - kMhd * v[i]! + 3 * r.gauss());
    const raw = fitPressureConstant(I, p, 0.5)!;
    const fixed = fitPressureConstant(I, p, 0.5, 0, I.length, 20, v, kMhd)!;
    expect(Math.abs(fixed.kp - kp)).toBeLessThan(4 * fixed.kpStdErr);
    // slope against simple-statistics on the corrected series
    const ref = linearRegression(Array.from(I, (c, i) => [c, p[i]! + kMhd * v[i]!]));
    expect(fixed.kp / ref.m).toBeCloseTo(1, 10);
    expect(raw.kp).toBeLessThan(kp - kMhd * 0.012 * 0.9);
  });
});

describe('streaming normal equations', () => {
  it('give the same fit as olsFit and ml-regression-multivariate-linear', () => {
    const r = rng(31);
    const n = 500;
    const a = Array.from({ length: n }, () => 10 + 3 * r.gauss());
    const b = a.map((x) => 0.05 * x + 0.1 * r.gauss());
    const y = a.map((x, i) => 3 * x - 20 * b[i]! + 4 + 0.5 * r.gauss());
    const ne = new NormalEquations(3);
    for (let i = 0; i < n; i++) ne.add([a[i]!, b[i]!, 1], y[i]!);
    const f = ne.solve()!;
    const g = olsFit([a, b, a.map(() => 1)], y)!;
    const ref = new MLR(a.map((x, i) => [x, b[i]!]), y.map((v) => [v]));
    for (let j = 0; j < 3; j++) {
      expect(f.coef[j]! / g.coef[j]!).toBeCloseTo(1, 9);
      expect(f.stdErr[j]! / ref.stdErrors[j]!).toBeCloseTo(1, 7);
    }
    expect(f.rSquared).toBeCloseTo(g.rSquared, 9);
    expect(() => ne.add([1, 1, 1], 1)).toThrow();
  });

  // Cluster-robust (sandwich) covariance, Liang & Zeger (1986): checked against a direct matrix computation
  // written here, and for coverage under serially correlated errors
  it('clustered standard errors match a direct sandwich computation', () => {
    const r = rng(32);
    const n = 400, cl = 20;
    const x = Array.from({ length: n }, (_, i) => Math.sin(i / 30) + 0.3 * r.gauss());
    let e = 0;
    const y = x.map((v) => { e = 0.9 * e + r.gauss(); return 2 * v + 1 + e; });
    const fit = olsFit([x, x.map(() => 1)], y, { clusterLength: cl })!;
    const ne = new NormalEquations(2, cl);
    x.forEach((v, i) => ne.add([v, 1], y[i]!));
    const sf = ne.solve()!;
    // direct: bread (XᵀX)⁻¹, meat Σ_g (Σ x e)(Σ x e)ᵀ
    let sxx = 0, sx = 0;
    for (const v of x) { sxx += v * v; sx += v; }
    const det = sxx * n - sx * sx;
    const inv = [[n / det, -sx / det], [-sx / det, sxx / det]];
    const res = y.map((v, i) => v - fit.coef[0]! * x[i]! - fit.coef[1]!);
    const meat = [[0, 0], [0, 0]];
    for (let s = 0; s < n; s += cl) {
      let g0 = 0, g1 = 0;
      for (let i = s; i < s + cl; i++) { g0 += x[i]! * res[i]!; g1 += res[i]!; }
      meat[0]![0]! += g0 * g0; meat[0]![1]! += g0 * g1; meat[1]![0]! += g1 * g0; meat[1]![1]! += g1 * g1;
    }
    const G = n / cl, c = (G / (G - 1)) * ((n - 1) / (n - 2));
    const v00 = c * (inv[0]![0]! * (meat[0]![0]! * inv[0]![0]! + meat[0]![1]! * inv[1]![0]!) + inv[0]![1]! * (meat[1]![0]! * inv[0]![0]! + meat[1]![1]! * inv[1]![0]!));
    expect(fit.stdErr[0]! / Math.sqrt(v00)).toBeCloseTo(1, 8);
    expect(sf.stdErr[0]! / Math.sqrt(v00)).toBeCloseTo(1, 7);
  });

  it('the kT fit summed one cluster at a time equals olsFit with the same clusters (skipped rows, a short last cluster)', () => {
    // the independent reference is olsFit on the kept rows, itself checked against ml-regression above
    const r = rng(34);
    const n = 1003, cl = 42;
    const I = Array.from({ length: n }, (_, i) => 12 + 6 * Math.sin(i / 31) + r.gauss());
    const v = I.map((c) => 0.02 * c + 0.01 * r.gauss());
    const vv = v.map((s) => s * Math.abs(s));
    const y = I.map((c, i) => 3e-4 * c - 2e-3 * v[i]! - 5e-3 * vv[i]! + 3e-5 * r.gauss());
    for (const i of [5, 300, 301, 777]) y[i] = Number.NaN;
    const keep = y.map((t, i) => (Number.isFinite(t) ? i : -1)).filter((i) => i >= 0);
    const pick = (a: number[]) => keep.map((i) => a[i]!);
    for (const clusterLength of [1, cl]) {
      const fast = fitTorqueConstant(I, v, y, { minCurrentStd_a: 0.5, clusterLength }, 0, n, vv)!;
      const ref = olsFit([pick(I), pick(v), pick(vv)], pick(y), { clusterLength })!;
      expect(fast.n).toBe(keep.length);
      expect(fast.kT / ref.coef[0]!).toBeCloseTo(1, 9);
      expect(fast.c2 / ref.coef[2]!).toBeCloseTo(1, 7);
      expect(fast.kTStdErr / ref.stdErr[0]!).toBeCloseTo(1, 7);
    }
  });

  it('clustered errors cover the truth about as often as they should under AR(1) noise; plain ones do not', () => {
    const r = rng(33);
    let plain = 0, clustered = 0;
    const trials = 200;
    for (let t = 0; t < trials; t++) {
      const n = 600;
      const x = Array.from({ length: n }, (_, i) => Math.sin(i / 25 + t) + 0.2 * r.gauss());
      let e = 0;
      const y = x.map((v) => { e = 0.9 * e + 0.3 * r.gauss(); return 1.5 * v + e; });
      const p = olsFit([x], y)!, c = olsFit([x], y, { clusterLength: 40 })!;
      if (Math.abs(p.coef[0]! - 1.5) <= p.stdErr[0]!) plain++;
      if (Math.abs(c.coef[0]! - 1.5) <= c.stdErr[0]!) clustered++;
    }
    expect(clustered / trials).toBeGreaterThan(0.55);
    expect(clustered / trials).toBeLessThan(0.8);
    expect(plain / trials).toBeLessThan(0.5);
  });
});
