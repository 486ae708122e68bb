import { describe, it, expect } from 'vitest';
import { mkdtempSync, mkdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import fc from 'fast-check';
import { readBinary, readManifest, byPreparation, InputError, setThreads, stopThreads, threads } from '../../src';
import { deferredOf } from '../../src/sweeps/SweepSet';

const dir = mkdtempSync(join(tmpdir(), 'fascicle-bin-'));
const threadsAtStart = threads();
let k = 0;
function sidecar(meta: Record<string, unknown>, bytes: Uint8Array): string {
  const name = `b${k++}`;
  writeFileSync(join(dir, name + '.bin'), bytes);
  const p = join(dir, name + '.json');
  writeFileSync(p, JSON.stringify({ data: name + '.bin', ...meta }));
  return p;
}

describe('readBinary(sidecar)', () => {
  it('reads int16 with gain and offset, interleaved channels', () => {
    // 2 sweeps x 3 samples x 2 channels, interleaved [sweep][sample][channel]
    const raw = new Int16Array([1, 100, 2, 200, 3, 300, 4, 400, 5, 500, 6, 600]);
    const p = sidecar(
      {
        dtype: 'int16',
        layout: 'interleaved',
        nSweeps: 2,
        nSamples: 3,
        nChannels: 2,
        channel: 1,
        gain: 0.5,
        offset: 1,
        fs: 10000,
        t0Ms: -0.2,
        units: 'uV',
      },
      new Uint8Array(raw.buffer),
    );
    const s = readBinary(p);
    expect([...s.sweep(0)]).toEqual([51, 101, 151]);
    expect([...s.sweep(1)]).toEqual([201, 251, 301]);
    expect(s.t0Ms).toBe(-0.2);
  });
  it('reads float32 sweep-major and big-endian float64 exactly', () => {
    const f = new Float32Array([0.5, -1.25, 3, 4]);
    expect([
      ...readBinary(
        sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'mV' }, new Uint8Array(f.buffer)),
      ).data,
    ]).toEqual([0.5, -1.25, 3, 4]);
    const dv = new DataView(new ArrayBuffer(16));
    dv.setFloat64(0, Math.PI, false);
    dv.setFloat64(8, -Math.E, false);
    expect([
      ...readBinary(
        sidecar(
          { dtype: 'float64', byteOrder: 'big', nSweeps: 1, nSamples: 2, fs: 1000, units: 'V' },
          new Uint8Array(dv.buffer),
        ),
      ).data,
    ]).toEqual([Math.PI, -Math.E]);
  });
  it('names the file and the expected size when the data file is the wrong length', () => {
    const p = sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 4, fs: 1000, units: 'mV' }, new Uint8Array(12));
    expect(() => readBinary(p)).toThrow(
      /has 12 bytes; expected 32 bytes = 2 sweeps x 4 samples x 1 channels x 4 bytes/,
    );
  });
  it('names the sidecar field that is wrong', () => {
    expect(() =>
      readBinary(sidecar({ dtype: 'int8', nSweeps: 1, nSamples: 2, fs: 1, units: 'mV' }, new Uint8Array(2))),
    ).toThrow(/field dtype: unknown dtype "int8"/);
    expect(() =>
      readBinary(sidecar({ dtype: 'int16', nSweeps: 1, nSamples: 2, fs: 1, units: 'volts' }, new Uint8Array(4))),
    ).toThrow(/field units/);
    expect(() =>
      readBinary(sidecar({ dtype: 'int16', nSweeps: 1, nSamples: 2, fs: -5, units: 'mV' }, new Uint8Array(4))),
    ).toThrow(/field fs/);
  });
  it('rejects NaN samples, naming the sweep', () => {
    const f = new Float32Array([1, 2, 3, NaN]);
    expect(() =>
      readBinary(
        sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'mV' }, new Uint8Array(f.buffer)),
      ),
    ).toThrow(/sweep 1: a non-finite sample/);
  });
  it('rejects an infinity (also +Inf next to -Inf), and accepts huge finite values whose sum overflows', () => {
    const f = new Float32Array([1, Infinity, -Infinity, 4]);
    expect(() =>
      readBinary(
        sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'mV' }, new Uint8Array(f.buffer)),
      ),
    ).toThrow(/sweep 0: a non-finite sample \(Infinity\) at sample 1/);
    const g = new Float64Array([1e308, 1e308, 1e308, -1e308]);
    expect([
      ...readBinary(
        sidecar({ dtype: 'float64', nSweeps: 2, nSamples: 2, fs: 1000, units: 'mV' }, new Uint8Array(g.buffer)),
      ).data,
    ]).toEqual([...g]);
  });
  it('round-trips random float64 data exactly (property)', () => {
    fc.assert(
      fc.property(
        fc
          .array(fc.double({ noNaN: true, noDefaultInfinity: true }), { minLength: 6, maxLength: 60 })
          .filter((a) => a.length % 2 === 0),
        (vals) => {
          const p = sidecar(
            { dtype: 'float64', nSweeps: 2, nSamples: vals.length / 2, fs: 5000, units: 'mV' },
            new Uint8Array(Float64Array.from(vals).buffer),
          );
          const s = readBinary(p);
          return vals.every((v, i) => Object.is(s.data[i], v) || (v === 0 && s.data[i] === 0));
        },
      ),
      { numRuns: 50 },
    );
  });
});

