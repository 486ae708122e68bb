/**
 * A whole study, split so that preparations can be processed in parallel or in
 * shards: runPreparation() does the per-preparation work (conditioning, components,
 * velocity, thresholds, recruitment, temperature points); combineStudy() does the
 * across-preparation work (dose-response pooling, temperature fits) on their outputs.
 * Both are pure and deterministic, so sharded runs merge to the unsharded result.
 */
import { dirname, resolve } from 'node:path';
import type { ConditionValue, Step, Source, SweepSet } from '../sweeps/SweepSet';
import { analyse, doseFlags, computedCount, groupAnalyses, type Flag, type PipelineOptions } from './pipeline';
import type { GroupComparison } from '../analysis/groups';
import type { MixedModelResult } from '../analysis/mixed';
import { doseResponse, type DoseResponseResult } from '../analysis/doseResponse';
import { fitTemperature, temperatureRow } from '../analysis/temperature';
import { VERSION } from '../version';
import { RECOMMENDED_VELOCITY } from '../analysis/velocity';
import { recruitmentDefaults } from '../analysis/recruitment';

type Row = Record<string, ConditionValue>;

export interface PrepOutput {
  preparation: string;
  units: string;
  components: Row[];
  velocity: Row[];
  thresholds: Row[];
  recruitment: Row[];
  recruitmentPoints: Row[];
  strengthDuration?: Row[];
  strengthDurationPoints?: Row[];
  temperaturePoints: Row[];
  /** per-preparation temperature rows (Q10 within this preparation; flagged rows included) */
  temperatureRows?: Row[];
  /** per-sweep QC (sweep_qc rows, with file and fileSweep) and its per-preparation summary; absent with qc: false */
  sweepQc?: Row[];
  sweepQcSummary?: Row[];
  /** sweeps removed by `reject` (empty when nothing was removed) */
  sweepsRemoved?: Row[];
  /** tables of the optional analyses (result.tables()), by table name: paired_pulse, train, velocity_distribution... */
  extra?: Record<string, Row[]>;
  /** the history steps of those analyses (pairedPulse, trains, velocityDistribution), for the methods text */
  steps?: Step[];
  flags: Row[];
  history: Step[];
  sources: Source[];
  notes: string[];
}

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
}

/** Tables of the optional per-preparation analyses, in bundle order. */
export const EXTRA_TABLES = [
  'paired_pulse',
  'paired_pulse_summary',
  'train',
  'train_summary',
  'velocity_distribution',
  'velocity_distribution_percentiles',
  'velocity_distribution_classes',
  'velocity_distribution_residuals',
] as const;

export interface Study {
  tables: StudyTables;
  history: Step[];
  sources: Source[];
  notes: string[];
  doseResponse: DoseResponseResult | null;
  /** analysis.groups and analysis.mixed results (null when not asked for or failed) */
  groups?: GroupComparison | null;
  mixed?: MixedModelResult | null;
  units: string;
  /** numbers computed (velocities, I50s, IC50s, Q10s, strength-duration rows); 0 = nothing at all could be computed */
  computed: number;
}

const strip = (r: object): Row =>
  JSON.parse(
    JSON.stringify(r, (_k, v) =>
      typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? null : v > 0 ? 'Infinity' : '-Infinity') : v,
    ),
  );

