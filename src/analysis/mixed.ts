/**
 * Linear mixed-effects model with a random intercept per animal (preparation):
 *   y = X beta + u[animal] + e,  u ~ N(0, sigma_u^2),  e ~ N(0, sigma_e^2),
 * for any per-class measure against categorical conditions (and groups), with sweeps or
 * electrodes as repeated observations of one animal (Lazic 2010; Aarts et al. 2014).
 *
 * Estimation: restricted maximum likelihood (REML; Patterson & Thompson 1971). The REML
 * deviance is profiled over sigma_e^2 and minimised over rho = theta / (1 + theta),
 * theta = sigma_u^2 / sigma_e^2: a grid of 64 points finds the basin, bisection on the sign of the
 * exact derivative finds the minimum (sigma_u^2 = 0 allowed: the boundary is reported). Each
 * animal's covariance block is sigma_e^2 (I + theta J), handled in closed form, so a fit costs
 * O(animals p^2) per step.
 * Tests: t for each coefficient and F for each term (Type III, from a sum-to-zero coded fit),
 * with Satterthwaite denominator degrees of freedom: df = 2 v^2 / (g' A g), v the variance of
 * the contrast, g its gradient in (sigma_u^2, sigma_e^2), A the inverse of the expected REML
 * information 1/2 tr(P V_k P V_l); for terms with several df the approximation of Fai &
 * Cornelius (1996) over the eigen-decomposition of the contrast covariance (as lmerTest does;
 * that software's method is from memory). Observed-information versions (lmerTest's default)
 * differ slightly in unbalanced designs; in balanced designs both give the classical df.
 * Checks (tests/analysis/groups.test.ts): for balanced designs REML variance components equal
 * the ANOVA estimators and the F and t tests equal the repeated-measures / one-way ANOVA and the
 * paired t (Searle, Casella & McCulloch 1992, ch. 4, from memory); unbalanced data against an
 * independent dense implementation with SciPy's optimiser (tests/reference/make_groups.py).
 * References: H. D. Patterson, R. Thompson, Biometrika 58 (1971) 545-554; F. E. Satterthwaite,
 * Biometrics Bull. 2 (1946) 110-114; A. H.-T. Fai, P. L. Cornelius, J. Stat. Comput. Simul. 54
 * (1996) 363-378; S. R. Searle, G. Casella, C. E. McCulloch, Variance Components, Wiley 1992.
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { OptionError, AnalysisError } from '../errors';
import { checkKeys, didYouMean, shown } from '../validate';
import { invertSpd, cholesky } from '../signal/linalg';
import { fSurvival, tQuantile } from '../fit/dist';
import { tTwoSided, rowsOf, type RowInput } from './groups';
import { Result } from '../notebook/result';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';

import type { Row } from '../registry/types';

/** A random-intercept REML fit on numbers: y, the design X (rows), and each row's animal. */
export interface RandomInterceptFit {
  beta: number[];
  /** covariance of beta, (X' V^-1 X)^-1 */
  covariance: number[][];
  sigmaU2: number;
  sigmaE2: number;
  /** REML deviance, -2 log restricted likelihood */
  remlDeviance: number;
  /** inverse of the expected REML information of (sigma_u^2, sigma_e^2) */
  varianceCovariance: number[][];
  boundary: boolean;
  nObs: number;
  nAnimals: number;
  /** gradient of the coefficient covariance: M F_k M for k = u, e */
  dCov: [number[][], number[][]];
}

interface Block {
  n: number;
  xtx: number[][];
  s: number[];
  xty: number[];
  t: number;
  yty: number;
}

const zeros = (p: number, q: number) => Array.from({ length: p }, () => new Array<number>(q).fill(0));
const matmul = (A: number[][], B: number[][]) =>
  A.map((r) => B[0].map((_, j) => r.reduce((acc, v, k) => acc + v * B[k][j], 0)));
const quad = (a: number[], M: number[][], b: number[]) =>
  a.reduce((acc, ai, i) => acc + ai * M[i].reduce((s, m, j) => s + m * b[j], 0), 0);
const trace = (A: number[][]) => A.reduce((s, r, i) => s + r[i], 0);

