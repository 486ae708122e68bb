/**
 * A pool thread (see ./pool.ts): waits on its control word, takes the job from its
 * port, runs the kernel on its sweep range and reports back.
 * control: [0] job sequence number, [1] last job done, [2] ready flag, [3] for short
 * waits, [4] set when this thread stops (so a waiting caller does not wait forever),
 * [5] why it stopped (1 out of memory, 2 exit, 3 crash), [6] its exit code.
 *
 * The same file also runs as the pool's supervisor (workerData.role 'supervisor'): it
 * starts the pool threads and, from its free event loop, sets [4] when one stops for any
 * reason, including running out of memory, when the thread itself can run no more code.
 */
import { Worker, workerData, parentPort, receiveMessageOnPort, type MessagePort } from 'node:worker_threads';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { kernels, type KernelName } from './kernels';

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

function pool(): void {
  // Shared memory is freed only when every thread that saw it has collected its handle;
  // this thread allocates too little to collect on its own, so it collects after each
  // job (its heap is small: about a millisecond).
  setFlagsFromString('--expose-gc');
  const collect = runInNewContext('gc') as () => void;
  const control = new Int32Array(workerData.control as SharedArrayBuffer);
  const port = workerData.port as MessagePort;
  const fault = workerData.fault as 'exit' | 'oom' | null;

  const handle = (): void => {
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
  for (;;) {
    Atomics.wait(control, 0, seen);
    seen = Atomics.load(control, 0);
    handle();
    collect();
    Atomics.store(control, 1, seen);
    Atomics.notify(control, 1);
  }
}

if (workerData?.role === 'supervisor') supervise();
else pool();
