/**
 * A small pool of worker threads for per-sweep work on large sets.
 *
 * Sweeps are independent, so a verb splits its sweeps into one contiguous range per
 * thread; the main thread works on the first range while the workers take the
 * others, then waits for them (Atomics.wait: the calls stay synchronous). Workers
 * can only see shared memory, so large sample arrays are allocated on a
 * SharedArrayBuffer (sharedSamples); where an argument is not shared, or the work is
 * small, everything runs on the calling thread. Every thread runs the same kernel
 * (./kernels.ts) on whole sweeps, so results do not depend on the number of threads.
 *
 * Threads: FASCICLE_THREADS in the environment or setThreads(n); default the number
 * of cores (at most 8). Worker threads of the command line (--jobs) use one each.
 */
import { Worker, MessageChannel, receiveMessageOnPort, isMainThread, type MessagePort } from 'node:worker_threads';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { availableParallelism, totalmem } from 'node:os';
import { OptionError, ThreadError } from '../errors';
import { kernels, type KernelName } from './kernels';

interface Slot {
  control: Int32Array;
  port: MessagePort;
  seq: number;
  id: number;
}
const slots: Slot[] = [];
/**
 * The pool's threads are started by a supervisor thread, not by the calling thread: a
 * caller blocked in Atomics.wait cannot see a worker's 'exit' event, but the supervisor
 * (whose event loop stays free) can, and marks the worker's control word [4] when it stops
 * for any reason (out of memory, exit, crash), so a waiting caller learns at once.
 */
let supervisor: Worker | null = null;
let nextId = 0;
/** Test hook: make the threads started from now on fail in their first job ('exit' or 'oom'). */
let fault: 'exit' | 'oom' | null = null;
export function setWorkerFault(f: 'exit' | 'oom' | null): void {
  fault = f;
}
let setting: number | null = null;
let broken = false;
let dispatched = 0;

/** Stop the worker threads (they start again when needed); resolves when they have stopped. */
export async function stopThreads(): Promise<void> {
  slots.splice(0);
  const sup = supervisor;
  supervisor = null;
  if (sup) await sup.terminate(); // its threads stop with it
}

/** Jobs handed to worker threads so far (for tests and diagnostics). */
export function workerJobs(): number {
  return dispatched;
}

/** Garbage collections the running pool threads have made (for tests: they collect when idle or after
 * much shared memory, not after every job). */
export function workerCollections(): number {
  return slots.reduce((n, s) => n + Atomics.load(s.control, 7), 0);
}

/** Below this many samples of work, a call stays on the calling thread. */
export const PARALLEL_MIN_SAMPLES = 1 << 19;

/** Threads that per-sweep verbs use (1 = no worker threads). */
export function threads(): number {
  if (!isMainThread || broken) return 1;
  if (setting !== null) return setting;
  const env = process.env.FASCICLE_THREADS;
  if (env !== undefined && env !== '') {
    const v = Number(env);
    if (!Number.isInteger(v) || v < 1)
      throw new OptionError(`invalid FASCICLE_THREADS: ${JSON.stringify(env)}; must be an integer >= 1`);
    return Math.min(v, 64);
  }
  return Math.max(1, Math.min(availableParallelism(), 8));
}

/** Set the number of threads for per-sweep work (1 turns worker threads off). */
export function setThreads(n: number): void {
  if (!Number.isInteger(n) || n < 1 || n > 64)
    throw new OptionError(`invalid threads: ${n}; must be an integer from 1 to 64`);
  setting = n;
}

// V8 (Node 20) does not count shared memory towards the memory pressure that starts a
// garbage collection, so unreachable shared sample arrays could pile up. The pool
// keeps its own count of shared bytes handed out since the last collection and, past
// a limit (a sixteenth of the machine's memory, 0.5 to 2 GB), asks for a full
// collection, as V8 does for ordinary buffers. (An untouched ordinary buffer of the
// same size as "ballast" would also work, but would show every set twice in
// process.memoryUsage().arrayBuffers.)
let sinceCollect = 0;
const collectLimit = Math.min(Math.max(2 ** 29, totalmem() / 16), 2 ** 31);
let collect: (() => void) | null | undefined;
function fullCollection(): void {
  if (collect === undefined) {
    try {
      // node:v8 and node:vm are loaded here, when first needed, not at start-up (a few ms of every command)
      // eslint-disable-next-line @typescript-eslint/no-var-requires
      (require('node:v8') as typeof import('node:v8')).setFlagsFromString('--expose-gc');
      // eslint-disable-next-line @typescript-eslint/no-var-requires
      const { runInNewContext } = require('node:vm') as typeof import('node:vm');
      collect = runInNewContext('gc') as () => void; // gc in a fresh context only, not in the user's globals
    } catch {
      collect = null;
    }
  }
  collect?.();
}

/** A full garbage collection now, where V8 allows one (see above); whether it ran. */
export function collectGarbage(): boolean {
  fullCollection();
  return collect !== null;
}

