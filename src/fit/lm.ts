/**
 * Nonlinear least squares by the Levenberg-Marquardt method with Marquardt's
 * diagonal scaling and Nielsen's damping update, box bounds (by projection), fixed
 * parameters and weights. The result carries what a report needs: convergence flag
 * and reason, iterations, residual sum of squares, standard errors from
 * s^2 (J^T W J)^-1, t-based 95% confidence intervals, and a status listing every
 * reason not to trust the numbers.
 *
 * References: K. Levenberg, Q. Appl. Math. 2 (1944) 164-168; D. W. Marquardt,
 * J. SIAM 11 (1963) 431-441; H. B. Nielsen, "Damping parameter in Marquardt's
 * method", IMM-REP-1999-05, DTU; D. M. Bates, D. G. Watts, Nonlinear Regression
 * Analysis and Its Applications, Wiley 1988 (standard errors, profile intervals).
 * Checked against the NIST StRD nonlinear regression problems (tests/fit/lm.test.ts).
 */
import { invertSpd } from '../signal/linalg';
import { tQuantile, fSurvival } from './dist';
import { OptionError } from '../errors';

/**
 * n zeros in an array of doubles. An array made by `new Array(n).fill(0)` holds small integers
 * and changes its element kind at the first fractional value stored in it; in optimized code
 * that change made V8 deoptimize fitOnce at every call (about a third of the time of a small fit).
 */
const zeros = (n: number): number[] => Array.from(new Float64Array(n));

export type ModelFn = (x: number, p: readonly number[]) => number;

export interface FitOptions {
  model: ModelFn;
  x: readonly number[];
  y: readonly number[];
  /** starting values */
  p0: readonly number[];
  /** parameter names (for messages and tables) */
  names?: readonly string[];
  /** lower and upper bounds (use -Infinity / Infinity for none) */
  lower?: readonly number[];
  upper?: readonly number[];
  /** true for each parameter held at its starting value */
  fixed?: readonly boolean[];
  /** weights (1 / variance), default 1 */
  weights?: readonly number[];
  /** analytic Jacobian row: d model / d p at x (default: central differences) */
  gradient?: (x: number, p: readonly number[]) => number[];
  maxIterations?: number;
}

export interface FitResult {
  params: number[];
  names: string[];
  standardErrors: number[];
  /** t-based 95% confidence intervals */
  ci: [number, number][];
  covariance: number[][] | null;
  residualSS: number;
  /** residual standard deviation s = sqrt(RSS / df) */
  sigma: number;
  df: number;
  n: number;
  iterations: number;
  converged: boolean;
  reason: string;
  /** 'ok' or the reasons the fit cannot be trusted */
  status: string[];
  fixed: boolean[];
  /** the model and data, for profiles and plots */
  model: ModelFn;
  x: number[];
  y: number[];
  weights: number[];
  lower: number[];
  upper: number[];
}

/**
 * The Jacobian of the free parameters at p into J (n x m, row i at i * m; every entry
 * written): the analytic gradient when given, else central differences.
 */
function jacobianInto(o: FitOptions, p: number[], free: readonly number[], J: Float64Array): void {
  const x = o.x,
    n = x.length,
    m = free.length;
  const grad = o.gradient;
  if (grad) {
    for (let i = 0; i < n; i++) {
      const g = grad(x[i], p);
      const o0 = i * m;
      for (let j = 0; j < m; j++) J[o0 + j] = g[free[j]];
    }
    return;
  }
  const model = o.model;
  for (let j = 0; j < m; j++) {
    const k = free[j];
    const h = 1e-6 * Math.max(Math.abs(p[k]), 1e-6);
    const pp = p.slice(),
      pm = p.slice();
    pp[k] += h;
    pm[k] -= h;
    for (let i = 0; i < n; i++) J[i * m + j] = (model(x[i], pp) - model(x[i], pm)) / (2 * h);
  }
}

/**
 * Solve the m x m system held in the augmented m x (m + 1) matrix M (right-hand side in
 * column m) in place, into x: the same operations in the same order as solve() of
 * ../signal/linalg (partial pivoting), without its copies. Returns false when singular.
 */
