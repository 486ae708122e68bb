/**
 * SweepSet: the immutable core type. N sweeps of equal length stored in one
 * contiguous Float64Array (sweep-major), with the sample rate, the time of the
 * first sample relative to the stimulus, signal units, per-sweep conditions,
 * the history of steps that made it, and the input files it came from.
 */
import { inspect } from 'node:util';
import { OptionError } from '../errors';
import { checkKeys, didYouMean, shown, warnOnce } from '../validate';
import { VERSION } from '../version';
import { toFrame } from '../report/frame';
import { baselineSamples, type BaselineOptions } from '../verbs/baseline';
import {
  removeArtifactSamples,
  alignStimulusSamples,
  detectStimulus,
  type ArtifactOptions,
  type StimulusDetection,
} from '../verbs/artifact';
import { filterSamples, notchSamples, type FilterOptions, type NotchOptions } from '../verbs/filter';
import { removeHumSamples, type HumOptions } from '../verbs/hum';
import { decimateSamples, type DecimateOptions } from '../verbs/decimate';
import { resampleSamples, type ResampleOptions } from '../verbs/resample';
import type { DeferredSamples, VerbInput } from '../verbs/types';
import { SIGNAL_UNITS, signalFactor, type SignalUnit } from './units';
import { allFinite64 } from '../parallel/simd';
import { conditionKeys } from './conditions';
import { runSweeps, shareCopy, sharedSamples } from '../parallel/pool';
import { sweepSetHtml, showSweepSet } from '../notebook/sweepSet';

import type { ConditionValue, Conditions, Step, Source } from './conditions';

export type { DeferredSamples } from '../verbs/types';
export type { ConditionValue, Conditions, Step, Source } from './conditions';
export { conditionKeys } from './conditions';

const samples = new WeakMap<SweepSet, Float64Array | DeferredSamples>();
/** Set while create() and the loaders (which check their samples themselves) construct a set: no second scan. */
let checkedSamples = false;

/**
 * A SweepSet from samples the caller has already checked to be finite (the loaders of src/io): the public
 * constructor would scan them again.
 */
export function checkedSweepSet(init: SweepSetInit): SweepSet {
  checkedSamples = true;
  try {
    return new SweepSet(init);
  } finally {
    checkedSamples = false;
  }
}
/** Condition arrays this module froze (with frozen rows): reused as they are. */
const frozenConditions = new WeakSet<readonly Conditions[]>();

/** The pending correction of a set whose samples are not yet computed, or null. */
export function deferredOf(set: SweepSet): DeferredSamples | null {
  const d = samples.get(set);
  return d && !(d instanceof Float64Array) ? d : null;
}

/** What a verb reads of a set: its samples and time base, and any pending correction (src/verbs/types.ts). */
function verbInput(set: SweepSet): VerbInput {
  return {
    nSweeps: set.nSweeps,
    nSamples: set.nSamples,
    fs: set.fs,
    t0Ms: set.t0Ms,
    conditions: set.conditions,
    extras: set.extras,
    durationMs: set.durationMs,
    get data() {
      return set.data;
    },
    get pending() {
      return deferredOf(set);
    },
    sweep: (i) => set.sweep(i),
    timeAt: (i) => set.timeAt(i),
    time: () => set.time(),
    column: (key) => set.column(key),
  };
}

export interface SweepSetInit {
  /** all samples, sweep after sweep (or, from verbs, samples with a pending correction) */
  data: Float64Array | DeferredSamples;
  nSweeps: number;
  nSamples: number;
  /** sample rate, Hz */
  fs: number;
  /** time of the first sample relative to the stimulus, ms */
  t0Ms: number;
  units: SignalUnit;
  conditions: readonly Conditions[];
  history?: readonly Step[];
  sources?: readonly Source[];
  /** Extra per-set information (e.g. sweep SD or counts after averaging). */
  extras?: Readonly<Record<string, unknown>>;
}

export class SweepSet implements Iterable<Float64Array> {
  readonly nSweeps: number;
  readonly nSamples: number;
  readonly fs: number;
  readonly t0Ms: number;
  readonly units: SignalUnit;
  readonly conditions: readonly Conditions[];
  readonly history: readonly Step[];
  readonly sources: readonly Source[];
  readonly extras: Readonly<Record<string, unknown>>;

