/**
 * A whole study, split so that preparations can be processed in parallel or in
 * shards: runPreparation() does the per-preparation work (conditioning, components,
 * velocity, thresholds, recruitment, temperature points); combineStudy() does the
 * across-preparation work (dose-response pooling, temperature fits) on their outputs.
 * Both are pure and deterministic, so sharded runs merge to the unsharded result.
 */
import { dirname, resolve } from 'node:path';
import type { ConditionValue, Step, Source, SweepSet } from '../sweeps/SweepSet';
import { condition, type PipelineOptions } from './pipeline';
import { doseResponse, type DoseResponseResult } from '../analysis/doseResponse';
import { fitTemperature } from '../analysis/temperature';
import { VERSION } from '../version';

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
}

export interface Study {
  tables: StudyTables;
  history: Step[];
  sources: Source[];
  notes: string[];
  doseResponse: DoseResponseResult | null;
  units: string;
}

const strip = (r: object): Row => JSON.parse(JSON.stringify(r, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? null : v > 0 ? 'Infinity' : '-Infinity') : v)));

/** Per-preparation work on the sweeps of one preparation (or any subset). */
export function runPreparation(set: SweepSet, o: PipelineOptions): PrepOutput {
  const notes: string[] = [];
  const prep = String(set.conditions[0]?.preparation ?? '');
  const table = condition(set, o).components(o.components ?? {});
  const has = (name: string) => table.rows.some((r) => r.series === name);
  const vt = has('distance') ? table.subset({ series: 'distance' }) : table.subset((r) => !r.concentration);
  let velocity: Row[] = [];
  try { velocity = vt.velocity().rows.map(strip); } catch (e) { notes.push(`${prep} velocity: ${(e as Error).message}`); }
  const it = has('intensity') ? table.subset({ series: 'intensity' }) : table.subset((r) => typeof r.intensity === 'number');
  const thresholds = it.threshold().map(strip);
  let recruitment: Row[] = [], recruitmentPoints: Row[] = [];
  if (new Set(it.rows.map((r) => r.intensity)).size >= 4) {
    try {
      const rr = it.recruitment(o.recruitment ?? {});
      recruitment = rr.rows.map(strip);
      recruitmentPoints = rr.points.map(strip);
    } catch (e) { notes.push(`${prep} recruitment: ${(e as Error).message}`); }
  }
  // strength-duration: a pulse-width series (or any rows with three or more pulse widths)
  const pt = has('pulse-width') ? table.subset({ series: 'pulse-width' }) : table.subset((r) => typeof r.pulseWidthMs === 'number');
  let sd: { rows: Row[]; points: Row[] } | null = null;
  if (new Set(pt.rows.map((r) => r.pulseWidthMs)).size >= 3) {
    try {
      const r = pt.strengthDuration(o.strengthDuration ?? {});
      sd = { rows: r.rows.map(strip), points: r.points.map(strip) };
    } catch (e) { notes.push(`${prep} strength-duration: ${(e as Error).message}`); }
  }
  let temperaturePoints: Row[] = [];
  const tt = has('temperature') ? table.subset({ series: 'temperature' }) : table.subset((r) => !r.concentration);
  if (new Set(tt.rows.map((r) => r.temperatureC)).size >= 2) {
    try { temperaturePoints = tt.temperature(o.temperature ?? {}).points.map(strip); } catch (e) { notes.push(`${prep} temperature: ${(e as Error).message}`); }
  }
  return {
    preparation: prep, units: set.units,
    components: table.rows.map(strip), velocity, thresholds, recruitment, recruitmentPoints, temperaturePoints,
    ...(sd ? { strengthDuration: sd.rows, strengthDurationPoints: sd.points } : {}),
    history: table.history.map((h) => strip(h) as unknown as Step), sources: [...set.sources], notes,
  };
}