function blocks(y: readonly number[], X: readonly (readonly number[])[], animal: readonly string[]): Block[] {
  const p = X[0].length;
  const map = new Map<string, Block>();
  y.forEach((yi, i) => {
    let b = map.get(animal[i]);
    if (!b) {
      b = { n: 0, xtx: zeros(p, p), s: new Array(p).fill(0), xty: new Array(p).fill(0), t: 0, yty: 0 };
      map.set(animal[i], b);
    }
    const x = X[i];
    b.n++;
    b.t += yi;
    b.yty += yi * yi;
    for (let a = 0; a < p; a++) {
      b.s[a] += x[a];
      b.xty[a] += x[a] * yi;
      for (let c = 0; c < p; c++) b.xtx[a][c] += x[a] * x[c];
    }
  });
  return [...map.values()];
}

/** X' Q X and X' Q y for block matrices Q = a I + b J (given per block). */
function weighted(
  bs: Block[],
  ab: (b: Block) => [number, number],
  p: number,
): { xqx: number[][]; xqy: number[]; yqy: number } {
  const xqx = zeros(p, p),
    xqy = new Array(p).fill(0);
  let yqy = 0;
  for (const b of bs) {
    const [a, c] = ab(b);
    for (let i = 0; i < p; i++) {
      xqy[i] += a * b.xty[i] + c * b.s[i] * b.t;
      for (let j = 0; j < p; j++) xqx[i][j] += a * b.xtx[i][j] + c * b.s[i] * b.s[j];
    }
    yqy += a * b.yty + c * b.t * b.t;
  }
  return { xqx, xqy, yqy };
}

function logdet(A: number[][]): number | null {
  const L = cholesky(A, 1e-13);
  if (!L) return null;
  return 2 * L.reduce((s, r, i) => s + Math.log(r[i]), 0);
}

/**
 * Fit y = X beta + u[animal] + e by REML. X must have full column rank (an intercept column
 * included by the caller). O(iterations x animals x p^2).
 * @throws AnalysisError when X is rank-deficient or there are no more observations than columns.
 */
