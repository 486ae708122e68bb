/** Registry entry: temperature dependence (Q10 and Arrhenius activation energy, preparation-specific intercepts). */
import type { Step } from '../sweeps/SweepSet';
import type { ComponentTable } from '../measure/table';
import type { PipelineOptions } from '../report/pipeline';
import {
  temperatureAnalysis,
  velocityTemperature,
  fitTemperature,
  temperatureRow,
  type TemperatureResult,
} from '../analysis/temperature';
import { RECOMMENDED_VELOCITY } from '../analysis/velocity';
import { temperatureFigure } from '../plot/builders';
import { VERSION } from '../version';
import { REFERENCES } from './references';
import { flagsFrom, failed, hasSeries, finiteCount, say } from './shared';
import { velocityOf } from './velocity';
import type { AnalysisEntry, Row } from './types';

/**
 * Q10: of the recommended velocity estimator at each temperature when every preparation and
 * temperature has two or more distances; otherwise of the single-site velocity of the same
 * latency definition; or of `temperature.measure` when given.
 */
export function temperatureOf(tt: ComponentTable, o: PipelineOptions): TemperatureResult {
  if (o.temperature?.measure)
    return temperatureAnalysis(
      tt.rows,
      { measure: o.temperature.measure, poolSites: o.poolSites },
      tt.history,
      tt.set.sources,
    );
  const keyOf = (r: Row) => `${r.preparation ?? ''}|${r.temperatureC}`;
  const dists = new Map<string, Set<unknown>>();
  for (const r of tt.rows) (dists.get(keyOf(r)) ?? dists.set(keyOf(r), new Set()).get(keyOf(r))!).add(r.distance_mm);
  if (dists.size > 0 && [...dists.values()].every((s) => s.size >= 2)) {
    const by = ['preparation', 'temperatureC'].filter((k) => tt.set.conditions.some((c) => k in c));
    return velocityTemperature(velocityOf(tt, by).rows as unknown as Row[], tt.history, tt.set.sources);
  }
  // one distance: the single-site velocity of the fastest class's recommended latency (peak)
  return temperatureAnalysis(
    tt.rows,
    { measure: `${RECOMMENDED_VELOCITY.fastest.basis}_velocity_m_s`, poolSites: o.poolSites },
    tt.history,
    tt.set.sources,
  );
}

/** How a velocity measure was obtained ('regression peak velocity' -> 'the inverse slope of peak latency ...'). */
function velocityHow(measure: string): string | null {
  const m = /^(single-site|two-site|regression) (\w+) velocity$/.exec(measure);
  if (!m) return measure === 'regression_velocity_m_s' ? 'the inverse slope of centroid latency on distance' : null;
  const [, method, basis] = m;
  if (method === 'regression') return `the inverse slope of ${basis} latency on distance`;
  if (method === 'two-site')
    return basis === 'xcorr' ? 'the two-site cross-correlation delay' : `the two-site delay of ${basis} latency`;
  return `the ${basis} latency at one site`;
}

/** The quantity of a Q10 in words: a velocity with how it was obtained, or the column named. */
export function measureWords(measure: string): string {
  const how = velocityHow(measure);
  return how ? `conduction velocity (from ${how})` : measure.replace(/_/g, ' ');
}

function temperatureSentence(step: Step) {
  const o = step.options as Record<string, unknown>;
  const byClass = (o.byClass ?? {}) as Record<string, string>;
  const distinct = [...new Set(Object.values(byClass))];
  let what: string;
  if (distinct.length > 1) {
    const each = Object.entries(byClass).map(([c, m]) => `${c}: from ${velocityHow(m) ?? m.replace(/_/g, ' ')}`);
    what = `each class's conduction velocity (${each.join('; ')})`;
  } else what = measureWords(String(distinct[0] ?? o.measure));
  return {
    text:
      `Temperature dependence was summarised from the measured values only: the natural logarithm of ${what} at ` +
      'each temperature was regressed on temperature, giving Q10 = exp(10 × slope), and on the inverse absolute ' +
      'temperature, giving the Arrhenius activation energy Ea = −R × slope (Arrhenius 1889); both regressions had ' +
      'preparation-specific intercepts, and each estimate has a t-based 95% confidence interval (none when the ' +
      'residuals cannot estimate one: flat or exact data, or no residual degree of freedom).',
    refs: [REFERENCES.arrhenius],
  };
}