function solveInPlace(M: Float64Array[], m: number, x: Float64Array): boolean {
  for (let c = 0; c < m; c++) {
    let piv = c;
    for (let r = c + 1; r < m; r++) if (Math.abs(M[r][c]) > Math.abs(M[piv][c])) piv = r;
    if (!(Math.abs(M[piv][c]) > 1e-300)) return false;
    const row = M[c];
    M[c] = M[piv];
    M[piv] = row;
    const Mc = M[c];
    for (let r = c + 1; r < m; r++) {
      const Mr = M[r];
      const f = Mr[c] / Mc[c];
      if (f === 0) continue;
      for (let k = c; k <= m; k++) Mr[k] -= f * Mc[k];
    }
  }
  for (let r = m - 1; r >= 0; r--) {
    const Mr = M[r];
    let s = Mr[m];
    for (let k = r + 1; k < m; k++) s -= Mr[k] * x[k];
    x[r] = s / Mr[r];
  }
  return true;
}

/** The weighted residual sum of squares at p; the residuals y - model(x, p) are left in res. */
function rssOf(o: FitOptions, p: readonly number[], w: readonly number[], res: Float64Array): number {
  const x = o.x,
    y = o.y,
    model = o.model,
    n = x.length;
  let s = 0;
  for (let i = 0; i < n; i++) {
    const r = y[i] - model(x[i], p);
    res[i] = r;
    s += w[i] * r * r;
  }
  return s;
}

/** Student t quantiles by (probability, degrees of freedom): a bisection of 60-odd incomplete beta values each. */
const tQuantiles = new Map<string, number>();
function tQuantileOnce(p: number, df: number): number {
  const key = `${p} ${df}`;
  let t = tQuantiles.get(key);
  if (t === undefined) {
    t = tQuantile(p, df);
    if (tQuantiles.size < 4096) tQuantiles.set(key, t);
  }
  return t;
}

/**
 * Fit a model by weighted nonlinear least squares. When the run ends in a degenerate
 * place (singular information matrix, or not converged), the fit is restarted from
 * starting values with each free parameter scaled by 0.1, 0.5, 2 and 10 in turn, and
 * the best non-degenerate result is kept (the restarts are counted in `iterations`).
 */
export function fitCurve(o: FitOptions): FitResult {
  const first = fitOnce(o);
  if (first.covariance && first.converged) return first;
  let best = first;
  let its = first.iterations;
  const free = o.p0.map((_, k) => k).filter((k) => !o.fixed?.[k]);
  for (const k of free) {
    for (const f of [0.1, 0.5, 2, 10]) {
      const p0 = [...o.p0];
      p0[k] = o.p0[k] === 0 ? f - 1 : o.p0[k] * f;
      const r = fitOnce({ ...o, p0 });
      its += r.iterations;
      const good = (q: FitResult) => (q.covariance && q.converged ? 1 : 0);
      if (good(r) > good(best) || (good(r) === good(best) && r.residualSS < best.residualSS)) best = r;
    }
  }
  return { ...best, iterations: its, status: best.status };
}

/** J^T W J of an n x m Jacobian (flat, row-major; summed over the points in order, for each entry). */
function information(J: Float64Array, w: readonly number[], n: number, m: number): number[][] {
  const A: number[][] = [];
  for (let a = 0; a < m; a++) A.push(zeros(m));
  for (let i = 0; i < n; i++) {
    const wi = w[i],
      o0 = i * m;
    for (let a = 0; a < m; a++) {
      const Aa = A[a],
        Ja = J[o0 + a];
      for (let b = 0; b < m; b++) Aa[b] += wi * Ja * J[o0 + b];
    }
  }
  return A;
}

/*
 * The steps of one iteration, each a small function of its own: V8 optimizes a small
 * function after a few calls, a large one after many (the fits of a script are often
 * few and short).
 */

/**
 * J^T W J (lower triangle summed over the points in order, then mirrored) into A and
 * J^T W r into g; returns max |g| (-Infinity for no parameter, NaN as soon as one is NaN).
 */
