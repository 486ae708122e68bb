/**
 * Strength-duration analysis: for each class, the stimulus intensity that reaches a
 * criterion response (default half the maximum) at each pulse width, from a
 * Boltzmann recruitment fit per pulse width (./recruitment.ts), then the rheobase
 * and chronaxie from Weiss's law I = Irh (1 + tch / w) and from Lapicque's law
 * I = Irh / (1 - exp(-w / tau)), chronaxie = tau ln 2 (fit/models.ts). Both laws are
 * fitted to log intensity (errors proportional to the intensity, common practice,
 * no source), with t-based 95% intervals and a profile-likelihood interval for the
 * chronaxie. Chronaxie is the pulse width at which the criterion intensity is twice
 * the rheobase (Lapicque 1909; a definition of the trade).
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { Result } from '../notebook/result';
import { fitCurve, profileCI, type FitResult, type ModelFn } from '../fit/lm';
import { weiss, lapicque } from '../fit/models';
import { tQuantile } from '../fit/dist';
import { recruitment } from './recruitment';
import { AnalysisError, OptionError } from '../errors';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';

import type { Row } from '../registry/types';
export const strengthDurationDefaults = { fraction: 0.5, minWidths: 3 };

export interface StrengthDurationOptions {
  /** column of the response (default amplitude in the set's units) */
  measure?: string;
  /** conditions that define one curve (default preparation, distance, temperature, concentration where present) */
  by?: string[];
  /** criterion: fraction of the fitted maximum response, 0.05-0.95 (default 0.5) */
  fraction?: number;
}

export class StrengthDurationResult extends Result {
  constructor(
    readonly rows: Row[],
    readonly points: Row[],
    readonly fits: Map<string, { weiss: FitResult; lapicque: FitResult }>,
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
  ) {
    super();
  }
  tables(): Record<string, readonly object[]> {
    return { strength_duration: this.rows, strength_duration_points: this.points };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as Record<string, unknown>[]);
  }
  toHTML(): string {
    return tableHtml(this.rows, { caption: 'Strength-duration per class (Weiss and Lapicque fits)' });
  }
  toString(): string {
    return (
      'StrengthDurationResult\n' +
      tableText(this.rows, {
        columns: [
          'preparation',
          'class',
          'widths',
          'rheobase',
          'chronaxie_ms',
          'chronaxie_ci95_low_ms',
          'chronaxie_ci95_high_ms',
          'lapicque_chronaxie_ms',
          'status',
        ],
      })
    );
  }
}

const logOf =
  (m: ModelFn): ModelFn =>
  (w, p) =>
    Math.log(m(w, p));

