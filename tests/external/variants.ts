/**
 * Generalisation harness: variants of the independent development set (FNPG-N07, a NEURON-based
 * simulation made outside this project, /work/shared/devset, vendored under tests/fixtures/devset)
 * whose truth is still known exactly, written to a temporary folder as a user's files (float32
 * binary + sidecars + a manifest) and run through the public API (readManifest, runPipeline) with
 * the settings a user would write from the README and the recording's description, never from the truth.
 *
 * Variants and where their truth comes from:
 * - inverted: every recorded sample times -1 (a negative-going recording); truth unchanged
 *   (ground_truth.json via tests/fixtures/devset/truth.json; clean components times -1 keep every latency);
 * - hum60: a known 60 Hz + 180 Hz sinusoid (15 uV and 4.5 uV, the set's 50/150 Hz sizes, seeded random phase
 *   per sweep, the same on both channels) added on top; nothing removed, truth unchanged;
 * - bipolar: one channel, 15 mm contact minus 25 mm contact (referenceDistanceMm 25 as the README says); truth
 *   from the difference of the clean class-only components (tests/fixtures/devset/clean for latencies;
 *   tests/fixtures/devset-variants/truth.json, SciPy fits to the clean bipolar peaks, for IC50/Hill and I50);
 * - one-site: the 15 mm channel only; truth: ground_truth.json single-site values (distance / latency);
 * - tail: a longer artifact tail (-B I exp(-(t - 0.1 ms)/tau), x0.6 at 25 mm as the set's artifact) added and
 *   the amplifier rail (10 mV, the sidecars' amplifier_rail_V) applied again; truth unchanged;
 * - artifact-biphasic: the set's artifact model (its README) subtracted and another added (replaceArtifact);
 *   truth unchanged;
 * - populations, populations-small-delta, absent-classes: classes scaled (or removed) by adding multiples of
 *   their clean components (supramaximal temperature series); every latency definition is scale-free;
 * - distances-x1.3: the distances written x1.3 (a nerve conducting 1.3x faster); truth velocities x1.3;
 * - int16-uV: the files stored as int16 counts of 0.5 uV; truth unchanged;
 * - resampled: the recordings at other rates (tests/fixtures/devset-variants/make_variants.py: the artifact
 *   model subtracted, the rest resampled by SciPy's resample_poly, the artifact re-evaluated at the new times,
 *   the rail applied); truth unchanged (ground_truth.json: sampling does not change a velocity; the script
 *   checks that the resampled clean components keep their peak velocity).
 */
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { readManifest, runPipeline, type PipelineOptions, type StudyResult, type ConditionValue } from '../../src';
import { FIX, truth, clean, crossings, cleanCentroidMs, cleanXcorrDelayMs, q10Of, check, type Check } from './devset';

export const VFIX = join(__dirname, '..', 'fixtures', 'devset-variants');
export const vtruth = JSON.parse(readFileSync(join(VFIX, 'truth.json'), 'utf8'));
export type W = 'fast' | 'slow';
export type SeriesFile = 'recruitment' | 'dose_response' | 'temperature';
export const SERIES_OF: Record<SeriesFile, string> = {
  recruitment: 'intensity',
  dose_response: 'dose',
  temperature: 'temperature',
};
export const CLASSES_OF: Record<W, string[]> = { fast: ['A-alpha/beta', 'A-delta'], slow: ['C'] };
export const TEMPS = [20, 25, 30, 37];
/** the amplifier rail the sidecars state (amplifier_rail_V) */
export const RAIL_V = 0.01;

type Row = Record<string, unknown>;

export interface Channel {
  /** samples of this channel, sweep after sweep */
  x: Float32Array;
  /** the manifest entry's file conditions (site, distanceMm, referenceDistanceMm, ...) */
  conditions: Record<string, ConditionValue>;
  /** the manifest entry's per-sweep conditions */
  sweeps: Row[];
}
export interface Recording {
  series: SeriesFile;
  w: W;
  fs: number;
  t0Ms: number;
  nSamples: number;
  nSweeps: number;
  channels: Channel[];
  /** the set's own sidecar (stimulus per column, distances) */
  side: Row & { columns: Row[] };
}

