/**
 * The standard pipeline: conditioning, averaging of repeats, components, velocity, and whichever
 * of recruitment, dose-response and temperature the data supports. Options come from the
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
import { temperatureAnalysis, velocityTemperature, type TemperatureResult } from '../analysis/temperature';
import {
  singleSiteVelocity,
  twoSiteVelocity,
  regressionVelocity,
  markRecommended,
  measured,
  RECOMMENDED_VELOCITY,
  type VelocityRow,
} from '../analysis/velocity';
import { recruitmentDefaults } from '../analysis/recruitment';
import {
  sweepQc,
  rejectFlagged,
  rejectedSweeps,
  qcStepMethods,
  QC_REFERENCES,
  type SweepQcOptions,
  type SweepQcResult,
  type QcFlag,
} from '../analysis/sweepQc';
import { pairedPulse, type PairedPulseOptions, type PairedPulseResult } from '../analysis/pairedPulse';
import { trains, type TrainOptions, type TrainResult } from '../analysis/trains';
import {
  compareGroups,
  groupStepMethods,
  GROUP_REFERENCES,
  type GroupOptions,
  type GroupComparison,
} from '../analysis/groups';
import {
  mixedModel,
  mixedStepMethods,
  MIXED_REFERENCES,
  type MixedOptions,
  type MixedModelResult,
} from '../analysis/mixed';
import {
  velocityDistribution,
  methodsSentence as velocityDistributionSentence,
  type VelocityDistributionOptions,
  type VelocityDistributionResult,
} from '../analysis/velocityDistribution';
import { registerStepMethods } from './methods';
import { OptionError } from '../errors';
import { checkKeys } from '../validate';
import { ComponentTable, VelocityResult } from '../measure/table';
import { VERSION } from '../version';

type Row = Record<string, ConditionValue>;

registerStepMethods({
  qcStepMethods,
  qcReferences: QC_REFERENCES,
  groupStepMethods,
  groupReferences: GROUP_REFERENCES,
  mixedStepMethods,
  mixedReferences: MIXED_REFERENCES,
  velocityDistributionSentence,
});

export interface PipelineOptions {
  baseline?: BaselineOptions | false;
  /** one artifact step, or several applied in order (e.g. blank the rail, then fit the tail) */
  artifact?: ArtifactOptions | ArtifactOptions[] | false;
  hum?: HumOptions | false;
  filter?: FilterOptions | false;
  /**
   * average the repeats of each condition before measuring (sweeps whose conditions are equal
   * apart from `repeat`, `acquiredS` and the sweep's index in its file), when the sweeps have a `repeat` condition with more
   * than one value (default true; false measures every sweep). Averaged repeats leave one sweep per
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
export const GROUP_TABLES: readonly GroupTable[] = ['components', 'velocity'];

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
    | 'velocity-distribution';
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
  flags: Flag[];
  history: readonly Step[];
  sources: readonly Source[];
  notes: string[];
}

/** Condition a set as the options say (each step optional), in the order baseline, artifact(s), hum, filter. */
export function condition(set: SweepSet, o: PipelineOptions): SweepSet {
  let s = set;
  if (o.baseline !== false) s = s.baseline(o.baseline ?? {});
  if (o.artifact) {
    const steps = Array.isArray(o.artifact) ? o.artifact : [o.artifact];
    steps.forEach((a, i) => {
      if (!a || typeof a !== 'object' || Array.isArray(a))
        throw new OptionError(
          `invalid artifact${Array.isArray(o.artifact) ? `[${i}]` : ''}: ${JSON.stringify(a)}; must be artifact options ({ method, window, ... })`,
        );
      s = s.removeArtifact(a);
    });
  }
  if (o.hum) s = s.removeHum(o.hum);
  if (o.filter) s = s.filter(o.filter);
  return s;
}

/** Conditions that tell repeats of one condition apart (never grouped on when averaging repeats). */
const REPEAT_KEYS = ['repeat', 'acquiredS', 'fileSweep', 'sweep'];