  constructor(init: SweepSetInit) {
    const raw = init.data instanceof Float64Array ? init.data : init.data?.base;
    if (!(raw instanceof Float64Array || (raw instanceof Float32Array && !(init.data instanceof Float32Array)))) {
      throw new OptionError(
        'SweepSet data must be a Float64Array (or samples with a pending correction on a Float64Array or Float32Array)',
      );
    }
    if (!Number.isInteger(init.nSweeps) || init.nSweeps < 0) throw new OptionError(`invalid nSweeps: ${init.nSweeps}`);
    if (!Number.isInteger(init.nSamples) || init.nSamples < 1)
      throw new OptionError(`invalid nSamples: ${init.nSamples}; must be an integer >= 1`);
    if (raw.length !== init.nSweeps * init.nSamples) {
      throw new OptionError(
        `SweepSet data length ${raw.length} does not equal nSweeps x nSamples = ${init.nSweeps} x ${init.nSamples}`,
      );
    }
    if (!(init.fs > 0) || !Number.isFinite(init.fs)) throw new OptionError(`invalid fs: ${init.fs} Hz; must be > 0`);
    if (!Number.isFinite(init.t0Ms)) throw new OptionError(`invalid t0Ms: ${init.t0Ms}; must be finite`);
    if (init.conditions.length !== init.nSweeps) {
      throw new OptionError(`conditions has ${init.conditions.length} rows for ${init.nSweeps} sweeps`);
    }
    if (!(SIGNAL_UNITS as readonly unknown[]).includes(init.units)) {
      const u = init.units as unknown;
      throw new OptionError(
        `invalid units: ${shown(u)}; must be one of ${SIGNAL_UNITS.join(', ')}` +
          (typeof u === 'string' ? didYouMean(u, SIGNAL_UNITS) : ''),
      );
    }
    // samples from a caller (not from a verb or a loader, which checked them): every one must be finite, as the
    // loaders require (the SIMD check, about the speed of reading the samples once)
    if (!checkedSamples && raw instanceof Float64Array && !(allFinite64(raw, 0, raw.length) ?? finiteAll(raw))) {
      let j = 0;
      while (raw[j] - raw[j] === 0) j++;
      throw new OptionError(
        `invalid data: sample ${j % init.nSamples} of sweep ${Math.floor(j / init.nSamples)} is ${raw[j]}; ` +
          'every sample must be a finite number',
      );
    }
    samples.set(this, init.data);
    // conditions are frozen once: a set made from another with the same conditions shares them
    const conditions = frozenConditions.has(init.conditions)
      ? init.conditions
      : Object.freeze(init.conditions.map((c) => Object.freeze({ ...c })));
    frozenConditions.add(conditions);
    this.nSweeps = init.nSweeps;
    this.nSamples = init.nSamples;
    this.fs = init.fs;
    this.t0Ms = init.t0Ms;
    this.units = init.units;
    this.conditions = conditions;
    this.history = Object.freeze([...(init.history ?? [])]);
    this.sources = Object.freeze([...(init.sources ?? [])]);
    // descriptors, not values: a lazily computed extra (the SD sweeps of an average) stays lazy
    this.extras = Object.freeze(Object.defineProperties({}, Object.getOwnPropertyDescriptors(init.extras ?? {})));
    Object.freeze(this);
  }

  /** A new SweepSet with some fields replaced; `step` is appended to the history. */
  create(overrides: Partial<SweepSetInit> & { step?: { verb: string; options: Record<string, unknown> } }): SweepSet {
    const { step, ...rest } = overrides;
    const history =
      rest.history ??
      (step ? [...this.history, { verb: step.verb, options: step.options, version: VERSION }] : this.history);
    return checkedSweepSet({
      data: samples.get(this)!,
      nSweeps: this.nSweeps,
      nSamples: this.nSamples,
      fs: this.fs,
      t0Ms: this.t0Ms,
      units: this.units,
      conditions: this.conditions,
      sources: this.sources,
      extras: rest.data ? {} : this.extras,
      ...rest,
      history,
    });
  }

  /** All samples, sweep after sweep (nSweeps x nSamples), in `units`. */
  get data(): Float64Array {
    const d = samples.get(this)!;
    if (d instanceof Float64Array) return d;
    const out = sharedSamples(d.base.length);
    runSweeps('correct', { x: d.base, out, n: this.nSamples, c: d.correction }, this.nSweeps, out.length);
    samples.set(this, out);
    return out;
  }

