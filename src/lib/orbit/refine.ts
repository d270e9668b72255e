/**
 * One-dimensional refiners for the pass finder: a root of a bracketed sign change, and the maximum
 * of a unimodal function on an interval.
 */

/**
 * Root of f in [a, b], given f(a) and f(b) of opposite signs (zero counts as positive), to within tol:
 * Brent's method (Brent 1973, Algorithms for Minimization without Derivatives, ch. 4), inverse
 * quadratic interpolation guarded by bisection.
 */
export function brentRoot(f: (x: number) => number, a: number, b: number, fa: number, fb: number, tol: number): number {
  if ((fa >= 0) === (fb >= 0)) throw new RangeError('brentRoot needs a bracket: f(a) and f(b) must differ in sign');
  if (fa === 0) return a;
  if (fb === 0) return b;
  let c = b;
  let fc = fb;
  let d = b - a;
  let e = d;
  for (let iter = 0; iter < 200; iter++) {
    if ((fb > 0) === (fc > 0)) {
      c = a;
      fc = fa;
      d = b - a;
      e = d;
    }
    if (Math.abs(fc) < Math.abs(fb)) {
      a = b;
      b = c;
      c = a;
      fa = fb;
      fb = fc;
      fc = fa;
    }
    const tol1 = 2 * Number.EPSILON * Math.abs(b) + 0.5 * tol;
    const m = 0.5 * (c - b);
    if (Math.abs(m) <= tol1 || fb === 0) return b;
    if (Math.abs(e) >= tol1 && Math.abs(fa) > Math.abs(fb)) {
      const s = fb / fa;
      let p: number;
      let q: number;
      if (a === c) {
        p = 2 * m * s;
        q = 1 - s;
      } else {
        const qa = fa / fc;
        const r = fb / fc;
        p = s * (2 * m * qa * (qa - r) - (b - a) * (r - 1));
        q = (qa - 1) * (r - 1) * (s - 1);
      }
      if (p > 0) q = -q;
      else p = -p;
      if (2 * p < Math.min(3 * m * q - Math.abs(tol1 * q), Math.abs(e * q))) {
        e = d;
        d = p / q;
      } else {
        d = m;
        e = m;
      }
    } else {
      d = m;
      e = m;
    }
    a = b;
    fa = fb;
    b += Math.abs(d) > tol1 ? d : m > 0 ? tol1 : -tol1;
    fb = f(b);
  }
  return b;
}

/** Where a unimodal f is largest on [a, b], to within tol: golden-section search (Kiefer 1953). */
export function goldenSectionMaximum(f: (x: number) => number, a: number, b: number, tol: number): { x: number; fx: number } {
  const r = (Math.sqrt(5) - 1) / 2;
  let x1 = b - r * (b - a);
  let x2 = a + r * (b - a);
  let f1 = f(x1);
  let f2 = f(x2);
  while (b - a > tol) {
    if (f1 < f2) {
      a = x1;
      x1 = x2;
      f1 = f2;
      x2 = a + r * (b - a);
      f2 = f(x2);
    } else {
      b = x2;
      x2 = x1;
      f2 = f1;
      x1 = b - r * (b - a);
      f1 = f(x1);
    }
  }
  return f1 >= f2 ? { x: x1, fx: f1 } : { x: x2, fx: f2 };
}
