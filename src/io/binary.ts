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
import { InputError } from '../errors';
import { SweepSet, type Conditions } from '../sweeps/SweepSet';
import { parseSignalUnit } from '../sweeps/units';
import { readInput } from './files';
import { VERSION } from '../version';

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

/** Load a binary recording from its JSON sidecar. @throws InputError naming the sidecar field or data file. */
export function readBinary(sidecarPath: string, extra: { conditions?: Conditions } = {}): SweepSet {
  const { bytes: jb, source: jsrc } = readInput(sidecarPath);
  let meta: BinarySidecar;
  try {
    meta = JSON.parse(Buffer.from(jb).toString('utf8').replace(/^\uFEFF/, ''));
  } catch (e) {
    throw new InputError({ file: sidecarPath }, `invalid JSON (${(e as Error).message})`, 'a JSON sidecar object');
  }
  const bad = (field: string, problem: string, expected: string): never => {
    throw new InputError({ file: sidecarPath, field }, problem, expected);
  };
  if (!meta || typeof meta !== 'object' || Array.isArray(meta)) bad('(root)', 'not an object', 'a JSON object');
  if (typeof meta.data !== 'string' || !meta.data) bad('data', `data is ${JSON.stringify(meta.data)}`, 'the path of the binary file');
  if (!(meta.dtype in BYTES)) bad('dtype', `unknown dtype ${JSON.stringify(meta.dtype)}`, 'one of int16, float32, float64');
  const order = meta.byteOrder ?? 'little';
  if (order !== 'little' && order !== 'big') bad('byteOrder', `unknown byteOrder ${JSON.stringify(order)}`, '"little" or "big"');
  const layout = meta.layout ?? 'sweep-major';
  if (layout !== 'sweep-major' && layout !== 'interleaved') bad('layout', `unknown layout ${JSON.stringify(layout)}`, '"sweep-major" or "interleaved"');
  const int = (f: keyof BinarySidecar, v: unknown, lo: number) => {
    if (!Number.isInteger(v) || (v as number) < lo) bad(f, `${f} is ${JSON.stringify(v)}`, `an integer >= ${lo}`);
    return v as number;
  };
  const nSweeps = int('nSweeps', meta.nSweeps, 1);
  const nSamples = int('nSamples', meta.nSamples, 2);
  const nCh = int('nChannels', meta.nChannels ?? 1, 1);
  const ch = int('channel', meta.channel ?? 0, 0);
  if (ch >= nCh) bad('channel', `channel ${ch} with ${nCh} channels`, `0 <= channel < nChannels`);
  const gain = meta.gain ?? 1;
  const offset = meta.offset ?? 0;
  if (typeof gain !== 'number' || !Number.isFinite(gain) || gain === 0) bad('gain', `gain is ${JSON.stringify(gain)}`, 'a finite non-zero number');
  if (typeof offset !== 'number' || !Number.isFinite(offset)) bad('offset', `offset is ${JSON.stringify(offset)}`, 'a finite number');
  if (typeof meta.fs !== 'number' || !(meta.fs > 0) || !Number.isFinite(meta.fs)) bad('fs', `fs is ${JSON.stringify(meta.fs)}`, 'a sample rate in Hz > 0');
  const t0Ms = meta.t0Ms ?? 0;
  if (typeof t0Ms !== 'number' || !Number.isFinite(t0Ms)) bad('t0Ms', `t0Ms is ${JSON.stringify(t0Ms)}`, 'a finite time in ms');
  const units = typeof meta.units === 'string' ? parseSignalUnit(meta.units) : undefined;
  if (!units) bad('units', `unknown units ${JSON.stringify(meta.units)}`, 'one of V, mV, uV');
  if (meta.sweeps !== undefined && (!Array.isArray(meta.sweeps) || meta.sweeps.length !== nSweeps)) {
    bad('sweeps', `sweeps lists ${Array.isArray(meta.sweeps) ? meta.sweeps.length : 'no'} entries`, `one conditions object per sweep (${nSweeps})`);
  }
  const dataPath = resolve(dirname(sidecarPath), meta.data);
  const { bytes, source } = readInput(dataPath);
  const w = BYTES[meta.dtype];
  const expectBytes = nSweeps * nSamples * nCh * w;
  if (bytes.length !== expectBytes) {
    throw new InputError({ file: dataPath }, `the file has ${bytes.length} bytes`, `${expectBytes} bytes = ${nSweeps} sweeps x ${nSamples} samples x ${nCh} channels x ${w} bytes (${meta.dtype}) from ${sidecarPath}`);
  }
  const little = order === 'little';
  const zeroCopy = meta.dtype === 'float64' && layout === 'sweep-major' && nCh === 1 && gain === 1 && offset === 0 && little === (new Uint8Array(new Uint16Array([1]).buffer)[0] === 1) && bytes.byteOffset % 8 === 0;
  // float64, native order, one channel, no scaling: the file's bytes are the samples (no copy)
  const out = zeroCopy ? new Float64Array(bytes.buffer, bytes.byteOffset, nSweeps * nSamples) : new Float64Array(nSweeps * nSamples);
  const native = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
  let src: ArrayLike<number>;
  if (little === native) {
    src = meta.dtype === 'int16' ? new Int16Array(bytes.buffer, bytes.byteOffset, bytes.length / 2)
      : meta.dtype === 'float32' ? new Float32Array(bytes.buffer, bytes.byteOffset, bytes.length / 4)
      : new Float64Array(bytes.buffer, bytes.byteOffset, bytes.length / 8);
  } else {
    const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.length);
    const m = bytes.length / w;
    const arr = new Float64Array(m);
    for (let i = 0; i < m; i++) arr[i] = meta.dtype === 'int16' ? dv.getInt16(i * 2, little) : meta.dtype === 'float32' ? dv.getFloat32(i * 4, little) : dv.getFloat64(i * 8, little);
    src = arr;
  }
  const identity = gain === 1 && offset === 0;
  for (let s = 0; s < nSweeps && !zeroCopy; s++) {
    const o = s * nSamples;
    if (layout === 'sweep-major') {
      const b = (s * nCh + ch) * nSamples;
      if (identity) for (let i = 0; i < nSamples; i++) out[o + i] = src[b + i];
      else for (let i = 0; i < nSamples; i++) out[o + i] = src[b + i] * gain + offset;
    } else {
      const b = s * nSamples * nCh + ch;
      for (let i = 0; i < nSamples; i++) out[o + i] = src[b + i * nCh] * gain + offset;
    }
  }
  if (meta.dtype !== 'int16') {
    for (let i = 0; i < out.length; i++) {
      if (!Number.isFinite(out[i])) {
        const s = Math.floor(i / nSamples);
        throw new InputError({ file: dataPath, sweep: s }, `a non-finite sample (${out[i]}) at sample ${i % nSamples}`, 'finite samples');
      }
    }
  }
  const base = { ...(meta.conditions ?? {}), ...(extra.conditions ?? {}) };
  const conditions: Conditions[] = [];
  for (let s = 0; s < nSweeps; s++) conditions.push({ ...base, ...(meta.sweeps?.[s] ?? {}), file: sidecarPath, fileSweep: s });
  return new SweepSet({
    data: out, nSweeps, nSamples, fs: meta.fs, t0Ms, units: units!, conditions,
    sources: [jsrc, source],
    history: [{ verb: 'readBinary', options: { path: sidecarPath, dtype: meta.dtype, byteOrder: order, layout, nChannels: nCh, channel: ch, gain, offset }, version: VERSION }],
  });
}