function normalEquations(
  J: Float64Array,
  res: Float64Array,
  w: readonly number[],
  n: number,
  m: number,
  A: Float64Array[],
  g: Float64Array,
): number {
  for (let a = 0; a < m; a++) {
    A[a].fill(0);
    g[a] = 0;
  }
  for (let i = 0; i < n; i++) {
    const r = res[i],
      wi = w[i],
      o0 = i * m;
    for (let a = 0; a < m; a++) {
      const Ja = J[o0 + a];
      g[a] += wi * Ja * r;
      const Aa = A[a];
      for (let b = 0; b <= a; b++) Aa[b] += wi * Ja * J[o0 + b];
    }
  }
  for (let a = 0; a < m; a++) for (let b = a + 1; b < m; b++) A[a][b] = A[b][a];
  let gmax = -Infinity;
  for (let a = 0; a < m; a++) {
    const v = Math.abs(g[a]);
    if (v !== v) return NaN;
    if (v > gmax) gmax = v;
  }
  return gmax;
}

/** The damped system [A + mu diag(dmax) | g] into M (the last solve may have swapped rows: each is filled whole). */
function dampedSystem(
  A: Float64Array[],
  g: Float64Array,
  dmax: Float64Array,
  mu: number,
  m: number,
  M: Float64Array[],
): void {
  for (let a = 0; a < m; a++) {
    const Ma = M[a],
      Aa = A[a];
    for (let b = 0; b < m; b++) Ma[b] = a === b ? Aa[b] + mu * Math.max(dmax[a], 1e-300) : Aa[b];
    Ma[m] = g[a];
  }
}

/**
 * p + delta (on the free parameters), projected on the bounds: a fresh array (the model may
 * keep the one it saw); null when the step is below working precision (p + delta is p).
 */
function trialPoint(
  p: number[],
  delta: Float64Array,
  free: readonly number[],
  lower: readonly number[],
  upper: readonly number[],
): number[] | null {
  const m = free.length;
  let moves = false;
  for (let a = 0; a < m; a++) {
    const k = free[a];
    if (p[k] + delta[a] !== p[k]) {
      moves = true;
      break;
    }
  }
  if (!moves) return null;
  const pt = p.slice();
  for (let a = 0; a < m; a++) pt[free[a]] += delta[a];
  for (let k = 0; k < pt.length; k++) pt[k] = Math.min(upper[k], Math.max(lower[k], pt[k]));
  return pt;
}

/** The reduction of the sum of squares that the linearised model predicts for the step delta. */
function predictedReduction(delta: Float64Array, dmax: Float64Array, g: Float64Array, mu: number, m: number): number {
  let pred = 0;
  for (let a = 0; a < m; a++) pred += delta[a] * (mu * Math.max(dmax[a], 1e-300) * delta[a] + g[a]);
  return pred;
}

/** Whether every free parameter moved by at most tol relative (|pt - p| <= tol (|p| + tol)). */
function stepBelow(pt: readonly number[], p: readonly number[], free: readonly number[], tol: number): boolean {
  for (let a = 0; a < free.length; a++) {
    const k = free[a];
    if (!(Math.abs(pt[k] - p[k]) <= tol * (Math.abs(p[k]) + tol))) return false;
  }
  return true;
}

