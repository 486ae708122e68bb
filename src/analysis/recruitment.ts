/**
 * Recruitment: response of each class against stimulus intensity, fitted with a
 * Boltzmann sigmoid in log10 intensity (fit/models.ts). Reported per preparation,
 * distance and class: the intensity at half-maximum (I50), the maximum, a threshold
 * (the intensity where the fit reaches 5% of its range above its floor), the
 * intensity reaching 95% of the maximum (I95) and the recommended supramaximal
 * intensity, 1.3 x I95 (a documented rule of ours within the 1.2-1.5 x range used in
 * practice; common practice, no source).
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { Result } from '../notebook/result';
import { fitCurve, type FitResult } from '../fit/lm';
import { boltzmann } from '../fit/models';
import { AnalysisError, OptionError } from '../errors';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';

import type { Row } from '../registry/types';
export const recruitmentDefaults = { supramaximalFactor: 1.3, thresholdFraction: 0.05, minLevels: 4 };

export class RecruitmentResult extends Result {
  constructor(
    readonly rows: Row[],
    readonly points: Row[],
    readonly fits: Map<string, FitResult>,
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
  ) {
    super();
  }
  tables(): Record<string, readonly object[]> {
    return { recruitment: this.rows, recruitment_points: this.points };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as Record<string, unknown>[]);
  }
  toHTML(): string {
    return tableHtml(this.rows, { caption: 'Recruitment per class (Boltzmann fit in log10 intensity)' });
  }
  toString(): string {
    return (
      'RecruitmentResult\n' +
      tableText(this.rows, {
        columns: [
          'preparation',
          'class',
          'threshold',
          'i50',
          'i50_ci95_low',
          'i50_ci95_high',
          'maximum',
          'supramaximal',
          'status',
        ],
      })
    );
  }
}

export interface RecruitmentOptions {
  /** column measured (default: the amplitude column) */
  measure?: string;
  /** conditions that make separate curves (default: preparation, distance, temperature, concentration, pulse width) */
  by?: string[];
  /** supramaximal = this x I95 (default 1.3) */
  supramaximalFactor?: number;
  /** fewest intensities with a measured response a curve needs (default 4) */
  minLevels?: number;
  /**
   * with the amplitude as the measure, a sweep below the detection level of a class measured at that site (and
   * separated by its window) enters the curve with its least-squares amplitude (amplitude_fit_<units>, unbiased
   * near 0 where a picked peak of noise is not) instead of being left out (default true)
   */
  belowDetection?: boolean;
}

/**
 * Recruitment curves per class and group. Only measured rows are fitted (detected and resolved,
 * with a number in the measure); rows with an intensity <= 0 cannot go on a log axis: both are left
 * out and counted (`excluded_not_measured`, `excluded_nonpositive_intensity`). A class measured at
 * fewer than `minLevels` intensities gets a row with status "not detected" and no numbers. When the
 * class was not detected at intensities below its measured ones, the response there is below
 * detection and the floor of the fit is fixed at 0 (said in the status). With the amplitude as the measure, the
 * sweeps below detection of a class measured at that site and separated by its window enter with their
 * least-squares amplitude (`belowDetection`, default true): near 0 a picked peak is the maximum of noise, the
 * projection is not, so the foot of the curve is measured instead of assumed. A fit whose information matrix is
 * singular (the data do not determine the curve) is "not identifiable", with where the half-maximum lies.
 */
