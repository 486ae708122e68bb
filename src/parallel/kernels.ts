/**
 * Per-sweep kernels that the thread pool (./pool.ts) runs on a range of sweeps
 * [s0, s1). Each one is also what the main thread runs for its own share, so a
 * result is the same bit for bit whatever the split. Arguments hold only numbers
 * and typed arrays (shared when a worker takes part).
 */
import { readSync } from 'node:fs';
import { sosfiltfilt, sosfiltfiltPairExt, filtfiltWork } from '../signal/sosfilt';
import type { Sos } from '../signal/butter';
import { PLAIN_BLOCK, flushBlock, plainRow } from '../io/plainRows';
import { normalRows, sineCoefficients, type SineParts } from '../signal/sinefit';
import { resamplePolyInto } from '../signal/resample';
import { bridgeGap } from '../signal/bridge';
import { allFinite32, allFinite64, inPlaceCheck32 } from './simd';

/**
 * Stored samples: float64, or float32 as read from a float32 file (each value widened
 * exactly to float64 where it is used, so the numbers are those of a float64 copy).
 */
export type Samples = Float64Array | Float32Array;

/**
 * A per-sweep correction that baseline and template artifact subtraction leave
 * pending (see DeferredSamples in src/verbs/types.ts): a line
 * level + slope (i - center) and then scale x the sweep's group template are
 * subtracted. The arithmetic is exactly the verbs' own, so a deferred result equals
 * the eager one bit for bit.
 */
export interface Correction {
  line: boolean;
  level: Float64Array;
  slope: Float64Array;
  center: number;
  template: boolean;
  scale: Float64Array;
  group: Int32Array;
  templates: Float64Array;
  /** then samples bridgeFrom..bridgeTo (inclusive) bridged (artifact blanking), linear or cubic Hermite */
  bridge: boolean;
  bridgeFrom: number;
  bridgeTo: number;
  bridgeHermite: boolean;
}

/** A correction that changes nothing (fields to be overridden). */
export function noCorrection(): Correction {
  return {
    line: false,
    level: new Float64Array(0),
    slope: new Float64Array(0),
    center: 0,
    template: false,
    scale: new Float64Array(0),
    group: new Int32Array(0),
    templates: new Float64Array(0),
    bridge: false,
    bridgeFrom: 0,
    bridgeTo: -1,
    bridgeHermite: false,
  };
}

/** Write samples [i0, i1) of corrected sweep s of base (n samples per sweep) to dst[o + i]. */
export function correctSweep(
  base: Samples,
  n: number,
  c: Correction,
  s: number,
  dst: Float64Array,
  o: number,
  i0 = 0,
  i1 = n,
): void {
  if (c.bridge) {
    if (i0 !== 0 || i1 !== n) throw new Error('a pending bridge is applied to whole sweeps only');
    lineAndTemplate(base, n, c, s, dst, o, 0, n);
    bridgeGap(
      o === 0 && dst.length === n ? dst : dst.subarray(o, o + n),
      c.bridgeFrom,
      c.bridgeTo,
      c.bridgeHermite ? 'hermite' : 'linear',
    );
    return;
  }
  lineAndTemplate(base, n, c, s, dst, o, i0, i1);
}

function lineAndTemplate(
  base: Samples,
  n: number,
  c: Correction,
  s: number,
  dst: Float64Array,
  o: number,
  i0: number,
  i1: number,
): void {
  const b = s * n;
  if (c.line && c.template && c.slope[s] === 0) {
    // the usual pair (baseline, then template) in one pass, same arithmetic order
    const l0 = c.level[s],
      k = c.scale[s],
      t = c.group[s] * n,
      T = c.templates;
    for (let i = i0; i < i1; i++) dst[o + i] = base[b + i] - l0 - k * T[t + i];
    return;
  }
  if (c.line) {
    const l0 = c.level[s],
      k = c.slope[s];
    if (k === 0) for (let i = i0; i < i1; i++) dst[o + i] = base[b + i] - l0;
    else for (let i = i0; i < i1; i++) dst[o + i] = base[b + i] - (l0 + k * (i - c.center));
  } else for (let i = i0; i < i1; i++) dst[o + i] = base[b + i];
  if (c.template) {
    const k = c.scale[s],
      t = c.group[s] * n - o,
      T = c.templates;
    for (let i = o + i0, e = o + i1; i < e; i++) dst[i] = dst[i] - k * T[t + i];
  }
}

