/**
 * The standard pipeline: conditioning, averaging of repeats, components, and every registered analysis the data
 * supports (src/registry: velocity, recruitment, dose-response, temperature, QC, ...). Options come from the
 * manifest's "analysis" section (every step optional), so the command line does what the API does.
 *
 * One bad estimate never discards good ones: a velocity, fit or analysis that cannot be made is
 * a flagged row (`flags`: analysis, class, where, status, reason), and everything else goes on.
 */
import type { SweepSet, Step, Source, ConditionValue } from '../sweeps/SweepSet';
import type { BaselineOptions } from '../verbs/baseline';
import type { ArtifactOptions } from '../verbs/artifact';
import type { HumOptions } from '../verbs/hum';
import type { FilterOptions } from '../verbs/filter';
import type { ComponentOptions } from '../measure/components';
import type { DoseResponseOptions, DoseResponseResult } from '../analysis/doseResponse';
import type { RecruitmentOptions, RecruitmentResult } from '../analysis/recruitment';
import type { StrengthDurationOptions, StrengthDurationResult } from '../analysis/strengthDuration';
import type { TemperatureResult } from '../analysis/temperature';
import type { SweepQcOptions, SweepQcResult, QcFlag } from '../analysis/sweepQc';
import type { PairedPulseOptions, PairedPulseResult } from '../analysis/pairedPulse';
import type { TrainOptions, TrainResult } from '../analysis/trains';
import type { GroupOptions, GroupComparison } from '../analysis/groups';
import type { MixedOptions, MixedModelResult } from '../analysis/mixed';
import type { VelocityDistributionOptions } from '../analysis/velocityDistribution';
import { OptionError } from '../errors';
import type { ComponentTable, VelocityResult } from '../measure/table';
import { VERSION } from '../version';
import { ANALYSES, stageOf, type PrepContext, type StudyContext } from '../registry/index';
import { standardSweeps } from '../registry/shared';
import type { RecruitmentOutput } from '../registry/recruitment';
import type { QcOutput } from '../registry/sweepQc';
import type { VelocityDistributionEntry } from '../registry/velocityDistribution';

export { flagsFrom, standardSweeps } from '../registry/shared';
export { velocityOf, velocityBy } from '../registry/velocity';
export { doseFlags } from '../registry/doseResponse';
export { temperatureOf } from '../registry/temperature';
export { qualityControl } from '../registry/sweepQc';
export { velocityDistributions, type VelocityDistributionEntry } from '../registry/velocityDistribution';
export { groupRows, GROUP_TABLES } from '../registry/groups';
export { computedCount } from '../registry/index';

import type { Row } from '../registry/types';

export interface PipelineOptions {
  baseline?: BaselineOptions | false;
  /** one artifact step, or several applied in order (e.g. blank the rail, then fit the tail) */
  artifact?: ArtifactOptions | ArtifactOptions[] | false;
  hum?: HumOptions | false;
  filter?: FilterOptions | false;
  /**
   * average the repeats of each condition before measuring (sweeps whose conditions are equal
   * apart from `repeat`, `acquiredS` and the sweep's index in its file), when the sweeps have a `repeat` condition
   * with more than one value (default true; false measures every sweep). Averaged repeats leave one sweep per
   * concentration, so the dose-response's `lastN` steady state then has nothing to choose from: with
   * wash-in sweeps recorded as repeats, set false and let `lastN` pick the steady state
   */
  averageRepeats?: boolean;
  /** one dose-response and temperature curve over all recording sites instead of one per site (default false) */
  poolSites?: boolean;
  components?: ComponentOptions;
  doseResponse?: DoseResponseOptions;
  recruitment?: RecruitmentOptions;
  strengthDuration?: StrengthDurationOptions;
  /** measure: a component-table column for Q10 (default: the recommended velocity estimator) */
  temperature?: { measure?: string };
  /** per-sweep quality control on the sweeps as recorded (default {}: flag only); false skips it */
  qc?: SweepQcOptions | false;
  /**
   * remove the sweeps QC flagged (true: any flag; { flags }: only these) before conditioning; default false
   * (flagged sweeps are kept and listed). Every removed sweep is listed in sweeps_removed and the methods text
   */
  reject?: boolean | { flags?: QcFlag[] };
  /** paired-pulse recovery of the sweeps of series "paired-pulse" (components from `components`); false skips it */
  pairedPulse?: Omit<PairedPulseOptions, 'components'> | false;
  /** responses to stimulus trains of the sweeps of series "train" (components from `components`); false skips it */
  trains?: Omit<TrainOptions, 'components'> | false;
  /** group statistics across preparations (animals as the unit) of a column of `table` (default the component table) */
  groups?: GroupOptions & { table?: GroupTable };
  /** a random-intercept mixed model across preparations of a column of `table` (default the component table) */
  mixed?: MixedOptions & { table?: GroupTable };
  /**
   * opt-in (slow): the conduction-velocity distribution per preparation, temperature and concentration with two or
   * more distances, from the sweeps at the top intensity
   */
  velocityDistribution?: VelocityDistributionOptions;
}

