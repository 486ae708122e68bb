/**
 * Sweep quality control: per sweep, the noise level, baseline drift, amplifier
 * saturation (samples on the rail), stimulus-artifact size and a robust outlier score
 * of the response against the other sweeps of its condition. Every sweep gets a row
 * with its numbers, a flag and the reasons; nothing is removed here. `rejectFlagged`
 * removes flagged sweeps and records each one, with its reasons, in the history.
 *
 * Run it on the sweeps as recorded (before baseline, filters or artifact removal):
 * saturation is recognised by runs of identical extreme values, which filtering smears.
 *
 * The outlier score follows the median absolute deviation rule: a value is an outlier
 * when it lies more than a threshold times MAD (1.4826 x median |x - median|) from the
 * median. Leys et al. (2013) call a threshold of 3 "very conservative" and 2.5
 * "moderately conservative" (after Miller 1991) and suggest 2.5 as a default (the
 * suggestion from memory). Our default is 3: conditions usually hold only 3 to 6
 * sweeps, the MAD of so few values is itself imprecise, and a sweep wrongly dropped
 * biases an average as much as one wrongly kept.
 * References: C. Leys, C. Ley, O. Klein, P. Bernard, L. Licata, J. Exp. Soc. Psychol. 49
 * (2013) 764-766; P. J. Rousseeuw, C. Croux, J. Am. Stat. Assoc. 88 (1993) 1273-1283.
 */
import type { SweepSet, ConditionValue, Conditions, Step, Source } from '../sweeps/SweepSet';
import { OptionError } from '../errors';
import { checkKeys, windowMs, positive, integerIn, shown, didYouMean } from '../validate';
import { Result } from '../notebook/result';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';

/** Options of sweepQc; times in ms relative to the stimulus, ratios without unit. */
export interface SweepQcOptions {
  /** quiet pre-stimulus window for noise and baseline level, ms (default: sweep start to -0.1 ms) */
  quietWindow?: [number, number];
  /** window at the sweep's end for drift, ms (default: the last 10% of the sweep) */
  endWindow?: [number, number];
  /** stimulus artifact and amplifier recovery, ms (default [-0.1, 0.5]); rail samples inside it are not flagged */
  artifactWindow?: [number, number];
  /** window compared between sweeps for the outlier score, ms (default: artifact window end to sweep end) */
  responseWindow?: [number, number];
  /** condition keys whose equal values make a condition (default: every condition key but per-sweep ones) */
  by?: string[];
  /**
   * keys that make one recording channel, whose sweeps share a noise level
   * (default: preparation, site, distanceMm, channel where present)
   */
  peerBy?: string[];
  /** flag 'noisy' when the noise exceeds this multiple of the channel's median noise (default 3) */
  maxNoiseRatio?: number;
  /** flag 'flat' when the noise is below this fraction of the channel's median noise (default 0.1) */
  minNoiseRatio?: number;
  /** flag 'drift' when a baseline change exceeds this multiple of the channel's median noise (default 10) */
  maxDriftRatio?: number;
  /** flag 'artifact' when the artifact is this factor larger or smaller than its condition's median (default 3) */
  maxArtifactRatio?: number;
  /** consecutive identical extreme samples that mark an amplifier rail (default 3) */
  railRun?: number;
  /** MAD-rule threshold of the outlier score (default 3, Leys et al. 2013 "very conservative") */
  outlierThreshold?: number;
  /** floor of the outlier score's scale, as a fraction of the condition's median deviation (default 1/3) */
  outlierMinScale?: number;
  /** fewest sweeps in a condition for an outlier score (default 3) */
  minSweeps?: number;
}

export const sweepQcDefaults = {
  quietStopMs: 0.1,
  endFraction: 0.1,
  artifactWindow: [-0.1, 0.5] as [number, number],
  maxNoiseRatio: 3,
  minNoiseRatio: 0.1,
  maxDriftRatio: 10,
  maxArtifactRatio: 3,
  railRun: 3,
  outlierThreshold: 3,
  outlierMinScale: 1 / 3,
  minSweeps: 3,
  /** condition keys that differ between repeats of one condition and so never define it */
  perSweepKeys: ['repeat', 'fileSweep', 'acquiredS', 'sweep', 'file', 'count', 'timeS', 'timestamp'],
  peerKeys: ['preparation', 'site', 'distanceMm', 'channel'],
};

/** the option keys (also the manifest's, src/io/manifest.ts) */
export const QC_OPTION_KEYS = [
  'quietWindow',
  'endWindow',
  'artifactWindow',
  'responseWindow',
  'by',
  'peerBy',
  'maxNoiseRatio',
  'minNoiseRatio',
  'maxDriftRatio',
  'maxArtifactRatio',
  'railRun',
  'outlierThreshold',
  'outlierMinScale',
  'minSweeps',
];

