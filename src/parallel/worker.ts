/**
 * A pool thread (see ./pool.ts): waits on its control word, takes the job from its
 * port, runs the kernel on its sweep range and reports back.
 * control: [0] job sequence number, [1] last job done, [2] ready flag, [3] for short
 * waits, [4] set when this thread stops (so a waiting caller does not wait forever).
 */
import { workerData, receiveMessageOnPort, type MessagePort } from 'node:worker_threads';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { kernels, type KernelName } from './kernels';

// Shared memory is freed only when every thread that saw it has collected its handle;
// this thread allocates too little to collect on its own, so it collects after each
// job (its heap is small: about a millisecond).
setFlagsFromString('--expose-gc');
const collect = runInNewContext('gc') as () => void;

const control = new Int32Array(workerData.control as SharedArrayBuffer);
const port = workerData.port as MessagePort;

function handle(): void {
  let job = receiveMessageOnPort(port);
  while (!job) { Atomics.wait(control, 3, 0, 1); job = receiveMessageOnPort(port); }
  const m = job.message as { kernel: KernelName; args: never; s0: number; s1: number };
  let reply: { value?: number; error?: string };
  try {
    reply = { value: (kernels[m.kernel] as (a: unknown, s0: number, s1: number) => number)(m.args, m.s0, m.s1) };
  } catch (e) {
    reply = { error: e instanceof Error ? e.message : String(e) };
  }
  port.postMessage(reply);
}

process.on('exit', () => {
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