/** The across-preparation temperature rows: one fit per class (and site) and measure over every preparation. */
function pooledTemperature(tp: Row[], perPrep: { preparation: string; rows: Row[] }[], flags: Row[]): Row[] {
  const temperature: Row[] = [];
  const curveKey = (r: Row) => `${r.class}\u0000${r.distanceMm ?? ''}\u0000${r.measure}`;
  for (const id of [...new Set(tp.map(curveKey))]) {
    const mine = tp.filter((r) => curveKey(r) === id);
    const r0 = mine[0];
    const site: Row = r0.distanceMm !== undefined ? { distanceMm: r0.distanceMm } : {};
    const pts = mine.map((r) => ({
      preparation: r.preparation as string,
      temperatureC: r.temperatureC as number,
      value: r.value as number,
    }));
    try {
      temperature.push(temperatureRow(String(r0.class), String(r0.measure), fitTemperature(pts), site));
    } catch (e) {
      temperature.push({
        class: String(r0.class),
        ...site,
        measure: String(r0.measure),
        q10: null,
        status: 'not detected',
        reason: (e as Error).message,
      });
    }
  }
  // classes with a per-preparation row but no points (not measured at two temperatures anywhere)
  for (const p of perPrep)
    for (const r of p.rows) {
      if (
        r.status === 'not detected' &&
        !temperature.some((q) => q.class === r.class && (q.distanceMm ?? null) === (r.distanceMm ?? null))
      )
        temperature.push({ ...r, preparation: p.preparation });
    }
  for (const r of temperature) {
    if (
      r.status !== 'ok' &&
      !flags.some(
        (f) =>
          f.analysis === 'temperature' &&
          f.class === r.class &&
          f.preparation === (r.preparation ?? null) &&
          f.reason === (r.reason ?? r.status),
      )
    ) {
      flags.push({
        preparation: (r.preparation as string) ?? null,
        analysis: 'temperature',
        class: String(r.class),
        where: String(r.measure ?? ''),
        severity: r.status === 'not detected' ? 'not measured' : 'warning',
        status: String(r.status),
        reason: String(r.reason ?? r.status),
      });
    }
  }
  return temperature;
}

export const temperature: AnalysisEntry<TemperatureResult> = {
  id: 'temperature',
  title: 'Temperature dependence',
  consumes: { series: ['temperature'], conditions: ['temperatureC'], option: 'temperature' },
  stage: 'components',
  perPreparation(ctx) {
    const table = ctx.table!;
    const tt = hasSeries(table, 'temperature')
      ? table.subset({ series: 'temperature' })
      : table.subset((r) => !r.concentration);
    if (new Set(tt.rows.map((r) => r.temperatureC)).size < 2) {
      ctx.notes.push(`${say(ctx.prep)}temperature: fewer than 2 temperatures; no Q10`);
      return null;
    }
    try {
      const t = temperatureOf(tt, ctx.options);
      ctx.flags.push(...flagsFrom('temperature', t.rows, ctx.prep, (r) => String(r.measure ?? '')));
      return t;
    } catch (e) {
      failed(ctx.flags, ctx.notes, 'temperature', ctx.prep, e);
      return null;
    }
  },
  prepTables: (t, ctx) => ({
    temperature_points: t.points.map((p) => ({ ...p, preparation: p.preparation || (ctx.prep ?? '') })),
    // per-preparation rows (Q10 within this preparation; flagged rows included): read by the pooled fit
    temperature_per_preparation: t.rows,
  }),
  acrossPreparations(ctx) {
    const tp = ctx.prepTable('temperature_points');
    const rows = pooledTemperature(tp, ctx.perPreparation('temperature_per_preparation'), ctx.flags as Row[]);
    const steps: Step[] = rows.length
      ? [
          {
            verb: 'temperature',
            options: {
              measure: rows[0].measure,
              byClass: Object.fromEntries(rows.map((r) => [String(r.class), String(r.measure)])),
              model: 'log-linear (Q10) and Arrhenius, preparation-specific intercepts',
            },
            version: VERSION,
          },
        ]
      : [];
    return { tables: { temperature: rows, temperature_points: tp }, steps };
  },
  tables: [
    {
      name: 'temperature',
      title: 'Temperature dependence (Q10, activation energy)',
      always: true,
      columns: { ea_ci95_low: 'ea_ci95_low_kJ_mol', ea_ci95_high: 'ea_ci95_high_kJ_mol' },
    },
    { name: 'temperature_points', title: 'Temperature points', always: true, bulk: true },
  ],
  figures: [
    {
      rank: 40,
      make(study) {
        const t = study.tables;
        if (!t.temperature_points.length) return [];
        return [
          temperatureFigure(t.temperature_points, t.temperature, 'q10'),
          temperatureFigure(t.temperature_points, t.temperature, 'arrhenius'),
        ];
      },
    },
  ],
  methods: { temperature: temperatureSentence },
  computed: (t) => finiteCount(t.temperature, 'q10'),
  api: ['ComponentTable.temperature'],
  resultKey: 'temperature',
};
