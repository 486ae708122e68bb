/** Registry entry: per-sweep quality control on the sweeps as recorded, and the removal of flagged sweeps. */
import type { SweepSet, Step } from '../sweeps/SweepSet';
import type { PipelineOptions, Flag } from '../report/pipeline';
import {
  sweepQc as runSweepQc,
  rejectFlagged,
  rejectedSweeps,
  qcStepMethods,
  QC_REFERENCES,
  type SweepQcResult,
} from '../analysis/sweepQc';
import { OptionError } from '../errors';
import { checkKeys } from '../validate';
import { failed, say } from './shared';
import type { AnalysisEntry, Row } from './types';
import { sweepQcFigure } from '../plot/qc';

export interface QcOutput {
  qc: SweepQcResult | null;
  /** the sweeps removed by `reject` (one row each, with the flags and reasons) */
  sweepsRemoved: Row[];
  /** the sweeps for the next steps */
  set: SweepSet;
}

/** Volts per unit of the units a SweepSet may have. */
const VOLTS: Readonly<Record<string, number>> = { V: 1, mV: 1e-3, uV: 1e-6 };
/**
 * Bounds on the median baseline noise (robust SD, in V) of a nerve recording, outside which the samples' unit is
 * most likely not the one declared: above 1 V no acquisition range (commonly +-10 V) carries the response; below
 * 1 nV the noise is under the thermal noise of any electrode (Johnson-Nyquist, sqrt(4 k T R B): 0.4 uV for 1 kOhm over
 * 10 kHz at 37 C).
 */
export const NOISE_RANGE_V: readonly [number, number] = [1e-9, 1];

/**
 * A warning flag when the sweeps' median noise says their unit is not the declared one (samples in uV read as V,
 * or the reverse; for the reverse also the largest sample, `largest()`, stays under 1 uV), or null. The numbers are still computed, in the declared unit; the flag and a note say why they
 * may be off by a factor of 1000 or 1e6.
 */
export function unitsFlag(
  rows: readonly Row[],
  units: string,
  prep: string | null,
  largest: () => number = () => 0,
): Flag | null {
  const f = VOLTS[units];
  const noise = rows
    .map((r) => r[`noise_${units}`])
    .filter((v): v is number => typeof v === 'number' && v > 0)
    .sort((a, b) => a - b);
  if (f === undefined || !noise.length) return null;
  const med = noise[noise.length >> 1] * f;
  if (med >= NOISE_RANGE_V[0] && med <= NOISE_RANGE_V[1]) return null;
  const high = med > NOISE_RANGE_V[1];
  // a set without noise (a simulation) is not a unit slip: only when nothing in it reaches 1 uV either
  if (!high && largest() * f >= 1e-6) return null;
  return {
    preparation: prep,
    analysis: 'sweep-qc',
    class: null,
    where: null,
    severity: 'warning',
    status: 'check units',
    reason:
      `the median baseline noise is ${Number((med / f).toPrecision(3))} ${units} per sweep, ` +
      (high
        ? `beyond any recording range (over ${NOISE_RANGE_V[1]} V): are the samples in uV or mV, not ${units}?`
        : `below the thermal noise of any electrode (under 1 nV): are the samples in V or mV, not ${units}?`),
    rows: rows.length,
  };
}

/**
 * Sweep QC on the sweeps as recorded (unless `qc: false`), and the removal of flagged sweeps only when
 * `reject` asks for it: by default nothing is removed, the flagged sweeps are listed in sweep_qc and the notes.
 * In flag-only mode a 'sweepQc' step joins the history (the methods text says the flagged sweeps were kept).
 */