export function fitRandomIntercept(
  y: readonly number[],
  X: readonly (readonly number[])[],
  animal: readonly string[],
): RandomInterceptFit {
  const N = y.length,
    p = X[0]?.length ?? 0;
  if (!(N > p)) throw new AnalysisError(`mixed model needs more observations (${N}) than fixed-effect columns (${p})`);
  const bs = blocks(y, X, animal);
  const prof = (theta: number) => {
    const w = weighted(bs, (b) => [1, -theta / (1 + b.n * theta)], p);
    const inv = invertSpd(w.xqx);
    const ld = logdet(w.xqx);
    if (!inv || ld === null) return null;
    const beta = inv.map((r) => r.reduce((s, v, j) => s + v * w.xqy[j], 0));
    const q = w.yqy - beta.reduce((s, b, j) => s + b * w.xqy[j], 0);
    const se = q / (N - p);
    const logH = bs.reduce((s, b) => s + Math.log(1 + b.n * theta), 0);
    const dev = (N - p) * Math.log(se) + logH + ld + (N - p) * (1 + Math.log(2 * Math.PI));
    // exact derivative in theta: dH_i^-1/dtheta = -J / (1 + n_i theta)^2; dq/dtheta = r' (dH^-1/dtheta) r (envelope)
    let dq = 0,
      dl = 0;
    const K = zeros(p, p);
    for (const b of bs) {
      const k2 = 1 / (1 + b.n * theta) ** 2;
      const rs = b.t - b.s.reduce((acc, v, j) => acc + v * beta[j], 0);
      dq -= k2 * rs * rs;
      dl += b.n / (1 + b.n * theta);
      for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) K[i][j] += k2 * b.s[i] * b.s[j];
    }
    const slope = ((N - p) * dq) / q + dl - trace(matmul(inv, K));
    return { dev, beta, se, inv, slope };
  };
  const at0 = prof(0);
  if (!at0) {
    throw new AnalysisError(
      'mixed model design is rank-deficient (a level or combination without observations, ' +
        'or a factor that does not vary)',
    );
  }
  if (!(at0.se > 0)) {
    throw new AnalysisError('mixed model: the fixed effects fit the data exactly (no residual variation)');
  }
  const th = (rho: number) => rho / (1 - rho);
  const f = (rho: number) => {
    const r = prof(th(rho));
    return r ? r.dev : Infinity;
  };
  const d = (rho: number) => {
    const r = prof(th(rho));
    return r ? r.slope : NaN;
  };
  // grid for the basin of the global minimum, then bisection on the sign of the exact derivative
  const K = 64,
    top = 1 - 1e-9;
  const grid = Array.from({ length: K + 1 }, (_, k) => top * (k / K) ** 2);
  const vals = grid.map(f);
  let kBest = 0;
  for (let k = 1; k <= K; k++) if (vals[k] < vals[kBest]) kBest = k;
  let rho = grid[kBest];
  if (!(kBest === 0 && at0.slope >= 0)) {
    let lo = grid[Math.max(0, kBest - 1)],
      hi = grid[Math.min(K, kBest + 1)];
    if (d(lo) < 0 && d(hi) > 0) {
      for (let it = 0; it < 200 && hi - lo > 1e-17; it++) {
        const mid = (lo + hi) / 2;
        if (d(mid) < 0) lo = mid;
        else hi = mid;
      }
      rho = (lo + hi) / 2;
    }
  } else rho = 0;
  if (rho > 0 && f(0) <= f(rho)) rho = 0;
  const theta = rho / (1 - rho);
  const best = prof(theta)!;
  const se = best.se,
    su = theta * se;
  const M = best.inv.map((r) => r.map((v) => v * se));
  // block algebra in span{I, J}: (a, b) = a I + b J; product for block size n
  type IJ = [number, number];
  const mul = (P: IJ, Q: IJ, n: number): IJ => [P[0] * Q[0], P[0] * Q[1] + P[1] * Q[0] + n * P[1] * Q[1]];
  const Vk: [number, number][] = [
    [0, 1],
    [1, 0],
  ];
  const Wb = (b: Block): [number, number] => [1 / se, -theta / (1 + b.n * theta) / se];
  const F = Vk.map((V) => weighted(bs, (b) => mul(mul(Wb(b), V, b.n), Wb(b), b.n), p).xqx);
  const info = zeros(2, 2);
  for (let k = 0; k < 2; k++)
    for (let l = 0; l < 2; l++) {
      let trWW = 0;
      for (const b of bs) {
        const Q = mul(mul(mul(Wb(b), Vk[k], b.n), Wb(b), b.n), Vk[l], b.n);
        trWW += b.n * (Q[0] + Q[1]);
      }
      const G = weighted(bs, (b) => mul(mul(mul(mul(Wb(b), Vk[k], b.n), Wb(b), b.n), Vk[l], b.n), Wb(b), b.n), p).xqx;
      info[k][l] = 0.5 * (trWW - 2 * trace(matmul(M, G)) + trace(matmul(matmul(M, F[k]), matmul(M, F[l]))));
    }
  const A = invertSpd(info) ?? [
    [NaN, NaN],
    [NaN, NaN],
  ];
  const dCov = F.map((Fk) => matmul(matmul(M, Fk), M)) as [number[][], number[][]];
  return {
    beta: best.beta,
    covariance: M,
    sigmaU2: su,
    sigmaE2: se,
    remlDeviance: best.dev,
    varianceCovariance: A,
    boundary: rho === 0,
    nObs: N,
    nAnimals: bs.length,
    dCov,
  };
}

/** Satterthwaite df of the contrast l' beta. */
export function satterthwaiteDf(fit: RandomInterceptFit, l: readonly number[]): number {
  const v = quad(l as number[], fit.covariance, l as number[]);
  const g = fit.dCov.map((D) => quad(l as number[], D, l as number[]));
  const A = fit.varianceCovariance;
  const den = g[0] * (A[0][0] * g[0] + A[0][1] * g[1]) + g[1] * (A[1][0] * g[0] + A[1][1] * g[1]);
  return (2 * v * v) / den;
}