/** The flag codes a sweep can carry. */
export type QcFlag = 'noisy' | 'flat' | 'drift' | 'saturated' | 'artifact' | 'outlier';
export const QC_FLAGS: readonly QcFlag[] = ['noisy', 'flat', 'drift', 'saturated', 'artifact', 'outlier'];

import type { Row } from '../registry/types';

function medianOf(v: Float64Array | number[]): number {
  const s = Float64Array.from(v).sort();
  const m = s.length;
  if (m === 0) return NaN;
  return m % 2 ? s[(m - 1) / 2] : 0.5 * (s[m / 2 - 1] + s[m / 2]);
}

/**
 * Robust noise level of x[a..b]: 1.4826 x the median absolute deviation of the residuals
 * from the least-squares straight line (so slow drift does not count as noise), in the
 * units of x. O(m log m).
 * Reference: P. J. Rousseeuw, C. Croux, J. Am. Stat. Assoc. 88 (1993) 1273-1283.
 * @example detrendedMadNoise(Float64Array.of(0, 1, 2, 3, 104), 0, 4) // small: the line absorbs the ramp
 */
export function detrendedMadNoise(x: ArrayLike<number>, a: number, b: number): number {
  const m = b - a + 1;
  const mid = (m - 1) / 2;
  let sy = 0,
    sxy = 0,
    sxx = 0;
  for (let i = 0; i < m; i++) sy += x[a + i];
  const my = sy / m;
  for (let i = 0; i < m; i++) {
    sxy += (i - mid) * (x[a + i] - my);
    sxx += (i - mid) ** 2;
  }
  const slope = sxx > 0 ? sxy / sxx : 0;
  const r = new Float64Array(m);
  for (let i = 0; i < m; i++) r[i] = x[a + i] - my - slope * (i - mid);
  const med = medianOf(r);
  for (let i = 0; i < m; i++) r[i] = Math.abs(r[i] - med);
  return 1.4826 * medianOf(r);
}

/**
 * Sample-to-sample noise of x[a..b]: 1.4826 x MAD of the first differences / sqrt(2).
 * For white noise it estimates the SD; hum and drift, slow against the sample rate,
 * hardly enter (band-limited noise reads lower). O(m log m).
 * @example differenceNoise(Float64Array.of(0, 1, 0, 1, 0), 0, 4) // 1.4826 / sqrt 2 = 1.0484
 */
export function differenceNoise(x: ArrayLike<number>, a: number, b: number): number {
  const d = new Float64Array(b - a);
  for (let i = a; i < b; i++) d[i - a] = x[i + 1] - x[i];
  const med = medianOf(d);
  for (let i = 0; i < d.length; i++) d[i] = Math.abs(d[i] - med);
  return (1.4826 * medianOf(d)) / Math.SQRT2;
}

/** Runs of samples equal to a value: [first, last] index pairs. */
function runsOf(x: ArrayLike<number>, value: number): [number, number][] {
  const out: [number, number][] = [];
  for (let i = 0; i < x.length; i++) {
    if (x[i] !== value) continue;
    let j = i;
    while (j + 1 < x.length && x[j + 1] === value) j++;
    out.push([i, j]);
    i = j;
  }
  return out;
}

/**
 * Amplifier rails of one sweep: its own maximum (minimum) counts as a rail when that
 * value repeats in at least `minRun` consecutive samples; every sample equal to a rail
 * is then a clipped sample. A constant sweep has no rails (it is flat, not clipped).
 * @example railSamples(Float64Array.of(0, 5, 5, 5, 1, -2), 3) // { high: 5, low: null, clipped: [1, 2, 3] }
 */
export function railSamples(
  x: ArrayLike<number>,
  minRun: number,
): { high: number | null; low: number | null; clipped: number[] } {
  let hi = -Infinity,
    lo = Infinity;
  for (let i = 0; i < x.length; i++) {
    if (x[i] > hi) hi = x[i];
    if (x[i] < lo) lo = x[i];
  }
  if (!(hi > lo)) return { high: null, low: null, clipped: [] };
  const clipped: number[] = [];
  const rail = (v: number) => {
    const runs = runsOf(x, v);
    if (!runs.some(([a, b]) => b - a + 1 >= minRun)) return null;
    for (const [a, b] of runs) for (let i = a; i <= b; i++) clipped.push(i);
    return v;
  };
  const high = rail(hi),
    low = rail(lo);
  clipped.sort((p, q) => p - q);
  return { high, low, clipped };
}

