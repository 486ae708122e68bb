/**
 * Temperature dependence: Q10 from the log-linear fit ln r = a + (ln Q10 / 10) T over
 * all temperatures, and the Arrhenius activation energy from ln r = ln A - Ea / (R T)
 * (T in kelvin), both with t-based 95% CIs. Across preparations each has its own
 * intercept and the slope is shared (preparation-centred regression), so animals are
 * not treated as replicates of each other's level.
 * References: S. Arrhenius, Z. Phys. Chem. 4 (1889) 226-248; Q10 definition: common practice, no source.
 */
import type { ConditionValue, Step, Source } from '../sweeps/SweepSet';
import { Result } from '../notebook/result';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';
import { linearFit } from './stats';
import { tQuantile } from '../fit/dist';
import { R_GAS } from '../fit/models';
import { AnalysisError } from '../errors';
import { RECOMMENDED_VELOCITY } from './velocity';

export interface TemperatureFit {
  /** 'ok', or why the fit or its interval cannot be trusted (then the interval is null) */
  status: string;
  q10: number;
  /** null when the data cannot support an interval (exact or flat data, too few points) */
  q10Ci95: [number, number] | null;
  activationEnergyKJ: number;
  activationEnergyCi95KJ: [number, number] | null;
  n: number;
  preparations: number;
  temperatures: number[];
  df: number;
  /** points left out (value not finite or not positive) */
  excluded: number;
}

/**
 * Fit Q10 and Ea from (temperature C, rate, preparation) points. Points whose value is not finite
 * or not positive are left out and counted. Intervals are given only when the residuals can
 * estimate them: with zero residual degrees of freedom, or residuals at rounding level (exact or
 * flat data), the interval is null and the status says why.
 * @throws AnalysisError when fewer than two temperatures remain
 */
export function fitTemperature(
  points: readonly { temperatureC: number; value: number; preparation?: string | number | null }[],
): TemperatureFit {
  const finite = points.filter((p) => Number.isFinite(p.temperatureC));
  const pts = finite.filter((p) => Number.isFinite(p.value) && p.value > 0);
  const excluded = points.length - pts.length;
  const temps = [...new Set(pts.map((p) => p.temperatureC))].sort((a, b) => a - b);
  if (temps.length < 2) {
    throw new AnalysisError(
      `temperature fit needs positive values at two or more temperatures; got ${temps.join(', ') || 'none'}${excluded ? ` (${excluded} point(s) left out: not a positive number)` : ''}`,
    );
  }
  const preps = [...new Set(pts.map((p) => String(p.preparation ?? '')))];
  const centre = (xs: number[], groups: string[]) => {
    const m = new Map<string, number[]>();
    xs.forEach((x, i) => (m.get(groups[i]) ?? m.set(groups[i], []).get(groups[i])!).push(x));
    const means = new Map([...m].map(([k, v]) => [k, v.reduce((a, b) => a + b, 0) / v.length]));
    return xs.map((x, i) => x - means.get(groups[i])!);
  };
  const g = pts.map((p) => String(p.preparation ?? ''));
  const lnr = centre(
    pts.map((p) => Math.log(p.value)),
    g,
  );
  const T = centre(
    pts.map((p) => p.temperatureC),
    g,
  );
  const invT = centre(
    pts.map((p) => 1 / (p.temperatureC + 273.15)),
    g,
  );
  // centred regression: one intercept per preparation is absorbed; df = n - preparations - 1
  const df = pts.length - preps.length - 1;
  const syy = lnr.reduce((a, v) => a + v * v, 0);
  const fit = (x: number[]) => {
    const f = linearFit(x, lnr);
    const rss = lnr.reduce((acc, y, i) => acc + (y - f.slope * x[i] - f.intercept) ** 2, 0);
    const sxx = x.reduce((a, v) => a + v * v, 0) - x.reduce((a, v) => a + v, 0) ** 2 / x.length;
    return { slope: f.slope, se: df > 0 ? Math.sqrt(rss / df / sxx) : NaN, rss };
  };
  const a = fit(T);
  const b = fit(invT);
  const notes: string[] = [];
  // residuals at the level of rounding (1e-12 of the spread of ln rate, or of ln rate itself when flat)
  const scale = Math.max(syy, pts.reduce((s, p) => s + Math.log(p.value) ** 2, 0) * 1e-6, 1e-300);
  if (syy <= 1e-24 * Math.max(1, pts.length))
    notes.push('no temperature dependence: the values are equal at every temperature, so Q10 is 1 with no interval');
  else if (a.rss <= 1e-20 * scale)
    notes.push(
      'the points lie exactly on the fitted line (noise-free data): no interval can be estimated from the residuals',
    );
  if (df < 1)
    notes.push(
      `${pts.length} points for ${preps.length} preparation(s) and ${temps.length} temperatures leave no residual degree of freedom: no interval`,
    );
  if (excluded) notes.push(`${excluded} point(s) left out (not a positive number)`);
  const noInterval = notes.some((n) => /no interval/.test(n));
  const t1 = df > 0 ? tQuantile(0.975, df) : NaN;
  return {
    status: notes.length ? notes.join('; ') : 'ok',
    q10: Math.exp(10 * a.slope),
    q10Ci95: noInterval ? null : [Math.exp(10 * (a.slope - t1 * a.se)), Math.exp(10 * (a.slope + t1 * a.se))],
    activationEnergyKJ: (-b.slope * R_GAS) / 1000,
    activationEnergyCi95KJ: noInterval
      ? null
      : [(-(b.slope + t1 * b.se) * R_GAS) / 1000, (-(b.slope - t1 * b.se) * R_GAS) / 1000],
    n: pts.length,
    preparations: preps.length,
    temperatures: temps,
    df,
    excluded,
  };
}

