/*
 * Drift detection on a stored series (typically a loop's effectiveness per window) against a baseline:
 * EWMA control chart (NIST/SEMATECH e-Handbook of Statistical Methods §6.3.2.4) and tabular CUSUM
 * (same handbook §6.3.2.3). Non-finite values are skipped (they neither update nor signal).
 */

/** Mean and sample standard deviation of a baseline stretch. */
export interface BaselineStats {
  mean: number;
  /** Sample standard deviation (n − 1). */
  sd: number;
  n: number;
}

/** Baseline mean and sample standard deviation of the finite values in [from, to). */
export function baselineStats(values: ArrayLike<number>, from = 0, to = values.length): BaselineStats {
  let n = 0, s = 0;
  for (let i = from; i < to; i++) if (Number.isFinite(values[i]!)) { n++; s += values[i]!; }
  const mean = n > 0 ? s / n : Number.NaN;
  let ss = 0;
  for (let i = from; i < to; i++) if (Number.isFinite(values[i]!)) ss += (values[i]! - mean) ** 2;
  return { mean, sd: n > 1 ? Math.sqrt(ss / (n - 1)) : Number.NaN, n };
}

/** EWMA chart settings. */
export interface EwmaOptions {
  /** Smoothing weight λ, 0 < λ ≤ 1. */
  lambda: number;
  target: number;
  /** Process standard deviation s. */
  sigma: number;
  /** Width of the limits in σ_EWMA (k = 3 in the handbook). */
  k: number;
}

/** EWMA statistic and its limits per observation. */
export interface EwmaChart {
  ewma: Float64Array;
  /** Time-varying limits target ± k s √(λ/(2−λ) (1 − (1−λ)^(2t))). */
  ucl: Float64Array;
  lcl: Float64Array;
  /** Steady-state limits target ± k s √(λ/(2−λ)). */
  uclSteady: number;
  lclSteady: number;
  /** 1 where the statistic lies outside its time-varying limits. */
  outOfControl: Uint8Array;
  firstSignal: number | null;
}

/** EWMA_t = λ x_t + (1 − λ) EWMA_{t−1}, EWMA_0 = target (NIST/SEMATECH e-Handbook §6.3.2.4). */
export function ewmaChart(values: ArrayLike<number>, o: EwmaOptions): EwmaChart {
  const n = values.length;
  const ewma = new Float64Array(n), ucl = new Float64Array(n), lcl = new Float64Array(n);
  const out = new Uint8Array(n);
  const steady = o.k * o.sigma * Math.sqrt(o.lambda / (2 - o.lambda));
  let z = o.target, t = 0, first: number | null = null;
  for (let i = 0; i < n; i++) {
    const x = values[i]!;
    if (Number.isFinite(x)) { z = o.lambda * x + (1 - o.lambda) * z; t++; }
    const w = steady * Math.sqrt(1 - (1 - o.lambda) ** (2 * Math.max(t, 1)));
    ewma[i] = z; ucl[i] = o.target + w; lcl[i] = o.target - w;
    if (Number.isFinite(x) && (z > ucl[i]! || z < lcl[i]!)) { out[i] = 1; first ??= i; }
  }
  return { ewma, ucl, lcl, uclSteady: o.target + steady, lclSteady: o.target - steady, outOfControl: out, firstSignal: first };
}

/** Tabular CUSUM settings (absolute units). */
export interface CusumOptions {
  target: number;
  /** Allowance (reference value) k. */
  k: number;
  /** Decision interval h. */
  h: number;
}