describe('readManifest(path)', () => {
  const mk = (name: string, text: string) => writeFileSync(join(dir, name), text);
  mk('p1.csv', 'time (ms),a (mV),b (mV)\n0,1,2\n0.1,3,4\n0.2,5,6\n');
  mk('p2.csv', 'time (ms),a (uV)\n0,1000\n0.1,2000\n0.2,3000\n');
  mk('p3.csv', 'time (ms),a (mV)\n0,1\n0.2,2\n0.4,3\n');
  const manifest = (m: unknown) => {
    const p = join(dir, `m${k++}.json`);
    writeFileSync(p, JSON.stringify(m));
    return p;
  };
  it('joins files with their conditions and converts units', () => {
    const p = manifest({
      fascicleManifest: 1,
      study: 'x',
      defaults: { temperatureC: 37 },
      files: [
        {
          path: 'p1.csv',
          conditions: { preparation: 'N1', distanceMm: 10 },
          sweeps: [{ intensity: 0.1 }, { intensity: 0.2 }],
        },
        { path: 'p2.csv', conditions: { preparation: 'N2', distanceMm: 12 } },
      ],
    });
    const s = readManifest(p);
    expect(s.nSweeps).toBe(3);
    expect(s.units).toBe('mV');
    expect([...s.sweep(2)]).toEqual([1, 2, 3]);
    expect(s.conditions[1]).toMatchObject({ preparation: 'N1', distanceMm: 10, intensity: 0.2, temperatureC: 37 });
    expect(s.where({ preparation: 'N2' }).nSweeps).toBe(1);
    expect(s.sources.length).toBe(3);
  });
  it('rejects disagreeing sample rates, naming both files', () => {
    const p = manifest({
      fascicleManifest: 1,
      files: [
        { path: 'p1.csv', conditions: { preparation: 'A' } },
        { path: 'p3.csv', conditions: { preparation: 'B' } },
      ],
    });
    expect(() => readManifest(p)).toThrow(/p3\.csv: sample rate 5000 Hz differs from 10000 Hz in .*p1\.csv/);
  });
  it('rejects a sweep without a required condition', () => {
    const p = manifest({
      fascicleManifest: 1,
      required: ['preparation', 'distanceMm'],
      files: [{ path: 'p1.csv', conditions: { preparation: 'A' } }],
    });
    expect(() => readManifest(p)).toThrow(/p1\.csv, sweep 0: condition "distanceMm" is missing/);
  });
  it('rejects a manifest that does not match the schema, naming the field', () => {
    expect(() =>
      readManifest(
        manifest({ fascicleManifest: 1, files: [{ path: 'p1.csv', conditions: { temperatureC: 'warm' } }] }),
      ),
    ).toThrow(InputError);
    expect(() =>
      readManifest(
        manifest({ fascicleManifest: 1, files: [{ path: 'p1.csv', conditions: { temperatureC: 'warm' } }] }),
      ),
    ).toThrow(/\/files\/0\/conditions\/temperatureC must be number/);
    expect(() => readManifest(manifest({ fascicleManifest: 2, files: [] }))).toThrow(
      /does not match the manifest schema/,
    );
    expect(() => readManifest(manifest({ fascicleManifest: 1, files: [{ path: 'p1.csv', sweeps: [{}] }] }))).toThrow(
      /1 sweep entries for p1.csv, which has 2 sweeps/,
    );
  });
  it("records each file as the manifest names it, so a copied study gives the same conditions; a preparation keeps its sidecar's data file in its sources", () => {
    const raw = new Float64Array([1, 2, 3, 4, 5, 6]);
    for (const sub of ['copyA', 'copyB']) {
      mkdirSync(join(dir, sub), { recursive: true });
      writeFileSync(join(dir, sub, 'rec-data.bin'), new Uint8Array(raw.buffer));
      writeFileSync(
        join(dir, sub, 'rec.json'),
        JSON.stringify({ data: 'rec-data.bin', dtype: 'float64', nSweeps: 2, nSamples: 3, fs: 10000, units: 'mV' }),
      );
      writeFileSync(
        join(dir, sub, 'study.json'),
        JSON.stringify({ fascicleManifest: 1, files: [{ path: 'rec.json', conditions: { preparation: 'Q1' } }] }),
      );
    }
    const a = readManifest(join(dir, 'copyA', 'study.json'));
    const b = readManifest(join(dir, 'copyB', 'study.json'));
    expect(a.conditions).toEqual(b.conditions);
    expect(a.conditions[0].file).toBe('rec.json');
    const kept = byPreparation(a)[0].set.sources.map((s) => basename(s.path));
    expect(kept).toEqual(['study.json', 'rec.json', 'rec-data.bin']);
  });
  it('a sidecar that claims terabytes is refused from the file size, before any allocation', () => {
    const p = sidecar({ dtype: 'float64', nSweeps: 1e6, nSamples: 1e7, fs: 1000, units: 'uV' }, new Uint8Array(16));
    expect(() => readBinary(p)).toThrow(/the file has 16 bytes; expected 80000000000000 bytes/);
  });
  it('conditions must be strings, finite numbers, booleans or null: sidecar, manifest (1e400 overflows to Infinity) and API', () => {
    const bytes = new Uint8Array(new Float32Array(4).buffer);
    expect(() =>
      readBinary(
        sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'uV', conditions: 'abc' }, bytes),
      ),
    ).toThrow(/field conditions: conditions are "abc"/);
    expect(() =>
      readBinary(
        sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'uV', sweeps: [{}, { y: [1] }] }, bytes),
      ),
    ).toThrow(/field sweeps\/1: condition "y" is an array/);
    expect(() =>
      readBinary(sidecar({ dtype: 'toString', nSweeps: 2, nSamples: 2, fs: 1000, units: 'uV' }, bytes)),
    ).toThrow(/unknown dtype "toString"/);
    const p = sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'uV' }, bytes);
    const m = join(dir, 'inf-manifest.json');
    writeFileSync(
      m,
      `{"fascicleManifest": 1, "files": [{"path": "${basename(p)}", "conditions": {"preparation": "A", "z": 1e400}}]}`,
    );
    expect(() => readManifest(m)).toThrow(/field \/files\/0\/conditions: condition "z" is Infinity/);
    expect(() => readBinary(p, { conditions: { q: {} as never } })).toThrow(
      /invalid conditions: condition "q" is an object/,
    );
    writeFileSync(p, '{"data": "x.bin", "dtype": "float32", "nSweeps": 2, "nSamples": 2, "fs": 1e400, "units": "uV"}');
    expect(() => readBinary(p)).toThrow(/field fs: fs is Infinity/);
  });
  it("a sidecar's own condition key that looks like a known one is refused, naming the sidecar, field and key", () => {
    // the known keys and the typo rule are src/validate.ts KNOWN_CONDITIONS / conditionKeyTypo (the manifest's own)
    const bytes = new Uint8Array(new Float32Array(4).buffer);
    const meta = { dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'uV' };
    const p1 = sidecar({ ...meta, conditions: { temperature_C: 37 } }, bytes);
    expect(() => readBinary(p1)).toThrow(InputError);
    expect(() => readBinary(p1)).toThrow(
      new RegExp(
        `${basename(p1)}.*field conditions/temperature_C: unknown condition "temperature_C" \\(did you mean "temperatureC"\\?\\)`,
      ),
    );
    const p2 = sidecar({ ...meta, sweeps: [{ distanceMm: 20 }, { distance: 40 }] }, bytes);
    expect(() => readBinary(p2)).toThrow(
      /field sweeps\/1\/distance: unknown condition "distance" \(did you mean "distanceMm"\?\)/,
    );
    // exact known keys and columns of the user's own (far from every known key) load as before
    const p3 = sidecar(
      { ...meta, conditions: { temperatureC: 37, animalCode: 'r7' }, sweeps: [{ repeat: 0 }, { repeat: 1 }] },
      bytes,
    );
    const s = readBinary(p3);
    expect(s.conditions[1]).toMatchObject({ temperatureC: 37, animalCode: 'r7', repeat: 1 });
  });
  it('refuses a folder given as a file, naming it', () => {
    const p = sidecar({ dtype: 'float32', nSweeps: 1, nSamples: 2, fs: 1000, units: 'uV' }, new Uint8Array(8));
    writeFileSync(p, JSON.stringify({ data: '.', dtype: 'float32', nSweeps: 1, nSamples: 2, fs: 1000, units: 'uV' }));
    expect(() => readBinary(p)).toThrow(/: this is a folder; expected a regular file/);
  });
  it('names a missing file', () => {
    expect(() =>
      readManifest(manifest({ fascicleManifest: 1, files: [{ path: 'nope.csv', conditions: { preparation: 'A' } }] })),
    ).toThrow(/nope\.csv: cannot open file \(ENOENT\)/);
  });
});