const manifests: Record<W, { analysis: PipelineOptions; files: Row[]; [k: string]: unknown }> = {
  fast: JSON.parse(readFileSync(join(FIX, 'fast.manifest.json'), 'utf8')),
  slow: JSON.parse(readFileSync(join(FIX, 'slow.manifest.json'), 'utf8')),
};
/** the analysis settings of the vendored manifests (written from the set's README, never from the truth) */
export const baseAnalysis = (w: W): PipelineOptions => JSON.parse(JSON.stringify(manifests[w].analysis));

const cache = new Map<string, Recording>();
/** The vendored recording of a series (both channels), as loaded from tests/fixtures/devset (cached, read-only). */
export function vendored(series: SeriesFile, w: W): Recording {
  const name = `${series}_${w}`;
  const hit = cache.get(name);
  if (hit) return hit;
  const side = JSON.parse(readFileSync(join(FIX, 'data', `${name}.source.json`), 'utf8'));
  const b = readFileSync(join(FIX, 'data', `${name}.f32`));
  const f = new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  return fromInterleaved(series, w, side, f, side.sampling_rate_hz, side.n_samples, name);
}

function fromInterleaved(
  series: SeriesFile,
  w: W,
  side: Recording['side'],
  f: Float32Array,
  fs: number,
  n: number,
  key: string,
): Recording {
  const name = `${series}_${w}`;
  const nSweeps = f.length / (2 * n);
  const channels: Channel[] = [1, 2].map((ch) => {
    const entry = manifests[w].files.find((e) => e.path === `data/${name}.ch${ch}.json`)!;
    const x = new Float32Array(nSweeps * n);
    for (let s = 0; s < nSweeps; s++) x.set(f.subarray((s * 2 + ch - 1) * n, (s * 2 + ch) * n), s * n);
    return {
      x,
      conditions: { ...(entry.conditions as Row) } as Channel['conditions'],
      sweeps: entry.sweeps as Row[],
    };
  });
  const rec: Recording = {
    series,
    w,
    fs,
    t0Ms: side.time_of_first_sample_s * 1000,
    nSamples: n,
    nSweeps,
    channels,
    side,
  };
  cache.set(key, rec);
  return rec;
}

/** A recording resampled by SciPy (tests/fixtures/devset-variants/resampled, made by make_variants.py). */
export function resampled(series: SeriesFile, w: W, fs: number): Recording {
  const key = `${series}_${w}_${fs}`;
  const hit = cache.get(key);
  if (hit) return hit;
  const meta = vtruth.resampled_files[key];
  if (!meta) throw new Error(`no resampled fixture ${key}`);
  const side = JSON.parse(readFileSync(join(FIX, 'data', `${series}_${w}.source.json`), 'utf8'));
  const b = readFileSync(join(VFIX, 'resampled', `${key}.f32`));
  const f = new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  return fromInterleaved(series, w, side, f, meta.fs, meta.nSamples, key);
}

/** A copy of a recording with every channel's samples mapped (sweep index, time ms, channel) -> new sweep. */
export function mapSweeps(
  rec: Recording,
  fn: (x: Float32Array, s: number, ch: Channel, tMs: (i: number) => number) => Float32Array,
): Recording {
  const n = rec.nSamples;
  const tMs = (i: number) => rec.t0Ms + (i * 1000) / rec.fs;
  return {
    ...rec,
    channels: rec.channels.map((ch) => {
      const x = new Float32Array(ch.x.length);
      for (let s = 0; s < rec.nSweeps; s++) x.set(fn(ch.x.subarray(s * n, (s + 1) * n), s, ch, tMs), s * n);
      return { ...ch, x };
    }),
  };
}

/** Deterministic uniform numbers in [0, 1) (a 32-bit linear congruential generator; Numerical Recipes constants). */
export function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 4294967296;
  };
}

/** intensity (mA) of sweep s of a recording, from the set's sidecar */
export const intensityOf = (rec: Recording, s: number): number =>
  rec.side.columns.find((c) => c.sweep_index === s && c.channel === 1)!.stimulus_mA as number;

