/**
 * Statistics across animals and groups, with the preparation (animal) as the unit:
 * sweeps and electrodes of one animal are not independent replicates (Lazic 2010;
 * Aarts et al. 2014), so values are first averaged within each animal.
 *
 * Tests (each checked against SciPy 1.17 in tests/analysis/groups.test.ts):
 * - Welch's unequal-variance t test (scipy.stats.ttest_ind(equal_var=False)); Welch 1947.
 * - Mann-Whitney U, two-sided, as scipy.stats.mannwhitneyu(method='auto'): the exact null
 *   distribution when either sample has at most 8 values and there are no ties, otherwise the
 *   normal approximation with tie correction and continuity correction; Mann & Whitney 1947.
 * - One-way ANOVA (scipy.stats.f_oneway); repeated-measures one-way ANOVA (subjects x conditions,
 *   the univariate F with Greenhouse-Geisser epsilon; Greenhouse & Geisser 1959).
 * - Paired t and Wilcoxon signed-rank: pairedCompare in analysis/stats.ts (reused).
 * - Multiplicity: Holm 1979 step-down; Benjamini & Hochberg 1995 step-up
 *   (scipy.stats.false_discovery_control(method='bh')).
 * The linear mixed-effects model is in analysis/mixed.ts.
 * References: S. E. Lazic, BMC Neurosci. 11 (2010) 5; E. Aarts, M. Verhage, J. V. Veenvliet,
 * C. V. Dolan, S. van der Sluis, Nat. Neurosci. 17 (2014) 491-496; B. L. Welch, Biometrika 34
 * (1947) 28-35; H. B. Mann, D. R. Whitney, Ann. Math. Stat. 18 (1947) 50-60; S. Greenhouse,
 * S. Geisser, Psychometrika 24 (1959) 95-112; S. Holm, Scand. J. Stat. 6 (1979) 65-70;
 * Y. Benjamini, Y. Hochberg, J. R. Stat. Soc. B 57 (1995) 289-300.
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { OptionError, AnalysisError } from '../errors';
import { checkKeys, didYouMean } from '../validate';
import { betaInc, fSurvival, gammaQ, tQuantile } from '../fit/dist';
import { summarize, pairedCompare } from './stats';
import { Result } from '../notebook/result';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';
import type { Flag } from '../report/pipeline';

import type { Row } from '../registry/types';

/** Status of a test: 'ok', or 'not computed' with a reason (the numbers are then null). */
export type TestStatus = 'ok' | 'not computed';

/** Two-sided p of Student's t with df degrees of freedom, from the incomplete beta (no 1 - cdf cancellation). */
export function tTwoSided(t: number, df: number): number {
  if (!Number.isFinite(t)) return Number.isNaN(t) ? NaN : 0;
  return betaInc(df / (df + t * t), df / 2, 0.5);
}

/** Upper tail of the standard normal, P(Z > z), accurate far in the tail (erfc via Q(1/2, z^2/2)). */
export function normSf(z: number): number {
  if (Number.isNaN(z)) return NaN;
  if (z < 0) return 1 - normSf(-z);
  return 0.5 * gammaQ(0.5, (z * z) / 2);
}

const mean = (v: readonly number[]) => v.reduce((a, b) => a + b, 0) / v.length;
const variance = (v: readonly number[]) => {
  const m = mean(v);
  return v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1);
};

interface Status {
  status: TestStatus;
  reason: string | null;
}
const notComputed = (reason: string) => ({ status: 'not computed' as const, reason });

export interface WelchResult extends Status {
  n1: number;
  n2: number;
  mean1: number | null;
  mean2: number | null;
  /** mean1 - mean2 */
  difference: number | null;
  t: number | null;
  df: number | null;
  p: number | null;
  ci95: [number, number] | null;
}

/**
 * Welch's t test of mean(a) - mean(b) without assuming equal variances; Welch-Satterthwaite df.
 * O(n). Not computed (status and reason, null numbers) with fewer than 2 values per sample or zero variance in both.
 * @example welchTTest([1, 2, 3, 4], [2, 4, 6, 8, 10]).t // -2.2703 (scipy.stats.ttest_ind(equal_var=False))
 */
export function welchTTest(a: readonly number[], b: readonly number[]): WelchResult {
  const x = a.filter(Number.isFinite),
    y = b.filter(Number.isFinite);
  const base = { n1: x.length, n2: y.length, mean1: x.length ? mean(x) : null, mean2: y.length ? mean(y) : null };
  const empty = { difference: null, t: null, df: null, p: null, ci95: null };
  if (x.length < 2 || y.length < 2) {
    return { ...base, ...empty, ...notComputed(`needs at least 2 values per group (n = ${x.length}, ${y.length})`) };
  }
  const v1 = variance(x) / x.length,
    v2 = variance(y) / y.length;
  if (!(v1 + v2 > 0)) return { ...base, ...empty, ...notComputed('both groups have zero variance') };
  const d = mean(x) - mean(y),
    se = Math.sqrt(v1 + v2);
  const df = (v1 + v2) ** 2 / (v1 ** 2 / (x.length - 1) + v2 ** 2 / (y.length - 1));
  const t = d / se,
    q = tQuantile(0.975, df);
  const ci95: [number, number] = [d - q * se, d + q * se];
  return { ...base, difference: d, t, df, p: tTwoSided(t, df), ci95, status: 'ok', reason: null };
}

