/**
 * A whole study, split so that preparations can be processed in parallel or in
 * shards: runPreparation() does the per-preparation work (conditioning, components and
 * each registered analysis's per-preparation step); combineStudy() does the
 * across-preparation work (dose-response pooling, temperature fits, group statistics) on their outputs.
 * Both are pure and deterministic, so sharded runs merge to the unsharded result.
 */
import { dirname, resolve } from 'node:path';
import type { ConditionValue, Step, Source, SweepSet } from '../sweeps/SweepSet';
import { analyse, preparationTables, type PipelineOptions } from './pipeline';
import type { GroupComparison } from '../analysis/groups';
import type { MixedModelResult } from '../analysis/mixed';
import type { DoseResponseResult } from '../analysis/doseResponse';
import { ANALYSES, computedCount, type StudyContext } from '../registry/index';
import { strip } from '../registry/shared';

import type { Row } from '../registry/types';

export interface PrepOutput {
  preparation: string;
  units: string;
  components: Row[];
  /** the tables of each analysis that ran (JSON rows), by table name; some are read only by the across step */
  tables: Record<string, Row[]>;
  /** the history steps of the analyses that ran, by analysis id, for the study's history and methods text */
  steps: Record<string, Step[]>;
  flags: Row[];
  history: Step[];
  sources: Source[];
  notes: string[];
  /** how the preparation was recorded and how many sweeps were measured (for the methods text) */
  recording?: Recording;
}

/** How a preparation (or a study) was recorded: what the methods text states beside the history. */
export interface Recording {
  /** sampling rates (Hz), distinct */
  sampleRatesHz: number[];
  /** sweeps given to the pipeline */
  sweeps: number;
  /** sweeps measured (after QC removal and averaging of repeats) */
  measured: number;
  /** distinct recording temperatures (°C) of the measured sweeps; [] when none was given */
  temperaturesC: number[];
  /** the sweeps' `preparationType` condition values ('in vitro', 'in vivo', ...), distinct; [] when none */
  preparationTypes: string[];
  /** recording configurations: 'bipolar' (a reference contact distance given), else 'monopolar' */
  configurations: string[];
  /** distinct conduction distances (mm) of the measured sweeps; [] when none was given */
  distancesMm?: number[];
  /** distinct stimulus pulse widths (ms) of the measured sweeps; [] when none was given */
  pulseWidthsMs?: number[];
  /** sweeps removed by sweep QC before measuring (0 when flagged sweeps were kept) */
  removedByQc?: number;
  /** the components option referenceDistanceMm (mm; every channel bipolar with this reference), when given */
  referenceDistanceMm?: number;
}

const distinct = <T>(xs: T[]): T[] => [...new Set(xs)].sort();
const distinctNumbers = (xs: number[]): number[] => [...new Set(xs)].sort((a, b) => a - b);

/** The recording of one preparation's sweeps (the set given, and the measured one). */
function recordingOf(input: SweepSet, measured: SweepSet, o: PipelineOptions): Recording {
  const temps = measured.conditions.map((c) => c.temperatureC).filter((t): t is number => typeof t === 'number');
  const fixed = o.components?.temperatureC;
  const types = input.conditions.map((c) => c.preparationType).filter((t): t is string => typeof t === 'string');
  const bipolar = (c: Record<string, ConditionValue>) =>
    typeof c.referenceDistanceMm === 'number' || typeof o.components?.referenceDistanceMm === 'number';
  const numbers = (k: string) =>
    distinctNumbers(measured.conditions.map((c) => c[k]).filter((v): v is number => typeof v === 'number'));
  const fixedMm = o.components?.distanceMm;
  // the sweeps averaged came after QC removal: what is missing before them was removed
  const avg = measured.history.find((h) => h.verb === 'averageRepeats')?.options.sweeps;
  const beforeAveraging = typeof avg === 'number' ? avg : measured.nSweeps;
  return {
    sampleRatesHz: [input.fs],
    sweeps: input.nSweeps,
    measured: measured.nSweeps,
    temperaturesC: typeof fixed === 'number' ? [fixed] : distinct(temps),
    preparationTypes: distinct(types),
    configurations: distinct(measured.conditions.map((c) => (bipolar(c) ? 'bipolar' : 'monopolar'))),
    distancesMm: typeof fixedMm === 'number' ? [fixedMm] : numbers('distanceMm'),
    pulseWidthsMs: numbers('pulseWidthMs'),
    removedByQc: Math.max(0, input.nSweeps - beforeAveraging),
    ...(typeof o.components?.referenceDistanceMm === 'number'
      ? { referenceDistanceMm: o.components.referenceDistanceMm }
      : {}),
  };
}

