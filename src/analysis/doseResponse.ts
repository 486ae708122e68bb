/**
 * Blocker dose-response per fiber class, pooled over preparations properly.
 *
 * 1. Steady state: the mean of the last `lastN` sweeps of each concentration epoch
 *    (sweep order, or acquisition time when present).
 * 2. Normalised to the preparation's own pre-drug baseline (concentration 0, not washout);
 *    optional run-down correction: the control level is interpolated linearly in time
 *    between the baseline and the washout (`runDown: 'washout'`), or follows the
 *    run-down of time-matched vehicle controls (`runDown: 'vehicle'`: sweeps with
 *    epoch "vehicle", usually in control preparations; per class, the fraction of
 *    their own baseline against time since the baseline is fitted with a line through
 *    1 at time 0, and each drug preparation's baseline is scaled by it at the time of
 *    each steady state; linear run-down is an assumption, common practice, no source).
 *    Times come from the `acquiredS` condition.
 * 3. Per preparation, a Hill (four-parameter log-logistic) fit with the top fixed at 1
 *    (normalised), Hill slope in [0.2, 6] and the bottom free in [-0.2, 0.9] (or fixed).
 * 4. Across preparations: log10 IC50 is averaged over preparations with a t-based 95% CI
 *    (IC50 CI asymmetric), so animals, not sweeps, are the replicates; a pooled fit over
 *    all preparations' normalised points gives a profile-likelihood CI; optional
 *    bootstrap over preparations.
 * 5. Classes compared by the extra-sum-of-squares F test of a shared IC50.
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { Result } from '../report/result';
import { fitCurve, profileCI, extraSumOfSquaresF, trusted, type FitResult } from '../fit/lm';
import { logLogistic4 } from '../fit/models';
import { summarize } from './stats';
import { AnalysisError, OptionError } from '../errors';
import { Rng } from '../model/random';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';

export interface DoseResponseOptions {
  /** column measured (default: the amplitude column of the table) */
  measure?: string;
  /** sweeps at the end of each epoch averaged for the steady state (default 3) */
  lastN?: number;
  /** 'none' (default), 'washout' or 'vehicle' (time-matched vehicle controls, epoch "vehicle") */
  runDown?: 'none' | 'washout' | 'vehicle';
  /** fix the bottom asymptote (fraction of baseline), or null to fit it (default null) */
  fixBottom?: number | null;
  /** bootstrap resamples over preparations for the pooled IC50 (default 0: none) */
  bootstrap?: number;
  seed?: number;
  /** classes to analyse (default: all) */
  classes?: string[];
}
export const doseResponseDefaults = { lastN: 3, runDown: 'none' as const, fixBottom: null, bootstrap: 0, seed: 1 };

export interface DosePoint { preparation: string; class: string; concentration: number; response: number; baseline: number; normalized: number; n: number }

type Row = Record<string, ConditionValue>;

function steady(rows: Row[], lastN: number): { value: number; n: number; time: number } {
  const sorted = [...rows].sort((a, b) => ((a.acquiredS as number) ?? (a.sweep as number)) - ((b.acquiredS as number) ?? (b.sweep as number)));
  const tail = sorted.slice(-lastN);
  const v = tail.map((r) => r.__value as number);
  const t = tail.map((r) => ((r.acquiredS as number) ?? (r.sweep as number)));
  return { value: v.reduce((a, b) => a + b, 0) / v.length, n: v.length, time: t.reduce((a, b) => a + b, 0) / t.length };
}

/** Fit the Hill model to normalised points (x = concentration, y = fraction of baseline). */
export function fitHill(x: number[], y: number[], fixBottom: number | null): FitResult {
  const pos = x.filter((v) => v > 0);
  // start: ln IC50 where the response crosses half, else the geometric middle of the range
  let lne = (Math.log(Math.min(...pos)) + Math.log(Math.max(...pos))) / 2;
  const order = x.map((v, i) => [v, y[i]]).filter((p) => p[0] > 0).sort((a, b) => a[0] - b[0]);
  for (let i = 1; i < order.length; i++) {
    if (order[i - 1][1] >= 0.5 && order[i][1] < 0.5) { lne = (Math.log(order[i - 1][0]) + Math.log(order[i][0])) / 2; break; }
  }
  const bottom = fixBottom ?? Math.max(0, Math.min(...y));
  return fitCurve({
    model: logLogistic4, x, y, p0: [1, bottom, 1, lne], names: ['hill', 'bottom', 'top', 'lnIC50'],
    fixed: [false, fixBottom !== null, true, false], lower: [0.2, -0.2, -Infinity, -Infinity], upper: [6, 0.9, Infinity, Infinity],
  });
}