export interface CorrectArgs {
  x: Samples;
  out: Float64Array;
  n: number;
  c: Correction;
}
/** Apply a pending correction to sweeps s0..s1-1. */
function correct(a: CorrectArgs, s0: number, s1: number): number {
  for (let s = s0; s < s1; s++) correctSweep(a.x, a.n, a.c, s, a.out, s * a.n);
  return -1;
}

export interface FiltfiltArgs {
  x: Samples;
  c: Correction | null;
  out: Float64Array;
  n: number;
  sos: number[][];
  padlen: number;
}
/**
 * Zero-phase filtering of sweeps s0..s1-1 (pairs share one interleaved loop); a
 * pending correction is applied to each sweep on the way in.
 */
function filtfilt(a: FiltfiltArgs, s0: number, s1: number): number {
  const { x, c, out, n, padlen } = a;
  const sos = a.sos as unknown as Sos;
  const work = filtfiltWork(sos, n, padlen);
  const work2 = filtfiltWork(sos, n, padlen);
  const ta = c && sos.length !== 2 ? new Float64Array(n) : null;
  const input = (s: number, t: Float64Array | null) => {
    if (!c || !t) return x.subarray(s * n, (s + 1) * n);
    correctSweep(x, n, c, s, t, 0);
    return t;
  };
  // a sweep goes (corrected, when a correction is pending) straight into the work buffer
  const place = (s: number, ext: Float64Array) => {
    if (c) correctSweep(x, n, c, s, ext.subarray(padlen, padlen + n), 0);
    else ext.set(x.subarray(s * n, (s + 1) * n), padlen);
  };
  let s = s0;
  if (sos.length === 2) {
    for (; s + 1 < s1; s += 2) {
      place(s, work.ext);
      place(s + 1, work2.ext);
      sosfiltfiltPairExt(
        sos,
        out.subarray(s * n, (s + 1) * n),
        out.subarray((s + 1) * n, (s + 2) * n),
        work,
        work2,
        n,
        padlen,
      );
    }
  } else {
    for (; s + 1 < s1; s += 2) {
      sosfiltfilt(sos, input(s, ta), { padlen, work, out: out.subarray(s * n, (s + 1) * n) });
      sosfiltfilt(sos, input(s + 1, ta), { padlen, work, out: out.subarray((s + 1) * n, (s + 2) * n) });
    }
  }
  if (s < s1)
    sosfiltfilt(sos, input(s, c ? (ta ?? new Float64Array(n)) : null), {
      padlen,
      work,
      out: out.subarray(s * n, (s + 1) * n),
    });
  return -1;
}

export interface LoadArgs {
  fd: number;
  dtype: 'int16' | 'float32' | 'float64';
  little: boolean;
  interleaved: boolean;
  nSamples: number;
  nChannels: number;
  channel: number;
  gain: number;
  offset: number;
  out: Float64Array;
  chunkSweeps: number;
}
const BYTES = { int16: 2, float32: 4, float64: 8 } as const;
const NATIVE_LITTLE = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
let scratch = new ArrayBuffer(0);

/**
 * True when the sum of x[from..to) is finite: then every value is finite (a NaN or
 * an infinity makes the sum non-finite). A false answer may also be an overflow of
 * the sum, so callers rescan value by value. Four partial sums keep the additions
 * independent (about four times faster than one chain).
 */
