/** Registry entry: blocker dose-response (Hill fits per preparation, pooled IC50, class comparison). */
import type { ConditionValue, Step } from '../sweeps/SweepSet';
import { doseResponse as fitDoseResponse, type DoseResponseResult } from '../analysis/doseResponse';
import type { Flag } from '../report/pipeline';
import { doseResponseFigure } from '../plot/builders';
import { REFERENCES } from './references';
import { flagsFrom, failed, finiteCount, measureWords } from './shared';
import type { AnalysisEntry, Row } from './types';

/** Flags of a dose-response result (summary and per-preparation rows). */
export function doseFlags(dr: DoseResponseResult, prep: string | null): Flag[] {
  const where = (r: Row) => (r.distanceMm !== undefined && r.distanceMm !== null ? `${r.distanceMm} mm` : null);
  return [
    ...flagsFrom('dose-response', dr.summary, prep, where),
    ...flagsFrom(
      'dose-response',
      dr.perPreparation.filter((r) => r.status === 'not detected'),
      prep,
      where,
    ),
  ];
}

function doseSentence(step: Step) {
  const o = step.options as Record<string, unknown>;
  const runDown =
    o.runDown === 'washout'
      ? ', corrected for run-down by linear interpolation between baseline and washout'
      : o.runDown === 'vehicle'
        ? ', corrected for run-down by the linear decline, per class, of time-matched vehicle controls relative to ' +
          'their own baseline'
        : '';
  const bottom = o.fixBottom === null ? ' and the bottom free' : ` and the bottom fixed at ${o.fixBottom}`;
  // the top as the run fitted it (model: "top fitted with the baseline as a point" unless freeTop: false)
  const top = /top fitted/.test(String(o.model ?? ''))
    ? 'the top asymptote fitted (between 0.5 and 1.5 of the baseline, the baseline itself one point of the curve)'
    : 'the top fixed at 1';
  const below =
    o.belowDetection === true
      ? ', and, for a class detected in the drug-free sweeps of that site and separated by its window (not by the ' +
        'velocity decomposition), also the sweeps in which it fell below the detection level (there the ' +
        'least-squares amplitude stays unbiased, near 0 with its noise)'
      : '';
  const shift =
    typeof o.maxLatencyShift === 'number'
      ? `; sweeps whose peak latency differed by more than ${100 * o.maxLatencyShift}% from the mean drug-free ` +
        'peak latency of their preparation, site and class (not the same wave) were left out and counted'
      : '';
  const boot = o.bootstrap ? ` and a bootstrap interval over preparations (${o.bootstrap} resamples)` : '';
  return {
    text:
      `Dose-response analysis used ${measureWords(o.measure)} in the sweeps in which the class was measured` +
      `${below}; other sweeps, such as those in which a class was not resolved, were left out and counted${shift}; a ` +
      `curve with fewer than ${o.minConcentrations ?? 4} measured concentrations was reported as not detected, and ` +
      'the bottom was fixed at 0 when the class was not measured at the highest concentrations; ' +
      `${o.poolSites ? 'all recording sites were pooled into one curve' : 'one curve was fitted per recording site'}. ` +
      `The steady-state response at each concentration (mean of the last ${o.lastN} sweeps, or of all when there ` +
      `were fewer) was normalised to the preparation's own pre-drug baseline${runDown}, and fitted per preparation ` +
      `and class with the four-parameter log-logistic (Hill) model (Hill 1910; Ritz et al. 2015) with ${top}` +
      `${bottom}, by the Levenberg-Marquardt method. IC50 values were combined across preparations as the mean of ` +
      'log10 IC50 with a t-based 95% confidence interval (preparations, not sweeps, as replicates); a pooled fit ' +
      `over all preparations gave a profile-likelihood interval (Bates & Watts 1988)${boot}. Classes were compared ` +
      'with the extra-sum-of-squares F test of a shared IC50.',
    refs: [REFERENCES.hill, REFERENCES.drc, REFERENCES.lm, REFERENCES.bates],
  };
}

