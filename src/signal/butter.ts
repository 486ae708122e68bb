/**
 * Butterworth digital filter design as second-order sections.
 *
 * Method: analogue Butterworth prototype poles, frequency pre-warping, the
 * low-pass to low/high/band-pass/band-stop transforms, the bilinear transform,
 * and pairing of poles and zeros into sections ("nearest" pairing), following the
 * algorithm of SciPy's signal.butter(..., output='sos') and zpk2sos so that the
 * coefficients agree with SciPy 1.17 to rounding (checked in tests/signal).
 * Complexity O(order^2).
 *
 * References: S. Butterworth, "On the theory of filter amplifiers", Wireless
 * Engineer 7 (1930) 536-541. A. V. Oppenheim, R. W. Schafer, Discrete-Time Signal
 * Processing, 3rd ed., sec. 7.2 (bilinear transform). P. Virtanen et al., "SciPy 1.0",
 * Nature Methods 17 (2020) 261-272.
 */
import { OptionError } from '../errors';
import * as cx from './complex';
import type { C } from './complex';

export type BType = 'lowpass' | 'highpass' | 'bandpass' | 'bandstop';
/** Second-order sections: rows of [b0, b1, b2, a0, a1, a2] with a0 = 1. */
export type Sos = number[][];

export interface ButterOptions {
  /** filter order, 1..10 */
  order: number;
  /** cutoff in Hz (one value, or [low, high] for band filters) */
  cutoff: number | [number, number];
  btype: BType;
  /** sample rate, Hz */
  fs: number;
}

/**
 * Design a digital Butterworth filter as second-order sections.
 * @throws OptionError for an order outside 1..10 or a cutoff outside (0, fs/2).
 * @example butter({ order: 2, cutoff: 500, btype: 'lowpass', fs: 2000 })
 *   // [[0.2928932188134524, 0.5857864376269049, 0.2928932188134524, 1, 0, 0.17157287525381]]
 */
export function butter(o: ButterOptions): Sos {
  const { order, btype, fs } = o;
  if (!Number.isInteger(order) || order < 1 || order > 10)
    throw new OptionError(`invalid order: ${order}; must be an integer 1 <= order <= 10`);
  if (!(fs > 0) || !Number.isFinite(fs)) throw new OptionError(`invalid fs: ${fs} Hz; must be > 0`);
  const band = btype === 'bandpass' || btype === 'bandstop';
  if (!['lowpass', 'highpass', 'bandpass', 'bandstop'].includes(btype))
    throw new OptionError(
      `invalid btype: ${JSON.stringify(btype)}; must be one of "lowpass", "highpass", "bandpass", "bandstop"`,
    );
  const cut = Array.isArray(o.cutoff) ? o.cutoff : [o.cutoff];
  if (cut.some((f) => typeof f !== 'number'))
    throw new OptionError(
      `invalid cutoff: ${JSON.stringify(o.cutoff)}; must be a number in Hz (or [low, high] in Hz for band filters)`,
    );
  if (band !== (cut.length === 2))
    throw new OptionError(
      `invalid cutoff: ${JSON.stringify(o.cutoff)}; ${btype} needs ${band ? '[low, high] in Hz' : 'one frequency in Hz'}`,
    );
  for (const f of cut) {
    if (!(f > 0 && f < fs / 2))
      throw new OptionError(`invalid cutoff: ${f} Hz; must be 0 < cutoff < fs/2 (fs=${fs} Hz)`);
  }
  if (band && !(cut[1] > cut[0]))
    throw new OptionError(`invalid cutoff: [${cut[0]}, ${cut[1]}] Hz; low must be < high`);
  const Wn = cut.map((f) => (2 * f) / fs);
  return butterNormalized(order, Wn, btype);
}