/** Symmetric eigen-decomposition by cyclic Jacobi rotations (small matrices). */
function jacobiEigen(S: number[][]): { values: number[]; vectors: number[][] } {
  const n = S.length;
  const A = S.map((r) => [...r]);
  const V: number[][] = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0)));
  for (let sweep = 0; sweep < 100; sweep++) {
    let off = 0;
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) off += A[i][j] ** 2;
    if (off < 1e-30 * (trace(A) ** 2 + 1e-300)) break;
    for (let p = 0; p < n; p++)
      for (let q = p + 1; q < n; q++) {
        if (A[p][q] === 0) continue;
        const th = (A[q][q] - A[p][p]) / (2 * A[p][q]);
        const t = Math.sign(th || 1) / (Math.abs(th) + Math.sqrt(th * th + 1));
        const c = 1 / Math.sqrt(t * t + 1),
          s = t * c;
        for (let k = 0; k < n; k++) {
          const akp = A[k][p],
            akq = A[k][q];
          A[k][p] = c * akp - s * akq;
          A[k][q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = A[p][k],
            aqk = A[q][k];
          A[p][k] = c * apk - s * aqk;
          A[q][k] = s * apk + c * aqk;
        }
        for (let k = 0; k < n; k++) {
          const vkp = V[k][p],
            vkq = V[k][q];
          V[k][p] = c * vkp - s * vkq;
          V[k][q] = s * vkp + c * vkq;
        }
      }
  }
  return { values: A.map((r, i) => r[i]), vectors: Array.from({ length: n }, (_, m) => V.map((r) => r[m])) };
}

/** F test of L beta = 0 (L: q rows) with Fai-Cornelius / Satterthwaite denominator df. */
export function contrastF(
  fit: RandomInterceptFit,
  L: readonly (readonly number[])[],
): { F: number; numDf: number; denDf: number; p: number } {
  const q = L.length;
  const LML = L.map((a) => L.map((b) => quad(a as number[], fit.covariance, b as number[])));
  const Lb = L.map((a) => a.reduce((s, v, j) => s + v * fit.beta[j], 0));
  const { values, vectors } = jacobiEigen(LML);
  let F = 0;
  const nu: number[] = [];
  values.forEach((d, m) => {
    const u = vectors[m];
    const lm = fit.beta.map((_, j) => u.reduce((s, uk, k) => s + uk * L[k][j], 0));
    const proj = u.reduce((s, uk, k) => s + uk * Lb[k], 0);
    F += (proj * proj) / d;
    nu.push(satterthwaiteDf(fit, lm));
  });
  F /= q;
  let denDf: number;
  if (q === 1 || nu.every((v) => Math.abs(v - nu[0]) < 1e-8 * Math.abs(nu[0]))) {
    denDf = nu.reduce((a, b) => a + b, 0) / nu.length;
  } else if (nu.some((v) => v <= 2)) denDf = 2;
  else {
    const E = nu.reduce((s, v) => s + v / (v - 2), 0);
    denDf = E > q ? (2 * E) / (E - q) : 2;
  }
  return { F, numDf: q, denDf, p: fSurvival(F, q, denDf) };
}

const NO_DF =
  'no Satterthwaite df: the variance components are not both identifiable (e.g. one observation per ' +
  'animal) or the fit is degenerate';

/** Options of mixedModel; fields name columns of the rows. */
export interface MixedOptions {
  /** the measure (numeric column) */
  value: string;
  /** categorical fixed factors (e.g. ['group', 'condition']) */
  fixed: string[];
  /** the random-intercept grouping (default 'animal' when present, else 'preparation') */
  random?: string;
  /** with two fixed factors, include their interaction (default false) */
  interaction?: boolean;
  /** separate fits per combination of these columns (default ['class'] when present) */
  by?: string[];
  /**
   * level order per factor; the first is the reference of the treatment-coded coefficients. A list may name only
   * some levels (e.g. `{ group: ['control'] }` names the control as the reference): those come first in the given
   * order, the others follow sorted. Default: sorted (`sortLevels`: numbers ascending, then text in code-point
   * order), so that the results do not depend on the order of the input rows or files.
   */
  levels?: Record<string, ConditionValue[]>;
}

export const mixedDefaults = { randomKeys: ['animal', 'preparation'], by: ['class'], interaction: false };

const typeRank = (v: ConditionValue) => (typeof v === 'number' ? 0 : typeof v === 'string' ? 1 : 2);
/** The documented order of two level values: numbers ascending, then text (code-point order), then the rest. */
export function compareLevels(a: ConditionValue, b: ConditionValue): number {
  const ra = typeRank(a),
    rb = typeRank(b);
  if (ra !== rb) return ra - rb;
  if (typeof a === 'number' && typeof b === 'number') return a - b;
  const sa = String(a),
    sb = String(b);
  return sa < sb ? -1 : sa > sb ? 1 : 0;
}

