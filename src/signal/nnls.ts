/**
 * Non-negative least squares: minimise ||A x - b||_2 subject to x >= 0.
 *
 * Method: the active-set algorithm of Lawson & Hanson (1974), chapter 23. Variables
 * move from the zero set Z to the positive set P one at a time (the one with the
 * largest dual w = A^T (b - A x)); the unconstrained least-squares problem on the
 * columns in P is solved by Householder QR; when its solution has a non-positive
 * entry, the algorithm steps back along the segment to the boundary and returns the
 * variables that reached zero to Z. It stops when every w_j <= 0 on Z (the
 * Karush-Kuhn-Tucker conditions). A column whose part orthogonal to the columns in P
 * is below 100 eps of its norm is not moved to P (rank-deficient problems), as in the
 * original's column test. Two forms:
 * - `nnls(A, m, n, b)`: A row-major m x n; O(m n^2) per outer iteration (QR of A_P).
 * - `nnlsGram(G, c, n)`: the normal-equation form min 1/2 x'Gx - c'x, x >= 0, with
 *   G = A^T A (+ any regulariser) and c = A^T b, solved with Cholesky of G_PP
 *   (Bro & De Jong 1997); O(n^3) per iteration and independent of m, for repeated
 *   solves with many rows. It squares the condition number: use `nnls` for
 *   ill-conditioned A.
 * Units: whatever A and b carry; x in units of b / A.
 *
 * @throws OptionError for mismatched sizes or non-finite input.
 * @example nnls(new Float64Array([1, 0, 1, 0, 0, 1]), 3, 2, new Float64Array([2, 1, 1]))
 *   // x = [1.5, 1], residualNorm = 0.70710678 (the example of SciPy's nnls documentation)
 *
 * References
 * Lawson CL, Hanson RJ (1974) Solving Least Squares Problems. Prentice-Hall, Englewood
 *   Cliffs (reprinted SIAM 1995, doi:10.1137/1.9781611971217), chapter 23, algorithm NNLS.
 * Bro R, De Jong S (1997) A fast non-negativity-constrained least squares algorithm.
 *   J Chemometrics 11:393-401.
 */
import { OptionError } from '../errors';

export interface NnlsResult {
  /** the solution, x >= 0 */
  x: Float64Array;
  /** ||A x - b||_2 (for nnlsGram: sqrt of 2 (1/2 x'Gx - c'x) + b'b when bb is given, else NaN) */
  residualNorm: number;
  /** outer iterations (variables moved to the positive set) */
  iterations: number;
  /** the indices of the positive set at the solution */
  positive: number[];
  /** 'ok', or 'iteration limit reached' */
  status: string;
}

const EPS = 2.220446049250313e-16;

function check(name: string, a: Float64Array, len: number): void {
  if (!(a instanceof Float64Array) || a.length !== len)
    throw new OptionError(
      `invalid ${name}: expected a Float64Array of length ${len}, got ${a instanceof Float64Array ? a.length : typeof a}`,
    );
  for (let i = 0; i < len; i++)
    if (!Number.isFinite(a[i])) throw new OptionError(`invalid ${name}: element ${i} is ${a[i]}; must be finite`);
}

/**
 * Least squares on the columns `cols` of A by Householder QR: returns the solution
 * (length cols.length) and the diagonal of R, or null when a diagonal entry is zero.
 */