/**
 * Average the repeats of each condition: sweeps whose conditions are equal apart from `repeat`,
 * `acquiredS` and `fileSweep` (the sweep's index in its file) become one mean sweep (conditions: the shared ones, `count`, and the mean
 * `acquiredS` when every member has one). Unchanged when no `repeat` condition has two values.
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

const hasSeries = (t: ComponentTable, name: string) => t.rows.some((r) => r.series === name);

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
      ...regressionVelocity(t.rows, by, t.resolved),
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

/**
 * Flags from rows with a status other than ok. Rows that share preparation, class, status and
 * reason (e.g. every latency definition of a class not detected) give one flag, with `rows` counting them.
 */
export function flagsFrom(
  analysis: Flag['analysis'],
  rows: readonly Row[],
  preparation: string | null,
  where: (r: Row) => string | null,
): Flag[] {
  const out = new Map<string, Flag>();
  for (const r of rows) {
    const st = r.status;
    if (st === undefined || st === null || st === 'ok') continue;
    const s = String(st);
    const severity: Flag['severity'] =
      s === 'implausible' || s === 'failed' ? 'rejected' : s === 'not detected' ? 'not measured' : 'warning';
    const f: Flag = {
      preparation: (r.preparation as string | undefined) ?? preparation,
      analysis,
      class: (r.class as string | undefined) ?? null,
      where: where(r),
      severity,
      status: s,
      reason: String(r.reason ?? s),
      rows: 1,
    };
    const k = JSON.stringify([f.preparation, f.class, f.where, r.group ?? null, r.distanceMm ?? null, s, f.reason]);
    const seen = out.get(k);
    if (seen) seen.rows = (seen.rows as number) + 1;
    else out.set(k, f);
  }
  return [...out.values()];
}

// the latency definition is named when the value itself was rejected (not-detected rows share one flag)
const velocityWhere = (r: Row) =>
  [
    r.method,
    r.status === 'implausible' ? r.basis : null,
    r.method === 'two-site' ? `${r.near_mm}-${r.far_mm} mm` : r.method === 'single-site' ? `${r.distance_mm} mm` : null,
    r.group,
  ]
    .filter(Boolean)
    .join(', ');

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
        'the threshold table finds the class in fewer than half the sweeps at every intensity: the curve rests on single detections';
      r.status = r.status === 'ok' ? why : `${r.status}; ${why}`;
    }
  }
}

/** Per-preparation (or per-set) analysis shared by runPipeline and runPreparation. */
export interface Analysed {
  conditioned: SweepSet;
  table: ComponentTable;
  velocity: VelocityResult | null;
  thresholds: Record<string, ConditionValue>[];
  recruitment: RecruitmentResult | null;
  strengthDuration: StrengthDurationResult | null;
  temperature: TemperatureResult | null;
  qc: SweepQcResult | null;
  sweepsRemoved: Row[];
  pairedPulse: PairedPulseResult | null;
  trains: TrainResult | null;
  velocityDistributions: VelocityDistributionEntry[];
  flags: Flag[];
  notes: string[];
}

/** A velocity distribution and the conditions of its sweeps (preparation, temperatureC, concentration, ...). */
export interface VelocityDistributionEntry {
  conditions: Row;
  result: VelocityDistributionResult;
}

function failed(flags: Flag[], notes: string[], analysis: Flag['analysis'], prep: string | null, e: unknown): void {
  const msg = (e as Error).message;
  notes.push(`${prep ? `${prep} ` : ''}${analysis}: ${msg}`);
  flags.push({
    preparation: prep,
    analysis,
    class: null,
    where: null,
    severity: 'rejected',
    status: 'failed',
    reason: msg,
  });
}

