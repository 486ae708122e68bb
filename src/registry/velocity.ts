/** Registry entry: conduction velocity (single site, two sites, regression on distance), the recommended estimate. */
import type { SweepSet, Step } from '../sweeps/SweepSet';
import type { ComponentTable } from '../measure/table';
import { VelocityResult } from '../measure/table';
import {
  singleSiteVelocity,
  twoSiteVelocity,
  regressionVelocity,
  markRecommended,
  RECOMMENDED_VELOCITY,
  FIBRE_RANGE_M_S,
  NEGATIVE_UTILISATION_FRACTION,
  MIN_DELAY_SAMPLES,
  type VelocityRow,
} from '../analysis/velocity';
import { velocityFigure, summaryFigure } from '../plot/builders';
import { VERSION } from '../version';
import { flagsFrom, failed, hasSeries, finiteCount } from './shared';
import type { AnalysisEntry, Row } from './types';

/** Default velocity grouping: the conditions that vary and are not per-sweep or per-distance. */
export function velocityBy(set: SweepSet): string[] {
  return ['preparation', 'temperatureC', 'concentration', 'drug', 'epoch'].filter((k) =>
    set.conditions.some((c) => k in c),
  );
}

/** Every velocity estimate of a table (flagged rows included), the recommended estimator marked. */
export function velocityOf(t: ComponentTable, by: string[] = velocityBy(t.set)): VelocityResult {
  const rows: VelocityRow[] = markRecommended(
    [
      ...singleSiteVelocity(t.rows, by, t.resolved),
      ...twoSiteVelocity(t.set, t.rows, t.measures, t.resolved, by),
      ...regressionVelocity(t.rows, by, t.resolved, { set: t.set, measures: t.measures }),
    ],
    t.resolved.classes,
  );
  const step: Step = {
    verb: 'velocity',
    options: {
      by,
      methods: [
        'single-site',
        'two-site (latency definitions and cross-correlation)',
        'regression of latency on distance',
      ],
      recommended: JSON.parse(JSON.stringify(RECOMMENDED_VELOCITY)),
      flags: 'implausible values rejected with a reason; other rows kept',
    },
    version: VERSION,
  };
  return new VelocityResult(rows, by, t.set.sources, [...t.history, step]);
}

// the latency definition is named when the value itself was rejected (not-detected rows share one flag)
/**
 * A velocity group ("preparation=R1, temperatureC=37, concentration=0, drug=, epoch=", or in a bundle
 * "temperature_C=37") in words for a flag's `where`: "37 °C, concentration 0" (the preparation has its own column;
 * empty conditions are left out).
 */
export function groupWords(group: unknown): string | null {
  if (typeof group !== 'string' || !group) return null;
  const words: string[] = [];
  for (const m of group.matchAll(/([A-Za-z_][\w]*)=([^,]*)(?:, |$)/g)) {
    const [k, v] = [m[1], m[2].trim()];
    if (!v || k === 'preparation') continue;
    const deg = k === 'temperatureC' || k === 'temperature_C';
    words.push(deg ? `${v} °C` : k === 'distanceMm' || k === 'distance_mm' ? `${v} mm` : `${k} ${v}`);
  }
  return words.length ? words.join(', ') : null;
}

const velocityWhere = (r: Row) =>
  [
    r.method,
    r.status === 'implausible' ? r.basis : null,
    r.method === 'two-site' ? `${r.near_mm}-${r.far_mm} mm` : r.method === 'single-site' ? `${r.distance_mm} mm` : null,
    groupWords(r.group),
  ]
    .filter(Boolean)
    .join(', ');

type E = { method?: string; basis?: string };
const sayEstimator = (e?: E) =>
  e?.method === 'regression'
    ? `the regression of ${e.basis} latency on distance (with two distances, the two-site ${e.basis} velocity)`
    : e?.basis === 'xcorr'
      ? 'the two-site delay from cross-correlation of its own component'
      : `the ${e?.method} ${e?.basis} velocity`;