/** Average ranks (1-based) of v, and the sizes of tied groups. */
export function rankAverage(v: readonly number[]): { ranks: number[]; ties: number[] } {
  const order = v.map((x, i) => [x, i] as [number, number]).sort((p, q) => p[0] - q[0]);
  const ranks = new Array<number>(v.length);
  const ties: number[] = [];
  for (let i = 0; i < order.length;) {
    let j = i;
    while (j + 1 < order.length && order[j + 1][0] === order[i][0]) j++;
    for (let k = i; k <= j; k++) ranks[order[k][1]] = (i + j) / 2 + 1;
    ties.push(j - i + 1);
    i = j + 1;
  }
  return { ranks, ties };
}

/**
 * P(U >= u) under the null for sample sizes m, n (no ties): the largest observation belongs
 * to the first sample with probability m / (m + n) and then beats all n of the second.
 * O(m n min(m, n) max(m, n)) with probabilities (no large counts).
 */
export function mannWhitneyExactSf(u: number, m: number, n: number): number {
  if (m > n) [m, n] = [n, m];
  // p[j] = distribution of U for sizes (j, k) at the current k
  let p: Float64Array[] = Array.from({ length: m + 1 }, () => Float64Array.of(1));
  for (let k = 1; k <= n; k++) {
    const next: Float64Array[] = [Float64Array.of(1)];
    for (let j = 1; j <= m; j++) {
      const out = new Float64Array(j * k + 1);
      const a = next[j - 1],
        b = p[j];
      const wa = j / (j + k),
        wb = k / (j + k);
      for (let w = 0; w < a.length; w++) out[w + k] += wa * a[w];
      for (let w = 0; w < b.length; w++) out[w] += wb * b[w];
      next.push(out);
    }
    p = next;
  }
  const dist = p[m];
  let s = 0;
  for (let w = Math.max(0, Math.ceil(u - 1e-9)); w < dist.length; w++) s += dist[w];
  return s;
}

export interface MannWhitneyResult extends Status {
  n1: number;
  n2: number;
  /** U of the first sample (SciPy's statistic) */
  U: number | null;
  p: number | null;
  method: 'exact' | 'normal approximation' | null;
}

/**
 * Two-sided Mann-Whitney U test, as scipy.stats.mannwhitneyu(x, y) with method 'auto':
 * exact when either sample has at most 8 values and there are no ties; otherwise
 * z = (max(U1, U2) - n1 n2 / 2 - 0.5) / s with s^2 = n1 n2 / 12 ((n + 1) - sum(t^3 - t) / (n (n - 1))).
 * @example mannWhitneyU([1, 2, 3], [4, 5, 6, 7]).p // 0.05714 (= 2 / 35, exact)
 */
export function mannWhitneyU(a: readonly number[], b: readonly number[]): MannWhitneyResult {
  const x = a.filter(Number.isFinite),
    y = b.filter(Number.isFinite);
  const n1 = x.length,
    n2 = y.length;
  if (n1 < 1 || n2 < 1 || n1 + n2 < 3) {
    return { n1, n2, U: null, p: null, method: null, ...notComputed(`needs values in both groups (n = ${n1}, ${n2})`) };
  }
  const { ranks, ties } = rankAverage([...x, ...y]);
  let R1 = 0;
  for (let i = 0; i < n1; i++) R1 += ranks[i];
  const U1 = R1 - (n1 * (n1 + 1)) / 2,
    U2 = n1 * n2 - U1,
    U = Math.max(U1, U2);
  const hasTies = ties.some((t) => t > 1);
  if (!(n1 > 8 && n2 > 8) && !hasTies) {
    const p = Math.min(1, 2 * mannWhitneyExactSf(U, n1, n2));
    return { n1, n2, U: U1, p, method: 'exact', status: 'ok', reason: null };
  }
  const N = n1 + n2;
  const tie = ties.reduce((s, t) => s + t ** 3 - t, 0);
  const s = Math.sqrt(((n1 * n2) / 12) * (N + 1 - tie / (N * (N - 1))));
  if (!(s > 0)) return { n1, n2, U: U1, p: null, method: null, ...notComputed('all values are tied') };
  const z = (U - (n1 * n2) / 2 - 0.5) / s;
  return { n1, n2, U: U1, p: Math.min(1, 2 * normSf(z)), method: 'normal approximation', status: 'ok', reason: null };
}

export interface AnovaResult extends Status {
  F: number | null;
  df1: number | null;
  df2: number | null;
  p: number | null;
  ssBetween: number | null;
  ssWithin: number | null;
  /** groups (one-way) or subjects (repeated measures) used */
  n: number[];
}

/**
 * One-way ANOVA across groups (as scipy.stats.f_oneway). O(total n).
 * @example oneWayAnova([[1, 2, 3], [2, 3, 4], [5, 6, 7]]).F // 13 (hand computation: SSB 26, SSW 6)
 */
