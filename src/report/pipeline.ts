/**
 * The standard pipeline: conditioning, components, velocity, and whichever of
 * recruitment, dose-response and temperature the data supports. Options come from
 * the manifest's "analysis" section (every step optional).
 */
import type { SweepSet, Step, Source } from '../sweeps/SweepSet';
import type { BaselineOptions } from '../verbs/baseline';
import type { ArtifactOptions } from '../verbs/artifact';
import type { HumOptions } from '../verbs/hum';
import type { FilterOptions } from '../verbs/filter';
import type { ComponentOptions } from '../measure/components';
import type { DoseResponseOptions, DoseResponseResult } from '../analysis/doseResponse';
import type { RecruitmentResult } from '../analysis/recruitment';
import type { StrengthDurationOptions } from '../analysis/strengthDuration';
import type { TemperatureResult } from '../analysis/temperature';
import { ComponentTable, VelocityResult } from '../measure/table';

export interface PipelineOptions {
  baseline?: BaselineOptions | false;
  artifact?: ArtifactOptions | false;
  hum?: HumOptions | false;
  filter?: FilterOptions | false;
  components?: ComponentOptions;
  doseResponse?: DoseResponseOptions;
  recruitment?: { measure?: string };
  strengthDuration?: StrengthDurationOptions;
  temperature?: { measure?: string };
}

export interface StudyResult {
  conditioned: SweepSet;
  components: ComponentTable;
  velocity: VelocityResult | null;
  thresholds: Record<string, unknown>[];
  recruitment: RecruitmentResult | null;
  doseResponse: DoseResponseResult | null;
  temperature: TemperatureResult | null;
  history: readonly Step[];
  sources: readonly Source[];
  notes: string[];
}

/** Condition a set as the options say (each step optional), in the order baseline, artifact, hum, filter. */
export function condition(set: SweepSet, o: PipelineOptions): SweepSet {
  let s = set;
  if (o.baseline !== false) s = s.baseline(o.baseline ?? {});
  if (o.artifact) s = s.removeArtifact(o.artifact);
  if (o.hum) s = s.removeHum(o.hum);
  if (o.filter) s = s.filter(o.filter);
  return s;
}

const hasSeries = (t: ComponentTable, name: string) => t.rows.some((r) => r.series === name);

/** Run the standard pipeline on a loaded study. */
export function runPipeline(set: SweepSet, o: PipelineOptions = {}): StudyResult {
  const notes: string[] = [];
  const conditioned = condition(set, o);
  const table = conditioned.components(o.components ?? {});
  // velocity: the distance series when present, else drug-free sweeps
  const vt = hasSeries(table, 'distance') ? table.subset({ series: 'distance' }) : table.subset((r) => !r.concentration);
  let velocity: VelocityResult | null = null;
  try {
    velocity = vt.velocity();
  } catch (e) {
    notes.push(`velocity: ${(e as Error).message}`);
  }
  const it = hasSeries(table, 'intensity') ? table.subset({ series: 'intensity' }) : table.subset((r) => typeof r.intensity === 'number');
  const thresholds = it.threshold();
  let recruitment: RecruitmentResult | null = null;
  if (new Set(it.rows.map((r) => r.intensity)).size >= 4) {
    try { recruitment = it.recruitment(o.recruitment ?? {}); } catch (e) { notes.push(`recruitment: ${(e as Error).message}`); }
  } else notes.push('recruitment: fewer than 4 stimulus intensities; not fitted');
  let doseResponse: DoseResponseResult | null = null;
  const dt = hasSeries(table, 'dose') ? table.subset({ series: 'dose' }) : table;
  if (dt.rows.some((r) => typeof r.concentration === 'number' && (r.concentration as number) > 0)) {
    try { doseResponse = dt.doseResponse(o.doseResponse ?? {}); } catch (e) { notes.push(`dose-response: ${(e as Error).message}`); }
  } else notes.push('dose-response: no sweeps with a drug concentration above 0');
  let temperature: TemperatureResult | null = null;
  const tt = hasSeries(table, 'temperature') ? table.subset({ series: 'temperature' }) : table.subset((r) => !r.concentration);
  if (new Set(tt.rows.map((r) => r.temperatureC)).size >= 2) {
    try { temperature = tt.temperature(o.temperature ?? {}); } catch (e) { notes.push(`temperature: ${(e as Error).message}`); }
  } else notes.push('temperature: fewer than 2 temperatures; no Q10');
  const history = [...table.history];
  return { conditioned, components: table, velocity, thresholds, recruitment, doseResponse, temperature, history, sources: set.sources, notes };
}
