/**
 * Small statistics used across analyses. Mean, SD and the t test statistic come from
 * simple-statistics where it has them; t quantiles from fit/dist.
 */
import * as ss from 'simple-statistics';
import { tQuantile, tCdf, normCdf } from '../fit/dist';
import { OptionError } from '../errors';

export interface Summary {
  /** finite values summarised */
  n: number;
  /** values left out because they were not finite numbers (NaN, Infinity): counted, never summarised */
  excluded: number;
  mean: number;
  sd: number;
  sem: number;
  ci95: [number, number];
}

/**
 * Mean, SD (n - 1), SEM and a t-based 95% CI of the mean of the finite values; values that are not finite numbers
 * are left out and counted in `excluded`.
 */
export function summarize(xs: readonly number[]): Summary {
  const v = xs.filter(Number.isFinite);
  const n = v.length;
  const excluded = xs.length - n;
  if (n === 0) return { n, excluded, mean: NaN, sd: NaN, sem: NaN, ci95: [NaN, NaN] };
  const mean = ss.mean(v);
  const sd = n > 1 ? ss.sampleStandardDeviation(v) : NaN;
  const sem = sd / Math.sqrt(n);
  const t = n > 1 ? tQuantile(0.975, n - 1) : NaN;
  return { n, excluded, mean, sd, sem, ci95: [mean - t * sem, mean + t * sem] };
}

export interface LinearFit {
  slope: number;
  intercept: number;
  seSlope: number;
  seIntercept: number;
  df: number;
  r2: number;
  residualSd: number;
  n: number;
}

/** Ordinary least-squares line y = intercept + slope x with standard errors. */
export function linearFit(x: readonly number[], y: readonly number[]): LinearFit {
  const n = x.length;
  const mx = ss.mean(x as number[]),
    my = ss.mean(y as number[]);
  let sxx = 0,
    sxy = 0,
    syy = 0;
  for (let i = 0; i < n; i++) {
    sxx += (x[i] - mx) ** 2;
    sxy += (x[i] - mx) * (y[i] - my);
    syy += (y[i] - my) ** 2;
  }
  const slope = sxy / sxx;
  const intercept = my - slope * mx;
  let rss = 0;
  for (let i = 0; i < n; i++) rss += (y[i] - intercept - slope * x[i]) ** 2;
  const df = n - 2;
  const s2 = df > 0 ? rss / df : NaN;
  return {
    slope,
    intercept,
    df,
    n,
    seSlope: Math.sqrt(s2 / sxx),
    seIntercept: Math.sqrt(s2 * (1 / n + (mx * mx) / sxx)),
    r2: syy > 0 ? 1 - rss / syy : 1,
    residualSd: Math.sqrt(s2),
  };
}

export interface PairedComparison {
  n: number;
  meanDifference: number;
  ci95: [number, number];
  t: number;
  df: number;
  pT: number;
  /** Wilcoxon signed-rank statistic W+ and two-sided p (exact for n <= 25 without ties, else normal approximation) */
  wilcoxonW: number;
  pWilcoxon: number;
  /** Cohen's d for paired samples (mean difference / SD of differences) */
  cohenDz: number;
}

/**
 * Paired comparison of after - before: paired t test and Wilcoxon signed-rank test,
 * with effect size d_z. References: Student (1908) Biometrika 6:1-25; F. Wilcoxon,
 * Biometrics Bulletin 1 (1945) 80-83; J. Cohen, Statistical Power Analysis, 2nd ed. 1988.
 */
export function pairedCompare(before: readonly number[], after: readonly number[]): PairedComparison {
  if (before.length !== after.length)
    throw new OptionError(
      `invalid pairs: ${before.length} before and ${after.length} after values; a paired comparison needs one ` +
        'after value per before value',
    );
  for (const [name, xs] of [
    ['before', before],
    ['after', after],
  ] as const) {
    const i = xs.findIndex((x) => typeof x !== 'number' || !Number.isFinite(x));
    if (i >= 0)
      throw new OptionError(
        `invalid ${name}[${i}]: ${String(xs[i])}; every value of a paired comparison must be a finite number ` +
          '(leave out the pair)',
      );
  }
  const d = after.map((a, i) => a - before[i]);
  const n = d.length;
  const s = summarize(d);
  const t = s.mean / s.sem;
  const df = n - 1;
  const pT = 2 * (1 - tCdf(Math.abs(t), df));
  // Wilcoxon signed rank (zeros dropped, average ranks for ties)
  const nz = d.filter((x) => x !== 0);
  const m = nz.length;
  const order = nz.map((x, i) => [Math.abs(x), i] as [number, number]).sort((p, q) => p[0] - q[0]);
  const ranks = new Array(m).fill(0);
  let ties = false;
  for (let i = 0; i < m;) {
    let j = i;
    while (j + 1 < m && order[j + 1][0] === order[i][0]) j++;
    if (j > i) ties = true;
    for (let k = i; k <= j; k++) ranks[order[k][1]] = (i + j) / 2 + 1;
    i = j + 1;
  }
  const W = nz.reduce((acc, x, i) => acc + (x > 0 ? ranks[i] : 0), 0);
  let pW: number;
  if (m <= 25 && !ties) {
    // exact distribution of W+ by counting subsets of ranks 1..m
    const max = (m * (m + 1)) / 2;
    let dist = new Float64Array(max + 1);
    dist[0] = 1;
    for (let r = 1; r <= m; r++) {
      const next = new Float64Array(max + 1);
      for (let w = 0; w <= max; w++)
        if (dist[w]) {
          next[w] += dist[w];
          if (w + r <= max) next[w + r] += dist[w];
        }
      dist = next;
    }
    const total = Math.pow(2, m);
    const lo = Math.min(W, max - W);
    let cum = 0;
    for (let w = 0; w <= lo; w++) cum += dist[w];
    pW = Math.min(1, (2 * cum) / total);
  } else {
    const mu = (m * (m + 1)) / 4;
    const sigma = Math.sqrt((m * (m + 1) * (2 * m + 1)) / 24);
    const z = (Math.abs(W - mu) - 0.5) / sigma;
    pW = 2 * (1 - normCdf(z));
  }
  return { n, meanDifference: s.mean, ci95: s.ci95, t, df, pT, wilcoxonW: W, pWilcoxon: pW, cohenDz: s.mean / s.sd };
}
