import FFT from 'fft.js';
import { medianInPlace } from './robust';

/*
 * Pump pulsation spectra from burst captures: Welch (1967) averaged periodograms with a periodic Hann
 * window, segments overlapping 50 %, each segment's mean removed, scaled as a one-sided power spectral
 * density (unit²/Hz) so that Σ PSD·Δf equals the variance (Parseval).
 */

const plans = new Map<number, FFT>();
function plan(n: number): FFT {
  let p = plans.get(n);
  if (!p) { p = new FFT(n); plans.set(n, p); }
  return p;
}

const isPow2 = (n: number) => n >= 2 && (n & (n - 1)) === 0;

/** Periodic Hann window w_n = ½(1 − cos(2πn/N)) (Harris, 1978); symmetric uses N − 1. */
export function hannWindow(n: number, periodic = true): Float64Array {
  const w = new Float64Array(n);
  const d = periodic ? n : n - 1;
  if (n === 1) { w[0] = 1; return w; }
  for (let i = 0; i < n; i++) w[i] = 0.5 * (1 - Math.cos((2 * Math.PI * i) / d));
  return w;
}

const hanns = new Map<number, Float64Array>();
/** The periodic Hann window of length n, formed once per length (callers only read it). */
function cachedHann(n: number): Float64Array {
  let w = hanns.get(n);
  if (!w) { w = hannWindow(n); hanns.set(n, w); }
  return w;
}

const scratch = new Map<number, Float64Array>();
/** A reusable complex output buffer (2n doubles) for fft.js plans of size n. */
function scratchFor(n: number): Float64Array {
  let b = scratch.get(n);
  if (!b) { b = new Float64Array(2 * n); scratch.set(n, b); }
  return b;
}

/** Half spectrum of a real sequence. */
export interface HalfSpectrum {
  /** Real parts of bins 0…⌊N/2⌋. */
  re: Float64Array;
  /** Imaginary parts of bins 0…⌊N/2⌋. */
  im: Float64Array;
}

/**
 * DFT X_k = Σ x_n e^(−2πi nk/N) of a real sequence, bins 0…⌊N/2⌋: fft.js's real transform when N is a
 * power of two, otherwise Bluestein's chirp-z algorithm (Bluestein, 1970) on a power-of-two fft.js plan.
 */
export function realDft(x: ArrayLike<number>): HalfSpectrum {
  const n = x.length;
  const half = Math.floor(n / 2) + 1;
  const re = new Float64Array(half), im = new Float64Array(half);
  if (n === 1) { re[0] = x[0]!; return { re, im }; }
  if (isPow2(n)) {
    const out = scratchFor(n);
    plan(n).realTransform(out, x);
    for (let k = 0; k < half; k++) { re[k] = out[2 * k]!; im[k] = out[2 * k + 1]!; }
    return { re, im };
  }
  let m = 1;
  while (m < 2 * n - 1) m <<= 1;
  const p = plan(m);
  const cr = new Float64Array(n), ci = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const ang = (Math.PI * ((i * i) % (2 * n))) / n; // n² mod 2N keeps the chirp phase exact
    cr[i] = Math.cos(ang); ci[i] = Math.sin(ang);
  }
  const a = new Float64Array(2 * m), b = new Float64Array(2 * m);
  for (let i = 0; i < n; i++) {
    a[2 * i] = x[i]! * cr[i]!; a[2 * i + 1] = -x[i]! * ci[i]!; // x·e^(−iπn²/N)
    b[2 * i] = cr[i]!; b[2 * i + 1] = ci[i]!; // e^(+iπn²/N)
    if (i > 0) { b[2 * (m - i)] = cr[i]!; b[2 * (m - i) + 1] = ci[i]!; }
  }
  const A = new Float64Array(2 * m), B = new Float64Array(2 * m);
  p.transform(A, a);
  p.transform(B, b);
  for (let k = 0; k < m; k++) {
    const ar = A[2 * k]!, ai = A[2 * k + 1]!, br = B[2 * k]!, bi = B[2 * k + 1]!;
    a[2 * k] = ar * br - ai * bi; a[2 * k + 1] = ar * bi + ai * br;
  }
  p.inverseTransform(A, a);
  for (let k = 0; k < half; k++) {
    const r = A[2 * k]!, i = A[2 * k + 1]!;
    re[k] = r * cr[k]! + i * ci[k]!; im[k] = i * cr[k]! - r * ci[k]!; // × e^(−iπk²/N)
  }
  return { re, im };
}