export function finiteSum(x: Float64Array, from: number, to: number): boolean {
  let a = 0,
    b = 0,
    c = 0,
    d = 0,
    i = from;
  for (; i + 3 < to; i += 4) {
    a += x[i];
    b += x[i + 1];
    c += x[i + 2];
    d += x[i + 3];
  }
  for (; i < to; i++) a += x[i];
  const t = a + b + c + d;
  return t - t === 0;
}
/**
 * finiteSum on float32 values (each widened exactly to float64 before it is added: a sum of two
 * float32 values cannot overflow in float64, so x[i] + x[i + 4] is finite exactly when both are).
 * Pairs halve the dependent additions (about 15% faster than four plain chains).
 */
export function finiteSum32(x: Float32Array, from: number, to: number): boolean {
  let a = 0,
    b = 0,
    c = 0,
    d = 0,
    i = from;
  for (; i + 7 < to; i += 8) {
    a += x[i] + x[i + 4];
    b += x[i + 1] + x[i + 5];
    c += x[i + 2] + x[i + 6];
    d += x[i + 3] + x[i + 7];
  }
  for (; i < to; i++) a += x[i];
  const t = a + b + c + d;
  return t - t === 0;
}
/** Whether float64 x[from..to) are all finite: the SIMD kernel of ./simd.ts, or finiteSum without it. */
function finite64(x: Float64Array, from: number, to: number): boolean {
  return allFinite64(x, from, to) ?? finiteSum(x, from, to);
}
/** Whether float32 x[from..to) are all finite: the SIMD kernel of ./simd.ts, or finiteSum32 without it. */
function finite32(x: Float32Array, from: number, to: number): boolean {
  return allFinite32(x, from, to) ?? finiteSum32(x, from, to);
}
/**
 * Read sweeps s0..s1-1 of a raw binary file (every sweep a contiguous block of
 * nChannels x nSamples values) in chunks, convert to float64 with gain and offset
 * and write them to out. Returns the flat index of the first non-finite value
 * written, or -1.
 */
function load(a: LoadArgs, s0: number, s1: number): number {
  const { dtype, little, interleaved, nSamples: n, nChannels: nc, channel: ch, gain, offset, out } = a;
  const w = BYTES[dtype];
  const sweepBytes = n * nc * w;
  const identity = gain === 1 && offset === 0;
  const direct = dtype === 'float64' && nc === 1 && identity && little === NATIVE_LITTLE;
  for (let s = s0; s < s1; s += a.chunkSweeps) {
    const k = Math.min(a.chunkSweeps, s1 - s);
    const bytes = k * sweepBytes;
    let dst: Uint8Array;
    if (direct) dst = new Uint8Array(out.buffer, out.byteOffset + s * n * 8, bytes);
    else {
      if (scratch.byteLength < bytes) scratch = new ArrayBuffer(bytes);
      dst = new Uint8Array(scratch, 0, bytes);
    }
    let got = 0;
    while (got < bytes) {
      const r = readSync(a.fd, dst, got, bytes - got, s * sweepBytes + got);
      if (r <= 0) throw new Error(`short read at byte ${s * sweepBytes + got}`);
      got += r;
    }
    const o = s * n;
    if (direct) {
      if (!finite64(out, o, o + k * n)) for (let i = o, e = o + k * n; i < e; i++) if (out[i] - out[i] !== 0) return i;
      continue;
    }
    let src: ArrayLike<number>;
    if (little === NATIVE_LITTLE) {
      src =
        dtype === 'int16'
          ? new Int16Array(scratch, 0, bytes / 2)
          : dtype === 'float32'
            ? new Float32Array(scratch, 0, bytes / 4)
            : new Float64Array(scratch, 0, bytes / 8);
    } else {
      const dv = new DataView(scratch, 0, bytes);
      const m = bytes / w;
      const arr = new Float64Array(m);
      for (let i = 0; i < m; i++)
        arr[i] =
          dtype === 'int16'
            ? dv.getInt16(i * 2, little)
            : dtype === 'float32'
              ? dv.getFloat32(i * 4, little)
              : dv.getFloat64(i * 8, little);
      src = arr;
    }
    // float32 read as is: check the chunk while it is in cache, at half the bytes of the result
    const checked = dtype === 'float32' && identity && !interleaved && nc === 1 && src instanceof Float32Array;
    let bad = -1;
    if (checked && !finite32(src as Float32Array, 0, k * n)) {
      for (let i = 0; i < k * n; i++)
        if (src[i] - src[i] !== 0) {
          bad = o + i;
          break;
        }
    }
    for (let j = 0; j < k; j++) {
      const d = o + j * n;
      if (!interleaved) {
        const b = (j * nc + ch) * n;
        if (identity)
          out.set((src as Float32Array | Int16Array | Float64Array).subarray(b, b + n), d); // native conversion
        else for (let i = 0; i < n; i++) out[d + i] = src[b + i] * gain + offset;
      } else {
        const b = j * n * nc + ch;
        for (let i = 0; i < n; i++) out[d + i] = src[b + i * nc] * gain + offset;
      }
    }
    // int16 x a finite gain + a finite offset is always finite
    if (bad >= 0) return bad; // after the chunk is written, so the caller can show the value
    if (dtype !== 'int16' && !checked && !finite64(out, o, o + k * n))
      for (let i = o, e = o + k * n; i < e; i++) if (out[i] - out[i] !== 0) return i;
  }
  return -1;
}

