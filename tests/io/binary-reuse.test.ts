// readBinary on the memory of samples already collected (src/sweeps/storage.ts float32Samples, overwritten: true):
// a fresh memory costs a first-touch page fault per 4 kB, one used before none. What must hold whatever the memory:
// every value is the file's (never the old one's), a set still in use keeps its values, and a failed load leaves
// nothing behind. Invariants of the loader, no external reference needed (values checked against the file's bytes).
import { describe, it, expect, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readBinary, setThreads, stopThreads, threads } from '../../src';
import { reuseState } from '../../src/sweeps/storage';
import { collectGarbage } from '../../src/parallel/pool';

/** A full collection whose findings the next load sees: at once on V8 11 (cleanupSome), else after a task turn. */
async function collected(): Promise<void> {
  collectGarbage();
  if (!reuseState().atOnce) await new Promise((r) => setImmediate(r));
}

const dir = mkdtempSync(join(tmpdir(), 'fascicle-reuse-'));
const threadsAtStart = threads();
afterAll(async () => {
  await stopThreads();
  setThreads(threadsAtStart);
});
// 64 sweeps x 10,000 float32 samples (2.56 MB): large enough for a WebAssembly memory of its own
const S = 64,
  N = 10000;
let k = 0;
function file(fill: (i: number) => number): { path: string; x: Float32Array } {
  const x = new Float32Array(S * N);
  for (let i = 0; i < x.length; i++) x[i] = fill(i);
  const name = `r${k++}`;
  writeFileSync(join(dir, `${name}.f32`), x);
  const path = join(dir, `${name}.json`);
  writeFileSync(
    path,
    JSON.stringify({ data: `${name}.f32`, dtype: 'float32', nSweeps: S, nSamples: N, fs: 2e4, units: 'uV' }),
  );
  return { path, x };
}
/** every sample of the set equals the file's float32 value, widened */
function same(data: Float64Array, x: Float32Array): boolean {
  if (data.length !== x.length) return false;
  for (let i = 0; i < x.length; i++) if (!Object.is(data[i], x[i])) return false;
  return true;
}

describe('readBinary on reused memory', () => {
  for (const t of [1, 2]) {
    it(`a load on the memory of a collected set has the new file's values, a set in use keeps its own (${t} threads)`, async () => {
      setThreads(t);
      const a = file((i) => Math.sin(i * 0.001) * 100 + t);
      const b = file((i) => -((i * 7919) % 1013) / 7 - t);
      const c = file((i) => (i % 3) - 1 + 0.5 * t);
      await collected(); // the sets of earlier tests come back first (at most 2 memories wait)
      reuseState();
      // a set that is dropped, then collected: its memory waits for the next load of that size
      readBinary(a.path).data;
      await collected();
      const before = reuseState();
      const kept = readBinary(b.path);
      expect(reuseState().reused).toBe(before.reused + 1); // the test is only meaningful when the memory was reused
      // while `kept` is in use its memory is never handed out: the next load gets another one; its samples are
      // first read (widened) only after that load, so a shared memory would show
      await collected();
      const d = readBinary(c.path);
      expect(same(kept.data, b.x)).toBe(true);
      expect(same(d.data, c.x)).toBe(true);
    });
  }
  it('a load that fails on a non-finite sample leaves no trace in the next load on its memory', async () => {
    setThreads(1);
    const bad = file((i) => (i === 40 * N + 7 ? NaN : 123.25));
    const good = file((i) => (i % 101) * 0.5);
    await collected(); // the earlier tests' sets come back first (at most 2 memories wait; the oldest goes)
    reuseState();
    expect(() => readBinary(bad.path)).toThrow(/sweep 40: a non-finite sample \(NaN\) at sample 7/);
    await collected();
    const before = reuseState().reused;
    const s = readBinary(good.path);
    expect(reuseState().reused).toBe(before + 1);
    expect(same(s.data, good.x)).toBe(true);
  });
});