/** Per-preparation work on the sweeps of one preparation (or any subset). */
export function runPreparation(set: SweepSet, o: PipelineOptions): PrepOutput {
  const prep = String(set.conditions[0]?.preparation ?? '');
  const a = analyse(set, o, prep);
  const sd = a.strengthDuration
    ? { rows: a.strengthDuration.rows.map(strip), points: a.strengthDuration.points.map(strip) }
    : null;
  const extra: Record<string, Row[]> = {};
  const add = (t: Record<string, readonly object[]>, head: Row = {}) => {
    for (const [k, rows] of Object.entries(t))
      if ((EXTRA_TABLES as readonly string[]).includes(k))
        (extra[k] ??= []).push(...rows.map((r) => strip({ ...head, ...r })));
  };
  if (a.pairedPulse) add(a.pairedPulse.tables());
  if (a.trains) add(a.trains.tables());
  for (const v of a.velocityDistributions) add(v.result.tables(), v.conditions);
  const last = (h: readonly Step[]) => strip(h[h.length - 1]) as unknown as Step;
  const steps = [a.pairedPulse, a.trains].filter((r) => !!r).map((r) => last(r!.history));
  const v0 = a.velocityDistributions[0]?.result;
  if (v0)
    steps.push({
      ...last(v0.history),
      verb: 'velocityDistributions',
      options: { ...last(v0.history).options, count: a.velocityDistributions.length },
    });
  // QC rows name the sweep's file and its index in the file (the sweep index alone is per preparation)
  const qcRows = a.qc
    ? a.qc.rows.map((r) => {
        const c = set.conditions[r.sweep as number] ?? {};
        const { sweep, preparation, ...rest } = r;
        return strip({
          sweep,
          preparation: preparation ?? prep,
          file: c.file ?? null,
          fileSweep: c.fileSweep ?? null,
          ...rest,
        });
      })
    : null;
  return {
    preparation: prep,
    units: set.units,
    components: a.table.rows.map(strip),
    velocity: a.velocity ? a.velocity.rows.map(strip) : [],
    thresholds: a.thresholds.map(strip),
    recruitment: a.recruitment ? a.recruitment.rows.map(strip) : [],
    recruitmentPoints: a.recruitment ? a.recruitment.points.map(strip) : [],
    temperaturePoints: a.temperature
      ? a.temperature.points.map((p) => strip({ ...p, preparation: p.preparation || prep }))
      : [],
    temperatureRows: a.temperature ? a.temperature.rows.map(strip) : [],
    ...(sd ? { strengthDuration: sd.rows, strengthDurationPoints: sd.points } : {}),
    ...(a.qc
      ? { sweepQc: qcRows!, sweepQcSummary: a.qc.summary().map(strip), sweepsRemoved: a.sweepsRemoved.map(strip) }
      : {}),
    ...(Object.keys(extra).length ? { extra, steps } : {}),
    flags: a.flags.map(strip),
    history: a.table.history.map((h) => strip(h) as unknown as Step),
    sources: [...set.sources],
    notes: a.notes,
  };
}

