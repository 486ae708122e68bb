import type { VerbInput, VerbOutput } from './types';
import { butter } from '../signal/butter';
import { defaultPadlen } from '../signal/sosfilt';
import { applySos } from './filter';
import { checkKeys, integerIn } from '../validate';
import { OptionError } from '../errors';

export interface DecimateOptions {
  /** integer down-sampling factor 2..64 */
  factor: number;
  /** order of the zero-phase Butterworth anti-alias low-pass (default 8) */
  order?: number;
}
export const decimateDefaults = { order: 8, cutoffFraction: 0.8 };

/** The decimate verb on samples (SweepSet.decimate). */
export function decimateSamples(set: VerbInput, options: DecimateOptions): VerbOutput {
  if (options === null || typeof options !== 'object')
    throw new OptionError('decimate needs options { factor } (an integer 2..64)');
  checkKeys('decimate options', options, ['factor', 'order']);
  const factor = integerIn('factor', options.factor, 2, 64);
  const order = integerIn('order', options.order ?? decimateDefaults.order, 1, 10);
  const cutoff = (decimateDefaults.cutoffFraction * set.fs) / factor / 2;
  const sos = butter({ order, cutoff, btype: 'lowpass', fs: set.fs });
  const filtered = applySos(set, sos, defaultPadlen(sos));
  const n = set.nSamples;
  const m = Math.ceil(n / factor);
  const out = new Float64Array(set.nSweeps * m);
  for (let s = 0; s < set.nSweeps; s++) for (let i = 0; i < m; i++) out[s * m + i] = filtered[s * n + i * factor];
  return {
    data: out,
    nSamples: m,
    fs: set.fs / factor,
    step: { verb: 'decimate', options: { factor, order, cutoffHz: cutoff, zeroPhase: true } },
  };
}
