/**
 * Samples kept as they were read. A float32 recording can stay float32 in memory (half
 * the bytes, no widening pass at load): the SweepSet holds it as DeferredSamples with
 * nothing pending, and every verb widens each value exactly to float64 where it uses
 * it, so every number equals that of a float64 copy (tests/parallel/kernels.test.ts).
 */
import { PARALLEL_MIN_SAMPLES, countSharedBytes, sharedBytes, threads } from '../parallel/pool';
import { noCorrection } from '../parallel/kernels';
import { samples32 } from '../parallel/simd';
import type { DeferredSamples } from '../verbs/types';

/**
 * A Float32Array of n samples, on shared memory when worker threads may fill or read it.
 * A large one (as many samples as the threads' threshold, PARALLEL_MIN_SAMPLES, or more) lies
 * on a WebAssembly memory of its own where possible, so that a loader checks each block it reads
 * where it lies rather than after a copy into the SIMD kernel's scratch memory (about 10% of the
 * CPU time of loading 1,000 x 20,000 float32 samples, tests/bench/scipy.mjs; memoryOf() in
 * ../parallel/simd.ts finds it). The values and their layout are the same either way.
 */
export function float32Samples(n: number): Float32Array {
  if (n < PARALLEL_MIN_SAMPLES) return new Float32Array(n);
  const shared = threads() >= 2;
  // glibc told to ask for transparent huge pages (GLIBC_TUNABLES=glibc.malloc.hugetlb=1 or 2) does so only for
  // the memory it allocates, not for a WebAssembly memory: its 2 MB pages take far fewer first-touch faults than the
  // copy saved here (tests/bench/scipy.mjs prints both), so its buffers are kept then
  const own = glibcHugePages() ? null : samples32(n, shared);
  if (own) {
    countSharedBytes(n * 4); // counted as shared buffers are (a full collection every so many bytes)
    return own;
  }
  return shared ? new Float32Array(sharedBytes(n * 4).buffer) : new Float32Array(n);
}

/** float32 samples as SweepSet data (`new SweepSet({ data: asRead(f32), ... })`). */
export function asRead(samples: Float32Array): DeferredSamples {
  return { base: samples, correction: noCorrection() };
}

/** Whether glibc was told at start-up to use huge pages for its allocations (GLIBC_TUNABLES glibc.malloc.hugetlb). */
export function glibcHugePages(env: NodeJS.ProcessEnv = process.env): boolean {
  const m = /(?:^|:)glibc\.malloc\.hugetlb=(\d+)/.exec(env.GLIBC_TUNABLES ?? '');
  return m !== null && Number(m[1]) > 0;
}
