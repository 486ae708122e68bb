/** Writers for the loaders' formats (used by the demo generator and by exports). */
import { writeFileSync } from 'node:fs';
import type { SweepSet } from '../sweeps/SweepSet';

/** Write a wide delimited file: a time column then one column per sweep; decimal comma optional. */
export function writeWide(
  path: string,
  set: SweepSet,
  opts: { delimiter?: ',' | ';' | '\t'; decimalComma?: boolean; digits?: number; labels?: string[] } = {},
): void {
  const d = opts.delimiter ?? ',';
  const dc = !!opts.decimalComma;
  if (dc && d === ',') throw new Error('decimal comma needs a ";" or tab delimiter');
  const digits = opts.digits ?? 2;
  const fmt = (v: number, k: number) => {
    const s = Number(v.toFixed(k)).toString();
    return dc ? s.replace('.', ',') : s;
  };
  const labels = opts.labels ?? Array.from({ length: set.nSweeps }, (_, i) => `sweep ${i + 1}`);
  const data = set.data;
  const lines = [[`time (ms)`, ...labels.map((l) => `${l} (${set.units})`)].join(d)];
  for (let i = 0; i < set.nSamples; i++) {
    const row = [fmt(set.timeAt(i), 4)];
    for (let s = 0; s < set.nSweeps; s++) row.push(fmt(data[s * set.nSamples + i], digits));
    lines.push(row.join(d));
  }
  writeFileSync(path, lines.join('\n') + '\n');
}

/** Write samples as binary (int16 with gain, or float32), sweep-major, little-endian; returns the sidecar object. */
export function writeBinary(
  dataPath: string,
  set: SweepSet,
  dtype: 'int16' | 'float32',
  gain = 1,
): {
  dtype: string;
  gain: number;
  offset: number;
  nSweeps: number;
  nSamples: number;
  fs: number;
  t0Ms: number;
  units: string;
  byteOrder: string;
  layout: string;
} {
  const data = set.data;
  const n = data.length;
  let bytes: Uint8Array;
  if (dtype === 'int16') {
    const a = new Int16Array(n);
    for (let i = 0; i < n; i++) {
      const v = Math.round(data[i] / gain);
      if (v > 32767 || v < -32768) throw new Error(`sample ${i} (${data[i]}) overflows int16 with gain ${gain}`);
      a[i] = v;
    }
    bytes = new Uint8Array(a.buffer);
  } else {
    bytes = new Uint8Array(Float32Array.from(set.data).buffer);
  }
  writeFileSync(dataPath, bytes);
  return {
    dtype,
    gain,
    offset: 0,
    nSweeps: set.nSweeps,
    nSamples: set.nSamples,
    fs: set.fs,
    t0Ms: set.t0Ms,
    units: set.units,
    byteOrder: 'little',
    layout: 'sweep-major',
  };
}
