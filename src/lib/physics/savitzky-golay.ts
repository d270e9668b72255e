import { invertSmall } from './least-squares';

/*
 * Savitzky–Golay filters (Savitzky & Golay, 1964, Anal. Chem. 36:1627): the value or a derivative at a
 * point of the least-squares polynomial of order p fitted to the samples of a moving window. The
 * weights are c = e_dᵀ (AᵀA)⁻¹ Aᵀ with A_kj = x_k^j over the window offsets x_k and e_d the d-th
 * derivative of the monomials at 0, so any window, order, derivative and off-centre point are covered.
 */

const cache = new Map<string, Float64Array>();

/**
 * Weights of a window running from offset −left to +right (samples) around the evaluation point, for
 * polynomial order `order` and derivative `derivative`, per unit sample spacing (divide by Δt^d).
 */
export function sgWindowWeights(left: number, right: number, order: number, derivative = 0): Float64Array {
  const key = `${left}|${right}|${order}|${derivative}`;
  const hit = cache.get(key);
  if (hit) return hit;
  const len = left + right + 1;
  if (order >= len) throw new Error(`order ${order} needs more than ${len} samples`);
  if (derivative > order) throw new Error(`derivative ${derivative} exceeds polynomial order ${order}`);
  const p = order + 1;
  const scale = Math.max(1, left, right); // fit in x/scale for conditioning
  const xtx = new Float64Array(p * p);
  for (let k = -left; k <= right; k++) {
    const x = k / scale;
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) xtx[i * p + j] = xtx[i * p + j]! + x ** (i + j);
  }
  const inv = invertSmall(xtx, p);
  if (!inv) throw new Error('Savitzky–Golay normal equations are singular');
  // d-th derivative of Σ β_j x^j at x = 0 is d!·β_d
  let fact = 1;
  for (let i = 2; i <= derivative; i++) fact *= i;
  const w = new Float64Array(len);
  for (let k = -left; k <= right; k++) {
    const x = k / scale;
    let s = 0;
    for (let j = 0; j < p; j++) s += inv[derivative * p + j]! * x ** j;
    w[k + left] = (fact * s) / scale ** derivative;
  }
  if (cache.size < 4096) cache.set(key, w);
  return w;
}

/** Symmetric Savitzky–Golay weights of 2·halfWidth + 1 points (Savitzky & Golay 1964, tables I–III). */
export function sgCoefficients(halfWidth: number, order: number, derivative = 0): Float64Array {
  return sgWindowWeights(halfWidth, halfWidth, order, derivative);
}

/** Options of a Savitzky–Golay pass. */
export interface SgOptions {
  /** Window half-width m (window 2m + 1 samples). */
  halfWidth: number;
  /** Polynomial order. */
  order: number;
  /** Derivative order (0 = smoothing). */
  derivative?: number;
  /** Sample spacing, s (derivatives are divided by Δt^d). */
  dt?: number;
}

/**
 * Applies a Savitzky–Golay filter to a uniformly sampled series y[from..to). Edge points use the
 * off-centre fit of the first/last full window (no padding); a series shorter than the window is fitted
 * as one window with the order lowered to fit. Points where the derivative cannot be formed are NaN.
 */
export function sgFilter(
  y: ArrayLike<number>,
  options: SgOptions,
  out: Float64Array = new Float64Array(y.length),
  from = 0,
  to = y.length,
): Float64Array {
  const d = options.derivative ?? 0;
  const dt = options.dt ?? 1;
  const n = to - from;
  if (n <= 0) return out;
  const m = options.halfWidth;
  const order = Math.min(options.order, Math.min(n, 2 * m + 1) - 1);
  if (order < d) {
    for (let i = from; i < to; i++) out[i] = d === 0 ? y[i]! : Number.NaN;
    return out;
  }
  const div = dt ** d;
  if (n < 2 * m + 1) {
    // short series: one window covering all of it, evaluated at each point
    for (let i = 0; i < n; i++) {
      const w = sgWindowWeights(i, n - 1 - i, order, d);
      let s = 0;
      for (let k = 0; k < n; k++) s += w[k]! * y[from + k]!;
      out[from + i] = s / div;
    }
    return out;
  }
  const c = sgWindowWeights(m, m, order, d);
  const len = 2 * m + 1;
  if (d === 1 && order <= 2) {
    // Quadratic first derivative: weights k / Σk² (Savitzky & Golay 1964), so the interior is
    // S1(i) / Σk² with S1(i) = Σ k·y_{i+k} updated in O(1): S1(i+1) = S1(i) − S0(i) + (m+1)y_{i−m} + m·y_{i+m+1}
    // (S0 the window sum), re-formed directly every 1024 samples (and after a non-finite value).
    const norm = 1 / (((m * (m + 1) * (2 * m + 1)) / 3) * dt);
    let s0 = 0, s1 = 0;
    for (let i = from + m; i < to - m; i++) {
      if ((i - from - m) % 1024 === 0 || !Number.isFinite(s0 + s1)) {
        s0 = 0; s1 = 0;
        for (let k = -m; k <= m; k++) { const v = y[i + k]!; s0 += v; s1 += k * v; }
      } else {
        const old = y[i - m - 1]!, nu = y[i + m]!;
        s1 = s1 - s0 + (m + 1) * old + m * nu;
        s0 = s0 - old + nu;
      }
      out[i] = s1 * norm;
    }
  } else {
    for (let i = from + m; i < to - m; i++) {
      let s = 0;
      const base = i - m;
      for (let k = 0; k < len; k++) s += c[k]! * y[base + k]!;
      out[i] = s / div;
    }
  }
  for (let i = 0; i < m; i++) {
    const wl = sgWindowWeights(i, 2 * m - i, order, d);
    let s = 0;
    for (let k = 0; k < len; k++) s += wl[k]! * y[from + k]!;
    out[from + i] = s / div;
    const wr = sgWindowWeights(2 * m - i, i, order, d);
    let t = 0;
    for (let k = 0; k < len; k++) t += wr[k]! * y[to - len + k]!;
    out[to - 1 - i] = t / div;
  }
  return out;
}