/**
 * The set's stimulus artifact as its README states it, at 15 mm (x0.6 at 25 mm): +200 mV/mA during the 0.1 ms
 * pulse, then -122 mV/mA exp(-t/40 us) + 0.05 mV/mA exp(-t/1.5 ms) from the end of the pulse (volts).
 */
export function artifactModelV(tMs0: number, mA: number): number {
  const tMs = Math.round(tMs0 * 1e6) / 1e6; // a sample at 0.1 ms is after the pulse, as in the set
  if (tMs < 0) return 0;
  if (tMs < 0.1) return 0.2 * mA;
  const t = tMs - 0.1;
  return mA * (-0.122 * Math.exp(-t / 0.04) + 0.00005 * Math.exp(-t / 1.5));
}

/** temperature (C) of sweep s of a recording, from the set's sidecar */
export const temperatureOf = (rec: Recording, s: number): number =>
  rec.side.columns.find((c) => c.sweep_index === s && c.channel === 1)!.temperature_C as number;

/**
 * The recording with its stimulus artifact replaced: the set's artifact (artifactModelV, x0.6 at 25 mm) is
 * subtracted, the rest on the rail samples (where it is hidden) interpolated linearly between its neighbours,
 * `artifact(tMs, mA)` (at 15 mm, x0.6 at 25 mm) added, and the rail applied: as the set's simulator would record
 * another artifact shape. Responses, noise, hum and drift are untouched, so the truth is unchanged.
 */
export function replaceArtifact(rec: Recording, artifact: (tMs: number, mA: number) => number): Recording {
  return mapSweeps(rec, (x, s, ch, tMs) => {
    const g = (ch.conditions.distanceMm as number) === 25 ? 0.6 : 1;
    const mA = intensityOf(rec, s);
    const r = Float64Array.from(x, (v, i) => v - g * artifactModelV(tMs(i), mA));
    const rail = Array.from(x, (v) => Math.abs(v) >= RAIL_V * (1 - 1e-4));
    for (let i = 0; i < x.length; i++) {
      if (!rail[i]) continue;
      let a = i - 1,
        b = i + 1;
      while (a >= 0 && rail[a]) a--;
      while (b < x.length && rail[b]) b++;
      const ra = a >= 0 ? r[a] : r[b],
        rb = b < x.length ? r[b] : ra;
      r[i] = a >= 0 && b < x.length ? ra + ((rb - ra) * (i - a)) / (b - a) : ra;
    }
    return Float32Array.from(r, (v, i) => Math.max(-RAIL_V, Math.min(RAIL_V, v + g * artifact(tMs(i), mA))));
  });
}

/** How a variant's samples are stored: float32 volts (default) or int16 counts of `gainUv` microvolts. */
export type Storage = { dtype: 'float32' } | { dtype: 'int16'; gainUv: number };

/** Write a study (one or more recordings of one window) as binaries, sidecars and a manifest; its path. */
export function writeStudy(
  dir: string,
  w: W,
  recs: Recording[],
  analysis: PipelineOptions,
  study: string,
  storage: Storage = { dtype: 'float32' },
): string {
  mkdirSync(join(dir, 'data'), { recursive: true });
  const files: Row[] = [];
  for (const rec of recs) {
    const name = `${rec.series}_${w}`;
    const nc = rec.channels.length,
      n = rec.nSamples;
    const out = new Float32Array(rec.nSweeps * nc * n);
    for (let s = 0; s < rec.nSweeps; s++)
      rec.channels.forEach((ch, c) => out.set(ch.x.subarray(s * n, (s + 1) * n), (s * nc + c) * n));
    const ext = storage.dtype === 'int16' ? 'i16' : 'f32';
    const bytes =
      storage.dtype === 'int16'
        ? Int16Array.from(out, (v) => Math.max(-32768, Math.min(32767, Math.round((v * 1e6) / storage.gainUv))))
        : out;
    writeFileSync(join(dir, 'data', `${name}.${ext}`), Buffer.from(bytes.buffer));
    rec.channels.forEach((ch, c) => {
      const sidecar = {
        data: `${name}.${ext}`,
        dtype: storage.dtype,
        byteOrder: 'little',
        layout: 'sweep-major',
        nSweeps: rec.nSweeps,
        nSamples: n,
        nChannels: nc,
        channel: c,
        gain: storage.dtype === 'int16' ? storage.gainUv : 1,
        offset: 0,
        fs: rec.fs,
        t0Ms: rec.t0Ms,
        units: storage.dtype === 'int16' ? 'uV' : 'V',
      };
      writeFileSync(join(dir, 'data', `${name}.ch${c + 1}.json`), JSON.stringify(sidecar));
      files.push({
        path: `data/${name}.ch${c + 1}.json`,
        format: 'binary',
        conditions: ch.conditions,
        sweeps: ch.sweeps,
      });
    });
  }
  const m = { ...manifests[w], study, analysis, files };
  const path = join(dir, `${w}.manifest.json`);
  writeFileSync(path, JSON.stringify(m, null, 1));
  return path;
}

