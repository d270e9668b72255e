/** k-th smallest (0-based) of a[from..to), rearranging a in place (Hoare's quickselect, 1961). */
export function selectInPlace(a: Float64Array, k: number, from = 0, to = a.length): number {
  let lo = from, hi = to - 1;
  const target = from + k;
  while (lo < hi) {
    const pivot = a[(lo + hi) >>> 1]!;
    let i = lo, j = hi;
    while (i <= j) {
      while (a[i]! < pivot) i++;
      while (a[j]! > pivot) j--;
      if (i <= j) { const t = a[i]!; a[i] = a[j]!; a[j] = t; i++; j--; }
    }
    if (target <= j) hi = j;
    else if (target >= i) lo = i;
    else break;
  }
  return a[target]!;
}

/** Median of the finite values of x (copying them), NaN when there are none. */
export function median(x: ArrayLike<number>, from = 0, to = x.length): number {
  const buf = new Float64Array(to - from);
  let n = 0;
  for (let i = from; i < to; i++) { const v = x[i]!; if (Number.isFinite(v)) buf[n++] = v; }
  return medianInPlace(buf, n);
}

/** Median of buf[0..n), rearranging buf. */
export function medianInPlace(buf: Float64Array, n = buf.length): number {
  if (n === 0) return Number.NaN;
  const hi = selectInPlace(buf, n >> 1, 0, n);
  if (n % 2 === 1) return hi;
  let lo = -Infinity;
  for (let i = 0; i < n >> 1; i++) if (buf[i]! > lo) lo = buf[i]!;
  return (lo + hi) / 2;
}

/** Robust line fit. */
export interface TheilSenFit {
  slope: number;
  intercept: number;
  n: number;
}

/**
 * Theil–Sen estimator (Theil, 1950; Sen, 1968): slope = median of pairwise slopes (y_j − y_i)/(x_j − x_i)
 * over pairs with x_j ≠ x_i; intercept = median of y − slope·x. Non-finite points are skipped. Null with
 * fewer than two distinct x.
 */
export function theilSen(x: ArrayLike<number>, y: ArrayLike<number>): TheilSenFit | null {
  const xs: number[] = [], ys: number[] = [];
  for (let i = 0; i < x.length; i++) if (Number.isFinite(x[i]!) && Number.isFinite(y[i]!)) { xs.push(x[i]!); ys.push(y[i]!); }
  const n = xs.length;
  const slopes = new Float64Array((n * (n - 1)) / 2);
  let m = 0;
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      const dx = xs[j]! - xs[i]!;
      if (dx !== 0) slopes[m++] = (ys[j]! - ys[i]!) / dx;
    }
  }
  if (m === 0) return null;
  const slope = medianInPlace(slopes, m);
  const r = new Float64Array(n);
  for (let i = 0; i < n; i++) r[i] = ys[i]! - slope * xs[i]!;
  return { slope, intercept: medianInPlace(r, n), n };
}
