/**
 * Least-squares fit of a constant plus sinusoids at a fundamental and its
 * harmonics: x(t) ~ c + sum_h a_h cos(2 pi h f t) + b_h sin(2 pi h f t).
 * Linear least squares at fixed f; O(n H^2). Used to remove mains hum by
 * subtraction, which leaves a transient response's shape intact where a notch
 * filter rings. Reference: S. M. Kay, Fundamentals of Statistical Signal
 * Processing: Estimation Theory, Prentice Hall 1993, sec. 4.6 (sinusoidal
 * parameter estimation).
 */
import { cholesky, normalEquations, solve, symmetricEigenvalues } from './linalg';

export interface SineFit {
  coef: number[];
  rss: number;
  power: number;
}

/**
 * The arrays of a sine-fit design, flat so that worker threads can share them:
 * fitted sample indices, basis columns over them (p x m, the constant first), cos and
 * sin of every harmonic at every sample (2H x n), and the scaled normal equations.
 */
export interface SineParts {
  idx: Int32Array;
  cols: Float64Array;
  full: Float64Array;
  A0: Float64Array;
  scale: Float64Array;
  p: number;
  m: number;
  n: number;
}

/** A sine-fit design for fixed sample times, frequency and mask, reused for many sweeps. */
export interface SineDesign {
  /** least-squares fit of one sweep */
  fit(x: ArrayLike<number>): SineFit;
  /** the fitted sinusoids (without the constant) at every sample */
  sinesAt(coef: number[], out: Float64Array): Float64Array;
  /** the flat arrays (for the per-sweep kernel) */
  parts: SineParts;
}

/**
 * Least-squares coefficients of y (the fitted samples) on the design: the normal
 * equations scaled by the column norms, as lstsq (signal/linalg.ts) does.
 */
export function sineCoefficients(d: SineParts, A0rows: number[][], y: ArrayLike<number>, xty?: Float64Array): number[] {
  const { cols, p, m, scale } = d;
  const b: number[] = [];
  for (let j = 0; j < p; j++) {
    let s = 0;
    for (let k = 0; k < m; k++) s += cols[j * m + k] * y[k];
    if (xty) xty[j] = s;
    b.push(s / scale[j]);
  }
  const x = solve(A0rows, b);
  return x ? x.map((v, j) => v / scale[j]) : new Array(p).fill(0);
}

/** The rows of the flat normal matrix. */
export function normalRows(d: SineParts): number[][] {
  return Array.from({ length: d.p }, (_, j) => Array.from(d.A0.subarray(j * d.p, (j + 1) * d.p)));
}

/**
 * Build the design once: basis columns over the fitted samples and the solver's
 * normal matrix. tMs holds sample times in ms; mask selects the fitted samples.
 */