export function oneWayAnova(groups: readonly (readonly number[])[]): AnovaResult {
  const g = groups.map((v) => v.filter(Number.isFinite));
  const n = g.map((v) => v.length);
  const none = { F: null, df1: null, df2: null, p: null, ssBetween: null, ssWithin: null, n };
  if (g.length < 2) return { ...none, ...notComputed(`needs at least 2 groups (got ${g.length})`) };
  if (n.some((k) => k < 1)) return { ...none, ...notComputed(`every group needs a value (n = ${n.join(', ')})`) };
  const N = n.reduce((a, b) => a + b, 0);
  if (N - g.length < 1) return { ...none, ...notComputed(`needs more values than groups (n = ${n.join(', ')})`) };
  const grand = mean(g.flat());
  let ssb = 0,
    ssw = 0;
  for (const v of g) {
    const m = mean(v);
    ssb += v.length * (m - grand) ** 2;
    for (const x of v) ssw += (x - m) ** 2;
  }
  const df1 = g.length - 1,
    df2 = N - g.length;
  if (!(ssw > 0)) return { ...none, ssBetween: ssb, ssWithin: ssw, ...notComputed('no variation within groups') };
  const F = ssb / df1 / (ssw / df2);
  return { F, df1, df2, p: fSurvival(F, df1, df2), ssBetween: ssb, ssWithin: ssw, n, status: 'ok', reason: null };
}

export interface RmAnovaResult extends AnovaResult {
  /** Greenhouse-Geisser epsilon and the p with both df multiplied by it */
  epsilonGG: number | null;
  pGG: number | null;
  ssSubjects: number | null;
}

/**
 * Repeated-measures one-way ANOVA: `y[subject][condition]`, complete cases only.
 * F = MS(conditions) / MS(conditions x subjects), df (k - 1, (k - 1)(s - 1)); Greenhouse-Geisser
 * epsilon = tr(C S C)^2 / ((k - 1) tr((C S C)^2)), S the covariance of the conditions, C = I - J / k.
 * With two conditions F equals the paired t squared.
 * @example repeatedMeasuresAnova([[1, 2], [2, 4], [3, 5]]).F // 49 (paired differences 1, 2, 2: t = 7)
 */
export function repeatedMeasuresAnova(y: readonly (readonly number[])[]): RmAnovaResult {
  const s = y.length,
    k = s ? y[0].length : 0;
  const none = {
    F: null,
    df1: null,
    df2: null,
    p: null,
    ssBetween: null,
    ssWithin: null,
    ssSubjects: null,
    epsilonGG: null,
    pGG: null,
    n: [s],
  };
  if (y.some((r) => r.length !== k || r.some((v) => !Number.isFinite(v)))) {
    return { ...none, ...notComputed('every subject needs a finite value in every condition') };
  }
  if (k < 2) return { ...none, ...notComputed(`needs at least 2 conditions (got ${k})`) };
  if (s < 2) return { ...none, ...notComputed(`needs at least 2 subjects (got ${s})`) };
  const grand = mean(y.flat());
  const cm = Array.from({ length: k }, (_, j) => mean(y.map((r) => r[j])));
  const sm = y.map((r) => mean(r));
  let sst = 0;
  for (const r of y) for (const v of r) sst += (v - grand) ** 2;
  const ssc = s * cm.reduce((a, m) => a + (m - grand) ** 2, 0);
  const sss = k * sm.reduce((a, m) => a + (m - grand) ** 2, 0);
  const sse = sst - ssc - sss;
  const df1 = k - 1,
    df2 = (k - 1) * (s - 1);
  if (!(sse > 1e-14 * sst)) {
    const why = notComputed('no condition-by-subject variation');
    return { ...none, ssBetween: ssc, ssWithin: sse, ssSubjects: sss, ...why };
  }
  const F = ssc / df1 / (sse / df2);
  // Greenhouse-Geisser epsilon from the double-centred covariance matrix
  const cov = (a: number, b: number) => y.reduce((acc, r) => acc + (r[a] - cm[a]) * (r[b] - cm[b]), 0) / (s - 1);
  const S = Array.from({ length: k }, (_, a) => Array.from({ length: k }, (_, b) => cov(a, b)));
  const rowM = S.map((r) => mean(r)),
    all = mean(rowM);
  const D = S.map((r, a) => r.map((v, b) => v - rowM[a] - rowM[b] + all));
  let tr = 0,
    tr2 = 0;
  for (let a = 0; a < k; a++) {
    tr += D[a][a];
    for (let b = 0; b < k; b++) tr2 += D[a][b] * D[b][a];
  }
  const eps = tr2 > 0 ? Math.min(1, (tr * tr) / ((k - 1) * tr2)) : 1;
  return {
    F,
    df1,
    df2,
    p: fSurvival(F, df1, df2),
    ssBetween: ssc,
    ssWithin: sse,
    ssSubjects: sss,
    n: [s],
    epsilonGG: eps,
    pGG: fSurvival(F, eps * df1, eps * df2),
    status: 'ok',
    reason: null,
  };
}

/** [p, index] pairs of the finite entries. */
function finiteIndexed(p: readonly (number | null)[]): [number, number][] {
  const out: [number, number][] = [];
  p.forEach((v, i) => {
    if (typeof v === 'number' && Number.isFinite(v)) out.push([v, i]);
  });
  return out;
}

