// New per-sweep kernels give the same bits on 1 and 2 threads, and the same bits as a
// slow obvious reference kept here (self-consistency: the averaging and bridging
// arithmetic is the verbs' own; the filters are checked against SciPy in tests/signal).
import { describe, it, expect, afterEach } from 'vitest';
import { SweepSet, setThreads, workerJobs, bridgeGap } from '../../src';
import { samples32, memoryOf, inPlaceCheck32 } from '../../src/parallel/simd';
import { checkedSweepSet } from '../../src/sweeps/SweepSet';
import { finiteSum32 } from '../../src/parallel/kernels';

const S = 60,
  N = 12000,
  fs = 50000; // 720,000 samples: above the threading threshold
function synthetic(): SweepSet {
  const data = new Float64Array(new SharedArrayBuffer(S * N * 8));
  for (let s = 0; s < S; s++) {
    for (let i = 0; i < N; i++) {
      const t = -2 + (i * 1000) / fs;
      data[s * N + i] =
        2 +
        0.01 * s +
        (t >= 0 && t < 0.2 ? 300 : 0) +
        40 * Math.exp(-0.5 * ((t - 1) / 0.2) ** 2) * (s % 5) +
        Math.sin(i * 12.9898 + s * 78.233);
    }
  }
  // groups of unequal size, members not contiguous (as an acquisition order interleaves them)
  const conditions = Array.from({ length: S }, (_, s) => ({ condition: (s * 7) % 13, intensity: (s % 5) + 1 }));
  return new SweepSet({ data, nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV', conditions });
}
const same = (a: Float64Array, b: Float64Array) => a.length === b.length && a.every((v, i) => Object.is(v, b[i]));

/** The per-sample loop over each group's members (the arithmetic the kernel must keep). */
function referenceAverage(set: SweepSet, key: string, median: boolean) {
  const groups = new Map<string, number[]>();
  set.conditions.forEach((c, i) => {
    const id = JSON.stringify([c[key]]);
    (groups.get(id) ?? groups.set(id, []).get(id)!).push(i);
  });
  const n = set.nSamples,
    G = groups.size,
    x = set.data;
  const out = new Float64Array(G * n),
    sd = new Float64Array(G * n),
    sem = new Float64Array(G * n);
  [...groups.values()].forEach((idx, g) => {
    const m = idx.length;
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let k = 0; k < m; k++) s += x[idx[k] * n + i];
      const mean = s / m;
      let ss = 0;
      for (let k = 0; k < m; k++) {
        const d = x[idx[k] * n + i] - mean;
        ss += d * d;
      }
      const v = m > 1 ? Math.sqrt(ss / (m - 1)) : NaN;
      sd[g * n + i] = v;
      sem[g * n + i] = v / Math.sqrt(m);
      const vals = idx.map((k) => x[k * n + i]).sort((p, q) => p - q);
      out[g * n + i] = !median ? mean : m % 2 ? vals[(m - 1) / 2] : 0.5 * (vals[m / 2 - 1] + vals[m / 2]);
    }
  });
  return { out, sd, sem };
}

afterEach(() => setThreads(2));