export function sineDesign(
  tMs: ArrayLike<number>,
  f: number,
  harmonics: number,
  mask?: Uint8Array,
  fitOnly = false,
): SineDesign {
  const n = tMs.length;
  const list: number[] = [];
  for (let i = 0; i < n; i++) if (!mask || mask[i]) list.push(i);
  const m = list.length,
    p = 2 * harmonics + 1;
  const idx = Int32Array.from(list);
  const cols = new Float64Array(p * m);
  // fitOnly (frequency search): the basis over the fitted samples only, no sinesAt
  const full = new Float64Array(fitOnly ? 0 : 2 * harmonics * n);
  cols.fill(1, 0, m);
  for (let h = 1; h <= harmonics; h++) {
    const w = (2 * Math.PI * h * f) / 1000;
    const co = (2 * h - 2) * n,
      so = (2 * h - 1) * n;
    if (fitOnly) {
      for (let k = 0; k < m; k++) {
        cols[(2 * h - 1) * m + k] = Math.cos(w * tMs[idx[k]]);
        cols[2 * h * m + k] = Math.sin(w * tMs[idx[k]]);
      }
      continue;
    }
    for (let i = 0; i < n; i++) {
      full[co + i] = Math.cos(w * tMs[i]);
      full[so + i] = Math.sin(w * tMs[i]);
    }
    for (let k = 0; k < m; k++) {
      cols[(2 * h - 1) * m + k] = full[co + idx[k]];
      cols[2 * h * m + k] = full[so + idx[k]];
    }
  }
  const { A0, scale } = normalEquations(Array.from({ length: p }, (_, j) => cols.subarray(j * m, (j + 1) * m)));
  const A0flat = new Float64Array(p * p);
  A0.forEach((r, j) => A0flat.set(r, j * p));
  const parts: SineParts = { idx, cols, full, A0: A0flat, scale: Float64Array.from(scale), p, m, n };
  const y = new Float64Array(m);
  const xty = new Float64Array(p);
  return {
    parts,
    fit(x) {
      let yy = 0;
      for (let k = 0; k < m; k++) {
        y[k] = x[idx[k]];
        yy += y[k] * y[k];
      }
      const coef = sineCoefficients(parts, A0, y, xty);
      // residual sum of squares of the least-squares solution: y'y - c'X'y (no second pass)
      let rss = yy;
      for (let j = 0; j < p; j++) rss -= coef[j] * xty[j];
      let power = 0;
      for (let j = 1; j < coef.length; j++) power += coef[j] * coef[j];
      return { coef, rss, power };
    },
    sinesAt(coef, out) {
      if (fitOnly) throw new Error('sinesAt needs a design built without fitOnly');
      const H = (coef.length - 1) / 2;
      for (let i = 0; i < n; i++) {
        let v = 0;
        for (let h = 1; h <= H; h++)
          v += coef[2 * h - 1] * full[(2 * h - 2) * n + i] + coef[2 * h] * full[(2 * h - 1) * n + i];
        out[i] = v;
      }
      return out;
    },
  };
}

/**
 * Fit at frequency f (Hz) over the samples where mask is true (all when mask is
 * omitted). tMs holds sample times in ms.
 */
export function fitSines(
  x: ArrayLike<number>,
  tMs: ArrayLike<number>,
  f: number,
  harmonics: number,
  mask?: Uint8Array,
): SineFit {
  return sineDesign(tMs, f, harmonics, mask).fit(x);
}

/** The fitted sinusoids (without the constant) at every sample. */
export function sinesAt(coef: number[], tMs: ArrayLike<number>, f: number, out: Float64Array): Float64Array {
  return sineDesign(tMs, f, (coef.length - 1) / 2).sinesAt(coef, out);
}

/** How well a sine-fit design determines the sinusoids it subtracts (see sineConditioning). */
export interface SineConditioning {
  /** fitted and left-out samples */
  fitted: number;
  excluded: number;
  /**
   * 2-norm condition number of the sinusoid columns over the fitted samples, each
   * taken about its mean (the constant is fitted too) and scaled to unit norm:
   * near 1 when the fitted samples cover whole periods, Infinity when singular
   */
  condition: number;
  /**
   * worst case, over all fitted coefficients, of the mean power per sample of the
   * subtracted sinusoids in the left-out samples divided by the mean power per
   * sample they remove from the fitted samples (about 1 when the fitted samples
   * span a period or more; 0 when nothing is left out)
   */
  extrapolationGain: number;
}

/**
 * Conditioning of the hum fit at frequency f (Hz) with `harmonics` harmonics over the
 * samples where mask is 1 (tMs in ms). With X the centred sinusoid columns over the
 * fitted samples (m of them) and Z the same columns over the left-out samples (n_e),
 * the power the subtraction removes from the fitted samples is |X b|^2 and the power
 * it subtracts from the left-out samples is |Z b|^2 for coefficients b; the largest
 * ratio is the largest generalised eigenvalue of (Z'Z, X'X), found from the Cholesky
 * factor of X'X, and extrapolationGain = that ratio x m / n_e. O(n H^2).
 * Reference: G. H. Golub and C. F. Van Loan, Matrix Computations, 4th ed., 2013,
 * sec. 8.7 (the symmetric-definite generalised eigenproblem).
 */