/** Conditioning, averaging of repeats, components, velocity, thresholds, recruitment, strength-duration, temperature. */
export function analyse(raw: SweepSet, o: PipelineOptions, prep: string | null = null): Analysed {
  const notes: string[] = [];
  const flags: Flag[] = [];
  const { set, qc, sweepsRemoved } = qualityControl(raw, o, prep, flags, notes);
  let conditioned = condition(set, o);
  // these analyses average (or resample) the sweeps of each condition themselves
  const recovery = recoveryAnalyses(conditioned, o, prep, flags, notes);
  const vdist = velocityDistributions(conditioned, o, prep, flags, notes);
  if (o.averageRepeats !== false) {
    const before = conditioned.nSweeps;
    conditioned = averageRepeats(conditioned);
    if (conditioned.nSweeps !== before)
      notes.push(
        `${prep ? `${prep}: ` : ''}repeats averaged before measuring: ${before} sweeps -> ${conditioned.nSweeps} (set averageRepeats: false to measure every sweep)`,
      );
  }
  const table = standardSweeps(conditioned, o).components(o.components ?? {});
  const has = (name: string) => hasSeries(table, name);
  // velocity: the distance series when present, else drug-free sweeps
  const vt = has('distance') ? table.subset({ series: 'distance' }) : table.subset((r) => !r.concentration);
  let velocity: VelocityResult | null = null;
  try {
    velocity = velocityOf(vt);
    flags.push(...flagsFrom('velocity', velocity.rows as unknown as Row[], prep, velocityWhere));
  } catch (e) {
    failed(flags, notes, 'velocity', prep, e);
  }
  const it = has('intensity')
    ? table.subset({ series: 'intensity' })
    : table.subset((r) => typeof r.intensity === 'number');
  let thresholds: Record<string, ConditionValue>[] = [];
  try {
    thresholds = it.threshold();
  } catch (e) {
    failed(flags, notes, 'thresholds', prep, e);
  }
  let recruitment: RecruitmentResult | null = null;
  if (new Set(it.rows.map((r) => r.intensity)).size >= 4) {
    try {
      recruitment = it.recruitment(o.recruitment ?? {});
      agreeWithThresholds(recruitment.rows, thresholds);
      flags.push(
        ...flagsFrom('recruitment', recruitment.rows, prep, (r) =>
          r.distanceMm !== undefined ? `${r.distanceMm} mm` : null,
        ),
      );
    } catch (e) {
      failed(flags, notes, 'recruitment', prep, e);
    }
  } else notes.push(`${prep ? `${prep} ` : ''}recruitment: fewer than 4 stimulus intensities; not fitted`);
  // strength-duration: a pulse-width series (or any rows with three or more pulse widths)
  const pt = has('pulse-width')
    ? table.subset({ series: 'pulse-width' })
    : table.subset((r) => typeof r.pulseWidthMs === 'number');
  let strengthDuration: StrengthDurationResult | null = null;
  if (new Set(pt.rows.map((r) => r.pulseWidthMs)).size >= 3) {
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
        flags.push({
          preparation: prep,
          analysis: 'strength-duration',
          class: cls,
          where: `pulse width ${w} ms`,
          severity: 'not measured',
          status: 'not detected',
          reason: `measured at ${levels.get(k)?.size ?? 0} intensities at this pulse width; a recruitment curve needs ${minLevels}`,
        });
      }
      const sdt = few.size ? pt.subset((r) => !few.has(curve(r))) : pt;
      strengthDuration = sdt.strengthDuration(o.strengthDuration ?? {});
      flags.push(...flagsFrom('strength-duration', strengthDuration.rows as Row[], prep, () => null));
    } catch (e) {
      failed(flags, notes, 'strength-duration', prep, e);
    }
  }
  let temperature: TemperatureResult | null = null;
  const tt = has('temperature') ? table.subset({ series: 'temperature' }) : table.subset((r) => !r.concentration);
  if (new Set(tt.rows.map((r) => r.temperatureC)).size >= 2) {
    try {
      temperature = temperatureOf(tt, o);
      flags.push(...flagsFrom('temperature', temperature.rows, prep, (r) => String(r.measure ?? '')));
    } catch (e) {
      failed(flags, notes, 'temperature', prep, e);
    }
  } else notes.push(`${prep ? `${prep} ` : ''}temperature: fewer than 2 temperatures; no Q10`);
  return {
    conditioned,
    table,
    velocity,
    thresholds,
    recruitment,
    strengthDuration,
    temperature,
    qc,
    sweepsRemoved,
    pairedPulse: recovery.pairedPulse,
    trains: recovery.trains,
    velocityDistributions: vdist,
    flags,
    notes,
  };
}