describe('average kernel (groupBy(...).average())', () => {
  for (const method of ['mean', 'median'] as const) {
    it(`${method}: 1 and 2 threads give the same bits, equal to the per-sample reference`, () => {
      const set = synthetic().lowpass(5000);
      setThreads(1);
      const one = set.groupBy('condition').average({ method });
      setThreads(2);
      const before = workerJobs();
      const two = set.groupBy('condition').average({ method });
      expect(workerJobs()).toBeGreaterThan(before); // the worker took part
      const ref = referenceAverage(set, 'condition', method === 'median');
      for (const [a, b] of [
        [one.data, two.data],
        [one.extras.sd, two.extras.sd],
        [one.extras.sem, two.extras.sem],
      ] as Float64Array[][])
        expect(same(a, b)).toBe(true);
      expect(same(one.data, ref.out)).toBe(true);
      expect(same(one.extras.sd as Float64Array, ref.sd)).toBe(true);
      expect(same(one.extras.sem as Float64Array, ref.sem)).toBe(true);
      expect(one.conditions.map((c) => c.count).reduce((p, q) => (p as number) + (q as number), 0)).toBe(S);
    });
  }
  it('groups of 1 to 9 sweeps (every split into passes of up to four), with -0 and infinite samples', () => {
    // group g holds g + 1 sweeps, interleaved: 45 sweeps of 12,000 samples (above the threading threshold)
    const base = synthetic();
    const sizes = [1, 2, 3, 4, 5, 6, 7, 8, 9];
    const groupOf = sizes.flatMap((m, g) => Array.from({ length: m }, () => g));
    const order = groupOf.map((g, k) => [(k * 17) % groupOf.length, g]).sort((p, q) => p[0] - q[0]);
    const data = new Float64Array(new SharedArrayBuffer(groupOf.length * N * 8));
    data.set(base.data.subarray(0, data.length));
    data[5] = -0; // a sweep's -0 and +/-Infinity stay what a per-sample sum gives
    data[N + 7] = Infinity;
    data[2 * N + 9] = -Infinity;
    // the public constructor refuses non-finite samples; a verb's result may hold them (the kernel must keep them)
    const set = checkedSweepSet({
      data,
      nSweeps: groupOf.length,
      nSamples: N,
      fs,
      t0Ms: -2,
      units: 'uV',
      conditions: order.map(([, g]) => ({ g })),
    });
    const ref = referenceAverage(set, 'g', false);
    for (const T of [1, 2]) {
      setThreads(T);
      const avg = set.groupBy('g').average();
      expect(same(avg.data, ref.out)).toBe(true);
      expect(same(avg.extras.sd as Float64Array, ref.sd)).toBe(true);
      expect(same(avg.extras.sem as Float64Array, ref.sem)).toBe(true);
    }
  });
});

describe('pending artifact bridge (removeArtifact blank)', () => {
  for (const bridge of ['linear', 'hermite'] as const) {
    it(`${bridge}: deferred after baseline and template equals the eager steps, on 1 and 2 threads`, () => {
      const results: Float64Array[] = [];
      for (const T of [1, 2]) {
        setThreads(T);
        const b = synthetic()
          .baseline({ window: [-2, -0.1] })
          .removeArtifact({ method: 'template', window: [0, 0.5], maxIntensity: 1 });
        const blanked = b.removeArtifact({ method: 'blank', window: [0, 0.24], bridge });
        // eager reference: read the corrected samples, then bridge each sweep
        const eager = Float64Array.from(b.data);
        const a = blanked.indexAt(0),
          z = blanked.indexAt(0.24);
        for (let s = 0; s < S; s++) bridgeGap(eager.subarray(s * N, (s + 1) * N), a, z, bridge);
        expect(same(blanked.data, eager)).toBe(true);
        // and through the filter, which applies the pending correction as it reads
        const viaFilter = b.removeArtifact({ method: 'blank', window: [0, 0.24], bridge }).lowpass(5000).data;
        const eagerFilter = new SweepSet({
          data: eager,
          nSweeps: S,
          nSamples: N,
          fs,
          t0Ms: -2,
          units: 'uV',
          conditions: blanked.conditions,
        }).lowpass(5000).data;
        expect(same(viaFilter, eagerFilter)).toBe(true);
        results.push(viaFilter);
      }
      expect(same(results[0], results[1])).toBe(true);
    });
  }
  it('blank twice, and template after blank, equal the eager order', () => {
    const b = synthetic().baseline({ window: [-2, -0.1] });
    const twice = b
      .removeArtifact({ method: 'blank', window: [0, 0.1] })
      .removeArtifact({ method: 'blank', window: [0.06, 0.3], bridge: 'linear' }).data;
    const e = Float64Array.from(b.data);
    for (let s = 0; s < S; s++) {
      const x = e.subarray(s * N, (s + 1) * N);
      bridgeGap(x, b.indexAt(0), b.indexAt(0.1), 'hermite');
      bridgeGap(x, b.indexAt(0.06), b.indexAt(0.3), 'linear');
    }
    expect(same(twice, e)).toBe(true);
    const blankThenTemplate = b
      .removeArtifact({ method: 'blank', window: [0, 0.1] })
      .removeArtifact({ method: 'template', window: [0, 0.5], maxIntensity: 1 }).data;
    const eb = b.removeArtifact({ method: 'blank', window: [0, 0.1] });
    const materialised = new SweepSet({
      data: Float64Array.from(eb.data),
      nSweeps: S,
      nSamples: N,
      fs,
      t0Ms: -2,
      units: 'uV',
      conditions: eb.conditions,
    });
    expect(
      same(
        blankThenTemplate,
        materialised.removeArtifact({ method: 'template', window: [0, 0.5], maxIntensity: 1 }).data,
      ),
    ).toBe(true);
  });
});