  /** Sample interval, ms. */
  get dtMs(): number {
    return 1000 / this.fs;
  }

  /** Duration of one sweep, ms. */
  get durationMs(): number {
    return (this.nSamples * 1000) / this.fs;
  }

  /** Time of sample i relative to the stimulus, ms. */
  timeAt(i: number): number {
    return this.t0Ms + (i * 1000) / this.fs;
  }

  /** Nearest sample index for time t (ms), clamped to the sweep. */
  indexAt(tMs: number): number {
    const i = Math.round(((tMs - this.t0Ms) * this.fs) / 1000);
    return Math.min(this.nSamples - 1, Math.max(0, i));
  }

  /** The time axis, ms. */
  time(): Float64Array {
    const t = new Float64Array(this.nSamples);
    for (let i = 0; i < this.nSamples; i++) t[i] = this.timeAt(i);
    return t;
  }

  /** A view (no copy) of sweep i. Do not modify it. */
  sweep(i: number): Float64Array {
    if (!Number.isInteger(i) || i < 0 || i >= this.nSweeps)
      throw new OptionError(`invalid sweep index: ${i}; must be 0..${this.nSweeps - 1}`);
    return this.data.subarray(i * this.nSamples, (i + 1) * this.nSamples);
  }

  *[Symbol.iterator](): Iterator<Float64Array> {
    for (let i = 0; i < this.nSweeps; i++) yield this.sweep(i);
  }

  /** Sweeps with their conditions and index. */
  *entries(): Generator<{ index: number; samples: Float64Array; conditions: Conditions }> {
    for (let i = 0; i < this.nSweeps; i++) yield { index: i, samples: this.sweep(i), conditions: this.conditions[i] };
  }

  /** Values of one condition column, in sweep order. */
  column(key: string): ConditionValue[] {
    return this.conditions.map((c) => (key in c ? c[key] : null));
  }

  /** Distinct values of a condition, in first-seen order. */
  levels(key: string): ConditionValue[] {
    return [...new Set(this.column(key))];
  }

  /** Keep the sweeps with the given indices (in that order). */
  select(indices: readonly number[]): SweepSet {
    if (!Array.isArray(indices))
      throw new OptionError(
        `invalid indices: ${shown(indices)}; must be an array of sweep indices 0..${this.nSweeps - 1}`,
      );
    for (const i of indices) {
      if (!Number.isInteger(i) || i < 0 || i >= this.nSweeps)
        throw new OptionError(`invalid sweep index in select: ${shown(i)}; must be an integer 0..${this.nSweeps - 1}`);
    }
    const out = new Float64Array(indices.length * this.nSamples);
    indices.forEach((ix, k) => out.set(this.sweep(ix), k * this.nSamples));
    return this.create({
      data: out,
      nSweeps: indices.length,
      conditions: indices.map((i) => this.conditions[i]),
      step: { verb: 'select', options: { indices: [...indices] } },
    });
  }

  /**
   * Keep the sweeps whose conditions match. `match` is an object of condition
   * values (a value may be an array of allowed values, or a [min, max] range
   * given as {min, max}), or a predicate.
   * @example set.where({ preparation: 'N3', distanceMm: [10, 20] })
   */
  where(
    match:
      | Record<string, ConditionValue | readonly ConditionValue[] | { min?: number; max?: number }>
      | ((c: Conditions, i: number) => boolean),
  ): SweepSet {
    if (typeof match !== 'function') checkMatch(this, match);
    const pred = typeof match === 'function' ? match : matcher(match);
    const idx: number[] = [];
    this.conditions.forEach((c, i) => {
      if (pred(c, i)) idx.push(i);
    });
    if (idx.length === 0 && this.nSweeps > 0) {
      const what = typeof match === 'function' ? 'the predicate' : shown(match);
      warnOnce(`where:${what}`, `where(${what}) matches none of the ${this.nSweeps} sweeps`);
    }
    const s = this.select(idx);
    return s.create({
      history: [
        ...this.history,
        { verb: 'where', options: { match: typeof match === 'function' ? String(match) : match }, version: VERSION },
      ],
    });
  }

