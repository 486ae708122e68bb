import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { tQuantile, tCdf, fSurvival, chi2Survival, normQuantile } from '../../src/fit/dist';

// Reference values computed with scipy.stats (SciPy 1.17) by tests/reference/make_stats.py.
const ref = JSON.parse(readFileSync(join(__dirname, '..', 'reference', 'stats.json'), 'utf8'));
const rel = (a: number, b: number) => Math.abs(a - b) / Math.max(Math.abs(b), 1e-300);

describe('distribution functions against scipy.stats', () => {
  it('t quantiles and CDF to 1e-9', () => {
    for (const [p, df, q] of ref.t_ppf) expect(rel(tQuantile(p, df), q)).toBeLessThan(1e-9);
    for (const [t, df, c] of ref.t_cdf) expect(rel(tCdf(t, df), c)).toBeLessThan(1e-9);
  });
  it('F and chi-square survival to 1e-9, normal quantile', () => {
    for (const [f, d1, d2, s] of ref.f_sf) expect(rel(fSurvival(f, d1, d2), s)).toBeLessThan(1e-9);
    for (const [x, k, s] of ref.chi2_sf) expect(rel(chi2Survival(x, k), s)).toBeLessThan(1e-9);
    for (const [p, q] of ref.norm_ppf) expect(Math.abs(normQuantile(p) - q)).toBeLessThan(1e-9);
  });
});
