/**
 * Models with their formulas and sources. Each is a ModelFn (x, p) => y for fitCurve.
 */
import type { ModelFn } from './lm';

/**
 * Four-parameter log-logistic (Hill) in ln concentration, the parametrisation of
 * Ritz, Baty, Streibig & Gerhard (PLoS ONE 10 (2015) e0146021, the drc package):
 * y = c + (d - c) / (1 + exp(b (ln x - ln e))); e = IC50 (or ED50), b = Hill slope,
 * c = lower asymptote, d = upper asymptote. p = [b, c, d, ln e]. At x = 0, y = d (b > 0).
 * Reference: A. V. Hill, J. Physiol. 40 (1910) iv-vii.
 */
export const logLogistic4: ModelFn = (x, p) => {
  const [b, c, d, lne] = p;
  if (x <= 0) return b > 0 ? d : c;
  return c + (d - c) / (1 + Math.exp(b * (Math.log(x) - lne)));
};

/**
 * Boltzmann sigmoid for recruitment in log10 intensity: y = lo + (hi - lo) / (1 + exp((x50 - x) / s)),
 * x = log10 intensity, p = [lo, hi, x50, s]. (Boltzmann form as used for recruitment curves; common practice, no source.)
 */
export const boltzmann: ModelFn = (x, p) => p[0] + (p[1] - p[0]) / (1 + Math.exp((p[2] - x) / p[3]));

/** Weiss strength-duration law: I = Irh (1 + tch / t); p = [Irh, tch] (Geddes, IEEE TBME 51 (2004) 176). */
export const weiss: ModelFn = (t, p) => p[0] * (1 + p[1] / t);

/** Lapicque strength-duration law: I = Irh / (1 - exp(-t / tau)); chronaxie = tau ln 2; p = [Irh, tau] (from memory). */
export const lapicque: ModelFn = (t, p) => p[0] / (1 - Math.exp(-t / p[1]));

/** Single exponential approach (wash-in / wash-out): y = yInf + (y0 - yInf) exp(-(t - t0)/tau); p = [y0, yInf, tau], t0 fixed at the first time. */
export const singleExponential =
  (t0: number): ModelFn =>
  (t, p) =>
    p[1] + (p[0] - p[1]) * Math.exp(-(t - t0) / p[2]);

/** Gas constant, J / (mol K) (CODATA 2018, exact). */
export const R_GAS = 8.314462618;

/** Q10 from two rates: Q10 = (r2 / r1)^(10 / (T2 - T1)). */
export const q10FromRates = (r1: number, T1: number, r2: number, T2: number): number =>
  Math.pow(r2 / r1, 10 / (T2 - T1));

/** Arrhenius activation energy (J/mol) equivalent to a Q10 between T1 and T2 (C): Ea = R T1 T2 ln(Q10) / 10 (T in K). */
export const activationEnergyFromQ10 = (q10: number, T1: number, T2: number): number =>
  (R_GAS * (T1 + 273.15) * (T2 + 273.15) * Math.log(q10)) / 10;

/** Q10 equivalent to an activation energy over T1..T2 (C): Q10 = exp(10 Ea / (R T1 T2)). */
export const q10FromActivationEnergy = (Ea: number, T1: number, T2: number): number =>
  Math.exp((10 * Ea) / (R_GAS * (T1 + 273.15) * (T2 + 273.15)));

/** Result of {@link sharedShapeScores}. */
export interface SharedShapeFit {
  /** score of each trace on the shared shape (unit norm), nuisance terms removed; sign: reference mean > 0 */
  scores: number[];
  /** mean score of the reference traces (divide a score by it for the amplitude relative to the reference) */
  referenceScore: number;
  /** the shared shape (unit norm, orthogonal to the nuisance terms), one value per sample */
  shape: Float64Array;
  /** fraction of the traces' energy (after the nuisance terms) that the shared shape explains */
  explained: number;
  iterations: number;
  converged: boolean;
}