function fitOnce(o: FitOptions): FitResult {
  const n = o.x.length;
  const np = o.p0.length;
  if (o.y.length !== n) throw new OptionError(`x has ${n} values and y ${o.y.length}; must be equal`);
  const names = [...(o.names ?? o.p0.map((_, i) => `p${i}`))];
  const lower = [...(o.lower ?? new Array(np).fill(-Infinity))];
  const upper = [...(o.upper ?? new Array(np).fill(Infinity))];
  const fixed = [...(o.fixed ?? new Array(np).fill(false))];
  const w = [...(o.weights ?? new Array(n).fill(1))];
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(o.x[i]) && o.x[i] !== -Infinity)
      throw new OptionError(`x[${i}] is ${o.x[i]}; must be a number`);
    if (!Number.isFinite(o.y[i])) throw new OptionError(`y[${i}] is ${o.y[i]}; must be finite`);
    if (!(w[i] >= 0)) throw new OptionError(`weights[${i}] is ${w[i]}; must be >= 0`);
  }
  // parameter vectors are arrays of doubles throughout (one element kind for the model's
  // argument: optimized model code is not thrown away when a vector of whole numbers appears)
  let p = zeros(np);
  for (let k = 0; k < np; k++) p[k] = Math.min(upper[k], Math.max(lower[k], o.p0[k]));
  const free: number[] = [];
  for (let k = 0; k < np; k++) if (!fixed[k]) free.push(k);
  const m = free.length;
  const status: string[] = [];
  const maxIt = o.maxIterations ?? 2000;
  // the residuals at p (res) and at the trial point (resTrial): the model is evaluated once per point
  let res = new Float64Array(n);
  let resTrial = new Float64Array(n);
  let rss = rssOf(o, p, w, res);
  let mu = -1;
  // Marquardt scaling with the largest diagonal seen so far (as MINPACK's lmder does)
  const dmax = new Float64Array(m);
  let nu = 2;
  let it = 0;
  let converged = false;
  let reason = 'maximum iterations reached';
  // work arrays allocated once per fit (filled afresh each iteration: the same numbers as fresh ones)
  const J = new Float64Array(n * m);
  if (!Number.isFinite(rss)) {
    reason = 'the model is not finite at the starting values';
  } else {
    const A: Float64Array[] = [];
    const M: Float64Array[] = [];
    for (let a = 0; a < m; a++) {
      A.push(new Float64Array(m));
      M.push(new Float64Array(m + 1));
    }
    const g = new Float64Array(m);
    const delta = new Float64Array(m);
    for (it = 1; it <= maxIt; it++) {
      jacobianInto(o, p, free, J);
      const gmax = normalEquations(J, res, w, n, m, A, g);
      if (gmax < 1e-300) {
        converged = true;
        reason = 'gradient is zero';
        break;
      }
      for (let a = 0; a < m; a++) dmax[a] = Math.max(dmax[a], A[a][a]);
      if (mu < 0) mu = 1e-3;
      let accepted = false;
      for (let tries = 0; tries < 60; tries++) {
        dampedSystem(A, g, dmax, mu, m, M);
        if (!solveInPlace(M, m, delta)) {
          mu *= nu;
          nu *= 2;
          if (!(mu < Infinity)) break; // every later try would repeat this one
          continue;
        }
        // a step below working precision (p + delta is p): a larger damping only shortens it, so
        // no later try can move; stop here instead of trying ever larger dampings (up to 60)
        const pt = trialPoint(p, delta, free, lower, upper);
        if (!pt) break;
        const rt = rssOf(o, pt, w, resTrial);
        const pred = predictedReduction(delta, dmax, g, mu, m);
        const rho = pred > 0 ? (rss - rt) / pred : -1;
        if (Number.isFinite(rt) && rt <= rss && rho > 0) {
          const stepSmall = stepBelow(pt, p, free, 1e-12);
          const rssSmall = rss - rt <= 1e-15 * rss;
          p = pt;
          const r = res;
          res = resTrial;
          resTrial = r;
          const prev = rss;
          rss = rt;
          mu *= Math.max(1 / 3, 1 - (2 * rho - 1) ** 3);
          nu = 2;
          accepted = true;
          if (stepSmall) {
            converged = true;
            reason = 'relative step below 1e-12';
          } else if (rssSmall && prev - rt >= 0 && it > 3) {
            converged = true;
            reason = 'relative reduction of the residual sum of squares below 1e-15';
          }
          break;
        }
        mu *= nu;
        nu *= 2;
        if (!(mu < Infinity)) break; // every later try would repeat this one
      }
      if (converged) break;
      if (!accepted) {
        // no downhill step at any damping: a (local) minimum to working precision
        converged = true;
        reason = 'no further decrease possible (minimum to working precision)';
        break;
      }
    }
  }
  if (it > maxIt) it = maxIt;
  const df = n - m;
  if (m > 0) jacobianInto(o, p, free, J);
  const inv = m > 0 ? invertSpd(information(J, w, n, m)) : [];
  const s2 = df > 0 ? rss / df : NaN;
  const se = zeros(np);
  let cov: number[][] | null = null;
  if (inv) {
    cov = [];
    for (let k = 0; k < np; k++) cov.push(zeros(np));
    for (let a = 0; a < m; a++) {
      const ca = cov[free[a]];
      for (let b = 0; b < m; b++) ca[free[b]] = s2 * inv[a][b];
      se[free[a]] = Math.sqrt(s2 * inv[a][a]);
    }
  } else {
    free.forEach((k) => (se[k] = NaN));
    status.push('the parameters are not identifiable from these data (singular information matrix)');
  }
  const t = df > 0 ? tQuantileOnce(0.975, df) : NaN;
  const ci = p.map((v, k) => (fixed[k] ? [v, v] : [v - t * se[k], v + t * se[k]]) as [number, number]);
  if (!converged) status.push(`did not converge (${reason})`);
  if (n < m + 2) status.push(`too few points: ${n} for ${m} free parameters (need at least ${m + 2})`);
  free.forEach((k) => {
    if (
      (Number.isFinite(lower[k]) && Math.abs(p[k] - lower[k]) <= 1e-9 * (Math.abs(lower[k]) + 1)) ||
      (Number.isFinite(upper[k]) && Math.abs(p[k] - upper[k]) <= 1e-9 * (Math.abs(upper[k]) + 1))
    ) {
      status.push(`parameter ${names[k]} is at a bound (${p[k]})`);
    }
  });
  return {
    params: p,
    names,
    standardErrors: se,
    ci,
    covariance: cov,
    residualSS: rss,
    sigma: Math.sqrt(s2),
    df,
    n,
    iterations: it,
    converged,
    reason,
    status: status.length ? status : ['ok'],
    fixed,
    model: o.model,
    x: [...o.x],
    y: [...o.y],
    weights: w,
    lower,
    upper,
  };
}

