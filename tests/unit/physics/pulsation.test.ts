import { describe, expect, it } from 'vitest';
import { fft } from 'fft-js';
import {
  bandPower, compareSpectra, findPeaks, hannWindow, realDft, resampleDensity, waterfall, welchPsd,
} from '../../../src/lib/physics/pulsation';
import { rng } from './fixtures';

function naiveDft(x: ArrayLike<number>) {
  const n = x.length, half = Math.floor(n / 2) + 1;
  const re = new Float64Array(half), im = new Float64Array(half);
  for (let k = 0; k < half; k++) for (let j = 0; j < n; j++) {
    const a = (-2 * Math.PI * k * j) / n;
    re[k] = re[k]! + x[j]! * Math.cos(a);
    im[k] = im[k]! + x[j]! * Math.sin(a);
  }
  return { re, im };
}

const sine = (n: number, fs: number, f: number, a: number, noise = 0, seed = 3) => {
  const r = rng(seed);
  return Float64Array.from({ length: n }, (_, i) => a * Math.sin((2 * Math.PI * f * i) / fs + 0.3) + noise * r.gauss());
};

describe('DFT used by the spectra', () => {
  it('agrees with a naive DFT for power-of-two and other lengths (Bluestein)', () => {
    const r = rng(9);
    for (const n of [8, 64, 256, 1000, 37, 3, 2]) {
      const x = Float64Array.from({ length: n }, () => r.gauss());
      const a = realDft(x), b = naiveDft(x);
      for (let k = 0; k < a.re.length; k++) {
        expect(a.re[k]).toBeCloseTo(b.re[k]!, 8);
        expect(a.im[k]).toBeCloseTo(b.im[k]!, 8);
      }
    }
  });

  it('agrees with the independent package fft-js', () => {
    const r = rng(4);
    const x = Array.from({ length: 512 }, () => r.gauss());
    const ref = fft(x);
    const a = realDft(x);
    for (let k = 0; k < a.re.length; k++) {
      expect(a.re[k]).toBeCloseTo(ref[k]![0], 9);
      expect(a.im[k]).toBeCloseTo(ref[k]![1], 9);
    }
  });
});

// Welch (1967), IEEE Trans. Audio Electroacoust. AU-15:70; Hann window ENBW 1.5 bins, coherent gain 0.5
// (Harris 1978, Proc. IEEE 66:51 — table values from memory)
describe('Welch PSD', () => {
  it('window figures of the periodic Hann window', () => {
    const p = welchPsd(new Float64Array(1024), 100, { segmentLength: 1024 });
    expect(p.enbw_bins).toBeCloseTo(1.5, 12);
    expect(p.coherentGain).toBeCloseTo(0.5, 12);
    Array.from(hannWindow(4)).forEach((v, i) => expect(v).toBeCloseTo([0, 0.5, 1, 0.5][i]!, 15));
  });

  // fs 100 Hz, A 2, f 5 Hz, segment 1000: density peak 13.333 /Hz, amplitude 2.000, Σ PSD·Δf = A²/2 (derived)
  it('fs 100 Hz, A 2, f 5 Hz, segment 1000: peak density 13.333 /Hz, amplitude 2.000, Parseval A²/2', () => {
    const x = sine(1000, 100, 5, 2);
    const p = welchPsd(x, 100, { segmentLength: 1000 });
    expect(p.df_hz).toBeCloseTo(0.1, 12);
    expect(p.density[50]).toBeCloseTo(13.3333, 3);
    const peaks = findPeaks(p);
    expect(peaks[0]!.frequency_hz).toBeCloseTo(5, 10);
    expect(peaks[0]!.amplitude).toBeCloseTo(2, 3);
    expect(bandPower(p, 0, 50)).toBeCloseTo(2, 6);
  });

  it('Parseval for one segment: Σ PSD·Δf = Σ (x − x̄)² w² / Σ w² exactly', () => {
    const r = rng(11);
    const x = Float64Array.from({ length: 512 }, () => 3 + r.gauss());
    const p = welchPsd(x, 250, { segmentLength: 512 });
    const w = hannWindow(512);
    const m = x.reduce((s, v) => s + v, 0) / 512;
    let num = 0, den = 0;
    for (let i = 0; i < 512; i++) { num += ((x[i]! - m) * w[i]!) ** 2; den += w[i]! ** 2; }
    expect(bandPower(p, 0, 125)).toBeCloseTo(num / den, 10);
  });

  it('white noise: averaged density ≈ 2σ²/fs and total power ≈ σ²', () => {
    const r = rng(5);
    const x = Float64Array.from({ length: 65536 }, () => 0.5 * r.gauss());
    const p = welchPsd(x, 400, { segmentLength: 256 });
    expect(p.segments).toBe(511);
    expect(Math.abs(bandPower(p, 0, 200) / 0.25 - 1)).toBeLessThan(0.03);
    const mid = p.density.slice(10, 120).reduce((s, v) => s + v, 0) / 110;
    expect(Math.abs(mid / ((2 * 0.25) / 400) - 1)).toBeLessThan(0.03);
  });

  it('sinusoid in white noise recovered within ±1 bin in frequency and ±2 % in amplitude', () => {
    const fs = 400, f = 47.3, A = 1.7;
    const x = sine(1024, fs, f, A, 0.2, 21);
    const p = welchPsd(x, fs, { segmentLength: 256 });
    const peaks = findPeaks(p);
    expect(Math.abs(peaks[0]!.frequency_hz - f)).toBeLessThanOrEqual(p.df_hz);
    expect(Math.abs(peaks[0]!.bandAmplitude / A - 1)).toBeLessThan(0.02);
    // on a bin centre the coherent-gain amplitude is exact
    const x2 = sine(1024, fs, 50, A, 0.2, 22);
    const q = findPeaks(welchPsd(x2, fs, { segmentLength: 256 }))[0]!;
    expect(q.frequency_hz).toBeCloseTo(50, 10);
    expect(Math.abs(q.amplitude / A - 1)).toBeLessThan(0.02);
  });
});

describe('waterfall and baseline comparison', () => {
  it('puts bursts of different rates on one grid and flags a new line', () => {
    const a = welchPsd(sine(1024, 400, 30, 1, 0.05, 1), 400);
    const b = welchPsd(sine(1024, 200, 30, 1, 0.05, 2), 200);
    const wf = waterfall([{ t_s: 20, psd: a }, { t_s: 10, psd: b }]);
    expect(wf.rows).toBe(2);
    expect(Array.from(wf.t_s)).toEqual([10, 20]);
    expect(wf.freq_hz[wf.freq_hz.length - 1]).toBeCloseTo(100, 9);
    expect(wf.density.length).toBe(2 * wf.freq_hz.length);
    const back = resampleDensity(a, a.freq_hz);
    back.forEach((v, i) => expect(v).toBeCloseTo(a.density[i]!, 15));

    const withLine = new Float64Array(1024);
    const base = sine(1024, 400, 30, 1, 0.05, 7), extra = sine(1024, 400, 90, 0.5, 0, 8);
    for (let i = 0; i < 1024; i++) withLine[i] = base[i]! + extra[i]!;
    const cmp = compareSpectra(welchPsd(withLine, 400), welchPsd(sine(1024, 400, 30, 1, 0.05, 9), 400));
    expect(cmp.newPeaks).toHaveLength(1);
    expect(Math.abs(cmp.newPeaks[0]!.frequency_hz - 90)).toBeLessThanOrEqual(400 / 256);
    expect(cmp.maxRatioFrequency_hz).toBeCloseTo(90, -1);
    expect(cmp.maxRatio_db).toBeGreaterThan(20);
  });
});