export interface LoadAsReadArgs {
  fd: number;
  nSamples: number;
  out: Float32Array;
  chunkSweeps: number;
  /** the WebAssembly memory that holds out (storage.ts float32Samples), to check each block where it lies; or null */
  memory?: WebAssembly.Memory | null;
}
/**
 * Read sweeps s0..s1-1 of a native-order float32 file (one channel, sweep after sweep)
 * straight into out, which keeps them as float32 (see Samples). Returns the flat index
 * of the first non-finite value, or -1. No scratch copy and no widening: half the
 * memory traffic of load().
 */
function loadAsRead(a: LoadAsReadArgs, s0: number, s1: number): number {
  const { fd, nSamples: n, out } = a;
  const inPlace = a.memory ? inPlaceCheck32(a.memory) : null;
  for (let s = s0; s < s1; s += a.chunkSweeps) {
    const k = Math.min(a.chunkSweeps, s1 - s);
    const bytes = k * n * 4;
    const dst = new Uint8Array(out.buffer, out.byteOffset + s * n * 4, bytes);
    let got = 0;
    while (got < bytes) {
      const r = readSync(fd, dst, got, bytes - got, s * n * 4 + got);
      if (r <= 0) throw new Error(`short read at byte ${s * n * 4 + got}`);
      got += r;
    }
    const o = s * n;
    const ok = inPlace ? inPlace(out, o, o + k * n) : finite32(out, o, o + k * n);
    if (!ok) for (let i = o, e = o + k * n; i < e; i++) if (out[i] - out[i] !== 0) return i;
  }
  return -1;
}

export interface CsvArgs {
  bytes: Uint8Array;
  starts: Float64Array;
  firstRows: Float64Array;
  ncol: number;
  rowsMax: number;
  dec: number;
  dcode: number;
  out: Float64Array;
  t: Float64Array;
}
/**
 * Parse parts p0..p1-1 of the data region of a wide delimited file (part p: bytes
 * [starts[p], starts[p+1]), first row firstRows[p]) with the plain-row fast path.
 * Returns the number of rows, or -1 as soon as a line is not plain (empty, a
 * comment, another number syntax, a wrong field count): the caller then parses the
 * whole file with the exact parser, which names the place of any error.
 */