/** Levels in the documented order (a copy): see compareLevels. */
export function sortLevels(levels: readonly ConditionValue[]): ConditionValue[] {
  return [...levels].sort(compareLevels);
}

/** The level order of one factor in one fit: the given levels present, in their order, then the others sorted. */
export function levelOrder(seen: readonly ConditionValue[], given?: readonly ConditionValue[]): ConditionValue[] {
  const first = given ? given.filter((v, i) => seen.includes(v) && given.indexOf(v) === i) : [];
  return [...first, ...sortLevels([...new Set(seen)].filter((v) => !first.includes(v)))];
}

interface Term {
  name: string;
  factors: string[];
  cols: number[];
}

/** Design matrix for factors with treatment or sum-to-zero coding. */
function design(
  rows: Row[],
  factors: string[],
  levels: Record<string, ConditionValue[]>,
  interaction: boolean,
  coding: 'treatment' | 'sum',
): { X: number[][]; names: string[]; terms: Term[] } {
  const names = ['(Intercept)'];
  const terms: Term[] = [];
  const codes: number[][][] = factors.map((fct) => {
    const lv = levels[fct];
    return rows.map((r) => {
      const k = lv.findIndex((v) => v === r[fct]);
      if (coding === 'treatment') return lv.slice(1).map((_, j) => (k === j + 1 ? 1 : 0));
      return lv.slice(0, -1).map((_, j) => (k === j ? 1 : k === lv.length - 1 ? -1 : 0));
    });
  });
  const cols: number[][] = [rows.map(() => 1)];
  factors.forEach((fct, f) => {
    const lv = levels[fct];
    const idx: number[] = [];
    const m = lv.length - 1;
    for (let j = 0; j < m; j++) {
      idx.push(cols.length);
      cols.push(rows.map((_, i) => codes[f][i][j]));
      names.push(coding === 'treatment' ? `${fct}: ${lv[j + 1]} vs ${lv[0]}` : `${fct}[${lv[j]}]`);
    }
    terms.push({ name: fct, factors: [fct], cols: idx });
  });
  if (interaction && factors.length === 2) {
    const [a, b] = factors;
    const idx: number[] = [];
    for (let i = 0; i < levels[a].length - 1; i++)
      for (let j = 0; j < levels[b].length - 1; j++) {
        idx.push(cols.length);
        cols.push(rows.map((_, r) => codes[0][r][i] * codes[1][r][j]));
        names.push(
          coding === 'treatment'
            ? `${a}: ${levels[a][i + 1]} x ${b}: ${levels[b][j + 1]}`
            : `${a}[${levels[a][i]}] x ${b}[${levels[b][j]}]`,
        );
      }
    terms.push({ name: `${a} x ${b}`, factors: [a, b], cols: idx });
  }
  const X = rows.map((_, i) => cols.map((c) => c[i]));
  return { X, names, terms };
}

/** Mixed-model results per cell of `by`: coefficients, Type III F tests and variance components. */
export class MixedModelResult extends Result {
  constructor(
    readonly coefficients: Row[],
    readonly anova: Row[],
    readonly variance: Row[],
    readonly options: Readonly<MixedOptions & { random: string; by: string[] }>,
    readonly fits: Map<string, RandomInterceptFit>,
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
    /** the rows fitted (kept so that unblind() can refit with the real labels) */
    readonly input: readonly Row[] | null = null,
  ) {
    super();
  }
  tables(): Record<string, readonly object[]> {
    return { mixed_coefficients: this.coefficients, mixed_anova: this.anova, mixed_variance: this.variance };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.coefficients as Record<string, unknown>[]);
  }
  /** The model as a formula: value ~ a + b + (1 | animal), with * for an interaction. */
  formula(): string {
    const o = this.options;
    return `${o.value} ~ ${o.fixed.join(o.interaction ? ' * ' : ' + ')} + (1 | ${o.random})`;
  }
  toHTML(): string {
    const cap = `Mixed model ${this.formula()}, REML, Satterthwaite df`;
    return (
      tableHtml(this.anova, { caption: cap + ' (Type III F tests)' }) +
      tableHtml(this.coefficients, { caption: 'Coefficients (treatment coding, first level as reference)' }) +
      tableHtml(this.variance, { caption: 'Variance components' })
    );
  }
  toString(): string {
    const by = this.options.by;
    const vc = [...by, 'animal_variance', 'residual_variance', 'icc', 'n_obs', 'n_animals', 'status'];
    return (
      `MixedModelResult: ${this.formula()}\n` +
      tableText(this.anova, { columns: [...by, 'term', 'F', 'num_df', 'den_df', 'p', 'status'] }) +
      '\n' +
      tableText(this.variance, { columns: vc })
    );
  }
}