export function recruitment(
  rows: readonly Row[],
  units: string,
  options: RecruitmentOptions = {},
  history: readonly Step[] = [],
  sources: readonly Source[] = [],
): RecruitmentResult {
  const measure = options.measure ?? `amplitude_${units}`;
  // one curve per pulse width when the rows hold more than one
  const by =
    options.by ??
    ['preparation', 'distanceMm', 'temperatureC', 'concentration', 'pulseWidthMs'].filter((k) =>
      k === 'pulseWidthMs' ? new Set(rows.map((r) => r[k])).size > 1 : rows.some((r) => k in r),
    );
  const factor = options.supramaximalFactor ?? recruitmentDefaults.supramaximalFactor;
  const minLevels = options.minLevels ?? recruitmentDefaults.minLevels;
  if (!Number.isInteger(minLevels) || minLevels < 3)
    throw new OptionError(`invalid minLevels: ${minLevels}; must be an integer >= 3 (a sigmoid has 4 parameters)`);
  if (options.belowDetection !== undefined && typeof options.belowDetection !== 'boolean')
    throw new OptionError(`invalid belowDetection: ${JSON.stringify(options.belowDetection)}; expected true or false`);
  const fitCol = `amplitude_fit_${units}`;
  const projection = options.belowDetection !== false && (measure === `amplitude_${units}` || measure === fitCol);
  const withI = rows.filter((r) => typeof r.intensity === 'number');
  if (!withI.length) throw new AnalysisError('recruitment needs rows with a numeric "intensity" condition');
  const isMeasured = (r: Row) =>
    r.detected !== false &&
    (r.status === undefined || r.status === null || r.status === 'measured') &&
    typeof r[measure] === 'number' &&
    Number.isFinite(r[measure] as number);
  // below detection: a window class's sweep that failed the detection test still has a least-squares amplitude
  // (linear in the data, near 0 with its noise); a class separated by the velocity decomposition does not (its
  // component holds its neighbours' residual), nor a row not resolved
  const belowDetection = (r: Row) =>
    projection &&
    r.status === 'not detected' &&
    (r.separation === undefined || r.separation === null || r.separation === 'window') &&
    typeof r[fitCol] === 'number' &&
    Number.isFinite(r[fitCol] as number);
  const groups = new Map<string, Row[]>();
  for (const r of withI) {
    const id = by.map((k) => r[k]).join('|') + '|' + r.class;
    const g = groups.get(id);
    if (g) g.push(r);
    else groups.set(id, [r]);
  }
  const out: Row[] = [];
  const points: Row[] = [];
  const fits = new Map<string, FitResult>();
  for (const [id, g0] of groups) {
    const head = {
      ...Object.fromEntries(by.map((k) => [k, g0[0][k] ?? null])),
      class: g0[0].class,
      intensityUnit: (g0[0].intensityUnit as string) ?? null,
    };
    const nonpos = g0.filter((r) => !((r.intensity as number) > 0)).length;
    const pos = g0.filter((r) => (r.intensity as number) > 0);
    const measured = pos.filter(isMeasured);
    // the projected sweeps below detection count only for a class measured at this site, and only below the lowest
    // intensity at which it was measured (the foot of the curve, where the response is small): a sweep not detected
    // between measured intensities is a failed measurement (e.g. an artifact), not a small response
    const lowestMeasured = Math.min(...measured.map((r) => r.intensity as number));
    const below = measured.length
      ? pos.filter((r) => !isMeasured(r) && belowDetection(r) && (r.intensity as number) < lowestMeasured)
      : [];
    const valueOf = (r: Row) => (isMeasured(r) ? (r[measure] as number) : (r[fitCol] as number));
    const g = [...measured, ...below];
    const notMeasured = pos.length - g.length;
    const counts = {
      excluded_not_measured: notMeasured,
      excluded_nonpositive_intensity: nonpos,
      below_detection_projected: below.length,
    };
    const notes: string[] = [];
    if (nonpos) notes.push(`${nonpos} sweep(s) with intensity <= 0 left out (no place on a log axis)`);
    if (notMeasured)
      notes.push(`${notMeasured} of ${pos.length} sweep(s) not measured (not detected or not resolved), left out`);
    if (below.length)
      notes.push(
        `${below.length} sweep(s) below the detection level entered with their least-squares amplitude ` +
          `(${fitCol}, unbiased near 0)`,
      );
    const measuredLevels = [...new Set(measured.map((r) => r.intensity as number))];
    const levels = [...new Set(g.map((r) => r.intensity as number))];
    const allLevels = [...new Set(pos.map((r) => r.intensity as number))];
    // a row without a curve: its status and why, never numbers
    const unfitted = (status: string, why: string): Row => ({
      ...head,
      threshold: null,
      i50: null,
      maximum: null,
      levels: levels.length,
      ...counts,
      status,
      reason: why + (notes.length ? ` (${notes.join('; ')})` : ''),
    });
    if (measuredLevels.length < minLevels) {
      out.push(
        unfitted(
          'not detected',
          `measured at ${measuredLevels.length} of ${allLevels.length} intensities; a curve needs ${minLevels}`,
        ),
      );
      continue;
    }
    const x = g.map((r) => Math.log10(r.intensity as number));
    const y = g.map(valueOf);
    for (const r of g)
      points.push({
        ...Object.fromEntries(by.map((k) => [k, r[k] ?? null])),
        class: r.class,
        intensity: r.intensity,
        response: valueOf(r),
        below_detection: !isMeasured(r),
      });
    const ymax = Math.max(...y),
      ymin = Math.min(...y);
    // below detection at lower intensities: the floor is 0 (nothing fires there)
    const lowest = Math.min(...levels);
    const floorFixed = pos.some((r) => !g.includes(r) && (r.intensity as number) < lowest);
    if (floorFixed) notes.push(`floor fixed at 0: not detected below ${lowest}`);
    // start x50 where the mean response first passes half range
    const sortedLv = [...levels].sort((a, b) => a - b);
    const meanAt = (I: number) => {
      const v = g.filter((r) => r.intensity === I).map(valueOf);
      return v.reduce((a, b) => a + b, 0) / v.length;
    };
    const lo0 = floorFixed ? 0 : ymin;
    let x50 = Math.log10(sortedLv[Math.floor(sortedLv.length / 2)]);
    for (const I of sortedLv)
      if (meanAt(I) >= lo0 + (ymax - lo0) / 2) {
        x50 = Math.log10(I);
        break;
      }
    const f = fitCurve({
      model: boltzmann,
      x,
      y,
      p0: [lo0, ymax, x50, 0.1],
      names: ['floor', 'maximum', 'log10_i50', 'slope'],
      fixed: [floorFixed, false, false, false],
      lower: [-Infinity, -Infinity, -Infinity, 0.005],
      upper: [Infinity, Infinity, Infinity, 5],
    });
    fits.set(id, f);
    const [lo, hi, xm, s] = f.params;
    const at = (frac: number) => Math.pow(10, xm + s * Math.log(frac / (1 - frac)));
    const i95 = at(0.95);
    // a singular information matrix: the data do not determine the curve's parameters (e.g. one point on the rise,
    // the floor fixed below it), so no I50 is printed
    if (f.status.some((q) => /not identifiable/.test(q))) {
      fits.delete(id);
      // the half-maximum lies between the first intensity at or above it and the tested intensity before that
      const above50 = sortedLv.filter((I) => meanAt(I) >= lo0 + (ymax - lo0) / 2);
      const below50 = [...allLevels].sort((a, b) => a - b).filter((I) => above50.length && I < above50[0]);
      out.push(
        unfitted(
          'not identifiable',
          'the curve is not determined by the data (singular information matrix)' +
            (above50.length
              ? `: the half-maximum lies ${below50.length ? `between ${below50[below50.length - 1]} and ` : 'at or below '}` +
                `${above50[0]}`
              : ''),
        ),
      );
      continue;
    }
    const st = f.status.filter((q) => q !== 'ok');
    // the half-maximum must lie within the tested intensities: outside them the curve is an extrapolation and
    // its I50, maximum and threshold are not measured numbers (a flagged row, not a plausible-looking value)
    const iLo = Math.min(...allLevels),
      iHi = Math.max(...allLevels);
    const i50 = Math.pow(10, xm);
    if (!(i50 >= iLo && i50 <= iHi)) {
      fits.delete(id);
      out.push(
        unfitted(
          'not identifiable',
          `the fitted half-maximum (${i50.toPrecision(3)}) lies outside the tested intensities ` +
            `${iLo}-${iHi}: the curve is not determined by the data`,
        ),
      );
      continue;
    }
    if (i95 > Math.max(...levels))
      st.push('95% of the maximum not reached at the highest intensity: the maximum is extrapolated');
    // informational notes (sweeps left out and counted, floor fixed at 0) go to the reason, so that a normal
    // curve with sub-threshold sweeps is 'ok' and only what may be wrong becomes a warning
    const ciOk = (k: number) => (f.ci[k] && Number.isFinite(f.ci[k][0]) && f.ci[k][1] > f.ci[k][0] ? f.ci[k] : null);
    out.push({
      ...head,
      threshold: at(recruitmentDefaults.thresholdFraction),
      i50,
      i50_ci95_low: ciOk(2) ? Math.pow(10, f.ci[2][0]) : null,
      i50_ci95_high: ciOk(2) ? Math.pow(10, f.ci[2][1]) : null,
      maximum: hi,
      maximum_ci95_low: ciOk(1)?.[0] ?? null,
      maximum_ci95_high: ciOk(1)?.[1] ?? null,
      floor: lo,
      i95,
      supramaximal: factor * i95,
      levels: levels.length,
      ...counts,
      status: st.length ? st.join('; ') : 'ok',
      reason: notes.length ? notes.join('; ') : null,
    });
  }
  return new RecruitmentResult(
    out,
    points,
    fits,
    [
      ...history,
      {
        verb: 'recruitment',
        options: {
          measure,
          by,
          model: 'Boltzmann sigmoid in log10 intensity',
          supramaximalFactor: factor,
          thresholdFraction: recruitmentDefaults.thresholdFraction,
          minLevels,
          rows: projection
            ? 'measured rows, and rows below detection of a window class measured at that site with their ' +
              'least-squares amplitude; not resolved left out and counted; floor fixed at 0 when not detected ' +
              'below the measured intensities'
            : 'measured rows only (not detected or not resolved left out and counted); floor fixed at 0 when not ' +
              'detected below the measured intensities',
          belowDetection: projection,
        },
        version: VERSION,
      },
    ],
    sources,
  );
}