describe('float32 load kernel (finiteness checked on the float32 chunk)', () => {
  it('names the first non-finite sample and its value on 1 and 2 threads; clean files load the exact float32 values', async () => {
    const { mkdtempSync, writeFileSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const { readBinary } = await import('../../src');
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-kernels-'));
    const S2 = 40,
      N2 = 20000;
    const a = Float32Array.from({ length: S2 * N2 }, (_, i) => Math.fround(Math.sin(i * 0.001) * 100));
    writeFileSync(join(dir, 'ok.f32'), new Uint8Array(a.buffer));
    writeFileSync(
      join(dir, 'ok.json'),
      JSON.stringify({ data: 'ok.f32', dtype: 'float32', nSweeps: S2, nSamples: N2, fs, t0Ms: -2, units: 'uV' }),
    );
    const bad = Float32Array.from(a);
    bad[17 * N2 + 123] = NaN;
    bad[30 * N2 + 5] = Infinity;
    writeFileSync(join(dir, 'bad.f32'), new Uint8Array(bad.buffer));
    writeFileSync(
      join(dir, 'bad.json'),
      JSON.stringify({ data: 'bad.f32', dtype: 'float32', nSweeps: S2, nSamples: N2, fs, t0Ms: -2, units: 'uV' }),
    );
    for (const T of [1, 2]) {
      setThreads(T);
      const set = readBinary(join(dir, 'ok.json'));
      expect(same(set.data, Float64Array.from(a))).toBe(true); // float32 -> float64 is exact
      expect(() => readBinary(join(dir, 'bad.json'))).toThrow(/sweep 17: a non-finite sample \(NaN\) at sample 123/);
    }
  });
});

describe('samples kept as float32 (a loader may keep a float32 file as read)', () => {
  it('every verb gives the bits of the float64 copy, on 1 and 2 threads', async () => {
    const { asRead, float32Samples } = await import('../../src/sweeps/storage');
    const ref = synthetic();
    const f32 = float32Samples(S * N);
    expect(f32.buffer).toBeInstanceOf(SharedArrayBuffer); // large enough for the threads
    for (let i = 0; i < f32.length; i++) f32[i] = ref.data[i];
    const wide = new Float64Array(new SharedArrayBuffer(S * N * 8));
    for (let i = 0; i < f32.length; i++) wide[i] = f32[i]; // exact widening
    const init = { nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV' as const, conditions: ref.conditions };
    const a = new SweepSet({ ...init, data: asRead(f32) });
    const b = new SweepSet({ ...init, data: wide });
    const chains: [string, (s: SweepSet) => Float64Array][] = [
      ['data', (s) => s.data],
      [
        'baseline mean, blank, low-pass',
        (s) =>
          s
            .baseline({ window: [-2, -0.1] })
            .removeArtifact({ method: 'blank', window: [0, 0.3] })
            .lowpass(5000).data,
      ],
      [
        'baseline median with late window',
        (s) => s.baseline({ window: [-2, -0.1], method: 'median', lateWindow: [200, 230] }).data,
      ],
      [
        'template then high-pass',
        (s) =>
          s
            .baseline({ window: [-2, -0.1] })
            .removeArtifact({ method: 'template', window: [0, 0.4], maxIntensity: 1 })
            .highpass(100).data,
      ],
      [
        'blank alone, then average',
        (s) =>
          s
            .removeArtifact({ method: 'blank', window: [0, 0.3], bridge: 'linear' })
            .groupBy('condition')
            .average().data,
      ],
      ['hum removal', (s) => s.removeHum({ frequency: 50, harmonics: 2 }).data],
      ['crop', (s) => s.crop(0, 10).data],
    ];
    for (const [name, run] of chains) {
      setThreads(1);
      const one = run(a);
      setThreads(2);
      const two = run(a);
      expect(same(one, two), name).toBe(true);
      expect(same(one, run(b)), name).toBe(true);
    }
    expect(() => new SweepSet({ ...init, data: f32 as never })).toThrow(/must be a Float64Array/);
  });
});

describe('loadAsRead kernel (float32 kept as read)', () => {
  it('reads the exact float32 values and finds the first non-finite one, the same on 1 and 2 threads', async () => {
    const { mkdtempSync, writeFileSync, openSync, closeSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const { runSweeps } = await import('../../src/parallel/pool');
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-asread-'));
    const S2 = 48,
      N2 = 16000;
    const a = Float32Array.from({ length: S2 * N2 }, (_, i) => Math.fround(Math.cos(i * 0.003) * 50));
    writeFileSync(join(dir, 'ok.f32'), new Uint8Array(a.buffer));
    const bad = Float32Array.from(a);
    bad[40 * N2 + 7] = -Infinity; // in the second thread's half
    writeFileSync(join(dir, 'bad.f32'), new Uint8Array(bad.buffer));
    for (const T of [1, 2]) {
      setThreads(T);
      for (const [file, want] of [
        ['ok.f32', -1],
        ['bad.f32', 40 * N2 + 7],
      ] as const) {
        // on a shared buffer (checked after a copy into the kernel's scratch memory), and on a WebAssembly memory
        // of its own (checked in place; the worker thread gets the memory with the job)
        for (const own of [false, true]) {
          const fd = openSync(join(dir, file), 'r');
          const out = own ? samples32(S2 * N2, true)! : new Float32Array(new SharedArrayBuffer(S2 * N2 * 4));
          expect(out.buffer instanceof SharedArrayBuffer).toBe(true);
          const memory = own ? memoryOf(out) : null;
          if (own) expect(memory).not.toBeNull();
          const before = workerJobs();
          const firstBad =
            runSweeps('loadAsRead', { fd, nSamples: N2, out, chunkSweeps: 5, memory }, S2, S2 * N2).find(
              (i) => i >= 0,
            ) ?? -1;
          closeSync(fd);
          if (T === 2) expect(workerJobs()).toBeGreaterThan(before);
          expect(firstBad).toBe(want);
          if (want < 0) expect(out.every((v, i) => Object.is(v, a[i]))).toBe(true);
        }
      }
    }
  });
});
describe('the finiteness check of float32 samples', () => {
  it('the SIMD check agrees with the JavaScript one (its reference) at every length and position', async () => {
    const { allFinite32, hasSimd } = await import('../../src/parallel/simd');
    const { finiteSum32 } = await import('../../src/parallel/kernels');
    expect(hasSimd()).toBe(true); // Node 16.4+ on x64 and arm64 has WebAssembly SIMD
    let seed = 11;
    const rnd = () => (seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32;
    const lengths = [...Array.from({ length: 80 }, (_, n) => n), 65535, 65536, 65537, 65536 * 2 + 77];
    let checked = 0;
    for (const n of lengths) {
      const x = Float32Array.from({ length: n }, () => (rnd() - 0.5) * 3.4e38);
      const from = n > 3 ? 1 : 0; // an offset start too
      expect(allFinite32(x, from, n)).toBe(finiteSum32(x, from, n));
      expect(allFinite32(x, from, n)).toBe(true);
      const positions =
        n < 80 ? Array.from({ length: n }, (_, i) => i) : [0, 15, 16, 63, 64, 65535, 65536, n - 1].filter((i) => i < n);
      for (const pos of positions)
        for (const v of [NaN, Infinity, -Infinity]) {
          const y = Float32Array.from(x);
          y[pos] = v;
          expect(allFinite32(y, 0, n)).toBe(false);
          expect(finiteSum32(y, 0, n)).toBe(false);
          // outside the range asked about, it does not count
          if (pos === 0 && n > 1) expect(allFinite32(y, 1, n)).toBe(true);
          checked++;
        }
    }
    expect(checked).toBeGreaterThan(3000);
  });
  it('the in-place check of a WebAssembly memory agrees with the JavaScript one at every length and position', () => {
    let seed = 17;
    const rnd = () => (seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32;
    let checked = 0;
    for (const shared of [false, true]) {
      const x = samples32(65536 * 3, shared)!;
      expect(x).not.toBeNull();
      const check = inPlaceCheck32(memoryOf(x)!)!;
      expect(check).not.toBeNull();
      for (let i = 0; i < x.length; i++) x[i] = (rnd() - 0.5) * 3.4e38;
      // starts and ends off the 16- and 64-byte steps of the kernel, short and long ranges
      const ranges = [
        [0, 0],
        [0, 1],
        [3, 17],
        [1, 80],
        [5, 65536 + 3],
        [16, 65536 * 2],
        [0, x.length],
        [x.length - 70, x.length],
      ];
      for (const [from, to] of ranges) {
        expect(check(x, from, to)).toBe(finiteSum32(x, from, to));
        expect(check(x, from, to)).toBe(true);
        const positions = [from, from + 1, from + 15, from + 16, from + 63, from + 64, to - 1].filter(
          (i) => i >= from && i < to,
        );
        for (const pos of positions)
          for (const v of [NaN, Infinity, -Infinity]) {
            const keep = x[pos];
            x[pos] = v;
            expect(check(x, from, to)).toBe(false);
            expect(finiteSum32(x, from, to)).toBe(false);
            if (pos > from) expect(check(x, from, pos)).toBe(true); // before it, all finite
            x[pos] = keep;
            checked++;
          }
      }
    }
    expect(checked).toBeGreaterThan(200);
  });
  it('large float32 samples lie on a WebAssembly memory, unless glibc was told to use huge pages', async () => {
    const { float32Samples, glibcHugePages } = await import('../../src/sweeps/storage');
    const { PARALLEL_MIN_SAMPLES } = await import('../../src/parallel/pool');
    expect(glibcHugePages({ GLIBC_TUNABLES: 'glibc.malloc.hugetlb=1' })).toBe(true);
    expect(glibcHugePages({ GLIBC_TUNABLES: 'glibc.malloc.arena_max=2:glibc.malloc.hugetlb=2' })).toBe(true);
    expect(glibcHugePages({ GLIBC_TUNABLES: 'glibc.malloc.hugetlb=0' })).toBe(false);
    expect(glibcHugePages({})).toBe(false);
    if (!glibcHugePages()) {
      expect(memoryOf(float32Samples(PARALLEL_MIN_SAMPLES))).not.toBeNull();
      expect(memoryOf(float32Samples(PARALLEL_MIN_SAMPLES - 1))).toBeNull(); // small ones: a plain array
    }
  });
  it('the float64 SIMD check agrees with the JavaScript one and, unlike a sum, is exact at full scale', async () => {
    const { allFinite64 } = await import('../../src/parallel/simd');
    const { finiteSum } = await import('../../src/parallel/kernels');
    let seed = 5;
    const rnd = () => (seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32;
    const lengths = [...Array.from({ length: 40 }, (_, n) => n), 32767, 32768, 32769, 32768 * 2 + 5];
    for (const n of lengths) {
      const x = Float64Array.from({ length: n }, () => (rnd() - 0.5) * 1e6);
      expect(allFinite64(x, 0, n)).toBe(true);
      expect(finiteSum(x, 0, n)).toBe(true);
      const positions =
        n < 40 ? Array.from({ length: n }, (_, i) => i) : [0, 7, 8, 32767, 32768, n - 1].filter((i) => i < n);
      for (const pos of positions)
        for (const v of [NaN, Infinity, -Infinity]) {
          const y = Float64Array.from(x);
          y[pos] = v;
          expect(allFinite64(y, 0, n)).toBe(false);
          expect(finiteSum(y, 0, n)).toBe(false);
        }
    }
    // IEEE 754 binary64 largest finite value (Number.MAX_VALUE): a sum overflows, the bit test does not
    const big = new Float64Array(64).fill(Number.MAX_VALUE);
    expect(allFinite64(big, 0, 64)).toBe(true);
    expect(finiteSum(big, 0, 64)).toBe(false); // why the loaders rescan value by value after a failed sum
  });
  it('finds a NaN or infinity at every position modulo its unrolling, and passes float32 full scale', async () => {
    const { mkdtempSync, writeFileSync, openSync, closeSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const { runSweeps } = await import('../../src/parallel/pool');
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-finite-'));
    const S3 = 3,
      N3 = 21; // 63 values: not a multiple of 8, so the tail loop is reached too
    // IEEE 754 binary32 largest finite magnitude, 3.4028234663852886e38 (the standard's definition)
    const full = Float32Array.from({ length: S3 * N3 }, (_, i) => (i % 2 ? 1 : -1) * 3.4028234663852886e38);
    const check = (x: Float32Array) => {
      writeFileSync(join(dir, 'x.f32'), new Uint8Array(x.buffer));
      const fd = openSync(join(dir, 'x.f32'), 'r');
      const out = new Float32Array(S3 * N3);
      const r = runSweeps('loadAsRead', { fd, nSamples: N3, out, chunkSweeps: 2 }, S3, S3 * N3).find((i) => i >= 0);
      closeSync(fd);
      return r ?? -1;
    };
    expect(check(full)).toBe(-1);
    for (let k = 0; k < S3 * N3; k++)
      for (const v of [NaN, Infinity, -Infinity]) {
        const x = Float32Array.from(full);
        x[k] = v;
        if (k + 9 < x.length) x[k + 9] = v; // a later one is not reported first
        expect(check(x)).toBe(k);
      }
  });
});