/**
 * Rank-one model of traces that share one waveform: y_c = a_c s + N b_c + e_c, with s the shared shape, a_c the
 * amplitude of trace c, N the nuisance columns (e.g. an offset and a slope, each trace its own b_c) and e_c noise.
 * The least-squares solution is the leading singular pair of the traces after the nuisance terms are projected out
 * (Eckart & Young, Psychometrika 1 (1936) 211; computed here by power iteration, as in Golub & Van Loan, Matrix
 * Computations, sec. 8.2). Unlike a projection on one measured reference trace, the shape is estimated from every
 * trace, and for noise of the same covariance in every trace, independent between traces, the expected Gram
 * matrix is S a a' + tr(Cov) I, whose leading eigenvector is a itself: the ratios of the scores are unbiased
 * (a reference's own noise does not set it to exactly 1 while shrinking the others). Returns null when the traces
 * are empty, of unequal length, or the reference scores sum to 0.
 */
export function sharedShapeScores(
  traces: readonly ArrayLike<number>[],
  nuisance: readonly ArrayLike<number>[],
  reference: readonly number[],
  options: { maxIterations?: number; tolerance?: number } = {},
): SharedShapeFit | null {
  const n = traces.length;
  if (!n || !reference.length) return null;
  const m = traces[0].length;
  if (!m || traces.some((y) => y.length !== m) || nuisance.some((q) => q.length !== m)) return null;
  if (reference.some((i) => !Number.isInteger(i) || i < 0 || i >= n)) return null;
  // orthonormal basis of the nuisance columns (modified Gram-Schmidt; a dependent column is dropped)
  const basis: Float64Array[] = [];
  for (const col of nuisance) {
    const q = Float64Array.from(col);
    const scale = Math.sqrt(q.reduce((a, v) => a + v * v, 0));
    for (const b of basis) {
      let d = 0;
      for (let j = 0; j < m; j++) d += b[j] * q[j];
      for (let j = 0; j < m; j++) q[j] -= d * b[j];
    }
    const nq = Math.sqrt(q.reduce((a, v) => a + v * v, 0));
    if (!(nq > 1e-10 * scale)) continue;
    for (let j = 0; j < m; j++) q[j] /= nq;
    basis.push(q);
  }
  const R = traces.map((y) => {
    const r = Float64Array.from(y);
    for (const b of basis) {
      let d = 0;
      for (let j = 0; j < m; j++) d += b[j] * r[j];
      for (let j = 0; j < m; j++) r[j] -= d * b[j];
    }
    return r;
  });
  const total = R.reduce((a, r) => a + r.reduce((s, v) => s + v * v, 0), 0);
  if (!(total > 0)) return null;
  // power iteration on R R' from the mean of the references (alternating: s = R' a / |R' a|, a = R s)
  const maxIt = options.maxIterations ?? 500,
    tol = options.tolerance ?? 1e-12;
  const s = new Float64Array(m);
  for (const i of reference) for (let j = 0; j < m; j++) s[j] += R[i][j];
  let a = new Array<number>(n).fill(0);
  const normalise = () => {
    const ns = Math.sqrt(s.reduce((q, v) => q + v * v, 0));
    if (ns > 0) for (let j = 0; j < m; j++) s[j] /= ns;
    return ns;
  };
  if (!(normalise() > 0)) {
    // the references sum to nothing: start from the largest trace
    let big = 0;
    R.forEach((r, i) => {
      if (r.reduce((q, v) => q + v * v, 0) > R[big].reduce((q, v) => q + v * v, 0)) big = i;
    });
    s.set(R[big]);
    normalise();
  }
  let converged = false,
    it = 0;
  for (; it < maxIt && !converged; it++) {
    a = R.map((r) => r.reduce((q, v, j) => q + v * s[j], 0));
    const prev = Float64Array.from(s);
    s.fill(0);
    a.forEach((ai, i) => {
      for (let j = 0; j < m; j++) s[j] += ai * R[i][j];
    });
    if (!(normalise() > 0)) return null;
    let d = 0;
    for (let j = 0; j < m; j++) d += (s[j] - prev[j]) ** 2;
    converged = d < tol;
  }
  a = R.map((r) => r.reduce((q, v, j) => q + v * s[j], 0));
  let ref = reference.reduce((q, i) => q + a[i], 0) / reference.length;
  if (!(Math.abs(ref) > 0)) return null;
  if (ref < 0) {
    a = a.map((v) => -v);
    for (let j = 0; j < m; j++) s[j] = -s[j];
    ref = -ref;
  }
  const explained = a.reduce((q, v) => q + v * v, 0) / total;
  return { scores: a, referenceScore: ref, shape: s, explained, iterations: it, converged };
}