function csvWide(a: CsvArgs, p0: number, p1: number): number {
  const { bytes, starts, firstRows, ncol, rowsMax, dec, dcode, out, t } = a;
  const nSweeps = ncol - 1;
  const block = new Float64Array(PLAIN_BLOCK * nSweeps);
  let total = 0;
  for (let p = p0; p < p1; p++) {
    const end = starts[p + 1];
    let k = starts[p],
      row = firstRows[p],
      slot = 0,
      first = row;
    while (k < end) {
      let e = bytes.indexOf(10, k);
      if (e < 0 || e > end) e = end;
      let le = e;
      if (le > k && bytes[le - 1] === 13) le--;
      if (le === k) {
        if (e >= bytes.length - 1) break; // a final empty line
        return -1;
      }
      if (row >= rowsMax || !plainRow(bytes, k, le, ncol, dec, dcode, t, row, block, slot)) return -1;
      row++;
      if (++slot === PLAIN_BLOCK) {
        flushBlock(block, nSweeps, out, rowsMax, first, slot);
        first = row;
        slot = 0;
      }
      k = e + 1;
    }
    if (slot) flushBlock(block, nSweeps, out, rowsMax, first, slot);
    if (row !== firstRows[p + 1]) return -1;
    total += row - firstRows[p];
  }
  return total;
}

export interface SinesArgs {
  x: Float64Array;
  out: Float64Array;
  d: SineParts;
  amp: Float64Array;
}
/**
 * Hum removal of sweeps s0..s1-1: least-squares sinusoids on the design's fitted
 * samples, subtracted over the whole sweep; the fundamental's amplitude into amp.
 */
function removeSines(a: SinesArgs, s0: number, s1: number): number {
  const { x, out, d, amp } = a;
  const { n, m, idx, full } = d;
  const rows = normalRows(d);
  const y = new Float64Array(m);
  const H = (d.p - 1) / 2;
  for (let s = s0; s < s1; s++) {
    const o = s * n;
    for (let k = 0; k < m; k++) y[k] = x[o + idx[k]];
    const coef = sineCoefficients(d, rows, y);
    amp[s] = Math.hypot(coef[1], coef[2]);
    for (let i = 0; i < n; i++) {
      let v = 0;
      for (let h = 1; h <= H; h++)
        v += coef[2 * h - 1] * full[(2 * h - 2) * n + i] + coef[2 * h] * full[(2 * h - 1) * n + i];
      out[o + i] = x[o + i] - v;
    }
  }
  return -1;
}

export interface ResampleArgs {
  x: Float64Array;
  out: Float64Array;
  n: number;
  m: number;
  up: number;
  down: number;
  h: Float64Array;
  preRemove: number;
  padtype: 'constant' | 'mean' | 'median';
}
/** Rational-rate resampling of sweeps s0..s1-1 (n samples in, m out), after taking off each sweep's background. */
function resampleSweeps(a: ResampleArgs, s0: number, s1: number): number {
  const { x, out, n, m, up, down, h, preRemove, padtype } = a;
  const buf = padtype === 'median' ? new Float64Array(n) : null;
  for (let s = s0; s < s1; s++) {
    const sw = x.subarray(s * n, (s + 1) * n);
    let bg = 0;
    if (padtype === 'mean') {
      for (let i = 0; i < n; i++) bg += sw[i];
      bg /= n;
    } else if (buf) {
      buf.set(sw);
      buf.sort();
      bg = n % 2 ? buf[(n - 1) / 2] : 0.5 * (buf[n / 2 - 1] + buf[n / 2]);
    }
    resamplePolyInto(sw, up, down, h, preRemove, out.subarray(s * m, (s + 1) * m), bg);
  }
  return -1;
}

