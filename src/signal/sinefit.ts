/**
 * Least-squares fit of a constant plus sinusoids at a fundamental and its
 * harmonics: x(t) ~ c + sum_h a_h cos(2 pi h f t) + b_h sin(2 pi h f t).
 * Linear least squares at fixed f; O(n H^2). Used to remove mains hum by
 * subtraction, which leaves a transient response's shape intact where a notch
 * filter rings. Reference: S. M. Kay, Fundamentals of Statistical Signal
 * Processing: Estimation Theory, Prentice Hall 1993, sec. 4.6 (sinusoidal
 * parameter estimation).
 */
import { lstsqSolver } from './linalg';

export interface SineFit { coef: number[]; rss: number; power: number }

/** A sine-fit design for fixed sample times, frequency and mask, reused for many sweeps. */
export interface SineDesign {
  /** least-squares fit of one sweep */
  fit(x: ArrayLike<number>): SineFit;
  /** the fitted sinusoids (without the constant) at every sample */
  sinesAt(coef: number[], out: Float64Array): Float64Array;
}

/**
 * Build the design once: basis columns over the fitted samples and the solver's
 * normal matrix. tMs holds sample times in ms; mask selects the fitted samples.
 */
export function sineDesign(tMs: ArrayLike<number>, f: number, harmonics: number, mask?: Uint8Array): SineDesign {
  const idx: number[] = [];
  for (let i = 0; i < tMs.length; i++) if (!mask || mask[i]) idx.push(i);
  const m = idx.length;
  const cols: Float64Array[] = [new Float64Array(m).fill(1)];
  // cos and sin of every harmonic at every sample (for subtraction over the whole sweep)
  const full: Float64Array[] = [];
  for (let h = 1; h <= harmonics; h++) {
    const w = (2 * Math.PI * h * f) / 1000;
    const cf = new Float64Array(tMs.length), sf = new Float64Array(tMs.length);
    for (let i = 0; i < tMs.length; i++) { cf[i] = Math.cos(w * tMs[i]); sf[i] = Math.sin(w * tMs[i]); }
    full.push(cf, sf);
    cols.push(Float64Array.from(idx, (i) => cf[i]), Float64Array.from(idx, (i) => sf[i]));
  }
  const solver = lstsqSolver(cols);
  const y = new Float64Array(m);
  return {
    fit(x) {
      for (let k = 0; k < m; k++) y[k] = x[idx[k]];
      const coef = solver(y) ?? new Array(cols.length).fill(0);
      let rss = 0;
      for (let k = 0; k < m; k++) {
        let p = 0;
        for (let j = 0; j < cols.length; j++) p += coef[j] * cols[j][k];
        rss += (y[k] - p) ** 2;
      }
      let power = 0;
      for (let j = 1; j < coef.length; j++) power += coef[j] * coef[j];
      return { coef, rss, power };
    },
    sinesAt(coef, out) {
      const H = (coef.length - 1) / 2;
      for (let i = 0; i < tMs.length; i++) {
        let v = 0;
        for (let h = 1; h <= H; h++) v += coef[2 * h - 1] * full[2 * h - 2][i] + coef[2 * h] * full[2 * h - 1][i];
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
export function fitSines(x: ArrayLike<number>, tMs: ArrayLike<number>, f: number, harmonics: number, mask?: Uint8Array): SineFit {
  return sineDesign(tMs, f, harmonics, mask).fit(x);
}

/** The fitted sinusoids (without the constant) at every sample. */
export function sinesAt(coef: number[], tMs: ArrayLike<number>, f: number, out: Float64Array): Float64Array {
  return sineDesign(tMs, f, (coef.length - 1) / 2).sinesAt(coef, out);
}
