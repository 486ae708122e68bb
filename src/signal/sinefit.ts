/**
 * Least-squares fit of a constant plus sinusoids at a fundamental and its
 * harmonics: x(t) ~ c + sum_h a_h cos(2 pi h f t) + b_h sin(2 pi h f t).
 * Linear least squares at fixed f; O(n H^2). Used to remove mains hum by
 * subtraction, which leaves a transient response's shape intact where a notch
 * filter rings. Reference: S. M. Kay, Fundamentals of Statistical Signal
 * Processing: Estimation Theory, Prentice Hall 1993, sec. 4.6 (sinusoidal
 * parameter estimation).
 */
import { lstsq } from './linalg';

export interface SineFit { coef: number[]; rss: number; power: number }

/**
 * Fit at frequency f (Hz) over the samples where mask is true (all when mask is
 * omitted). tMs holds sample times in ms.
 */
export function fitSines(x: ArrayLike<number>, tMs: ArrayLike<number>, f: number, harmonics: number, mask?: Uint8Array): SineFit {
  const idx: number[] = [];
  for (let i = 0; i < x.length; i++) if (!mask || mask[i]) idx.push(i);
  const m = idx.length;
  const cols: Float64Array[] = [new Float64Array(m).fill(1)];
  for (let h = 1; h <= harmonics; h++) {
    const cc = new Float64Array(m), ss = new Float64Array(m);
    const w = (2 * Math.PI * h * f) / 1000;
    idx.forEach((i, k) => {
      cc[k] = Math.cos(w * tMs[i]);
      ss[k] = Math.sin(w * tMs[i]);
    });
    cols.push(cc, ss);
  }
  const y = Float64Array.from(idx, (i) => x[i]);
  const coef = lstsq(cols, y) ?? new Array(cols.length).fill(0);
  let rss = 0;
  for (let k = 0; k < m; k++) {
    let p = 0;
    for (let j = 0; j < cols.length; j++) p += coef[j] * cols[j][k];
    rss += (y[k] - p) ** 2;
  }
  let power = 0;
  for (let j = 1; j < coef.length; j++) power += coef[j] * coef[j];
  return { coef, rss, power };
}

/** The fitted sinusoids (without the constant) at every sample. */
export function sinesAt(coef: number[], tMs: ArrayLike<number>, f: number, out: Float64Array): Float64Array {
  const H = (coef.length - 1) / 2;
  for (let i = 0; i < tMs.length; i++) {
    let v = 0;
    for (let h = 1; h <= H; h++) {
      const w = (2 * Math.PI * h * f) / 1000;
      v += coef[2 * h - 1] * Math.cos(w * tMs[i]) + coef[2 * h] * Math.sin(w * tMs[i]);
    }
    out[i] = v;
  }
  return out;
}