/** Across-preparation work on per-preparation outputs (in any order: they are sorted by preparation). */
export function combineStudy(parts: PrepOutput[], o: PipelineOptions): Study {
  const ps = [...parts].sort((a, b) => (a.preparation < b.preparation ? -1 : a.preparation > b.preparation ? 1 : 0));
  const units = ps[0]?.units ?? 'uV';
  const components = ps.flatMap((p) => p.components);
  const notes = ps.flatMap((p) => p.notes);
  let dr: DoseResponseResult | null = null;
  const drRows = components.some((r) => r.series === 'dose') ? components.filter((r) => r.series === 'dose') : components;
  if (drRows.some((r) => typeof r.concentration === 'number' && (r.concentration as number) > 0)) {
    try { dr = doseResponse(drRows, units, o.doseResponse ?? {}); } catch (e) { notes.push(`dose-response: ${(e as Error).message}`); }
  } else notes.push('dose-response: no sweeps with a drug concentration above 0');
  const tp = ps.flatMap((p) => p.temperaturePoints);
  const temperature: Row[] = [];
  for (const cls of [...new Set(tp.map((r) => String(r.class)))]) {
    const pts = tp.filter((r) => r.class === cls).map((r) => ({ preparation: r.preparation as string, temperatureC: r.temperatureC as number, value: r.value as number }));
    try {
      const f = fitTemperature(pts);
      temperature.push({ class: cls, measure: String(tp.find((r) => r.class === cls)!.measure), q10: f.q10, q10_ci95_low: f.q10Ci95[0], q10_ci95_high: f.q10Ci95[1], ea_kJ_mol: f.activationEnergyKJ, ea_ci95_low: f.activationEnergyCi95KJ[0], ea_ci95_high: f.activationEnergyCi95KJ[1], preparations: f.preparations, temperatures: f.temperatures.join(', '), n: f.n });
    } catch (e) { notes.push(`temperature ${cls}: ${(e as Error).message}`); }
  }
  const history: Step[] = [...(ps[0]?.history ?? [])];
  if (ps.some((p) => p.velocity.length)) history.push({ verb: 'velocity', options: {}, version: VERSION });
  if (ps.some((p) => p.recruitment.length)) history.push({ verb: 'recruitment', options: { supramaximalFactor: 1.3, thresholdFraction: 0.05 }, version: VERSION });
  const sdRows = ps.flatMap((p) => p.strengthDuration ?? []);
  if (sdRows.length) history.push({ verb: 'strengthDuration', options: { fraction: o.strengthDuration?.fraction ?? 0.5 }, version: VERSION });
  if (dr) history.push(dr.history[dr.history.length - 1] as Step);
  if (temperature.length) history.push({ verb: 'temperature', options: { measure: temperature[0].measure, model: 'log-linear (Q10) and Arrhenius, preparation-specific intercepts' }, version: VERSION });
  const seen = new Set<string>();
  const sources = ps.flatMap((p) => p.sources).filter((s) => (seen.has(s.path) ? false : (seen.add(s.path), true)));
  return {
    units, notes, history, sources, doseResponse: dr,
    tables: {
      components, velocity: ps.flatMap((p) => p.velocity), thresholds: ps.flatMap((p) => p.thresholds),
      recruitment: ps.flatMap((p) => p.recruitment), recruitment_points: ps.flatMap((p) => p.recruitmentPoints),
      ...(sdRows.length ? { strength_duration: sdRows, strength_duration_points: ps.flatMap((p) => p.strengthDurationPoints ?? []) } : {}),
      dose_response_points: dr ? dr.points.map(strip) : [], dose_response_per_preparation: dr ? dr.perPreparation.map(strip) : [],
      dose_response_summary: dr ? dr.summary.map(strip) : [], dose_response_comparisons: dr ? dr.comparisons.map(strip) : [],
      temperature: temperature.map(strip), temperature_points: tp,
    },
  };
}

/** Split a loaded study by preparation (sorted by name). */
export function byPreparation(set: SweepSet): { preparation: string; set: SweepSet }[] {
  const preps = [...new Set(set.conditions.map((c) => String(c.preparation ?? '')))].sort();
  return preps.map((p) => {
    const idx: number[] = [];
    set.conditions.forEach((c, i) => { if (String(c.preparation ?? '') === p) idx.push(i); });
    const sub = set.select(idx);
    // keep only the sources of this preparation's files (plus the manifest)
    // (file conditions are relative to the manifest, the first source)
    const dir = dirname(resolve(set.sources[0]?.path ?? '.'));
    const files = new Set(sub.conditions.map((c) => resolve(dir, String(c.file))));
    const sources = set.sources.filter((s, k) => k === 0 || files.has(resolve(s.path)) || (s.partOf !== undefined && files.has(resolve(s.partOf))));
    return { preparation: p, set: sub.create({ history: set.history, sources }) };
  });
}
