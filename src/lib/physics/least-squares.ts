/*
 * Small ordinary least squares (Gauss, 1809; Legendre, 1805): normal equations XᵀX β = Xᵀy solved
 * by Gauss–Jordan elimination with partial pivoting, covariance s²(XᵀX)⁻¹. Meant for 1–6 regressors.
 */

/** Inverse of a small dense square matrix (row-major, n×n); null when singular to working precision. */
export function invertSmall(m: Float64Array, n: number): Float64Array | null {
  const a = Float64Array.from(m);
  const inv = new Float64Array(n * n);
  for (let i = 0; i < n; i++) inv[i * n + i] = 1;
  let scale = 0;
  for (let i = 0; i < n * n; i++) scale = Math.max(scale, Math.abs(a[i]!));
  if (!(scale > 0)) return null;
  for (let col = 0; col < n; col++) {
    let piv = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(a[r * n + col]!) > Math.abs(a[piv * n + col]!)) piv = r;
    const p = a[piv * n + col]!;
    if (Math.abs(p) <= 1e-13 * scale) return null;
    if (piv !== col) {
      for (let k = 0; k < n; k++) {
        let t = a[col * n + k]!; a[col * n + k] = a[piv * n + k]!; a[piv * n + k] = t;
        t = inv[col * n + k]!; inv[col * n + k] = inv[piv * n + k]!; inv[piv * n + k] = t;
      }
    }
    for (let k = 0; k < n; k++) { a[col * n + k] = a[col * n + k]! / p; inv[col * n + k] = inv[col * n + k]! / p; }
    for (let r = 0; r < n; r++) {
      if (r === col) continue;
      const f = a[r * n + col]!;
      if (f === 0) continue;
      for (let k = 0; k < n; k++) { a[r * n + k] = a[r * n + k]! - f * a[col * n + k]!; inv[r * n + k] = inv[r * n + k]! - f * inv[col * n + k]!; }
    }
  }
  return inv;
}

/** Result of an ordinary least-squares fit. */
export interface OlsFit {
  /** Coefficients, in the order of the regressor columns. */
  coef: number[];
  /** Standard errors of the coefficients, √diag(s²(XᵀX)⁻¹). */
  stdErr: number[];
  /** Residual standard deviation s = √(RSS/(n − p)). */
  residualSd: number;
  /** Coefficient of determination, 1 − RSS/TSS (TSS about the mean of y). */
  rSquared: number;
  n: number;
  /** Degrees of freedom n − p. */
  dof: number;
}

/** Options of olsFit. */
export interface OlsOptions {
  /**
   * When the errors are correlated over runs of consecutive rows, the length of those runs: standard
   * errors then come from the cluster-robust sandwich (XᵀX)⁻¹ (Σ_g X_gᵀe_g e_gᵀX_g) (XᵀX)⁻¹ over contiguous
   * blocks of this many rows (Liang & Zeger, 1986), scaled by G/(G−1)·(n−1)/(n−p). 1 = ordinary s²(XᵀX)⁻¹.
   */
  clusterLength?: number;
}

/**
 * OLS of y on the columns of X (X given as p columns of length n; add a column of ones for an
 * intercept). Columns are scaled to unit RMS before solving for conditioning. Null when n ≤ p or
 * XᵀX is singular.
 */