  /** Keep the samples between fromMs and toMs (inclusive of the nearest samples). */
  crop(fromMs: number, toMs: number): SweepSet {
    if (!Number.isFinite(fromMs) || !Number.isFinite(toMs) || !(toMs > fromMs)) {
      throw new OptionError(`invalid crop window: [${fromMs}, ${toMs}] ms; must be finite with from < to`);
    }
    const a = Math.max(0, Math.ceil(((fromMs - this.t0Ms) * this.fs) / 1000 - 1e-9));
    const b = Math.min(this.nSamples - 1, Math.floor(((toMs - this.t0Ms) * this.fs) / 1000 + 1e-9));
    if (b < a)
      throw new OptionError(
        `invalid crop window: [${fromMs}, ${toMs}] ms lies outside the sweep [${this.t0Ms}, ${this.timeAt(this.nSamples - 1)}] ms`,
      );
    const n = b - a + 1;
    const out = sharedSamples(this.nSweeps * n);
    for (let s = 0; s < this.nSweeps; s++)
      out.set(this.data.subarray(s * this.nSamples + a, s * this.nSamples + b + 1), s * n);
    return this.create({
      data: out,
      nSamples: n,
      t0Ms: this.timeAt(a),
      step: { verb: 'crop', options: { fromMs, toMs } },
    });
  }

  /**
   * Subtract the pre-stimulus level of each sweep.
   * @example set.baseline({ window: [-2, -0.2], method: 'median' })
   */
  baseline(options: BaselineOptions = {}): SweepSet {
    return this.create(baselineSamples(verbInput(this), options));
  }

  /**
   * Remove the stimulus artifact ('blank', 'template', 'exponential' or 'alternate').
   * @example set.removeArtifact({ method: 'template', window: [0, 0.3] })
   */
  removeArtifact(options: ArtifactOptions): SweepSet {
    return this.create(removeArtifactSamples(verbInput(this), options));
  }

  /** Find the stimulus time from the artifact (per sweep and median). */
  detectStimulus(options: { search?: [number, number] } = {}): StimulusDetection {
    return detectStimulus(verbInput(this), options);
  }

  /** Shift the time axis so that the stimulus found from the artifact is at 0 ms. */
  alignStimulus(options: { search?: [number, number] } = {}): SweepSet {
    return this.create(alignStimulusSamples(verbInput(this), options));
  }

  /**
   * Zero-phase Butterworth filter (forward-backward, as SciPy's sosfiltfilt).
   * @example set.filter({ btype: 'bandpass', cutoff: [10, 5000], order: 2 })
   */
  filter(options: FilterOptions): SweepSet {
    return this.create(filterSamples(verbInput(this), options));
  }

  /** Zero-phase Butterworth low-pass at `cutoff` Hz (order 4 by default). */
  lowpass(cutoff: number, order = 4): SweepSet {
    return this.filter({ btype: 'lowpass', cutoff, order });
  }

  /** Zero-phase Butterworth high-pass at `cutoff` Hz (order 2 by default). */
  highpass(cutoff: number, order = 2): SweepSet {
    return this.filter({ btype: 'highpass', cutoff, order });
  }

  /** Zero-phase IIR notch at the mains frequency. */
  notch(options: NotchOptions = {}): SweepSet {
    return this.create(notchSamples(verbInput(this), options));
  }

  /**
   * Remove mains hum by fitting and subtracting sinusoids at the mains frequency and harmonics.
   * @example set.removeHum({ frequency: 'detect', exclude: [[0, 10]] })
   */
  removeHum(options: HumOptions = {}): SweepSet {
    return this.create(removeHumSamples(verbInput(this), options));
  }

  /** Down-sample by an integer factor after a zero-phase anti-alias low-pass. */
  decimate(options: DecimateOptions): SweepSet {
    return this.create(decimateSamples(verbInput(this), options));
  }

  /**
   * Change the sample rate by a rational factor (polyphase FIR, as SciPy's resample_poly).
   * @example set.resample({ fs: 20000 })
   */
  resample(options: ResampleOptions): SweepSet {
    return this.create(resampleSamples(verbInput(this), options));
  }

  // components(), qc() and rejectFlagged() are installed by src/measure/table.ts, toNwb() by
  // src/io/nwbWrite.ts (layers above this one; src/index.ts loads both)

  /** An HTML summary (sweeps, conditions, sampling rate, history) for notebooks. */
  toHTML(): string {
    return sweepSetHtml(this);
  }

  /** Show the HTML summary in a notebook (tslab), or print the text summary elsewhere. */
  show(): void {
    showSweepSet(this);
  }

  /** Group sweeps by condition keys; call `.average()` on the result. */
  groupBy(...keys: string[]): GroupedSweeps {
    return new GroupedSweeps(this, keys.flat());
  }