export function qualityControl(
  set: SweepSet,
  o: PipelineOptions,
  prep: string | null,
  flags: Flag[],
  notes: string[],
): QcOutput {
  if (o.qc === false) {
    if (o.reject)
      throw new OptionError(
        `invalid reject: ${JSON.stringify(o.reject)} with qc: false; ` +
          'rejection removes the sweeps the QC flags (drop qc: false, or reject)',
      );
    return { set, qc: null, sweepsRemoved: [] };
  }
  if (
    o.reject !== undefined &&
    typeof o.reject !== 'boolean' &&
    (o.reject === null || typeof o.reject !== 'object' || Array.isArray(o.reject))
  ) {
    throw new OptionError(`invalid reject: ${JSON.stringify(o.reject)}; must be true, false or { flags: [...] }`);
  }
  if (o.reject && typeof o.reject === 'object') checkKeys('reject', o.reject as Record<string, unknown>, ['flags']);
  let qc: SweepQcResult;
  try {
    qc = runSweepQc(set, o.qc ?? {});
  } catch (e) {
    failed(flags, notes, 'sweep-qc', prep, e);
    if (o.reject) notes.push(`${say(prep)}sweep-qc: no sweeps removed (the QC could not be computed)`);
    return { set, qc: null, sweepsRemoved: [] };
  }
  const units = unitsFlag(qc.rows as unknown as Row[], set.units, prep, () => {
    let m = 0;
    for (const v of set.data) if (Math.abs(v) > m) m = Math.abs(v);
    return m;
  });
  if (units) {
    flags.push(units);
    notes.push(`${say(prep)}${units.reason}`);
  }
  const n = qc.flagged().length;
  if (!o.reject) {
    if (n)
      notes.push(
        `${say(prep)}sweep QC: ${n} of ${qc.rows.length} sweeps flagged and kept ` +
          '(tables/sweep_qc.csv; reject: true removes them)',
      );
    const step = qc.history[qc.history.length - 1];
    return { set: set.create({ history: [...set.history, step] }), qc, sweepsRemoved: [] };
  }
  const kept = rejectFlagged(set, qc, o.reject === true ? {} : o.reject);
  const removed = rejectedSweeps(kept).filter(
    (r) => !rejectedSweeps(set).some((q) => JSON.stringify(q) === JSON.stringify(r)),
  );
  if (removed.length)
    notes.push(
      `${say(prep)}sweep QC: ${removed.length} of ${qc.rows.length} sweeps removed (tables/sweeps_removed.csv)`,
    );
  return { set: kept, qc, sweepsRemoved: removed };
}

/**
 * The QC steps of a study's history: one rejectFlagged step listing the sweeps removed from every preparation
 * (each preparation's own history lists only its own), or the first preparation's sweepQc step (flag only).
 */
function mergeQcSteps(history: readonly Step[], perPreparation: Step[][]): Step[] {
  const steps = perPreparation.map((h) => h.find((s) => s.verb === 'rejectFlagged')).filter((h): h is Step => !!h);
  if (!steps.length) return [...history];
  const removed = steps.flatMap((h) => (h.options.removed as Row[]) ?? []);
  const kept = steps.reduce((n, h) => n + Number(h.options.kept ?? 0), 0);
  const merged: Step = { ...steps[0], options: { ...steps[0].options, removed, kept } };
  return history.map((h) => (h.verb === 'rejectFlagged' ? merged : h));
}

function qcSentence(step: Step) {
  const t = qcStepMethods(step);
  return {
    text:
      step.verb === 'sweepQc'
        ? `${t.replace(/ Flagged sweeps were kept\.$/, '')} ` +
          'Flagged sweeps were kept (listed in the sweep QC table; removal only when asked for).'
        : t,
    refs: QC_REFERENCES,
  };
}

export const sweepQc: AnalysisEntry<QcOutput> = {
  id: 'sweep-qc',
  title: 'Sweep quality control',
  consumes: { option: 'qc' },
  stage: 'raw',
  perPreparation(ctx) {
    const r = qualityControl(ctx.raw, ctx.options, ctx.prep, ctx.flags, ctx.notes);
    return ctx.options.qc === false ? null : r;
  },
  sweepsAfter: (r) => r.set,
  prepTables(r, ctx): Record<string, readonly object[]> {
    if (!r.qc) return {};
    // QC rows name the sweep's file and its index in the file (the sweep index alone is per preparation)
    const rows = r.qc.rows.map((q) => {
      const c = ctx.input.conditions[q.sweep as number] ?? {};
      const { sweep, preparation, ...rest } = q;
      return {
        sweep,
        preparation: preparation ?? ctx.prep,
        file: c.file ?? null,
        fileSweep: c.fileSweep ?? null,
        ...rest,
      };
    });
    return { sweep_qc: rows, sweep_qc_summary: r.qc.summary(), sweeps_removed: r.sweepsRemoved };
  },
  studyHistory: mergeQcSteps,
  tables: [
    { name: 'sweep_qc', title: 'Sweep quality control', bulk: true, labels: ['condition'] },
    { name: 'sweep_qc_summary', title: 'Sweep quality control per preparation' },
    {
      name: 'sweeps_removed',
      title: 'Sweeps removed',
      labels: ['condition'],
      empty: 'no sweep was removed: flagged sweeps are kept (listed in the sweep QC table) unless reject is true',
    },
  ],
  figures: [
    {
      rank: 5,
      make: (study) => (study.tables.sweep_qc?.length ? [sweepQcFigure(study.tables.sweep_qc, study.units)] : []),
    },
  ],
  methods: { sweepQc: qcSentence, rejectFlagged: qcSentence },
  api: ['sweepQc', 'rejectFlagged'],
  resultKey: 'qc',
};
