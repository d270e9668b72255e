import { describe, expect, it } from 'vitest';
import { baselineStats, changePoint, cusumChart, detectDrift, erf, ewmaChart } from '../../../src/lib/physics/drift';
import { rng } from './fixtures';

const r2 = (x: number) => Math.round(x * 100) / 100;

// NIST/SEMATECH e-Handbook of Statistical Methods §6.3.2.4, EWMA example
describe('EWMA chart', () => {
  const data = [52.0, 47.0, 53.0, 49.3, 50.1, 47.0, 51.0, 50.1, 51.2, 50.5, 49.6, 47.6, 49.9, 51.3, 47.8, 51.2, 52.6, 52.4, 53.6, 52.1];
  const expected = [50.6, 49.52, 50.56, 50.18, 50.16, 49.21, 49.75, 49.85, 50.26, 50.33, 50.11, 49.36, 49.52, 50.05, 49.38, 49.92, 50.73, 51.23, 51.94, 51.99];
  it('reproduces the handbook EWMA values, limits and verdict', () => {
    const c = ewmaChart(data, { lambda: 0.3, target: 50, sigma: 2.0539, k: 3 });
    expect(Array.from(c.ewma, r2)).toEqual(expected);
    expect(c.uclSteady).toBeCloseTo(52.5884, 4);
    expect(c.lclSteady).toBeCloseTo(47.4115, 3);
    expect(c.firstSignal).toBeNull();
    expect(c.ucl[0]).toBeCloseTo(50 + 3 * 2.0539 * 0.3, 10); // t = 1: √(λ/(2−λ)(1−(1−λ)²)) = λ
    expect(c.ucl[19]).toBeLessThan(c.uclSteady);
  });
});

// NIST/SEMATECH e-Handbook of Statistical Methods §6.3.2.3, tabular CUSUM example
describe('tabular CUSUM', () => {
  const data = [324.925, 324.675, 324.725, 324.35, 325.35, 325.225, 324.125, 324.525, 325.225, 324.6, 324.625, 325.15, 328.325, 327.25, 327.825, 328.5, 326.675, 327.775, 326.875, 328.35];
  it('S_hi 3.01 at observation 13, 4.94 at 14 (first signal), 19.04 at 20', () => {
    const c = cusumChart(data, { target: 325, k: 0.3175, h: 4.1959 });
    expect(r2(c.sHi[12]!)).toBe(3.01);
    expect(r2(c.sHi[13]!)).toBe(4.94);
    expect(r2(c.sHi[19]!)).toBe(19.04);
    expect(c.firstSignal).toBe(13);
    expect(c.direction).toBe('up');
    expect(c.onset).toBe(11); // last zero at observation 12
    expect(Array.from(c.sHi.slice(0, 12)).every((v, i) => i === 4 || i === 5 || i === 8 || v === 0)).toBe(true);
  });
});

describe('drift detection against a baseline', () => {
  it('finds a step in effectiveness, its onset, size and a high confidence', () => {
    const r = rng(77);
    const n = 600, onsetAt = 400;
    const t = Array.from({ length: n }, (_, i) => 1.8e9 + 60 * i);
    const eff = t.map((_, i) => 0.82 + 0.01 * r.gauss() - (i >= onsetAt ? 0.02 : 0));
    const base = baselineStats(eff, 0, 300);
    expect(base.mean).toBeCloseTo(0.82, 2);
    const rep = detectDrift(t, eff, base);
    expect(rep.detected).toBe(true);
    expect(rep.direction).toBe('down');
    expect(rep.signalTime_s!).toBeGreaterThan(t[onsetAt]!);
    expect(rep.signalTime_s!).toBeLessThan(t[onsetAt + 20]!);
    expect(Math.abs(rep.onsetTime_s! - t[onsetAt]!)).toBeLessThanOrEqual(5 * 60);
    expect(rep.shift!).toBeCloseTo(-0.02, 2);
    expect(rep.shift_sigma!).toBeLessThan(-1.5);
    expect(rep.confidence!).toBeGreaterThan(0.999);
  });

  it('places the onset of a large step at the step even when the CUSUM had left zero just before it', () => {
    // baseline N(0, 1); two slightly low observations lift S_lo off zero, then the mean drops by 20σ
    const v = [0.3, -0.2, 0.1, 0.4, -0.3, 0.2, -0.1, 0.0, -0.9, -0.8, -20.2, -19.7, -20.4, -19.9];
    const t = v.map((_, i) => 1000 + 60 * i);
    const c = cusumChart(v, { target: 0, k: 0.5, h: 7 });
    expect(c.onset).toBe(7); // Page's estimate: the last zero of S_lo, before the two low observations
    const rep = detectDrift(t, v, { mean: 0, sd: 1, n: Infinity });
    expect(rep.direction).toBe('down');
    expect(rep.onsetTime_s).toBe(t[9]); // the last observation before the step
    // maximum likelihood by brute force over every τ: (Σ_{i>τ} (x_i − μ₀))² / (m − τ) over i ≤ signal
    const signal = c.firstSignal!;
    let best = -1, bestScore = -Infinity;
    for (let tau = c.onset!; tau < signal; tau++) {
      const tail = v.slice(tau + 1, signal + 1);
      const score = tail.reduce((s, x) => s + x, 0) ** 2 / tail.length;
      if (score > bestScore) { bestScore = score; best = tau; }
    }
    expect(changePoint(v, 0, c.onset!, signal)).toBe(best);
  });

  it('default settings: false-alarm run length of thousands of windows with a known baseline', () => {
    const r = rng(78);
    let total = 0;
    const runs = 60, len = 30000;
    for (let k = 0; k < runs; k++) {
      const v = Array.from({ length: len }, () => 1 + 0.05 * r.gauss());
      const rep = detectDrift(v.map((_, i) => i), v, { mean: 1, sd: 0.05, n: Infinity });
      total += rep.detected ? rep.signalTime_s! : len;
    }
    // about 3000 by a 200-run simulation; the mean of 60 runs has a standard error near 400
    expect(total / runs).toBeGreaterThan(1800);
  });

  it('no drift on a stable series against its own long baseline', () => {
    const r = rng(79);
    const v = Array.from({ length: 300 }, () => 1 + 0.05 * r.gauss());
    const rep = detectDrift(v.map((_, i) => i), v, baselineStats(v));
    expect(rep.detected).toBe(false);
    expect(rep.confidence).toBeNull();
  });

  // Abramowitz & Stegun (1964) 7.1.26 — from memory; erf(1) = 0.8427007929 (from memory)
  it('erf approximation', () => {
    expect(erf(1)).toBeCloseTo(0.8427008, 6);
    expect(erf(-0.5)).toBeCloseTo(-0.5204999, 6);
  });
});