/** One variant: recordings per window and the analysis settings a user would write for them. */
export interface Variant {
  name: string;
  /** what was changed and where the truth comes from (printed) */
  describe: string;
  recordings: (w: W) => Recording[];
  analysis: (w: W) => PipelineOptions;
  /** expected main phase of every class (+1 positive-going, -1 negative-going) */
  polarity: 1 | -1;
  /** sites recorded: distance (mm) and, for a bipolar channel, the reference contact */
  sites: { mm: number; refMm?: number }[];
  /** windows run (default both) */
  windows?: W[];
  /**
   * the distances written in the manifest are the set's times this factor (sites stay in the set's mm): the same
   * recordings are then those of a nerve whose every fibre conducts this factor faster (arrival x / v, utilisation
   * and waveforms unchanged in time), so every true velocity is scaled by it and nothing else changes
   */
  distanceScale?: number;
  /** classes taken out of the recordings: they must come out with no number (not detected or not resolved) */
  absent?: string[];
  /** how the files store the samples (default float32 volts) */
  storage?: Storage;
}

export interface VariantRun {
  variant: Variant;
  results: Record<string, StudyResult>;
  errors: string[];
  ms: number;
}

/** Write a variant's files and run every series of each window through runPipeline (errors are kept, not thrown). */
export function runVariant(v: Variant, root: string): VariantRun {
  const t0 = Date.now();
  const results: Record<string, StudyResult> = {};
  const errors: string[] = [];
  for (const w of v.windows ?? (['fast', 'slow'] as W[])) {
    const recs = v.recordings(w);
    if (!recs.length) continue;
    const dir = join(root, v.name, w);
    let set;
    try {
      set = readManifest(writeStudy(dir, w, recs, v.analysis(w), `FNPG-N07 variant ${v.name}, ${w} window`, v.storage));
    } catch (e) {
      errors.push(`${w}: readManifest threw ${(e as Error).name}: ${(e as Error).message}`);
      continue;
    }
    for (const rec of recs) {
      const series = SERIES_OF[rec.series];
      try {
        results[`${w}|${series}`] = runPipeline(set.where({ series }), v.analysis(w));
      } catch (e) {
        errors.push(`${w} ${series}: runPipeline threw ${(e as Error).name}: ${(e as Error).message}`);
      }
    }
  }
  return { variant: v, results, errors, ms: Date.now() - t0 };
}

// ---------------------------------------------------------------- truth

/** Sub-sample peak (parabolic through the largest sample and its neighbours), in samples. */
export function parabolicPeakIndex(x: ArrayLike<number>): number {
  let p = 0;
  for (let i = 1; i < x.length; i++) if (x[i] > x[p]) p = i;
  if (p === 0 || p === x.length - 1) return p;
  const a = x[p - 1],
    b = x[p],
    c = x[p + 1];
  const d = a - 2 * b + c;
  return d < 0 ? p + (0.5 * (a - c)) / d : p;
}

/**
 * Latency (ms) of one latency definition on a clean waveform (its positive main phase): peak (parabolic), onset
 * (first crossing of 10% of its own peak searched back from the peak), half-rise, centroid over the span above
 * 10% of its own peak: the definitions ground_truth.json and the README name.
 */
