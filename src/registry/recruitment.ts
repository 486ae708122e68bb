/** Registry entry: thresholds and recruitment curves (Boltzmann fit in log10 intensity) per class. */
import type { ConditionValue, Step } from '../sweeps/SweepSet';
import { recruitmentDefaults, type RecruitmentResult } from '../analysis/recruitment';
import { recruitmentFigure } from '../plot/builders';
import { VERSION } from '../version';
import { REFERENCES } from './references';
import { flagsFrom, failed, hasSeries, finiteCount, say, measureWords } from './shared';
import type { AnalysisEntry, Row } from './types';

export interface RecruitmentOutput {
  thresholds: Record<string, ConditionValue>[];
  recruitment: RecruitmentResult | null;
}

/**
 * Thresholds and recruitment must tell one story: a fitted curve whose class the threshold table
 * says was "not detected at any intensity" (in half the sweeps of a level) gets that in its status.
 */
function agreeWithThresholds(rows: Row[], thresholds: readonly Row[]): void {
  const keys = ['preparation', 'distanceMm', 'temperatureC', 'concentration', 'pulseWidthMs'];
  for (const r of rows) {
    if (r.i50 === null || r.i50 === undefined) continue;
    const t = thresholds.find((q) => q.class === r.class && keys.every((k) => !(k in q) || !(k in r) || q[k] === r[k]));
    if (t && t.threshold === null) {
      const why =
        'the threshold table finds the class in fewer than half the sweeps at every intensity: ' +
        'the curve rests on single detections';
      r.status = r.status === 'ok' ? why : `${r.status}; ${why}`;
    }
  }
}

function recruitmentSentence(step: Step) {
  const o = step.options as Record<string, unknown>;
  return {
    text:
      `Recruitment curves (${measureWords(o.measure)} against stimulus intensity) were fitted, per preparation, ` +
      'recording site and class, to the sweeps in which the class was measured (sweeps where it was not detected, ' +
      'and intensities of 0 or below, were left out and counted; the floor was fixed at 0 when the class was not ' +
      `detected at lower intensities; a class measured at fewer than ${o.minLevels ?? 4} intensities was reported ` +
      'as not detected), with a Boltzmann sigmoid in log10 intensity by the Levenberg-Marquardt method (Marquardt ' +
      `1963); the fitted threshold was taken where the fit reaches ${100 * (o.thresholdFraction as number)}% of ` +
      `its range and the supramaximal intensity as ${o.supramaximalFactor} times the intensity reaching 95% of the ` +
      'maximum. Separately from the fit, the lowest intensity from which a class stayed detected (in at least ' +
      'half of the sweeps at that intensity and at every higher one) was reported as its lowest detected intensity.',
    refs: [REFERENCES.lm],
  };
}

export const recruitment: AnalysisEntry<RecruitmentOutput> = {
  id: 'recruitment',
  title: 'Thresholds and recruitment',
  consumes: { series: ['intensity'], conditions: ['intensity'], option: 'recruitment' },
  stage: 'components',
  perPreparation(ctx) {
    const table = ctx.table!;
    const it = hasSeries(table, 'intensity')
      ? table.subset({ series: 'intensity' })
      : table.subset((r) => typeof r.intensity === 'number');
    let thresholds: Record<string, ConditionValue>[] = [];
    try {
      thresholds = it.threshold();
    } catch (e) {
      failed(ctx.flags, ctx.notes, 'thresholds', ctx.prep, e);
    }
    let rec: RecruitmentResult | null = null;
    if (new Set(it.rows.map((r) => r.intensity)).size >= 4) {
      try {
        rec = it.recruitment(ctx.options.recruitment ?? {});
        agreeWithThresholds(rec.rows, thresholds);
        const where = (r: Row) => (r.distanceMm !== undefined ? `${r.distanceMm} mm` : null);
        ctx.flags.push(...flagsFrom('recruitment', rec.rows, ctx.prep, where));
      } catch (e) {
        failed(ctx.flags, ctx.notes, 'recruitment', ctx.prep, e);
      }
    } else ctx.notes.push(`${say(ctx.prep)}recruitment: fewer than 4 stimulus intensities; not fitted`);
    return { thresholds, recruitment: rec };
  },
  prepTables: (r) => ({
    thresholds: r.thresholds,
    recruitment: r.recruitment ? r.recruitment.rows : [],
    recruitment_points: r.recruitment ? r.recruitment.points : [],
  }),
  acrossPreparations(ctx) {
    if (!ctx.prepTable('recruitment').length) return null;
    const o = ctx.options.recruitment;
    const options = {
      supramaximalFactor: o?.supramaximalFactor ?? recruitmentDefaults.supramaximalFactor,
      thresholdFraction: recruitmentDefaults.thresholdFraction,
      minLevels: o?.minLevels ?? recruitmentDefaults.minLevels,
      // the response column fitted (the unit of maximum and floor)
      measure: o?.measure ?? `amplitude_${ctx.units}`,
    };
    return { steps: [{ verb: 'recruitment', options, version: VERSION }] };
  },
  tables: [
    {
      name: 'thresholds',
      title: 'Thresholds (lowest intensity with a detected component)',
      always: true,
      // named for what it is: the lowest intensity from which the class stays detected (not the fit's threshold)
      columns: { threshold: 'lowest_detected_intensity_{I}' },
    },
    {
      name: 'recruitment',
      title: 'Recruitment fits',
      always: true,
      columns: {
        // where the fitted Boltzmann curve reaches 5% of its range
        threshold: 'fit_threshold_5pct_{I}',
        i50: 'i50_{I}',
        i50_ci95_low: 'i50_ci95_low_{I}',
        i50_ci95_high: 'i50_ci95_high_{I}',
        i95: 'i95_{I}',
        supramaximal: 'supramaximal_{I}',
        maximum: 'maximum_{R}',
        maximum_ci95_low: 'maximum_ci95_low_{R}',
        maximum_ci95_high: 'maximum_ci95_high_{R}',
        floor: 'floor_{R}',
      },
    },
    { name: 'recruitment_points', title: 'Recruitment points', always: true, bulk: true },
  ],
  figures: [
    {
      rank: 10,
      make(study) {
        const t = study.tables;
        return t.recruitment_points.length
          ? [recruitmentFigure(t.recruitment_points, null, t.recruitment, study.units)]
          : [];
      },
    },
  ],
  methods: { recruitment: recruitmentSentence },
  computed: (t) => finiteCount(t.recruitment, 'i50'),
  api: ['ComponentTable.threshold', 'ComponentTable.recruitment'],
};
