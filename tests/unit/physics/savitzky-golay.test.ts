import { describe, expect, it } from 'vitest';
import { sgCoefficients, sgFilter, sgWindowWeights } from '../../../src/lib/physics/savitzky-golay';
import { sgOverTime, uniformSegments } from '../../../src/lib/physics/torque';

const scaled = (w: Float64Array, k: number) => Array.from(w, (x) => Math.round(x * k * 1e9) / 1e9 + 0);

// Savitzky & Golay (1964), Anal. Chem. 36:1627, quadratic tables
describe('Savitzky–Golay coefficients', () => {
  it('5-point smoothing (−3, 12, 17, 12, −3)/35', () => {
    expect(scaled(sgCoefficients(2, 2), 35)).toEqual([-3, 12, 17, 12, -3]);
  });
  it('7-point smoothing (−2, 3, 6, 7, 6, 3, −2)/21', () => {
    expect(scaled(sgCoefficients(3, 2), 21)).toEqual([-2, 3, 6, 7, 6, 3, -2]);
  });
  it('5-point first derivative (−2, −1, 0, 1, 2)/10', () => {
    expect(scaled(sgCoefficients(2, 2, 1), 10)).toEqual([-2, -1, 0, 1, 2]);
  });
  it('7-point first derivative (−3, −2, −1, 0, 1, 2, 3)/28', () => {
    expect(scaled(sgCoefficients(3, 2, 1), 28)).toEqual([-3, -2, -1, 0, 1, 2, 3]);
  });
  it('cubic smoothing equals quadratic (odd order adds nothing at the centre, Savitzky & Golay 1964)', () => {
    expect(scaled(sgCoefficients(3, 3), 21)).toEqual([-2, 3, 6, 7, 6, 3, -2]);
  });
});

describe('Savitzky–Golay filtering', () => {
  it('derivative of a polynomial of the fitted order is exact, edges included', () => {
    const dt = 0.1, n = 60;
    const p = (t: number) => 2 - 3 * t + 0.7 * t * t - 0.05 * t ** 3;
    const dp = (t: number) => -3 + 1.4 * t - 0.15 * t * t;
    const y = Float64Array.from({ length: n }, (_, i) => p(i * dt));
    const d = sgFilter(y, { halfWidth: 5, order: 3, derivative: 1, dt });
    for (let i = 0; i < n; i++) expect(d[i]).toBeCloseTo(dp(i * dt), 9);
    const d2 = sgFilter(y, { halfWidth: 4, order: 3, derivative: 2, dt });
    for (let i = 0; i < n; i++) expect(d2[i]).toBeCloseTo(1.4 - 0.3 * i * dt, 7);
    const s = sgFilter(y, { halfWidth: 3, order: 3 });
    for (let i = 0; i < n; i++) expect(s[i]).toBeCloseTo(y[i]!, 10);
  });

  it('off-centre weights reproduce a line anywhere in the window', () => {
    const w = sgWindowWeights(0, 6, 2, 1);
    const y = Array.from({ length: 7 }, (_, k) => 4 + 2.5 * k);
    expect(w.reduce((s, c, k) => s + c * y[k]!, 0)).toBeCloseTo(2.5, 12);
  });

  it('a series shorter than the window is fitted as one window', () => {
    const y = [1, 3, 5, 7];
    const d = sgFilter(y, { halfWidth: 10, order: 2, derivative: 1, dt: 0.5 });
    for (const v of d) expect(v).toBeCloseTo(4, 12);
    expect(Array.from(sgFilter([2], { halfWidth: 3, order: 2, derivative: 1 }))).toEqual([Number.NaN]);
  });

  it('runs per uniform segment across a gap', () => {
    const t = [...Array.from({ length: 30 }, (_, i) => i * 0.1), ...Array.from({ length: 30 }, (_, i) => 10 + i * 0.1)];
    const y = t.map((x) => 3 * x * x);
    const segs = uniformSegments(t);
    expect(segs.map((s) => [s.from, s.to])).toEqual([[0, 30], [30, 60]]);
    const d = sgOverTime(t, y, { halfWidth: 4, order: 2 }, segs);
    t.forEach((x, i) => expect(d[i]).toBeCloseTo(6 * x, 8));
  });
});

describe('quadratic derivative fast path', () => {
  it('equals the general weights on random data, edges included', () => {
    let s = 7;
    const y = Float64Array.from({ length: 5000 }, () => ((s = (s * 16807) % 2147483647) / 2147483647) * 10 - 5);
    const fast = sgFilter(y, { halfWidth: 10, order: 2, derivative: 1, dt: 0.1 });
    const w = sgCoefficients(10, 2, 1);
    for (const i of [0, 5, 10, 11, 1033, 2047, 2048, 4000, 4989, 4999]) {
      let ref = 0;
      if (i >= 10 && i < 4990) for (let k = -10; k <= 10; k++) ref += w[k + 10]! * y[i + k]!;
      else {
        const ww = i < 10 ? sgWindowWeights(i, 20 - i, 2, 1) : sgWindowWeights(20 - (4999 - i), 4999 - i, 2, 1);
        const base = i < 10 ? 0 : 4979;
        for (let k = 0; k < 21; k++) ref += ww[k]! * y[base + k]!;
      }
      expect(fast[i]).toBeCloseTo(ref / 0.1, 9);
    }
  });

  it('a non-finite sample spoils only the windows that contain it', () => {
    const y = Float64Array.from({ length: 3000 }, (_, i) => 0.5 * i);
    y[1500] = Number.NaN;
    const d = sgFilter(y, { halfWidth: 5, order: 2, derivative: 1, dt: 1 });
    expect(Number.isNaN(d[1495])).toBe(true);
    expect(Number.isNaN(d[1505])).toBe(true);
    expect(d[1494]).toBeCloseTo(0.5, 10);
    expect(d[1506]).toBeCloseTo(0.5, 10);
    expect(d[2900]).toBeCloseTo(0.5, 10);
  });
});