/** The recording of a study: its preparations' together. */
function studyRecording(ps: readonly PrepOutput[]): Recording | undefined {
  const rs = ps.map((p) => p.recording).filter((r): r is Recording => !!r);
  if (!rs.length) return undefined;
  return {
    sampleRatesHz: distinct(rs.flatMap((r) => r.sampleRatesHz)),
    sweeps: rs.reduce((n, r) => n + r.sweeps, 0),
    measured: rs.reduce((n, r) => n + r.measured, 0),
    temperaturesC: distinct(rs.flatMap((r) => r.temperaturesC)),
    preparationTypes: distinct(rs.flatMap((r) => r.preparationTypes)),
    configurations: distinct(rs.flatMap((r) => r.configurations)),
    distancesMm: distinctNumbers(rs.flatMap((r) => r.distancesMm ?? [])),
    pulseWidthsMs: distinctNumbers(rs.flatMap((r) => r.pulseWidthsMs ?? [])),
    removedByQc: rs.reduce((n, r) => n + (r.removedByQc ?? 0), 0),
    ...(rs.some((r) => r.referenceDistanceMm !== undefined)
      ? { referenceDistanceMm: rs.find((r) => r.referenceDistanceMm !== undefined)!.referenceDistanceMm }
      : {}),
  };
}

/**
 * The study's averaging step: one averageRepeats step counting the sweeps of every preparation (each
 * preparation's own history counts only its own).
 */
function mergeAveraging(history: Step[], ps: readonly PrepOutput[]): Step[] {
  const steps = ps.map((p) => p.history.find((h) => h.verb === 'averageRepeats')).filter((h): h is Step => !!h);
  if (steps.length < 2) return history;
  const sum = (k: string) => steps.reduce((n, h) => n + Number(h.options[k] ?? 0), 0);
  const merged: Step = { ...steps[0], options: { ...steps[0].options, sweeps: sum('sweeps'), groups: sum('groups') } };
  return history.map((h) => (h.verb === 'averageRepeats' ? merged : h));
}

/** The tables of a combined study: components, each registered analysis's tables, and flags. */
export interface StudyTables {
  components: Row[];
  velocity: Row[];
  thresholds: Row[];
  recruitment: Row[];
  recruitment_points: Row[];
  /** only when a pulse-width series is present */
  strength_duration?: Row[];
  strength_duration_points?: Row[];
  dose_response_points: Row[];
  dose_response_per_preparation: Row[];
  dose_response_summary: Row[];
  dose_response_comparisons: Row[];
  temperature: Row[];
  temperature_points: Row[];
  /** every estimate that could not be made or cannot be right: analysis, class, where, severity, status, reason */
  flags: Row[];
  /** per-sweep QC of the sweeps as recorded (unless qc: false), its summary, and the sweeps removed by `reject` */
  sweep_qc?: Row[];
  sweep_qc_summary?: Row[];
  sweeps_removed?: Row[];
  /** series "paired-pulse" / "train" */
  paired_pulse?: Row[];
  paired_pulse_summary?: Row[];
  train?: Row[];
  train_summary?: Row[];
  /** analysis.groups / analysis.mixed */
  group_summary?: Row[];
  group_tests?: Row[];
  group_points?: Row[];
  mixed_coefficients?: Row[];
  mixed_anova?: Row[];
  mixed_variance?: Row[];
  /** analysis.velocityDistribution (opt-in) */
  velocity_distribution?: Row[];
  velocity_distribution_percentiles?: Row[];
  velocity_distribution_classes?: Row[];
  velocity_distribution_residuals?: Row[];
  /** the tables of any other registered analysis */
  [name: string]: Row[] | undefined;
}

export interface Study {
  tables: StudyTables;
  history: Step[];
  sources: Source[];
  notes: string[];
  /** the across-preparation results of the registered analyses, by analysis id (dose-response, groups, mixed) */
  results?: Record<string, unknown>;
  doseResponse: DoseResponseResult | null;
  /** analysis.groups and analysis.mixed results (null when not asked for or failed) */
  groups?: GroupComparison | null;
  mixed?: MixedModelResult | null;
  units: string;
  /** how the study was recorded (sampling rates, sweeps, temperatures, preparation types, configurations) */
  recording?: Recording;
  /** numbers computed (velocities, I50s, IC50s, Q10s, strength-duration rows); 0 = nothing at all could be computed */
  computed: number;
}