export interface AverageArgs {
  x: Float64Array;
  n: number;
  start: Int32Array;
  members: Int32Array;
  median: number;
  /** mean (or median) sweeps, or empty; sd and sem sweeps, or empty (each G x n) */
  out: Float64Array;
  sd: Float64Array;
  sem: Float64Array;
}
/**
 * Mean (or median), SD and SEM sweeps of groups g0..g1-1; group g holds the sweeps
 * members[start[g]..start[g+1]). Each member sweep is added in whole (contiguous reads)
 * in member order, so every sum has the order of a per-sample loop over the members.
 * Empty out, or empty sd and sem, are skipped (the spread is computed on request).
 *
 * Up to four members per pass over the row, and no pass that only clears, divides or
 * copies: the first pass starts from 0, the last adds the remaining members, divides and
 * writes the result (a group of five sweeps took five passes of overhead for its five
 * member reads, which made the average of 250 sweeps cost twice as much per sweep as that
 * of 4,000; tests/bench/scaling.mjs). A missing member in the last pass reads a row of
 * zeros: a sum that starts from +0 is never -0, so adding +0 leaves it unchanged.
 */
function average(a: AverageArgs, g0: number, g1: number): number {
  const { x, n, start, members, out, sd, sem } = a;
  const mean = new Float64Array(n);
  const zeros = new Float64Array(n);
  const buf = a.median ? new Float64Array(Math.max(1, start[start.length - 1])) : null;
  const row = (k: number, k1: number) => (k < k1 ? x.subarray(members[k] * n, members[k] * n + n) : zeros);
  for (let g = g0; g < g1; g++) {
    const k0 = start[g],
      k1 = start[g + 1],
      m = k1 - k0,
      o = g * n;
    // the mean is needed for the result (method mean) or the spread
    if ((out.length && !buf) || sd.length) {
      // the mean goes straight into out when it is the result and no spread is asked for
      const dst = out.length && !buf && !sd.length ? out.subarray(o, o + n) : mean;
      let k = k0;
      for (; k + 4 < k1; k += 4) {
        const r0 = row(k, k1),
          r1 = row(k + 1, k1),
          r2 = row(k + 2, k1),
          r3 = row(k + 3, k1);
        if (k === k0) for (let i = 0; i < n; i++) mean[i] = 0 + r0[i] + r1[i] + r2[i] + r3[i];
        else for (let i = 0; i < n; i++) mean[i] = mean[i] + r0[i] + r1[i] + r2[i] + r3[i];
      }
      // the last one to four members, divided
      const r0 = row(k, k1),
        r1 = row(k + 1, k1),
        r2 = row(k + 2, k1),
        r3 = row(k + 3, k1);
      if (k === k0) for (let i = 0; i < n; i++) dst[i] = (0 + r0[i] + r1[i] + r2[i] + r3[i]) / m;
      else for (let i = 0; i < n; i++) dst[i] = (mean[i] + r0[i] + r1[i] + r2[i] + r3[i]) / m;
      if (out.length && !buf && dst === mean) out.set(mean, o);
    }
    if (sd.length) {
      const ss = sd.subarray(o, o + n);
      ss.fill(0);
      for (let k = k0; k < k1; k++) {
        const b = members[k] * n;
        for (let i = 0; i < n; i++) {
          const d = x[b + i] - mean[i];
          ss[i] += d * d;
        }
      }
      const rm = Math.sqrt(m);
      for (let i = 0; i < n; i++) {
        const v = m > 1 ? Math.sqrt(ss[i] / (m - 1)) : NaN;
        sd[o + i] = v;
        sem[o + i] = v / rm;
      }
    }
    if (out.length && buf) {
      for (let i = 0; i < n; i++) {
        for (let k = 0; k < m; k++) buf[k] = x[members[k0 + k] * n + i];
        const sub = buf.subarray(0, m).sort();
        out[o + i] = m % 2 ? sub[(m - 1) / 2] : 0.5 * (sub[m / 2 - 1] + sub[m / 2]);
      }
    }
  }
  return -1;
}

export const kernels = { filtfilt, correct, load, loadAsRead, csvWide, removeSines, resampleSweeps, average } as const;
export type KernelName = keyof typeof kernels;