/** Tables the group statistics and the mixed model may read. */
export type GroupTable = 'components' | 'velocity';

/** The pipeline's own option keys (for validating a manifest's "analysis" section). */
export const PIPELINE_OPTION_KEYS = [
  'baseline',
  'artifact',
  'hum',
  'filter',
  'averageRepeats',
  'poolSites',
  'components',
  'doseResponse',
  'recruitment',
  'strengthDuration',
  'temperature',
  'qc',
  'reject',
  'pairedPulse',
  'trains',
  'groups',
  'mixed',
  'velocityDistribution',
] as const;

/**
 * A result that could not be made, or a value that cannot be right: one row per problem.
 * severity: 'rejected' (a value that cannot be right, or an analysis that failed), 'not measured'
 * (too little was detected), 'warning' (kept, but look: e.g. a velocity outside its class's range).
 */
export interface Flag {
  preparation: string | null;
  analysis:
    | 'velocity'
    | 'recruitment'
    | 'dose-response'
    | 'temperature'
    | 'strength-duration'
    | 'thresholds'
    | 'pipeline'
    | 'sweep-qc'
    | 'paired-pulse'
    | 'train'
    | 'groups'
    | 'mixed'
    | 'velocity-distribution'
    // a newly registered analysis's id
    | (string & {});
  class: string | null;
  where: string | null;
  severity: 'rejected' | 'not measured' | 'warning';
  status: string;
  reason: string;
  [k: string]: ConditionValue;
}

export interface StudyResult {
  conditioned: SweepSet;
  components: ComponentTable;
  velocity: VelocityResult | null;
  thresholds: Record<string, unknown>[];
  recruitment: RecruitmentResult | null;
  doseResponse: DoseResponseResult | null;
  temperature: TemperatureResult | null;
  strengthDuration: StrengthDurationResult | null;
  /** per-sweep QC of the sweeps as recorded (null when `qc: false` or it failed) */
  qc: SweepQcResult | null;
  /** the sweeps removed by `reject` (one row each, with the flags and reasons) */
  sweepsRemoved: Row[];
  pairedPulse: PairedPulseResult | null;
  trains: TrainResult | null;
  groups: GroupComparison | null;
  mixed: MixedModelResult | null;
  /** one result per preparation, temperature and concentration (opt-in) */
  velocityDistributions: VelocityDistributionEntry[];
  /** every registered analysis's result by its id (the ones that ran) */
  results: Record<string, unknown>;
  flags: Flag[];
  history: readonly Step[];
  sources: readonly Source[];
  notes: string[];
}

