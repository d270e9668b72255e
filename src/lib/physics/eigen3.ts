/**
 * Eigenvalues of a real symmetric 3×3 matrix, closed form.
 * Smith, O. K. (1961), "Eigenvalues of a symmetric 3 × 3 matrix", Communications of the ACM 4(4):168.
 * Returned in ascending order.
 */
export function symmetricEigenvalues3(m: readonly (readonly number[])[]): [number, number, number] {
  const a = m[0]![0]!, b = m[1]![1]!, c = m[2]![2]!;
  const d = m[0]![1]!, e = m[1]![2]!, f = m[0]![2]!;
  const p1 = d * d + e * e + f * f;
  if (p1 === 0) {
    const s = [a, b, c].sort((x, y) => x - y);
    return [s[0]!, s[1]!, s[2]!];
  }
  const q = (a + b + c) / 3;
  const p2 = (a - q) ** 2 + (b - q) ** 2 + (c - q) ** 2 + 2 * p1;
  const p = Math.sqrt(p2 / 6);
  // B = (A − qI) / p; r = det(B) / 2
  const b11 = (a - q) / p, b22 = (b - q) / p, b33 = (c - q) / p;
  const b12 = d / p, b23 = e / p, b13 = f / p;
  const detB =
    b11 * (b22 * b33 - b23 * b23) - b12 * (b12 * b33 - b23 * b13) + b13 * (b12 * b23 - b22 * b13);
  const r = Math.min(1, Math.max(-1, detB / 2));
  const phi = Math.acos(r) / 3;
  const e1 = q + 2 * p * Math.cos(phi);
  const e3 = q + 2 * p * Math.cos(phi + (2 * Math.PI) / 3);
  const e2 = 3 * q - e1 - e3;
  return [e3, e2, e1];
}