export function cleanLatencyMs(x: Float64Array, fs: number, t0Ms: number, basis: string): number | null {
  const dt = 1000 / fs;
  if (basis === 'peak') return t0Ms + parabolicPeakIndex(x) * dt;
  if (basis === 'onset') return t0Ms + crossings(x, 0.1).rise * dt;
  if (basis === 'halfrise') return t0Ms + crossings(x, 0.5).rise * dt;
  if (basis === 'centroid') return cleanCentroidMs(x, fs, t0Ms, 0.1);
  return null;
}

/** A clean class-only temperature-series waveform at one site (bipolar: contact minus reference). */
export function cleanAt(T: number, cls: string, site: { mm: number; refMm?: number }): Float64Array {
  const c = clean(cls === 'C' ? 'slow' : 'fast');
  const a = c.get(T, site.mm, cls);
  if (site.refMm === undefined) return a;
  const b = c.get(T, site.refMm, cls);
  return a.map((v, i) => v - b[i]);
}

/**
 * Truth of a velocity estimate (m/s) of a class at temperature T, for a method and latency definition, at the
 * variant's sites: two-site and regression from ground_truth.json's clean two-site values (peak, onset10,
 * half-rise) or the same definition on the clean components (centroid); single-site: distance / latency of
 * the clean component at that site (ground_truth.json's 15/25 mm latencies for monopolar peak/onset/half-rise).
 */
export function velocityTruth(
  cls: string,
  T: number,
  method: string,
  basis: string,
  sites: { mm: number; refMm?: number }[],
  distanceMm?: number,
): number | null {
  const t = truth.velocity[String(T)][cls];
  const c = clean(cls === 'C' ? 'slow' : 'fast');
  if (method === 'single-site') {
    const site = sites.find((s) => s.mm === distanceMm) ?? sites[0];
    const key = { peak: 'peak_latency_ms', onset: 'onset10_latency_ms', halfrise: 'halfrise_latency_ms' }[basis];
    if (site.refMm === undefined && key && t[`${site.mm}mm`]) return site.mm / t[`${site.mm}mm`][key];
    const lat = cleanLatencyMs(cleanAt(T, cls, site), c.meta.fs, c.meta.t0Ms, basis);
    return lat === null ? null : site.mm / lat;
  }
  if (sites.length < 2 || sites.some((s) => s.refMm !== undefined)) return null;
  if (basis === 'peak') return t.two_site.v_peak;
  if (basis === 'onset') return t.two_site.v_onset10;
  if (basis === 'halfrise') return t.two_site.v_halfrise;
  if (basis === 'xcorr') return 10 / cleanXcorrDelayMs(c.get(T, 15, cls), c.get(T, 25, cls), c.meta.fs);
  if (basis === 'centroid')
    return (
      10 /
      (cleanCentroidMs(c.get(T, 25, cls), c.meta.fs, c.meta.t0Ms, 0.1) -
        cleanCentroidMs(c.get(T, 15, cls), c.meta.fs, c.meta.t0Ms, 0.1))
    );
  return null;
}

// ---------------------------------------------------------------- checks

export interface VCheck extends Check {
  variant: string;
  /** the truth's source */
  source: string;
  /** asserted against the issue-14 tolerance (false: printed for information) */
  asserted: boolean;
}

const num = (v: unknown) => (typeof v === 'number' && Number.isFinite(v) ? v : null);
const status = (r: Row | undefined) =>
  r ? (r.status && r.status !== 'ok' && r.status !== 'measured' ? String(r.status).slice(0, 80) : undefined) : 'no row';