/** Condition a set as the options say (each step optional), in the order baseline, artifact(s), hum, filter. */
export function condition(set: SweepSet, o: PipelineOptions): SweepSet {
  let s = set;
  // a bad value is named by its option key as a manifest's analysis section spells it ("analysis.filter: ...")
  const step = (key: string, f: () => SweepSet) => {
    try {
      return f();
    } catch (e) {
      if (e instanceof OptionError && !e.message.startsWith('analysis.'))
        throw Object.assign(new OptionError(`analysis.${key}: ${e.message}`), { stack: e.stack });
      throw e;
    }
  };
  const { baseline, hum, filter } = o;
  if (baseline !== false) s = step('baseline', () => s.baseline(baseline ?? {}));
  if (o.artifact) {
    const steps = Array.isArray(o.artifact) ? o.artifact : [o.artifact];
    steps.forEach((a, i) => {
      if (!a || typeof a !== 'object' || Array.isArray(a))
        throw new OptionError(
          `invalid artifact${Array.isArray(o.artifact) ? `[${i}]` : ''}: ${JSON.stringify(a)}; ` +
            'must be artifact options ({ method, window, ... })',
        );
      s = step(Array.isArray(o.artifact) ? `artifact[${i}]` : 'artifact', () => s.removeArtifact(a));
    });
  }
  if (hum) s = step('hum', () => s.removeHum(hum));
  if (filter) s = step('filter', () => s.filter(filter));
  return s;
}

/** Conditions that tell repeats of one condition apart (never grouped on when averaging repeats). */
const REPEAT_KEYS = ['repeat', 'acquiredS', 'fileSweep', 'sweep'];

/**
 * Average the repeats of each condition: sweeps whose conditions are equal apart from `repeat`,
 * `acquiredS` and `fileSweep` (the sweep's index in its file) become one mean sweep (conditions: the shared ones,
 * `count`, and the mean `acquiredS` when every member has one). Unchanged when no `repeat` condition has two values.
 */
export function averageRepeats(set: SweepSet): SweepSet {
  const reps = new Set(set.conditions.map((c) => c.repeat).filter((v) => v !== undefined && v !== null));
  if (reps.size < 2) return set;
  const keys = [...new Set(set.conditions.flatMap((c) => Object.keys(c)))]
    .filter((k) => !REPEAT_KEYS.includes(k))
    .sort();
  const g = set.groupBy(...keys);
  if (g.groups.length === set.nSweeps) return set;
  const avg = g.average({ method: 'mean' });
  const conditions = avg.conditions.map((c, i) => {
    const t = g.groups[i].indices.map((ix) => set.conditions[ix].acquiredS);
    return t.every((v) => typeof v === 'number')
      ? { ...c, acquiredS: (t as number[]).reduce((a, b) => a + b, 0) / t.length }
      : c;
  });
  const step: Step = {
    verb: 'averageRepeats',
    options: { method: 'mean', ignored: REPEAT_KEYS, sweeps: set.nSweeps, groups: g.groups.length },
    version: VERSION,
  };
  return avg.create({ conditions, history: [...set.history, step] });
}

/** Per-preparation (or per-set) analysis shared by runPipeline and runPreparation. */
export interface Analysed {
  conditioned: SweepSet;
  table: ComponentTable;
  /** the context every registered analysis ran in: results by id, flags, notes */
  context: PrepContext;
  flags: Flag[];
  notes: string[];
}

/**
 * Quality control (and rejection) on the sweeps as given, conditioning, the analyses that read the conditioned
 * sweeps (paired pulse, trains, velocity distributions), averaging of repeats, components, and the analyses of the
 * component table: each registered analysis at its stage.
 */
