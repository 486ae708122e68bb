/**
 * Raw binary sample loader described by a JSON sidecar:
 * {
 *   "data": "rec.bin",            file with the samples, relative to the sidecar
 *   "dtype": "int16" | "float32" | "float64",
 *   "byteOrder": "little" | "big",           default little
 *   "layout": "sweep-major" | "interleaved", default sweep-major
 *   "nSweeps": 40, "nSamples": 2500, "nChannels": 1, "channel": 0,
 *   "gain": 0.001, "offset": 0,              value = raw * gain + offset (default 1, 0)
 *   "fs": 50000, "t0Ms": -1, "units": "mV",
 *   "conditions": { ... },  "sweeps": [ { ... } per sweep ]
 * }
 * sweep-major: [sweep][channel][sample]; interleaved: [sweep][sample][channel].
 */
import { dirname, resolve } from 'node:path';
import { InputError, OptionError, ThreadError } from '../errors';
import { conditionKeyTypo, conditionsProblem, nearest } from '../validate';
import { checkedSweepSet, type SweepSet, type Conditions } from '../sweeps/SweepSet';
import { parseSignalUnit } from '../sweeps/units';
import { closeSync } from 'node:fs';
import { allocSamples, lazySource, openInput, readInput } from './files';
import { runSweeps, sharedSamples } from '../parallel/pool';
import { VERSION } from '../version';
import { asRead, float32Samples } from '../sweeps/storage';
import { memoryOf } from '../parallel/simd';

const NATIVE_LITTLE = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

export interface BinarySidecar {
  data: string;
  dtype: 'int16' | 'float32' | 'float64';
  byteOrder?: 'little' | 'big';
  layout?: 'sweep-major' | 'interleaved';
  nSweeps: number;
  nSamples: number;
  nChannels?: number;
  channel?: number;
  gain?: number;
  offset?: number;
  fs: number;
  t0Ms?: number;
  units: string;
  conditions?: Record<string, string | number | boolean | null>;
  sweeps?: Record<string, string | number | boolean | null>[];
}

const BYTES = { int16: 2, float32: 4, float64: 8 } as const;
/** The keys a sidecar may hold (BinarySidecar): any other is refused with the nearest valid name. */
export const SIDECAR_KEYS = [
  'data',
  'dtype',
  'byteOrder',
  'layout',
  'nSweeps',
  'nSamples',
  'nChannels',
  'channel',
  'gain',
  'offset',
  'fs',
  't0Ms',
  'units',
  'conditions',
  'sweeps',
] as const;