/** Sweep-QC options with every default filled in (a result's `options`). */
export interface ResolvedSweepQcOptions {
  quietWindow: [number, number];
  endWindow: [number, number];
  artifactWindow: [number, number];
  responseWindow: [number, number];
  by: string[];
  peerBy: string[];
  maxNoiseRatio: number;
  minNoiseRatio: number;
  maxDriftRatio: number;
  maxArtifactRatio: number;
  railRun: number;
  outlierThreshold: number;
  outlierMinScale: number;
  minSweeps: number;
}

function indices(set: SweepSet, w: [number, number], name: string, min = 1): [number, number] {
  const a = Math.max(0, Math.ceil(((w[0] - set.t0Ms) * set.fs) / 1000 - 1e-9));
  const b = Math.min(set.nSamples - 1, Math.floor(((w[1] - set.t0Ms) * set.fs) / 1000 + 1e-9));
  if (b - a + 1 < min) {
    const span = `[${set.t0Ms}, ${set.timeAt(set.nSamples - 1)}] ms`;
    throw new OptionError(
      `invalid ${name}: [${w[0]}, ${w[1]}] ms holds ${Math.max(0, b - a + 1)} samples (need at least ${min}); ` +
        `the sweep spans ${span}`,
    );
  }
  return [a, b];
}

function keysOf(set: SweepSet): string[] {
  const k = new Set<string>();
  for (const c of set.conditions) for (const key of Object.keys(c)) k.add(key);
  return [...k];
}

function resolve(set: SweepSet, o: SweepQcOptions): ResolvedSweepQcOptions {
  checkKeys('sweepQc options', o, QC_OPTION_KEYS);
  const end = set.timeAt(set.nSamples - 1);
  if (!o.quietWindow && !(set.t0Ms < -sweepQcDefaults.quietStopMs)) {
    throw new OptionError(
      `invalid quietWindow: the sweep starts at ${set.t0Ms} ms, so there is no pre-stimulus window; ` +
        'give quietWindow: [from, to] in ms',
    );
  }
  const quietWindow = windowMs('quietWindow', o.quietWindow ?? [set.t0Ms, -sweepQcDefaults.quietStopMs]);
  const endWindow = windowMs('endWindow', o.endWindow ?? [end - sweepQcDefaults.endFraction * (end - set.t0Ms), end]);
  const artifactWindow = windowMs('artifactWindow', o.artifactWindow ?? sweepQcDefaults.artifactWindow);
  const responseWindow = windowMs('responseWindow', o.responseWindow ?? [artifactWindow[1], end]);
  const known = keysOf(set);
  const checkList = (name: string, v: unknown): string[] => {
    if (!Array.isArray(v) || v.some((k) => typeof k !== 'string')) {
      throw new OptionError(`invalid ${name}: ${shown(v)}; must be a list of condition names`);
    }
    for (const k of v) {
      if (known.includes(k)) continue;
      const hint = didYouMean(k, known);
      throw new OptionError(
        `invalid ${name}: no sweep has the condition ${JSON.stringify(k)}${hint}; conditions are ${known.join(', ')}`,
      );
    }
    return [...v];
  };
  const peerBy =
    o.peerBy !== undefined ? checkList('peerBy', o.peerBy) : sweepQcDefaults.peerKeys.filter((k) => known.includes(k));
  const by =
    o.by !== undefined ? checkList('by', o.by) : known.filter((k) => !sweepQcDefaults.perSweepKeys.includes(k));
  type RatioKey =
    'maxNoiseRatio' | 'minNoiseRatio' | 'maxDriftRatio' | 'maxArtifactRatio' | 'outlierThreshold' | 'outlierMinScale';
  const ratio = (name: RatioKey) => positive(name, o[name] ?? sweepQcDefaults[name]);
  const r: ResolvedSweepQcOptions = {
    quietWindow,
    endWindow,
    artifactWindow,
    responseWindow,
    by,
    peerBy,
    maxNoiseRatio: ratio('maxNoiseRatio'),
    minNoiseRatio: ratio('minNoiseRatio'),
    maxDriftRatio: ratio('maxDriftRatio'),
    maxArtifactRatio: ratio('maxArtifactRatio'),
    railRun: integerIn('railRun', o.railRun ?? sweepQcDefaults.railRun, 2, 1e6),
    outlierThreshold: ratio('outlierThreshold'),
    outlierMinScale: ratio('outlierMinScale'),
    minSweeps: integerIn('minSweeps', o.minSweeps ?? sweepQcDefaults.minSweeps, 3, 1e6),
  };
  if (!(r.maxNoiseRatio > 1)) throw new OptionError(`invalid maxNoiseRatio: ${r.maxNoiseRatio}; must be > 1`);
  if (!(r.minNoiseRatio < 1)) throw new OptionError(`invalid minNoiseRatio: ${r.minNoiseRatio}; must be < 1`);
  if (!(r.maxArtifactRatio > 1)) {
    throw new OptionError(`invalid maxArtifactRatio: ${r.maxArtifactRatio}; must be > 1`);
  }
  return r;
}

