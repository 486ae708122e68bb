import type { SampleView, VerbOutput } from './types';
import { polyphaseDesign, rationalRatio, resampledLength } from '../signal/resample';
import { OptionError } from '../errors';
import { checkKeys, oneOf, positive } from '../validate';
import { runSweeps, shareCopy, sharedSamples } from '../parallel/pool';

export interface ResampleOptions {
  /** new sample rate, Hz; new / old must be a fraction up/down with up, down <= 1000 (e.g. 50000 -> 20000 is 2/5) */
  fs: number;
  /**
   * what lies outside each sweep for the filter: 'constant' (zeros, default, as
   * SciPy's resample_poly), 'mean' or 'median' (the sweep's own mean or median is
   * taken off first and added back, so the ends do not sag towards zero)
   */
  padtype?: 'constant' | 'mean' | 'median';
  /** Kaiser window beta of the anti-alias FIR filter (default 5) */
  beta?: number;
}
export const resampleDefaults = { padtype: 'constant' as const, beta: 5, maxFactor: 1000 };

/** The resample verb on samples (SweepSet.resample). */
export function resampleSamples(set: SampleView, options: ResampleOptions): VerbOutput {
  if (!options || typeof options !== 'object')
    throw new OptionError('resample needs options { fs } (new sample rate, Hz)');
  checkKeys('resample options', options, ['fs', 'padtype', 'beta']);
  const fsOut = positive('fs', options.fs, 'Hz');
  const padtype = oneOf('padtype', options.padtype ?? resampleDefaults.padtype, [
    'constant',
    'mean',
    'median',
  ] as const);
  const beta = options.beta ?? resampleDefaults.beta;
  if (typeof beta !== 'number' || !(beta >= 0 && beta <= 40))
    throw new OptionError(`invalid beta: ${beta}; must be a number from 0 to 40`);
  const { up, down } = rationalRatio(set.fs, fsOut, resampleDefaults.maxFactor);
  if (up === down) return { step: { verb: 'resample', options: { fs: fsOut, up, down, padtype, beta } } };
  const { h, preRemove } = polyphaseDesign(up, down, beta);
  const n = set.nSamples;
  const m = resampledLength(n, up, down);
  if (set.nSweeps * m > 2 ** 30) {
    throw new OptionError(
      `invalid fs: ${fsOut} Hz would make ${set.nSweeps} sweeps x ${m} samples (${((set.nSweeps * m * 8) / 1e9).toFixed(1)} GB); crop or select sweeps first, or choose a lower rate`,
    );
  }
  const out = sharedSamples(set.nSweeps * m, set.nSweeps * Math.max(n, m));
  const x = set.data;
  const hs = out.buffer instanceof SharedArrayBuffer ? shareCopy(h) : h;
  runSweeps(
    'resampleSweeps',
    { x, out, n, m, up, down, h: hs, preRemove, padtype },
    set.nSweeps,
    x.length * Math.max(1, h.length / up / 8),
  );
  return {
    data: out,
    nSamples: m,
    fs: (set.fs * up) / down,
    step: {
      verb: 'resample',
      options: { fs: fsOut, up, down, padtype, beta, taps: h.length, cutoffHz: Math.min(set.fs, fsOut) / 2 },
    },
  };
}