/**
 * Holm's step-down adjusted p values (family-wise error). Non-finite entries stay null and do not count.
 * @example holm([0.01, 0.04, 0.03]) // [0.03, 0.06, 0.06]
 */
export function holm(p: readonly (number | null)[]): (number | null)[] {
  const idx = finiteIndexed(p);
  idx.sort((a, b) => a[0] - b[0]);
  const m = idx.length;
  const out: (number | null)[] = p.map(() => null);
  let run = 0;
  idx.forEach(([v, i], r) => {
    run = Math.max(run, Math.min(1, (m - r) * v));
    out[i] = run;
  });
  return out;
}

/**
 * Benjamini-Hochberg step-up adjusted p values (false discovery rate), as
 * scipy.stats.false_discovery_control(p, method='bh'). Non-finite entries stay null and do not count.
 * @example benjaminiHochberg([0.01, 0.04, 0.03]) // [0.03, 0.04, 0.04]
 */
export function benjaminiHochberg(p: readonly (number | null)[]): (number | null)[] {
  const idx = finiteIndexed(p);
  idx.sort((a, b) => a[0] - b[0]);
  const m = idx.length;
  const out: (number | null)[] = p.map(() => null);
  let run = 1;
  for (let r = m - 1; r >= 0; r--) {
    run = Math.min(run, (m * idx[r][0]) / (r + 1));
    out[idx[r][1]] = Math.min(1, run);
  }
  return out;
}

/** Options of the group analyses; every field names a column of the rows. */
export interface GroupOptions {
  /** the measure (a numeric column, e.g. 'amplitude_uV' or 'velocity_m_s') */
  value: string;
  /** between-animal factor (default 'group'; without such a column all animals form one group 'all') */
  group?: string;
  /** the unit of replication (default 'animal' when the rows have it, else 'preparation') */
  animal?: string;
  /** within-animal factor, e.g. time point or drug (default: none) */
  condition?: string;
  /** separate analyses for each combination of these columns (default: ['class'] when the rows have it) */
  by?: string[];
  /** unit of the value, for labels (default: from the column name after its last '_', else '') */
  unit?: string;
  /**
   * The order of the groups or conditions, keyed by their column (e.g. `{ group: ['control', 'drug'] }`): the
   * given levels first, in that order, then any others by first appearance. Without it, levels are ordered by
   * their first appearance in the rows. The order sets the comparison labels ("control vs drug"), the sign of the
   * Welch difference (first minus second) and of the paired difference (second condition minus first); the
   * tests table says which order was used (`order`).
   */
  levels?: Record<string, ConditionValue[]>;
}

export const groupDefaults = { group: 'group', animalKeys: ['animal', 'preparation'], by: ['class'] };

/** Column-name unit suffixes (as the component table writes them), longest first. */
const UNIT_SUFFIXES = ['uV_ms', 'mV_ms', 'V_s', 'm_s', 'uV', 'mV', 'V', 'ms', 'mm', 'mA', 'uA', 'uM', 'nM', 'mM', 'Hz'];

/** Group options with every default filled in (a comparison's `options`). */
export interface ResolvedGroupOptions {
  value: string;
  group: string;
  animal: string;
  condition: string | null;
  by: string[];
  unit: string;
  /** the given level orders (empty when none was given) */
  levels: Record<string, ConditionValue[]>;
}

function resolve(rows: readonly Row[], o: GroupOptions): ResolvedGroupOptions {
  checkKeys('group options', o, ['value', 'group', 'animal', 'condition', 'by', 'unit', 'levels']);
  const cols = [...new Set(rows.flatMap((r) => Object.keys(r)))];
  const need = (name: string, col: unknown) => {
    if (typeof col !== 'string' || !cols.includes(col)) {
      const hint = typeof col === 'string' ? didYouMean(col, cols) : '';
      throw new OptionError(
        `invalid ${name}: ${JSON.stringify(col)} is not a column of the rows${hint}; ` +
          `columns are ${cols.join(', ')}`,
      );
    }
    return col;
  };
  if (rows.length === 0) throw new AnalysisError('group statistics need at least one row');
  const value = need('value', o.value);
  // without a group column (and none asked for) all animals form one group: within-animal designs
  const noGroup = o.group === undefined && !cols.includes(groupDefaults.group);
  const group = noGroup ? '' : need('group', o.group ?? groupDefaults.group);
  const animal = need('animal', o.animal ?? groupDefaults.animalKeys.find((k) => cols.includes(k)) ?? 'animal');
  const condition = o.condition === undefined ? null : need('condition', o.condition);
  const by = (o.by ?? groupDefaults.by.filter((k) => cols.includes(k))).map((k) => need('by', k));
  const known = UNIT_SUFFIXES.find((u) => value.endsWith('_' + u));
  const unit = o.unit ?? (known ? known.replace('_', '/').replace('uV/ms', 'uV ms').replace('mV/ms', 'mV ms') : '');
  const levels = givenLevels(rows, o.levels, [group, condition ?? ''].filter(Boolean));
  return { value, group, animal, condition, by, unit, levels };
}

const shown = (v: unknown) => JSON.stringify(v);