  /** Convert the signal to other units. */
  toUnits(units: SignalUnit): SweepSet {
    const f = signalFactor(this.units, units);
    const x = this.data;
    const out = sharedSamples(x.length);
    for (let i = 0; i < out.length; i++) out[i] = x[i] * f;
    return this.create({ data: out, units, step: { verb: 'toUnits', options: { from: this.units, to: units } } });
  }

  /** Merge sets with equal fs, nSamples, t0 and units (sweeps appended in order). */
  static concat(sets: readonly SweepSet[]): SweepSet {
    if (sets.length === 0) throw new OptionError('concat needs at least one SweepSet');
    const a = sets[0];
    for (const s of sets) {
      if (s.fs !== a.fs || s.nSamples !== a.nSamples || Math.abs(s.t0Ms - a.t0Ms) > 1e-9 || s.units !== a.units) {
        throw new OptionError(
          `cannot concatenate sets: fs ${s.fs} vs ${a.fs} Hz, nSamples ${s.nSamples} vs ${a.nSamples}, t0 ${s.t0Ms} vs ${a.t0Ms} ms, units ${s.units} vs ${a.units}`,
        );
      }
    }
    const n = sets.reduce((k, s) => k + s.nSweeps, 0);
    const data = new Float64Array(n * a.nSamples);
    let off = 0;
    for (const s of sets) {
      data.set(s.data, off);
      off += s.data.length;
    }
    const seen = new Set<string>();
    const sources: Source[] = [];
    for (const s of sets)
      for (const src of s.sources)
        if (!seen.has(src.path)) {
          seen.add(src.path);
          sources.push(src);
        }
    return new SweepSet({
      data,
      nSweeps: n,
      nSamples: a.nSamples,
      fs: a.fs,
      t0Ms: a.t0Ms,
      units: a.units,
      conditions: sets.flatMap((s) => s.conditions),
      history: a.history,
      sources,
    });
  }

  /** Conditions as a danfo DataFrame (one row per sweep, with `sweep` index). */
  conditionsFrame(): import('danfojs-node').DataFrame {
    return toFrame(this.conditionRows());
  }

  /** Conditions as plain rows with the sweep index. */
  conditionRows(): Record<string, ConditionValue>[] {
    const keys = conditionKeys(this.conditions);
    return this.conditions.map((c, i) => {
      const r: Record<string, ConditionValue> = { sweep: i };
      for (const k of keys) r[k] = k in c ? c[k] : null;
      return r;
    });
  }

  /** A short text summary. */
  summary(): string {
    const keys = conditionKeys(this.conditions);
    const lines = [
      `SweepSet: ${this.nSweeps} sweeps x ${this.nSamples} samples at ${fmt(this.fs / 1000)} kHz, ${fmt(this.t0Ms)} to ${fmt(this.timeAt(this.nSamples - 1))} ms, ${this.units}`,
    ];
    for (const k of keys) {
      const lv = this.levels(k).filter((v) => v !== null);
      if (k === 'file' || k === 'fileSweep') continue;
      const shown = lv
        .slice(0, 8)
        .map((v) => (typeof v === 'number' ? fmt(v) : String(v)))
        .join(', ');
      lines.push(`  ${k}: ${lv.length} level${lv.length === 1 ? '' : 's'} (${shown}${lv.length > 8 ? ', ...' : ''})`);
    }
    if (this.sources.length) lines.push(`  from ${this.sources.length} file${this.sources.length === 1 ? '' : 's'}`);
    if (this.history.length) lines.push(`  history: ${this.history.map((h) => h.verb).join(' -> ')}`);
    return lines.join('\n');
  }

  toString(): string {
    return this.summary();
  }

  [inspect.custom](): string {
    return this.summary();
  }
}

// The verbs as functions of a set, as the package exports them: each is the same as the method of that name
// (the verb itself is `<name>Samples` in src/verbs/<file>.ts, a function of the samples and the time base).

/**
 * Subtract the pre-stimulus level of each sweep (mean or median of a window), with
 * an optional linear detrend to a late quiet window (the same as `set.baseline(options)`).
 * @example baseline(set, { window: [-2, -0.2] })
 */
export function baseline(set: SweepSet, options: BaselineOptions = {}): SweepSet {
  return set.baseline(options);
}

