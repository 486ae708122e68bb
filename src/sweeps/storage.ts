/**
 * Samples kept as they were read. A float32 recording can stay float32 in memory (half
 * the bytes, no widening pass at load): the SweepSet holds it as DeferredSamples with
 * nothing pending, and every verb widens each value exactly to float64 where it uses
 * it, so every number equals that of a float64 copy (tests/parallel/kernels.test.ts).
 */
import {
  PARALLEL_MIN_SAMPLES,
  collectGarbage,
  countSharedBytes,
  reclaimer,
  sharedBytes,
  threads,
} from '../parallel/pool';
import { noCorrection } from '../parallel/kernels';
import { memoryOf, samples32, samples32On } from '../parallel/simd';
import type { DeferredSamples } from '../verbs/types';

/**
 * A Float32Array of n samples, on shared memory when worker threads may fill or read it.
 * A large one (as many samples as the threads' threshold, PARALLEL_MIN_SAMPLES, or more) lies
 * on a WebAssembly memory of its own where possible, so that a loader checks each block it reads
 * where it lies rather than after a copy into the SIMD kernel's scratch memory (about 10% of the
 * CPU time of loading 1,000 x 20,000 float32 samples, tests/bench/scipy.mjs; memoryOf() in
 * ../parallel/simd.ts finds it). The values and their layout are the same either way.
 *
 * `overwritten: true` (a loader that writes every sample before anything reads one) may be given
 * the memory of samples already collected, with their old values: a fresh memory costs one
 * first-touch page fault per 4 kB (about 19,500 for 80 MB, some 20 ms, as long as reading the file
 * itself; NumPy asks for 2 MB pages, which Node cannot), a memory used before costs none.
 */
export function float32Samples(n: number, options: { overwritten?: boolean } = {}): Float32Array {
  if (n < PARALLEL_MIN_SAMPLES) return new Float32Array(n);
  const shared = threads() >= 2;
  // glibc told to ask for transparent huge pages (GLIBC_TUNABLES=glibc.malloc.hugetlb=1 or 2) does so only for
  // the memory it allocates, not for a WebAssembly memory: its 2 MB pages take far fewer first-touch faults than the
  // copy saved here (tests/bench/scipy.mjs prints both), so its buffers are kept then
  if (glibcHugePages()) return shared ? new Float32Array(sharedBytes(n * 4).buffer) : new Float32Array(n);
  const old = options.overwritten ? reusable(n * 4, shared) : null;
  const own = (old && samples32On(old, n)) ?? samples32(n, shared);
  if (!own) return shared ? new Float32Array(sharedBytes(n * 4).buffer) : new Float32Array(n);
  if (!old) countSharedBytes(n * 4); // counted as shared buffers are (a full collection every so many bytes)
  if (old) reused++;
  const memory = memoryOf(own)!;
  pool().register(own, { memory, shared: memory.buffer instanceof SharedArrayBuffer, bytes: memory.buffer.byteLength });
  outstanding++;
  return own;
}

// ---- memories of collected samples, kept for the next load (float32Samples with overwritten: true)
interface Kept {
  memory: WebAssembly.Memory;
  shared: boolean;
  bytes: number;
}
/** at most this many memories wait for reuse (the oldest is let go): a load or two of the same size */
const FREE_MAX = 2;
/** a memory is reused for a request of at least this share of its bytes (no large memory for small samples) */
const FIT = 0.875;
/**
 * A full collection is asked for when no free memory fits but some handed out since the last one may be garbage
 * (more are out than were alive after the last collection), only while the heap is small against the samples
 * asked for (a full collection took about 0.8 ms of CPU per MB of heap here, the first-touch faults of fresh
 * memory about 0.25 ms per MB of samples: a heap of under a sixth of the samples' bytes), and not after 3 in a row
 * gave nothing back (every set still in use) until a memory comes back by itself.
 */
const COLLECT_HEAP_SHARE = 1 / 6;
const free: Kept[] = [];
let outstanding = 0,
  reused = 0,
  aliveAfterCollect = 0,
  fruitless = 0,
  kept: ReturnType<typeof reclaimer<Kept>> | null = null;
const pool = () => (kept ??= reclaimer<Kept>());
/** Memories whose samples were collected go to the free list; how many came back. */
function takeBack(): number {
  const back = pool().reclaimed();
  for (const k of back) {
    outstanding--;
    free.push(k);
    // one too many: the oldest of one thread goes first (a shared memory serves either kind of samples)
    if (free.length > FREE_MAX)
      free.splice(
        Math.max(
          0,
          free.findIndex((q) => !q.shared),
        ),
        1,
      );
  }
  if (back.length) {
    fruitless = 0;
    aliveAfterCollect = Math.min(aliveAfterCollect, outstanding);
  }
  return back.length;
}
/** A free memory of that size: shared for shared samples; for samples of one thread, one of its own kind first. */
function take(bytes: number, shared: boolean): WebAssembly.Memory | null {
  const fits = (k: Kept) => k.bytes >= bytes && bytes >= FIT * k.bytes;
  let i = free.findIndex((k) => k.shared === shared && fits(k));
  if (i < 0 && !shared) i = free.findIndex(fits); // a shared memory serves one thread as well
  return i < 0 ? null : free.splice(i, 1)[0].memory;
}
function reusable(bytes: number, shared: boolean): WebAssembly.Memory | null {
  takeBack();
  const m = take(bytes, shared);
  if (m || outstanding <= aliveAfterCollect || fruitless >= 3 || !pool().atOnce) return m;
  // eslint-disable-next-line @typescript-eslint/no-var-requires
  const heap = (require('node:v8') as typeof import('node:v8')).getHeapStatistics().used_heap_size;
  if (heap > COLLECT_HEAP_SHARE * bytes || !collectGarbage()) return null;
  if (takeBack() === 0) fruitless++;
  aliveAfterCollect = outstanding;
  return take(bytes, shared);
}

/**
 * Test hook: memories waiting for reuse, handed out and not yet collected, reused so far, and whether a
 * collection's findings are seen at once (else only in a later task).
 */
export const reuseState = (): { free: number; outstanding: number; reused: number; atOnce: boolean } => {
  takeBack();
  return { free: free.length, outstanding, reused, atOnce: pool().atOnce };
};

/** float32 samples as SweepSet data (`new SweepSet({ data: asRead(f32), ... })`). */
export function asRead(samples: Float32Array): DeferredSamples {
  return { base: samples, correction: noCorrection() };
}

/** Whether glibc was told at start-up to use huge pages for its allocations (GLIBC_TUNABLES glibc.malloc.hugetlb). */
export function glibcHugePages(env: NodeJS.ProcessEnv = process.env): boolean {
  const m = /(?:^|:)glibc\.malloc\.hugetlb=(\d+)/.exec(env.GLIBC_TUNABLES ?? '');
  return m !== null && Number(m[1]) > 0;
}