/** Check `levels`: keyed by the group or condition column, each a list of distinct values found in the rows. */
function givenLevels(rows: readonly Row[], given: unknown, factors: string[]): Record<string, ConditionValue[]> {
  if (given === undefined) return {};
  if (given === null || typeof given !== 'object' || Array.isArray(given))
    throw new OptionError(`invalid levels: ${shown(given)}; must be an object such as { group: ['control'] }`);
  const out: Record<string, ConditionValue[]> = {};
  for (const [f, list] of Object.entries(given as Record<string, unknown>)) {
    if (!factors.includes(f)) {
      const what = factors.length ? `the group or condition column (${factors.join(', ')})` : 'no factor';
      throw new OptionError(`invalid levels key: ${shown(f)} is not ${what}${didYouMean(f, factors)}`);
    }
    if (!Array.isArray(list) || list.length === 0)
      throw new OptionError(`invalid levels.${f}: ${shown(list)}; must be a non-empty list of levels of ${f}`);
    const inRows = [...new Set(rows.map((r) => r[f]))].filter((v) => v !== null && v !== undefined);
    const seen = new Set<unknown>();
    for (const v of list) {
      if (seen.has(v)) throw new OptionError(`invalid levels.${f}: ${shown(v)} is given twice`);
      seen.add(v);
      if (!inRows.includes(v as ConditionValue)) {
        const hint = didYouMean(String(v), inRows.map(String));
        throw new OptionError(
          `invalid levels.${f}: ${shown(v)} is not a level of ${f} in the rows${hint}; levels are ` +
            inRows.map(shown).join(', '),
        );
      }
    }
    out[f] = [...(list as ConditionValue[])];
  }
  return out;
}

/** Levels in the order used: the given ones first, then the others by first appearance. */
function orderLevels(seen: ConditionValue[], given: readonly ConditionValue[] | undefined): ConditionValue[] {
  const first = uniq(seen);
  if (!given) return first;
  const key = (v: ConditionValue) => JSON.stringify(v);
  const named = new Set(given.map(key));
  return [...given.filter((v) => first.some((x) => key(x) === key(v))), ...first.filter((v) => !named.has(key(v)))];
}

/** One point per animal: the mean of its values in each cell (by, group, condition). */
export interface AnimalPoint {
  key: Row;
  group: ConditionValue;
  condition: ConditionValue;
  animal: ConditionValue;
  value: number;
  n: number;
}

/** Average the rows within each animal and cell; rows without a finite value are counted, not used. */
export function animalMeans(
  input: RowInput,
  options: GroupOptions,
): {
  points: AnimalPoint[];
  excluded: number;
  options: ResolvedGroupOptions;
} {
  const rows = rowsOf(input);
  const o = resolve(rows, options);
  type Cell = {
    key: Row;
    group: ConditionValue;
    condition: ConditionValue;
    animal: ConditionValue;
    sum: number;
    n: number;
  };
  const cells = new Map<string, Cell>();
  let excluded = 0;
  for (const r of rows) {
    const v = r[o.value];
    const grp = o.group ? r[o.group] : 'all';
    const animal = r[o.animal];
    const missing = animal === null || animal === undefined || grp === undefined || grp === null;
    if (typeof v !== 'number' || !Number.isFinite(v) || missing) {
      excluded++;
      continue;
    }
    const key: Row = {};
    for (const k of o.by) key[k] = r[k] ?? null;
    const cond = o.condition ? (r[o.condition] ?? null) : null;
    const id = JSON.stringify([o.by.map((k) => key[k]), grp, cond, animal]);
    let c = cells.get(id);
    if (!c) cells.set(id, (c = { key, group: grp, condition: cond, animal, sum: 0, n: 0 }));
    c.sum += v;
    c.n++;
  }
  const points = [...cells.values()].map((c) => ({
    key: c.key,
    group: c.group,
    condition: c.condition,
    animal: c.animal,
    value: c.sum / c.n,
    n: c.n,
  }));
  return { points, excluded, options: o };
}

/** Rows, a table with `rows` (ComponentTable, results) or a DataFrame (`columns` and `values`). */
export type RowInput =
  readonly Row[] | { readonly rows: readonly object[] } | { columns: string[]; values: unknown[][] };

/** Plain rows from any RowInput. */
export function rowsOf(input: RowInput): Row[] {
  if (Array.isArray(input)) return input as Row[];
  const x = input as { rows?: unknown; columns?: unknown; values?: unknown };
  if (Array.isArray(x.rows)) return x.rows as Row[];
  if (Array.isArray(x.columns) && Array.isArray(x.values)) {
    const cols = x.columns as string[];
    const row = (v: unknown[]) => Object.fromEntries(cols.map((c, j) => [c, (v[j] ?? null) as ConditionValue]));
    return (x.values as unknown[][]).map(row);
  }
  throw new OptionError(
    'group statistics need rows: an array of objects, a table with .rows (e.g. a ComponentTable) ' + 'or a DataFrame',
  );
}

const uniq = <T>(xs: T[]) => {
  const seen = new Set<string>();
  return xs.filter((x) => {
    const k = JSON.stringify(x);
    return seen.has(k) ? false : (seen.add(k), true);
  });
};