/** Per-preparation work on the sweeps of one preparation (or any subset). */
export function runPreparation(set: SweepSet, o: PipelineOptions): PrepOutput {
  const prep = String(set.conditions[0]?.preparation ?? '');
  const a = analyse(set, o, prep);
  const tables: Record<string, Row[]> = {};
  for (const [k, rows] of Object.entries(preparationTables(a.context))) tables[k] = rows.map(strip);
  const steps: Record<string, Step[]> = {};
  for (const e of ANALYSES) {
    const r = a.context.results[e.id];
    if (r !== undefined && e.prepSteps) steps[e.id] = e.prepSteps(r);
  }
  return {
    preparation: prep,
    units: set.units,
    components: a.table.rows.map(strip),
    tables,
    steps,
    flags: a.flags.map(strip),
    history: a.table.history.map((h) => strip(h) as unknown as Step),
    sources: [...set.sources],
    notes: a.notes,
    recording: recordingOf(set, a.table.set, o),
  };
}

/** Across-preparation work on per-preparation outputs (in any order: they are sorted by preparation). */
export function combineStudy(parts: PrepOutput[], o: PipelineOptions): Study {
  const ps = [...parts].sort((a, b) => (a.preparation < b.preparation ? -1 : a.preparation > b.preparation ? 1 : 0));
  const units = ps[0]?.units ?? 'uV';
  const components = ps.flatMap((p) => p.components);
  const notes = ps.flatMap((p) => p.notes);
  const flags: Row[] = ps.flatMap((p) => p.flags ?? []);
  let history: Step[] = mergeAveraging([...(ps[0]?.history ?? [])], ps);
  for (const e of ANALYSES)
    if (e.studyHistory)
      history = e.studyHistory(
        history,
        ps.map((p) => p.history),
      );
  const seen = new Set<string>();
  const sources = ps.flatMap((p) => p.sources).filter((s) => (seen.has(s.path) ? false : (seen.add(s.path), true)));
  const prepTable = (name: string) => ps.flatMap((p) => p.tables[name] ?? []);
  const ctx: StudyContext = {
    mode: 'study',
    options: o,
    units,
    components,
    prepTable,
    perPreparation: (name) => ps.map((p) => ({ preparation: p.preparation, rows: p.tables[name] ?? [] })),
    prepSteps: (id) => ps.map((p) => p.steps[id] ?? []),
    history,
    sources,
    results: {},
    flags,
    notes,
  };
  const tables: Record<string, Row[]> = { components };
  for (const e of ANALYSES) {
    const out = e.acrossPreparations ? e.acrossPreparations(ctx) : null;
    if (out?.result !== undefined) ctx.results[e.id] = out.result;
    if (out?.steps) history.push(...out.steps);
    for (const t of e.tables) {
      const made = out?.tables?.[t.name];
      if (made) tables[t.name] = made.map(strip);
      else if (t.always || ps.some((p) => p.tables[t.name])) tables[t.name] = prepTable(t.name);
    }
  }
  tables.flags = flags.map(strip);
  const results = ctx.results;
  return {
    units,
    notes,
    history,
    sources,
    results,
    doseResponse: (results['dose-response'] as DoseResponseResult | undefined) ?? null,
    groups: (results.groups as GroupComparison | undefined) ?? null,
    mixed: (results.mixed as MixedModelResult | undefined) ?? null,
    recording: studyRecording(ps),
    computed: computedCount(tables),
    tables: tables as StudyTables,
  };
}

/** Split a loaded study by preparation (sorted by name). */
export function byPreparation(set: SweepSet): { preparation: string; set: SweepSet }[] {
  const preps = [...new Set(set.conditions.map((c) => String(c.preparation ?? '')))].sort();
  return preps.map((p) => {
    const idx: number[] = [];
    set.conditions.forEach((c, i) => {
      if (String(c.preparation ?? '') === p) idx.push(i);
    });
    const sub = set.select(idx);
    // keep only the sources of this preparation's files (plus the manifest)
    // (file conditions are relative to the manifest, the first source)
    const dir = dirname(resolve(set.sources[0]?.path ?? '.'));
    const files = new Set(sub.conditions.map((c) => resolve(dir, String(c.file))));
    const sources = set.sources.filter(
      (s, k) => k === 0 || files.has(resolve(s.path)) || (s.partOf !== undefined && files.has(resolve(s.partOf))),
    );
    return { preparation: p, set: sub.create({ history: set.history, sources }) };
  });
}