/** Options of a Welch estimate. */
export interface WelchOptions {
  /** Samples per segment (default min(256, series length)); any length, powers of two are fastest. */
  segmentLength?: number;
  /** Fraction of overlap between segments (default 0.5). */
  overlap?: number;
  /** Remove each segment's mean before windowing (default true). */
  detrend?: boolean;
}

/** One-sided power spectral density from Welch's method. */
export interface Psd {
  /** Bin frequencies k·Δf, Hz, k = 0…⌊N/2⌋. */
  freq_hz: Float64Array;
  /** Density, unit²/Hz. */
  density: Float64Array;
  /** Bin spacing fs/N, Hz. */
  df_hz: number;
  sampleRate_hz: number;
  segmentLength: number;
  segments: number;
  /** Equivalent noise bandwidth of the window, bins: N Σw² / (Σw)² (1.5 for Hann). */
  enbw_bins: number;
  /** Coherent gain Σw / N (0.5 for Hann). */
  coherentGain: number;
}

/** Welch (1967) PSD of a uniformly sampled series: Hann-windowed, overlapped, averaged periodograms. */
export function welchPsd(x: ArrayLike<number>, sampleRate_hz: number, options: WelchOptions = {}): Psd {
  const total = x.length;
  const nseg = Math.max(1, Math.min(options.segmentLength ?? 256, total));
  const step = Math.max(1, Math.round(nseg * (1 - (options.overlap ?? 0.5))));
  const detrend = options.detrend ?? true;
  const w = cachedHann(nseg);
  let s1 = 0, s2 = 0;
  for (let i = 0; i < nseg; i++) { s1 += w[i]!; s2 += w[i]! * w[i]!; }
  const half = Math.floor(nseg / 2) + 1;
  const acc = new Float64Array(half);
  const seg = new Float64Array(nseg);
  let count = 0;
  for (let start = 0; start + nseg <= total; start += step) {
    let mean = 0;
    if (detrend) { for (let i = 0; i < nseg; i++) mean += x[start + i]!; mean /= nseg; }
    for (let i = 0; i < nseg; i++) seg[i] = (x[start + i]! - mean) * w[i]!;
    const { re, im } = realDft(seg);
    for (let k = 0; k < half; k++) acc[k] = acc[k]! + re[k]! * re[k]! + im[k]! * im[k]!;
    count++;
  }
  const density = new Float64Array(half);
  const freq = new Float64Array(half);
  const df = sampleRate_hz / nseg;
  const norm = 1 / (sampleRate_hz * s2 * count);
  for (let k = 0; k < half; k++) {
    const edge = k === 0 || (nseg % 2 === 0 && k === half - 1);
    density[k] = (edge ? 1 : 2) * acc[k]! * norm;
    freq[k] = k * df;
  }
  return {
    freq_hz: freq,
    density,
    df_hz: df,
    sampleRate_hz,
    segmentLength: nseg,
    segments: count,
    enbw_bins: (nseg * s2) / (s1 * s1),
    coherentGain: s1 / nseg,
  };
}

/** Power in a frequency band, unit²: Σ PSD·Δf over bins with f1 ≤ f ≤ f2. */
export function bandPower(psd: Pick<Psd, 'freq_hz' | 'density' | 'df_hz'>, f1_hz: number, f2_hz: number): number {
  let s = 0;
  for (let k = 0; k < psd.freq_hz.length; k++) {
    const f = psd.freq_hz[k]!;
    if (f >= f1_hz && f <= f2_hz) s += psd.density[k]!;
  }
  return s * psd.df_hz;
}

