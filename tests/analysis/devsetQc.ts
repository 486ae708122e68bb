/**
 * Loader for the compact development-set copy in tests/fixtures/devset-qc (source: /work/shared/devset,
 * FNPG-N07 independent simulation; see tests/fixtures/devset-qc/make_fixture.py). Test helper, not a test.
 */
import { readFileSync } from 'node:fs';
import { gunzipSync } from 'node:zlib';
import { join } from 'node:path';
import { SweepSet } from '../../src';

export const FIXTURE = join(__dirname, '..', 'fixtures', 'devset-qc');

interface Column {
  column: string;
  sweep_index: number;
  channel: number;
  distance_mm: number;
  stimulus_mA: number;
  temperature_C: number;
  concentration_uM: number;
  condition_index: number;
  repeat: number;
}
interface Sidecar {
  preparation_id: string;
  sampling_rate_hz: number;
  time_of_first_sample_s: number;
  columns: Column[];
}
const gz = (name: string) => gunzipSync(readFileSync(join(FIXTURE, name))).toString('utf8');

/** One series as a SweepSet in volts: one sweep per column, conditions from the sidecar. */
export function loadSeries(series: string, csvName = `${series}.csv`): SweepSet {
  const side = JSON.parse(gz(`${series}.json.gz`)) as Sidecar;
  const lines = gz(`${csvName}.gz`).trim().split('\n');
  const head = lines[0].split(',');
  const rows = lines.slice(1).map((l) => l.split(',').map(Number));
  const n = rows.length;
  const cols = side.columns;
  const data = new Float64Array(cols.length * n);
  cols.forEach((c, k) => {
    const j = head.indexOf(c.column);
    if (j < 0) throw new Error(`column ${c.column} missing`);
    for (let i = 0; i < n; i++) data[k * n + i] = rows[i][j];
  });
  return new SweepSet({
    data,
    nSweeps: cols.length,
    nSamples: n,
    fs: side.sampling_rate_hz,
    t0Ms: side.time_of_first_sample_s * 1000,
    units: 'V',
    conditions: cols.map((c) => ({
      preparation: side.preparation_id,
      distanceMm: c.distance_mm,
      channel: c.channel,
      intensity: c.stimulus_mA,
      intensityUnit: 'mA',
      temperatureC: c.temperature_C,
      concentration: c.concentration_uM,
      repeat: c.repeat,
      fileSweep: c.sweep_index,
    })),
  });
}

interface SeriesTruth {
  clipped_samples_fraction: number;
  white_rms_V_t_gt_1ms: number;
  hum_rms_V_t_gt_1ms: number;
}
/** The nuisance truth of the copied series (truth/ground_truth.json, nuisances). */
export const truth = () =>
  JSON.parse(readFileSync(join(FIXTURE, 'truth_nuisances.json'), 'utf8')) as {
    series: Record<string, SeriesTruth>;
    parameters: { rail_mV: number };
  };