/** Group summaries and tests with the animal as the unit; see compareGroups. */
export class GroupComparison extends Result {
  constructor(
    readonly summary: Row[],
    readonly tests: Row[],
    readonly points: AnimalPoint[],
    readonly options: Readonly<ResolvedGroupOptions>,
    readonly excluded: number,
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
    /** the rows compared (kept so that unblind() can recompute with the real labels) */
    readonly input: readonly Row[] | null = null,
  ) {
    super();
  }

  tables(): Record<string, readonly object[]> {
    const cond = this.options.condition;
    const pts = this.points.map((p) => ({
      ...p.key,
      group: p.group,
      ...(cond ? { condition: p.condition } : {}),
      animal: p.animal,
      [this.options.value]: p.value,
      values_averaged: p.n,
    }));
    return { group_summary: this.summary, group_tests: this.tests, group_points: pts };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.tests as Record<string, unknown>[]);
  }
  toHTML(): string {
    const u = this.options.unit ? ` (${this.options.unit})` : '';
    const cap = `${this.options.value}${u} per group, animals as the unit (mean, SD, SEM, 95% CI)`;
    return (
      tableHtml(this.summary, { caption: cap }) +
      tableHtml(this.tests, { caption: 'Tests (p adjusted over the table by Holm and by Benjamini-Hochberg)' })
    );
  }
  toString(): string {
    const o = this.options;
    const left = this.excluded ? `; ${this.excluded} rows without a value not used` : '';
    const sumCols = [
      ...o.by,
      ...(o.condition ? ['condition'] : []),
      'group',
      'n_animals',
      'mean',
      'sd',
      'ci95_low',
      'ci95_high',
      'status',
    ];
    const testCols = [...o.by, 'test', 'comparison', 'statistic', 'df', 'p', 'p_holm', 'p_bh', 'status'];
    return (
      `GroupComparison of ${o.value} (${this.points.length} animal means${left})\n` +
      tableText(this.summary, { columns: sumCols }) +
      '\n' +
      tableText(this.tests, { columns: testCols })
    );
  }
}

type TestFields = Partial<Row> & { status: TestStatus; reason: string | null };

/**
 * Compare groups of animals. Values are averaged within each animal first (the unit). Per cell of
 * `by` (and `condition`), per group: n animals, mean, SD, SEM, t-based 95% CI. Tests per cell of `by`:
 * between groups at each condition (two groups: Welch t and Mann-Whitney U; three or more: one-way ANOVA),
 * and, with `condition`, within each group across conditions (two: paired t on the animals with both;
 * three or more: repeated-measures ANOVA on the animals with all). p values are adjusted over all tests
 * of the table by Holm and by Benjamini-Hochberg. A test that cannot be computed is a row with a status
 * and reason.
 * @example compareGroups(rows, { value: 'amplitude_uV', group: 'group', animal: 'preparation', by: ['class'] })
 */