export function olsFit(columns: readonly ArrayLike<number>[], y: ArrayLike<number>, options: OlsOptions = {}): OlsFit | null {
  const p = columns.length;
  const n = y.length;
  if (p === 0 || n <= p) return null;
  const scale = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    const c = columns[j]!;
    let s = 0;
    for (let i = 0; i < n; i++) s += c[i]! * c[i]!;
    scale[j] = s > 0 ? Math.sqrt(s / n) : 0;
    if (!(scale[j]! > 0)) return null;
  }
  const X = new Float64Array(n * p); // row-major, columns scaled
  for (let j = 0; j < p; j++) {
    const c = columns[j]!, inv = 1 / scale[j]!;
    for (let i = 0; i < n; i++) X[i * p + j] = c[i]! * inv;
  }
  const xtx = new Float64Array(p * p);
  const xty = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    const yi = y[i]!, r = i * p;
    for (let j = 0; j < p; j++) {
      const xj = X[r + j]!;
      xty[j] = xty[j]! + xj * yi;
      for (let k = j; k < p; k++) xtx[j * p + k] = xtx[j * p + k]! + xj * X[r + k]!;
    }
  }
  for (let j = 0; j < p; j++) for (let k = 0; k < j; k++) xtx[j * p + k] = xtx[k * p + j]!;
  const inv = invertSmall(xtx, p);
  if (!inv) return null;
  const beta = new Array<number>(p).fill(0);
  for (let j = 0; j < p; j++) {
    let s = 0;
    for (let k = 0; k < p; k++) s += inv[j * p + k]! * xty[k]!;
    beta[j] = s;
  }
  let rss = 0, ysum = 0;
  for (let i = 0; i < n; i++) ysum += y[i]!;
  const ymean = ysum / n;
  let tss = 0;
  for (let i = 0; i < n; i++) {
    let fit = 0;
    for (let j = 0; j < p; j++) fit += beta[j]! * X[i * p + j]!;
    const r = y[i]! - fit;
    rss += r * r;
    tss += (y[i]! - ymean) ** 2;
  }
  const dof = n - p;
  const s2 = rss / dof;
  const cl = Math.max(1, Math.floor(options.clusterLength ?? 1));
  let variance: number[] = beta.map((_, j) => s2 * inv[j * p + j]!);
  const groups = Math.ceil(n / cl);
  if (cl > 1 && groups > p) {
    const meat = new Float64Array(p * p);
    const g = new Float64Array(p);
    for (let start = 0; start < n; start += cl) {
      g.fill(0);
      for (let i = start; i < Math.min(n, start + cl); i++) {
        let fit = 0;
        for (let j = 0; j < p; j++) fit += beta[j]! * X[i * p + j]!;
        const e = y[i]! - fit;
        for (let j = 0; j < p; j++) g[j] = g[j]! + X[i * p + j]! * e;
      }
      for (let j = 0; j < p; j++) for (let k = 0; k < p; k++) meat[j * p + k] = meat[j * p + k]! + g[j]! * g[k]!;
    }
    const c = (groups / (groups - 1)) * ((n - 1) / dof);
    variance = beta.map((_, j) => {
      let v = 0;
      for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) v += inv[j * p + a]! * meat[a * p + b]! * inv[b * p + j]!;
      return c * v;
    });
  }
  return {
    coef: beta.map((b, j) => b / scale[j]!),
    stdErr: variance.map((v, j) => Math.sqrt(Math.max(0, v)) / scale[j]!),
    residualSd: Math.sqrt(s2),
    rSquared: tss > 0 ? 1 - rss / tss : 1,
    n,
    dof,
  };
}

/** Straight-line fit y = intercept + slope·x by OLS, with the slope's standard error. */
export interface LineFit {
  slope: number;
  intercept: number;
  slopeStdErr: number;
  n: number;
}

/** Least-squares straight line through (x, y), centred for accuracy; null for fewer than 2 distinct x. */
export function lineFit(x: ArrayLike<number>, y: ArrayLike<number>, from = 0, to = x.length): LineFit | null {
  const n = to - from;
  if (n < 2) return null;
  let sx = 0, sy = 0;
  for (let i = from; i < to; i++) { sx += x[i]!; sy += y[i]!; }
  const mx = sx / n, my = sy / n;
  let sxx = 0, sxy = 0;
  for (let i = from; i < to; i++) { const dx = x[i]! - mx; sxx += dx * dx; sxy += dx * (y[i]! - my); }
  if (!(sxx > 0)) return null;
  const slope = sxy / sxx;
  const intercept = my - slope * mx;
  let rss = 0;
  for (let i = from; i < to; i++) rss += (y[i]! - intercept - slope * x[i]!) ** 2;
  const slopeStdErr = n > 2 ? Math.sqrt(rss / (n - 2) / sxx) : Number.NaN;
  return { slope, intercept, slopeStdErr, n };
}