/** Every tolerance of issue 14 that a variant's truth supports, from the results of runVariant. */
export function variantChecks(run: VariantRun): VCheck[] {
  const v = run.variant;
  const out: VCheck[] = [];
  const push = (c: Check, source: string, asserted = true) => out.push({ ...c, variant: v.name, source, asserted });
  const res = (w: W, series: string) => run.results[`${w}|${series}`];
  const k = v.distanceScale ?? 1;
  const vTruth = (...a: Parameters<typeof velocityTruth>) => {
    const x = velocityTruth(...a);
    return x === null ? null : x * k;
  };
  const mmLabel = (site: { mm: number; refMm?: number }) =>
    site.refMm === undefined ? `${site.mm * k} mm` : `${site.mm * k}-${site.refMm * k} mm bipolar`;
  for (const w of v.windows ?? (['fast', 'slow'] as W[])) {
    const tol = w === 'slow' ? 5 : 3;
    const temp = res(w, 'temperature');
    for (const cls of CLASSES_OF[w]) {
      if (v.absent?.includes(cls)) continue;
      if (temp) {
        const rows = (temp.velocity?.rows ?? []) as unknown as Row[];
        for (const T of TEMPS) {
          const at = rows.filter((r) => r.class === cls && r.temperatureC === T);
          // with no recommended row (one site), the single-site peak velocity the temperature analysis then uses
          const rec = at.find((r) => r.recommended) ?? at.find((r) => r.method === 'single-site' && r.basis === 'peak');
          const recTruth = rec
            ? vTruth(cls, T, String(rec.method), String(rec.basis), v.sites, (num(rec.distance_mm) ?? 0) / k)
            : null;
          push(
            check(
              'velocity m/s',
              cls,
              `${T} C`,
              rec
                ? `${rec.recommended ? 'recommended' : 'none recommended, so'} (${rec.method} ${rec.basis})`
                : 'recommended (none)',
              num(rec?.velocity_m_s),
              recTruth ?? NaN,
              tol,
              status(rec),
            ),
            rec?.method === 'single-site'
              ? 'clean component at the site (distance / latency)'
              : rec?.basis === 'centroid' || rec?.basis === 'xcorr'
                ? `clean components, ${rec.basis} of each (tests/external/devset.ts)`
                : 'ground_truth.json two_site',
          );
          if (v.sites.length >= 2 && v.sites.every((s) => s.refMm === undefined)) {
            const tp = at.find((r) => r.method === 'two-site' && r.basis === 'peak');
            push(
              check(
                'velocity m/s',
                cls,
                `${T} C`,
                'two-site peak',
                num(tp?.velocity_m_s),
                truth.velocity[String(T)][cls].two_site.v_peak * k,
                tol,
                status(tp),
              ),
              'ground_truth.json two_site.v_peak',
            );
          }
        }
        // Q10 of the velocity the temperature analysis uses
        const tr = ((temp.temperature?.rows ?? []) as Row[]).find((r) => r.class === cls);
        // the measure: "<method> <basis> velocity", or a component column "<basis>_velocity_m_s" (single site)
        const measure = String(tr?.measure ?? '');
        const col = /^(onset|halfrise|peak|centroid)_velocity_m_s$/.exec(measure);
        const m = col
          ? [measure, 'single-site', col[1]]
          : /(single-site|two-site|regression)\s+(peak|onset|halfrise|centroid|xcorr)/.exec(measure);
        let tq: number | null = null;
        if (m) {
          const vals = TEMPS.map((T) => velocityTruth(cls, T, m[1], m[2], v.sites, v.sites[0].mm));
          if (vals.every((x) => x !== null)) tq = q10Of(TEMPS, vals as number[]);
        }
        push(
          check(
            'Q10',
            cls,
            '20-37 C',
            m ? `${m[1]} ${m[2]}` : String(tr?.measure ?? 'none'),
            num(tr?.q10),
            tq ?? NaN,
            5,
          ),
          'log-linear fit of the clean-component truth at 20/25/30/37 C',
        );
      }
      const dose = res(w, 'dose');
      if (dose) {
        for (const site of v.sites) {
          const r = ((dose.doseResponse?.summary ?? []) as Row[]).find(
            (q) => q.class === cls && (q.distanceMm === site.mm * k || q.distanceMm === undefined),
          );
          const tt =
            site.refMm === undefined
              ? truth.doseResponse[cls][`${site.mm}mm`]
              : {
                  ic50_uM: vtruth.bipolar_15_25mm.doseResponse[cls].ic50_uM,
                  hill: vtruth.bipolar_15_25mm.doseResponse[cls].hill,
                };
          const src =
            site.refMm === undefined
              ? 'ground_truth.json fitted_on_clean_peak'
              : 'SciPy Hill fit to the clean bipolar peaks (devset-variants/truth.json)';
          const where = mmLabel(site);
          push(check('IC50 uM', cls, where, 'Hill fit', num(r?.ic50), tt.ic50_uM, 15, status(r)), src);
          push(check('Hill slope', cls, where, 'Hill fit', num(r?.hill), tt.hill, 15, status(r)), src);
        }
      }
      const rcr = res(w, 'intensity');
      if (rcr) {
        const site = v.sites[0];
        const r = ((rcr.recruitment?.rows ?? []) as Row[]).find((q) => q.class === cls && q.distanceMm === site.mm * k);
        let tI = truth.recruitmentI50_15mm_mA[cls] as number;
        let src = 'ground_truth.json component_recruitment_15mm I_50%';
        if (site.refMm !== undefined) {
          // the set's definition scaled by the ratio of bipolar to monopolar I50 on the same interpolation
          tI *=
            vtruth.bipolar_15_25mm.recruitmentI50_mA[cls].i50_mA /
            vtruth.monopolar_15mm_reproduced.recruitmentI50_mA[cls].i50_mA;
          src = 'ground_truth.json I_50% x bipolar/monopolar ratio of the clean peaks (devset-variants/truth.json)';
        }
        const where = mmLabel(site);
        push(check('I50 mA', cls, where, 'Boltzmann fit', num(r?.i50), tI, 10, status(r)), src);
      }
    }
  }
  return out;
}

