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
 * 3. Per preparation, a Hill (four-parameter log-logistic) fit with the top fitted in [0.5, 1.5] and the baseline
 *    as one point of the curve (`freeTop`, default), or fixed at 1 (normalised), Hill slope in [0.2, 6] and the bottom free in [-0.2, 0.9] (or fixed).
 * 4. Across preparations: log10 IC50 is averaged over preparations with a t-based 95% CI
 *    (IC50 CI asymmetric), so animals, not sweeps, are the replicates; a pooled fit over
 *    all preparations' normalised points gives a profile-likelihood CI; optional
 *    bootstrap over preparations.
 * 5. Classes compared by the extra-sum-of-squares F test of a shared IC50.
 * 6. Numbers only where the data determine them: a fitted IC50 outside the measured concentrations makes the
 *    preparation's row 'not identifiable' (no numbers, with the reason), and a Hill slope at its bound is left
 *    empty with the reason; the pooled fit gives profile-likelihood intervals for the IC50 and the Hill slope.
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { Result } from '../notebook/result';
import { fitCurve, profileCI, extraSumOfSquaresF, trusted, type FitResult } from '../fit/lm';
import { logLogistic4 } from '../fit/models';
import { summarize } from './stats';
import { AnalysisError, OptionError } from '../errors';
import { Rng } from '../model/random';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';

export interface DoseResponseOptions {
  /**
   * column measured (default: amplitude_fit_<units>, the least-squares amplitude against the class's unblocked
   * waveform, when the rows have it; otherwise the peak amplitude column)
   */
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
  /** one curve over all recording sites (distances) instead of one per site (default false) */
  poolSites?: boolean;
  /**
   * fit the top asymptote (fraction of the baseline, in [0.5, 1.5]) with the baseline as one point of the curve,
   * instead of fixing it at the one baseline measurement (default true)
   */
  freeTop?: boolean;
  /** fewest measured concentrations (above 0) a curve needs (default 4) */
  minConcentrations?: number;
  /**
   * with the least-squares amplitude (amplitude_fit_<units>), also use the sweeps below the detection level of a
   * class that was measured in its drug-free sweeps at that site (default true): the projection is unbiased there
   */
  belowDetection?: boolean;
  /**
   * a sweep whose peak latency differs from the mean baseline peak latency of its preparation,
   * site and class by more than this fraction of it is not the same wave and is left out
   * (default 0.5; null to keep every measured sweep)
   */
  maxLatencyShift?: number | null;
}
/** bounds of the fitted Hill slope */
const HILL_BOUNDS = [0.2, 6] as const;
export const doseResponseDefaults = {
  lastN: 3,
  runDown: 'none' as const,
  fixBottom: null,
  bootstrap: 0,
  seed: 1,
  poolSites: false,
  minConcentrations: 4,
  maxLatencyShift: 0.5 as number | null,
};

export interface DosePoint {
  preparation: string;
  class: string;
  distanceMm: number | null;
  concentration: number;
  response: number;
  baseline: number;
  normalized: number;
  n: number;
}

import type { Row } from '../registry/types';
const num = (v: number): number | null => (Number.isFinite(v) ? v : null);

function steady(rows: Row[], lastN: number): { value: number; n: number; time: number } {
  const sorted = [...rows].sort(
    (a, b) => ((a.acquiredS as number) ?? (a.sweep as number)) - ((b.acquiredS as number) ?? (b.sweep as number)),
  );
  const tail = sorted.slice(-lastN);
  const v = tail.map((r) => r.__value as number);
  const t = tail.map((r) => (r.acquiredS as number) ?? (r.sweep as number));
  return { value: v.reduce((a, b) => a + b, 0) / v.length, n: v.length, time: t.reduce((a, b) => a + b, 0) / t.length };
}

/**
 * Fit the Hill model to normalised points (x = concentration, y = fraction of baseline). With `freeTop` the top
 * asymptote is fitted too (in [0.5, 1.5]), and the points should include the baseline (concentration 0, y = 1):
 * the unblocked level is then estimated from the baseline and the lowest concentrations together instead of being
 * the one (noisy) baseline measurement, whose error would otherwise scale every point.
 */