/**
 * Streaming least squares: accumulates XᵀX, Xᵀy, yᵀy (and the same per block of `clusterLength` rows for
 * cluster-robust errors) one row at a time, without storing rows. Same estimates as olsFit; the residual
 * sum of squares comes from yᵀy − 2βᵀXᵀy + βᵀXᵀXβ.
 */
export class NormalEquations {
  readonly p: number;
  readonly clusterLength: number;
  n = 0;
  private readonly xtx: Float64Array;
  private readonly xty: Float64Array;
  private yty = 0;
  private ysum = 0;
  private clusters: Float64Array;
  private nClusters = 0;
  private inCluster = 0;
  private gathered = false;

  constructor(p: number, clusterLength = 1) {
    this.p = p;
    this.clusterLength = Math.max(1, Math.floor(clusterLength));
    this.xtx = new Float64Array(p * p);
    this.xty = new Float64Array(p);
    this.clusters = new Float64Array(this.clusterLength > 1 ? 64 * (p * p + p) : 0);
  }

  /** Adds one row x (length p) with response y. */
  add(x: ArrayLike<number>, y: number): void {
    if (this.gathered) throw new Error('NormalEquations: rows added after solve');
    const p = this.p;
    this.yty += y * y;
    this.ysum += y;
    this.n++;
    let m: Float64Array = this.xtx, base = 0, yOff = 0;
    if (this.clusterLength > 1) {
      // rows go to the current block only; the totals are the blocks' sum (formed in solve)
      const stride = p * p + p;
      if (this.inCluster === 0) this.openCluster(stride);
      this.inCluster = (this.inCluster + 1) % this.clusterLength;
      m = this.clusters;
      base = (this.nClusters - 1) * stride;
      yOff = base + p * p;
    } else {
      m = this.xtx;
    }
    const xy = this.clusterLength > 1 ? this.clusters : this.xty;
    for (let j = 0; j < p; j++) {
      const xj = x[j]!;
      xy[yOff + j] = xy[yOff + j]! + xj * y;
      const row = base + j * p;
      for (let k = j; k < p; k++) m[row + k] = m[row + k]! + xj * x[k]!;
    }
  }

  /**
   * Adds `rows` rows with p = 3 given by their sums: the upper triangle of XᵀX (s00 s01 s02 s11 s12 s22),
   * Xᵀy (t0 t1 t2), yᵀy and Σy. With clustered errors the rows form one cluster, so a caller passes
   * exactly clusterLength rows per call (fewer only for the last); the result equals add() row by row.
   */
  addBlock3(rows: number, s00: number, s01: number, s02: number, s11: number, s12: number, s22: number, t0: number, t1: number, t2: number, yy: number, ys: number): void {
    if (this.p !== 3) throw new Error('NormalEquations.addBlock3 needs p = 3');
    if (this.gathered) throw new Error('NormalEquations: rows added after solve');
    if (rows <= 0) return;
    this.yty += yy;
    this.ysum += ys;
    this.n += rows;
    let m: Float64Array = this.xtx, base = 0, yOff = 0, xy: Float64Array = this.xty;
    if (this.clusterLength > 1) {
      if (this.inCluster !== 0 || rows > this.clusterLength) throw new Error('NormalEquations.addBlock3: a block is one whole cluster');
      this.openCluster(12);
      m = xy = this.clusters;
      base = (this.nClusters - 1) * 12;
      yOff = base + 9;
      // a short block is a cluster still open to add(); a whole one is closed
      this.inCluster = rows === this.clusterLength ? 0 : rows;
    }
    // upper triangle of the row-major 3×3 block, as add() fills it
    m[base] = m[base]! + s00; m[base + 1] = m[base + 1]! + s01; m[base + 2] = m[base + 2]! + s02;
    m[base + 4] = m[base + 4]! + s11; m[base + 5] = m[base + 5]! + s12;
    m[base + 8] = m[base + 8]! + s22;
    xy[yOff] = xy[yOff]! + t0; xy[yOff + 1] = xy[yOff + 1]! + t1; xy[yOff + 2] = xy[yOff + 2]! + t2;
  }