/** Structural checks (not numbers): each true/false with a detail line. */
export interface Structural {
  variant: string;
  what: string;
  ok: boolean;
  detail: string;
}

export function structuralChecks(run: VariantRun): Structural[] {
  const v = run.variant;
  const out: Structural[] = [];
  const add = (what: string, ok: boolean, detail: string) => out.push({ variant: v.name, what, ok, detail });
  add('runs without throwing', run.errors.length === 0, run.errors.join('; ') || 'every series ran');
  for (const [key, r] of Object.entries(run.results)) {
    const w = key.split('|')[0] as W;
    const rows = r.components.rows as unknown as Row[];
    // the main phase of every class of the window (components rows, as measured)
    for (const cls of v.absent ?? []) {
      if (!CLASSES_OF[w].includes(cls)) continue;
      const comp = rows.filter((q) => q.class === cls);
      const vel = ((r.velocity?.rows ?? []) as unknown as Row[]).filter((q) => q.class === cls);
      const numbers = comp.filter((q) => q.detected === true).length;
      const vnum = vel.filter((q) => num(q.velocity_m_s) !== null).length;
      add(
        `${key} ${cls} (absent): no detection and no velocity`,
        comp.length > 0 && numbers === 0 && vnum === 0,
        `${numbers} of ${comp.length} component rows detected, ${vnum} of ${vel.length} velocity rows with a number`,
      );
    }
    for (const cls of CLASSES_OF[w].filter((c) => !v.absent?.includes(c))) {
      const mine = rows.filter((q) => q.class === cls);
      const pols = [...new Set(mine.map((q) => q.polarity))];
      add(
        `${key} ${cls}: polarity ${v.polarity > 0 ? '+1' : '-1'}`,
        mine.length > 0 && pols.length === 1 && pols[0] === v.polarity,
        `${mine.length} rows, polarity ${pols.join('/')}, source ${[...new Set(mine.map((q) => q.polarity_source))].join('/')}`,
      );
      // no lost rows: one component row per averaged sweep and class
      add(
        `${key} ${cls}: a component row for every sweep`,
        mine.length === r.components.set.nSweeps,
        `${mine.length} rows for ${r.components.set.nSweeps} (averaged) sweeps`,
      );
    }
    const failed = r.flags.filter((f) => f.status === 'failed');
    add(`${key}: no analysis failed`, failed.length === 0, failed.map((f) => `${f.analysis}: ${f.reason}`).join('; '));
    if (key.endsWith('temperature')) {
      const vrows = (r.velocity?.rows ?? []) as unknown as Row[];
      for (const cls of CLASSES_OF[w].filter((c) => !v.absent?.includes(c)))
        for (const T of TEMPS) {
          const at = vrows.filter((q) => q.class === cls && q.temperatureC === T);
          // one recommended estimate per class and temperature, or a flag that says why there is none
          const why = r.flags.some(
            (f) => f.analysis === 'velocity' && f.class === cls && /recommend/i.test(`${f.status} ${f.reason}`),
          );
          add(
            `${key} ${cls} ${T} C: a recommended velocity row, or a flag saying why none`,
            at.filter((q) => q.recommended).length === 1 || why,
            `${at.length} velocity rows, ${at.filter((q) => q.recommended).length} recommended, ` +
              `${at.filter((q) => num(q.velocity_m_s) !== null).length} with a number; flag about it: ${why}`,
          );
        }
      if (v.sites.length < 2) {
        // two-site velocities are impossible with one site: none may be a number, and the run must say so
        const two = vrows.filter((q) => q.method === 'two-site' || q.method === 'regression');
        // a flag or note about the missing estimates: it names two-site (two distances) or regression velocity
        const about = /(two|2|second).?(site|distance)|regression/i;
        const said =
          r.flags.some((f) => f.analysis === 'velocity' && about.test(`${f.status} ${f.reason}`)) ||
          r.notes.some((q) => about.test(q));
        add(
          `${key}: no two-site or regression velocity from one site, and it is said`,
          two.every((q) => num(q.velocity_m_s) === null) && said,
          `${two.length} two-site/regression rows (${two.filter((q) => num(q.velocity_m_s) !== null).length} ` +
            `with a number); flagged or noted: ${said}`,
        );
        const single = vrows.filter((q) => q.method === 'single-site' && num(q.velocity_m_s) !== null);
        add(`${key}: single-site velocities present`, single.length > 0, `${single.length} single-site rows`);
      }
    }
    // A-delta detected in every supramaximal sweep (temperature series; dose series before the drug)
    if (w === 'fast' && !v.absent?.includes('A-delta') && (key.endsWith('temperature') || key.endsWith('dose'))) {
      const ad = rows.filter(
        (q) => q.class === 'A-delta' && (key.endsWith('temperature') || !(num(q.concentration) ?? 0)),
      );
      add(
        `${key}: A-delta detected in every supramaximal sweep`,
        ad.length > 0 && ad.every((q) => q.detected === true),
        `${ad.filter((q) => q.detected === true).length} of ${ad.length} (averaged) sweeps`,
      );
    }
  }
  return out;
}