/** A spectral line standing out of the local noise floor. */
export interface SpectralPeak {
  bin: number;
  frequency_hz: number;
  /** Density at the peak bin, unit²/Hz. */
  density: number;
  /** Local noise floor (median of neighbouring bins), unit²/Hz. */
  floor: number;
  /** Sinusoid amplitude from the peak bin, corrected for the window's coherent gain: √(2·PSD·ENBW·Δf). */
  amplitude: number;
  /** Sinusoid amplitude from the power above the floor within ±3 bins (insensitive to scalloping). */
  bandAmplitude: number;
  /** Peak density over floor, dB. */
  prominence_db: number;
}

/** Options of peak picking. */
export interface PeakOptions {
  /** Peak must exceed floor × factor (default 6, about 7.8 dB). */
  factor?: number;
  /** Bins each side used for the floor (default 12). */
  neighbourhood?: number;
  /** Bins each side of the peak left out of the floor (default 3, the Hann main lobe). */
  guard?: number;
  /** Lowest frequency considered, Hz (default: bin 1). */
  minFrequency_hz?: number;
  /** At most this many peaks, strongest first (default 16). */
  maxPeaks?: number;
}

/** Peaks of a PSD above the local noise floor (median of neighbouring bins × factor). */
export function findPeaks(psd: Psd, options: PeakOptions = {}): SpectralPeak[] {
  const factor = options.factor ?? 6;
  const nb = options.neighbourhood ?? 12;
  const guard = options.guard ?? 3;
  const d = psd.density;
  const n = d.length;
  const kMin = Math.max(1, Math.ceil((options.minFrequency_hz ?? 0) / psd.df_hz));
  const buf = new Float64Array(2 * nb + 1);
  const peaks: SpectralPeak[] = [];
  for (let k = kMin; k < n; k++) {
    const v = d[k]!;
    let isMax = true;
    for (let j = Math.max(0, k - guard); j <= Math.min(n - 1, k + guard); j++) {
      if (j !== k && (d[j]! > v || (d[j]! === v && j < k))) { isMax = false; break; }
    }
    if (!isMax) continue;
    let m = 0;
    for (let j = k - nb; j <= k + nb; j++) {
      if (j < 1 || j >= n || Math.abs(j - k) <= guard) continue;
      buf[m++] = d[j]!;
    }
    if (m < 3) continue;
    const floor = medianInPlace(buf, m);
    if (!(v > factor * floor)) continue;
    let band = 0;
    for (let j = Math.max(1, k - 3); j <= Math.min(n - 1, k + 3); j++) band += Math.max(0, d[j]! - floor);
    peaks.push({
      bin: k,
      frequency_hz: psd.freq_hz[k]!,
      density: v,
      floor,
      amplitude: Math.sqrt(2 * v * psd.enbw_bins * psd.df_hz),
      bandAmplitude: Math.sqrt(2 * band * psd.df_hz),
      prominence_db: 10 * Math.log10(v / floor),
    });
  }
  peaks.sort((a, b) => b.density - a.density);
  return peaks.slice(0, options.maxPeaks ?? 16);
}

/** Linear interpolation of a PSD onto a frequency grid (NaN outside the PSD's range). */
export function resampleDensity(psd: Pick<Psd, 'freq_hz' | 'density'>, grid_hz: ArrayLike<number>): Float64Array {
  const out = new Float64Array(grid_hz.length);
  const f = psd.freq_hz, d = psd.density;
  const last = f.length - 1;
  let j = 0;
  for (let i = 0; i < grid_hz.length; i++) {
    const g = grid_hz[i]!;
    if (g < f[0]! || g > f[last]!) { out[i] = Number.NaN; continue; }
    while (j < last - 1 && f[j + 1]! < g) j++;
    const f0 = f[j]!, f1 = f[Math.min(j + 1, last)]!;
    const u = f1 > f0 ? (g - f0) / (f1 - f0) : 0;
    out[i] = d[j]! + u * (d[Math.min(j + 1, last)]! - d[j]!);
  }
  return out;
}