export class DoseResponseResult extends Result {
  constructor(
    readonly points: DosePoint[],
    readonly perPreparation: Row[],
    readonly summary: Row[],
    readonly comparisons: Row[],
    readonly fits: Map<string, FitResult>,
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
  ) {
    super();
  }
  tables(): Record<string, readonly object[]> {
    return { dose_response_summary: this.summary, dose_response_per_preparation: this.perPreparation, dose_response_points: this.points, dose_response_comparisons: this.comparisons };
  }

  frame(which: 'summary' | 'perPreparation' | 'points' | 'comparisons' = 'summary'): import('danfojs-node').DataFrame {
    return toFrame((which === 'points' ? this.points : this[which]) as unknown as Record<string, unknown>[]);
  }
  toHTML(): string {
    return tableHtml(this.summary, { caption: 'Dose-response per class (IC50 with 95% CI; preparations as replicates)' }) + tableHtml(this.comparisons, { caption: 'Same IC50 for two classes? (extra-sum-of-squares F test)' });
  }
  toString(): string {
    return 'DoseResponseResult\n' + tableText(this.summary, { columns: ['class', 'preparations', 'ic50', 'ic50_ci95_low', 'ic50_ci95_high', 'hill', 'pooled_ic50', 'status'] }) + '\n' + tableText(this.comparisons);
  }
}

