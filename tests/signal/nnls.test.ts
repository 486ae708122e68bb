import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { nnls, nnlsGram } from '../../src/signal/nnls';
import { OptionError } from '../../src/errors';

// Reference: scipy.optimize.nnls (SciPy 1.17, Lawson-Hanson), written by tests/reference/make_nnls.py
const ref = JSON.parse(readFileSync(join(__dirname, '../reference/nnls.json'), 'utf8')) as {
  scipy: string;
  problems: {
    name: string;
    m: number;
    n: number;
    A: number[];
    b: number[];
    x: number[];
    rnorm: number;
    unique: boolean;
    rank: number;
  }[];
};

const rel = (a: number, b: number, scale: number) => Math.abs(a - b) / Math.max(Math.abs(b), scale);

/** KKT conditions: x >= 0, w = A'(b - Ax) <= tol on x = 0 and |w| <= tol on x > 0 (Lawson & Hanson 1974, ch. 23). */
function kkt(A: Float64Array, m: number, n: number, b: Float64Array, x: Float64Array): number {
  const r = Float64Array.from(b);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) r[i] -= A[i * n + j] * x[j];
  let worst = 0;
  for (let j = 0; j < n; j++) {
    let w = 0;
    for (let i = 0; i < m; i++) w += A[i * n + j] * r[i];
    if (x[j] < 0) worst = Math.max(worst, -x[j]);
    worst = Math.max(worst, x[j] > 0 ? Math.abs(w) : Math.max(0, w));
  }
  return worst;
}

describe('nnls(A, m, n, b) against scipy.optimize.nnls', () => {
  for (const p of ref.problems) {
    it(`${p.name} (rank ${p.rank} of ${p.n})`, () => {
      const A = Float64Array.from(p.A),
        b = Float64Array.from(p.b);
      const frozenA = Float64Array.from(A),
        frozenB = Float64Array.from(b);
      const r = nnls(A, p.m, p.n, b, { maxIter: 50 * p.n });
      expect(r.status).toBe('ok');
      // the minimum residual is unique even when x is not: 1e-8 relative (to ||b|| when it is near 0)
      const bn = Math.hypot(...p.b);
      expect(rel(r.residualNorm, p.rnorm, 1e-6 * bn)).toBeLessThan(1e-8);
      const xs = Math.max(...p.x.map(Math.abs), 1e-300);
      if (p.unique) for (let j = 0; j < p.n; j++) expect(rel(r.x[j], p.x[j], xs)).toBeLessThan(1e-8);
      for (const v of r.x) expect(v).toBeGreaterThanOrEqual(0);
      const bs = Math.max(...p.b.map(Math.abs));
      expect(kkt(A, p.m, p.n, b, r.x)).toBeLessThan(1e-9 * bs * p.m);
      expect(A).toEqual(frozenA); // input not mutated
      expect(b).toEqual(frozenB);
    });
  }
});

describe('nnlsGram(G, c, n) against scipy.optimize.nnls on full-rank, well-conditioned problems', () => {
  for (const p of ref.problems.filter((q) => q.unique && q.rank === q.n && !q.name.startsWith('ill'))) {
    it(p.name, () => {
      const { m, n } = p;
      const G = new Float64Array(n * n),
        c = new Float64Array(n);
      for (let i = 0; i < m; i++)
        for (let j = 0; j < n; j++) {
          c[j] += p.A[i * n + j] * p.b[i];
          for (let k = 0; k < n; k++) G[j * n + k] += p.A[i * n + j] * p.A[i * n + k];
        }
      const bb = p.b.reduce((s, v) => s + v * v, 0);
      const r = nnlsGram(G, c, n, { bb, maxIter: 50 * n });
      const xs = Math.max(...p.x.map(Math.abs), 1e-300);
      for (let j = 0; j < n; j++) expect(rel(r.x[j], p.x[j], xs)).toBeLessThan(1e-8);
      expect(rel(r.residualNorm, p.rnorm, 1e-6)).toBeLessThan(1e-6); // from x'Gx - 2c'x + b'b: cancellation limits it
    });
  }
});

describe('nnls validation', () => {
  it('names the mismatched argument', () => {
    expect(() => nnls(new Float64Array(5), 2, 3, new Float64Array(2))).toThrow(OptionError);
    expect(() => nnls(new Float64Array(6), 2, 3, new Float64Array(3))).toThrow(
      /invalid b: expected a Float64Array of length 2/,
    );
    expect(() => nnls(new Float64Array([1, NaN]), 2, 1, new Float64Array(2))).toThrow(/element 1 is NaN/);
  });
});