export function sineConditioning(
  tMs: ArrayLike<number>,
  f: number,
  harmonics: number,
  mask?: Uint8Array,
): SineConditioning {
  const n = tMs.length,
    p = 2 * harmonics;
  const G = Array.from({ length: p }, () => new Array<number>(p).fill(0)); // fitted Gram
  const Z = Array.from({ length: p }, () => new Array<number>(p).fill(0)); // left-out Gram
  const sum = new Array<number>(p).fill(0);
  const row = new Float64Array(p);
  let m = 0;
  for (let i = 0; i < n; i++) {
    for (let h = 1; h <= harmonics; h++) {
      const w = (2 * Math.PI * h * f) / 1000;
      row[2 * h - 2] = Math.cos(w * tMs[i]);
      row[2 * h - 1] = Math.sin(w * tMs[i]);
    }
    const fitted = !mask || mask[i] === 1;
    const T = fitted ? G : Z;
    if (fitted) {
      m++;
      for (let j = 0; j < p; j++) sum[j] += row[j];
    }
    for (let j = 0; j < p; j++) for (let k = 0; k <= j; k++) T[j][k] += row[j] * row[k];
  }
  for (let j = 0; j < p; j++)
    for (let k = 0; k < j; k++) {
      G[k][j] = G[j][k];
      Z[k][j] = Z[j][k];
    }
  const excluded = n - m;
  // centre the fitted columns (the constant absorbs their means)
  const B = G.map((r, j) => r.map((v, k) => v - (sum[j] * sum[k]) / Math.max(1, m)));
  return { fitted: m, excluded, ...gramConditioning(B, Z, m, excluded) };
}

/**
 * Conditioning of a least-squares design from its Gram matrices: G over the m fitted samples (columns centred or
 * otherwise residualised), Z over the `excluded` left-out ones. condition: the condition number of G scaled to unit
 * diagonal; extrapolationGain: the largest eigenvalue of L^-1 Zs L^-T (G scaled = L L^T) times m / excluded, the
 * worst ratio of a fitted component's mean power over the left-out samples to its mean power over the fitted ones.
 * Infinity for both when a column is zero or the scaled G is not positive definite.
 */
export function gramConditioning(
  G: number[][],
  Z: number[][],
  m: number,
  excluded: number,
): { condition: number; extrapolationGain: number } {
  const p = G.length;
  const d = G.map((r, j) => Math.sqrt(Math.max(r[j], 0)));
  if (d.some((v) => !(v > 0))) return { condition: Infinity, extrapolationGain: Infinity };
  const Gs = G.map((r, j) => r.map((v, k) => v / (d[j] * d[k])));
  const ev = symmetricEigenvalues(Gs);
  const condition = ev[0] > 0 ? ev[p - 1] / ev[0] : Infinity;
  if (excluded === 0) return { condition, extrapolationGain: 0 };
  const L = cholesky(Gs, 1e-15);
  if (!L) return { condition: Infinity, extrapolationGain: Infinity };
  // M = L^-1 (D^-1 Z D^-1) L^-T
  const fwd = (v: number[]): number[] => {
    const x = new Array<number>(p);
    for (let i = 0; i < p; i++) {
      let s = v[i];
      for (let k = 0; k < i; k++) s -= L[i][k] * x[k];
      x[i] = s / L[i][i];
    }
    return x;
  };
  const Zs = Z.map((r, j) => r.map((v, k) => v / (d[j] * d[k])));
  const Y = Zs.map(fwd); // rows: L^-1 applied to the (symmetric) columns of Zs, transposed
  const Yt = Y[0].map((_, j) => Y.map((r) => r[j]));
  const M = Yt.map(fwd);
  for (let j = 0; j < p; j++) for (let k = 0; k < j; k++) M[j][k] = M[k][j] = 0.5 * (M[j][k] + M[k][j]);
  const lmax = Math.max(0, symmetricEigenvalues(M)[p - 1]);
  return { condition, extrapolationGain: (lmax * m) / excluded };
}