function lsqOnColumns(
  A: Float64Array,
  m: number,
  n: number,
  b: Float64Array,
  cols: number[],
): { z: Float64Array; rdiag: Float64Array; colNorm: Float64Array } {
  const p = cols.length;
  // copy the columns into a column-major m x p work array
  const Q = new Float64Array(m * p);
  const colNorm = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    let s = 0;
    for (let i = 0; i < m; i++) {
      const v = A[i * n + cols[j]];
      Q[j * m + i] = v;
      s += v * v;
    }
    colNorm[j] = Math.sqrt(s);
  }
  const y = Float64Array.from(b);
  const rdiag = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    const c = j * m;
    let s = 0;
    for (let i = j; i < m; i++) s += Q[c + i] * Q[c + i];
    const norm = Math.sqrt(s);
    if (norm === 0) {
      rdiag[j] = 0;
      continue;
    }
    const alpha = Q[c + j] > 0 ? -norm : norm;
    const v0 = Q[c + j] - alpha;
    // Householder vector v = (v0, Q[c+j+1..]); H = I - 2 v v' / v'v
    const vtv = v0 * v0 + (s - Q[c + j] * Q[c + j]);
    Q[c + j] = v0;
    for (let k = j + 1; k < p; k++) {
      const d = k * m;
      let t = 0;
      for (let i = j; i < m; i++) t += Q[c + i] * Q[d + i];
      const f = (2 * t) / vtv;
      for (let i = j; i < m; i++) Q[d + i] -= f * Q[c + i];
    }
    let t = 0;
    for (let i = j; i < m; i++) t += Q[c + i] * y[i];
    const f = (2 * t) / vtv;
    for (let i = j; i < m; i++) y[i] -= f * Q[c + i];
    rdiag[j] = alpha;
  }
  // back substitution R z = (Q'b)[0..p)
  const z = new Float64Array(p);
  for (let j = p - 1; j >= 0; j--) {
    let s = y[j];
    for (let k = j + 1; k < p; k++) s -= Q[k * m + j] * z[k];
    z[j] = rdiag[j] !== 0 ? s / rdiag[j] : 0;
  }
  return { z, rdiag, colNorm };
}

/** Lawson-Hanson active set; `solveP(P)` solves the unconstrained problem on P, `dual(x)` returns w. */
function activeSet(
  n: number,
  maxIter: number,
  solveP: (P: number[]) => { z: Float64Array; ok: boolean },
  dual: (x: Float64Array) => Float64Array,
): { x: Float64Array; iterations: number; positive: number[]; status: string } {
  const x = new Float64Array(n);
  const inP = new Uint8Array(n);
  const banned = new Uint8Array(n);
  let P: number[] = [];
  let iter = 0;
  for (;;) {
    const w = dual(x);
    let t = -1,
      wmax = 0;
    for (let j = 0; j < n; j++)
      if (!inP[j] && !banned[j] && w[j] > wmax) {
        wmax = w[j];
        t = j;
      }
    if (t < 0) break;
    if (iter >= maxIter) return { x, iterations: iter, positive: P, status: 'iteration limit reached' };
    iter++;
    const trial = [...P, t];
    const first = solveP(trial);
    // column test (independence) and the sign of the new variable, as Lawson & Hanson's step 6
    if (!first.ok || !(first.z[trial.length - 1] > 0)) {
      banned[t] = 1;
      continue;
    }
    banned.fill(0);
    P = trial;
    inP[t] = 1;
    let z = first.z;
    for (let inner = 0; inner < 3 * n + 10; inner++) {
      let allPos = true;
      for (let k = 0; k < P.length; k++)
        if (!(z[k] > 0)) {
          allPos = false;
          break;
        }
      if (allPos) break;
      let alpha = Infinity;
      for (let k = 0; k < P.length; k++) {
        if (!(z[k] > 0)) {
          const j = P[k];
          const a = x[j] / (x[j] - z[k]);
          if (a < alpha) alpha = a;
        }
      }
      for (let k = 0; k < P.length; k++) {
        const j = P[k];
        x[j] += alpha * (z[k] - x[j]);
      }
      const keep: number[] = [];
      for (let k = 0; k < P.length; k++) {
        const j = P[k];
        if (x[j] <= 0 || (!(z[k] > 0) && Math.abs(x[j]) <= 1e-15 * (1 + Math.abs(z[k])))) {
          x[j] = 0;
          inP[j] = 0;
        } else keep.push(j);
      }
      P = keep;
      if (!P.length) {
        z = new Float64Array(0);
        break;
      }
      z = solveP(P).z;
    }
    for (let k = 0; k < P.length; k++) x[P[k]] = z[k];
  }
  return { x, iterations: iter, positive: P, status: 'ok' };
}

/**
 * Non-negative least squares, Lawson & Hanson (1974). A is row-major m x n.
 * `maxIter` defaults to 3 n (SciPy's default). See the module comment.
 */