const groupKey = (c: Conditions, keys: string[]) => JSON.stringify(keys.map((k) => (k in c ? c[k] : null)));
const fmt = (x: number) => (Number.isFinite(x) ? String(Number(x.toPrecision(3))) : String(x));
/**
 * A time of the sweep's time axis (ms from the stimulus, as latencies are), in words that say so:
 * "3 ms after the stimulus", "2 ms before the stimulus", "the stimulus (0 ms)".
 */
export const stimulusTime = (ms: number): string =>
  ms === 0 ? 'the stimulus (0 ms)' : `${fmt(Math.abs(ms))} ms ${ms > 0 ? 'after' : 'before'} the stimulus`;

/** The QC table of a set: one row per sweep with its numbers, flags and reasons. */
export class SweepQcResult extends Result {
  readonly history: readonly Step[];
  readonly sources: readonly Source[];
  constructor(
    readonly rows: readonly Row[],
    readonly options: Readonly<ResolvedSweepQcOptions>,
    readonly units: string,
    readonly nSweeps: number,
    private readonly conditionsId: string,
    history: readonly Step[],
    sources: readonly Source[],
  ) {
    super();
    this.history = history;
    this.sources = sources;
  }

  /** The rows of flagged sweeps. */
  flagged(): Row[] {
    return this.rows.filter((r) => r.flagged === true);
  }

  /** Per preparation: sweeps, flagged sweeps and the count of each flag. */
  summary(): Row[] {
    const by = new Map<string, Row[]>();
    for (const r of this.rows) {
      const p = String(r.preparation ?? '');
      (by.get(p) ?? by.set(p, []).get(p)!).push(r);
    }
    return [...by].map(([p, rs]) => {
      const o: Row = { preparation: p || null, sweeps: rs.length, flagged: rs.filter((r) => r.flagged).length };
      for (const f of QC_FLAGS)
        o[f] = rs.filter((r) =>
          String(r.flags ?? '')
            .split(',')
            .includes(f),
        ).length;
      return o;
    });
  }

  /** @internal a fingerprint of the conditions the table was computed on */
  matches(set: SweepSet): boolean {
    return set.nSweeps === this.nSweeps && JSON.stringify(set.conditions) === this.conditionsId;
  }

  tables(): Record<string, readonly object[]> {
    return { sweep_qc: this.rows, sweep_qc_summary: this.summary() };
  }

  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as Record<string, unknown>[]);
  }

  toHTML(): string {
    const n = this.flagged().length;
    const caption =
      `Sweep quality control: ${n} of ${this.rows.length} sweeps flagged ` +
      `(noise, drift and artifact in ${this.units})`;
    return tableHtml(this.rows, { caption });
  }

  toString(): string {
    const n = this.flagged().length;
    const table = tableText(this.flagged(), { columns: ['sweep', 'preparation', 'flags', 'reasons'], maxRows: 20 });
    return `SweepQcResult: ${n} of ${this.rows.length} sweeps flagged\n` + table;
  }
}

/**
 * Quality control of every sweep. Each row names its sweep, preparation and condition: `condition` is the text
 * "key=value, key=value" of the condition keys that define it (`by` and `peerBy`), with the API's key names here
 * (`temperatureC=37`) and the bundle's column names in a bundle's sweep_qc table (`temperature_C=37`, as its
 * other columns; src/registry/columns.ts). Numbers per sweep (units of the set):
 * - noise: 1.4826 MAD of the quiet window about its straight-line trend;
 *   noise_hf: the same of first differences / sqrt 2
 * - drift: median of the end window minus median of the quiet window; quiet_change: the trend across the quiet
 *   window; drift_excess: drift minus its condition's median drift (a response lasting to the sweep end is common
 *   to the condition)
 * - clipped_fraction: samples on a rail over all samples; a rail is a sweep's own extreme value repeated in a run of
 *   >= railRun samples, and then a rail of every sweep of its channel (so single-sample touches count too);
 *   clipped_outside_artifact: rail samples outside the artifact window
 * - artifact: largest |sample - quiet level| in the artifact window; artifact_ratio: to its condition's median
 *   (null, and no artifact flag, when the condition has fewer than minSweeps sweeps or its median artifact is
 *   under 10 times the channel's noise)
 * - outlier_score: MAD-rule score of the sweep's deviation from its condition's median waveform over the response
 *   window (each sweep less the straight line through its quiet-window and end-window levels, so drift, which has
 *   its own rule, does not count twice), the larger of the rms and the peak deviation scores;
 *   scale = max(1.4826 MAD, outlierMinScale x median deviation)
 * Flags: noisy, flat, drift, saturated, artifact, outlier; each with a reason. Nothing is removed.
 * @example sweepQc(set).flagged()
 */