/** Tabular CUSUM sums and the first signal. */
export interface CusumChart {
  /** S_hi(i) = max(0, S_hi(i−1) + x_i − μ₀ − k). */
  sHi: Float64Array;
  /** S_lo(i) = max(0, S_lo(i−1) + μ₀ − k − x_i). */
  sLo: Float64Array;
  firstSignal: number | null;
  direction: 'up' | 'down' | null;
  /** Index of the last observation at which the signalling sum was 0 before the signal (−1: before the first). */
  onset: number | null;
  /**
   * Estimated mean after the shift, μ₀ ± (k + S/N) with N the observations since the sum was last 0
   * (Montgomery, Introduction to Statistical Quality Control — from memory).
   */
  shiftedMean: number | null;
}

/** Tabular CUSUM of NIST/SEMATECH e-Handbook §6.3.2.3, with onset and size of the shift. */
export function cusumChart(values: ArrayLike<number>, o: CusumOptions): CusumChart {
  const n = values.length;
  const sHi = new Float64Array(n), sLo = new Float64Array(n);
  let hi = 0, lo = 0, lastZeroHi = -1, lastZeroLo = -1;
  let first: number | null = null, direction: 'up' | 'down' | null = null, onset: number | null = null, shifted: number | null = null;
  for (let i = 0; i < n; i++) {
    const x = values[i]!;
    if (Number.isFinite(x)) {
      hi = Math.max(0, hi + x - o.target - o.k);
      lo = Math.max(0, lo + o.target - o.k - x);
    }
    sHi[i] = hi; sLo[i] = lo;
    if (first === null && Number.isFinite(x)) {
      if (hi > o.h || lo > o.h) {
        first = i;
        direction = hi > o.h ? 'up' : 'down';
        onset = direction === 'up' ? lastZeroHi : lastZeroLo;
        let count = 0;
        for (let j = onset + 1; j <= i; j++) if (Number.isFinite(values[j]!)) count++;
        shifted = direction === 'up' ? o.target + o.k + hi / count : o.target - o.k - lo / count;
      }
    }
    if (hi === 0) lastZeroHi = i;
    if (lo === 0) lastZeroLo = i;
  }
  return { sHi, sLo, firstSignal: first, direction, onset, shiftedMean: shifted };
}

