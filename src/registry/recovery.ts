/** Registry entries: paired-pulse recovery (series "paired-pulse") and responses to trains (series "train"). */
import type { Step } from '../sweeps/SweepSet';
import type { Flag } from '../report/pipeline';
import { pairedPulse as runPairedPulse, PairedPulseResult } from '../analysis/pairedPulse';
import { trains as runTrains, TrainResult } from '../analysis/trains';
import { recoveryFigure, trainFigure } from '../plot/recovery';
import { Figure } from '../plot/figure';
import { REFERENCES } from './references';
import { flagsFrom, failed, seriesOf, finiteCount, lastStep } from './shared';
import type { AnalysisEntry, Row, StudyContext } from './types';

/** Flags of a paired-pulse or train summary: rows whose status is not 'ok' ('not measured' rows as such). */
function recoveryFlags(
  analysis: Flag['analysis'],
  rows: readonly Row[],
  prep: string | null,
  where: (r: Row) => string | null,
): Flag[] {
  return flagsFrom(analysis, rows, prep, where).map((f) =>
    f.status === 'not measured' ? { ...f, severity: 'not measured' as const } : f,
  );
}

/** The first preparation's step of an entry (the options are the manifest's, the same in every preparation). */
export const firstSteps = (ctx: StudyContext, id: string): Step[] => {
  const out: Step[] = [];
  for (const steps of ctx.prepSteps(id))
    for (const h of steps)
      if (!ctx.history.some((q) => q.verb === h.verb) && !out.some((q) => q.verb === h.verb)) out.push(h);
  return out;
};

const named = (f: Figure, name: string) => new Figure(name, f.spec);

export const pairedPulse: AnalysisEntry<PairedPulseResult> = {
  id: 'paired-pulse',
  title: 'Paired-pulse recovery',
  consumes: { series: ['paired-pulse'], conditions: ['pulsePair', 'intervalMs'], option: 'pairedPulse' },
  stage: 'conditioned',
  perPreparation(ctx) {
    const o = ctx.options;
    const pset = o.pairedPulse === false ? null : seriesOf(ctx.conditioned!, 'paired-pulse');
    if (!pset) return null;
    try {
      const pp = runPairedPulse(pset, { components: o.components ?? {}, ...(o.pairedPulse || {}) });
      const where = (r: Row) => (r.distanceMm !== undefined && r.distanceMm !== null ? `${r.distanceMm} mm` : null);
      ctx.flags.push(...recoveryFlags('paired-pulse', pp.summary, ctx.prep, where));
      return pp;
    } catch (e) {
      failed(ctx.flags, ctx.notes, 'paired-pulse', ctx.prep, e);
      return null;
    }
  },
  prepTables: (pp) => pp.tables(),
  prepSteps: (pp) => [lastStep(pp.history)],
  acrossPreparations: (ctx) => ({ steps: firstSteps(ctx, 'paired-pulse') }),
  tables: [
    { name: 'paired_pulse', title: 'Paired-pulse recovery points' },
    {
      name: 'paired_pulse_summary',
      title: 'Paired-pulse recovery (ARP, R50, R90)',
      columns: {
        r50_ci95_low: 'r50_ci95_low_ms',
        r50_ci95_high: 'r50_ci95_high_ms',
        r90_ci95_low: 'r90_ci95_low_ms',
        r90_ci95_high: 'r90_ci95_high_ms',
      },
    },
  ],
  figures: [
    {
      rank: 60,
      make(study) {
        const t = study.tables;
        if (!t.paired_pulse?.length || !t.paired_pulse_summary) return [];
        const r = new PairedPulseResult(t.paired_pulse, t.paired_pulse_summary, new Map(), []);
        return [named(recoveryFigure(r), 'paired-pulse')];
      },
    },
  ],
  methods: {
    pairedPulse: () => ({
      text:
        'Paired-pulse recovery: the conditioning-alone response was subtracted from each paired sweep, the test ' +
        'response was measured from the test stimulus as for test-alone sweeps, and expressed as a fraction of the ' +
        'test-alone response. The absolute refractory period was the longest interstimulus interval with no test ' +
        'response above detection while every longer interval had one. R50 and R90 came from a logistic function ' +
        'of log10 interval (floor 0, top 1) fitted by least squares, with 95% profile-likelihood intervals ' +
        '(conventions after Bostock, Cikurel & Burke 1998).',
      refs: [REFERENCES.bostock],
    }),
  },
  computed: (t) => finiteCount(t.paired_pulse_summary, 'r50_ms'),
  api: ['pairedPulse'],
  resultKey: 'pairedPulse',
};

export const trains: AnalysisEntry<TrainResult> = {
  id: 'train',
  title: 'Stimulus trains',
  consumes: { series: ['train'], conditions: ['trainHz', 'trainPulses'], option: 'trains' },
  stage: 'conditioned',
  perPreparation(ctx) {
    const o = ctx.options;
    const tset = o.trains === false ? null : seriesOf(ctx.conditioned!, 'train');
    if (!tset) return null;
    try {
      const tr = runTrains(tset, { components: o.components ?? {}, ...(o.trains || {}) });
      const where = (r: Row) => (r.train_hz !== undefined ? `${r.train_hz} Hz` : null);
      ctx.flags.push(...recoveryFlags('train', tr.summary, ctx.prep, where));
      return tr;
    } catch (e) {
      failed(ctx.flags, ctx.notes, 'train', ctx.prep, e);
      return null;
    }
  },
  prepTables: (tr) => tr.tables(),
  prepSteps: (tr) => [lastStep(tr.history)],
  acrossPreparations: (ctx) => ({ steps: firstSteps(ctx, 'train') }),
  tables: [
    { name: 'train', title: 'Stimulus trains: responses per pulse' },
    { name: 'train_summary', title: 'Stimulus trains per class' },
  ],
  figures: [
    {
      rank: 70,
      make(study) {
        const t = study.tables;
        if (!t.train?.length || !t.train_summary) return [];
        return [named(trainFigure(new TrainResult(t.train, t.train_summary, [])), 'train')];
      },
    },
  ],
  methods: {
    trains: (step) => ({
      text:
        'Trains: each response was measured in its own window from its own stimulus to the next; a class failed at ' +
        `the first pulse not detected or with an area below ` +
        `${Math.round(100 * Number(step.options.failFraction ?? 0.5))}% of pulse 1's.`,
    }),
  },
  computed: (t) => finiteCount(t.train_summary, 'last_latency_increase_ms'),
  api: ['trains'],
  resultKey: 'trains',
};