export function fitHill(x: number[], y: number[], fixBottom: number | null, freeTop = false): FitResult {
  const pos = x.filter((v) => v > 0);
  // start: ln IC50 where the response crosses half, else the geometric middle of the range
  let lne = (Math.log(Math.min(...pos)) + Math.log(Math.max(...pos))) / 2;
  const order = x
    .map((v, i) => [v, y[i]])
    .filter((p) => p[0] > 0)
    .sort((a, b) => a[0] - b[0]);
  for (let i = 1; i < order.length; i++) {
    if (order[i - 1][1] >= 0.5 && order[i][1] < 0.5) {
      lne = (Math.log(order[i - 1][0]) + Math.log(order[i][0])) / 2;
      break;
    }
  }
  const bottom = fixBottom ?? Math.max(0, Math.min(...y));
  return fitCurve({
    model: logLogistic4,
    x,
    y,
    p0: [1, bottom, 1, lne],
    names: ['hill', 'bottom', 'top', 'lnIC50'],
    fixed: [false, fixBottom !== null, !freeTop, false],
    lower: [HILL_BOUNDS[0], -0.2, freeTop ? 0.5 : -Infinity, -Infinity],
    upper: [HILL_BOUNDS[1], 0.9, freeTop ? 1.5 : Infinity, Infinity],
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
    return {
      dose_response_summary: this.summary,
      dose_response_per_preparation: this.perPreparation,
      dose_response_points: this.points,
      dose_response_comparisons: this.comparisons,
    };
  }

  frame(which: 'summary' | 'perPreparation' | 'points' | 'comparisons' = 'summary'): import('danfojs-node').DataFrame {
    return toFrame((which === 'points' ? this.points : this[which]) as unknown as Record<string, unknown>[]);
  }
  toHTML(): string {
    return (
      tableHtml(this.summary, { caption: 'Dose-response per class (IC50 with 95% CI; preparations as replicates)' }) +
      tableHtml(this.comparisons, { caption: 'Same IC50 for two classes? (extra-sum-of-squares F test)' })
    );
  }
  toString(): string {
    return (
      'DoseResponseResult\n' +
      tableText(this.summary, {
        columns: [
          'class',
          'distanceMm',
          'preparations',
          'ic50',
          'ic50_ci95_low',
          'ic50_ci95_high',
          'hill',
          'pooled_ic50',
          'status',
        ],
      }) +
      '\n' +
      tableText(this.comparisons)
    );
  }
}

/** Dose-response analysis of a component table's rows (or any rows with the same columns). */
export function doseResponse(
  rows: readonly Row[],
  units: string,
  options: DoseResponseOptions = {},
  history: readonly Step[] = [],
  sources: readonly Source[] = [],
): DoseResponseResult {
  const lastN = options.lastN ?? doseResponseDefaults.lastN;
  if (!Number.isInteger(lastN) || lastN < 1) throw new OptionError(`invalid lastN: ${lastN}; must be an integer >= 1`);
  const runDown = options.runDown ?? doseResponseDefaults.runDown;
  if (runDown !== 'none' && runDown !== 'washout' && runDown !== 'vehicle')
    throw new OptionError(`invalid runDown: ${JSON.stringify(runDown)}; must be "none", "washout" or "vehicle"`);
  const fixBottom = options.fixBottom === undefined ? doseResponseDefaults.fixBottom : options.fixBottom;
  // default: the least-squares amplitude against the class's unblocked waveform (components: amplitude_fit_<units>,
  // not inflated by noise when the response is small), else the peak amplitude
  const fitCol = `amplitude_fit_${units}`;
  const measure = options.measure ?? (rows.some((r) => typeof r[fitCol] === 'number') ? fitCol : `amplitude_${units}`);
  const poolSites = options.poolSites ?? doseResponseDefaults.poolSites;
  const freeTop = options.freeTop ?? true;
  if (typeof freeTop !== 'boolean')
    throw new OptionError(`invalid freeTop: ${JSON.stringify(freeTop)}; expected true or false`);
  if (options.belowDetection !== undefined && typeof options.belowDetection !== 'boolean')
    throw new OptionError(`invalid belowDetection: ${JSON.stringify(options.belowDetection)}; expected true or false`);
  const minConc = options.minConcentrations ?? doseResponseDefaults.minConcentrations;
  if (!Number.isInteger(minConc) || minConc < 2)
    throw new OptionError(`invalid minConcentrations: ${minConc}; must be an integer >= 2`);
  const withConc = rows.filter(
    (r) => typeof r.concentration === 'number' && (!options.classes || options.classes.includes(r.class as string)),
  );
  if (!withConc.length) throw new AnalysisError('dose-response needs rows with a numeric "concentration" condition');
  const negative = withConc.filter((r) => (r.concentration as number) < 0);
  if (negative.length)
    throw new AnalysisError(
      `dose-response: ${negative.length} row(s) have a negative concentration (${[...new Set(negative.map((r) => r.concentration))].slice(0, 5).join(', ')}); a concentration is 0 (baseline, washout, vehicle) or above`,
    );
  if (!withConc.some((r) => (r.concentration as number) > 0))
    throw new AnalysisError(
      `dose-response: all ${withConc.length} rows have concentration 0 (baseline only); a curve needs sweeps at concentrations above 0`,
    );
  // only what was measured: rows detected (and resolved) with a number in the measure
  const hasValue = (r: Row) => typeof r[measure] === 'number' && Number.isFinite(r[measure] as number);
  const isMeasured = (r: Row) =>
    r.detected !== false && (r.status === undefined || r.status === null || r.status === 'measured') && hasValue(r);
  // with the least-squares amplitude (a projection on the class's drug-free waveform: linear in the data, so noise
  // averages out instead of lifting a picked peak), detection decides whether the class exists, from its drug-free
  // sweeps; a blocked sweep below the detection level then still has an unbiased amplitude (near 0, with its noise),
  // and leaving it out would cut the curve where the block is strongest. A row not resolved is never used, nor one
  // separated by the velocity decomposition: its component also holds the residual of its neighbours' fit, which
  // does not average out, so below detection its projection is not an unbiased amplitude.
  const projection = measure === fitCol && options.belowDetection !== false;
  const belowDetection = (r: Row) =>
    projection &&
    r.status === 'not detected' &&
    (r.separation === undefined || r.separation === null || r.separation === 'window') &&
    hasValue(r);
  const siteOf = (r: Row): number | null =>
    poolSites ? null : ((r.distanceMm ?? r.distance_mm ?? null) as number | null);
  const concUnit = (withConc.find((r) => r.concentrationUnit)?.concentrationUnit as string) ?? '';
  const groups = new Map<string, Row[]>();
  for (const r of withConc) {
    const id = `${r.preparation ?? ''}|${siteOf(r) ?? ''}|${r.class}`;
    const g = groups.get(id);
    const rr = {
      ...r,
      __value: isMeasured(r) || belowDetection(r) ? r[measure] : null,
      __below: !isMeasured(r) && belowDetection(r),
      __site: siteOf(r),
    };
    if (g) g.push(rr);
    else groups.set(id, [rr]);
  }
  // a class exists at a site when its drug-free sweeps (concentration 0, not washout) were measured there
  const belowUsed = new Map<string, number>();
  for (const [id, g] of groups) {
    const exists = g.some((r) => r.concentration === 0 && r.epoch !== 'washout' && isMeasured(r));
    for (const r of g) if (r.__below && !exists) r.__value = null;
    belowUsed.set(id, g.filter((r) => r.__below && r.__value !== null).length);
  }
  const shift = options.maxLatencyShift === undefined ? doseResponseDefaults.maxLatencyShift : options.maxLatencyShift;
  if (shift !== null && !(shift > 0))
    throw new OptionError(
      `invalid maxLatencyShift: ${shift}; must be > 0 (a fraction of the baseline latency) or null`,
    );
  // a measured sweep far from the baseline's peak latency is another wave, not this class
  const moved = new Map<string, number>();
  if (shift !== null) {
    for (const [id, g] of groups) {
      const base = g.filter((r) => r.concentration === 0 && r.__value !== null && typeof r.peak_ms === 'number');
      if (!base.length) continue;
      const t0 = base.reduce((a, r) => a + (r.peak_ms as number), 0) / base.length;
      for (const r of g) {
        if (
          r.__value !== null &&
          typeof r.peak_ms === 'number' &&
          Math.abs((r.peak_ms as number) - t0) > shift * Math.abs(t0)
        ) {
          r.__value = null;
          moved.set(id, (moved.get(id) ?? 0) + 1);
        }
      }
    }
  }
  const ok = (g: Row[]) => g.filter((r) => r.__value !== null);
  const points: DosePoint[] = [];
  const perPreparation: Row[] = [];
  const isVehicle = (r: Row) => r.epoch === 'vehicle';
  // run-down rate per class from the vehicle controls: fraction of baseline = 1 + k (t - tBaseline)
  const rate = new Map<string, { k: number; preparations: number; sweeps: number }>();
  if (runDown === 'vehicle') {
    const acc = new Map<string, { sxy: number; sxx: number; preps: Set<string>; n: number }>();
    for (const g0 of groups.values()) {
      const g = ok(g0);
      const veh = g.filter(isVehicle);
      if (!veh.length) continue;
      const where = `preparation ${g[0].preparation}, class ${g[0].class}`;
      if (g.some((r) => typeof r.acquiredS !== 'number'))
        throw new AnalysisError(
          `${where}: runDown "vehicle" needs the condition "acquiredS" (time of each sweep, s) on every sweep`,
        );
      const base = g.filter((r) => r.concentration === 0 && !isVehicle(r) && r.epoch !== 'washout');
      if (!base.length)
        throw new AnalysisError(
          `${where}: the vehicle control has no measured baseline sweeps (concentration 0 before the vehicle)`,
        );
      const B = steady(base, lastN);
      if (!(Math.abs(B.value) > 0))
        throw new AnalysisError(`${where}: the vehicle control's baseline response is zero`);
      const key = `${g[0].class}|${g[0].__site ?? ''}`;
      const a = acc.get(key) ?? { sxy: 0, sxx: 0, preps: new Set<string>(), n: 0 };
      for (const r of veh) {
        const dt = (r.acquiredS as number) - B.time;
        a.sxy += dt * ((r.__value as number) / B.value - 1);
        a.sxx += dt * dt;
        a.n++;
      }
      a.preps.add(String(g[0].preparation ?? ''));
      acc.set(key, a);
    }
    for (const [cls, a] of acc)
      if (a.sxx > 0) rate.set(cls, { k: a.sxy / a.sxx, preparations: a.preps.size, sweeps: a.n });
  }
  // per curve (class and site): how many rows were left out, and why a curve was refused
  const excluded = new Map<string, number>();
  const refused = new Map<string, string[]>();
  const curveOf = (cls: string, site: number | null) => `${cls}|${site ?? ''}`;
  for (const g0 of groups.values()) {
    if (g0.some(isVehicle)) continue; // a vehicle control gives no dose points
    const cls = String(g0[0].class),
      site = g0[0].__site as number | null,
      prep = String(g0[0].preparation ?? '');
    const cid = curveOf(cls, site);
    const left = g0.length - ok(g0).length;
    excluded.set(cid, (excluded.get(cid) ?? 0) + left);
    const g = ok(g0);
    const where = `preparation ${prep}, class ${cls}${site !== null ? `, ${site} mm` : ''}`;
    const refuse = (why: string) => {
      perPreparation.push({
        class: cls,
        distanceMm: site,
        preparation: prep,
        ic50: null,
        hill: null,
        bottom: null,
        points: 0,
        excluded_not_measured: left,
        concentrationUnit: concUnit,
        status: 'not detected',
        reason: why,
      });
      (refused.get(cid) ?? refused.set(cid, []).get(cid)!).push(`${prep}: ${why}`);
    };
    const isWash = (r: Row) => r.epoch === 'washout';
    const base0 = g0.filter((r) => r.concentration === 0 && !isWash(r));
    if (!base0.length) throw new AnalysisError(`${where}: no pre-drug baseline sweeps (concentration 0)`);
    const base = g.filter((r) => r.concentration === 0 && !isWash(r));
    if (!base.length) {
      refuse(`the baseline was not measured in any of its ${base0.length} sweeps (not detected or not resolved)`);
      continue;
    }
    const B = steady(base, lastN);
    const wash = g.filter(isWash);
    const W = wash.length ? steady(wash, lastN) : null;
    if (runDown === 'washout' && !W)
      throw new AnalysisError(`${where}: runDown "washout" needs measured sweeps with epoch "washout"`);
    const vr = runDown === 'vehicle' ? rate.get(`${cls}|${site ?? ''}`) : undefined;
    if (runDown === 'vehicle') {
      if (!vr)
        throw new AnalysisError(
          `class ${cls}: runDown "vehicle" needs time-matched vehicle sweeps (epoch "vehicle", with acquiredS) of this class`,
        );
      if (g.some((r) => typeof r.acquiredS !== 'number'))
        throw new AnalysisError(
          `preparation ${prep}: runDown "vehicle" needs the condition "acquiredS" on every sweep`,
        );
    }
    const concs = [
      ...new Set(g.filter((r) => (r.concentration as number) > 0 && !isWash(r)).map((r) => r.concentration as number)),
    ].sort((a, b) => a - b);
    const tested = [
      ...new Set(g0.filter((r) => (r.concentration as number) > 0 && !isWash(r)).map((r) => r.concentration as number)),
    ];
    if (concs.length < minConc) {
      refuse(
        `measured at ${concs.length} of ${tested.length} concentrations above 0 (${left} of ${g0.length} sweeps not measured); a curve needs ${minConc}`,
      );
      continue;
    }
    for (const c of concs) {
      const S = steady(
        g.filter((r) => r.concentration === c && !isWash(r)),
        lastN,
      );
      let control = B.value;
      if (runDown === 'washout' && W && W.time !== B.time)
        control = B.value + ((W.value - B.value) * (S.time - B.time)) / (W.time - B.time);
      if (vr) control = B.value * (1 + vr.k * (S.time - B.time));
      if (!(Math.abs(control) > 0)) throw new AnalysisError(`${where}: baseline response is zero`);
      points.push({
        preparation: prep,
        class: cls,
        distanceMm: site,
        concentration: c,
        response: S.value,
        baseline: control,
        normalized: S.value / control,
        n: S.n,
      });
    }
  }
  const curves = [
    ...new Set(
      [...groups.values()]
        .filter((g) => !g.some(isVehicle))
        .map((g) => curveOf(String(g[0].class), g[0].__site as number | null)),
    ),
  ];
  const summary: Row[] = [];
  const fits = new Map<string, FitResult>();
  const bottoms = new Map<string, number | null>();
  const siteLabel = (site: string) => (site === '' ? '' : `|${site}`);
  for (const cid of curves) {
    const [cls, siteS] = cid.split('|');
    const site = siteS === '' ? null : Number(siteS);
    const mine = points.filter((p) => p.class === cls && (p.distanceMm ?? null) === site);
    const left = excluded.get(cid) ?? 0;
    const head = { class: cls, ...(poolSites ? {} : { distanceMm: site }) };
    if (!mine.length) {
      summary.push({
        ...head,
        preparations: 0,
        concentrationUnit: concUnit,
        ic50: null,
        hill: null,
        excluded_not_measured: left,
        status: 'not detected',
        reason: (refused.get(cid) ?? ['no points']).join('; '),
      });
      continue;
    }
    const cs = mine.map((p) => p.concentration);
    const cmin = Math.min(...cs),
      cmax = Math.max(...cs);
    // a class not measured at the highest concentrations has lost its response below detection there
    const testedMax = Math.max(
      ...withConc.filter((r) => r.class === cls && (siteOf(r) ?? null) === site).map((r) => r.concentration as number),
    );
    const bottomFix = fixBottom !== null ? fixBottom : cmax < testedMax ? 0 : null;
    bottoms.set(cid, bottomFix);
    const preps = [...new Set(mine.map((p) => p.preparation))];
    // with a free top, each preparation's baseline (concentration 0, fraction 1) is a point of its curve
    const hill = (pts: DosePoint[]) => {
      const base = freeTop ? [...new Set(pts.map((p) => p.preparation))].map(() => 0) : [];
      return fitHill(
        [...base, ...pts.map((p) => p.concentration)],
        [...base.map(() => 1), ...pts.map((p) => p.normalized)],
        bottomFix,
        freeTop,
      );
    };
    const logIc: number[] = [];
    const hills: number[] = [];
    // the data support an IC50 only inside the concentrations that were measured, and a Hill slope only off its
    // bounds (at a bound the fall between two concentrations is steeper or shallower than the data can tell)
    const hillAtBound = (f: FitResult) => f.params[0] <= HILL_BOUNDS[0] + 1e-9 || f.params[0] >= HILL_BOUNDS[1] - 1e-9;
    const unidentified: string[] = [];
    for (const prep of preps) {
      const pp = mine.filter((p) => p.preparation === prep);
      const f = hill(pp);
      const ic = Math.exp(f.params[3]);
      fits.set(`${cls}${siteLabel(siteS)}|${prep}`, f);
      const pc = pp.map((p) => p.concentration);
      const lo = Math.min(...pc),
        hi = Math.max(...pc);
      if (!(ic >= lo && ic <= hi)) {
        const why =
          `the fitted IC50 (${Number.isFinite(ic) ? ic.toPrecision(3) : ic}) lies outside the measured ` +
          `concentrations ${lo}-${hi} ${concUnit}: the half-block point is not determined by the data`;
        unidentified.push(`${prep}: ${why}`);
        perPreparation.push({
          class: cls,
          ...(poolSites ? {} : { distanceMm: site }),
          preparation: prep,
          ic50: null,
          hill: null,
          bottom: null,
          top: null,
          points: pp.length,
          concentrationUnit: concUnit,
          status: 'not identifiable',
          reason: why,
        });
        continue;
      }
      const st = [...f.status.filter((q) => q !== 'ok' && !/parameter hill is at a bound/.test(q))];
      const slopeFree = !hillAtBound(f);
      if (!slopeFree)
        st.push(
          `Hill slope not identifiable: at its bound ${f.params[0]} (the response falls between two measured ` +
            'concentrations more steeply or more gently than the data can tell); slope left empty',
        );
      perPreparation.push({
        class: cls,
        ...(poolSites ? {} : { distanceMm: site }),
        preparation: prep,
        ic50: ic,
        hill: slopeFree ? f.params[0] : null,
        bottom: f.params[1],
        top: f.params[2],
        points: pp.length,
        concentrationUnit: concUnit,
        status: st.length ? st.join('; ') : 'ok',
        reason: null,
      });
      logIc.push(Math.log10(ic));
      if (slopeFree) hills.push(f.params[0]);
    }
    if (!logIc.length) {
      summary.push({
        ...head,
        preparations: preps.length,
        concentrationUnit: concUnit,
        ic50: null,
        hill: null,
        points: mine.length,
        excluded_not_measured: left,
        status: 'not identifiable',
        reason: unidentified.join('; '),
      });
      continue;
    }
    const s = summarize(logIc);
    const h = summarize(hills);
    const pooled = hill(mine);
    fits.set(`${cls}${siteLabel(siteS)}|pooled`, pooled);
    if (!fits.has(`${cls}|pooled`)) fits.set(`${cls}|pooled`, pooled);
    const pooledIc = Math.exp(pooled.params[3]);
    const pooledOk = pooledIc >= cmin && pooledIc <= cmax;
    const pooledSlope = pooledOk && !hillAtBound(pooled);
    const [plo, phi] = pooledOk ? profileCI(pooled, 3) : [NaN, NaN];
    // the slope's interval from the same profile likelihood (one preparation has no across-preparation interval)
    const [hlo, hhi] = pooledSlope ? profileCI(pooled, 0) : [NaN, NaN];
    let boot: [number, number] | [null, null] = [null, null];
    if (options.bootstrap && options.bootstrap > 0 && preps.length > 1) {
      const rng = new Rng(options.seed ?? doseResponseDefaults.seed);
      const est: number[] = [];
      for (let k = 0; k < options.bootstrap; k++) {
        const pick = preps.map(() => preps[Math.floor(rng.uniform() * preps.length)]);
        const pts = pick.flatMap((pr) => mine.filter((p) => p.preparation === pr));
        const f = hill(pts);
        if (f.converged) est.push(f.params[3]);
      }
      est.sort((x, y) => x - y);
      boot = [Math.exp(est[Math.floor(0.025 * (est.length - 1))]), Math.exp(est[Math.ceil(0.975 * (est.length - 1))])];
    }
    const st: string[] = [];
    if (preps.length < 3)
      st.push(
        `only ${preps.length} preparation(s): the across-preparation CI is ${preps.length < 2 ? 'undefined' : 'very wide'}`,
      );
    const ic50 = Math.pow(10, s.mean);
    if (ic50 < cmin || ic50 > cmax) st.push(`IC50 outside the tested range ${cmin}-${cmax} ${concUnit}`);
    if (unidentified.length) st.push(`not identifiable in ${unidentified.join('; ')}`);
    if (!pooledOk)
      st.push(
        `pooled fit: IC50 (${pooledIc.toPrecision(3)}) outside the measured concentrations ${cmin}-${cmax} ` +
          `${concUnit}, left empty`,
      );
    else if (!pooledSlope) st.push(`pooled fit: Hill slope at its bound ${pooled.params[0]}, left empty`);
    if (!trusted(pooled))
      st.push(...pooled.status.filter((x) => !/parameter hill is at a bound/.test(x)).map((x) => `pooled fit: ${x}`));
    const below = [...belowUsed].filter(([k]) => k.endsWith(`|${siteS}|${cls}`)).reduce((a, [, v]) => a + v, 0);
    if (below)
      st.push(
        `${below} sweep(s) below the detection level measured by their projection on the drug-free waveform ` +
          `(the class was detected without drug)`,
      );
    if (left)
      st.push(
        `${left} sweep(s) not measured (not detected or not resolved${shift !== null ? `, or peak latency more than ${100 * shift}% from the baseline's` : ''}), left out`,
      );
    if (fixBottom === null && bottomFix === 0)
      st.push(`bottom fixed at 0: not measured at the highest concentration(s) above ${cmax} ${concUnit}`);
    if (refused.has(cid)) st.push(`refused for ${refused.get(cid)!.join('; ')}`);
    summary.push({
      ...head,
      preparations: preps.length,
      concentrationUnit: concUnit,
      ic50,
      ic50_ci95_low: num(Math.pow(10, s.ci95[0])),
      ic50_ci95_high: num(Math.pow(10, s.ci95[1])),
      log10_ic50: s.mean,
      log10_ic50_sd: num(s.sd),
      hill: hills.length ? h.mean : null,
      hill_ci95_low: num(h.ci95[0]),
      hill_ci95_high: num(h.ci95[1]),
      pooled_ic50: pooledOk ? pooledIc : null,
      pooled_ic50_profile_low: num(Math.exp(plo)),
      pooled_ic50_profile_high: num(Math.exp(phi)),
      pooled_hill: pooledSlope ? pooled.params[0] : null,
      hill_pooled_profile_low: num(hlo),
      hill_pooled_profile_high: num(hhi),
      pooled_bottom: pooledOk ? pooled.params[1] : null,
      pooled_top: pooledOk ? pooled.params[2] : null,
      bootstrap_ic50_low: boot[0],
      bootstrap_ic50_high: boot[1],
      points: mine.length,
      excluded_not_measured: left,
      below_detection_projected: [...belowUsed]
        .filter(([k]) => k.endsWith(`|${siteS}|${cls}`))
        .reduce((a, [, v]) => a + v, 0),
      excluded_latency_shift: [...moved].filter(([k]) => k.endsWith(`|${siteS}|${cls}`)).reduce((a, [, v]) => a + v, 0),
      ...(runDown === 'vehicle'
        ? {
            rundown_per_min: 60 * (rate.get(`${cls}|${siteS}`)?.k ?? NaN),
            rundown_controls: rate.get(`${cls}|${siteS}`)?.preparations ?? 0,
          }
        : {}),
      status: st.length ? st.join('; ') : 'ok',
      reason: null,
    });
  }
  // pairwise comparison of IC50 between classes (at the same site) on the pooled normalised points
  const comparisons: Row[] = [];
  const fitted = summary.filter((r) => r.ic50 !== null);
  for (let i = 0; i < fitted.length; i++)
    for (let j = i + 1; j < fitted.length; j++) {
      const ra = fitted[i],
        rb = fitted[j];
      if ((ra.distanceMm ?? null) !== (rb.distanceMm ?? null)) continue;
      const site = (ra.distanceMm ?? null) as number | null;
      const at = (cls: string) => points.filter((p) => p.class === cls && (p.distanceMm ?? null) === site);
      const A = at(String(ra.class)),
        B = at(String(rb.class));
      const sl = siteLabel(site === null ? '' : String(site));
      const fa = fits.get(`${ra.class}${sl}|pooled`)!,
        fb = fits.get(`${rb.class}${sl}|pooled`)!;
      // the same points as the classes' own pooled fits: with a free top, each preparation's baseline too
      const withBase = (P: DosePoint[]) =>
        freeTop
          ? [
              ...[...new Set(P.map((p) => p.preparation))].map((pr) => ({
                ...P[0],
                preparation: pr,
                concentration: 0,
                normalized: 1,
              })),
              ...P,
            ]
          : P;
      const Ab = withBase(A),
        Bb = withBase(B);
      const all = [...Ab, ...Bb];
      const isB = all.map((_, k) => k >= Ab.length);
      const bA = bottoms.get(curveOf(String(ra.class), site)) ?? null,
        bB = bottoms.get(curveOf(String(rb.class), site)) ?? null;
      const joint = fitCurveShared(
        all.map((p) => p.concentration),
        all.map((p) => p.normalized),
        isB,
        [bA, bB],
        [fa, fb],
        freeTop,
      );
      const F = extraSumOfSquaresF(joint.residualSS, joint.df, fa.residualSS + fb.residualSS, fa.df + fb.df);
      comparisons.push({
        classA: ra.class,
        classB: rb.class,
        ...(poolSites ? {} : { distanceMm: site }),
        ic50A: Math.exp(fa.params[3]),
        ic50B: Math.exp(fb.params[3]),
        ratio: Math.exp(fb.params[3] - fa.params[3]),
        F: F.F,
        df1: F.df1,
        df2: F.df2,
        p: F.p,
        conclusion: F.p < 0.05 ? 'IC50s differ (p < 0.05)' : 'no evidence that the IC50s differ (p >= 0.05)',
      });
    }
  return new DoseResponseResult(
    points,
    perPreparation,
    summary,
    comparisons,
    fits,
    [
      ...history,
      {
        verb: 'doseResponse',
        options: {
          measure,
          lastN,
          runDown,
          fixBottom,
          bootstrap: options.bootstrap ?? 0,
          seed: options.seed ?? doseResponseDefaults.seed,
          model: freeTop
            ? 'four-parameter log-logistic, top fitted with the baseline as a point'
            : 'four-parameter log-logistic, top fixed at 1',
          pooling: 'mean of per-preparation log10 IC50 with t-based 95% CI; pooled fit with profile-likelihood CI',
          poolSites,
          minConcentrations: minConc,
          maxLatencyShift: shift,
          rows: projection
            ? 'measured rows, and rows below detection of a class detected without drug (projection amplitude); ' +
              'not resolved left out and counted'
            : 'measured rows only (not detected or not resolved left out and counted)',
          belowDetection: projection,
        },
        version: VERSION,
      },
    ],
    sources,
  );
}

/** Joint fit of two classes with a shared ln IC50 and class-specific slope and bottom. */
function fitCurveShared(
  x: number[],
  y: number[],
  isB: boolean[],
  fixBottom: [number | null, number | null],
  starts: FitResult[],
  freeTop = false,
): FitResult {
  const idx = x.map((_, i) => i);
  // p = [hillA, bottomA, topA, hillB, bottomB, topB, lnIC50] (tops fixed at 1 unless freeTop)
  const model = (i: number, p: readonly number[]) =>
    isB[i] ? logLogistic4(x[i], [p[3], p[4], p[5], p[6]]) : logLogistic4(x[i], [p[0], p[1], p[2], p[6]]);
  const [a, b] = starts;
  const tLo = freeTop ? 0.5 : -Infinity,
    tHi = freeTop ? 1.5 : Infinity;
  return fitCurve({
    model,
    x: idx,
    y,
    p0: [
      a.params[0],
      a.params[1],
      freeTop ? a.params[2] : 1,
      b.params[0],
      b.params[1],
      freeTop ? b.params[2] : 1,
      (a.params[3] + b.params[3]) / 2,
    ],
    fixed: [false, fixBottom[0] !== null, !freeTop, false, fixBottom[1] !== null, !freeTop, false],
    lower: [0.2, -0.2, tLo, 0.2, -0.2, tLo, -Infinity],
    upper: [6, 0.9, tHi, 6, 0.9, tHi, Infinity],
  });
}
