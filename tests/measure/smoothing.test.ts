/**
 * gaussianSmooth (src/measure/response.ts): the zero-phase Gaussian used on a class's own component before its
 * latencies are read. Reference: SciPy 1.17.1 scipy.ndimage.gaussian_filter1d(y, sigma, mode='nearest',
 * truncate=3.0), which uses the same kernel (radius 3 sigma, normalised, ends held at the first and last samples);
 * values printed by python3 with NumPy 2.4 / SciPy 1.17.1.
 */
import { describe, it, expect } from 'vitest';
import { gaussianSmooth } from '../../src/measure/response';

const y = Float64Array.of(0, 1, 4, 9, 3, -2, 0.5, 7, 7, 1, 0, 0, 2);
// scipy.ndimage.gaussian_filter1d(y, 2.0, mode='nearest', truncate=3.0)
const scipy2 = [
  1.308709650487, 2.154855807914, 2.88496243115, 3.194667952111, 3.09404771647, 2.922268267691, 2.961551336738,
  3.09519579348, 2.983268145404, 2.511262008747, 1.928273172989, 1.564322337453, 1.516183957325,
];
// scipy.ndimage.gaussian_filter1d(y, 1.0, mode='nearest', truncate=3.0)
const scipy1 = [
  0.497955993443, 1.866544585284, 4.169714063888, 5.23391706397, 3.169893951793, 0.961879095398, 1.994092594683,
  4.567917239791, 4.747778487537, 2.48242558408, 0.767983906555, 0.685986640197, 1.403483327828,
];

describe('gaussianSmooth(y, sigma)', () => {
  it('equals SciPy gaussian_filter1d (mode nearest, truncate 3) at sigma 1 and 2', () => {
    const a = gaussianSmooth(y, 1),
      b = gaussianSmooth(y, 2);
    for (let i = 0; i < y.length; i++) {
      expect(a[i]).toBeCloseTo(scipy1[i], 10);
      expect(b[i]).toBeCloseTo(scipy2[i], 10);
    }
  });
  it('keeps a symmetric wave symmetric about its peak and does not change its input', () => {
    const g = Float64Array.from({ length: 61 }, (_, i) => Math.exp(-0.5 * ((i - 30) / 6) ** 2));
    const copy = Float64Array.from(g);
    const z = gaussianSmooth(g, 2);
    for (let i = 0; i <= 30; i++) expect(z[30 - i]).toBeCloseTo(z[30 + i], 12);
    expect(Array.from(g)).toEqual(Array.from(copy));
  });
  it('returns a copy below sigma 0.5', () => {
    const z = gaussianSmooth(y, 0.4);
    expect(Array.from(z)).toEqual(Array.from(y));
    expect(z).not.toBe(y);
  });
});