/**
 * Random-intercept mixed model per cell of `by`: `value ~ fixed + (1 | random)`, REML, t and
 * Type III F tests with Satterthwaite df. Rows whose value is not a finite number, or that lack a
 * factor or the random grouping, are counted in the variance table (n_excluded), not used.
 * A cell that cannot be fitted is a row with status 'not computed' and the reason.
 * @example mixedModel(rows, { value: 'amplitude_uV', fixed: ['group', 'epoch'], interaction: true })
 */
export function mixedModel(
  input: RowInput,
  options: MixedOptions,
  history?: readonly Step[],
  sources?: readonly Source[],
): MixedModelResult {
  const rows = rowsOf(input);
  const src = input as { history?: readonly Step[]; sources?: readonly Source[] };
  history = history ?? (Array.isArray(src.history) ? src.history : []);
  sources = sources ?? (Array.isArray(src.sources) ? src.sources : []);
  checkKeys('mixedModel options', options, ['value', 'fixed', 'random', 'interaction', 'by', 'levels']);
  if (rows.length === 0) throw new AnalysisError('mixed model needs at least one row');
  const cols = [...new Set(rows.flatMap((r) => Object.keys(r)))];
  const need = (name: string, c: unknown) => {
    if (typeof c !== 'string' || !cols.includes(c)) {
      const hint = typeof c === 'string' ? didYouMean(c, cols) : '';
      throw new OptionError(
        `invalid ${name}: ${shown(c)} is not a column of the rows${hint}; ` + `columns are ${cols.join(', ')}`,
      );
    }
    return c;
  };
  const value = need('value', options.value);
  if (!Array.isArray(options.fixed) || options.fixed.length === 0) {
    throw new OptionError(`invalid fixed: ${shown(options.fixed)}; must be a list of one or more factor columns`);
  }
  const fixed = options.fixed.map((f) => need('fixed', f));
  const random = need('random', options.random ?? mixedDefaults.randomKeys.find((k) => cols.includes(k)) ?? 'animal');
  const by = (options.by ?? mixedDefaults.by.filter((k) => cols.includes(k))).map((k) => need('by', k));
  const interaction = options.interaction ?? mixedDefaults.interaction;
  if (interaction && fixed.length !== 2) {
    throw new OptionError(`invalid interaction: true needs exactly two fixed factors (got ${fixed.length})`);
  }
  const coefficients: Row[] = [],
    anova: Row[] = [],
    variance: Row[] = [];
  const fits = new Map<string, RandomInterceptFit>();
  const cells = new Map<string, Row[]>();
  for (const r of rows) {
    const id = JSON.stringify(by.map((k) => r[k] ?? null));
    (cells.get(id) ?? cells.set(id, []).get(id)!).push(r);
  }
  const present = (v: ConditionValue | undefined) => v !== null && v !== undefined;
  for (const f of fixed) {
    const given = options.levels?.[f];
    if (given === undefined) continue;
    if (!Array.isArray(given))
      throw new OptionError(`invalid levels.${f}: ${shown(given)}; must be a list of levels of ${f}`);
    const inRows = [...new Set(rows.map((r) => r[f]))].filter(present);
    for (const v of given)
      if (!inRows.includes(v)) {
        const hint = didYouMean(String(v), inRows.map(String));
        throw new OptionError(
          `invalid levels.${f}: ${shown(v)} is not a level of ${f} in the rows${hint}; levels are ` +
            `${sortLevels(inRows).map(shown).join(', ')}`,
        );
      }
  }
  // the levels of every fit together, in the order used (for the history and the methods text)
  const used: Record<string, ConditionValue[]> = Object.fromEntries(fixed.map((f) => [f, []]));
  // cells of `by` in sorted order (not the rows' order)
  const cellOrder = [...cells.keys()].sort((a, b) => {
    const x = JSON.parse(a) as ConditionValue[],
      y = JSON.parse(b) as ConditionValue[];
    for (let i = 0; i < x.length; i++) {
      const c = compareLevels(x[i], y[i]);
      if (c) return c;
    }
    return 0;
  });
  for (const id of cellOrder) {
    const all = cells.get(id)!;
    const key: Row = {};
    by.forEach((k, i) => (key[k] = JSON.parse(id)[i]));
    const use = all.filter(
      (r) =>
        typeof r[value] === 'number' &&
        Number.isFinite(r[value] as number) &&
        present(r[random]) &&
        fixed.every((f) => present(r[f])),
    );
    // a fixed order of the observations (animal, factors, value), so the sums do not depend on the rows' order
    const sortKey = (r: Row) => [r[random], ...fixed.map((f) => r[f]), r[value]] as ConditionValue[];
    use.sort((a, b) => {
      const x = sortKey(a),
        y = sortKey(b);
      for (let i = 0; i < x.length; i++) {
        const c = compareLevels(x[i], y[i]);
        if (c) return c;
      }
      return 0;
    });
    const excluded = all.length - use.length;
    const levels: Record<string, ConditionValue[]> = {};
    for (const f of fixed) levels[f] = levelOrder([...new Set(use.map((r) => r[f]))], options.levels?.[f]);
    for (const f of fixed) used[f] = levelOrder([...used[f], ...levels[f]], options.levels?.[f]);
    const animals = new Set(use.map((r) => String(r[random])));
    const counts = { n_obs: use.length, n_animals: animals.size, n_excluded: excluded };
    const fail = (reason: string) =>
      variance.push({
        ...key,
        animal_variance: null,
        residual_variance: null,
        icc: null,
        ...counts,
        reml_deviance: null,
        boundary: null,
        status: 'not computed',
        reason,
      });
    const small = fixed.find((f) => levels[f].length < 2);
    if (small) {
      fail(`factor ${small} has ${levels[small].length} level in these rows; needs 2 or more`);
      continue;
    }
    if (animals.size < 2) {
      fail(`needs at least 2 animals (got ${animals.size})`);
      continue;
    }
    if (use.length === animals.size) {
      fail(
        'one observation per animal: animal and residual variance cannot be told apart (compareGroups tests ' +
          'one value per animal directly)',
      );
      continue;
    }
    try {
      const y = use.map((r) => r[value] as number),
        g = use.map((r) => String(r[random]));
      const tr = design(use, fixed, levels, interaction, 'treatment');
      const fit = fitRandomIntercept(y, tr.X, g);
      fits.set(id, fit);
      tr.names.forEach((name, j) => {
        const l = tr.names.map((_, k) => (k === j ? 1 : 0));
        const se = Math.sqrt(fit.covariance[j][j]);
        const df = satterthwaiteDf(fit, l);
        const b = fit.beta[j],
          t = b / se;
        if (!(df > 0) || !Number.isFinite(df) || !(se > 0)) {
          coefficients.push({
            ...key,
            term: name,
            estimate: b,
            se: se > 0 ? se : null,
            df: null,
            t: null,
            p: null,
            ci95_low: null,
            ci95_high: null,
            status: 'not computed',
            reason: NO_DF,
          });
          return;
        }
        const q = tQuantile(0.975, df);
        coefficients.push({
          ...key,
          term: name,
          estimate: b,
          se,
          df,
          t,
          p: tTwoSided(t, df),
          ci95_low: b - q * se,
          ci95_high: b + q * se,
          status: 'ok',
          reason: null,
        });
      });
      const sum = design(use, fixed, levels, interaction, 'sum');
      const fs = fitRandomIntercept(y, sum.X, g);
      for (const term of sum.terms) {
        const L = term.cols.map((c) => sum.names.map((_, k) => (k === c ? 1 : 0)));
        const r = contrastF(fs, L);
        const ok = Number.isFinite(r.F) && r.denDf > 0 && Number.isFinite(r.denDf);
        const row = ok
          ? { term: term.name, F: r.F, num_df: r.numDf, den_df: r.denDf, p: r.p, status: 'ok', reason: null }
          : { term: term.name, F: null, num_df: r.numDf, den_df: null, p: null, status: 'not computed', reason: NO_DF };
        anova.push({ ...key, ...row });
      }
      const tot = fit.sigmaU2 + fit.sigmaE2;
      variance.push({
        ...key,
        animal_variance: fit.sigmaU2,
        residual_variance: fit.sigmaE2,
        icc: tot > 0 ? fit.sigmaU2 / tot : null,
        ...counts,
        reml_deviance: fit.remlDeviance,
        boundary: fit.boundary,
        status: 'ok',
        reason: fit.boundary ? 'animal variance estimated at 0 (on the boundary of the parameter space)' : null,
      });
    } catch (e) {
      if (!(e instanceof AnalysisError)) throw e;
      fail(e.message);
    }
  }
  const o = { value, fixed, random, interaction, by, levels: options.levels };
  const step: Step = {
    verb: 'mixedModel',
    options: {
      value,
      fixed,
      random,
      interaction,
      by,
      levels: used,
      levelOrder: options.levels ? 'given, then sorted' : 'sorted',
      estimation: 'REML',
      tests: 'Type III (sum-to-zero coding)',
      df: 'Satterthwaite (expected information; Fai-Cornelius for multi-df terms)',
    },
    version: VERSION,
  };
  return new MixedModelResult(coefficients, anova, variance, o, fits, [...history, step], sources, rows);
}

