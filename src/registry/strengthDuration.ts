/** Registry entry: strength-duration (rheobase and chronaxie, Weiss and Lapicque) from a pulse-width series. */
import type { Step } from '../sweeps/SweepSet';
import { measured } from '../analysis/velocity';
import { recruitmentDefaults } from '../analysis/recruitment';
import type { StrengthDurationResult } from '../analysis/strengthDuration';
import { VERSION } from '../version';
import { REFERENCES } from './references';
import { flagsFrom, failed, hasSeries } from './shared';
import type { AnalysisEntry, Row } from './types';

function strengthDurationSentence(step: Step) {
  const o = step.options as Record<string, unknown>;
  return {
    text:
      `For each pulse width, the intensity reaching ${100 * (o.fraction as number)}% of the maximum response was ` +
      'taken from a Boltzmann fit of the recruitment curve in log10 intensity; rheobase and chronaxie were ' +
      "estimated by fitting Weiss's law, I = Irh (1 + tch / w), and Lapicque's law, I = Irh / (1 - exp(-w / tau)) " +
      'with chronaxie tau ln 2, to log intensity by the Levenberg-Marquardt method (Marquardt 1963), with a ' +
      'profile-likelihood 95% interval for the chronaxie.',
    refs: [REFERENCES.lm],
  };
}

export const strengthDuration: AnalysisEntry<StrengthDurationResult> = {
  id: 'strength-duration',
  title: 'Strength-duration',
  consumes: { series: ['pulse-width'], conditions: ['pulseWidthMs', 'intensity'], option: 'strengthDuration' },
  stage: 'components',
  perPreparation(ctx) {
    const table = ctx.table!;
    const o = ctx.options;
    const prep = ctx.prep;
    // a pulse-width series (or any rows with three or more pulse widths)
    const pt = hasSeries(table, 'pulse-width')
      ? table.subset({ series: 'pulse-width' })
      : table.subset((r) => typeof r.pulseWidthMs === 'number');
    if (new Set(pt.rows.map((r) => r.pulseWidthMs)).size < 3) return null;
    try {
      // only curves measured at enough intensities go to the strength-duration fit; the others are flagged
      const minLevels = o.recruitment?.minLevels ?? recruitmentDefaults.minLevels;
      const curve = (r: Row) =>
        JSON.stringify(
          ['class', 'pulseWidthMs', 'preparation', 'distanceMm', 'temperatureC', 'concentration'].map(
            (k) => r[k] ?? null,
          ),
        );
      const levels = new Map<string, Set<unknown>>();
      for (const r of pt.rows)
        if (measured(r) && (r.intensity as number) > 0)
          (levels.get(curve(r)) ?? levels.set(curve(r), new Set()).get(curve(r))!).add(r.intensity);
      const few = new Set(pt.rows.map(curve).filter((k) => (levels.get(k)?.size ?? 0) < minLevels));
      for (const k of few) {
        const [cls, w] = JSON.parse(k) as [string, number];
        ctx.flags.push({
          preparation: prep,
          analysis: 'strength-duration',
          class: cls,
          where: `pulse width ${w} ms`,
          severity: 'not measured',
          status: 'not detected',
          reason:
            `measured at ${levels.get(k)?.size ?? 0} intensities at this pulse width; ` +
            `a recruitment curve needs ${minLevels}`,
        });
      }
      const sdt = few.size ? pt.subset((r) => !few.has(curve(r))) : pt;
      const sd = sdt.strengthDuration(o.strengthDuration ?? {});
      ctx.flags.push(...flagsFrom('strength-duration', sd.rows as Row[], prep, () => null));
      return sd;
    } catch (e) {
      failed(ctx.flags, ctx.notes, 'strength-duration', prep, e);
      return null;
    }
  },
  // a study has these tables only when some preparation has a strength-duration row
  prepTables: (sd): Record<string, readonly object[]> =>
    sd.rows.length ? { strength_duration: sd.rows, strength_duration_points: sd.points } : {},
  acrossPreparations(ctx) {
    if (!ctx.prepTable('strength_duration').length) return null;
    const options = { fraction: ctx.options.strengthDuration?.fraction ?? 0.5 };
    return { steps: [{ verb: 'strengthDuration', options, version: VERSION }] };
  },
  tables: [
    {
      name: 'strength_duration',
      title: 'Strength-duration fits',
      columns: { criterionFraction: 'criterion_fraction' },
    },
    { name: 'strength_duration_points', title: 'Strength-duration points', bulk: true },
  ],
  methods: { strengthDuration: strengthDurationSentence },
  computed: (t) => (t.strength_duration ?? []).length,
  api: ['ComponentTable.strengthDuration'],
  resultKey: 'strengthDuration',
};
