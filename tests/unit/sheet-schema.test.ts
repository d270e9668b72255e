import { describe, expect, it } from 'vitest';
import { symmetricEigenvalues3 } from '../../src/lib/physics/eigen3';

describe('symmetricEigenvalues3 (Smith 1961 closed form)', () => {
  it('diagonal matrix gives its diagonal sorted', () => {
    expect(symmetricEigenvalues3([[3, 0, 0], [0, 1, 0], [0, 0, 2]])).toEqual([1, 2, 3]);
  });
  it('matches the characteristic polynomial of a full matrix', () => {
    const m = [[4, 1, 0.5], [1, 3, 0.2], [0.5, 0.2, 2]];
    const ev = symmetricEigenvalues3(m);
    // trace and determinant are invariants (linear algebra identity)
    expect(ev[0] + ev[1] + ev[2]).toBeCloseTo(9, 12);
    const det = 4 * (3 * 2 - 0.04) - 1 * (1 * 2 - 0.2 * 0.5) + 0.5 * (1 * 0.2 - 3 * 0.5);
    expect(ev[0] * ev[1] * ev[2]).toBeCloseTo(det, 10);
  });
});