type MixedSpec = {
  value: string;
  fixed: string[];
  random: string;
  interaction: boolean;
  levels?: Record<string, ConditionValue[]>;
  levelOrder?: string;
};
/** The reference levels in words: "; coefficients are differences from the reference level (group: control)". */
function referenceClause(o: MixedSpec): string {
  const lv = o.levels;
  if (!lv) return '';
  const parts = o.fixed.filter((f) => lv[f]?.length).map((f) => `${f}: ${lv[f].map(String).join(', ')}`);
  return parts.length
    ? ` The levels of each factor were ${o.levelOrder === 'sorted' ? 'sorted' : 'ordered as given, the others sorted after them'}` +
        ` (${parts.join('; ')}); the coefficients are differences from the first (reference) level.`
    : '';
}
function mixedSentence(o: MixedSpec, each: string): string {
  const fx = o.fixed.join(o.interaction ? ' and their interaction' : ', ').replace(/,([^,]*)$/, ' and$1');
  return (
    `${o.value.replace(/_/g, ' ')} was analysed with a linear mixed-effects model with ${fx} as fixed effects ` +
    `and a random intercept per ${o.random} (observations of one ${o.random} are not independent; Lazic 2010; ` +
    `Aarts et al. 2014), fitted by restricted maximum likelihood (Patterson & Thompson 1971)${each}; fixed ` +
    "effects were tested with Type III F tests and t tests using Satterthwaite's approximation to the denominator " +
    'degrees of freedom (Satterthwaite 1946; Fai & Cornelius 1996 for terms with several degrees of freedom).' +
    referenceClause(o)
  );
}

