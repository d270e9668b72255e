/**
 * Largest-Triangle-Three-Buckets downsampling (Steinarsson, 2013, "Downsampling Time Series for Visual
 * Representation", MSc thesis, University of Iceland): keeps the first and last points, splits the rest
 * into threshold − 2 equal buckets, and from each bucket keeps the point forming the largest triangle with
 * the previously kept point and the mean of the next bucket. Returns the kept indices, ascending.
 */
export function lttbIndices(x: ArrayLike<number>, y: ArrayLike<number>, threshold: number): Uint32Array {
  const n = x.length;
  if (threshold >= n) return Uint32Array.from({ length: n }, (_, i) => i);
  if (threshold <= 0) return new Uint32Array(0);
  if (threshold === 1) return Uint32Array.of(0);
  if (threshold === 2) return Uint32Array.of(0, n - 1);
  const out = new Uint32Array(threshold);
  const every = (n - 2) / (threshold - 2);
  let a = 0;
  out[0] = 0;
  for (let i = 0; i < threshold - 2; i++) {
    const start = Math.floor(i * every) + 1;
    const end = Math.floor((i + 1) * every) + 1;
    const nStart = end;
    const nEnd = Math.min(Math.floor((i + 2) * every) + 1, n);
    let ax = 0, ay = 0;
    for (let j = nStart; j < nEnd; j++) { ax += x[j]!; ay += y[j]!; }
    const cnt = nEnd - nStart;
    ax /= cnt; ay /= cnt;
    const px = x[a]!, py = y[a]!;
    let best = -1, pick = start;
    for (let j = start; j < end; j++) {
      const area = Math.abs((px - ax) * (y[j]! - py) - (px - x[j]!) * (ay - py));
      if (area > best) { best = area; pick = j; }
    }
    out[i + 1] = pick;
    a = pick;
  }
  out[threshold - 1] = n - 1;
  return out;
}

/** LTTB-downsampled copy of a series (see lttbIndices). */
export function lttb(x: ArrayLike<number>, y: ArrayLike<number>, threshold: number): { x: Float64Array; y: Float64Array } {
  const idx = lttbIndices(x, y, threshold);
  const ox = new Float64Array(idx.length), oy = new Float64Array(idx.length);
  for (let i = 0; i < idx.length; i++) { ox[i] = x[idx[i]!]!; oy[i] = y[idx[i]!]!; }
  return { x: ox, y: oy };
}
