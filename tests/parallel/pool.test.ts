// Worker threads, deferred corrections and lazily hashed sources must not change a
// single number: every check here compares two ways of computing the same thing
// bit for bit (self-consistency; the filters themselves are checked against SciPy
// in tests/signal and tests/verbs).
import { describe, it, expect, afterEach } from 'vitest';
import { mkdtempSync, writeFileSync, appendFileSync, readFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  SweepSet,
  readBinary,
  readDelimited,
  setThreads,
  stopThreads,
  threads,
  workerJobs,
  InputError,
  ThreadError,
  writeWide,
} from '../../src';
import { setWorkerFault, runSweeps, workerCollections } from '../../src/parallel/pool';
import { noCorrection } from '../../src/parallel/kernels';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';

const dir = mkdtempSync(join(tmpdir(), 'fascicle-pool-'));
const S = 48,
  N = 16000,
  fs = 50000; // 768,000 samples: above the threading threshold

function synthetic(): SweepSet {
  const data = new Float64Array(new SharedArrayBuffer(S * N * 8)); // as the loaders allocate large sets
  for (let s = 0; s < S; s++) {
    for (let i = 0; i < N; i++) {
      const t = -2 + (i * 1000) / fs;
      const art = t >= 0 && t < 0.1 ? 500 * (1 + (s % 6)) : 0;
      const resp = s % 6 > 1 ? 80 * Math.exp(-0.5 * ((t - 1) / 0.1) ** 2) : 0;
      data[s * N + i] = 3 + 0.01 * s + art + resp + Math.sin(i * 12.9898 + s * 78.233);
    }
  }
  const conditions = Array.from({ length: S }, (_, s) => ({
    preparation: s < S / 2 ? 'P1' : 'P2',
    intensity: (s % 6) + 1,
  }));
  return new SweepSet({ data, nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV', conditions });
}
const chain = (x: SweepSet) =>
  x
    .baseline({ window: [-2, -0.1], lateWindow: [250, 300] })
    .removeArtifact({ method: 'template', window: [0, 0.3], maxIntensity: 2 })
    .lowpass(5000, 4);
const same = (a: Float64Array, b: Float64Array) => a.length === b.length && a.every((v, i) => Object.is(v, b[i]));

afterEach(() => setThreads(2));

describe('conditioning on worker threads', () => {
  it('baseline -> template artifact -> low-pass gives the same bits on 1 and 2 threads', () => {
    setThreads(1);
    const one = chain(synthetic()).data;
    setThreads(2);
    const before = workerJobs();
    const two = chain(synthetic()).data;
    expect(threads()).toBe(2);
    expect(workerJobs()).toBeGreaterThan(before); // a worker thread really did part of it
    expect(two.buffer instanceof SharedArrayBuffer).toBe(true);
    expect(same(one, two)).toBe(true);
  });
  it('deferred corrections equal the verbs applied one at a time (samples read after each step)', () => {
    const set = synthetic();
    const b = set.baseline({ window: [-2, -0.1] });
    const eagerB = b.create({ data: Float64Array.from(b.data) }); // materialised copy
    const t = eagerB.removeArtifact({ method: 'template', window: [0, 0.3], maxIntensity: 2 });
    const eagerT = t.create({ data: Float64Array.from(t.data) });
    const eager = eagerT.lowpass(5000, 4).data;
    const fused = set
      .baseline({ window: [-2, -0.1] })
      .removeArtifact({ method: 'template', window: [0, 0.3], maxIntensity: 2 })
      .lowpass(5000, 4).data;
    expect(same(eager, fused)).toBe(true);
    // and reading the deferred samples gives the same as the materialised copy
    expect(same(set.baseline({ window: [-2, -0.1] }).data, eagerB.data)).toBe(true);
  });
  it('every step of baseline -> low-pass alone (no template) also runs on the worker; threads stop and start again', async () => {
    const set = synthetic();
    setThreads(1);
    const one = set.baseline({ window: [-2, -0.1] }).lowpass(5000).data;
    setThreads(2);
    let before = workerJobs();
    const two = set.baseline({ window: [-2, -0.1] }).lowpass(5000).data;
    expect(workerJobs()).toBeGreaterThan(before);
    expect(same(one, two)).toBe(true);
    await stopThreads();
    before = workerJobs();
    expect(same(set.baseline({ window: [-2, -0.1] }).lowpass(5000).data, one)).toBe(true);
    expect(workerJobs()).toBeGreaterThan(before);
  });
  it('hum removal and resampling give the same bits on 1 and 2 threads', () => {
    const set = synthetic();
    setThreads(1);
    const hum1 = set.removeHum({ frequency: 50, harmonics: 3 });
    const res1 = set.resample({ fs: 20000, padtype: 'median' }).data;
    setThreads(2);
    const before = workerJobs();
    const hum2 = set.removeHum({ frequency: 50, harmonics: 3 });
    const res2 = set.resample({ fs: 20000, padtype: 'median' }).data;
    expect(workerJobs() - before).toBe(2);
    expect(same(hum1.data, hum2.data)).toBe(true);
    expect(hum1.extras.humAmplitude).toEqual(hum2.extras.humAmplitude);
    expect(same(res1, res2)).toBe(true);
  });
  it('setThreads rejects nonsense with the option named', () => {
    expect(() => setThreads(0)).toThrow(/invalid threads: 0/);
    expect(() => setThreads(1.5)).toThrow(/integer from 1 to 64/);
  });
});

describe('loading large files', () => {
  const f32 = new Float32Array(S * N);
  for (let i = 0; i < f32.length; i++) f32[i] = Math.fround(Math.sin(i * 0.37) * 100);
  writeFileSync(join(dir, 'big.bin'), new Uint8Array(f32.buffer));
  writeFileSync(
    join(dir, 'big.json'),
    JSON.stringify({ data: 'big.bin', dtype: 'float32', nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV' }),
  );

  it('readBinary splits sweeps over threads and gives the same samples as one thread', () => {
    setThreads(1);
    const one = readBinary(join(dir, 'big.json')).data;
    setThreads(2);
    const two = readBinary(join(dir, 'big.json')).data;
    expect(same(one, two)).toBe(true);
    expect(two[12345]).toBe(f32[12345]);
  });
  it('int16 interleaved channels with gain and offset, and big-endian float32, decode the same on 1 and 2 threads as a DataView reference', () => {
    const nS = 40,
      nN = 9000,
      nC = 3; // 1,080,000 values
    const dv = new DataView(new ArrayBuffer(nS * nN * nC * 2));
    for (let i = 0; i < nS * nN * nC; i++) dv.setInt16(i * 2, ((i * 7919) % 65536) - 32768, true);
    writeFileSync(join(dir, 'i16.bin'), new Uint8Array(dv.buffer));
    writeFileSync(
      join(dir, 'i16.json'),
      JSON.stringify({
        data: 'i16.bin',
        dtype: 'int16',
        layout: 'interleaved',
        nSweeps: nS,
        nSamples: nN,
        nChannels: nC,
        channel: 2,
        gain: 0.25,
        offset: -3,
        fs,
        units: 'uV',
      }),
    );
    const be = new DataView(new ArrayBuffer(nS * nN * 4));
    for (let i = 0; i < nS * nN; i++) be.setFloat32(i * 4, Math.sin(i) * 1e3, false);
    writeFileSync(join(dir, 'be.bin'), new Uint8Array(be.buffer));
    writeFileSync(
      join(dir, 'be.json'),
      JSON.stringify({
        data: 'be.bin',
        dtype: 'float32',
        byteOrder: 'big',
        nSweeps: nS,
        nSamples: nN,
        fs,
        units: 'uV',
      }),
    );
    const refI16 = Float64Array.from({ length: nS * nN }, (_, k) => {
      const s = Math.floor(k / nN),
        i = k % nN;
      return dv.getInt16(((s * nN + i) * nC + 2) * 2, true) * 0.25 - 3;
    });
    const refBe = Float64Array.from({ length: nS * nN }, (_, k) => be.getFloat32(k * 4, false));
    for (const t of [1, 2]) {
      setThreads(t);
      expect(same(readBinary(join(dir, 'i16.json')).data, refI16)).toBe(true);
      expect(same(readBinary(join(dir, 'be.json')).data, refBe)).toBe(true);
    }
  });
  it('a large CSV parses the same on 1 and 2 threads; a comment line, a CRLF or a bad cell in the second half falls back to the exact parser', () => {
    const rows = 3000,
      cols = 400; // about 10 MB
    const lines = [['time (ms)', ...Array.from({ length: cols }, (_, c) => `s${c} (uV)`)].join(',')];
    for (let i = 0; i < rows; i++)
      lines.push(
        [
          (i * 0.02).toFixed(2),
          ...Array.from({ length: cols }, (_, c) => (Math.round(Math.sin(i * 0.37 + c) * 1e5) / 100).toString()),
        ].join(','),
      );
    const text = lines.join('\n') + '\n';
    writeFileSync(join(dir, 'big-text.csv'), text);
    setThreads(1);
    const one = readDelimited(join(dir, 'big-text.csv'));
    setThreads(2);
    const before = workerJobs();
    const two = readDelimited(join(dir, 'big-text.csv'));
    expect(workerJobs()).toBeGreaterThan(before);
    expect(same(one.data, two.data)).toBe(true);
    expect(two.nSamples).toBe(rows);
    expect(two.data[5 * rows + 2]).toBe(Math.round(Math.sin(2 * 0.37 + 5) * 1e5) / 100);
    // variants that leave the fast path: the exact parser gives the same numbers or names the line
    const withComment = [...lines.slice(0, 2500), '# a note in the middle', ...lines.slice(2500)].join('\n');
    writeFileSync(join(dir, 'big-comment.csv'), withComment);
    expect(same(readDelimited(join(dir, 'big-comment.csv')).data, one.data)).toBe(true);
    writeFileSync(join(dir, 'big-crlf.csv'), lines.join('\r\n') + '\r\n');
    expect(same(readDelimited(join(dir, 'big-crlf.csv')).data, one.data)).toBe(true);
    const bad = [...lines];
    bad[2801] = bad[2801].replace(/,[^,]*$/, ',oops');
    writeFileSync(join(dir, 'big-bad.csv'), bad.join('\n'));
    expect(() => readDelimited(join(dir, 'big-bad.csv'))).toThrow(
      new RegExp(`big-bad\\.csv, line 2802, column ${cols + 1}: a non-numeric cell "oops"`),
    );
  });
  it('a NaN in the part a worker reads is reported with its sweep and sample', () => {
    const bad = Float32Array.from(f32);
    bad[(S - 3) * N + 77] = NaN;
    writeFileSync(join(dir, 'nan.bin'), new Uint8Array(bad.buffer));
    writeFileSync(
      join(dir, 'nan.json'),
      JSON.stringify({ data: 'nan.bin', dtype: 'float32', nSweeps: S, nSamples: N, fs, units: 'uV' }),
    );
    let err: unknown;
    try {
      readBinary(join(dir, 'nan.json'));
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect(String((err as Error).message)).toMatch(new RegExp(`nan\\.bin.*sweep ${S - 3}.*sample 77`, 's'));
  });
  it('large files are hashed when provenance asks (SHA-256 of the bytes), and a file changed since loading is refused', () => {
    const set = readBinary(join(dir, 'big.json'));
    const src = set.sources.find((s) => s.path.endsWith('big.bin'))!;
    // reference: node:crypto over the whole file
    expect(src.sha256).toBe(
      createHash('sha256')
        .update(readFileSync(join(dir, 'big.bin')))
        .digest('hex'),
    );
    writeWide(join(dir, 'big.csv'), set);
    const csv = readDelimited(join(dir, 'big.csv'));
    appendFileSync(join(dir, 'big.csv'), '\n');
    expect(() => csv.sources[0].sha256).toThrow(/big\.csv.*changed after it was loaded/s);
  });
});

describe('pool threads collect when idle or after much shared memory, not after every job', () => {
  // a shared buffer is freed only when every thread that saw it has dropped its handle; the
  // pool threads collect after 20 ms without a job or after 256 MB of shared arguments
  setFlagsFromString('--expose-gc');
  const gc = runInNewContext('gc') as (o?: { type: 'minor' | 'major' }) => void; // the calling thread's own collection
  const n = 8192,
    nS = 128; // 8 MB of float64 per input: above the threading threshold
  const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
  const input = (k: number) => {
    const x = new Float64Array(new SharedArrayBuffer(nS * n * 8));
    for (let i = 0; i < x.length; i += 509) x[i] = Math.sin(i + k); // every page written
    return x;
  };
  it('under sustained load (no idle time) the threads still free the inputs; the results are the same bits', async () => {
    setThreads(2);
    await stopThreads();
    const out1 = new Float64Array(nS * n),
      out2 = new Float64Array(new SharedArrayBuffer(nS * n * 8));
    runSweeps('correct', { x: input(0), out: out2, n, c: noCorrection() }, nS, nS * n); // threads start
    gc();
    await sleep(60);
    const rss0 = process.memoryUsage().rss,
      c0 = workerCollections();
    let peak = rss0;
    const sums: number[] = [];
    for (let k = 0; k < 160; k++) {
      // 160 fresh 8 MB inputs back to back (1.3 GB if no thread let go of them), no pause long
      // enough for an idle collection; a young-generation collection drops this thread's handle
      let x: Float64Array | null = input(k);
      runSweeps('correct', { x, out: out2, n, c: noCorrection() }, nS, nS * n);
      let sum = 0;
      for (let i = 0; i < out2.length; i += 509) sum += out2[i];
      sums.push(sum);
      x = null;
      gc({ type: 'minor' });
      peak = Math.max(peak, process.memoryUsage().rss);
    }
    const collections = workerCollections() - c0;
    // 1,280 MB seen: at least four collections by the worker at 256 MB each
    expect(collections).toBeGreaterThanOrEqual(4);
    expect(peak - rss0).toBeLessThan(700 * 2 ** 20);
    // the same bits as one thread, and as the input (no correction copies it)
    for (const k of [3, 159]) {
      const x = input(k);
      setThreads(1);
      runSweeps('correct', { x, out: out1, n, c: noCorrection() }, nS, nS * n);
      setThreads(2);
      runSweeps('correct', { x, out: out2, n, c: noCorrection() }, nS, nS * n);
      expect(same(out1, out2)).toBe(true);
      expect(same(out2, x)).toBe(true);
      let sum = 0;
      for (let i = 0; i < out2.length; i += 509) sum += out2[i];
      expect(sum).toBe(sums[k]);
    }
  }, 120_000);
  it('a thread collects once it has been idle, and not while it is busy', async () => {
    setThreads(2);
    await stopThreads();
    const out = new Float64Array(new SharedArrayBuffer(nS * n * 8));
    runSweeps('correct', { x: input(1), out, n, c: noCorrection() }, nS, nS * n);
    const c0 = workerCollections();
    await sleep(100);
    expect(workerCollections()).toBe(c0 + 1); // one idle collection, then it waits without collecting
    await sleep(100);
    expect(workerCollections()).toBe(c0 + 1);
  });
});

describe('a worker thread that dies never hangs the caller', () => {
  // a thread that runs out of memory cannot run its own exit handler; the supervisor
  // thread sees its exit and wakes the caller. The fault hook makes the next threads fail
  // in their first job by really exhausting a small heap (FASCICLE_WORKER_HEAP_MB) or exiting.
  afterEach(async () => {
    setWorkerFault(null);
    delete process.env.FASCICLE_WORKER_HEAP_MB;
    await stopThreads();
  });
  it('out of memory during a verb: a ThreadError saying so; later calls start a new thread and give the right bits', async () => {
    const set = synthetic();
    setThreads(1);
    const one = set.lowpass(5000).data;
    setThreads(2);
    await stopThreads();
    process.env.FASCICLE_WORKER_HEAP_MB = '16';
    setWorkerFault('oom');
    expect(() => set.lowpass(5000).data).toThrow(ThreadError);
    expect(() => set.lowpass(5000).data).toThrow(/a worker thread ran out of memory while running/);
    setWorkerFault(null);
    const before = workerJobs();
    expect(same(set.lowpass(5000).data, one)).toBe(true);
    expect(workerJobs()).toBeGreaterThan(before);
  }, 60_000);
  it('a thread that exits during the first job of a load is a ThreadError, not an unreadable file', async () => {
    const p = join(dir, 'fault.bin');
    const x = new Float32Array(S * N);
    for (let i = 0; i < x.length; i++) x[i] = Math.sin(i * 0.001);
    writeFileSync(p, new Uint8Array(x.buffer));
    writeFileSync(
      join(dir, 'fault.json'),
      JSON.stringify({ data: 'fault.bin', dtype: 'float32', nSweeps: S, nSamples: N, fs, units: 'uV' }),
    );
    setThreads(2);
    await stopThreads();
    setWorkerFault('exit');
    let err: unknown;
    try {
      readBinary(join(dir, 'fault.json'));
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(ThreadError);
    expect(err).not.toBeInstanceOf(InputError);
    expect((err as Error).message).toMatch(/a worker thread exited \(code 70\) while running "load(AsRead)?"/);
    setWorkerFault(null);
    expect(readBinary(join(dir, 'fault.json')).data[12345]).toBe(Math.fround(Math.sin(12345 * 0.001)));
  }, 60_000);
});