export function nnls(
  A: Float64Array,
  m: number,
  n: number,
  b: Float64Array,
  options: { maxIter?: number } = {},
): NnlsResult {
  if (!Number.isInteger(m) || !Number.isInteger(n) || m < 1 || n < 1)
    throw new OptionError(`invalid nnls size: ${m} x ${n}; must be positive integers`);
  check('A', A, m * n);
  check('b', b, m);
  const maxIter = options.maxIter ?? 3 * n;
  const solveP = (P: number[]) => {
    const { z, rdiag, colNorm } = lsqOnColumns(A, m, n, b, P);
    const last = P.length - 1;
    const ok = Math.abs(rdiag[last]) > 100 * EPS * colNorm[last] && rdiag.every((d) => d !== 0);
    return { z, ok };
  };
  const dual = (x: Float64Array) => {
    const r = Float64Array.from(b);
    for (let i = 0; i < m; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += A[i * n + j] * x[j];
      r[i] -= s;
    }
    const w = new Float64Array(n);
    for (let i = 0; i < m; i++) {
      const ri = r[i];
      if (ri === 0) continue;
      for (let j = 0; j < n; j++) w[j] += A[i * n + j] * ri;
    }
    return w;
  };
  const res = activeSet(n, maxIter, solveP, dual);
  let ss = 0;
  for (let i = 0; i < m; i++) {
    let s = -b[i];
    for (let j = 0; j < n; j++) s += A[i * n + j] * res.x[j];
    ss += s * s;
  }
  return { ...res, residualNorm: Math.sqrt(ss) };
}

/**
 * Non-negative least squares in normal-equation form: minimise 1/2 x'Gx - c'x, x >= 0,
 * G symmetric positive semi-definite n x n (row-major), by the same active set with a
 * Cholesky solve on G_PP (Bro & De Jong 1997). `bb` = b'b gives residualNorm.
 */
export function nnlsGram(
  G: Float64Array,
  c: Float64Array,
  n: number,
  options: { maxIter?: number; bb?: number } = {},
): NnlsResult {
  if (!Number.isInteger(n) || n < 1) throw new OptionError(`invalid nnlsGram size: ${n}; must be a positive integer`);
  check('G', G, n * n);
  check('c', c, n);
  const maxIter = options.maxIter ?? 3 * n;
  const solveP = (P: number[]) => {
    const p = P.length;
    const L = new Float64Array(p * p);
    let ok = true;
    for (let i = 0; i < p; i++) {
      for (let j = 0; j <= i; j++) {
        let s = G[P[i] * n + P[j]];
        for (let k = 0; k < j; k++) s -= L[i * p + k] * L[j * p + k];
        if (i === j) {
          const d = G[P[i] * n + P[i]];
          if (!(s > 1e4 * EPS * Math.max(d, 1e-300))) {
            ok = false;
            L[i * p + i] = Math.sqrt(Math.max(s, 1e-300));
          } else L[i * p + i] = Math.sqrt(s);
        } else L[i * p + j] = s / L[j * p + j];
      }
    }
    const y = new Float64Array(p);
    for (let i = 0; i < p; i++) {
      let s = c[P[i]];
      for (let k = 0; k < i; k++) s -= L[i * p + k] * y[k];
      y[i] = s / L[i * p + i];
    }
    const z = new Float64Array(p);
    for (let i = p - 1; i >= 0; i--) {
      let s = y[i];
      for (let k = i + 1; k < p; k++) s -= L[k * p + i] * z[k];
      z[i] = s / L[i * p + i];
    }
    return { z, ok };
  };
  const dual = (x: Float64Array) => {
    const w = Float64Array.from(c);
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += G[i * n + j] * x[j];
      w[i] -= s;
    }
    return w;
  };
  const res = activeSet(n, maxIter, solveP, dual);
  let q = 0;
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += G[i * n + j] * res.x[j];
    q += res.x[i] * s - 2 * c[i] * res.x[i];
  }
  const rn = options.bb !== undefined ? Math.sqrt(Math.max(0, q + options.bb)) : NaN;
  return { ...res, residualNorm: rn };
}