/** References of the mixed-model methods text. */
export const MIXED_REFERENCES = [
  'Patterson HD, Thompson R (1971) Recovery of inter-block information when block sizes are unequal. ' +
    'Biometrika 58:545-554.',
  'Satterthwaite FE (1946) An approximate distribution of estimates of variance components. Biometrics Bull 2:110-114.',
  'Fai AH-T, Cornelius PL (1996) Approximate F-tests of multiple degree of freedom hypotheses in generalized least ' +
    'squares analyses of unbalanced split-plot experiments. J Stat Comput Simul 54:363-378.',
];

/** The methods sentence for a mixed model. */
export function mixedMethods(result: MixedModelResult): string {
  const o = result.options;
  const ok = result.variance.filter((v) => v.status === 'ok').length;
  const n = result.variance.length;
  const each = o.by.length ? ` separately for each ${o.by.join(' and ')} (${ok} of ${n} fitted)` : '';
  const step = [...result.history].reverse().find((h) => h.verb === 'mixedModel');
  const levels = step?.options.levels as Record<string, ConditionValue[]> | undefined;
  const levelOrder = step?.options.levelOrder as string | undefined;
  return mixedSentence({ ...o, interaction: !!o.interaction, levels, levelOrder }, each);
}

/** The methods sentence of a 'mixedModel' history step; other steps: ''. */
export function mixedStepMethods(step: Step): string {
  if (step.verb !== 'mixedModel') return '';
  const o = step.options as MixedSpec & { by: string[] };
  return mixedSentence(o, o.by.length ? ` separately for each ${o.by.join(' and ')}` : '');
}
