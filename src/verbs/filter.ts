import type { VerbInput, VerbOutput } from './types';
import { butter, iirnotch, type BType, type Sos } from '../signal/butter';
import { defaultPadlen } from '../signal/sosfilt';
import { runSweeps, sharedSamples } from '../parallel/pool';
import { OptionError } from '../errors';
import { checkKeys, integerIn, oneOf, positive } from '../validate';

export interface FilterOptions {
  /** 'lowpass' | 'highpass' | 'bandpass' | 'bandstop' */
  btype: BType;
  /** cutoff frequency in Hz ([low, high] for band filters); must be below fs/2 */
  cutoff: number | [number, number];
  /** Butterworth order 1..10 (default 4); applied twice (forward and backward) */
  order?: number;
  /** samples of odd extension at each end (default: SciPy's sosfiltfilt default) */
  padlen?: number;
}
export const filterDefaults = { order: 4 };

/** Apply sos forward and backward to every sweep (zero phase). */
export function applySos(set: VerbInput, sos: Sos, padlen: number): Float64Array {
  const n = set.nSamples;
  if (n <= padlen)
    throw new OptionError(
      `sweeps of ${n} samples are too short for zero-phase filtering; must be longer than padlen = ${padlen} samples`,
    );
  const d = set.pending;
  const x = d ? d.base : set.data;
  const out = sharedSamples(x.length);
  runSweeps(
    'filtfilt',
    { x, c: d ? d.correction : null, out, n, sos: sos.map((r) => [...r]), padlen },
    set.nSweeps,
    x.length,
  );
  return out;
}

/** The filter verb on samples (SweepSet.filter). */
export function filterSamples(set: VerbInput, options: FilterOptions): VerbOutput {
  if (options === null || typeof options !== 'object')
    throw new OptionError(
      'filter needs options { btype, cutoff } (btype "lowpass", "highpass", "bandpass" or "bandstop"; cutoff in Hz)',
    );
  checkKeys('filter options', options, ['btype', 'cutoff', 'order', 'padlen']);
  const btype = oneOf('btype', options.btype, ['lowpass', 'highpass', 'bandpass', 'bandstop'] as const);
  const order = integerIn('order', options.order ?? filterDefaults.order, 1, 10);
  const sos = butter({ order, cutoff: options.cutoff, btype, fs: set.fs });
  const padlen =
    options.padlen === undefined ? defaultPadlen(sos) : integerIn('padlen', options.padlen, 0, set.nSamples - 1);
  const data = applySos(set, sos, padlen);
  return {
    data,
    step: {
      verb: 'filter',
      options: { btype, cutoff: options.cutoff, order, padlen, design: 'butterworth', zeroPhase: true },
    },
  };
}

export interface NotchOptions {
  /** notch frequency, Hz (default 50) */
  frequency?: number;
  /** quality factor f0 / bandwidth (default 30) */
  Q?: number;
}
export const notchDefaults = { frequency: 50, Q: 30 };

/** The notch verb on samples (SweepSet.notch). */
export function notchSamples(set: VerbInput, options: NotchOptions = {}): VerbOutput {
  checkKeys('notch options', options, ['frequency', 'Q']);
  const frequency = positive('frequency', options.frequency ?? notchDefaults.frequency, 'Hz');
  const Q = positive('Q', options.Q ?? notchDefaults.Q);
  const sos = iirnotch(frequency, Q, set.fs);
  const padlen = defaultPadlen(sos);
  return {
    data: applySos(set, sos, padlen),
    step: { verb: 'notch', options: { frequency, Q, padlen, zeroPhase: true } },
  };
}
