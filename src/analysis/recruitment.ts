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
import { Result } from '../report/result';
import { fitCurve, type FitResult } from '../fit/lm';
import { boltzmann } from '../fit/models';
import { AnalysisError } from '../errors';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';

type Row = Record<string, ConditionValue>;
export const recruitmentDefaults = { supramaximalFactor: 1.3, thresholdFraction: 0.05 };

export class RecruitmentResult extends Result {
  constructor(readonly rows: Row[], readonly points: Row[], readonly fits: Map<string, FitResult>, readonly history: readonly Step[], readonly sources: readonly Source[] = []) {
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
    return 'RecruitmentResult\n' + tableText(this.rows, { columns: ['preparation', 'class', 'threshold', 'i50', 'i50_ci95_low', 'i50_ci95_high', 'maximum', 'supramaximal', 'status'] });
  }
}

export function recruitment(rows: readonly Row[], units: string, options: { measure?: string; by?: string[]; supramaximalFactor?: number } = {}, history: readonly Step[] = [], sources: readonly Source[] = []): RecruitmentResult {
  const measure = options.measure ?? `amplitude_${units}`;
  // one curve per pulse width when the rows hold more than one
  const by = options.by ?? ['preparation', 'distanceMm', 'temperatureC', 'concentration', 'pulseWidthMs'].filter((k) => (k === 'pulseWidthMs' ? new Set(rows.map((r) => r[k])).size > 1 : rows.some((r) => k in r)));
  const factor = options.supramaximalFactor ?? recruitmentDefaults.supramaximalFactor;
  const use = rows.filter((r) => typeof r.intensity === 'number' && (r.intensity as number) > 0 && typeof r[measure] === 'number');
  if (!use.length) throw new AnalysisError(`recruitment needs rows with a positive numeric "intensity" and "${measure}"`);
  const groups = new Map<string, Row[]>();
  for (const r of use) {
    const id = by.map((k) => r[k]).join('|') + '|' + r.class;
    const g = groups.get(id);
    if (g) g.push(r); else groups.set(id, [r]);
  }
  const out: Row[] = [];
  const points: Row[] = [];
  const fits = new Map<string, FitResult>();
  for (const [id, g] of groups) {
    const levels = [...new Set(g.map((r) => r.intensity as number))];
    if (levels.length < 4) continue;
    const x = g.map((r) => Math.log10(r.intensity as number));
    const y = g.map((r) => r[measure] as number);
    for (const r of g) points.push({ ...Object.fromEntries(by.map((k) => [k, r[k] ?? null])), class: r.class, intensity: r.intensity, response: r[measure] });
    const ymax = Math.max(...y), ymin = Math.min(...y);
    // start x50 where the mean response first passes half range
    const sortedLv = [...levels].sort((a, b) => a - b);
    const meanAt = (I: number) => { const v = g.filter((r) => r.intensity === I).map((r) => r[measure] as number); return v.reduce((a, b) => a + b, 0) / v.length; };
    let x50 = Math.log10(sortedLv[Math.floor(sortedLv.length / 2)]);
    for (const I of sortedLv) if (meanAt(I) >= ymin + (ymax - ymin) / 2) { x50 = Math.log10(I); break; }
    const f = fitCurve({ model: boltzmann, x, y, p0: [ymin, ymax, x50, 0.1], names: ['floor', 'maximum', 'log10_i50', 'slope'], lower: [-Infinity, -Infinity, -Infinity, 0.005], upper: [Infinity, Infinity, Infinity, 5] });
    fits.set(id, f);
    const [lo, hi, xm, s] = f.params;
    const at = (frac: number) => Math.pow(10, xm + s * Math.log(frac / (1 - frac)));
    const i95 = at(0.95);
    const st = f.status.filter((q) => q !== 'ok');
    if (i95 > Math.max(...levels)) st.push('95% of the maximum not reached at the highest intensity: the maximum is extrapolated');
    out.push({
      ...Object.fromEntries(by.map((k) => [k, g[0][k] ?? null])), class: g[0].class, intensityUnit: (g[0].intensityUnit as string) ?? null,
      threshold: at(recruitmentDefaults.thresholdFraction), i50: Math.pow(10, xm), i50_ci95_low: Math.pow(10, f.ci[2][0]), i50_ci95_high: Math.pow(10, f.ci[2][1]),
      maximum: hi, maximum_ci95_low: f.ci[1][0], maximum_ci95_high: f.ci[1][1], floor: lo, i95, supramaximal: factor * i95,
      levels: levels.length, status: st.length ? st.join('; ') : 'ok',
    });
  }
  return new RecruitmentResult(out, points, fits, [...history, { verb: 'recruitment', options: { measure, by, model: 'Boltzmann sigmoid in log10 intensity', supramaximalFactor: factor, thresholdFraction: recruitmentDefaults.thresholdFraction }, version: VERSION }], sources);
}
