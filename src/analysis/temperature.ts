/**
 * Temperature dependence: Q10 from the log-linear fit ln r = a + (ln Q10 / 10) T over
 * all temperatures, and the Arrhenius activation energy from ln r = ln A - Ea / (R T)
 * (T in kelvin), both with t-based 95% CIs. Across preparations each has its own
 * intercept and the slope is shared (preparation-centred regression), so animals are
 * not treated as replicates of each other's level.
 * References: S. Arrhenius, Z. Phys. Chem. 4 (1889) 226-248; Q10 definition: common practice, no source.
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { Result } from '../report/result';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';
import { linearFit } from './stats';
import { tQuantile } from '../fit/dist';
import { R_GAS } from '../fit/models';
import { AnalysisError } from '../errors';

export interface TemperatureFit {
  q10: number;
  q10Ci95: [number, number];
  activationEnergyKJ: number;
  activationEnergyCi95KJ: [number, number];
  n: number;
  preparations: number;
  temperatures: number[];
  df: number;
}

/** Fit Q10 and Ea from (temperature C, rate, preparation) points; rates must be > 0. */
export function fitTemperature(points: readonly { temperatureC: number; value: number; preparation?: string | number | null }[]): TemperatureFit {
  const pts = points.filter((p) => Number.isFinite(p.value) && Number.isFinite(p.temperatureC));
  for (const p of pts) if (!(p.value > 0)) throw new AnalysisError(`temperature fit needs positive values; got ${p.value} at ${p.temperatureC} C`);
  const temps = [...new Set(pts.map((p) => p.temperatureC))].sort((a, b) => a - b);
  if (temps.length < 2) throw new AnalysisError(`temperature fit needs at least two temperatures; got ${temps.join(', ') || 'none'}`);
  const preps = [...new Set(pts.map((p) => String(p.preparation ?? '')))];
  const centre = (xs: number[], groups: string[]) => {
    const m = new Map<string, number[]>();
    xs.forEach((x, i) => (m.get(groups[i]) ?? m.set(groups[i], []).get(groups[i])!).push(x));
    const means = new Map([...m].map(([k, v]) => [k, v.reduce((a, b) => a + b, 0) / v.length]));
    return xs.map((x, i) => x - means.get(groups[i])!);
  };
  const g = pts.map((p) => String(p.preparation ?? ''));
  const lnr = centre(pts.map((p) => Math.log(p.value)), g);
  const T = centre(pts.map((p) => p.temperatureC), g);
  const invT = centre(pts.map((p) => 1 / (p.temperatureC + 273.15)), g);
  const fit = (x: number[]) => {
    const f = linearFit(x, lnr);
    // centred regression: one intercept per preparation is absorbed; df = n - preparations - 1
    const df = pts.length - preps.length - 1;
    if (df < 1) throw new AnalysisError(`temperature fit has ${pts.length} points for ${preps.length} preparations; need more points than preparations + 1`);
    const rss = lnr.reduce((acc, y, i) => acc + (y - f.slope * x[i] - f.intercept) ** 2, 0);
    const sxx = x.reduce((a, v) => a + v * v, 0) - (x.reduce((a, v) => a + v, 0) ** 2) / x.length;
    const se = Math.sqrt(rss / df / sxx);
    return { slope: f.slope, se, df };
  };
  const a = fit(T);
  const b = fit(invT);
  const t1 = tQuantile(0.975, a.df);
  const t2 = tQuantile(0.975, b.df);
  return {
    q10: Math.exp(10 * a.slope),
    q10Ci95: [Math.exp(10 * (a.slope - t1 * a.se)), Math.exp(10 * (a.slope + t1 * a.se))],
    activationEnergyKJ: (-b.slope * R_GAS) / 1000,
    activationEnergyCi95KJ: [(-(b.slope + t2 * b.se) * R_GAS) / 1000, (-(b.slope - t2 * b.se) * R_GAS) / 1000],
    n: pts.length, preparations: preps.length, temperatures: temps, df: a.df,
  };
}

type Row = Record<string, ConditionValue>;

export class TemperatureResult extends Result {
  constructor(readonly rows: Row[], readonly points: Row[], readonly history: readonly Step[], readonly sources: readonly Source[] = []) {
    super();
  }
  tables(): Record<string, readonly object[]> {
    return { temperature: this.rows, temperature_points: this.points };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as Record<string, unknown>[]);
  }
  toHTML(): string {
    return tableHtml(this.rows, { caption: 'Temperature dependence per class (Q10 and Arrhenius activation energy, 95% CI)' });
  }
  toString(): string {
    return 'TemperatureResult\n' + tableText(this.rows, { columns: ['class', 'measure', 'q10', 'q10_ci95_low', 'q10_ci95_high', 'ea_kJ_mol', 'preparations', 'temperatures'] });
  }
}

/**
 * Temperature analysis of component rows: per preparation, class and temperature
 * the mean of `measure` (default the centroid-based single-site velocity), then
 * Q10 and Ea per class with preparation-specific intercepts.
 */
export function temperatureAnalysis(rows: readonly Row[], options: { measure?: string; invert?: boolean } = {}, history: readonly Step[] = [], sources: readonly Source[] = []): TemperatureResult {
  const measure = options.measure ?? 'centroid_velocity_m_s';
  const use = rows.filter((r) => typeof r.temperatureC === 'number' && typeof r[measure] === 'number' && r.detected !== false);
  const classes = [...new Set(use.map((r) => String(r.class)))];
  const out: Row[] = [];
  const points: Row[] = [];
  for (const cls of classes) {
    const m = new Map<string, number[]>();
    for (const r of use.filter((q) => q.class === cls)) {
      const id = `${r.preparation ?? ''}|${r.temperatureC}`;
      const v = options.invert ? 1 / (r[measure] as number) : (r[measure] as number);
      (m.get(id) ?? m.set(id, []).get(id)!).push(v);
    }
    const pts = [...m].map(([id, v]) => {
      const [prep, T] = id.split('|');
      return { preparation: prep, temperatureC: Number(T), value: v.reduce((a, b) => a + b, 0) / v.length };
    });
    for (const p of pts) points.push({ class: cls, ...p, measure });
    if (new Set(pts.map((p) => p.temperatureC)).size < 2) continue;
    try {
      const f = fitTemperature(pts);
      out.push({ class: cls, measure: options.invert ? `1/${measure}` : measure, q10: f.q10, q10_ci95_low: f.q10Ci95[0], q10_ci95_high: f.q10Ci95[1], ea_kJ_mol: f.activationEnergyKJ, ea_ci95_low: f.activationEnergyCi95KJ[0], ea_ci95_high: f.activationEnergyCi95KJ[1], preparations: f.preparations, temperatures: f.temperatures.join(', '), n: f.n, status: 'ok' });
    } catch (e) {
      out.push({ class: cls, measure, status: (e as Error).message });
    }
  }
  return new TemperatureResult(out, points, [...history, { verb: 'temperature', options: { measure, invert: !!options.invert, model: 'log-linear (Q10) and Arrhenius, preparation-specific intercepts' }, version: VERSION }], sources);
}