export function sweepQc(set: SweepSet, options: SweepQcOptions = {}): SweepQcResult {
  const o = resolve(set, options);
  const n = set.nSamples,
    N = set.nSweeps;
  const data = set.data;
  const [qa, qb] = indices(set, o.quietWindow, 'quietWindow', 8);
  const [ea, eb] = indices(set, o.endWindow, 'endWindow', 1);
  const [aa, ab] = indices(set, o.artifactWindow, 'artifactWindow', 1);
  const [ra, rb] = indices(set, o.responseWindow, 'responseWindow', 3);
  const u = set.units;
  interface S {
    noise: number;
    hf: number;
    level: number;
    drift: number;
    quietChange: number;
    clipped: number[];
    high: number | null;
    low: number | null;
    constant: boolean;
    artifact: number;
  }
  const per: S[] = [];
  for (let s = 0; s < N; s++) {
    const x = data.subarray(s * n, (s + 1) * n);
    const noise = detrendedMadNoise(x, qa, qb);
    const hf = differenceNoise(x, qa, qb);
    const level = medianOf(x.subarray(qa, qb + 1));
    const drift = medianOf(x.subarray(ea, eb + 1)) - level;
    // trend across the quiet window from the least-squares slope
    const m = qb - qa + 1,
      mid = (m - 1) / 2;
    let sy = 0,
      sxy = 0,
      sxx = 0;
    for (let i = 0; i < m; i++) sy += x[qa + i];
    for (let i = 0; i < m; i++) {
      sxy += (i - mid) * (x[qa + i] - sy / m);
      sxx += (i - mid) ** 2;
    }
    const quietChange = sxx > 0 ? (sxy / sxx) * (m - 1) : 0;
    const rails = railSamples(x, o.railRun);
    let constant = true;
    for (let i = 1; i < n && constant; i++) if (x[i] !== x[0]) constant = false;
    let art = 0;
    for (let i = aa; i <= ab; i++) art = Math.max(art, Math.abs(x[i] - level));
    const { clipped, high, low } = rails;
    per.push({ noise, hf, level, drift, quietChange, clipped, high, low, constant, artifact: art });
  }
  // channels (peers) and conditions
  const peerOf = set.conditions.map((c) => groupKey(c, o.peerBy));
  // a rail seen (as a run) in any sweep of a channel is that channel's rail: shorter touches in its
  // other sweeps count too
  const railsOf = new Map<string, Set<number>>();
  per.forEach((p, s) => {
    const r = railsOf.get(peerOf[s]) ?? railsOf.set(peerOf[s], new Set()).get(peerOf[s])!;
    if (p.high !== null) r.add(p.high);
    if (p.low !== null) r.add(p.low);
  });
  per.forEach((p, s) => {
    if (p.constant) return;
    const rails = railsOf.get(peerOf[s])!;
    if (rails.size === 0) return;
    const x = data.subarray(s * n, (s + 1) * n);
    const clipped: number[] = [];
    for (let i = 0; i < n; i++) if (rails.has(x[i])) clipped.push(i);
    p.clipped = clipped;
    for (const v of rails) {
      if (p.high === null && clipped.some((i) => x[i] === v) && v > 0) p.high = v;
      if (p.low === null && clipped.some((i) => x[i] === v) && v < 0) p.low = v;
    }
  });
  const condKeys = [...new Set([...o.by, ...o.peerBy])];
  const condOf = set.conditions.map((c) => groupKey(c, condKeys));
  const members = (ids: string[]) => {
    const m = new Map<string, number[]>();
    ids.forEach((id, i) => (m.get(id) ?? m.set(id, []).get(id)!).push(i));
    return m;
  };
  const peers = members(peerOf),
    conds = members(condOf);
  const peerNoise = new Map(
    [...peers].map(([id, ix]) => {
      return [id, medianOf(ix.filter((i) => !per[i].constant).map((i) => per[i].noise))];
    }),
  );
  const condDrift = new Map([...conds].map(([id, ix]) => [id, medianOf(ix.map((i) => per[i].drift))]));
  const condArtifact = new Map([...conds].map(([id, ix]) => [id, medianOf(ix.map((i) => per[i].artifact))]));
  // outlier scores per condition, on sweeps less their straight baseline through the quiet-window level and the
  // end-window level (drift has its own rule; a response lasting into the end window gets the same line in every
  // sweep of the condition, so the comparison is unaffected)
  const qMid = (qa + qb) / 2,
    eMid = (ea + eb) / 2;
  const base = (s: number, i: number) => per[s].level + (eMid > qMid ? (per[s].drift * (i - qMid)) / (eMid - qMid) : 0);
  const score = new Float64Array(N).fill(NaN);
  const basis: (string | null)[] = new Array(N).fill(null);
  const scoreStatus: string[] = new Array(N).fill('ok');
  const w = rb - ra + 1;
  for (const ix of conds.values()) {
    if (ix.length < o.minSweeps) {
      const why = `not scored: ${ix.length} sweep${ix.length === 1 ? '' : 's'} in its condition (need ${o.minSweeps})`;
      for (const i of ix) scoreStatus[i] = why;
      continue;
    }
    const med = new Float64Array(w);
    const col = new Float64Array(ix.length);
    const K = ix.length;
    for (let j = 0; j < w; j++) {
      // insertion sort of the few values of one sample (no allocation per sample)
      for (let k = 0; k < K; k++) {
        const v = data[ix[k] * n + ra + j] - base(ix[k], ra + j);
        let m = k - 1;
        while (m >= 0 && col[m] > v) {
          col[m + 1] = col[m];
          m--;
        }
        col[m + 1] = v;
      }
      med[j] = K % 2 ? col[(K - 1) / 2] : 0.5 * (col[K / 2 - 1] + col[K / 2]);
    }
    const rms = ix.map((i) => {
      let q = 0;
      for (let j = 0; j < w; j++) q += (data[i * n + ra + j] - base(i, ra + j) - med[j]) ** 2;
      return Math.sqrt(q / w);
    });
    const peak = ix.map((i) => {
      let q = 0;
      for (let j = 0; j < w; j++) q = Math.max(q, Math.abs(data[i * n + ra + j] - base(i, ra + j) - med[j]));
      return q;
    });
    const z = (d: number[]) => {
      const m = medianOf(d);
      const mad = 1.4826 * medianOf(d.map((v) => Math.abs(v - m)));
      const scale = Math.max(mad, o.outlierMinScale * m);
      return d.map((v) => (scale > 0 ? (v - m) / scale : v > m ? Infinity : 0));
    };
    const zr = z(rms),
      zp = z(peak);
    ix.forEach((i, k) => {
      score[i] = Math.max(zr[k], zp[k]);
      basis[i] = zr[k] >= zp[k] ? 'rms' : 'peak';
    });
  }
  const rows: Row[] = [];
  for (let s = 0; s < N; s++) {
    const p = per[s];
    const c = set.conditions[s];
    const flags: QcFlag[] = [];
    const reasons: string[] = [];
    const ref = peerNoise.get(peerOf[s])!;
    const nRatio = ref > 0 ? p.noise / ref : NaN;
    const flag = (f: QcFlag, why: string) => {
      flags.push(f);
      reasons.push(`${f}: ${why}`);
    };
    const noiseIs = `noise ${fmt(p.noise)} ${u} is ${fmt(nRatio)} x its channel's median`;
    if (p.constant) flag('flat', `every sample equals ${fmt(data[s * n])} ${u}`);
    else if (p.noise === 0 || nRatio < o.minNoiseRatio) flag('flat', `${noiseIs} (below ${o.minNoiseRatio})`);
    else if (nRatio > o.maxNoiseRatio) flag('noisy', `${noiseIs} ${fmt(ref)} ${u} (above ${o.maxNoiseRatio})`);
    const condN = conds.get(condOf[s])!.length;
    const excess = condN >= 2 ? p.drift - condDrift.get(condOf[s])! : p.drift;
    if (!p.constant && ref > 0) {
      const dq = Math.abs(p.quietChange) / ref,
        de = Math.abs(excess) / ref;
      const limit = `x the channel's noise; limit ${o.maxDriftRatio}`;
      if (dq > o.maxDriftRatio || de > o.maxDriftRatio) {
        const beyond = condN >= 2 ? "beyond its condition's median " : '';
        flag(
          'drift',
          dq >= de
            ? `baseline moves ${fmt(p.quietChange)} ${u} across the quiet window (${fmt(dq)} ${limit})`
            : `sweep end ${fmt(p.drift)} ${u} from the pre-stimulus level, ` +
                `${fmt(excess)} ${u} ${beyond}(${fmt(de)} ${limit})`,
        );
      }
    }
    const t = (i: number) => set.timeAt(i);
    const outside = p.clipped.filter((i) => i < aa || i > ab);
    if (outside.length) {
      const rails = [p.high, p.low]
        .filter((v) => v !== null)
        .map((v) => fmt(v as number))
        .join(', ');
      const k = outside.length;
      flag(
        'saturated',
        `${k} sample${k === 1 ? '' : 's'} on the rail (${rails} ${u}) outside the artifact window, ` +
          `first at ${stimulusTime(t(outside[0]))}`,
      );
    }
    const artMed = condArtifact.get(condOf[s])!;
    const artRatio = condN >= o.minSweeps && artMed > 10 * ref ? p.artifact / artMed : null;
    if (artRatio !== null && (artRatio > o.maxArtifactRatio || artRatio < 1 / o.maxArtifactRatio)) {
      flag(
        'artifact',
        `${fmt(p.artifact)} ${u} is ${fmt(artRatio)} x its condition's median ${fmt(artMed)} ${u} ` +
          `(outside 1/${o.maxArtifactRatio} to ${o.maxArtifactRatio})`,
      );
    }
    if (score[s] > o.outlierThreshold) {
      flag(
        'outlier',
        `response deviates from its condition's median sweep with a MAD score of ${fmt(score[s])} ` +
          `(${basis[s]} deviation; threshold ${o.outlierThreshold})`,
      );
    }
    const row: Row = { sweep: s };
    if ('preparation' in c) row.preparation = c.preparation;
    row.condition = condKeys.map((k) => `${k}=${k in c ? c[k] : ''}`).join(', ');
    Object.assign(row, {
      [`noise_${u}`]: p.constant ? 0 : p.noise,
      [`noise_hf_${u}`]: p.constant ? 0 : p.hf,
      noise_ratio: Number.isFinite(nRatio) ? nRatio : null,
      [`drift_${u}`]: p.drift,
      [`drift_excess_${u}`]: excess,
      [`quiet_change_${u}`]: p.quietChange,
      clipped_fraction: p.constant ? null : p.clipped.length / n,
      clipped_outside_artifact: p.constant ? null : outside.length,
      [`rail_high_${u}`]: p.high,
      [`rail_low_${u}`]: p.low,
      [`artifact_${u}`]: p.artifact,
      artifact_ratio: artRatio,
      outlier_score: Number.isNaN(score[s]) ? null : score[s],
      outlier_basis: basis[s],
      outlier_status: scoreStatus[s],
      condition_sweeps: condN,
      flagged: flags.length > 0,
      flags: flags.join(','),
      reasons: reasons.join('; '),
    });
    rows.push(row);
  }
  const step: Step = { verb: 'sweepQc', options: { ...o, minSweeps: o.minSweeps }, version: VERSION };
  return new SweepQcResult(rows, o, u, N, JSON.stringify(set.conditions), [...set.history, step], set.sources);
}

