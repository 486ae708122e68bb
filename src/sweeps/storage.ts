/**
 * Samples kept as they were read. A float32 recording can stay float32 in memory (half
 * the bytes, no widening pass at load): the SweepSet holds it as DeferredSamples with
 * nothing pending, and every verb widens each value exactly to float64 where it uses
 * it, so every number equals that of a float64 copy (tests/parallel/kernels.test.ts).
 */
import { PARALLEL_MIN_SAMPLES, sharedBytes, threads } from '../parallel/pool';
import { noCorrection } from '../parallel/kernels';
import type { DeferredSamples } from '../verbs/types';

/** A Float32Array of n samples, on shared memory when worker threads may fill or read it. */
export function float32Samples(n: number): Float32Array {
  if (n < PARALLEL_MIN_SAMPLES || threads() < 2) return new Float32Array(n);
  return new Float32Array(sharedBytes(n * 4).buffer);
}

/** float32 samples as SweepSet data (`new SweepSet({ data: asRead(f32), ... })`). */
export function asRead(samples: Float32Array): DeferredSamples {
  return { base: samples, correction: noCorrection() };
}
