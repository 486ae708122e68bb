/**
 * What a verb reads and what it gives back. A verb is a function of the samples and the time base of a set of
 * sweeps: it reads a `VerbInput` and returns a `VerbOutput` (new samples, or the same samples with a pending
 * correction, plus the step to record). `SweepSet` alone builds the new set from it (src/sweeps/SweepSet.ts), so
 * verbs import nothing of src/sweeps at run time.
 */
import type { Correction, Samples } from '../parallel/kernels';
import type { Conditions, ConditionValue } from '../sweeps/conditions';

/**
 * Samples not yet computed: `base` with a pending per-sweep correction (made by
 * baseline and template artifact subtraction). They are computed the first time
 * `data` is read; a zero-phase filter instead applies the correction to each sweep
 * as it reads it, which saves a pass over memory and an allocation per step. The
 * numbers are the same bit for bit either way. `base` may be float32 (a float32 file kept
 * as read, half the memory): every use widens each value exactly to float64.
 */
export interface DeferredSamples {
  base: Samples;
  correction: Correction;
}

/** The time base of a set of sweeps: what a window in ms needs to become sample indices. */
export interface TimeBase {
  readonly nSamples: number;
  /** sample rate, Hz */
  readonly fs: number;
  /** time of the first sample relative to the stimulus, ms */
  readonly t0Ms: number;
  /** time of sample i, ms */
  timeAt(i: number): number;
}

/** The samples and time base a verb reads (a SweepSet has all of it but `pending`). */
export interface SampleView extends TimeBase {
  readonly nSweeps: number;
  readonly conditions: readonly Conditions[];
  readonly extras: Readonly<Record<string, unknown>>;
  /** every sample, sweep after sweep (a pending correction is applied when first read) */
  readonly data: Float64Array;
  /** duration of one sweep, ms */
  readonly durationMs: number;
  /** sweep i (a view: do not modify it) */
  sweep(i: number): Float64Array;
  /** the time axis, ms */
  time(): Float64Array;
  /** one condition per sweep */
  column(key: string): ConditionValue[];
}

/** A verb's input: the samples, and the pending correction when they are not yet computed. */
export interface VerbInput extends SampleView {
  /** the samples with their pending correction while `data` has not been read; otherwise null */
  readonly pending: DeferredSamples | null;
}

/** What a verb returns: the fields of the new set that change, and the step for its history. */
export interface VerbOutput {
  /** new samples, or samples with a pending correction; absent: the samples are unchanged */
  data?: Float64Array | DeferredSamples;
  nSweeps?: number;
  nSamples?: number;
  fs?: number;
  t0Ms?: number;
  conditions?: readonly Conditions[];
  extras?: Readonly<Record<string, unknown>>;
  /** the verb and every option it used (defaults included) */
  step: { verb: string; options: Record<string, unknown> };
}
