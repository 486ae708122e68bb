/**
 * Filtering with second-order sections.
 *
 * sosfilt: cascade of direct-form II transposed biquads, O(n x sections).
 * sosfiltfilt: forward-backward (zero-phase) filtering with odd extension at both
 * ends and initial conditions set to the steady state for the edge value, with
 * SciPy's defaults (padtype 'odd', padlen = 3 x (2 x sections + 1 - min(number of
 * sections with b2 = 0, number with a2 = 0))). Matches scipy.signal.sosfiltfilt to
 * rounding (tests/signal). Reference: F. Gustafsson, "Determining the initial
 * states in forward-backward filtering", IEEE Trans. Signal Process. 44 (1996) 988-992.
 */
import { OptionError } from '../errors';
import type { Sos } from './butter';

/** Steady-state initial conditions per section for a unit step (SciPy's sosfilt_zi). */
export function sosfiltZi(sos: Sos): Float64Array {
  const zi = new Float64Array(sos.length * 2);
  let scale = 1;
  sos.forEach(([b0, b1, b2, a0, a1, a2], s) => {
    const B0 = b0 / a0,
      B1 = b1 / a0,
      B2 = b2 / a0,
      A1 = a1 / a0,
      A2 = a2 / a0;
    // (I - companion(a)^T) zi = b[1:] - a[1:] b0
    const r0 = B1 - A1 * B0;
    const r1 = B2 - A2 * B0;
    // [[1 + A1, -1], [A2, 1]] zi = [r0, r1]
    const det = (1 + A1) * 1 + A2;
    const z0 = (r0 * 1 + r1) / det;
    const z1 = ((1 + A1) * r1 - A2 * r0) / det;
    zi[2 * s] = scale * z0;
    zi[2 * s + 1] = scale * z1;
    scale *= (b0 + b1 + b2) / (a0 + a1 + a2);
  });
  return zi;
}

/**
 * Filter x in place through the sections, with state z (length 2 x sections, updated).
 * x and z are modified.
 */
export function sosfiltInPlace(sos: Sos, x: Float64Array, z: Float64Array): void {
  cascade(normalizedCoefficients(sos), x, z, 0, x.length, 1);
}

/** Causal filtering from rest (as scipy.signal.sosfilt with zi omitted). */
export function sosfilt(sos: Sos, x: ArrayLike<number>): Float64Array {
  const y = Float64Array.from(x);
  sosfiltInPlace(sos, y, new Float64Array(sos.length * 2));
  return y;
}

/** Default pad length of sosfiltfilt. */
export function defaultPadlen(sos: Sos): number {
  let ntaps = 2 * sos.length + 1;
  const zb = sos.filter((r) => r[2] === 0).length;
  const za = sos.filter((r) => r[5] === 0).length;
  ntaps -= Math.min(zb, za);
  return 3 * ntaps;
}

export interface FiltfiltWork {
  ext: Float64Array;
  zi: Float64Array;
  z: Float64Array;
}

/** Work buffers for repeated sosfiltfilt calls on signals of length n. */
export function filtfiltWork(sos: Sos, n: number, padlen = defaultPadlen(sos)): FiltfiltWork {
  return { ext: new Float64Array(n + 2 * padlen), zi: sosfiltZi(sos), z: new Float64Array(sos.length * 2) };
}

/**
 * Zero-phase forward-backward filtering (SciPy's sosfiltfilt with padtype 'odd').
 * Writes the result into `out` (may be x itself) and returns it.
 * @throws OptionError when the signal is not longer than padlen.
 */
