/**
 * A pool thread (see ./pool.ts): waits on its control word, takes the job from its
 * port, runs the kernel on its sweep range and reports back.
 * control: [0] job sequence number, [1] last job done, [2] ready flag, [3] for short
 * waits, [4] set when this thread stops (so a waiting caller does not wait forever),
 * [5] why it stopped (1 out of memory, 2 exit, 3 crash), [6] its exit code, [7] the number
 * of garbage collections it has run (for tests).
 *
 * The same file also runs as the pool's supervisor (workerData.role 'supervisor'): it
 * starts the pool threads and, from its free event loop, sets [4] when one stops for any
 * reason, including running out of memory, when the thread itself can run no more code.
 */
import { Worker, workerData, parentPort, receiveMessageOnPort, type MessagePort } from 'node:worker_threads';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import type { KernelName, kernels as Kernels } from './kernels';

interface Start {
  file: string;
  control: SharedArrayBuffer;
  port: MessagePort;
  fault: 'exit' | 'oom' | null;
  limit?: number;
}

function supervise(): void {
  parentPort!.on('message', (m: { start: Start }) => {
    const { file, control: buf, port, fault, limit } = m.start;
    const control = new Int32Array(buf);
    const stopped = (why: number, code: number) => {
      if (Atomics.load(control, 4) === 1 && Atomics.load(control, 5) !== 0) return;
      Atomics.store(control, 5, why);
      Atomics.store(control, 6, code);
      Atomics.store(control, 4, 1);
      Atomics.notify(control, 1);
      Atomics.notify(control, 2);
    };
    let w: Worker;
    try {
      const limits = limit ? { resourceLimits: { maxOldGenerationSizeMb: limit } } : {};
      w = new Worker(file, {
        workerData: { role: 'pool', control: buf, port, fault },
        transferList: [port],
        ...limits,
      });
    } catch {
      stopped(3, -1);
      return;
    }
    let why = 2;
    w.on('error', (e) => {
      why = (e as NodeJS.ErrnoException).code === 'ERR_WORKER_OUT_OF_MEMORY' ? 1 : 3;
    });
    w.on('exit', (code) => stopped(why, code));
  });
}

/** A pool thread collects after this long without a job (ms)... */
const IDLE_COLLECT_MS = 20;
/** ...or once the jobs since its last collection have seen this many bytes of shared memory. */
const SHARED_COLLECT_BYTES = 256 * 2 ** 20;

/** Bytes of the distinct shared buffers in a job's arguments (and in their plain-object fields). */
function sharedBytesOf(args: unknown, seen: Set<SharedArrayBuffer>): number {
  let bytes = 0;
  if (!args || typeof args !== 'object') return 0;
  for (const v of Object.values(args)) {
    if (ArrayBuffer.isView(v)) {
      const b = v.buffer;
      if (b instanceof SharedArrayBuffer && !seen.has(b)) {
        seen.add(b);
        bytes += b.byteLength;
      }
    } else if (v && typeof v === 'object' && !Array.isArray(v)) bytes += sharedBytesOf(v, seen);
  }
  return bytes;
}

function pool(): void {
  // Shared memory is freed only when every thread that saw it has collected its handle;
  // this thread allocates too little to collect on its own. Collecting after every job
  // cost each call a few milliseconds, so it collects when idle (no job for
  // IDLE_COLLECT_MS) or, under sustained load, once the jobs since the last collection
  // have seen SHARED_COLLECT_BYTES of shared buffers.
  // the kernels (and the signal code they use) are loaded by pool threads only, not by the supervisor
  // eslint-disable-next-line @typescript-eslint/no-var-requires
  const { kernels } = require('./kernels') as { kernels: typeof Kernels };
  setFlagsFromString('--expose-gc');
  const collect = runInNewContext('gc') as () => void;
  const control = new Int32Array(workerData.control as SharedArrayBuffer);
  const port = workerData.port as MessagePort;
  const fault = workerData.fault as 'exit' | 'oom' | null;

  /** runs one job; returns the bytes of shared memory its arguments hold */
  const handle = (): number => {
    let job = receiveMessageOnPort(port);
    while (!job) {
      Atomics.wait(control, 3, 0, 1);
      job = receiveMessageOnPort(port);
    }
    const m = job.message as { kernel: KernelName; args: never; s0: number; s1: number };
    // test hook (pool.setWorkerFault): fail as a real thread would, by exiting or exhausting the heap
    if (fault === 'exit') process.exit(70);
    if (fault === 'oom') {
      const hog: number[][] = [];
      for (;;) hog.push(new Array(1 << 16).fill(Math.random()));
    }
    let reply: { value?: number; error?: string };
    try {
      reply = { value: (kernels[m.kernel] as (a: unknown, s0: number, s1: number) => number)(m.args, m.s0, m.s1) };
    } catch (e) {
      reply = { error: e instanceof Error ? e.message : String(e) };
    }
    port.postMessage(reply);
    return sharedBytesOf(m.args, new Set());
  };
  const collectNow = (): void => {
    collect();
    Atomics.add(control, 7, 1);
  };

  process.on('exit', (code) => {
    Atomics.store(control, 5, 2);
    Atomics.store(control, 6, code);
    Atomics.store(control, 4, 1);
    Atomics.notify(control, 1);
  });
  Atomics.store(control, 2, 1);
  Atomics.notify(control, 2);
  let seen = 0;
  let held = 0; // shared bytes seen since the last collection
  let dirty = false; // a job ran since the last collection
  for (;;) {
    if (dirty && Atomics.wait(control, 0, seen, IDLE_COLLECT_MS) === 'timed-out') {
      collectNow();
      held = 0;
      dirty = false;
      continue;
    }
    if (!dirty) Atomics.wait(control, 0, seen);
    seen = Atomics.load(control, 0);
    held += handle();
    dirty = true;
    Atomics.store(control, 1, seen);
    Atomics.notify(control, 1);
    if (held >= SHARED_COLLECT_BYTES) {
      collectNow();
      held = 0;
      dirty = false;
    }
  }
}

if (workerData?.role === 'supervisor') supervise();
else pool();