/** A temperature-table row from a fit. */
export function temperatureRow(
  cls: string,
  measure: string,
  f: TemperatureFit,
  extra: Record<string, ConditionValue> = {},
): Record<string, ConditionValue> {
  return {
    class: cls,
    ...extra,
    measure,
    q10: f.q10,
    q10_ci95_low: f.q10Ci95?.[0] ?? null,
    q10_ci95_high: f.q10Ci95?.[1] ?? null,
    ea_kJ_mol: f.activationEnergyKJ,
    ea_ci95_low: f.activationEnergyCi95KJ?.[0] ?? null,
    ea_ci95_high: f.activationEnergyCi95KJ?.[1] ?? null,
    preparations: f.preparations,
    temperatures: f.temperatures.join(', '),
    n: f.n,
    status: f.status,
  };
}

import type { Row } from '../registry/types';

export class TemperatureResult extends Result {
  constructor(
    readonly rows: Row[],
    readonly points: Row[],
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
  ) {
    super();
  }
  tables(): Record<string, readonly object[]> {
    return { temperature: this.rows, temperature_points: this.points };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as Record<string, unknown>[]);
  }
  toHTML(): string {
    return tableHtml(this.rows, {
      caption: 'Temperature dependence per class (Q10 and Arrhenius activation energy, 95% CI)',
    });
  }
  toString(): string {
    return (
      'TemperatureResult\n' +
      tableText(this.rows, {
        columns: [
          'class',
          'measure',
          'q10',
          'q10_ci95_low',
          'q10_ci95_high',
          'ea_kJ_mol',
          'preparations',
          'temperatures',
        ],
      })
    );
  }
}

/**
 * Temperature analysis of component rows: per preparation, site (unless `poolSites`), class and
 * temperature the mean of `measure` (default the centroid-based single-site velocity) over the
 * measured rows, then Q10 and Ea per class (and site) with preparation-specific intercepts.
 * Rows not measured (`detected` false, or a `status` other than 'measured'/'ok'/'outside class range'/'imprecise',
 * or no number) are left out and counted; fewer than two temperatures left gives a row with status "not detected".
 */