/** As butter(), with cutoffs normalised to Nyquist (0 < Wn < 1), as in SciPy. */
export function butterNormalized(N: number, Wn: number[], btype: BType): Sos {
  // analogue prototype: p = -exp(j pi m / (2N)), m = -N+1, -N+3, ..., N-1
  let z: C[] = [];
  let p: C[] = [];
  for (let m = -N + 1; m < N; m += 2) {
    const th = (Math.PI * m) / (2 * N);
    p.push(cx.c(-Math.cos(th), -Math.sin(th)));
  }
  let k = 1;
  const fs = 2;
  const warped = Wn.map((w) => 2 * fs * Math.tan((Math.PI * w) / fs));
  if (btype === 'lowpass') {
    const wo = warped[0];
    const degree = p.length - z.length;
    z = z.map((x) => cx.scale(x, wo));
    p = p.map((x) => cx.scale(x, wo));
    k = k * wo ** degree;
  } else if (btype === 'highpass') {
    const wo = warped[0];
    const degree = p.length - z.length;
    const kf = cx.div(cx.prod(z.map((x) => cx.scale(x, -1))), cx.prod(p.map((x) => cx.scale(x, -1)))).re;
    z = [...z.map((x) => cx.div(cx.c(wo), x)), ...Array.from({ length: degree }, () => cx.c(0))];
    p = p.map((x) => cx.div(cx.c(wo), x));
    k = k * kf;
  } else if (btype === 'bandpass') {
    const wo = Math.sqrt(warped[0] * warped[1]);
    const bw = warped[1] - warped[0];
    const degree = p.length - z.length;
    const tr = (xs: C[]) => {
      const lp = xs.map((x) => cx.scale(x, bw / 2));
      const r = lp.map((x) => cx.sqrt(cx.sub(cx.mul(x, x), cx.c(wo * wo))));
      return [...lp.map((x, i) => cx.add(x, r[i])), ...lp.map((x, i) => cx.sub(x, r[i]))];
    };
    z = [...tr(z), ...Array.from({ length: degree }, () => cx.c(0))];
    p = tr(p);
    k = k * bw ** degree;
  } else {
    const wo = Math.sqrt(warped[0] * warped[1]);
    const bw = warped[1] - warped[0];
    const degree = p.length - z.length;
    const kf = cx.div(cx.prod(z.map((x) => cx.scale(x, -1))), cx.prod(p.map((x) => cx.scale(x, -1)))).re;
    const tr = (xs: C[]) => {
      const hp = xs.map((x) => cx.div(cx.c(bw / 2), x));
      const r = hp.map((x) => cx.sqrt(cx.sub(cx.mul(x, x), cx.c(wo * wo))));
      return [...hp.map((x, i) => cx.add(x, r[i])), ...hp.map((x, i) => cx.sub(x, r[i]))];
    };
    z = [
      ...tr(z),
      ...Array.from({ length: degree }, () => cx.c(0, wo)),
      ...Array.from({ length: degree }, () => cx.c(0, -wo)),
    ];
    p = tr(p);
    k = k * kf;
  }
  // bilinear transform, fs = 2
  const fs2 = 2 * fs;
  const degree = p.length - z.length;
  const kz = cx.div(cx.prod(z.map((x) => cx.sub(cx.c(fs2), x))), cx.prod(p.map((x) => cx.sub(cx.c(fs2), x)))).re;
  const zz = [
    ...z.map((x) => cx.div(cx.add(cx.c(fs2), x), cx.sub(cx.c(fs2), x))),
    ...Array.from({ length: degree }, () => cx.c(-1)),
  ];
  const pz = p.map((x) => cx.div(cx.add(cx.c(fs2), x), cx.sub(cx.c(fs2), x)));
  return zpk2sos(zz, pz, k * kz);
}

const isReal = (x: C) => x.im === 0;

/** Split into complex (positive imaginary representatives) and real parts, sorted as SciPy's _cplxreal. */
function cplxreal(zs: C[]): C[] {
  const tol = 100 * Number.EPSILON;
  const sorted = [...zs].sort((a, b) => a.re - b.re || Math.abs(a.im) - Math.abs(b.im));
  const real: C[] = [];
  const pos: C[] = [];
  const neg: C[] = [];
  for (const x of sorted) {
    if (Math.abs(x.im) <= tol * cx.abs(x)) real.push(cx.c(x.re, 0));
    else if (x.im > 0) pos.push(x);
    else neg.push(x);
  }
  if (pos.length !== neg.length) throw new Error('filter design: complex values without conjugates');
  // pair conjugates: within runs of equal real part (to tolerance), sort by |imag|
  const zc = pos.map((x, i) => cx.c((x.re + neg[i].re) / 2, (x.im - neg[i].im) / 2));
  return [...zc, ...real];
}

function nearestIdx(fro: C[], to: C, which: 'any' | 'real' | 'complex'): number {
  const order = fro.map((x, i) => i).sort((i, j) => cx.abs(cx.sub(fro[i], to)) - cx.abs(cx.sub(fro[j], to)));
  if (which === 'any') return order[0];
  for (const i of order) if (isReal(fro[i]) === (which === 'real')) return i;
  throw new Error('filter design: no zero of the requested kind');
}

function poly2(a: C, b: C): [number, number, number] {
  // (x - a)(x - b) = x^2 - (a + b) x + ab ; real parts
  const s = cx.add(a, b);
  const pr = cx.mul(a, b);
  return [1, -s.re, pr.re];
}

