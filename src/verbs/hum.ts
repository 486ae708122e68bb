import { runSweeps, shareCopy, sharedSamples } from '../parallel/pool';
import type { SampleView, VerbOutput } from './types';
import { AnalysisError, OptionError } from '../errors';
import { sineConditioning, sineDesign } from '../signal/sinefit';
import { checkKeys, integerIn, shown } from '../validate';

export interface HumOptions {
  /** mains frequency in Hz, or 'detect' (default) to choose 50 or 60 Hz and refine it within +/-1 Hz from the data */
  frequency?: number | 'detect';
  /** number of harmonics including the fundamental (default 5) */
  harmonics?: number;
  /** time ranges [from, to] in ms left out of the fit (e.g. the artifact and the response); default none */
  exclude?: [number, number][];
}
export const humDefaults = { frequency: 'detect' as const, harmonics: 5, exclude: [] as [number, number][] };
/**
 * When a fit is refused (see sineConditioning in src/signal/sinefit.ts): the condition
 * number of the fitted sinusoid columns, and the extrapolation gain (power per sample
 * subtracted where the fit did not look, over power per sample removed where it did).
 * About 1 for both when the fitted samples span a mains period or more; they grow
 * steeply below three quarters of a period (common practice, no source: limits chosen
 * from the design alone, never from data).
 */
export const humLimits = { maxCondition: 1e6, maxExtrapolationGain: 10 };

/** Refuse a fit that cannot determine the sinusoids it would subtract. */
function checkConditioning(
  t: Float64Array,
  f: number,
  harmonics: number,
  mask: Uint8Array,
  exclude: readonly unknown[],
): void {
  const c = sineConditioning(t, f, harmonics, mask);
  const where = exclude.length
    ? `exclude ${shown(exclude)} leaves ${c.fitted} of ${t.length} samples to fit`
    : `sweeps of ${t.length} samples`;
  const what = `${harmonics} harmonic${harmonics === 1 ? '' : 's'} of ${Number(f.toFixed(4))} Hz`;
  const fix = `fit over at least about one mains period (${(1000 / f).toFixed(1)} ms), or use fewer harmonics`;
  const E = exclude.length ? OptionError : AnalysisError;
  if (!(c.condition <= humLimits.maxCondition)) {
    throw new E(
      `cannot remove hum: ${where}, over which the ${what} cannot be told apart from each other and a constant (condition number ${c.condition.toExponential(2)}; at most ${humLimits.maxCondition.toExponential(0)}): ${fix}`,
    );
  }
  if (!(c.extrapolationGain <= humLimits.maxExtrapolationGain)) {
    throw new E(
      `cannot remove hum: ${where}; the ${what} fitted there could be subtracted from the ${c.excluded} left-out samples with ${c.extrapolationGain.toExponential(2)} times the power per sample it removes from the fitted ones (at most ${humLimits.maxExtrapolationGain}): ${fix}`,
    );
  }
}

