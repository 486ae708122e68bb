/**
 * Analytic generalisation probe (made by this project's test, NOT an external dataset): recordings from
 * tests/fixtures/probe/make_probe.py (NumPy; seeded). Each fibre's potential is the line-source model of the
 * extracellular potential (Clark & Plonsey 1968; Nandedkar & Stalberg 1983: monopolar potential proportional to the
 * second spatial derivative of the membrane potential seen through 1/distance) of a travelling action potential of
 * Rosenfalck's (1969) shape, (t/tau)^3 exp(-t/tau); formulas written from memory. That gives triphasic shapes with a
 * negative main phase, which the development set (monophasic, positive) does not have; plus 3 and 4 contacts, a
 * bipolar channel, 40 and 25 kHz, 60 Hz hum, a ringing stimulus artifact, int16 files, and a cuff nerve whose
 * A-alpha/beta conducts below the mammalian preset's range.
 *
 * This file: reading the probe's files as a lab describes them, writing the manifests a user would write from the
 * README (settings from the description, never from the truth), and the truth of every latency definition on the
 * clean class-only waveforms (the same definitions and code as tests/external/devset.ts and variants.ts).
 */
import { copyFileSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { PipelineOptions } from '../../src';
import { cleanCentroidMs, cleanXcorrDelayMs, crossings, q10Of } from './devset';
import { parabolicPeakIndex } from './variants';

export const PFIX = join(__dirname, '..', 'fixtures', 'probe');
export const ptruth = JSON.parse(readFileSync(join(PFIX, 'truth.json'), 'utf8'));
export type W = 'fast' | 'slow';
export const CLASSES_OF: Record<W, string[]> = { fast: ['A-alpha/beta', 'A-delta'], slow: ['C'] };
export const PREPS = Object.keys(ptruth.preparations) as string[];
type Row = Record<string, unknown>;

/** A series file's description, as the lab wrote it (tests/fixtures/probe/data/<prep>_<series>_<window>.json). */
export interface Description {
  preparation: string;
  series: string;
  window: W;
  file: string;
  dtype: 'float32' | 'int16';
  units: string;
  gain: number;
  n_sweeps: number;
  n_channels: number;
  n_samples: number;
  sampling_rate_hz: number;
  time_of_first_sample_ms: number;
  stimulus_pulse_ms: number;
  amplifier_rail_V: number;
  mains_hz: number;
  configuration: string;
  channels: { channel: number; distance_mm: number; reference_distance_mm?: number }[];
  sweeps: { sweep: number; temperature_C: number; stimulus_mA: number; concentration_uM: number; repeat: number }[];
}

export const description = (prep: string, series: string, w: W): Description =>
  JSON.parse(readFileSync(join(PFIX, 'data', `${prep}_${series}_${w}.json`), 'utf8'));

export const seriesOf = (prep: string, w: W): string[] => Object.keys(ptruth.preparations[prep].windows[w].files);

/**
 * The analysis settings a user writes from the README and the description: baseline before the stimulus; in the
 * long window a late baseline, the stimulus blanked, the 60 Hz mains the description names removed outside the
 * response, a 5 kHz low-pass (a fifth of 25 kHz); the mammalian preset; nothing from the truth.
 */
export function analysisFor(d: Description): PipelineOptions {
  const t0 = d.time_of_first_sample_ms;
  const end = t0 + (d.n_samples * 1000) / d.sampling_rate_hz;
  if (d.window === 'fast') return { baseline: { window: [t0, -0.1] }, components: { preset: 'mammalian' } };
  return {
    baseline: { window: [t0, -0.1], lateWindow: [end - 20, end - 1] },
    artifact: { method: 'blank', window: [0, 0.4], bridge: 'linear' },
    hum: { frequency: d.mains_hz, harmonics: 3, exclude: [[0, Math.round(end * 0.7)]] },
    filter: { btype: 'lowpass', cutoff: 5000, order: 4 },
    components: { preset: 'mammalian', earliestMs: 0.4 },
  } as PipelineOptions;
}

/** Write one preparation's window as a user's study: the binaries copied, one sidecar per channel, a manifest. */
export function writeStudy(dir: string, prep: string, w: W): { manifest: string; analysis: PipelineOptions } {
  mkdirSync(join(dir, 'data'), { recursive: true });
  const files: Row[] = [];
  let analysis: PipelineOptions | null = null;
  for (const series of seriesOf(prep, w)) {
    const d = description(prep, series, w);
    analysis ??= analysisFor(d);
    copyFileSync(join(PFIX, 'data', d.file), join(dir, 'data', d.file));
    for (const ch of d.channels) {
      const side = `${prep}_${series}_${w}.c${ch.channel + 1}.json`;
      writeFileSync(
        join(dir, 'data', side),
        JSON.stringify({
          data: d.file,
          dtype: d.dtype,
          gain: d.gain,
          offset: 0,
          byteOrder: 'little',
          layout: 'sweep-major',
          nSweeps: d.n_sweeps,
          nSamples: d.n_samples,
          nChannels: d.n_channels,
          channel: ch.channel,
          fs: d.sampling_rate_hz,
          t0Ms: d.time_of_first_sample_ms,
          units: d.units,
        }),
      );
      files.push({
        path: `data/${side}`,
        format: 'binary',
        conditions: {
          preparation: prep,
          series,
          site: `c${ch.channel + 1}`,
          distanceMm: ch.distance_mm,
          ...(ch.reference_distance_mm !== undefined ? { referenceDistanceMm: ch.reference_distance_mm } : {}),
          intensityUnit: 'mA',
          pulseWidthMs: d.stimulus_pulse_ms,
          concentrationUnit: 'uM',
        },
        sweeps: d.sweeps.map((s) => ({
          intensity: s.stimulus_mA,
          temperatureC: s.temperature_C,
          concentration: s.concentration_uM,
          drug: s.concentration_uM > 0 ? 'probe blocker' : null,
          epoch: s.concentration_uM > 0 ? 'drug' : 'baseline',
          repeat: s.repeat,
        })),
      });
    }
  }
  const manifest = {
    fascicleManifest: 1,
    study: `analytic probe ${prep}, ${w} window (made by tests/fixtures/probe/make_probe.py)`,
    classPreset: 'mammalian',
    required: ['preparation', 'distanceMm', 'temperatureC', 'intensity'],
    analysis,
    files,
  };
  const path = join(dir, `${prep}-${w}.manifest.json`);
  writeFileSync(path, JSON.stringify(manifest, null, 1));
  return { manifest: path, analysis: analysis as PipelineOptions };
}

// ---------------------------------------------------------------- truth from the clean class-only waveforms

interface CleanSet {
  fs: number;
  t0Ms: number;
  get: (T: number, mm: number, cls: string) => Float64Array;
  temps: number[];
  distances: number[];
}
const cleanCache = new Map<string, CleanSet>();
/** The clean supramaximal class-only waveforms of a preparation's velocity series, main phase made positive. */
export function cleanOf(prep: string, w: W): CleanSet {
  const key = `${prep}_${w}`;
  const hit = cleanCache.get(key);
  if (hit) return hit;
  const meta = JSON.parse(readFileSync(join(PFIX, 'clean', `${key}.json`), 'utf8'));
  const b = readFileSync(join(PFIX, 'clean', `${key}.f32`));
  const f = new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  const cols: string[] = meta.columns;
  const parsed = cols.map((c) => /^T(\d+)_([\d.]+)mm_(.+)$/.exec(c)!);
  const set: CleanSet = {
    fs: meta.fs,
    t0Ms: meta.t0Ms,
    temps: [...new Set(parsed.map((p) => Number(p[1])))].sort((a, b) => a - b),
    distances: [...new Set(parsed.map((p) => Number(p[2])))].sort((a, b) => a - b),
    get(T, mm, cls) {
      const i = parsed.findIndex((p) => Number(p[1]) === T && Number(p[2]) === mm && p[3] === cls);
      if (i < 0) throw new Error(`no clean column T${T}_${mm}mm_${cls}`);
      const sign = ptruth.preparations[prep].classes[cls].main_phase_sign as number;
      return Float64Array.from(f.subarray(i * meta.nSamples, (i + 1) * meta.nSamples), (v) => sign * v);
    },
  };
  cleanCache.set(key, set);
  return set;
}

/** Latency (ms) of a definition on a clean waveform whose main phase is positive (as tests/external/variants.ts). */
export function latencyMs(x: Float64Array, fs: number, t0Ms: number, basis: string): number | null {
  const dt = 1000 / fs;
  if (basis === 'peak') return t0Ms + parabolicPeakIndex(x) * dt;
  if (basis === 'onset') return t0Ms + crossings(x, 0.1).rise * dt;
  if (basis === 'halfrise') return t0Ms + crossings(x, 0.5).rise * dt;
  if (basis === 'centroid') return cleanCentroidMs(x, fs, t0Ms, 0.1);
  return null;
}

/**
 * Truth (m/s) of a velocity row: single-site distance / latency at its site; two-site (near, far) by the same
 * definition at both (xcorr: the cross-correlation delay of the clean components); regression: 1 / slope of the
 * clean latencies on every distance (least squares).
 */
export function velocityTruth(prep: string, w: W, cls: string, T: number, r: Row): number | null {
  const c = cleanOf(prep, w);
  const basis = String(r.basis);
  const at = (mm: number) => latencyMs(c.get(T, mm, cls), c.fs, c.t0Ms, basis);
  if (r.method === 'single-site') {
    const mm = Number(r.distance_mm ?? r.distanceMm ?? c.distances[0]);
    const lat = at(mm);
    return lat === null ? null : mm / lat;
  }
  if (r.method === 'two-site') {
    const a = Number(r.near_mm),
      b = Number(r.far_mm);
    if (!c.distances.includes(a) || !c.distances.includes(b)) return null;
    if (basis === 'xcorr') return (b - a) / cleanXcorrDelayMs(c.get(T, a, cls), c.get(T, b, cls), c.fs);
    const la = at(a),
      lb = at(b);
    return la === null || lb === null ? null : (b - a) / (lb - la);
  }
  if (r.method === 'regression') {
    if (c.distances.length < 2) return null;
    const ys = c.distances.map(at);
    if (ys.some((y) => y === null)) return null;
    const xs = c.distances;
    const mx = xs.reduce((p, q) => p + q, 0) / xs.length,
      my = (ys as number[]).reduce((p, q) => p + q, 0) / ys.length;
    let sxy = 0,
      sxx = 0;
    xs.forEach((x, i) => {
      sxy += (x - mx) * ((ys[i] as number) - my);
      sxx += (x - mx) ** 2;
    });
    return sxx / sxy;
  }
  return null;
}

/** Q10 truth of an estimator: the log-linear fit of its clean-waveform truth over the preparation's temperatures. */
export function q10Truth(prep: string, w: W, cls: string, est: Row): number | null {
  const c = cleanOf(prep, w);
  if (c.temps.length < 2) return null;
  const vals = c.temps.map((T) => velocityTruth(prep, w, cls, T, est));
  return vals.every((v) => v !== null && Number.isFinite(v)) ? q10Of(c.temps, vals as number[]) : null;
}
