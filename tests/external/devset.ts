/**
 * Harness for the independent development set (FNPG-N07, an independent NEURON-based
 * simulation from /work/shared/devset, vendored compactly under tests/fixtures/devset).
 *
 * Runs the set through the public API with the manifest a user would write from the set's
 * README and sidecars (tests/fixtures/devset/*.manifest.json: settings from the sidecars,
 * never from the truth) and compares every estimate with the truth of the same definition:
 * - velocities: truth/ground_truth.json clean_component two-site values (peak, onset at 10%
 *   of the clean component's own peak, half-rise), and for definitions the JSON lacks
 *   (centroid, cross-correlation) the same definition applied here to the clean class-only
 *   waveforms (tests/fixtures/devset/clean), with code written for this harness;
 * - Q10: ground_truth.json q10_velocity (two-site peak and onset velocities), and for other
 *   definitions the log-linear fit of the clean-waveform values at 20/25/30/37 C;
 * - IC50 and Hill slope: ground_truth.json dose_response[class][site].fitted_on_clean_peak;
 * - recruitment I50: ground_truth.json thresholds[class].component_recruitment_15mm.I_50%.
 * Tolerances are the issue's (issue 14), not ours to choose.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { readManifest, condition, type PipelineOptions, type SweepSet } from '../../src';

export const FIX = join(__dirname, '..', 'fixtures', 'devset');
export const truth = JSON.parse(readFileSync(join(FIX, 'truth.json'), 'utf8'));
export const CLASSES = ['A-alpha/beta', 'A-delta', 'C'] as const;
export const TEMPS = [20, 25, 30, 37] as const;
/** the window that holds each class (the fast 18 ms window ends before any C fibre arrives) */
export const windowOf = (cls: string): 'fast' | 'slow' => (cls === 'C' ? 'slow' : 'fast');

export interface Check {
  quantity: string;
  class: string;
  where: string;
  estimator: string;
  estimate: number | null;
  truth: number;
  errorPct: number | null;
  tolerancePct: number;
  ok: boolean;
  note?: string;
}

export function check(
  quantity: string,
  cls: string,
  where: string,
  estimator: string,
  estimate: number | null | undefined,
  t: number,
  tol: number,
  note?: string,
): Check {
  const e = typeof estimate === 'number' && Number.isFinite(estimate) ? estimate : null;
  const err = e === null ? null : (100 * (e - t)) / t;
  return {
    quantity,
    class: cls,
    where,
    estimator,
    estimate: e,
    truth: t,
    errorPct: err,
    tolerancePct: tol,
    ok: err !== null && Math.abs(err) <= tol,
    ...(note ? { note } : {}),
  };
}

export function manifestPath(w: 'fast' | 'slow'): string {
  return join(FIX, `${w}.manifest.json`);
}

export function loadStudy(w: 'fast' | 'slow'): { set: SweepSet; analysis: PipelineOptions } {
  const path = manifestPath(w);
  const set = readManifest(path);
  const analysis = JSON.parse(readFileSync(path, 'utf8')).analysis as PipelineOptions;
  return { set, analysis };
}

/** The conditioned sweeps of one series, as the pipeline conditions them. */
export function conditioned(w: 'fast' | 'slow', series: string): { set: SweepSet; analysis: PipelineOptions } {
  const { set, analysis } = loadStudy(w);
  return { set: condition(set.where({ series }), analysis), analysis };
}

// ---- clean class-only waveforms (truth for definitions ground_truth.json does not list) ----

interface CleanMeta {
  columns: string[];
  nSamples: number;
  fs: number;
  t0Ms: number;
}

export function clean(w: 'fast' | 'slow'): {
  meta: CleanMeta;
  get: (T: number, mm: number, cls: string) => Float64Array;
} {
  const meta = JSON.parse(readFileSync(join(FIX, 'clean', `temperature_${w}.json`), 'utf8')) as CleanMeta & {
    conditions: Record<string, number>;
  };
  const b = readFileSync(join(FIX, 'clean', `temperature_${w}.f32`));
  const f = new Float32Array(b.buffer, b.byteOffset, b.byteLength / 4);
  const condOf = Object.fromEntries(Object.entries(meta.conditions).map(([k, v]) => [v, k]));
  return {
    meta,
    get(T, mm, cls) {
      const name = `${condOf[T]}_${mm}mm_${cls.replace('-', '_').replace('/', '_')}`;
      const i = meta.columns.indexOf(name);
      if (i < 0) throw new Error(`no clean column ${name}`);
      return Float64Array.from(f.subarray(i * meta.nSamples, (i + 1) * meta.nSamples));
    },
  };
}