/**
 * Zero-phase Butterworth filtering of every sweep (forward-backward, odd-extension
 * padding; the same result as SciPy's sosfiltfilt). The effective order is twice
 * `order` and the gain at the cutoff is -6 dB (each pass is -3 dB). The same as `set.filter(options)`.
 * @example filter(set, { btype: 'lowpass', cutoff: 5000, order: 4 })
 */
export function filter(set: SweepSet, options: FilterOptions): SweepSet {
  return set.filter(options);
}

/**
 * Zero-phase IIR notch (second order) on every sweep (the same as `set.notch(options)`). Rings around fast
 * transients; prefer removeHum for CAPs.
 */
export function notch(set: SweepSet, options: NotchOptions = {}): SweepSet {
  return set.notch(options);
}

/**
 * Down-sample by an integer factor after a zero-phase Butterworth anti-alias
 * low-pass at 0.8 x the new Nyquist frequency (the rule SciPy's decimate uses for
 * its IIR filter). Keeps samples 0, factor, 2 factor, ... The same as `set.decimate(options)`.
 */
export function decimate(set: SweepSet, options: DecimateOptions): SweepSet {
  return set.decimate(options);
}

/**
 * Change the sample rate by a rational factor up/down with a polyphase
 * Kaiser-windowed FIR anti-alias filter (the method and defaults of SciPy's
 * resample_poly; zero phase: output sample k lies at input time k down/up, so the
 * time of the first sample is kept). The same as `set.resample(options)`.
 * @example resample(set, { fs: 20000 })
 */
export function resample(set: SweepSet, options: ResampleOptions): SweepSet {
  return set.resample(options);
}

/**
 * Remove mains hum by fitting and subtracting sinusoids at the mains frequency and
 * its harmonics, per sweep (phase and amplitude free in every sweep). The fit
 * leaves out the `exclude` ranges. When the frequency is 'detect', 50 and 60 Hz
 * are compared by the fitted power summed over sweeps, and the winner refined
 * (golden-section search on the residual, +/-1 Hz).
 * @example set.removeHum({ frequency: 50, harmonics: 3, exclude: [[0, 8]] })
 */
export function removeHum(set: SweepSet, options: HumOptions = {}): SweepSet {
  return set.removeHum(options);
}

/**
 * Remove the stimulus artifact by one of several methods (see ArtifactOptions); the same as
 * `set.removeArtifact(options)`.
 * @example removeArtifact(set, { method: 'template', window: [0, 0.4] })
 */
export function removeArtifact(set: SweepSet, options: ArtifactOptions): SweepSet {
  return set.removeArtifact(options);
}

/** Shift the time axis so the detected stimulus (median over sweeps) is at 0 ms; the detection is kept in extras. */
export function alignStimulus(set: SweepSet, options: { search?: [number, number] } = {}): SweepSet {
  return set.alignStimulus(options);
}

/** Sweeps grouped by condition keys. */
export class GroupedSweeps {
  readonly set: SweepSet;
  readonly keys: string[];
  readonly groups: { key: ConditionValue[]; indices: number[] }[];
  constructor(set: SweepSet, keys: string[]) {
    for (const k of keys)
      if (typeof k !== 'string' || !k) throw new OptionError(`invalid groupBy key: ${JSON.stringify(k)}`);
    for (const k of keys) {
      if (set.nSweeps > 0 && !set.conditions.some((c) => k in c)) {
        const known = [...new Set(set.conditions.flatMap((c) => Object.keys(c)))].sort();
        throw new OptionError(
          `invalid groupBy key: no sweep has the condition ${JSON.stringify(k)}${didYouMean(k, known)}; ` +
            `conditions are ${known.join(', ')}`,
        );
      }
    }
    this.set = set;
    this.keys = keys;
    const map = new Map<string, { key: ConditionValue[]; indices: number[] }>();
    set.conditions.forEach((c, i) => {
      const key = keys.map((k) => (k in c ? c[k] : null));
      const id = JSON.stringify(key);
      let g = map.get(id);
      if (!g) map.set(id, (g = { key, indices: [] }));
      g.indices.push(i);
    });
    this.groups = [...map.values()];
  }