/** Across-preparation work on per-preparation outputs (in any order: they are sorted by preparation). */
export function combineStudy(parts: PrepOutput[], o: PipelineOptions): Study {
  const ps = [...parts].sort((a, b) => (a.preparation < b.preparation ? -1 : a.preparation > b.preparation ? 1 : 0));
  const units = ps[0]?.units ?? 'uV';
  const components = ps.flatMap((p) => p.components);
  const notes = ps.flatMap((p) => p.notes);
  const flags: Row[] = ps.flatMap((p) => p.flags ?? []);
  const fail = (analysis: Flag['analysis'], cls: string | null, e: unknown) => {
    notes.push(`${analysis}${cls ? ` ${cls}` : ''}: ${(e as Error).message}`);
    flags.push({
      preparation: null,
      analysis,
      class: cls,
      where: null,
      severity: 'rejected',
      status: 'failed',
      reason: (e as Error).message,
    });
  };
  let dr: DoseResponseResult | null = null;
  const drRows = components.some((r) => r.series === 'dose')
    ? components.filter((r) => r.series === 'dose')
    : components;
  if (drRows.some((r) => typeof r.concentration === 'number' && (r.concentration as number) > 0)) {
    try {
      dr = doseResponse(drRows, units, {
        ...(o.poolSites !== undefined ? { poolSites: o.poolSites } : {}),
        ...(o.doseResponse ?? {}),
      });
      flags.push(...doseFlags(dr, null).map(strip));
    } catch (e) {
      fail('dose-response', null, e);
    }
  } else notes.push('dose-response: no sweeps with a drug concentration above 0');
  const tp = ps.flatMap((p) => p.temperaturePoints);
  const temperature: Row[] = [];
  // one fit per class (and site, when the points carry one) and measure over all preparations
  const curveKey = (r: Row) => `${r.class}\u0000${r.distanceMm ?? ''}\u0000${r.measure}`;
  for (const id of [...new Set(tp.map(curveKey))]) {
    const mine = tp.filter((r) => curveKey(r) === id);
    const r0 = mine[0];
    const site: Row = r0.distanceMm !== undefined ? { distanceMm: r0.distanceMm } : {};
    const pts = mine.map((r) => ({
      preparation: r.preparation as string,
      temperatureC: r.temperatureC as number,
      value: r.value as number,
    }));
    try {
      temperature.push(temperatureRow(String(r0.class), String(r0.measure), fitTemperature(pts), site));
    } catch (e) {
      temperature.push({
        class: String(r0.class),
        ...site,
        measure: String(r0.measure),
        q10: null,
        status: 'not detected',
        reason: (e as Error).message,
      });
    }
  }
  // classes with a per-preparation row but no points (not measured at two temperatures anywhere)
  for (const p of ps)
    for (const r of p.temperatureRows ?? []) {
      if (
        r.status === 'not detected' &&
        !temperature.some((q) => q.class === r.class && (q.distanceMm ?? null) === (r.distanceMm ?? null))
      )
        temperature.push({ ...r, preparation: p.preparation });
    }
  for (const r of temperature) {
    if (
      r.status !== 'ok' &&
      !flags.some(
        (f) =>
          f.analysis === 'temperature' &&
          f.class === r.class &&
          f.preparation === (r.preparation ?? null) &&
          f.reason === (r.reason ?? r.status),
      )
    ) {
      flags.push({
        preparation: (r.preparation as string) ?? null,
        analysis: 'temperature',
        class: String(r.class),
        where: String(r.measure ?? ''),
        severity: r.status === 'not detected' ? 'not measured' : 'warning',
        status: String(r.status),
        reason: String(r.reason ?? r.status),
      });
    }
  }
  const history: Step[] = mergeQcSteps(ps[0]?.history ?? [], ps);
  if (ps.some((p) => p.velocity.length))
    history.push({
      verb: 'velocity',
      options: { recommended: JSON.parse(JSON.stringify(RECOMMENDED_VELOCITY)) },
      version: VERSION,
    });
  if (ps.some((p) => p.recruitment.length))
    history.push({
      verb: 'recruitment',
      options: {
        supramaximalFactor: o.recruitment?.supramaximalFactor ?? recruitmentDefaults.supramaximalFactor,
        thresholdFraction: recruitmentDefaults.thresholdFraction,
        minLevels: o.recruitment?.minLevels ?? recruitmentDefaults.minLevels,
      },
      version: VERSION,
    });
  const sdRows = ps.flatMap((p) => p.strengthDuration ?? []);
  if (sdRows.length)
    history.push({
      verb: 'strengthDuration',
      options: { fraction: o.strengthDuration?.fraction ?? 0.5 },
      version: VERSION,
    });
  if (dr) history.push(dr.history[dr.history.length - 1] as Step);
  if (temperature.length)
    history.push({
      verb: 'temperature',
      options: {
        measure: temperature[0].measure,
        model: 'log-linear (Q10) and Arrhenius, preparation-specific intercepts',
      },
      version: VERSION,
    });
  const seen = new Set<string>();
  const sources = ps.flatMap((p) => p.sources).filter((s) => (seen.has(s.path) ? false : (seen.add(s.path), true)));
  const extra: Record<string, Row[]> = {};
  for (const k of EXTRA_TABLES) if (ps.some((p) => p.extra?.[k])) extra[k] = ps.flatMap((p) => p.extra?.[k] ?? []);
  const qc = ps.some((p) => p.sweepQc)
    ? {
        sweep_qc: ps.flatMap((p) => p.sweepQc ?? []),
        sweep_qc_summary: ps.flatMap((p) => p.sweepQcSummary ?? []),
        sweeps_removed: ps.flatMap((p) => p.sweepsRemoved ?? []),
      }
    : {};
  // the optional analyses' own steps (the first preparation's of each verb; their options are the manifest's)
  for (const p of ps) for (const h of p.steps ?? []) if (!history.some((q) => q.verb === h.verb)) history.push(h);
  const vd = history.findIndex((h) => h.verb === 'velocityDistributions');
  if (vd >= 0) {
    const count = ps.reduce(
      (n, p) => n + Number(p.steps?.find((h) => h.verb === 'velocityDistributions')?.options.count ?? 0),
      0,
    );
    history[vd] = { ...history[vd], options: { ...history[vd].options, count } };
  }
  const gFlags: Flag[] = [];
  const g = groupAnalyses(
    components,
    ps.flatMap((p) => p.velocity),
    o,
    history,
    sources,
    gFlags,
    notes,
  );
  flags.push(...gFlags.map(strip));
  const groupTables: Record<string, Row[]> = {};
  for (const r of [g.groups, g.mixed])
    if (r) for (const [k, rows] of Object.entries(r.tables())) groupTables[k] = rows.map(strip);
  if (g.groups) history.push(g.groups.history[g.groups.history.length - 1] as Step);
  if (g.mixed) history.push(g.mixed.history[g.mixed.history.length - 1] as Step);
  return {
    units,
    notes,
    history,
    sources,
    doseResponse: dr,
    groups: g.groups,
    mixed: g.mixed,
    computed: computedCount({
      velocity: ps.flatMap((p) => p.velocity),
      recruitment: ps.flatMap((p) => p.recruitment),
      dose_response_summary: dr ? dr.summary : [],
      temperature,
      strength_duration: sdRows,
      ...extra,
      ...groupTables,
    }),
    tables: {
      components,
      velocity: ps.flatMap((p) => p.velocity),
      thresholds: ps.flatMap((p) => p.thresholds),
      recruitment: ps.flatMap((p) => p.recruitment),
      recruitment_points: ps.flatMap((p) => p.recruitmentPoints),
      ...(sdRows.length
        ? { strength_duration: sdRows, strength_duration_points: ps.flatMap((p) => p.strengthDurationPoints ?? []) }
        : {}),
      dose_response_points: dr ? dr.points.map(strip) : [],
      dose_response_per_preparation: dr ? dr.perPreparation.map(strip) : [],
      dose_response_summary: dr ? dr.summary.map(strip) : [],
      dose_response_comparisons: dr ? dr.comparisons.map(strip) : [],
      temperature: temperature.map(strip),
      temperature_points: tp,
      flags: flags.map(strip),
      ...qc,
      ...extra,
      ...groupTables,
    },
  };
}

/**
 * The QC steps of a study's history: one rejectFlagged step listing the sweeps removed from every preparation
 * (each preparation's own history lists only its own), or the first preparation's sweepQc step (flag only).
 */
function mergeQcSteps(history: readonly Step[], ps: readonly PrepOutput[]): Step[] {
  const steps = ps.map((p) => p.history.find((h) => h.verb === 'rejectFlagged')).filter((h): h is Step => !!h);
  if (!steps.length) return [...history];
  const removed = steps.flatMap((h) => (h.options.removed as Row[]) ?? []);
  const kept = steps.reduce((n, h) => n + Number(h.options.kept ?? 0), 0);
  const merged: Step = { ...steps[0], options: { ...steps[0].options, removed, kept } };
  return history.map((h) => (h.verb === 'rejectFlagged' ? merged : h));
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
