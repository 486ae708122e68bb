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
    const B0 = b0 / a0, B1 = b1 / a0, B2 = b2 / a0, A1 = a1 / a0, A2 = a2 / a0;
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
  const n = x.length;
  for (let s = 0; s < sos.length; s++) {
    const [b0r, b1r, b2r, a0, a1r, a2r] = sos[s];
    const b0 = b0r / a0, b1 = b1r / a0, b2 = b2r / a0, a1 = a1r / a0, a2 = a2r / a0;
    let z0 = z[2 * s], z1 = z[2 * s + 1];
    for (let i = 0; i < n; i++) {
      const xi = x[i];
      const y = b0 * xi + z0;
      z0 = b1 * xi - a1 * y + z1;
      z1 = b2 * xi - a2 * y;
      x[i] = y;
    }
    z[2 * s] = z0;
    z[2 * s + 1] = z1;
  }
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

export interface FiltfiltWork { ext: Float64Array; zi: Float64Array; z: Float64Array }

/** Work buffers for repeated sosfiltfilt calls on signals of length n. */
export function filtfiltWork(sos: Sos, n: number, padlen = defaultPadlen(sos)): FiltfiltWork {
  return { ext: new Float64Array(n + 2 * padlen), zi: sosfiltZi(sos), z: new Float64Array(sos.length * 2) };
}

/**
 * Zero-phase forward-backward filtering (SciPy's sosfiltfilt with padtype 'odd').
 * Writes the result into `out` (may be x itself) and returns it.
 * @throws OptionError when the signal is not longer than padlen.
 */
export function sosfiltfilt(sos: Sos, x: ArrayLike<number>, options: { padlen?: number; out?: Float64Array; work?: FiltfiltWork } = {}): Float64Array {
  const n = x.length;
  const padlen = options.padlen ?? defaultPadlen(sos);
  if (!Number.isInteger(padlen) || padlen < 0) throw new OptionError(`invalid padlen: ${padlen}; must be an integer >= 0`);
  if (n <= padlen) throw new OptionError(`signal of ${n} samples is too short for zero-phase filtering; must be longer than padlen = ${padlen} samples`);
  const work = options.work ?? filtfiltWork(sos, n, padlen);
  const m = n + 2 * padlen;
  const ext = work.ext.length === m ? work.ext : new Float64Array(m);
  const x0 = x[0], xn = x[n - 1];
  for (let i = 0; i < padlen; i++) ext[i] = 2 * x0 - x[padlen - i];
  for (let i = 0; i < n; i++) ext[padlen + i] = x[i];
  for (let i = 0; i < padlen; i++) ext[padlen + n + i] = 2 * xn - x[n - 2 - i];
  const { zi, z } = work;
  const e0 = ext[0];
  for (let i = 0; i < zi.length; i++) z[i] = zi[i] * e0;
  sosfiltInPlace(sos, ext, z);
  ext.reverse();
  const y0 = ext[0];
  for (let i = 0; i < zi.length; i++) z[i] = zi[i] * y0;
  sosfiltInPlace(sos, ext, z);
  const out = options.out ?? new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = ext[m - 1 - padlen - i];
  return out;
}