/** Dose-response analysis of a component table's rows (or any rows with the same columns). */
export function doseResponse(rows: readonly Row[], units: string, options: DoseResponseOptions = {}, history: readonly Step[] = [], sources: readonly Source[] = []): DoseResponseResult {
  const lastN = options.lastN ?? doseResponseDefaults.lastN;
  if (!Number.isInteger(lastN) || lastN < 1) throw new OptionError(`invalid lastN: ${lastN}; must be an integer >= 1`);
  const runDown = options.runDown ?? doseResponseDefaults.runDown;
  if (runDown !== 'none' && runDown !== 'washout' && runDown !== 'vehicle') throw new OptionError(`invalid runDown: ${JSON.stringify(runDown)}; must be "none", "washout" or "vehicle"`);
  const fixBottom = options.fixBottom === undefined ? doseResponseDefaults.fixBottom : options.fixBottom;
  const measure = options.measure ?? `amplitude_${units}`;
  const use = rows.filter((r) => typeof r.concentration === 'number' && typeof r[measure] === 'number' && (!options.classes || options.classes.includes(r.class as string)));
  if (!use.length) throw new AnalysisError(`dose-response needs rows with a numeric "concentration" condition and the measure "${measure}"`);
  const concUnit = (use.find((r) => r.concentrationUnit)?.concentrationUnit as string) ?? '';
  const groups = new Map<string, Row[]>();
  for (const r of use) {
    const id = `${r.preparation ?? ''}|${r.class}`;
    const g = groups.get(id);
    const rr = { ...r, __value: r[measure] };
    if (g) g.push(rr); else groups.set(id, [rr]);
  }
  const points: DosePoint[] = [];
  const isVehicle = (r: Row) => r.epoch === 'vehicle';
  // run-down rate per class from the vehicle controls: fraction of baseline = 1 + k (t - tBaseline)
  const rate = new Map<string, { k: number; preparations: number; sweeps: number }>();
  if (runDown === 'vehicle') {
    const acc = new Map<string, { sxy: number; sxx: number; preps: Set<string>; n: number }>();
    for (const g of groups.values()) {
      const veh = g.filter(isVehicle);
      if (!veh.length) continue;
      const where = `preparation ${g[0].preparation}, class ${g[0].class}`;
      if (g.some((r) => typeof r.acquiredS !== 'number')) throw new AnalysisError(`${where}: runDown "vehicle" needs the condition "acquiredS" (time of each sweep, s) on every sweep`);
      const base = g.filter((r) => r.concentration === 0 && !isVehicle(r) && r.epoch !== 'washout');
      if (!base.length) throw new AnalysisError(`${where}: the vehicle control has no baseline sweeps (concentration 0 before the vehicle)`);
      const B = steady(base, lastN);
      if (!(Math.abs(B.value) > 0)) throw new AnalysisError(`${where}: the vehicle control's baseline response is zero`);
      const a = acc.get(String(g[0].class)) ?? { sxy: 0, sxx: 0, preps: new Set<string>(), n: 0 };
      for (const r of veh) {
        const dt = (r.acquiredS as number) - B.time;
        a.sxy += dt * ((r.__value as number) / B.value - 1);
        a.sxx += dt * dt;
        a.n++;
      }
      a.preps.add(String(g[0].preparation ?? ''));
      acc.set(String(g[0].class), a);
    }
    for (const [cls, a] of acc) if (a.sxx > 0) rate.set(cls, { k: a.sxy / a.sxx, preparations: a.preps.size, sweeps: a.n });
  }
  for (const g of groups.values()) {
    if (g.some(isVehicle)) continue; // a vehicle control gives no dose points
    const isWash = (r: Row) => r.epoch === 'washout';
    const base = g.filter((r) => r.concentration === 0 && !isWash(r));
    if (!base.length) throw new AnalysisError(`preparation ${g[0].preparation}, class ${g[0].class}: no pre-drug baseline sweeps (concentration 0)`);
    const B = steady(base, lastN);
    const wash = g.filter(isWash);
    const W = wash.length ? steady(wash, lastN) : null;
    if (runDown === 'washout' && !W) throw new AnalysisError(`preparation ${g[0].preparation}: runDown "washout" needs sweeps with epoch "washout"`);
    const vr = runDown === 'vehicle' ? rate.get(String(g[0].class)) : undefined;
    if (runDown === 'vehicle') {
      if (!vr) throw new AnalysisError(`class ${g[0].class}: runDown "vehicle" needs time-matched vehicle sweeps (epoch "vehicle", with acquiredS) of this class`);
      if (g.some((r) => typeof r.acquiredS !== 'number')) throw new AnalysisError(`preparation ${g[0].preparation}: runDown "vehicle" needs the condition "acquiredS" on every sweep`);
    }
    const concs = [...new Set(g.filter((r) => (r.concentration as number) > 0 && !isWash(r)).map((r) => r.concentration as number))].sort((a, b) => a - b);
    for (const c of concs) {
      const S = steady(g.filter((r) => r.concentration === c && !isWash(r)), lastN);
      let control = B.value;
      if (runDown === 'washout' && W && W.time !== B.time) control = B.value + ((W.value - B.value) * (S.time - B.time)) / (W.time - B.time);
      if (vr) control = B.value * (1 + vr.k * (S.time - B.time));
      if (!(Math.abs(control) > 0)) throw new AnalysisError(`preparation ${g[0].preparation}, class ${g[0].class}: baseline response is zero`);
      points.push({ preparation: String(g[0].preparation ?? ''), class: String(g[0].class), concentration: c, response: S.value, baseline: control, normalized: S.value / control, n: S.n });
    }
  }
  const classes = [...new Set(points.map((p) => p.class))];
  const perPreparation: Row[] = [];
  const summary: Row[] = [];
  const fits = new Map<string, FitResult>();
  const tested = (cls: string) => {
    const c = points.filter((p) => p.class === cls).map((p) => p.concentration);
    return [Math.min(...c), Math.max(...c)];
  };
  for (const cls of classes) {
    const [cmin, cmax] = tested(cls);
    const preps = [...new Set(points.filter((p) => p.class === cls).map((p) => p.preparation))];
    const logIc: number[] = [];
    const hills: number[] = [];
    for (const prep of preps) {
      const pp = points.filter((p) => p.class === cls && p.preparation === prep);
      const f = fitHill(pp.map((p) => p.concentration), pp.map((p) => p.normalized), fixBottom);
      const ic = Math.exp(f.params[3]);
      const st = [...f.status.filter((s) => s !== 'ok')];
      if (ic < cmin || ic > cmax) st.push(`IC50 outside the tested range ${cmin}-${cmax} ${concUnit}`);
      fits.set(`${cls}|${prep}`, f);
      perPreparation.push({ class: cls, preparation: prep, ic50: ic, hill: f.params[0], bottom: f.params[1], points: pp.length, concentrationUnit: concUnit, status: st.length ? st.join('; ') : 'ok' });
      if (Number.isFinite(ic)) { logIc.push(Math.log10(ic)); hills.push(f.params[0]); }
    }
    const s = summarize(logIc);
    const h = summarize(hills);
    const all = points.filter((p) => p.class === cls);
    const pooled = fitHill(all.map((p) => p.concentration), all.map((p) => p.normalized), fixBottom);
    fits.set(`${cls}|pooled`, pooled);
    const [plo, phi] = profileCI(pooled, 3);
    let boot: [number, number] | [null, null] = [null, null];
    if (options.bootstrap && options.bootstrap > 0 && preps.length > 1) {
      const rng = new Rng(options.seed ?? doseResponseDefaults.seed);
      const est: number[] = [];
      for (let b = 0; b < options.bootstrap; b++) {
        const pick = preps.map(() => preps[Math.floor(rng.uniform() * preps.length)]);
        const pts = pick.flatMap((pr) => all.filter((p) => p.preparation === pr));
        const f = fitHill(pts.map((p) => p.concentration), pts.map((p) => p.normalized), fixBottom);
        if (f.converged) est.push(f.params[3]);
      }
      est.sort((a, b) => a - b);
      boot = [Math.exp(est[Math.floor(0.025 * (est.length - 1))]), Math.exp(est[Math.ceil(0.975 * (est.length - 1))])];
    }
    const st: string[] = [];
    if (preps.length < 3) st.push(`only ${preps.length} preparation(s): the across-preparation CI is ${preps.length < 2 ? 'undefined' : 'very wide'}`);
    const ic50 = Math.pow(10, s.mean);
    if (ic50 < cmin || ic50 > cmax) st.push(`IC50 outside the tested range ${cmin}-${cmax} ${concUnit}`);
    if (!trusted(pooled)) st.push(...pooled.status.map((x) => `pooled fit: ${x}`));
    summary.push({
      class: cls, preparations: preps.length, concentrationUnit: concUnit,
      ic50, ic50_ci95_low: Math.pow(10, s.ci95[0]), ic50_ci95_high: Math.pow(10, s.ci95[1]),
      log10_ic50: s.mean, log10_ic50_sd: s.sd,
      hill: h.mean, hill_ci95_low: h.ci95[0], hill_ci95_high: h.ci95[1],
      pooled_ic50: Math.exp(pooled.params[3]), pooled_ic50_profile_low: Math.exp(plo), pooled_ic50_profile_high: Math.exp(phi),
      pooled_hill: pooled.params[0], pooled_bottom: pooled.params[1],
      bootstrap_ic50_low: boot[0], bootstrap_ic50_high: boot[1],
      ...(runDown === 'vehicle' ? { rundown_per_min: 60 * (rate.get(cls)?.k ?? NaN), rundown_controls: rate.get(cls)?.preparations ?? 0 } : {}),
      status: st.length ? st.join('; ') : 'ok',
    });
  }
  // pairwise comparison of IC50 between classes on the pooled normalised points
  const comparisons: Row[] = [];
  for (let i = 0; i < classes.length; i++) for (let j = i + 1; j < classes.length; j++) {
    const A = points.filter((p) => p.class === classes[i]);
    const B = points.filter((p) => p.class === classes[j]);
    const fa = fits.get(`${classes[i]}|pooled`)!, fb = fits.get(`${classes[j]}|pooled`)!;
    const all = [...A, ...B];
    const isB = all.map((_, k) => k >= A.length);
    const joint = fitCurveShared(all.map((p) => p.concentration), all.map((p) => p.normalized), isB, fixBottom, [fa, fb]);
    const full = fa.residualSS + fb.residualSS;
    const dfFull = fa.df + fb.df;
    const F = extraSumOfSquaresF(joint.residualSS, joint.df, full, dfFull);
    comparisons.push({ classA: classes[i], classB: classes[j], ic50A: Math.exp(fa.params[3]), ic50B: Math.exp(fb.params[3]), ratio: Math.exp(fb.params[3] - fa.params[3]), F: F.F, df1: F.df1, df2: F.df2, p: F.p, conclusion: F.p < 0.05 ? 'IC50s differ (p < 0.05)' : 'no evidence that the IC50s differ (p >= 0.05)' });
  }
  return new DoseResponseResult(points, perPreparation, summary, comparisons, fits, [...history, { verb: 'doseResponse', options: { measure, lastN, runDown, fixBottom, bootstrap: options.bootstrap ?? 0, seed: options.seed ?? doseResponseDefaults.seed, model: 'four-parameter log-logistic, top fixed at 1', pooling: 'mean of per-preparation log10 IC50 with t-based 95% CI; pooled fit with profile-likelihood CI' }, version: VERSION }], sources);
}

/** Joint fit of two classes with a shared ln IC50 and class-specific slope and bottom. */
function fitCurveShared(x: number[], y: number[], isB: boolean[], fixBottom: number | null, starts: FitResult[]): FitResult {
  const idx = x.map((_, i) => i);
  // p = [hillA, bottomA, hillB, bottomB, lnIC50]
  const model = (i: number, p: readonly number[]) => (isB[i] ? logLogistic4(x[i], [p[2], p[3], 1, p[4]]) : logLogistic4(x[i], [p[0], p[1], 1, p[4]]));
  const [a, b] = starts;
  return fitCurve({
    model, x: idx, y, p0: [a.params[0], a.params[1], b.params[0], b.params[1], (a.params[3] + b.params[3]) / 2],
    fixed: [false, fixBottom !== null, false, fixBottom !== null, false], lower: [0.2, -0.2, 0.2, -0.2, -Infinity], upper: [6, 0.9, 6, 0.9, Infinity],
  });
}
