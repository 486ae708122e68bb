/** Registry entry (opt-in): the conduction-velocity distribution per preparation, temperature and concentration. */
import type { SweepSet, Step } from '../sweeps/SweepSet';
import type { PipelineOptions, Flag } from '../report/pipeline';
import {
  velocityDistribution as runVelocityDistribution,
  methodsSentence,
  type VelocityDistributionResult,
} from '../analysis/velocityDistribution';
import { OptionError } from '../errors';
import { say, seriesOf, standardSweeps, finiteCount, lastStep } from './shared';
import type { AnalysisEntry, Row } from './types';

/** A velocity distribution and the conditions of its sweeps (preparation, temperatureC, concentration, ...). */
export interface VelocityDistributionEntry {
  conditions: Row;
  result: VelocityDistributionResult;
}

/** Conditions that make one velocity distribution. */
const VDIST_KEYS = ['preparation', 'temperatureC', 'concentration', 'drug', 'epoch', 'pulseWidthMs', 'polarity'];

/** The tables of a velocity distribution the bundle writes (each row with the distribution's conditions). */
const VDIST_TABLES = [
  'velocity_distribution',
  'velocity_distribution_percentiles',
  'velocity_distribution_classes',
  'velocity_distribution_residuals',
];

/**
 * Opt-in velocity distributions: for each preparation x temperatureC x concentration whose sweeps at the top
 * intensity (standard sweeps only) span two or more distances, one distribution. A failure is a flag of that group.
 */
export function velocityDistributions(
  set: SweepSet,
  o: PipelineOptions,
  prep: string | null,
  flags: Flag[],
  notes: string[],
): VelocityDistributionEntry[] {
  if (o.velocityDistribution === undefined) return [];
  const vo = o.velocityDistribution as unknown;
  if (vo === null || typeof vo !== 'object' || Array.isArray(vo)) {
    throw new OptionError(
      `invalid velocityDistribution: ${JSON.stringify(vo)}; ` +
        'must be an object of velocity-distribution options ({} for the defaults)',
    );
  }
  const all = standardSweeps(set, o);
  // the distance series when there is one (other series vary intensity, drug or temperature at one site)
  const std = all.conditions.some((c) => c.series === 'distance') ? seriesOf(all, 'distance')! : all;
  const groups = new Map<string, number[]>();
  std.conditions.forEach((c, i) => {
    if (typeof c.distanceMm !== 'number') return;
    const k = JSON.stringify(VDIST_KEYS.map((q) => c[q] ?? null));
    (groups.get(k) ?? groups.set(k, []).get(k)!).push(i);
  });
  const out: VelocityDistributionEntry[] = [];
  for (const [k, idx0] of groups) {
    const head: Row = {};
    VDIST_KEYS.forEach((q, j) => {
      const v = JSON.parse(k)[j];
      if (v !== null) head[q] = v;
    });
    const where =
      VDIST_KEYS.filter((q) => head[q] !== undefined && q !== 'preparation')
        .map((q) => `${q} ${head[q]}`)
        .join(', ') || null;
    const ints = idx0.map((i) => std.conditions[i].intensity).filter((v): v is number => typeof v === 'number');
    const top = ints.length ? Math.max(...ints) : null;
    const idx = top === null ? idx0 : idx0.filter((i) => std.conditions[i].intensity === top);
    const dists = new Set(idx.map((i) => std.conditions[i].distanceMm));
    if (dists.size < 2) continue;
    const p = (head.preparation as string | undefined) ?? prep;
    try {
      const r = runVelocityDistribution(std.select(idx), { ...o.velocityDistribution });
      out.push({ conditions: { ...head, ...(top !== null ? { intensity: top } : {}) }, result: r });
      if (r.fit.status !== 'ok') {
        flags.push({
          preparation: p,
          analysis: 'velocity-distribution',
          class: null,
          where,
          severity: 'warning',
          status: r.fit.status,
          reason: [r.fit.status, ...r.fit.notes].join('; '),
        });
      }
    } catch (e) {
      const msg = (e as Error).message;
      notes.push(`${say(p)}velocity-distribution${where ? ` (${where})` : ''}: ${msg}`);
      flags.push({
        preparation: p,
        analysis: 'velocity-distribution',
        class: null,
        where,
        severity: 'rejected',
        status: 'failed',
        reason: msg,
      });
    }
  }
  if (!out.length && !flags.some((f) => f.analysis === 'velocity-distribution')) {
    notes.push(
      `${say(prep)}velocity-distribution: no preparation, temperature and concentration with two or more ` +
        'distances at the top intensity',
    );
  }
  return out;
}

/** The study's step over its distributions: the first preparation's, with the count over every preparation. */
function studyStep(perPrep: Step[][]): Step[] {
  const steps = perPrep.flat().filter((h) => h.verb === 'velocityDistributions');
  if (!steps.length) return [];
  const count = steps.reduce((n, h) => n + Number(h.options.count ?? 0), 0);
  return [{ ...steps[0], options: { ...steps[0].options, count } }];
}

export const velocityDistribution: AnalysisEntry<VelocityDistributionEntry[]> = {
  id: 'velocity-distribution',
  title: 'Conduction-velocity distribution',
  consumes: { series: ['distance'], conditions: ['distanceMm'], option: 'velocityDistribution', optIn: true },
  stage: 'conditioned',
  perPreparation(ctx) {
    if (ctx.options.velocityDistribution === undefined) return null;
    return velocityDistributions(ctx.conditioned!, ctx.options, ctx.prep, ctx.flags, ctx.notes);
  },
  prepTables(list) {
    const out: Record<string, object[]> = {};
    for (const v of list) {
      const t = v.result.tables();
      for (const k of VDIST_TABLES) if (t[k]) (out[k] ??= []).push(...t[k].map((r) => ({ ...v.conditions, ...r })));
    }
    return out;
  },
  prepSteps(list) {
    if (!list.length) return [];
    const h = lastStep(list[0].result.history);
    return [{ ...h, verb: 'velocityDistributions', options: { ...h.options, count: list.length } }];
  },
  acrossPreparations: (ctx) => ({ steps: studyStep(ctx.prepSteps('velocity-distribution')) }),
  tables: [
    { name: 'velocity_distribution', title: 'Conduction-velocity distribution', bulk: true },
    { name: 'velocity_distribution_percentiles', title: 'Conduction-velocity distribution: percentiles' },
    { name: 'velocity_distribution_classes', title: 'Conduction-velocity distribution: classes' },
    { name: 'velocity_distribution_residuals', title: 'Conduction-velocity distribution: fit residuals' },
  ],
  methods: {
    // the pipeline's step over its velocity distributions (a result's own 'velocityDistribution' step is worded by
    // the result's methods(), which adds the sentence itself)
    velocityDistributions(step) {
      const o = step.options as Record<string, unknown>;
      const [t, refs] = methodsSentence(o);
      const each =
        `${o.count} distribution${o.count === 1 ? '' : 's'}: one per preparation, temperature and concentration ` +
        'with two or more distances, from the sweeps at the top intensity';
      return { text: o.count !== undefined ? `${t.replace(/\.\s*$/, '')} (${each}).` : t, refs };
    },
  },
  computed: (t) => finiteCount(t.velocity_distribution_percentiles, 'velocity_m_s'),
  api: ['velocityDistribution'],
  resultKey: 'velocityDistributions',
};