export function sosfiltfilt(
  sos: Sos,
  x: ArrayLike<number>,
  options: { padlen?: number; out?: Float64Array; work?: FiltfiltWork } = {},
): Float64Array {
  const n = x.length;
  const padlen = options.padlen ?? defaultPadlen(sos);
  if (!Number.isInteger(padlen) || padlen < 0)
    throw new OptionError(`invalid padlen: ${padlen}; must be an integer >= 0`);
  if (n <= padlen)
    throw new OptionError(
      `signal of ${n} samples is too short for zero-phase filtering; must be longer than padlen = ${padlen} samples`,
    );
  const work = options.work ?? filtfiltWork(sos, n, padlen);
  const m = n + 2 * padlen;
  const ext = work.ext.length === m ? work.ext : new Float64Array(m);
  oddExtend(x, ext, padlen);
  const { zi, z } = work;
  const coef = normalizedCoefficients(sos);
  const e0 = ext[0];
  for (let i = 0; i < zi.length; i++) z[i] = zi[i] * e0;
  cascade(coef, ext, z, 0, m, 1);
  const y0 = ext[m - 1];
  for (let i = 0; i < zi.length; i++) z[i] = zi[i] * y0;
  cascade(coef, ext, z, m - 1, -1, -1);
  const out = options.out ?? new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = ext[padlen + i];
  return out;
}

/** Odd extension of x by padlen samples at both ends into ext (length n + 2 padlen), as SciPy's odd_ext. */
function oddExtend(x: ArrayLike<number>, ext: Float64Array, padlen: number): void {
  const n = x.length;
  const x0 = x[0],
    xn = x[n - 1];
  for (let i = 0; i < padlen; i++) ext[i] = 2 * x0 - x[padlen - i];
  for (let i = 0; i < n; i++) ext[padlen + i] = x[i];
  for (let i = 0; i < padlen; i++) ext[padlen + n + i] = 2 * xn - x[n - 2 - i];
}

/** Coefficients [b0, b1, b2, a1, a2] per section with a0 = 1, in one Float64Array. */
function normalizedCoefficients(sos: Sos): Float64Array {
  const c = new Float64Array(sos.length * 5);
  sos.forEach(([b0, b1, b2, a0, a1, a2], s) => c.set([b0 / a0, b1 / a0, b2 / a0, a1 / a0, a2 / a0], 5 * s));
  return c;
}

/**
 * Run all sections over x in place, sample by sample (one pass over memory), from
 * index `from` while i != `to`, stepping by `step` (1 forward, -1 backward).
 */
function cascade(c: Float64Array, x: Float64Array, z: Float64Array, from: number, to: number, step: 1 | -1): void {
  const ns = c.length / 5;
  for (let i = from; i !== to; i += step) {
    let u = x[i];
    for (let s = 0, k = 0; s < ns; s++, k += 5) {
      const y = c[k] * u + z[2 * s];
      z[2 * s] = c[k + 1] * u - c[k + 3] * y + z[2 * s + 1];
      z[2 * s + 1] = c[k + 2] * u - c[k + 4] * y;
      u = y;
    }
    x[i] = u;
  }
}

/**
 * Zero-phase filtering of two equal-length signals at once (same result as two
 * sosfiltfilt calls). For two-section filters the two recursions are interleaved in
 * one loop, which lets the processor overlap their dependency chains (about twice
 * the throughput); other filters fall back to two calls.
 */
export function sosfiltfiltPair(
  sos: Sos,
  xa: ArrayLike<number>,
  xb: ArrayLike<number>,
  outA: Float64Array,
  outB: Float64Array,
  wa: FiltfiltWork,
  wb: FiltfiltWork,
  padlen = defaultPadlen(sos),
): void {
  if (sos.length !== 2) {
    sosfiltfilt(sos, xa, { padlen, out: outA, work: wa });
    sosfiltfilt(sos, xb, { padlen, out: outB, work: wb });
    return;
  }
  const n = xa.length;
  if (n <= padlen)
    throw new OptionError(
      `signal of ${n} samples is too short for zero-phase filtering; must be longer than padlen = ${padlen} samples`,
    );
  for (let i = 0; i < n; i++) {
    wa.ext[padlen + i] = xa[i];
    wb.ext[padlen + i] = xb[i];
  }
  sosfiltfiltPairExt(sos, outA, outB, wa, wb, n, padlen);
}

/**
 * sosfiltfiltPair on signals already written to wa.ext and wb.ext at [padlen, padlen + n)
 * (so a caller can correct samples straight into place): the odd extension is made in
 * place, and the backward pass stops at the first output sample and writes the outputs
 * directly (the samples before it are discarded by sosfiltfilt, and the backward pass
 * runs towards them, so no output depends on them). Two-section filters only; the
 * arithmetic is that of sosfiltfilt, so the numbers are the same bit for bit.
 */
