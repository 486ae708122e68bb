/**
 * Bridging a gap in a signal: samples a..b (inclusive) of x are replaced, in place, by a
 * straight line or a cubic Hermite curve between the samples either side, x[a-1] and
 * x[b+1]. The Hermite end slopes are the one-sample differences just outside the gap.
 * O(b - a). Used to blank a stimulus artifact (common practice, no source).
 * Reference: cubic Hermite basis functions h00, h10, h01, h11 as in R. L. Burden and
 * J. D. Faires, Numerical Analysis, 9th ed., Brooks/Cole 2011, sec. 3.4.
 * @example const x = Float64Array.from([0, 9, 9, 3]); bridgeGap(x, 1, 2, 'linear'); // x = [0, 1, 2, 3]
 */
export function bridgeGap(x: Float64Array, a: number, b: number, kind: 'linear' | 'hermite'): void {
  const n = x.length;
  const l = Math.max(0, a - 1),
    r = Math.min(n - 1, b + 1);
  if (l === a && r === b) return;
  const y0 = x[l],
    y1 = x[r];
  const span = r - l;
  // end slopes from two samples outside the gap, per sample
  const m0 = l >= 1 && kind === 'hermite' ? x[l] - x[l - 1] : (y1 - y0) / span;
  const m1 = r + 1 < n && kind === 'hermite' ? x[r + 1] - x[r] : (y1 - y0) / span;
  for (let i = a; i <= b; i++) {
    const u = (i - l) / span;
    if (kind === 'linear' || l === a || r === b) x[i] = y0 + (y1 - y0) * u;
    else {
      const h00 = 2 * u ** 3 - 3 * u ** 2 + 1,
        h10 = u ** 3 - 2 * u ** 2 + u,
        h01 = -2 * u ** 3 + 3 * u ** 2,
        h11 = u ** 3 - u ** 2;
      x[i] = h00 * y0 + h10 * span * m0 + h01 * y1 + h11 * span * m1;
    }
  }
}
