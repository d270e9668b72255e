import { describe, expect, it } from 'vitest';
import { lttb, lttbIndices } from '../../../src/lib/physics/lttb';

// Steinarsson (2013), Downsampling Time Series for Visual Representation, MSc thesis, University of Iceland:
// first and last points kept, n − 2 equal buckets, max triangle area with the previous pick and the next bucket's mean
describe('LTTB', () => {
  it('hand-checked 7 → 4 case', () => {
    // x 0…6, y 0 5 1 1 0 4 0; every = 5/2 → buckets {1, 2} and {3, 4, 5}; the last point (6, 0) closes.
    // Bucket 1, previous (0, 0), next mean (4, 5/3): doubled areas |−4·5 + 1·5/3| = 18.33 (j 1), |−4·1 + 2·5/3| = 0.67 (j 2) → 1.
    // Bucket 2, previous (1, 5), next (6, 0): doubled areas |(1−6)(y−5) − (1−x)(0−5)| = 10, 10, 15 for j 3, 4, 5 → 5.
    const x = [0, 1, 2, 3, 4, 5, 6], y = [0, 5, 1, 1, 0, 4, 0];
    expect(Array.from(lttbIndices(x, y, 4))).toEqual([0, 1, 5, 6]);
  });

  it('keeps everything when the threshold is not below the length, and the extremes at 2', () => {
    expect(Array.from(lttbIndices([0, 1, 2], [1, 2, 3], 5))).toEqual([0, 1, 2]);
    expect(Array.from(lttbIndices([0, 1, 2, 3], [1, 2, 3, 4], 2))).toEqual([0, 3]);
    const d = lttb([0, 1, 2, 3, 4], [0, 9, 0, -9, 0], 3);
    expect(Array.from(d.x)).toEqual([0, 1, 4]);
  });
});
