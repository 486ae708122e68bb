import type { TimeBase, VerbInput, VerbOutput } from './types';
import { OptionError } from '../errors';
import { checkKeys, oneOf, windowMs } from '../validate';
import { shareCopy } from '../parallel/pool';
import { noCorrection } from '../parallel/kernels';

export interface BaselineOptions {
  /** Pre-stimulus window [from, to], ms relative to the stimulus. Default: sweep start to -0.1 ms. */
  window?: [number, number];
  /** 'mean' (default) or 'median' of the window. */
  method?: 'mean' | 'median';
  /**
   * A late quiet window [from, to] in ms: when given, a straight line through the
   * level of the pre-stimulus window and the level of this window is subtracted
   * (linear detrend of slow drift). Default: none.
   */
  lateWindow?: [number, number] | null;
}

export const baselineDefaults = { method: 'mean' as const, lateWindow: null, stopBeforeStimulusMs: 0.1 };

/**
 * What a baseline subtraction did, kept in the set's extras (key `baselineFit`) for removeHum: the
 * levels of the windows included the hum, so a later hum removal gives back the level and slope the
 * hum put there (removeHum: baselineRefit). Sample indices (inclusive). The artifact verbs that only
 * subtract or bridge on the same time axis carry it on (the line subtracted stays what it was); any
 * other verb (filters, resampling, cropping, averaging) drops it.
 */
export interface BaselineFit {
  a: number;
  b: number;
  late: [number, number] | null;
  method: 'mean' | 'median';
  nSamples: number;
}

/** The baselineFit of a set's extras, to carry on (an empty object when there is none). */
export function carryBaseline(extras: Readonly<Record<string, unknown>>): { baselineFit?: BaselineFit } {
  const f = extras.baselineFit as BaselineFit | undefined;
  return f ? { baselineFit: f } : {};
}

/** Level of samples [a, b] (inclusive) of x by mean or median. */
function level(
  x: Float64Array | Float32Array,
  a: number,
  b: number,
  method: 'mean' | 'median',
  buf: Float64Array,
): number {
  if (method === 'mean') {
    let s = 0;
    for (let i = a; i <= b; i++) s += x[i];
    return s / (b - a + 1);
  }
  const m = b - a + 1;
  const sub = buf.subarray(0, m);
  sub.set(x.subarray(a, b + 1));
  sub.sort();
  return m % 2 ? sub[(m - 1) / 2] : 0.5 * (sub[m / 2 - 1] + sub[m / 2]);
}

/** Samples indices [a, b] for a window in ms; throws when the window holds no samples. */
export function windowIndices(set: TimeBase, w: [number, number], name: string): [number, number] {
  const a = Math.max(0, Math.ceil(((w[0] - set.t0Ms) * set.fs) / 1000 - 1e-9));
  const b = Math.min(set.nSamples - 1, Math.floor(((w[1] - set.t0Ms) * set.fs) / 1000 + 1e-9));
  if (b < a) {
    throw new OptionError(
      `invalid ${name}: [${w[0]}, ${w[1]}] ms holds no samples; the sweep spans [${set.t0Ms}, ${set.timeAt(set.nSamples - 1)}] ms`,
    );
  }
  return [a, b];
}

/** The baseline verb on samples: the levels per sweep, left pending as a correction (SweepSet.baseline). */
export function baselineSamples(set: VerbInput, options: BaselineOptions = {}): VerbOutput {
  checkKeys('baseline options', options, ['window', 'method', 'lateWindow']);
  const method = oneOf('method', options.method ?? baselineDefaults.method, ['mean', 'median'] as const);
  const defaultWindow: [number, number] = [set.t0Ms, -baselineDefaults.stopBeforeStimulusMs];
  if (!options.window && !(set.t0Ms < -baselineDefaults.stopBeforeStimulusMs)) {
    throw new OptionError(
      `invalid window: the sweep starts at ${set.t0Ms} ms, so there is no pre-stimulus baseline; give window: [from, to] in ms`,
    );
  }
  const w = windowMs('window', options.window ?? defaultWindow);
  const [a, b] = windowIndices(set, w, 'window');
  const late = options.lateWindow ? windowMs('lateWindow', options.lateWindow) : null;
  const lb = late ? windowIndices(set, late, 'lateWindow') : null;
  if (lb && !(lb[0] > b))
    throw new OptionError(
      `invalid lateWindow: [${late![0]}, ${late![1]}] ms; must lie after window [${w[0]}, ${w[1]}] ms`,
    );
  const n = set.nSamples;
  // samples kept as read (float32, nothing pending) are measured in place: the levels are
  // those of their exact float64 values, and nothing is widened until it is needed
  const pending = set.pending;
  const asRead = pending && !pending.correction.line && !pending.correction.template && !pending.correction.bridge;
  const x = asRead ? pending!.base : set.data;
  const buf = new Float64Array(n);
  const ca = (a + b) / 2;
  const cb = lb ? (lb[0] + lb[1]) / 2 : 0;
  const level0 = new Float64Array(set.nSweeps);
  const slope = new Float64Array(set.nSweeps);
  for (let s = 0; s < set.nSweeps; s++) {
    const sw = x.subarray(s * n, (s + 1) * n);
    level0[s] = level(sw, a, b, method, buf);
    if (lb) slope[s] = (level(sw, lb[0], lb[1], method, buf) - level0[s]) / (cb - ca);
  }
  // the subtraction is left pending: it happens when the samples are next read
  const correction = { ...noCorrection(), line: true, level: shareCopy(level0), slope: shareCopy(slope), center: ca };
  const baselineFit: BaselineFit = { a, b, late: lb, method, nSamples: n };
  return {
    data: { base: x, correction },
    extras: { baselineFit },
    step: { verb: 'baseline', options: { window: w, method, lateWindow: late } },
  };
}