/** Whether a fit's status is 'ok'. */
export const trusted = (f: FitResult): boolean => f.status.length === 1 && f.status[0] === 'ok';

/**
 * Profile-likelihood 95% confidence interval for parameter k: the values theta for
 * which refitting the other parameters with p_k = theta gives
 * (RSS(theta) - RSS) / s^2 <= F(0.95; 1, df) (Bates & Watts 1988, ch. 6).
 * Returns [low, high]; a side that never crosses within 50 standard errors (or a
 * bound) is reported as -Infinity / Infinity.
 */
export function profileCI(fit: FitResult, k: number, level = 0.95): [number, number] {
  const { df } = fit;
  if (!(df > 0)) return [NaN, NaN];
  const t = tQuantile(1 - (1 - level) / 2, df);
  const crit = t * t; // F(1, df) quantile = t^2
  const s2 = fit.residualSS / df;
  const base = fit.params;
  const se =
    Number.isFinite(fit.standardErrors[k]) && fit.standardErrors[k] > 0
      ? fit.standardErrors[k]
      : Math.abs(base[k]) * 0.1 + 1e-3;
  const fixedK = fit.fixed.map((f, i) => f || i === k);
  let start = [...base];
  const stat = (theta: number): number => {
    const p0 = [...start];
    p0[k] = theta;
    const r = fitCurve({
      model: fit.model,
      x: fit.x,
      y: fit.y,
      weights: fit.weights,
      p0,
      fixed: fixedK,
      lower: fit.lower,
      upper: fit.upper,
      names: fit.names,
    });
    start = r.params;
    return (r.residualSS - fit.residualSS) / s2;
  };
  const side = (dir: 1 | -1): number => {
    start = [...base];
    let lo = base[k];
    let step = se;
    let hi = NaN;
    for (let i = 0; i < 60; i++) {
      const th = base[k] + dir * step;
      if ((dir > 0 && th > fit.upper[k]) || (dir < 0 && th < fit.lower[k])) return dir * Infinity;
      if (stat(th) > crit) {
        hi = th;
        break;
      }
      lo = th;
      step *= 1.5;
      if (step > 50 * se) return dir * Infinity;
    }
    if (Number.isNaN(hi)) return dir * Infinity;
    for (let i = 0; i < 50; i++) {
      const mid = (lo + hi) / 2;
      if (stat(mid) > crit) hi = mid;
      else lo = mid;
      if (Math.abs(hi - lo) < 1e-7 * se) break;
    }
    return (lo + hi) / 2;
  };
  return [side(-1), side(1)];
}

/**
 * Extra-sum-of-squares F test of a reduced (constrained) fit against a full fit.
 * F = ((RSS_r - RSS_f) / (df_r - df_f)) / (RSS_f / df_f).
 */
export function extraSumOfSquaresF(
  rssReduced: number,
  dfReduced: number,
  rssFull: number,
  dfFull: number,
): { F: number; df1: number; df2: number; p: number } {
  const df1 = dfReduced - dfFull;
  const F = (rssReduced - rssFull) / df1 / (rssFull / dfFull);
  return { F, df1, df2: dfFull, p: fSurvival(F, df1, dfFull) };
}