export function analyse(raw: SweepSet, o: PipelineOptions, prep: string | null = null): Analysed {
  const ctx: PrepContext = {
    prep,
    options: o,
    input: raw,
    raw,
    conditioned: null,
    table: null,
    results: {},
    flags: [],
    notes: [],
  };
  const stage = (name: 'raw' | 'conditioned' | 'components') => {
    for (const a of ANALYSES) {
      if (!a.perPreparation || stageOf(a) !== name) continue;
      const r = a.perPreparation(ctx);
      if (r === null || r === undefined) continue;
      ctx.results[a.id] = r;
      if (a.sweepsAfter) ctx.raw = a.sweepsAfter(r);
    }
  };
  stage('raw');
  let conditioned = condition(ctx.raw, o);
  ctx.conditioned = conditioned;
  // these analyses average (or resample) the sweeps of each condition themselves
  stage('conditioned');
  if (o.averageRepeats !== false) {
    const before = conditioned.nSweeps;
    conditioned = averageRepeats(conditioned);
    if (conditioned.nSweeps !== before)
      ctx.notes.push(
        `${prep ? `${prep}: ` : ''}repeats averaged before measuring: ${before} sweeps -> ${conditioned.nSweeps} ` +
          '(set averageRepeats: false to measure every sweep)',
      );
  }
  ctx.conditioned = conditioned;
  ctx.table = standardSweeps(conditioned, o).components(o.components ?? {});
  stage('components');
  return { conditioned, table: ctx.table, context: ctx, flags: ctx.flags, notes: ctx.notes };
}

/** The per-preparation tables of every analysis that ran (rows as objects), by table name. */
export function preparationTables(ctx: PrepContext): Record<string, readonly object[]> {
  const out: Record<string, readonly object[]> = {};
  for (const a of ANALYSES) {
    const r = ctx.results[a.id];
    if (r === undefined || !a.prepTables) continue;
    Object.assign(out, a.prepTables(r, ctx));
  }
  return out;
}

/** Run the standard pipeline on a loaded study. */
export function runPipeline(set: SweepSet, o: PipelineOptions = {}): StudyResult {
  const a = analyse(set, o);
  const { table, notes, flags } = a;
  const ctx = a.context;
  let prepTables: Record<string, readonly object[]> | null = null;
  const prepTable = (name: string) => ((prepTables ??= preparationTables(ctx))[name] ?? []) as Row[];
  const across: StudyContext = {
    mode: 'pipeline',
    options: o,
    units: set.units,
    components: table.rows,
    prepTable,
    perPreparation: (name) => [{ preparation: ctx.prep ?? '', rows: prepTable(name) }],
    prepSteps: () => [],
    history: [...table.history],
    sources: set.sources,
    results: {},
    flags,
    notes,
  };
  // the across-preparation steps of the analyses without a per-preparation step (on one set, the per-preparation
  // result is the whole set's)
  for (const e of ANALYSES) {
    if (e.perPreparation || !e.acrossPreparations) continue;
    const out = e.acrossPreparations(across);
    if (out?.result !== undefined) across.results[e.id] = out.result;
  }
  const results = { ...ctx.results, ...across.results };
  const rec = ctx.results.recruitment as RecruitmentOutput | undefined;
  const qc = ctx.results['sweep-qc'] as QcOutput | undefined;
  return {
    conditioned: a.conditioned,
    components: table,
    velocity: (ctx.results.velocity as VelocityResult | undefined) ?? null,
    thresholds: rec?.thresholds ?? [],
    recruitment: rec?.recruitment ?? null,
    doseResponse: (across.results['dose-response'] as DoseResponseResult | undefined) ?? null,
    temperature: (ctx.results.temperature as TemperatureResult | undefined) ?? null,
    strengthDuration: (ctx.results['strength-duration'] as StrengthDurationResult | undefined) ?? null,
    qc: qc?.qc ?? null,
    sweepsRemoved: qc?.sweepsRemoved ?? [],
    pairedPulse: (ctx.results['paired-pulse'] as PairedPulseResult | undefined) ?? null,
    trains: (ctx.results.train as TrainResult | undefined) ?? null,
    groups: (across.results.groups as GroupComparison | undefined) ?? null,
    mixed: (across.results.mixed as MixedModelResult | undefined) ?? null,
    velocityDistributions: (ctx.results['velocity-distribution'] as VelocityDistributionEntry[] | undefined) ?? [],
    results,
    flags,
    history: [...table.history],
    sources: set.sources,
    notes,
  };
}