/**
 * Memory handed back when the object it was handed out with is collected: `register(target, held)`, and
 * `reclaimed()`, the held values of the targets collected so far (each once). V8 runs a FinalizationRegistry's
 * callbacks only between tasks, so a synchronous loop of loads would never see a buffer come back; the
 * registry is made, where V8 has it, in a context with FinalizationRegistry.prototype.cleanupSome (its flag
 * --harmony-weak-refs-with-cleanup-some, set only on V8 11 where it is known to exist), which hands back what the
 * last collection found at once. Elsewhere memory comes back between tasks (notebook cells, awaits) only.
 */
export function reclaimer<T>(): { register(target: object, held: T): void; reclaimed(): T[]; atOnce: boolean } {
  const back: T[] = [];
  let Registry: typeof FinalizationRegistry = FinalizationRegistry;
  try {
    // only where the flag is known to exist (V8 11, Node 20): V8 prints an error for a flag it does not know
    if (Number(process.versions.v8.split('.')[0]) !== 11) throw new Error('no cleanupSome flag known');
    // a V8 flag changed at run time makes each thread started afterwards compile Node's own code afresh (about
    // 12 ms of CPU per thread, tests/bench/load.mjs): the pool's threads, if any, start first
    if (isMainThread && threads() >= 2) startThreads(threads());
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    (require('node:v8') as typeof import('node:v8')).setFlagsFromString('--harmony-weak-refs-with-cleanup-some');
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    const R = (require('node:vm') as typeof import('node:vm')).runInNewContext('FinalizationRegistry');
    if (typeof R?.prototype?.cleanupSome === 'function') Registry = R;
  } catch {
    // the plain registry: memory comes back between tasks only
  }
  const registry = new Registry<T>((held) => back.push(held));
  const cleanupSome = (registry as unknown as { cleanupSome?: () => void }).cleanupSome;
  return {
    /** whether reclaimed() sees a collection's findings at once (cleanupSome), not only in a later task */
    atOnce: typeof cleanupSome === 'function',
    register: (target, held) => registry.register(target, held),
    reclaimed() {
      cleanupSome?.call(registry);
      return back.splice(0, back.length);
    },
  };
}

/** Count bytes of memory that V8 may not count towards starting a collection (see above). */
export function countSharedBytes(bytes: number): void {
  countShared(bytes);
}

function countShared(bytes: number): void {
  sinceCollect += bytes;
  if (sinceCollect > collectLimit) {
    sinceCollect = bytes;
    fullCollection();
  }
}

/**
 * A Float64Array of n samples, on shared memory when worker threads may work on it
 * (when the work that fills it, in samples, default n, is large enough).
 */
export function sharedSamples(n: number, work = n): Float64Array {
  if (work < PARALLEL_MIN_SAMPLES || threads() < 2) return new Float64Array(n);
  countShared(n * 8);
  return new Float64Array(new SharedArrayBuffer(n * 8));
}

/** n bytes on shared memory (counted like sharedSamples), for file contents the threads parse. */
export function sharedBytes(n: number): Uint8Array {
  countShared(n);
  return new Uint8Array(new SharedArrayBuffer(n));
}

/** Copy of a small typed array on shared memory (for kernel arguments), when threads are on. */
export function shareCopy<T extends Float64Array | Int32Array>(a: T): T {
  if (a.buffer instanceof SharedArrayBuffer || threads() < 2) return a;
  const C = a.constructor as new (b: SharedArrayBuffer) => T;
  const out = new C(new SharedArrayBuffer(a.byteLength));
  out.set(a as never);
  return out;
}

function workerFile(): string | null {
  const here = join(__dirname, 'worker.js');
  if (existsSync(here)) return here;
  const built = join(__dirname, '..', '..', 'dist', 'parallel', 'worker.js'); // when running from src (tests)
  return existsSync(built) ? built : null;
}

/** Heap limit of each worker thread in MB (FASCICLE_WORKER_HEAP_MB), or undefined for Node's default. */
function heapLimitMb(): number | undefined {
  const env = process.env.FASCICLE_WORKER_HEAP_MB;
  if (env === undefined || env === '') return undefined;
  const v = Number(env);
  if (!Number.isInteger(v) || v < 8)
    throw new OptionError(`invalid FASCICLE_WORKER_HEAP_MB: ${JSON.stringify(env)}; must be an integer >= 8 (MB)`);
  return v;
}