/** Load a binary recording from its JSON sidecar. @throws InputError naming the sidecar field or data file. */
export function readBinary(sidecarPath: string, extra: { conditions?: Conditions } = {}): SweepSet {
  const { bytes: jb, source: jsrc } = readInput(sidecarPath);
  let meta: BinarySidecar;
  try {
    meta = JSON.parse(
      Buffer.from(jb)
        .toString('utf8')
        .replace(/^\uFEFF/, ''),
    );
  } catch (e) {
    throw new InputError({ file: sidecarPath }, `invalid JSON (${(e as Error).message})`, 'a JSON sidecar object');
  }
  // numbers as JavaScript prints them (JSON would print an overflowing 1e400 as null)
  const show = (v: unknown) => (typeof v === 'number' ? String(v) : JSON.stringify(v));
  const bad = (field: string, problem: string, expected: string): never => {
    throw new InputError({ file: sidecarPath, field }, problem, expected);
  };
  if (!meta || typeof meta !== 'object' || Array.isArray(meta)) bad('(root)', 'not an object', 'a JSON object');
  for (const k of Object.keys(meta)) {
    if (!(SIDECAR_KEYS as readonly string[]).includes(k)) {
      const near = nearest(k, SIDECAR_KEYS);
      bad(k, `unknown key "${k}"${near ? ` (did you mean "${near}"?)` : ''}`, `one of ${SIDECAR_KEYS.join(', ')}`);
    }
  }
  if (typeof meta.data !== 'string' || !meta.data)
    bad('data', `data is ${show(meta.data)}`, 'the path of the binary file');
  if (typeof meta.dtype !== 'string' || !Object.hasOwn(BYTES, meta.dtype))
    bad('dtype', `unknown dtype ${show(meta.dtype)}`, 'one of int16, float32, float64');
  const order = meta.byteOrder ?? 'little';
  if (order !== 'little' && order !== 'big') bad('byteOrder', `unknown byteOrder ${show(order)}`, '"little" or "big"');
  const layout = meta.layout ?? 'sweep-major';
  if (layout !== 'sweep-major' && layout !== 'interleaved')
    bad('layout', `unknown layout ${show(layout)}`, '"sweep-major" or "interleaved"');
  const int = (f: keyof BinarySidecar, v: unknown, lo: number) => {
    if (!Number.isInteger(v) || (v as number) < lo) bad(f, `${f} is ${show(v)}`, `an integer >= ${lo}`);
    return v as number;
  };
  const nSweeps = int('nSweeps', meta.nSweeps, 1);
  const nSamples = int('nSamples', meta.nSamples, 2);
  const nCh = int('nChannels', meta.nChannels ?? 1, 1);
  const ch = int('channel', meta.channel ?? 0, 0);
  if (ch >= nCh) bad('channel', `channel ${ch} with ${nCh} channels`, `0 <= channel < nChannels`);
  const gain = meta.gain ?? 1;
  const offset = meta.offset ?? 0;
  if (typeof gain !== 'number' || !Number.isFinite(gain) || gain === 0)
    bad('gain', `gain is ${show(gain)}`, 'a finite non-zero number');
  if (typeof offset !== 'number' || !Number.isFinite(offset))
    bad('offset', `offset is ${show(offset)}`, 'a finite number');
  // the largest value the samples can take must be finite, with room to sum a sweep
  const fullScale = meta.dtype === 'int16' ? 32768 : meta.dtype === 'float32' ? 3.4028234663852886e38 : 0;
  if (fullScale && !Number.isFinite((fullScale * Math.abs(gain) + Math.abs(offset)) * nSamples)) {
    bad(
      'gain',
      `gain ${show(gain)} (offset ${show(offset)}) makes ${meta.dtype} full scale ${fullScale * Math.abs(gain) + Math.abs(offset)}, beyond the range of finite numbers over a sweep`,
      `a gain in the units per raw step (${meta.dtype} full scale times gain must stay far below 1e308)`,
    );
  }
  if (typeof meta.fs !== 'number' || !(meta.fs > 0) || !Number.isFinite(meta.fs))
    bad('fs', `fs is ${show(meta.fs)}`, 'a sample rate in Hz > 0');
  const t0Ms = meta.t0Ms ?? 0;
  if (typeof t0Ms !== 'number' || !Number.isFinite(t0Ms)) bad('t0Ms', `t0Ms is ${show(t0Ms)}`, 'a finite time in ms');
  const units = typeof meta.units === 'string' ? parseSignalUnit(meta.units) : undefined;
  if (!units) bad('units', `unknown units ${show(meta.units)}`, 'one of V, mV, uV');
  if (meta.sweeps !== undefined && (!Array.isArray(meta.sweeps) || meta.sweeps.length !== nSweeps)) {
    bad(
      'sweeps',
      `sweeps lists ${Array.isArray(meta.sweeps) ? meta.sweeps.length : 'no'} entries`,
      `one conditions object per sweep (${nSweeps})`,
    );
  }
  const cond = (field: string, x: unknown) => {
    const problem = conditionsProblem(x);
    if (problem) bad(field, problem, 'an object of strings, finite numbers, booleans or null');
    // a key that looks like a known condition (distanceMm written distance_mm) would leave that condition unseen
    for (const k of Object.keys(x as object)) {
      const near = conditionKeyTypo(k);
      if (near)
        bad(
          `${field}/${k}`,
          `unknown condition "${k}" (did you mean "${near}"?); it looks like the known condition "${near}", ` +
            'whose value fascicle would then not see',
          `"${near}", or another name for a column of your own`,
        );
    }
  };
  if (meta.conditions !== undefined) cond('conditions', meta.conditions);
  meta.sweeps?.forEach((c, i) => cond(`sweeps/${i}`, c));
  if (extra.conditions !== undefined && conditionsProblem(extra.conditions))
    throw new OptionError(
      `invalid conditions: ${conditionsProblem(extra.conditions)}; must be an object of strings, finite numbers, booleans or null`,
    );
  const dataPath = resolve(dirname(sidecarPath), meta.data);
  const { fd, stat } = openInput(dataPath);
  const source = lazySource(dataPath, stat);
  source.partOf = sidecarPath;
  const w = BYTES[meta.dtype];
  const expectBytes = nSweeps * nSamples * nCh * w;
  let out: Float64Array | null = null;
  // a native float32 file of one channel with gain 1 and offset 0 stays float32 as read (half the memory,
  // no widening pass); every verb widens each value exactly where it uses it (src/sweeps/storage.ts)
  let kept: Float32Array | null = null;
  const asIs =
    meta.dtype === 'float32' && nCh === 1 && gain === 1 && offset === 0 && (order === 'little') === NATIVE_LITTLE;
  try {
    // the size is checked before anything is allocated, so a hostile sidecar cannot ask for terabytes
    if (stat.size !== expectBytes) {
      throw new InputError(
        { file: dataPath },
        `the file has ${stat.size} bytes`,
        `${expectBytes} bytes = ${nSweeps} sweeps x ${nSamples} samples x ${nCh} channels x ${w} bytes (${meta.dtype}) from ${sidecarPath}`,
      );
    }
    if (asIs) {
      try {
        kept = float32Samples(nSweeps * nSamples, { overwritten: true }); // loadAsRead writes every sample
      } catch (e) {
        if (!(e instanceof RangeError)) throw e;
        throw new InputError(
          { file: dataPath },
          `${nSweeps} sweeps x ${nSamples} samples need ${(expectBytes / 2 ** 30).toPrecision(3)} GB of memory as 32-bit samples, which could not be allocated (${e.message})`,
          'a recording that fits in memory (load part of it, or split the file)',
        );
      }
    } else out = allocSamples(nSweeps * nSamples, dataPath, `${nSweeps} sweeps x ${nSamples} samples`);
    // read and convert in chunks of about 256 kB per thread (whole sweeps), sweeps split across threads: a chunk
    // is still in the core's cache when the finiteness check (and any conversion) reads it right after the read
    // (2 MB chunks took about 20% more CPU time per float32 load of 1,000 x 20,000 samples, tests/bench/scipy.mjs)
    const chunkSweeps = Math.max(1, Math.floor((1 << 18) / (nSamples * nCh * w)));
    let firstBad: number | undefined;
    try {
      const found = kept
        ? runSweeps(
            'loadAsRead',
            { fd, nSamples, out: kept, chunkSweeps, memory: memoryOf(kept) },
            nSweeps,
            nSweeps * nSamples,
          )
        : runSweeps(
            'load',
            {
              fd,
              dtype: meta.dtype,
              little: order === 'little',
              interleaved: layout === 'interleaved',
              nSamples,
              nChannels: nCh,
              channel: ch,
              gain,
              offset,
              out: out!,
              chunkSweeps,
            },
            nSweeps,
            nSweeps * nSamples * nCh,
          );
      firstBad = found.find((i) => i >= 0);
    } catch (e) {
      // a worker thread that stopped is not a fault of the file
      if (e instanceof ThreadError) throw e;
      throw new InputError(
        { file: dataPath },
        `reading failed (${(e as Error).message})`,
        `${expectBytes} readable bytes that do not change while loading`,
      );
    }
    if (firstBad !== undefined) {
      const s = Math.floor(firstBad / nSamples);
      throw new InputError(
        { file: dataPath, sweep: s },
        `a non-finite sample (${(kept ?? out!)[firstBad]}) at sample ${firstBad % nSamples}`,
        'finite samples',
      );
    }
  } finally {
    closeSync(fd);
  }
  const base = { ...(meta.conditions ?? {}), ...(extra.conditions ?? {}) };
  const conditions: Conditions[] = [];
  for (let s = 0; s < nSweeps; s++)
    conditions.push({ ...base, ...(meta.sweeps?.[s] ?? {}), file: sidecarPath, fileSweep: s });
  return checkedSweepSet({
    data: kept ? asRead(kept) : out!,
    nSweeps,
    nSamples,
    fs: meta.fs,
    t0Ms,
    units: units!,
    conditions,
    sources: [jsrc, source],
    history: [
      {
        verb: 'readBinary',
        options: {
          path: sidecarPath,
          dtype: meta.dtype,
          byteOrder: order,
          layout,
          nChannels: nCh,
          channel: ch,
          gain,
          offset,
        },
        version: VERSION,
      },
    ],
  });
}