/** The removeHum verb on samples (SweepSet.removeHum). */
export function removeHumSamples(set: SampleView, options: HumOptions = {}): VerbOutput {
  checkKeys('removeHum options', options, ['frequency', 'harmonics', 'exclude']);
  const harmonics = integerIn('harmonics', options.harmonics ?? humDefaults.harmonics, 1, 20);
  const exclude = options.exclude ?? humDefaults.exclude;
  if (!Array.isArray(exclude))
    throw new OptionError(`invalid exclude: ${shown(exclude)}; must be a list of [from, to] ranges in ms`);
  const t = set.time();
  const mask = new Uint8Array(set.nSamples).fill(1);
  for (const w of exclude) {
    if (!Array.isArray(w) || w.length !== 2 || !Number.isFinite(w[0]) || !Number.isFinite(w[1]) || !(w[1] > w[0]))
      throw new OptionError(`invalid exclude: ${JSON.stringify(w)}; must be [from, to] in ms with from < to`);
    for (let i = 0; i < t.length; i++) if (t[i] >= w[0] && t[i] <= w[1]) mask[i] = 0;
  }
  const kept = mask.reduce((a, b) => a + b, 0);
  if (kept < 2 * harmonics + 4)
    throw new OptionError(`invalid exclude: leaves ${kept} samples to fit ${2 * harmonics + 1} terms`);
  const freqOpt = options.frequency ?? humDefaults.frequency;
  if (freqOpt !== 'detect' && (typeof freqOpt !== 'number' || !Number.isFinite(freqOpt))) {
    throw new OptionError(
      `invalid frequency: ${JSON.stringify(freqOpt)}; must be a mains frequency in Hz (a number such as 50 or 60) or "detect"`,
    );
  }
  const maxH = Math.floor((set.fs / 2 - 1) / 70);
  // use at most 16 sweeps (evenly spread) to pick the frequency
  const probe = Array.from({ length: Math.min(16, set.nSweeps) }, (_, k) =>
    Math.floor((k * set.nSweeps) / Math.min(16, set.nSweeps)),
  );
  const rssAt = (f: number, H: number) => {
    const d = sineDesign(t, f, H, mask, true);
    return probe.reduce((s, i) => s + d.fit(set.sweep(i)).rss, 0);
  };
  let f: number;
  if (freqOpt === 'detect') {
    if (set.durationMs < 35) {
      throw new OptionError(
        `invalid frequency: "detect" needs sweeps of at least 35 ms (about two mains cycles); these are ${set.durationMs.toFixed(1)} ms, so give frequency: 50 or 60`,
      );
    }
    const H = Math.max(1, Math.min(harmonics, maxH));
    checkConditioning(t, 50, H, mask, exclude);
    checkConditioning(t, 60, H, mask, exclude);
    const p50 = rssAt(50, H),
      p60 = rssAt(60, H);
    let lo = p50 <= p60 ? 49 : 59,
      hi = lo + 2;
    const g = (Math.sqrt(5) - 1) / 2;
    let x1 = hi - g * (hi - lo),
      x2 = lo + g * (hi - lo);
    let f1 = rssAt(x1, H),
      f2 = rssAt(x2, H);
    for (let it = 0; it < 22; it++) {
      // the bracket shrinks to 2 x 0.618^22 = 5e-5 Hz
      if (f1 < f2) {
        hi = x2;
        x2 = x1;
        f2 = f1;
        x1 = hi - g * (hi - lo);
        f1 = rssAt(x1, H);
      } else {
        lo = x1;
        x1 = x2;
        f1 = f2;
        x2 = lo + g * (hi - lo);
        f2 = rssAt(x2, H);
      }
    }
    f = (lo + hi) / 2;
  } else {
    if (!(freqOpt > 0 && freqOpt * harmonics < set.fs / 2)) {
      throw new OptionError(
        `invalid frequency: ${freqOpt} Hz with ${harmonics} harmonics; must be > 0 with frequency x harmonics < fs/2 (fs=${set.fs} Hz)`,
      );
    }
    f = freqOpt;
  }
  if (f * harmonics >= set.fs / 2)
    throw new OptionError(`invalid harmonics: ${harmonics} at ${f.toFixed(2)} Hz reach fs/2 (fs=${set.fs} Hz)`);
  checkConditioning(t, f, harmonics, mask, exclude);
  const x = set.data;
  const out = sharedSamples(x.length);
  const d = sineDesign(t, f, harmonics, mask).parts;
  const amp = shareCopy(new Float64Array(set.nSweeps));
  const shared = {
    ...d,
    idx: shareCopy(d.idx),
    cols: shareCopy(d.cols),
    full: shareCopy(d.full),
    A0: shareCopy(d.A0),
    scale: shareCopy(d.scale),
  };
  runSweeps('removeSines', { x, out, d: shared, amp }, set.nSweeps, x.length);
  const amplitudes = Array.from(amp);
  return {
    data: out,
    extras: { humFrequencyHz: f, humAmplitude: amplitudes },
    step: {
      verb: 'removeHum',
      options: { frequency: freqOpt, fittedFrequencyHz: Number(f.toFixed(4)), harmonics, exclude },
    },
  };
}