const say = (prep: string | null) => (prep ? `${prep} ` : '');

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
): { set: SweepSet; qc: SweepQcResult | null; sweepsRemoved: Row[] } {
  if (o.qc === false) {
    if (o.reject)
      throw new OptionError(
        `invalid reject: ${JSON.stringify(o.reject)} with qc: false; rejection removes the sweeps the QC flags (drop qc: false, or reject)`,
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
    qc = sweepQc(set, o.qc ?? {});
  } catch (e) {
    failed(flags, notes, 'sweep-qc', prep, e);
    if (o.reject) notes.push(`${say(prep)}sweep-qc: no sweeps removed (the QC could not be computed)`);
    return { set, qc: null, sweepsRemoved: [] };
  }
  const n = qc.flagged().length;
  if (!o.reject) {
    if (n)
      notes.push(
        `${say(prep)}sweep QC: ${n} of ${qc.rows.length} sweeps flagged and kept (tables/sweep_qc.csv; reject: true removes them)`,
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

/** Whether a sweep belongs to a paired-pulse or train protocol other than a single test pulse. */
function multiPulse(c: Record<string, ConditionValue>, o: PipelineOptions): boolean {
  const role = (o.pairedPulse && o.pairedPulse.roleKey) || 'pulsePair';
  return c.series === 'train' || (c.series === 'paired-pulse' && c[role] !== 'test-alone');
}

/**
 * The sweeps of the standard component table: all but train sweeps and paired-pulse sweeps with two stimuli
 * (their test-alone sweeps are ordinary single responses).
 */
export function standardSweeps(set: SweepSet, o: PipelineOptions): SweepSet {
  const idx: number[] = [];
  set.conditions.forEach((c, i) => {
    if (!multiPulse(c, o)) idx.push(i);
  });
  return idx.length === set.nSweeps ? set : set.select(idx);
}

const seriesOf = (set: SweepSet, name: string) => {
  const idx: number[] = [];
  set.conditions.forEach((c, i) => {
    if (c.series === name) idx.push(i);
  });
  return idx.length ? set.select(idx) : null;
};

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

/** Paired-pulse recovery (series "paired-pulse") and trains (series "train"), each failing on its own. */
function recoveryAnalyses(
  set: SweepSet,
  o: PipelineOptions,
  prep: string | null,
  flags: Flag[],
  notes: string[],
): { pairedPulse: PairedPulseResult | null; trains: TrainResult | null } {
  let pp: PairedPulseResult | null = null,
    tr: TrainResult | null = null;
  const pset = o.pairedPulse === false ? null : seriesOf(set, 'paired-pulse');
  if (pset) {
    try {
      pp = pairedPulse(pset, { components: o.components ?? {}, ...(o.pairedPulse || {}) });
      flags.push(
        ...recoveryFlags('paired-pulse', pp.summary, prep, (r) =>
          r.distanceMm !== undefined && r.distanceMm !== null ? `${r.distanceMm} mm` : null,
        ),
      );
    } catch (e) {
      failed(flags, notes, 'paired-pulse', prep, e);
    }
  }
  const tset = o.trains === false ? null : seriesOf(set, 'train');
  if (tset) {
    try {
      tr = trains(tset, { components: o.components ?? {}, ...(o.trains || {}) });
      flags.push(
        ...recoveryFlags('train', tr.summary, prep, (r) => (r.train_hz !== undefined ? `${r.train_hz} Hz` : null)),
      );
    } catch (e) {
      failed(flags, notes, 'train', prep, e);
    }
  }
  return { pairedPulse: pp, trains: tr };
}

/** Conditions that make one velocity distribution. */
const VDIST_KEYS = ['preparation', 'temperatureC', 'concentration', 'drug', 'epoch', 'pulseWidthMs', 'polarity'];

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
      `invalid velocityDistribution: ${JSON.stringify(vo)}; must be an object of velocity-distribution options ({} for the defaults)`,
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
      const r = velocityDistribution(std.select(idx), { ...o.velocityDistribution });
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

/** The rows a group analysis reads: the component table, or the recommended velocities with per-preparation conditions. */
export function groupRows(
  table: GroupTable | undefined,
  components: readonly Row[],
  velocity: readonly Row[],
  need: string[],
): Row[] {
  const t = table ?? 'components';
  if (!GROUP_TABLES.includes(t))
    throw new OptionError(`invalid table: ${JSON.stringify(t)}; must be one of ${GROUP_TABLES.join(', ')}`);
  if (t === 'components') return components as Row[];
  // a velocity row carries its grouping conditions (its own label of them as velocity_group); a condition constant
  // within a preparation (e.g. the animal's group) is added from the component table
  const rows = velocity
    .filter((r) => r.recommended === true)
    .map((r) => {
      const { group, ...rest } = r;
      return { ...rest, velocity_group: group ?? null } as Row;
    });
  const perPrep = new Map<string, Row>();
  for (const k of need) {
    if (rows.some((r) => k in r)) continue;
    const vals = new Map<string, Set<string>>();
    for (const c of components) {
      if (!(k in c)) continue;
      const p = String(c.preparation ?? '');
      (vals.get(p) ?? vals.set(p, new Set()).get(p)!).add(JSON.stringify(c[k]));
    }
    for (const [p, v] of vals)
      if (v.size === 1) (perPrep.get(p) ?? perPrep.set(p, {}).get(p)!)[k] = JSON.parse([...v][0]);
  }
  return rows.map((r) => ({ ...(perPrep.get(String(r.preparation ?? '')) ?? {}), ...r }));
}

/**
 * Group statistics and the mixed model across preparations, when the options ask for them; a failure is a flag.
 * `history` is the history the results carry (their own step appended).
 */
export function groupAnalyses(
  components: readonly Row[],
  velocity: readonly Row[],
  o: PipelineOptions,
  history: readonly Step[],
  sources: readonly Source[],
  flags: Flag[],
  notes: string[],
): { groups: GroupComparison | null; mixed: MixedModelResult | null } {
  let groups: GroupComparison | null = null,
    mixed: MixedModelResult | null = null;
  const fail = (analysis: Flag['analysis'], e: unknown) => failed(flags, notes, analysis, null, e);
  const obj = (name: string, v: unknown) => {
    if (v === null || typeof v !== 'object' || Array.isArray(v))
      throw new OptionError(`invalid ${name}: ${JSON.stringify(v)}; must be an object ({ value, ... })`);
  };
  if (o.groups !== undefined) {
    obj('groups', o.groups);
    const { table, ...go } = o.groups;
    try {
      const need = [go.group ?? 'group', go.animal, go.condition, ...(go.by ?? [])].filter(
        (k): k is string => typeof k === 'string',
      );
      groups = compareGroups(groupRows(table, components, velocity, need), go, history, sources);
      flags.push(...groupFlags('groups', groups.tests, groups.options.by));
    } catch (e) {
      fail('groups', e);
    }
  }
  if (o.mixed !== undefined) {
    obj('mixed', o.mixed);
    const { table, ...mo } = o.mixed;
    try {
      const need = [...(Array.isArray(mo.fixed) ? mo.fixed : []), mo.random, ...(mo.by ?? [])].filter(
        (k): k is string => typeof k === 'string',
      );
      mixed = mixedModel(groupRows(table, components, velocity, need), mo, history, sources);
      flags.push(...groupFlags('mixed', mixed.variance, mixed.options.by));
    } catch (e) {
      fail('mixed', e);
    }
  }
  return { groups, mixed };
}

/** Flags of tests or fits not computed (status 'not computed', with the reason). */
function groupFlags(analysis: Flag['analysis'], rows: readonly Row[], by: readonly string[]): Flag[] {
  return rows
    .filter((r) => r.status !== 'ok')
    .map((r) => ({
      preparation: null,
      analysis,
      class: (r.class as string | undefined) ?? null,
      where:
        [r.test, r.comparison, ...by.filter((k) => k !== 'class').map((k) => `${k} ${r[k]}`)]
          .filter((v) => v !== undefined && v !== null)
          .join(', ') || null,
      severity: 'not measured' as const,
      status: String(r.status),
      reason: String(r.reason ?? r.status),
    }));
}

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

/** Run the standard pipeline on a loaded study. */
export function runPipeline(set: SweepSet, o: PipelineOptions = {}): StudyResult {
  const a = analyse(set, o);
  const { table, notes, flags } = a;
  let doseResponse: DoseResponseResult | null = null;
  const dt = hasSeries(table, 'dose') ? table.subset({ series: 'dose' }) : table;
  if (dt.rows.some((r) => typeof r.concentration === 'number' && (r.concentration as number) > 0)) {
    try {
      doseResponse = dt.doseResponse({
        ...(o.poolSites !== undefined ? { poolSites: o.poolSites } : {}),
        ...(o.doseResponse ?? {}),
      });
      flags.push(...doseFlags(doseResponse, null));
    } catch (e) {
      failed(flags, notes, 'dose-response', null, e);
    }
  } else notes.push('dose-response: no sweeps with a drug concentration above 0');
  const { groups, mixed } = groupAnalyses(
    table.rows,
    a.velocity ? (a.velocity.rows as unknown as Row[]) : [],
    o,
    table.history,
    set.sources,
    flags,
    notes,
  );
  return {
    conditioned: a.conditioned,
    components: table,
    velocity: a.velocity,
    thresholds: a.thresholds,
    recruitment: a.recruitment,
    doseResponse,
    temperature: a.temperature,
    strengthDuration: a.strengthDuration,
    qc: a.qc,
    sweepsRemoved: a.sweepsRemoved,
    pairedPulse: a.pairedPulse,
    trains: a.trains,
    groups,
    mixed,
    velocityDistributions: a.velocityDistributions,
    flags,
    history: [...table.history],
    sources: set.sources,
    notes,
  };
}

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

/** How many numbers a set of tables holds (velocities, fits): 0 means nothing at all could be computed. */
export function computedCount(t: {
  velocity?: readonly Row[];
  recruitment?: readonly Row[];
  dose_response_summary?: readonly Row[];
  temperature?: readonly Row[];
  strength_duration?: readonly Row[];
  paired_pulse_summary?: readonly Row[];
  train_summary?: readonly Row[];
  group_tests?: readonly Row[];
  mixed_anova?: readonly Row[];
  velocity_distribution_percentiles?: readonly Row[];
}): number {
  const n = (rows: readonly Row[] | undefined, col: string) =>
    (rows ?? []).filter((r) => typeof r[col] === 'number' && Number.isFinite(r[col] as number)).length;
  return (
    n(t.velocity, 'velocity_m_s') +
    n(t.recruitment, 'i50') +
    n(t.dose_response_summary, 'ic50') +
    n(t.temperature, 'q10') +
    (t.strength_duration ?? []).length +
    n(t.paired_pulse_summary, 'r50_ms') +
    n(t.train_summary, 'last_latency_increase_ms') +
    n(t.group_tests, 'p') +
    n(t.mixed_anova, 'p') +
    n(t.velocity_distribution_percentiles, 'velocity_m_s')
  );
}