/**
 * Remove the sweeps a QC table flagged (all flags, or only `flags`), and record each removed
 * sweep with its reasons in the history step `rejectFlagged`. The table must come from this set.
 * @example rejectFlagged(set, sweepQc(set), { flags: ['saturated', 'flat'] })
 */
export function rejectFlagged(set: SweepSet, qc: SweepQcResult, options: { flags?: QcFlag[] } = {}): SweepSet {
  checkKeys('rejectFlagged options', options, ['flags']);
  if (!(qc instanceof SweepQcResult)) throw new OptionError('rejectFlagged needs the result of sweepQc(set)');
  if (!qc.matches(set)) {
    throw new OptionError(
      `rejectFlagged: the QC table was computed on ${qc.nSweeps} sweeps with other conditions than ` +
        `this set of ${set.nSweeps} sweeps; run sweepQc on this set`,
    );
  }
  const flags = options.flags ?? [...QC_FLAGS];
  for (const f of flags) {
    if (QC_FLAGS.includes(f)) continue;
    const hint = didYouMean(String(f), QC_FLAGS);
    throw new OptionError(`invalid flags: ${JSON.stringify(f)}${hint}; must be among ${QC_FLAGS.join(', ')}`);
  }
  const keep: number[] = [];
  const removed: Record<string, ConditionValue>[] = [];
  for (const r of qc.rows) {
    const own = String(r.flags ?? '')
      .split(',')
      .filter((f) => f && flags.includes(f as QcFlag));
    if (own.length) {
      const c = set.conditions[r.sweep as number];
      removed.push({
        sweep: r.sweep,
        preparation: r.preparation ?? null,
        file: c.file ?? null,
        fileSweep: c.fileSweep ?? null,
        condition: r.condition,
        flags: own.join(','),
        reasons: r.reasons,
      });
    } else keep.push(r.sweep as number);
  }
  const sub = set.select(keep);
  const options2 = { flags, removed, kept: keep.length, thresholds: { ...qc.options } };
  return sub.create({ history: [...set.history, { verb: 'rejectFlagged', options: options2, version: VERSION }] });
}

