import { describe, expect, it } from 'vitest';
import { median as ssMedian } from 'simple-statistics';
import { median, theilSen } from '../../../src/lib/physics/robust';
import { lineFit } from '../../../src/lib/physics/least-squares';
import { rng } from './fixtures';

describe('Theil–Sen', () => {
  // Theil–Sen: x 1…5, y 1, 2, 3, 4, 100 → slope 1, intercept 0 (least squares: slope 20) (derived)
  it('ignores the outlier that drags least squares to slope 20', () => {
    const x = [1, 2, 3, 4, 5], y = [1, 2, 3, 4, 100];
    const ts = theilSen(x, y)!;
    expect(ts.slope).toBe(1);
    expect(ts.intercept).toBe(0);
    expect(lineFit(x, y)!.slope).toBeCloseTo(20, 12);
  });

  it('null for one distinct x', () => {
    expect(theilSen([2, 2, 2], [1, 2, 3])).toBeNull();
  });
});

describe('median by selection', () => {
  it('agrees with simple-statistics median', () => {
    const r = rng(6);
    for (const n of [1, 2, 3, 10, 11, 1001]) {
      const x = Array.from({ length: n }, () => Math.round(r.gauss() * 5));
      expect(median(x)).toBe(ssMedian(x));
    }
  });
});
