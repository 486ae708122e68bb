/**
 * Loader for the vendored development-set fixture (tests/fixtures/devset-measure): independent NEURON-based
 * development set, /work/shared/devset, FNPG-N07. Samples in uV (float32), one row per trace.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';

export const FIXTURE = join(__dirname, '..', 'fixtures', 'devset-measure');
export interface Trace {
  distance_mm: number;
  temperature_C: number;
  condition_index: number;
  repeat: number;
  sweep_index: number;
  channel: number;
  stimulus_mA: number;
}
export interface CleanTrace {
  name: string;
  condition_index: number;
  temperature_C: number;
  distance_mm: number;
  class: string;
}
export interface Series {
  fs: number;
  t0Ms: number;
  nSamples: number;
  units: string;
  railUv: number;
  traces: Trace[];
  clean: CleanTrace[];
}
export interface CleanTruth {
  peak_latency_ms: number;
  onset10_latency_ms: number;
  halfrise_latency_ms: number;
  peak_V: number;
}

export const meta = JSON.parse(readFileSync(join(FIXTURE, 'devset-measure.json'), 'utf8')) as {
  source: string;
  series: Record<string, Series>;
  truth_clean_component: Record<
    string,
    Record<string, Record<string, CleanTruth> & { two_site: Record<string, number> }>
  >;
};

export function load(series: string): { s: Series; data: Float32Array; clean: Float32Array } {
  const s = meta.series[series];
  const buf = (f: string) => {
    const b = readFileSync(join(FIXTURE, f));
    return new Float32Array(b.buffer, b.byteOffset, b.byteLength / 4);
  };
  return { s, data: buf(`${series}.f32`), clean: buf(`${series}_clean.f32`) };
}

/** Class names of the development set mapped to the mammalian preset's names. */
export const CLASS = { A_alpha_beta: 'A-alpha/beta', A_delta: 'A-delta', C: 'C' } as Record<string, string>;