function startSlot(): Slot | null {
  const file = workerFile();
  if (!file) return null;
  if (!supervisor) {
    try {
      supervisor = new Worker(file, { workerData: { role: 'supervisor' } });
    } catch {
      return null;
    }
    supervisor.unref();
    supervisor.on('error', () => {
      broken = true;
    });
  }
  // control: [0] job, [1] done, [2] ready, [3] short waits, [4] stopped, [5] why (1 out of memory, 2 exit,
  // 3 crash), [6] exit code, [7] collections made
  const control = new Int32Array(new SharedArrayBuffer(32));
  const { port1, port2 } = new MessageChannel();
  const limit = heapLimitMb();
  supervisor.postMessage({ start: { file, control: control.buffer, port: port2, fault, limit } }, [port2]);
  // wait (up to 10 s) for the worker to say it is ready, or for the supervisor to say it stopped
  const t0 = Date.now();
  while (Atomics.load(control, 2) === 0 && Atomics.load(control, 4) === 0 && Date.now() - t0 < 10000)
    Atomics.wait(control, 2, 0, 100);
  if (Atomics.load(control, 2) === 0) {
    port1.close();
    return null;
  }
  return { control, port: port1, seq: 0, id: nextId++ };
}

/** Why a slot's thread stopped, in words. */
function stopReason(c: Int32Array): string {
  const why = Atomics.load(c, 5);
  return why === 1 ? 'ran out of memory' : why === 3 ? 'crashed' : `exited (code ${Atomics.load(c, 6)})`;
}

/** True when every typed array in args (and in its plain-object fields) is on shared memory. */
function sharedArgs(args: object): boolean {
  for (const v of Object.values(args)) {
    if (ArrayBuffer.isView(v)) {
      if (v.byteLength > 0 && !(v.buffer instanceof SharedArrayBuffer)) return false; // empty ones are copied
    } else if (v && typeof v === 'object' && !Array.isArray(v) && !sharedArgs(v)) return false;
  }
  return true;
}

/** Start the pool's threads for T threads in all (threads that stopped are replaced); false when they cannot start. */
function startThreads(T: number): boolean {
  for (let k = slots.length - 1; k >= 0; k--)
    if (Atomics.load(slots[k].control, 4) === 1) {
      slots[k].port.close();
      slots.splice(k, 1);
    }
  while (slots.length < T - 1) {
    const s = startSlot();
    if (!s) {
      broken = true;
      return false;
    }
    slots.push(s);
  }
  return true;
}

/**
 * Run a kernel over sweeps [0, nSweeps), split across threads when the arrays in
 * args are shared and the work (samples) is large enough. Returns each part's
 * result in sweep order.
 */
export function runSweeps<K extends KernelName>(
  kernel: K,
  args: Parameters<(typeof kernels)[K]>[0],
  nSweeps: number,
  work: number,
): number[] {
  const run = kernels[kernel] as (a: unknown, s0: number, s1: number) => number;
  const T = Math.min(threads(), nSweeps);
  if (T < 2 || work < PARALLEL_MIN_SAMPLES || !sharedArgs(args)) return [run(args, 0, nSweeps)];
  if (!startThreads(T)) return [run(args, 0, nSweeps)];
  const bounds = Array.from({ length: T + 1 }, (_, k) => Math.round((k * nSweeps) / T));
  const used = slots.slice(0, T - 1);
  used.forEach((slot, j) => {
    slot.port.postMessage({ kernel, args, s0: bounds[j + 1], s1: bounds[j + 2] });
    slot.seq = (slot.seq + 1) | 0;
    dispatched++;
    Atomics.store(slot.control, 0, slot.seq);
    Atomics.notify(slot.control, 0);
  });
  const results: number[] = new Array(T);
  let failure: Error | null = null;
  try {
    results[0] = run(args, bounds[0], bounds[1]);
  } catch (e) {
    failure = e as Error;
  }
  const dead: Slot[] = [];
  used.forEach((slot, j) => {
    let v: number;
    while ((v = Atomics.load(slot.control, 1)) !== slot.seq) {
      if (Atomics.load(slot.control, 4) === 1) {
        dead.push(slot);
        if (!failure)
          failure = new ThreadError(
            `a worker thread ${stopReason(slot.control)} while running "${kernel}" on sweeps ${bounds[j + 1]}-${bounds[j + 2] - 1}; the call was abandoned (FASCICLE_THREADS=1 keeps the work on the calling thread)`,
          );
        return;
      }
      Atomics.wait(slot.control, 1, v, 1000);
    }
    let reply = receiveMessageOnPort(slot.port);
    while (!reply) {
      if (Atomics.load(slot.control, 4) === 1 && !(reply = receiveMessageOnPort(slot.port))) {
        dead.push(slot);
        if (!failure)
          failure = new ThreadError(
            `a worker thread ${stopReason(slot.control)} before replying; the call was abandoned`,
          );
        return;
      }
      if (!reply) {
        Atomics.wait(slot.control, 3, 0, 1);
        reply = receiveMessageOnPort(slot.port);
      }
    }
    const m = reply.message as { value?: number; error?: string };
    if (m.error !== undefined && !failure) failure = new Error(`worker thread: ${m.error}`);
    results[j + 1] = m.value ?? -1;
  });
  // a stopped thread is dropped (a new one starts when next needed)
  for (const d of dead) {
    const k = slots.indexOf(d);
    if (k >= 0) slots.splice(k, 1);
    d.port.close();
  }
  if (failure) throw failure;
  return results;
}