export function compareGroups(
  input: RowInput,
  options: GroupOptions,
  history?: readonly Step[],
  sources?: readonly Source[],
): GroupComparison {
  const inputRows = rowsOf(input);
  const { points, excluded, options: o } = animalMeans(inputRows, options);
  if (points.length === 0) {
    const seen = [...new Set(inputRows.map((r) => JSON.stringify(r[o.value] ?? null)))].slice(0, 3).join(', ');
    throw new AnalysisError(
      `group statistics of ${o.value}: none of the ${inputRows.length} rows has a finite number in ${o.value} ` +
        `and a ${o.animal}${o.group ? ` and a ${o.group}` : ''} (values such as ${seen}); choose a numeric column`,
    );
  }
  const src = input as { history?: readonly Step[]; sources?: readonly Source[] };
  history = history ?? (Array.isArray(src.history) ? src.history : []);
  sources = sources ?? (Array.isArray(src.sources) ? src.sources : []);
  const cellsBy = uniq(points.map((p) => p.key));
  // one order for every cell of `by`: given levels first, then first appearance in the rows (not per cell)
  const groupOrder = orderLevels(
    points.map((p) => p.group),
    o.group ? o.levels[o.group] : undefined,
  );
  const condOrder = orderLevels(
    points.map((p) => p.condition),
    o.condition ? o.levels[o.condition] : undefined,
  );
  const said = (f: string | null, what: string) =>
    `${what} ${f && o.levels[f] ? 'as given (levels)' : 'by first appearance in the data'}`;
  const order = [
    ...(o.group ? [said(o.group, 'groups')] : []),
    ...(o.condition ? [said(o.condition, 'conditions')] : []),
  ].join('; ');
  const summary: Row[] = [];
  const tests: Row[] = [];
  const blank: Row = { statistic: null, df: null, df2: null, p: null, estimate: null, ci95_low: null, ci95_high: null };
  const push = (base: Row, test: string, comparison: string, r: TestFields) => {
    tests.push({ ...base, test, comparison, ...blank, n: null, method: null, ...r, order: order || null });
  };
  const sizes = (vals: number[][]) => vals.map((v) => v.length).join(', ');
  for (const key of cellsBy) {
    const keyId = JSON.stringify(o.by.map((k) => key[k]));
    const inKey = points.filter((p) => JSON.stringify(o.by.map((k) => p.key[k])) === keyId);
    const present = (vs: ConditionValue[]) => (v: ConditionValue) => vs.some((x) => x === v);
    const groups = groupOrder.filter(present(inKey.map((p) => p.group)));
    const conds = condOrder.filter(present(inKey.map((p) => p.condition)));
    const at = (g: ConditionValue, c: ConditionValue) => inKey.filter((p) => p.group === g && p.condition === c);
    for (const c of conds) {
      for (const g of groups) {
        const here = at(g, c);
        const v = here.map((p) => p.value);
        if (!v.length) continue;
        const s = summarize(v);
        const ok = v.length >= 2;
        summary.push({
          ...key,
          ...(o.condition ? { condition: c } : {}),
          group: g,
          n_animals: v.length,
          n_values: here.reduce((a, p) => a + p.n, 0),
          mean: s.mean,
          sd: ok ? s.sd : null,
          sem: ok ? s.sem : null,
          ci95_low: ok ? s.ci95[0] : null,
          ci95_high: ok ? s.ci95[1] : null,
          unit: o.unit,
          status: ok ? 'ok' : 'not computed',
          reason: ok ? null : 'one animal: no SD or CI',
        });
      }
      const base: Row = { ...key, ...(o.condition ? { condition: c } : {}) };
      const vals = groups.map((g) => at(g, c).map((p) => p.value));
      if (groups.length < 2) {
        if (o.group) push(base, 'between groups', String(groups[0]), notComputed('only one group'));
        continue;
      }
      if (groups.length === 2) {
        const label = `${groups[0]} vs ${groups[1]}`;
        const w = welchTTest(vals[0], vals[1]);
        push(base, 'Welch t', label, {
          statistic: w.t,
          df: w.df,
          p: w.p,
          estimate: w.difference,
          ci95_low: w.ci95?.[0] ?? null,
          ci95_high: w.ci95?.[1] ?? null,
          n: `${w.n1}, ${w.n2}`,
          method: 'two-sided, unequal variances',
          status: w.status,
          reason: w.reason,
        });
        const m = mannWhitneyU(vals[0], vals[1]);
        push(base, 'Mann-Whitney U', label, {
          statistic: m.U,
          p: m.p,
          n: `${m.n1}, ${m.n2}`,
          method: m.method,
          status: m.status,
          reason: m.reason,
        });
      } else {
        const a = oneWayAnova(vals);
        const small = vals.some((v) => v.length < 2);
        push(
          base,
          'one-way ANOVA',
          groups.join(', '),
          small
            ? { n: sizes(vals), ...notComputed(`needs at least 2 animals per group (n = ${sizes(vals)})`) }
            : { statistic: a.F, df: a.df1, df2: a.df2, p: a.p, n: sizes(vals), status: a.status, reason: a.reason },
        );
      }
    }
    if (o.condition && conds.length >= 2) {
      for (const g of groups) {
        const mine = inKey.filter((p) => p.group === g);
        const find = (an: ConditionValue, c: ConditionValue) => mine.find((p) => p.animal === an && p.condition === c);
        const animals = uniq(mine.map((p) => p.animal));
        const complete = animals.filter((an) => conds.every((c) => find(an, c)));
        const y = complete.map((an) => conds.map((c) => find(an, c)!.value));
        const base: Row = { ...key, group: g };
        const dropped = animals.length - complete.length;
        const note = dropped ? `${dropped} animal${dropped === 1 ? '' : 's'} without every condition left out` : null;
        if (conds.length === 2) {
          const label = `${conds[1]} - ${conds[0]} within ${g}`;
          if (y.length < 2) {
            push(base, 'paired t', label, {
              n: y.length,
              ...notComputed(`needs at least 2 animals with both conditions (got ${y.length})`),
            });
            continue;
          }
          const pc = pairedCompare(
            y.map((r) => r[0]),
            y.map((r) => r[1]),
          );
          push(
            base,
            'paired t',
            label,
            Number.isFinite(pc.t)
              ? {
                  statistic: pc.t,
                  df: pc.df,
                  p: pc.pT,
                  estimate: pc.meanDifference,
                  ci95_low: pc.ci95[0],
                  ci95_high: pc.ci95[1],
                  n: y.length,
                  method: note,
                  status: 'ok',
                  reason: null,
                }
              : { n: y.length, ...notComputed('the paired differences have no variation') },
          );
        } else {
          const r = repeatedMeasuresAnova(y);
          const gg =
            r.status === 'ok'
              ? `Greenhouse-Geisser epsilon ${r.epsilonGG!.toPrecision(3)}, p ${r.pGG!.toPrecision(3)}`
              : '';
          push(base, 'repeated-measures ANOVA', `${conds.join(', ')} within ${g}`, {
            statistic: r.F,
            df: r.df1,
            df2: r.df2,
            p: r.p,
            n: y.length,
            method: [gg, note].filter(Boolean).join('; ') || null,
            status: r.status,
            reason: r.reason,
          });
        }
      }
    }
  }
  const ps = tests.map((t) => (t.status === 'ok' ? (t.p as number) : null));
  const h = holm(ps),
    bh = benjaminiHochberg(ps);
  tests.forEach((t, i) => {
    t.p_holm = h[i];
    t.p_bh = bh[i];
  });
  const step: Step = {
    verb: 'compareGroups',
    options: {
      ...o,
      unitOfReplication: o.animal,
      correction: 'Holm; Benjamini-Hochberg',
      excludedRows: excluded,
      tests:
        'Welch t, Mann-Whitney U (exact for n <= 8 without ties), one-way ANOVA, paired t, ' +
        'repeated-measures ANOVA',
    },
    version: VERSION,
  };
  return new GroupComparison(summary, tests, points, o, excluded, [...history, step], sources, inputRows);
}