  /**
   * Average each group: mean (default) or median sweep. The result has one sweep
   * per group, conditions reduced to the values shared by all members plus
   * `count`; extras.sd and extras.sem hold the SD and SEM sweeps (same layout), computed
   * when first read.
   */
  average(options: { method?: 'mean' | 'median' } = {}): SweepSet {
    checkKeys('average options', options, ['method']);
    const method = options.method ?? 'mean';
    if (method !== 'mean' && method !== 'median')
      throw new OptionError(`invalid method: ${JSON.stringify(method)}; must be "mean" or "median"`);
    const { set } = this;
    const n = set.nSamples;
    const G = this.groups.length;
    const data = set.data;
    const out = sharedSamples(G * n, data.length);
    const start = new Int32Array(G + 1);
    this.groups.forEach((g, gi) => {
      start[gi + 1] = start[gi] + g.indices.length;
    });
    const members = Int32Array.from(this.groups.flatMap((g) => g.indices));
    const args = {
      x: data,
      n,
      start: shareCopy(start),
      members: shareCopy(members),
      median: method === 'median' ? 1 : 0,
    };
    const none = new Float64Array(0);
    runSweeps('average', { ...args, out, sd: none, sem: none }, G, data.length);
    // the SD and SEM sweeps take a second pass over the members: made when first read
    // (same numbers; the members' samples stay referenced until then)
    let spread: { sd: Float64Array; sem: Float64Array } | null = null;
    const spreadOf = () => {
      if (!spread) {
        spread = { sd: sharedSamples(G * n, data.length), sem: sharedSamples(G * n, data.length) };
        runSweeps('average', { ...args, out: none, ...spread }, G, data.length);
      }
      return spread;
    };
    const extras = {
      get sd() {
        return spreadOf().sd;
      },
      get sem() {
        return spreadOf().sem;
      },
      groupIndices: this.groups.map((g) => g.indices),
    };
    const conds: Conditions[] = this.groups.map((g) => ({
      ...shared(g.indices.map((ix) => set.conditions[ix])),
      count: g.indices.length,
    }));
    return set.create({
      data: out,
      nSweeps: G,
      conditions: conds,
      extras,
      step: { verb: 'average', options: { by: this.keys, method } },
    });
  }
}

function shared(cs: Conditions[]): Record<string, ConditionValue> {
  const out: Record<string, ConditionValue> = {};
  const keys = conditionKeys(cs);
  for (const k of keys) {
    const v0 = cs[0][k];
    if (cs.every((c) => c[k] === v0)) out[k] = v0 ?? null;
  }
  return out;
}

/** A where() match names conditions some sweep has, and ranges hold only min and max. */
function checkMatch(set: SweepSet, match: unknown): void {
  if (match === null || typeof match !== 'object' || Array.isArray(match)) {
    throw new OptionError(
      `invalid where: ${shown(match)}; must be an object of condition values or a predicate function`,
    );
  }
  const known = conditionKeys(set.conditions);
  for (const [k, want] of Object.entries(match as Record<string, unknown>)) {
    if (set.nSweeps > 0 && !known.includes(k)) {
      throw new OptionError(
        `unknown condition ${JSON.stringify(k)} in where()${didYouMean(k, known)}; no sweep has it; conditions are ${[...known].sort().join(', ')}`,
      );
    }
    if (want !== null && typeof want === 'object' && !Array.isArray(want)) {
      checkKeys(`where() range for ${JSON.stringify(k)}`, want, ['min', 'max']);
      const r = want as { min?: unknown; max?: unknown };
      for (const b of ['min', 'max'] as const) {
        if (r[b] !== undefined && (typeof r[b] !== 'number' || Number.isNaN(r[b]))) {
          throw new OptionError(
            `invalid where() range for ${JSON.stringify(k)}: ${b} is ${shown(r[b])}; must be a number`,
          );
        }
      }
    }
  }
}

function matcher(match: Record<string, unknown>): (c: Conditions) => boolean {
  const entries = Object.entries(match);
  return (c) =>
    entries.every(([k, want]) => {
      const v = k in c ? c[k] : null;
      if (Array.isArray(want)) return want.includes(v);
      if (want !== null && typeof want === 'object') {
        const r = want as { min?: number; max?: number };
        return typeof v === 'number' && (r.min === undefined || v >= r.min) && (r.max === undefined || v <= r.max);
      }
      return v === want;
    });
}

function fmt(x: number): string {
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(4)));
}

/** Whether every value is finite (the check where WebAssembly SIMD is not available). */
function finiteAll(x: Float64Array): boolean {
  for (let i = 0; i < x.length; i++) if (x[i] - x[i] !== 0) return false;
  return true;
}