function velocitySentence(step: Step): { text: string } {
  const rec = step.options.recommended as { fastest?: E; unmyelinated?: E; other?: E } | undefined;
  const recommended = rec?.fastest
    ? ` The velocity reported was, for the fastest class, ${sayEstimator(rec.fastest)}; ` +
      `for unmyelinated classes, ${sayEstimator(rec.unmyelinated)}; for other classes, ${sayEstimator(rec.other)}.`
    : '';
  const u = 100 * NEGATIVE_UTILISATION_FRACTION,
    u2 = 200 * NEGATIVE_UTILISATION_FRACTION;
  return {
    text:
      'Conduction velocity was computed per class as distance divided by latency (single site), as the distance ' +
      'between two recording sites divided by the delay between them over pairs of sweeps recorded together (the ' +
      'delay from the same latency definition at both sites, or from the cross-correlation of the class component ' +
      'with parabolic sub-sample refinement), and as the inverse slope of latency regressed on distance, whose ' +
      'intercept estimates the utilisation time; each velocity is reported with its latency definition, and 95% ' +
      'confidence intervals are t-based over sweeps or from the regression (with no residual degree of freedom, ' +
      `only the precision interval below).${recommended} ` +
      'Implausible values were not reported as velocities but flagged with a reason, without discarding other ' +
      "classes, groups or estimators: a velocity outside any nerve fibre's range " +
      `(${FIBRE_RANGE_M_S[0]}-${FIBRE_RANGE_M_S[1]} m/s), a latency not increasing with distance, a utilisation ` +
      `time below -${u}% of the latency at the nearest site (-${u2}% for onset latencies; and below 0 beyond ` +
      `its 95% CI); pairs of sweeps with a delay not positive, shorter than ${MIN_DELAY_SAMPLES} sample intervals, ` +
      'or a cross-correlation maximum on the edge of its search range were left out and counted; a velocity ' +
      "outside its class's range at that temperature was kept and flagged. " +
      'The 95% confidence interval of a two-site or regression velocity is the wider of the one from the spread ' +
      "over pairs (or the residuals) and the one from each latency's own precision (a peak: the span where the " +
      'component stays within 1.96 sqrt(2) noise SDs of its maximum; a crossing: the noise divided by the slope ' +
      'there; for a class separated by the decomposition the noise includes the local fit residual); a velocity ' +
      "whose interval reaches outside its class's range is marked imprecise.",
  };
}

export const velocity: AnalysisEntry<VelocityResult> = {
  id: 'velocity',
  title: 'Conduction velocity',
  consumes: { series: ['distance'], conditions: ['distanceMm'] },
  stage: 'components',
  perPreparation(ctx) {
    const table = ctx.table!;
    // the distance series when present, else the temperature series (supramaximal, drug-free at each temperature),
    // else drug-free sweeps outside the series that vary the stimulus (submaximal sweeps move the latencies)
    const vt = hasSeries(table, 'distance')
      ? table.subset({ series: 'distance' })
      : hasSeries(table, 'temperature')
        ? table.subset({ series: 'temperature' })
        : table.subset(
            (r) =>
              !r.concentration && !['intensity', 'pulse-width', 'paired-pulse', 'train'].includes(String(r.series)),
          );
    try {
      const v = velocityOf(vt);
      ctx.flags.push(...flagsFrom('velocity', v.rows as unknown as Row[], ctx.prep, velocityWhere));
      // a recommended velocity from one distance is kept, and said to be a single-site estimate
      const single = new Map<string, VelocityRow>();
      for (const r of v.rows) if (r.recommended && r.recommended_note) single.set(`${r.class}|${r.group}`, r);
      for (const r of single.values())
        ctx.flags.push({
          preparation: (r.preparation as string | undefined) ?? ctx.prep,
          analysis: 'velocity',
          class: r.class,
          where: velocityWhere(r as unknown as Row),
          severity: 'warning',
          status: 'single site',
          reason: String(r.recommended_note),
          rows: 1,
        });
      return v;
    } catch (e) {
      failed(ctx.flags, ctx.notes, 'velocity', ctx.prep, e);
      return null;
    }
  },
  prepTables: (v) => ({ velocity: v.rows }),
  acrossPreparations(ctx) {
    if (!ctx.prepTable('velocity').length) return null;
    const options = { recommended: JSON.parse(JSON.stringify(RECOMMENDED_VELOCITY)) };
    return { steps: [{ verb: 'velocity', options, version: VERSION }] };
  },
  tables: [{ name: 'velocity', title: 'Conduction velocity', always: true, labels: ['group'] }],
  figures: [
    {
      rank: 20,
      make(study) {
        const dist = study.tables.components.filter((r) => r.series === 'distance');
        return dist.length ? [velocityFigure(dist, 'centroid')] : [];
      },
    },
    {
      rank: 50,
      make(study) {
        // the recommended estimate per class (the one the Q10 uses), only rows with a velocity
        const v = study.tables.velocity.filter((r) => r.recommended === true && typeof r.velocity_m_s === 'number');
        return v.length ? [summaryFigure(v, 'velocity_m_s')] : [];
      },
    },
  ],
  methods: { velocity: velocitySentence },
  computed: (t) => finiteCount(t.velocity, 'velocity_m_s'),
  api: ['ComponentTable.velocity', 'velocityOf'],
  resultKey: 'velocity',
};