/** Index of the largest sample and the sub-sample crossings of `frac` of it on either side (linear interpolation). */
export function crossings(x: Float64Array, frac: number): { peak: number; rise: number; fall: number } {
  let p = 0;
  for (let i = 1; i < x.length; i++) if (x[i] > x[p]) p = i;
  const lv = frac * x[p];
  let a = p;
  while (a > 0 && x[a - 1] >= lv) a--;
  const rise = a > 0 ? a - 1 + (lv - x[a - 1]) / (x[a] - x[a - 1]) : 0;
  let b = p;
  while (b < x.length - 1 && x[b + 1] >= lv) b++;
  const fall = b < x.length - 1 ? b + (x[b] - lv) / (x[b] - x[b + 1]) : x.length - 1;
  return { peak: p, rise, fall };
}

/** Centre of mass (ms) of the clean component between its crossings of `frac` of its own peak. */
export function cleanCentroidMs(x: Float64Array, fs: number, t0Ms: number, frac: number): number {
  const { rise, fall } = crossings(x, frac);
  let s = 0,
    st = 0;
  for (let i = Math.ceil(rise); i <= Math.floor(fall); i++) {
    s += x[i];
    st += x[i] * i;
  }
  return t0Ms + (st / s) * (1000 / fs);
}

/** Delay (ms) of b against a from the peak of their cross-correlation, parabolic sub-sample refinement (direct sums). */
export function cleanXcorrDelayMs(a: Float64Array, b: Float64Array, fs: number): number {
  const n = a.length;
  let best = -Infinity,
    lag = 0;
  const c = (k: number) => {
    let s = 0;
    for (let i = Math.max(0, -k); i < n && i + k < n; i++) s += a[i] * b[i + k];
    return s;
  };
  for (let k = 0; k < n; k++) {
    const v = c(k);
    if (v > best) {
      best = v;
      lag = k;
    }
  }
  const y0 = c(lag - 1),
    y1 = best,
    y2 = c(lag + 1);
  const d = y0 - 2 * y1 + y2;
  return ((lag + (d < 0 ? (0.5 * (y0 - y2)) / d : 0)) * 1000) / fs;
}

/** Q10 = exp(10 slope) of ln(value) on temperature (least squares), as ground_truth.json defines it. */
export function q10Of(temps: readonly number[], values: readonly number[]): number {
  const y = values.map(Math.log);
  const mx = temps.reduce((a, b) => a + b, 0) / temps.length,
    my = y.reduce((a, b) => a + b, 0) / y.length;
  let sxy = 0,
    sxx = 0;
  temps.forEach((t, i) => {
    sxy += (t - mx) * (y[i] - my);
    sxx += (t - mx) ** 2;
  });
  return Math.exp((10 * sxy) / sxx);
}

/** Print a table of checks (estimate, truth, error, tolerance, within?). */
export function printChecks(title: string, rows: Check[]): string {
  const f = (v: number | null, d = 4) => (v === null ? '-' : Math.abs(v) >= 100 ? v.toFixed(1) : v.toPrecision(d));
  const lines = [title, 'quantity | class | where | estimator | estimate | truth | error % | tol % | within'];
  for (const r of rows) {
    lines.push(
      [
        r.quantity,
        r.class,
        r.where,
        r.estimator,
        f(r.estimate),
        f(r.truth),
        r.errorPct === null ? '-' : r.errorPct.toFixed(1),
        r.tolerancePct,
        r.ok ? 'yes' : 'NO',
      ].join(' | ') + (r.note ? ` (${r.note})` : ''),
    );
  }
  const ok = rows.filter((r) => r.ok).length;
  lines.push(`${ok} of ${rows.length} within tolerance`);
  const s = lines.join('\n');
  console.log(s);
  return s;
}