/**
 * Every sweep removed by rejectFlagged on the way to `set` (from its history): one row each with the
 * sweep index at the time, preparation, file, fileSweep, condition, flags and reasons (the bundle's table).
 * @example rejectedSweeps(rejectFlagged(set, sweepQc(set)))
 */
export function rejectedSweeps(set: SweepSet): Row[] {
  return set.history
    .filter((h) => h.verb === 'rejectFlagged')
    .flatMap((h) => (h.options.removed as Row[]).map((r) => ({ ...r })));
}

/** References of the QC methods text (for a methods reference list). */
export const QC_REFERENCES = [
  'Leys C, Ley C, Klein O, Bernard P, Licata L (2013) Detecting outliers: do not use standard deviation around the ' +
    'mean, use absolute deviation around the median. J Exp Soc Psychol 49:764-766.',
  'Rousseeuw PJ, Croux C (1993) Alternatives to the median absolute deviation. J Am Stat Assoc 88:1273-1283.',
];

type QcThresholds = Pick<
  ResolvedSweepQcOptions,
  | 'quietWindow'
  | 'artifactWindow'
  | 'maxNoiseRatio'
  | 'minNoiseRatio'
  | 'maxDriftRatio'
  | 'railRun'
  | 'maxArtifactRatio'
  | 'outlierThreshold'
  | 'minSweeps'