export function temperatureAnalysis(
  rows: readonly Row[],
  options: { measure?: string; invert?: boolean; poolSites?: boolean; label?: string } = {},
  history: readonly Step[] = [],
  sources: readonly Source[] = [],
): TemperatureResult {
  const measure = options.measure ?? 'centroid_velocity_m_s';
  const label = options.label ?? (options.invert ? `1/${measure}` : measure);
  const withT = rows.filter((r) => typeof r.temperatureC === 'number');
  const ok = (r: Row) =>
    typeof r[measure] === 'number' &&
    Number.isFinite(r[measure] as number) &&
    r.detected !== false &&
    (r.status === undefined ||
      r.status === null ||
      r.status === 'measured' ||
      r.status === 'ok' ||
      r.status === 'outside class range' ||
      // an imprecise velocity is measured: its interval is wide, its value is not wrong (the fit's own interval
      // comes from the scatter of the temperatures' values)
      r.status === 'imprecise');
  const siteKey = (r: Row) => (options.poolSites ? '' : String(r.distanceMm ?? r.distance_mm ?? ''));
  const hasSites = !options.poolSites && withT.some((r) => r.distanceMm !== undefined || r.distance_mm !== undefined);
  const out: Row[] = [];
  const points: Row[] = [];
  const ids = [...new Set(withT.map((r) => `${r.class}\u0000${siteKey(r)}`))];
  for (const id of ids) {
    const [cls, site] = id.split('\u0000');
    const all = withT.filter((r) => String(r.class) === cls && siteKey(r) === site);
    const use = all.filter(ok);
    const m = new Map<string, number[]>();
    for (const r of use) {
      const k = `${r.preparation ?? ''}|${r.temperatureC}`;
      const v = options.invert ? 1 / (r[measure] as number) : (r[measure] as number);
      (m.get(k) ?? m.set(k, []).get(k)!).push(v);
    }
    const pts = [...m].map(([k, v]) => {
      const [prep, T] = k.split('|');
      return { preparation: prep, temperatureC: Number(T), value: v.reduce((a, b) => a + b, 0) / v.length };
    });
    const extra: Row = hasSites ? { distanceMm: site === '' ? null : Number(site) } : {};
    for (const p of pts) points.push({ class: cls, ...extra, ...p, measure: label });
    const left = all.length - use.length;
    const nT = new Set(pts.map((p) => p.temperatureC)).size;
    if (nT < 2) {
      out.push({
        class: cls,
        ...extra,
        measure: label,
        q10: null,
        n: pts.length,
        excluded_not_measured: left,
        status: 'not detected',
        reason: `measured at ${nT} temperature(s) (${left} of ${all.length} rows not measured); a Q10 needs two or more`,
      });
      continue;
    }
    try {
      const f = fitTemperature(pts);
      out.push({
        ...temperatureRow(cls, label, f, extra),
        excluded_not_measured: left,
        ...(left
          ? {
              status:
                f.status === 'ok'
                  ? `${left} of ${all.length} rows not measured, left out`
                  : `${f.status}; ${left} of ${all.length} rows not measured, left out`,
            }
          : {}),
      });
    } catch (e) {
      out.push({
        class: cls,
        ...extra,
        measure: label,
        q10: null,
        status: 'not detected',
        reason: (e as Error).message,
      });
    }
  }
  return new TemperatureResult(
    out,
    points,
    [
      ...history,
      {
        verb: 'temperature',
        options: {
          measure: label,
          invert: !!options.invert,
          poolSites: !!options.poolSites,
          model: 'log-linear (Q10) and Arrhenius, preparation-specific intercepts',
        },
        version: VERSION,
      },
    ],
    sources,
  );
}

/**
 * Q10 of conduction velocity from velocity rows grouped by preparation and temperature: per class,
 * the rows marked `recommended` (markRecommended; rows without the mark: the fastest-class
 * estimator, regression of peak latency); flagged rows left out and counted.
 */
export function velocityTemperature(
  velocityRows: readonly Row[],
  history: readonly Step[] = [],
  sources: readonly Source[] = [],
): TemperatureResult {
  const marked = velocityRows.some((r) => r.recommended === true);
  const fallback = RECOMMENDED_VELOCITY.fastest;
  const use = velocityRows.filter((r) =>
    marked ? r.recommended === true : r.method === fallback.method && r.basis === fallback.basis,
  );
  const rows: Row[] = [],
    points: Row[] = [];
  let last: TemperatureResult | null = null;
  for (const cls of [...new Set(velocityRows.map((r) => String(r.class)))]) {
    const mine = use
      .filter((r) => String(r.class) === cls)
      .map((r): Row => ({ ...r, velocity: r.velocity_m_s, detected: r.velocity_m_s !== null }));
    const e = mine[0] ?? { method: fallback.method, basis: fallback.basis };
    const res = temperatureAnalysis(
      mine.length ? mine : [{ class: cls, temperatureC: null }],
      { measure: 'velocity', poolSites: true, label: `${e.method} ${e.basis} velocity` },
      history,
      sources,
    );
    if (!mine.length)
      rows.push({
        class: cls,
        measure: 'velocity',
        q10: null,
        status: 'not detected',
        reason: `no ${e.method} ${e.basis} velocity of ${cls} at any temperature`,
      });
    rows.push(...res.rows);
    points.push(...res.points);
    last = res;
  }
  const step = last?.history[last.history.length - 1];
  return new TemperatureResult(
    rows,
    points,
    [
      ...history,
      ...(step
        ? [
            {
              ...step,
              options: {
                ...step.options,
                measure: 'recommended velocity per class',
                estimators: [...new Set(rows.map((r) => String(r.measure)))],
              },
            },
          ]
        : []),
    ],
    sources,
  );
}