  /** Starts a zeroed block of `stride` sums for the next cluster, growing the store when full. */
  private openCluster(stride: number): void {
    if ((this.nClusters + 1) * stride > this.clusters.length) {
      const grown = new Float64Array(this.clusters.length * 2);
      grown.set(this.clusters);
      this.clusters = grown;
    }
    this.clusters.fill(0, this.nClusters * stride, (this.nClusters + 1) * stride);
    this.nClusters++;
  }

  private gatherTotals(): void {
    if (this.gathered) return;
    this.gathered = true;
    if (this.clusterLength === 1) return;
    const p = this.p, stride = p * p + p;
    for (let c = 0; c < this.nClusters; c++) {
      const off = c * stride;
      for (let j = 0; j < p * p; j++) this.xtx[j] = this.xtx[j]! + this.clusters[off + j]!;
      for (let j = 0; j < p; j++) this.xty[j] = this.xty[j]! + this.clusters[off + p * p + j]!;
    }
  }

  /** Solves for the coefficients (call once, after the last row); null when n ≤ p or XᵀX is singular. */
  solve(): OlsFit | null {
    const p = this.p, n = this.n;
    if (n <= p) return null;
    this.gatherTotals();
    const a = new Float64Array(p * p);
    const d = new Float64Array(p);
    for (let j = 0; j < p; j++) {
      const v = this.xtx[j * p + j]!;
      if (!(v > 0)) return null;
      d[j] = 1 / Math.sqrt(v);
    }
    for (let j = 0; j < p; j++) for (let k = j; k < p; k++) {
      const v = this.xtx[j * p + k]! * d[j]! * d[k]!;
      a[j * p + k] = v;
      a[k * p + j] = v;
    }
    const ai = invertSmall(a, p);
    if (!ai) return null;
    const inv = new Float64Array(p * p); // (XᵀX)⁻¹ = D (D XᵀX D)⁻¹ D
    for (let j = 0; j < p; j++) for (let k = 0; k < p; k++) inv[j * p + k] = ai[j * p + k]! * d[j]! * d[k]!;
    const beta = new Array<number>(p).fill(0);
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let k = 0; k < p; k++) s += inv[j * p + k]! * this.xty[k]!;
      beta[j] = s;
    }
    const full = (m: Float64Array, off: number, j: number, k: number) => (j <= k ? m[off + j * p + k]! : m[off + k * p + j]!);
    let bxy = 0, bxxb = 0;
    for (let j = 0; j < p; j++) {
      bxy += beta[j]! * this.xty[j]!;
      for (let k = 0; k < p; k++) bxxb += beta[j]! * full(this.xtx, 0, j, k) * beta[k]!;
    }
    const rss = Math.max(0, this.yty - 2 * bxy + bxxb);
    const dof = n - p;
    const s2 = rss / dof;
    let variance = beta.map((_, j) => s2 * inv[j * p + j]!);
    const G = this.nClusters;
    if (this.clusterLength > 1 && G > p) {
      const stride = p * p + p;
      const meat = new Float64Array(p * p);
      const g = new Float64Array(p);
      for (let c = 0; c < G; c++) {
        const off = c * stride;
        for (let j = 0; j < p; j++) {
          let s = this.clusters[off + p * p + j]!;
          for (let k = 0; k < p; k++) s -= full(this.clusters, off, j, k) * beta[k]!;
          g[j] = s;
        }
        for (let j = 0; j < p; j++) for (let k = 0; k < p; k++) meat[j * p + k] = meat[j * p + k]! + g[j]! * g[k]!;
      }
      const corr = (G / (G - 1)) * ((n - 1) / dof);
      variance = beta.map((_, j) => {
        let v = 0;
        for (let x = 0; x < p; x++) for (let y = 0; y < p; y++) v += inv[j * p + x]! * meat[x * p + y]! * inv[y * p + j]!;
        return corr * v;
      });
    }
    const tss = this.yty - (this.ysum * this.ysum) / n;
    return {
      coef: beta,
      stdErr: variance.map((v) => Math.sqrt(Math.max(0, v))),
      residualSd: Math.sqrt(s2),
      rSquared: tss > 0 ? 1 - rss / tss : 1,
      n,
      dof,
    };
  }
}