/** Successive burst spectra on one frequency grid. */
export interface Waterfall {
  /** Burst start times, Unix s, one per row. */
  t_s: Float64Array;
  /** Common grid, Hz. */
  freq_hz: Float64Array;
  /** Row-major rows × freq densities, unit²/Hz (NaN above a burst's Nyquist). */
  density: Float32Array;
  rows: number;
}

/**
 * Waterfall of burst spectra on a common grid from 0 to the lowest Nyquist frequency, with the coarsest
 * bin spacing of the spectra unless `df_hz` is given.
 */
export function waterfall(spectra: readonly { t_s: number; psd: Psd }[], df_hz?: number): Waterfall {
  const rows = spectra.length;
  if (rows === 0) return { t_s: new Float64Array(0), freq_hz: new Float64Array(0), density: new Float32Array(0), rows: 0 };
  let fmax = Infinity, coarse = 0;
  for (const s of spectra) {
    fmax = Math.min(fmax, s.psd.freq_hz[s.psd.freq_hz.length - 1]!);
    coarse = Math.max(coarse, s.psd.df_hz);
  }
  const step = df_hz ?? coarse;
  const nf = Math.floor(fmax / step + 1e-9) + 1;
  const grid = new Float64Array(nf);
  for (let i = 0; i < nf; i++) grid[i] = i * step;
  const density = new Float32Array(rows * nf);
  const order = spectra.map((s, i) => [s.t_s, i] as const).sort((a, b) => a[0] - b[0]);
  const t = new Float64Array(rows);
  order.forEach(([ts, i], r) => {
    t[r] = ts;
    density.set(resampleDensity(spectra[i]!.psd, grid), r * nf);
  });
  return { t_s: t, freq_hz: grid, density, rows };
}

/** A spectrum set against a baseline spectrum. */
export interface SpectrumComparison {
  /** 10·log10(current / baseline) on the current spectrum's bins (NaN where either is 0 or undefined). */
  ratio_db: Float64Array;
  /** Peaks of the current spectrum with no baseline peak within `toleranceBins` bins. */
  newPeaks: SpectralPeak[];
  /** Largest ratio over bins 1…, dB, and its frequency. */
  maxRatio_db: number;
  maxRatioFrequency_hz: number;
}

/** Compares a spectrum with a baseline: ratio in dB bin by bin and peaks not present in the baseline (peak lists may be passed in when already found). */
export function compareSpectra(
  current: Psd,
  baseline: Psd,
  options: PeakOptions & { toleranceBins?: number } = {},
  peaks: { current?: SpectralPeak[]; baseline?: SpectralPeak[] } = {},
): SpectrumComparison {
  const base = resampleDensity(baseline, current.freq_hz);
  const ratio = new Float64Array(current.density.length);
  let maxR = -Infinity, maxF = Number.NaN;
  for (let k = 0; k < ratio.length; k++) {
    const c = current.density[k]!, b = base[k]!;
    const r = c > 0 && b > 0 ? 10 * Math.log10(c / b) : Number.NaN;
    ratio[k] = r;
    if (k > 0 && r > maxR) { maxR = r; maxF = current.freq_hz[k]!; }
  }
  const tol = (options.toleranceBins ?? 2) * Math.max(current.df_hz, baseline.df_hz);
  const basePeaks = peaks.baseline ?? findPeaks(baseline, options);
  const newPeaks = (peaks.current ?? findPeaks(current, options)).filter((p) => !basePeaks.some((q) => Math.abs(q.frequency_hz - p.frequency_hz) <= tol));
  return { ratio_db: ratio, newPeaks, maxRatio_db: Number.isFinite(maxR) ? maxR : Number.NaN, maxRatioFrequency_hz: maxF };
}