/** The concentration unit of a comparison's curves (its classes' summary rows at the same site), or null. */
function unitOf(dr: DoseResponseResult, c: Row): ConditionValue {
  const same = dr.summary.find(
    (r) => (r.class === c.classA || r.class === c.classB) && (r.distanceMm ?? null) === (c.distanceMm ?? null),
  );
  return (same?.concentrationUnit ??
    dr.summary.find((r) => r.concentrationUnit)?.concentrationUnit ??
    null) as ConditionValue | null;
}

export const doseResponse: AnalysisEntry<DoseResponseResult> = {
  id: 'dose-response',
  title: 'Dose-response',
  consumes: { series: ['dose'], conditions: ['concentration'], option: 'doseResponse' },
  // pooled across preparations only (each preparation's own fit is a row of dose_response_per_preparation)
  acrossPreparations(ctx) {
    const o = ctx.options;
    const rows = ctx.components.some((r) => r.series === 'dose')
      ? ctx.components.filter((r) => r.series === 'dose')
      : ctx.components;
    if (!rows.some((r) => typeof r.concentration === 'number' && (r.concentration as number) > 0)) {
      ctx.notes.push('dose-response: no sweeps with a drug concentration above 0');
      return null;
    }
    try {
      const options = { ...(o.poolSites !== undefined ? { poolSites: o.poolSites } : {}), ...(o.doseResponse ?? {}) };
      const dr = fitDoseResponse(rows, ctx.units, options, ctx.history, ctx.sources);
      ctx.flags.push(...doseFlags(dr, null));
      return {
        result: dr,
        steps: [dr.history[dr.history.length - 1] as Step],
        tables: {
          dose_response_points: dr.points,
          dose_response_per_preparation: dr.perPreparation,
          dose_response_summary: dr.summary,
          // with the concentration unit of the curves compared, so that the IC50 columns carry it
          dose_response_comparisons: dr.comparisons.map((c) => ({ ...c, concentrationUnit: unitOf(dr, c) })),
        },
      };
    } catch (e) {
      failed(ctx.flags, ctx.notes, 'dose-response', null, e);
      return null;
    }
  },
  tables: [
    { name: 'dose_response_points', title: 'Dose-response points', always: true, bulk: true },
    {
      name: 'dose_response_per_preparation',
      title: 'Dose-response fits per preparation',
      always: true,
      columns: { ic50: 'ic50_{C}' },
    },
    {
      name: 'dose_response_summary',
      title: 'Dose-response summary',
      always: true,
      columns: {
        ic50: 'ic50_{C}',
        ic50_ci95_low: 'ic50_ci95_low_{C}',
        ic50_ci95_high: 'ic50_ci95_high_{C}',
        pooled_ic50: 'pooled_ic50_{C}',
        pooled_ic50_profile_low: 'pooled_ic50_profile_low_{C}',
        pooled_ic50_profile_high: 'pooled_ic50_profile_high_{C}',
        bootstrap_ic50_low: 'bootstrap_ic50_low_{C}',
        bootstrap_ic50_high: 'bootstrap_ic50_high_{C}',
      },
    },
    {
      name: 'dose_response_comparisons',
      title: 'Dose-response comparisons',
      always: true,
      columns: { classA: 'class_a', classB: 'class_b', ic50A: 'ic50_a_{C}', ic50B: 'ic50_b_{C}', F: 'f' },
    },
  ],
  figures: [
    {
      rank: 30,
      make(study) {
        const t = study.tables;
        if (!t.dose_response_points.length) return [];
        const dr = study.results?.['dose-response'] as DoseResponseResult | undefined;
        return [doseResponseFigure(t.dose_response_points, t.dose_response_summary, dr?.fits)];
      },
    },
  ],
  methods: { doseResponse: doseSentence },
  computed: (t) => finiteCount(t.dose_response_summary, 'ic50'),
  api: ['ComponentTable.doseResponse'],
  resultKey: 'doseResponse',
};