>;
/** Removed sweeps as the methods text counts them (the sweeps_removed table's rows). */
export type Removed = readonly { preparation?: ConditionValue; flags?: ConditionValue }[];

function qcSentence(o: QcThresholds): string {
  const w = (x: [number, number]) => `${x[0]} to ${x[1]} ms`;
  return (
    'Before averaging or fitting, each sweep was checked for quality (times relative to the stimulus): noise as ' +
    '1.4826 times the median absolute ' +
    `deviation of the quiet window (${w(o.quietWindow)}) about its linear trend (Rousseeuw & Croux 1993), flagged ` +
    `when above ${o.maxNoiseRatio} or below ${o.minNoiseRatio} times the median of its recording channel; baseline ` +
    'drift (across the quiet window, and from it to the sweep end relative to the sweeps of the same condition) ' +
    `flagged above ${o.maxDriftRatio} times the noise; amplifier saturation as samples on the sweep's rails (at ` +
    `least ${o.railRun} identical extreme samples in a row), flagged outside the artifact window ` +
    `(${w(o.artifactWindow)}); artifact size flagged when more than ${o.maxArtifactRatio}-fold from its ` +
    "condition's median; and the response's deviation from the median sweep of its condition, flagged by the " +
    `median absolute deviation rule at ${o.outlierThreshold} (Leys et al. 2013; conditions with at least ` +
    `${o.minSweeps} sweeps).`
  );
}

function exclusionSentence(removed: Removed, total: number): string {
  if (!removed.length) return ` No sweep was excluded (${total} checked).`;
  const byPrep = new Map<string, Map<string, number>>();
  for (const r of removed) {
    const p = String(r.preparation ?? 'the set');
    const m = byPrep.get(p) ?? byPrep.set(p, new Map()).get(p)!;
    for (const f of String(r.flags ?? '')
      .split(',')
      .filter(Boolean))
      m.set(f, (m.get(f) ?? 0) + 1);
    m.set('', (m.get('') ?? 0) + 1);
  }
  const parts = [...byPrep].sort().map(([p, m]) => {
    const why = [...m]
      .filter(([f]) => f)
      .map(([f, k]) => `${k} ${f}`)
      .join(', ');
    return `${m.get('')} from ${p} (${why})`;
  });
  return ` ${removed.length} of ${total} sweeps were excluded: ${parts.join('; ')}.`;
}

/**
 * The methods sentence for QC and rejection: thresholds, and how many sweeps per preparation
 * were excluded and why (from a rejectFlagged step's `removed` list and the QC rows).
 */
export function sweepQcMethods(qc: SweepQcResult, removed?: Removed): string {
  return qcSentence(qc.options) + (removed ? exclusionSentence(removed, qc.rows.length) : '');
}

/**
 * The methods sentence of a history step: 'rejectFlagged' (thresholds, and the sweeps excluded per preparation
 * with their reasons) or 'sweepQc' (thresholds; flagged sweeps kept). Other steps: ''.
 * @example set.history.map(qcStepMethods).filter(Boolean)
 */
export function qcStepMethods(step: Step): string {
  if (step.verb === 'sweepQc') {
    return qcSentence(step.options as unknown as QcThresholds) + ' Flagged sweeps were kept.';
  }
  if (step.verb !== 'rejectFlagged') return '';
  const o = step.options as { thresholds: QcThresholds; removed: Row[]; kept: number; flags: string[] };
  const which =
    o.flags.length < QC_FLAGS.length ? ` Sweeps were excluded for these flags only: ${o.flags.join(', ')}.` : '';
  return qcSentence(o.thresholds) + which + exclusionSentence(o.removed, o.kept + o.removed.length);
}