describe('readBinary: a native float32 file is kept as read', () => {
  // reference: a slow reader, one DataView.getFloat32 per value, each widened to float64 by JavaScript itself
  const slowRead = (bytes: Uint8Array, little: boolean, gain = 1, offset = 0) => {
    const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    const v = (i: number) => dv.getFloat32(i * 4, little);
    // gain 1 and offset 0 are no arithmetic at all (-0 stays -0, as the loader has always read it)
    return Float64Array.from({ length: bytes.byteLength / 4 }, (_, i) =>
      gain === 1 && offset === 0 ? v(i) : v(i) * gain + offset,
    );
  };
  const sameBits = (a: ArrayLike<number>, b: ArrayLike<number>) => {
    if (a.length !== b.length) return false;
    for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) return false;
    return true;
  };
  // 64 sweeps x 10,000 samples: above the size at which the pool splits the work
  const S = 64,
    N = 10000;
  const randomBits = () => {
    const u = new Uint32Array(S * N);
    let x = 0x9e3779b9;
    for (let i = 0; i < u.length; i++) {
      x ^= x << 13;
      x ^= x >>> 17;
      x ^= x << 5;
      u[i] = x >>> 0; // every sign and exponent: subnormals about one in 256
      if ((u[i] & 0x7f800000) === 0x7f800000) u[i] ^= 0x00800000; // no NaN or infinity
    }
    u[5] = 0x80000000; // -0
    u[6] = 0x00000001; // the smallest subnormal
    return new Uint8Array(u.buffer);
  };
  it("every value equals the slow reader's bit for bit (signed zeros, subnormals, full range), on 1 and 2 threads", async () => {
    const bytes = randomBits();
    const p = sidecar({ dtype: 'float32', nSweeps: S, nSamples: N, fs: 20000, units: 'uV' }, bytes);
    const ref = slowRead(bytes, true);
    for (const t of [1, 2]) {
      setThreads(t);
      const set = readBinary(p);
      expect(deferredOf(set)?.base).toBeInstanceOf(Float32Array); // stored as read, not widened
      expect(sameBits(set.data, ref)).toBe(true);
      expect(Object.is(set.data[5], -0)).toBe(true);
    }
    await stopThreads();
    setThreads(threadsAtStart);
  }, 60_000);
  it('the same processing gives the same bits as the float64 file of the same values (baseline, blank, low-pass, average)', async () => {
    const x = new Float32Array(S * N);
    for (let i = 0; i < x.length; i++)
      x[i] = Math.sin(i * 0.0137) * 40 + Math.cos(i * 0.31) * 3 + ((i * 7919) % 101) / 50;
    const p32 = sidecar(
      {
        dtype: 'float32',
        nSweeps: S,
        nSamples: N,
        fs: 20000,
        t0Ms: -5,
        units: 'uV',
        sweeps: Array.from({ length: S }, (_, s) => ({ c: s % 4 })),
      },
      new Uint8Array(x.buffer),
    );
    const p64 = sidecar(
      {
        dtype: 'float64',
        nSweeps: S,
        nSamples: N,
        fs: 20000,
        t0Ms: -5,
        units: 'uV',
        sweeps: Array.from({ length: S }, (_, s) => ({ c: s % 4 })),
      },
      new Uint8Array(Float64Array.from(x).buffer),
    );
    const run = (p: string) => {
      const s = readBinary(p);
      const b = s.baseline({ window: [-5, -0.05] });
      const k = b.removeArtifact({ method: 'blank', window: [0, 0.3], bridge: 'linear' });
      const y = k.lowpass(3000, 4);
      return [b.data, k.data, y.data, y.groupBy('c').average().data];
    };
    for (const t of [1, 2]) {
      setThreads(t);
      const a = run(p32),
        b = run(p64);
      expect(deferredOf(readBinary(p64))).toBe(null);
      a.forEach((v, j) => expect(sameBits(v, b[j]), `stage ${j}, ${t} threads`).toBe(true));
    }
    await stopThreads();
    setThreads(threadsAtStart);
  }, 120_000);
  it('a non-finite sample of a large file kept as read names the sweep, the sample and the value', async () => {
    const x = new Float32Array(S * N).fill(1.5);
    x[40 * N + 123] = -Infinity;
    const p = sidecar({ dtype: 'float32', nSweeps: S, nSamples: N, fs: 20000, units: 'uV' }, new Uint8Array(x.buffer));
    for (const t of [1, 2]) {
      setThreads(t);
      expect(() => readBinary(p)).toThrow(/sweep 40: a non-finite sample \(-Infinity\) at sample 123/);
    }
    await stopThreads();
    setThreads(threadsAtStart);
  }, 60_000);
  it('a NaN on either side of a read chunk, at the start of the second thread and at the very end is found', async () => {
    // sweeps of 40 kB are read 6 at a time (chunks of about 256 kB), the second thread starts at sweep 32
    for (const [s, i] of [
      [5, N - 1],
      [6, 0],
      [31, N - 1],
      [32, 0],
      [S - 1, N - 1],
    ]) {
      const x = new Float32Array(S * N).fill(-0.25);
      x[s * N + i] = NaN;
      const p = sidecar(
        { dtype: 'float32', nSweeps: S, nSamples: N, fs: 20000, units: 'uV' },
        new Uint8Array(x.buffer),
      );
      for (const t of [1, 2]) {
        setThreads(t);
        expect(() => readBinary(p), `sweep ${s}, sample ${i}, ${t} threads`).toThrow(
          new RegExp(`sweep ${s}: a non-finite sample \\(NaN\\) at sample ${i};`),
        );
      }
    }
    await stopThreads();
    setThreads(threadsAtStart);
  }, 60_000);
  it('big-endian float32, a gain or an offset, or two channels are converted to float64 as before, equal to the slow reader', () => {
    const f = new Float32Array([0.1, -2.5e-8, 3.4e38, 7, 1e-45, -0.0]);
    const le = new Uint8Array(f.buffer);
    const be = new Uint8Array(le.length);
    for (let i = 0; i < le.length; i += 4) for (let j = 0; j < 4; j++) be[i + j] = le[i + 3 - j];
    const cases: [Record<string, unknown>, Uint8Array, Float64Array][] = [
      [{ byteOrder: 'big' }, be, slowRead(be, false)],
      [{ gain: 0.001 }, le, slowRead(le, true, 0.001)],
      [{ offset: 2 }, le, slowRead(le, true, 1, 2)],
    ];
    for (const [extra, bytes, ref] of cases) {
      const set = readBinary(
        sidecar({ dtype: 'float32', nSweeps: 2, nSamples: 3, fs: 1000, units: 'mV', ...extra }, bytes),
      );
      expect(deferredOf(set)).toBe(null);
      expect(sameBits(set.data, ref)).toBe(true);
    }
    const two = readBinary(
      sidecar({ dtype: 'float32', nSweeps: 1, nSamples: 3, nChannels: 2, channel: 1, fs: 1000, units: 'mV' }, le),
    );
    expect(deferredOf(two)).toBe(null);
    expect(sameBits(two.data, slowRead(le, true).subarray(3, 6))).toBe(true);
  });
});