const f = (x: number | null) => (x === null || !Number.isFinite(x) ? '-' : x.toPrecision(4));
/** Print a variant table: variant, class, quantity, where, estimator, estimate, truth, error %, tol, within. */
export function printVariant(run: VariantRun, rows: VCheck[], baseline?: VCheck[], st: Structural[] = []): string {
  const lines = [
    `== variant ${run.variant.name} (${(run.ms / 1000).toFixed(1)} s): ${run.variant.describe}`,
    'variant | class | quantity | where | estimator | estimate | truth | error % | tol % | within | ' +
      'devset error % | truth source',
  ];
  for (const r of rows) {
    const b = baseline?.find(
      (q) => q.class === r.class && q.quantity === r.quantity && q.where === r.where && q.estimator === r.estimator,
    );
    lines.push(
      [
        r.variant,
        r.class,
        r.quantity,
        r.where,
        r.estimator,
        f(r.estimate),
        f(r.truth),
        r.errorPct === null ? '-' : r.errorPct.toFixed(1),
        r.tolerancePct,
        r.ok ? 'yes' : 'NO',
        b && b.errorPct !== null ? b.errorPct.toFixed(1) : '-',
        r.source,
      ].join(' | ') + (r.note ? ` (${r.note})` : ''),
    );
  }
  for (const s of st.filter((q) => !q.ok)) lines.push(`  structural NO: ${s.what}: ${s.detail}`);
  lines.push(
    `${run.variant.name}: ${rows.filter((r) => r.asserted && r.ok).length} of ${rows.filter((r) => r.asserted).length} ` +
      `tolerances met; ${st.filter((q) => q.ok).length} of ${st.length} structural checks hold`,
  );
  const s = lines.join('\n');
  console.log(s);
  return s;
}

/** Key of a check in the NOT_YET sets. */
export const idOf = (c: VCheck) => `${c.variant} | ${c.quantity} | ${c.class} | ${c.where} | ${c.estimator}`;
export const idOfStructural = (s: Structural) => `${s.variant} | ${s.what}`;