/** The methods sentences for a group comparison (unit of replication, tests, correction). */
export function groupMethods(result: GroupComparison): string {
  const o = result.options;
  const ok = result.tests.filter((t) => t.status === 'ok');
  const tests = [...new Set(ok.map((t) => String(t.test)))];
  const mw = ok.some((t) => t.test === 'Mann-Whitney U');
  const per = [o.group, o.condition].filter(Boolean).join(' and ') || 'set';
  const parts = [
    `${o.value.replace(/_/g, ' ')} was averaged within each ${o.animal} (the unit of replication; sweeps and ` +
      'electrodes are not independent replicates, Lazic 2010; Aarts et al. 2014) and summarised per ' +
      `${per} as mean, SD, SEM and a t-based 95% confidence interval.`,
  ];
  if (tests.length) {
    const exact = mw
      ? ' (Mann-Whitney U exact for samples of at most 8 without ties, otherwise the normal ' +
        'approximation with tie and continuity correction)'
      : '';
    parts.push(
      `Tests: ${tests.join(', ')}${exact}; p values were adjusted over the ${ok.length} tests by Holm's ` +
        'step-down method (Holm 1979) and, for the false discovery rate, by Benjamini & Hochberg (1995).',
    );
  }
  const nc = result.tests.length - ok.length;
  if (nc) {
    parts.push(
      `${nc} test${nc === 1 ? ' was' : 's were'} not computed (fewer than two ${o.animal}s per group or ` +
        'no variation), as listed in the table.',
    );
  }
  return parts.join(' ');
}

/** References of the group-statistics and mixed-model methods text. */
export const GROUP_REFERENCES = [
  'Lazic SE (2010) The problem of pseudoreplication in neuroscientific studies: is it affecting your analysis? ' +
    'BMC Neurosci 11:5.',
  'Aarts E, Verhage M, Veenvliet JV, Dolan CV, van der Sluis S (2014) A solution to dependency: using multilevel ' +
    'analysis to accommodate nested data. Nat Neurosci 17:491-496.',
  'Welch BL (1947) The generalization of "Student\'s" problem when several different population variances are ' +
    'involved. Biometrika 34:28-35.',
  'Mann HB, Whitney DR (1947) On a test of whether one of two random variables is stochastically larger than the ' +
    'other. Ann Math Stat 18:50-60.',
  'Holm S (1979) A simple sequentially rejective multiple test procedure. Scand J Stat 6:65-70.',
  'Benjamini Y, Hochberg Y (1995) Controlling the false discovery rate: a practical and powerful approach to ' +
    'multiple testing. J R Stat Soc B 57:289-300.',
];

/** The methods sentence of a 'compareGroups' history step (the tests its design calls for); other steps: ''. */
export function groupStepMethods(step: Step): string {
  if (step.verb !== 'compareGroups') return '';
  const o = step.options as unknown as ResolvedGroupOptions;
  const per = [o.group, o.condition].filter(Boolean).join(' and ') || 'set';
  const between = o.group
    ? "between groups Welch's t test and the Mann-Whitney U test (exact for samples of at most " +
      '8 without ties, otherwise the normal approximation with tie and continuity correction), or one-way ANOVA for ' +
      'three or more groups'
    : '';
  const within = o.condition
    ? `within animals across ${o.condition} the paired t test, or repeated-measures ANOVA ` +
      'with the Greenhouse-Geisser epsilon for three or more levels'
    : '';
  const tests = [between, within].filter(Boolean).join('; ');
  return (
    `${o.value.replace(/_/g, ' ')} was averaged within each ${o.animal} (the unit of replication; sweeps and ` +
    'electrodes are not independent replicates, Lazic 2010; Aarts et al. 2014) and summarised per ' +
    `${per} as mean, SD, SEM and a t-based 95% confidence interval. Tests: ${tests}; p values were adjusted over ` +
    "all tests by Holm's step-down method (Holm 1979) and by Benjamini & Hochberg (1995)."
  );
}

/** Flags of group tests or mixed fits not computed (status other than ok, with the reason), as the pipeline makes them. */
export function groupFlags(analysis: 'groups' | 'mixed', rows: readonly Row[], by: readonly string[]): Flag[] {
  return rows
    .filter((r) => r.status !== 'ok')
    .map((r) => ({
      preparation: null,
      analysis,
      class: (r.class as string | undefined) ?? null,
      where:
        [r.test, r.comparison, ...by.filter((k) => k !== 'class').map((k) => `${k} ${r[k]}`)]
          .filter((v) => v !== undefined && v !== null)
          .join(', ') || null,
      severity: 'not measured' as const,
      status: String(r.status),
      reason: String(r.reason ?? r.status),
    }));
}