function zpk2sos(zIn: C[], pIn: C[], k: number): Sos {
  let z = [...zIn];
  let p = [...pIn];
  if (z.length === 0 && p.length === 0) return [[k, 0, 0, 1, 0, 0]];
  while (p.length < z.length) p.push(cx.c(0));
  while (z.length < p.length) z.push(cx.c(0));
  const nSections = Math.floor((Math.max(p.length, z.length) + 1) / 2);
  if (p.length % 2 === 1) {
    p.push(cx.c(0));
    z.push(cx.c(0));
  }
  z = cplxreal(z);
  p = cplxreal(p);
  const pSos: [C, C][] = [];
  const zSos: [C, C][] = [];
  for (let si = 0; si < nSections; si++) {
    let p1i = 0;
    for (let i = 1; i < p.length; i++) if (Math.abs(1 - cx.abs(p[i])) < Math.abs(1 - cx.abs(p[p1i]))) p1i = i;
    const p1 = p[p1i];
    p = p.filter((_, i) => i !== p1i);
    const nRealP = p.filter(isReal).length;
    if (isReal(p1) && nRealP === 0) {
      const z1i = nearestIdx(z, p1, 'real');
      const z1 = z[z1i];
      z = z.filter((_, i) => i !== z1i);
      pSos.push([p1, cx.c(0)]);
      zSos.push([z1, cx.c(0)]);
    } else if (p.length + 1 === z.length && !isReal(p1) && nRealP === 1 && z.filter(isReal).length === 1) {
      const z1i = nearestIdx(z, p1, 'complex');
      const z1 = z[z1i];
      z = z.filter((_, i) => i !== z1i);
      pSos.push([p1, cx.conj(p1)]);
      zSos.push([z1, cx.conj(z1)]);
    } else {
      let p2: C;
      if (isReal(p1)) {
        let best = -1;
        for (let i = 0; i < p.length; i++) {
          if (!isReal(p[i])) continue;
          if (best < 0 || Math.abs(cx.abs(p[i]) - 1) < Math.abs(cx.abs(p[best]) - 1)) best = i;
        }
        p2 = p[best];
        p = p.filter((_, i) => i !== best);
      } else p2 = cx.conj(p1);
      if (z.length > 0) {
        const z1i = nearestIdx(z, p1, 'any');
        const z1 = z[z1i];
        z = z.filter((_, i) => i !== z1i);
        if (!isReal(z1)) zSos.push([z1, cx.conj(z1)]);
        else if (z.length > 0) {
          const z2i = nearestIdx(z, p1, 'real');
          const z2 = z[z2i];
          z = z.filter((_, i) => i !== z2i);
          zSos.push([z1, z2]);
        } else zSos.push([z1, cx.c(0)]);
      } else zSos.push([cx.c(0), cx.c(0)]);
      pSos.push([p1, p2]);
    }
  }
  pSos.reverse();
  zSos.reverse();
  const sos = pSos.map((ps, i) => [...poly2(zSos[i][0], zSos[i][1]), ...poly2(ps[0], ps[1])]);
  for (let j = 0; j < 3; j++) sos[0][j] *= k;
  return sos;
}

/**
 * IIR notch (second-order, -3 dB bandwidth f0/Q) as one section, as SciPy's iirnotch.
 * Reference: S. J. Orfanidis, Introduction to Signal Processing, Prentice-Hall 1996, sec. 11.3.
 */
export function iirnotch(f0: number, Q: number, fs: number): Sos {
  if (!(f0 > 0 && f0 < fs / 2))
    throw new OptionError(`invalid frequency: ${f0} Hz; must be 0 < frequency < fs/2 (fs=${fs} Hz)`);
  if (!(Q > 0) || !Number.isFinite(Q)) throw new OptionError(`invalid Q: ${Q}; must be > 0`);
  const w0 = ((2 * f0) / fs) * Math.PI;
  const bw = w0 / Q;
  const beta = Math.tan(bw / 2);
  const gain = 1 / (1 + beta);
  return [[gain, -2 * gain * Math.cos(w0), gain, 1, -2 * gain * Math.cos(w0), 2 * gain - 1]];
}

/** Magnitude of the frequency response of sos at f Hz. */
export function sosGain(sos: Sos, f: number, fs: number): number {
  const w = (2 * Math.PI * f) / fs;
  let g = 1;
  for (const [b0, b1, b2, a0, a1, a2] of sos) {
    const e1 = cx.c(Math.cos(-w), Math.sin(-w));
    const e2 = cx.c(Math.cos(-2 * w), Math.sin(-2 * w));
    const num = cx.add(cx.add(cx.c(b0), cx.scale(e1, b1)), cx.scale(e2, b2));
    const den = cx.add(cx.add(cx.c(a0), cx.scale(e1, a1)), cx.scale(e2, a2));
    g *= cx.abs(num) / cx.abs(den);
  }
  return g;
}