export function sosfiltfiltPairExt(
  sos: Sos,
  outA: Float64Array,
  outB: Float64Array,
  wa: FiltfiltWork,
  wb: FiltfiltWork,
  n: number,
  padlen: number,
): void {
  if (sos.length !== 2) throw new OptionError('sosfiltfiltPairExt needs a filter of two second-order sections');
  const m = n + 2 * padlen;
  const ea = wa.ext,
    eb = wb.ext;
  if (ea.length !== m || eb.length !== m)
    throw new OptionError(`work buffers of ${ea.length} samples; need n + 2 padlen = ${m}`);
  oddExtendInPlace(ea, n, padlen);
  oddExtendInPlace(eb, n, padlen);
  const c = normalizedCoefficients(sos);
  const zi = wa.zi;
  const b00 = c[0],
    b01 = c[1],
    b02 = c[2],
    a01 = c[3],
    a02 = c[4];
  const b10 = c[5],
    b11 = c[6],
    b12 = c[7],
    a11 = c[8],
    a12 = c[9];
  // forward and backward passes are written out on purpose: folding them into one
  // closure with a step variable made this loop about 2.5x slower in V8 (measured)
  // forward
  let p0 = zi[0] * ea[0],
    p1 = zi[1] * ea[0],
    p2 = zi[2] * ea[0],
    p3 = zi[3] * ea[0];
  let q0 = zi[0] * eb[0],
    q1 = zi[1] * eb[0],
    q2 = zi[2] * eb[0],
    q3 = zi[3] * eb[0];
  for (let i = 0; i < m; i++) {
    const u = ea[i],
      w = eb[i];
    const v = b00 * u + p0,
      vv = b00 * w + q0;
    p0 = b01 * u - a01 * v + p1;
    q0 = b01 * w - a01 * vv + q1;
    p1 = b02 * u - a02 * v;
    q1 = b02 * w - a02 * vv;
    const y = b10 * v + p2,
      yy = b10 * vv + q2;
    p2 = b11 * v - a11 * y + p3;
    q2 = b11 * vv - a11 * yy + q3;
    p3 = b12 * v - a12 * y;
    q3 = b12 * vv - a12 * yy;
    ea[i] = y;
    eb[i] = yy;
  }
  // backward: the end padding (no outputs), then the outputs straight to out
  const ya = ea[m - 1],
    yb = eb[m - 1];
  p0 = zi[0] * ya;
  p1 = zi[1] * ya;
  p2 = zi[2] * ya;
  p3 = zi[3] * ya;
  q0 = zi[0] * yb;
  q1 = zi[1] * yb;
  q2 = zi[2] * yb;
  q3 = zi[3] * yb;
  for (let i = m - 1; i >= padlen; i--) {
    const u = ea[i],
      w = eb[i];
    const v = b00 * u + p0,
      vv = b00 * w + q0;
    p0 = b01 * u - a01 * v + p1;
    q0 = b01 * w - a01 * vv + q1;
    p1 = b02 * u - a02 * v;
    q1 = b02 * w - a02 * vv;
    const y = b10 * v + p2,
      yy = b10 * vv + q2;
    p2 = b11 * v - a11 * y + p3;
    q2 = b11 * vv - a11 * yy + q3;
    p3 = b12 * v - a12 * y;
    q3 = b12 * vv - a12 * yy;
    if (i < padlen + n) {
      outA[i - padlen] = y;
      outB[i - padlen] = yy;
    }
  }
}

/** Odd extension in place: ext holds the signal at [padlen, padlen + n); fills both ends as oddExtend does. */
function oddExtendInPlace(ext: Float64Array, n: number, padlen: number): void {
  const x0 = ext[padlen],
    xn = ext[padlen + n - 1];
  for (let i = 0; i < padlen; i++) ext[i] = 2 * x0 - ext[2 * padlen - i];
  for (let i = 0; i < padlen; i++) ext[padlen + n + i] = 2 * xn - ext[padlen + n - 2 - i];
}