/** Error function, Abramowitz & Stegun (1964) 7.1.26, |error| ≤ 1.5·10⁻⁷ (coefficients from memory). */
export function erf(x: number): number {
  const s = Math.sign(x), a = Math.abs(x);
  const t = 1 / (1 + 0.3275911 * a);
  const y = 1 - ((((1.061405429 * t - 1.453152027) * t + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t * Math.exp(-a * a);
  return s * y;
}

/**
 * Settings of drift detection, in units of the baseline standard deviation σ. The defaults aim at a
 * false-alarm run length of a few thousand windows (days at 60 s): by our own Monte-Carlo runs on
 * unit-normal data, EWMA λ 0.1 with 3.5σ limits runs about 4400 points and CUSUM k 0.5σ, h 7σ (two-sided)
 * about 3800 before a false signal (the two together about 3000), against about 640 and 430 for the
 * textbook λ 0.2 with 3σ limits and h 5σ.
 */
export interface DriftOptions {
  /** EWMA weight (default 0.1). */
  lambda?: number;
  /** EWMA limit width in σ_EWMA (default 3.5). */
  ewmaK?: number;
  /** CUSUM allowance in σ (default 0.5: tuned to a 1σ shift). */
  cusumK_sigma?: number;
  /** CUSUM decision interval in σ (default 7). */
  cusumH_sigma?: number;
}

/** Outcome of drift detection on one series. */
export interface DriftReport {
  baseline: BaselineStats;
  ewma: EwmaChart;
  cusum: CusumChart;
  detected: boolean;
  /** Which chart signalled first ('cusum' on a tie). */
  method: 'ewma' | 'cusum' | null;
  direction: 'up' | 'down' | null;
  signalTime_s: number | null;
  /**
   * Time of the last observation before the change: the maximum-likelihood change point (changePoint)
   * among the observations since the CUSUM sum in the signal's direction was last 0 before the signal.
   */
  onsetTime_s: number | null;
  /** Size of the shift, series units: mean since onset − baseline mean. */
  shift: number | null;
  /** The same in baseline standard deviations. */
  shift_sigma: number | null;
  /**
   * Confidence that the mean moved, 0–1: two-sided normal test of the mean since onset against the
   * baseline, erf(|z|/√2) with z = shift/(σ/√n). Independent observations assumed.
   */
  confidence: number | null;
}

/**
 * Change point of a normal mean shifted from μ₀ by an unknown amount, by maximum likelihood over the
 * observations after `from` up to `to` (inclusive): the last observation before the change is the τ in
 * [from, to) that maximises (m_τ)·(x̄_τ − μ₀)², with x̄_τ the mean and m_τ the count of the finite
 * observations in (τ, to] (the log-likelihood ratio of a step at τ, σ known; Hinkley, "Inference about the
 * change-point from cumulative sum tests", Biometrika 58:509, 1971, from memory). Starting from the CUSUM's
 * last zero keeps Page's estimate as the earliest candidate; the maximum refines it when small pre-change
 * deviations had already lifted the sum off zero before a large shift. −1 stands for "before the first".
 */
export function changePoint(values: ArrayLike<number>, mu0: number, from: number, to: number): number {
  let best = from, bestScore = -Infinity, s = 0, m = 0;
  for (let tau = to - 1; tau >= from; tau--) {
    const x = values[tau + 1]!;
    if (Number.isFinite(x)) { s += x - mu0; m++; }
    const score = m > 0 ? (s * s) / m : -Infinity;
    if (score > bestScore) { bestScore = score; best = tau; }
  }
  return best;
}

/** EWMA + tabular CUSUM drift detection of a series against its baseline, with onset, shift and confidence. */
export function detectDrift(
  t_s: ArrayLike<number>,
  values: ArrayLike<number>,
  baseline: BaselineStats,
  options: DriftOptions = {},
): DriftReport {
  const sigma = baseline.sd;
  const ewma = ewmaChart(values, { lambda: options.lambda ?? 0.1, target: baseline.mean, sigma, k: options.ewmaK ?? 3.5 });
  const cusum = cusumChart(values, { target: baseline.mean, k: (options.cusumK_sigma ?? 0.5) * sigma, h: (options.cusumH_sigma ?? 7) * sigma });
  const none: DriftReport = {
    baseline, ewma, cusum, detected: false, method: null, direction: null,
    signalTime_s: null, onsetTime_s: null, shift: null, shift_sigma: null, confidence: null,
  };
  if (!(sigma > 0)) return none;
  const ce = cusum.firstSignal, ee = ewma.firstSignal;
  if (ce === null && ee === null) return none;
  const method: 'ewma' | 'cusum' = ce !== null && (ee === null || ce <= ee) ? 'cusum' : 'ewma';
  const signal = method === 'cusum' ? ce! : ee!;
  const direction = method === 'cusum' ? cusum.direction! : ewma.ewma[signal]! > baseline.mean ? 'up' : 'down';
  const sums = direction === 'up' ? cusum.sHi : cusum.sLo;
  let lastZero = -1;
  for (let i = signal - 1; i >= 0; i--) if (sums[i] === 0) { lastZero = i; break; }
  const onset = changePoint(values, baseline.mean, lastZero, signal);
  let n = 0, s = 0;
  for (let i = onset + 1; i < values.length; i++) if (Number.isFinite(values[i]!)) { n++; s += values[i]!; }
  const shift = n > 0 ? s / n - baseline.mean : Number.NaN;
  const z = (shift / sigma) * Math.sqrt(n);
  return {
    baseline, ewma, cusum, detected: true, method, direction,
    signalTime_s: t_s[signal]!,
    onsetTime_s: onset >= 0 ? t_s[onset]! : t_s[0]!,
    shift,
    shift_sigma: shift / sigma,
    confidence: erf(Math.abs(z) / Math.SQRT2),
  };
}