export function strengthDuration(
  rows: readonly Row[],
  units: string,
  options: StrengthDurationOptions = {},
  history: readonly Step[] = [],
  sources: readonly Source[] = [],
): StrengthDurationResult {
  const measure = options.measure ?? `amplitude_${units}`;
  const fraction = options.fraction ?? strengthDurationDefaults.fraction;
  if (typeof fraction !== 'number' || !(fraction >= 0.05 && fraction <= 0.95))
    throw new OptionError(`invalid fraction: ${fraction}; must be a number from 0.05 to 0.95 of the maximum response`);
  const by =
    options.by ??
    ['preparation', 'distanceMm', 'temperatureC', 'concentration'].filter((k) => rows.some((r) => k in r));
  const use = rows.filter((r) => typeof r.pulseWidthMs === 'number' && (r.pulseWidthMs as number) > 0);
  if (!use.length)
    throw new AnalysisError(
      'strength-duration needs rows with a positive numeric "pulseWidthMs" condition (a pulse-width series)',
    );
  // one recruitment curve per curve group, class and pulse width
  const rec = recruitment(use, units, { measure, by: [...by, 'pulseWidthMs'] });
  const L = Math.log(fraction / (1 - fraction));
  const points: Row[] = [];
  const notFitted = new Map<string, number>();
  for (const r of rec.rows) {
    const id = [...by, 'pulseWidthMs'].map((k) => r[k]).join('|') + '|' + r.class;
    const f = rec.fits.get(id);
    if (!f) {
      // this width's recruitment curve could not be fitted (its status says why): counted, not used
      const gid = by.map((k) => r[k]).join('|') + '|' + r.class;
      notFitted.set(gid, (notFitted.get(gid) ?? 0) + 1);
      continue;
    }
    const [, , xm, s] = f.params;
    const x = xm + s * L;
    let lo: number | null = null,
      hi: number | null = null;
    if (f.covariance && f.df > 0) {
      const v = f.covariance[2][2] + L * L * f.covariance[3][3] + 2 * L * f.covariance[2][3];
      const t = tQuantile(0.975, f.df);
      if (v >= 0) {
        lo = Math.pow(10, x - t * Math.sqrt(v));
        hi = Math.pow(10, x + t * Math.sqrt(v));
      }
    }
    points.push({
      ...Object.fromEntries(by.map((k) => [k, r[k] ?? null])),
      class: r.class,
      pulseWidthMs: r.pulseWidthMs,
      criterion: Math.pow(10, x),
      criterion_ci95_low: lo,
      criterion_ci95_high: hi,
      recruitment_status: r.status,
    });
  }
  const groups = new Map<string, Row[]>();
  for (const p of points) {
    const id = by.map((k) => p[k]).join('|') + '|' + p.class;
    (groups.get(id) ?? groups.set(id, []).get(id)!).push(p);
  }
  const unitOf = new Map(use.map((r) => [String(r.class), (r.intensityUnit as string) ?? null]));
  const out: Row[] = [];
  // a row without a fit: every number and interval empty (not missing)
  const NO_NUMBERS = {
    rheobase: null,
    rheobase_ci95_low: null,
    rheobase_ci95_high: null,
    chronaxie_ms: null,
    chronaxie_ci95_low_ms: null,
    chronaxie_ci95_high_ms: null,
    lapicque_chronaxie_ms: null,
  };
  const fits = new Map<string, { weiss: FitResult; lapicque: FitResult }>();
  for (const [id, g] of groups) {
    g.sort((a, b) => (a.pulseWidthMs as number) - (b.pulseWidthMs as number));
    const w = g.map((p) => p.pulseWidthMs as number);
    const I = g.map((p) => p.criterion as number);
    const st: string[] = [];
    const left = notFitted.get(id) ?? 0;
    notFitted.delete(id);
    if (left) st.push(`${left} pulse width${left === 1 ? '' : 's'} without a recruitment fit left out`);
    if (g.length < strengthDurationDefaults.minWidths) {
      out.push({
        ...Object.fromEntries(by.map((k) => [k, g[0][k] ?? null])),
        class: g[0].class,
        intensityUnit: unitOf.get(String(g[0].class)) ?? null,
        widths: g.length,
        ...NO_NUMBERS,
        status: [
          `needs at least ${strengthDurationDefaults.minWidths} pulse widths with a recruitment curve (has ${g.length})`,
          ...st,
        ].join('; '),
      });
      continue;
    }
    // start: rheobase a little below the longest width's intensity, chronaxie from the two extreme widths
    const Irh0 = 0.9 * I[I.length - 1];
    const tch0 = Math.max(1e-3, (I[0] / Irh0 - 1) * w[0]);
    const wf = fitCurve({
      model: logOf(weiss),
      x: w,
      y: I.map(Math.log),
      p0: [Irh0, tch0],
      names: ['rheobase', 'chronaxie_ms'],
      lower: [1e-12, 1e-9],
      upper: [Infinity, 1e4],
    });
    const lf = fitCurve({
      model: logOf(lapicque),
      x: w,
      y: I.map(Math.log),
      p0: [Irh0, tch0 / Math.LN2],
      names: ['rheobase', 'tau_ms'],
      lower: [1e-12, 1e-9],
      upper: [Infinity, 1e4],
    });
    fits.set(id, { weiss: wf, lapicque: lf });
    const chProfile = wf.df > 0 ? profileCI(wf, 1) : [NaN, NaN];
    // intervals only where the data can support them: the points behind the fit are
    // trusted, the residuals are above rounding level (otherwise the interval width is
    // an artefact of exact or duplicated data) and the intensity falls with pulse width
    // a point whose recruitment fit gives no interval (not identifiable) cannot support one here
    const unsupported = g.some(
      (p) => typeof p.criterion_ci95_low !== 'number' || typeof p.criterion_ci95_high !== 'number',
    );
    const logI = I.map(Math.log);
    const scaleLog = Math.max(1, ...logI.map(Math.abs));
    const exact = !(Math.sqrt(wf.residualSS / w.length) > 1e-9 * scaleLog);
    const fallRatio = Math.max(...I) / Math.min(...I);
    const flat = !(fallRatio > 1 + 1e-6) || wf.params[1] <= 1e-9 * 1.000001;
    const noCI = unsupported || exact || flat;
    const fin = (v: number) => (!noCI && Number.isFinite(v) ? v : null);
    for (const q of wf.status) if (q !== 'ok') st.push(`Weiss: ${q}`);
    for (const q of lf.status) if (q !== 'ok') st.push(`Lapicque: ${q}`);
    if (g.some((p) => p.recruitment_status !== 'ok'))
      st.push('a recruitment fit behind a point is flagged (see strength_duration_points)');
    if (unsupported)
      st.push('a criterion intensity has no interval (its recruitment fit is not identifiable), so no interval here');
    if (flat)
      st.push(
        `flat: the criterion intensity does not fall with pulse width (largest / smallest = ${Number(fallRatio.toPrecision(6))}), so the chronaxie is not determined`,
      );
    else if (exact)
      st.push(
        'exact fit: the residuals are at rounding level (noise-free or duplicated points), so no interval can be estimated',
      );
    const chron = flat ? null : wf.params[1];
    if (chron !== null && (chron < w[0] || chron > w[w.length - 1]))
      st.push('chronaxie outside the tested pulse widths: extrapolated');
    const lapFlat = flat || lf.params[1] <= 1e-9 * 1.000001;
    out.push({
      ...Object.fromEntries(by.map((k) => [k, g[0][k] ?? null])),
      class: g[0].class,
      intensityUnit: unitOf.get(String(g[0].class)) ?? null,
      widths: g.length,
      criterionFraction: fraction,
      rheobase: wf.params[0],
      rheobase_ci95_low: fin(wf.ci[0][0]),
      rheobase_ci95_high: fin(wf.ci[0][1]),
      chronaxie_ms: chron,
      chronaxie_ci95_low_ms: chron === null ? null : fin(chProfile[0]),
      chronaxie_ci95_high_ms: chron === null ? null : fin(chProfile[1]),
      lapicque_rheobase: lf.params[0],
      lapicque_tau_ms: lapFlat ? null : lf.params[1],
      lapicque_chronaxie_ms: lapFlat ? null : lf.params[1] * Math.LN2,
      lapicque_chronaxie_ci95_low_ms: lapFlat ? null : fin(Math.max(0, lf.ci[1][0]) * Math.LN2),
      lapicque_chronaxie_ci95_high_ms: lapFlat ? null : fin(lf.ci[1][1] * Math.LN2),
      weiss_rss: wf.residualSS,
      lapicque_rss: lf.residualSS,
      status: st.length ? st.join('; ') : 'ok',
    });
  }
  // a class with no fitted width at all still gets its row, saying so
  for (const [gid, n] of notFitted) {
    const r = rec.rows.find((x) => by.map((k) => x[k]).join('|') + '|' + x.class === gid)!;
    out.push({
      ...Object.fromEntries(by.map((k) => [k, r[k] ?? null])),
      class: r.class,
      intensityUnit: unitOf.get(String(r.class)) ?? null,
      widths: 0,
      ...NO_NUMBERS,
      status: `no pulse width has a recruitment fit (${n} left out; see recruitment statuses)`,
    });
  }
  return new StrengthDurationResult(
    out,
    points,
    fits,
    [
      ...history,
      {
        verb: 'strengthDuration',
        options: {
          measure,
          by,
          fraction,
          criterion: `${fraction} of the maximum of a Boltzmann recruitment fit per pulse width`,
          models: ['Weiss', 'Lapicque'],
          scale: 'log intensity',
        },
        version: VERSION,
      },
    ],
    sources,
  );
}
