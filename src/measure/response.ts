/**
 * Measurements of one response in one sweep: numerical kernels on Float64Array
 * that know nothing of SweepSet. Times are in samples (fractional after sub-sample
 * refinement); the caller converts to ms.
 */

/**
 * Robust noise level: 1.4826 x the median absolute deviation from the median of
 * x[a..b] (an estimate of the SD for Gaussian noise). O(m log m).
 * Reference: P. J. Rousseeuw, C. Croux, J. Am. Stat. Assoc. 88 (1993) 1273-1283.
 * @example noiseMad(Float64Array.of(1, 2, 3, 4, 100), 0, 4) // 1.4826
 */
export function noiseMad(x: ArrayLike<number>, a: number, b: number): number {
  const v = Float64Array.from({ length: b - a + 1 }, (_, i) => x[a + i]).sort();
  const med = median(v);
  const dev = v.map((y) => Math.abs(y - med)).sort();
  return 1.4826 * median(dev);
}

function median(sorted: Float64Array): number {
  const m = sorted.length;
  return m % 2 ? sorted[(m - 1) / 2] : 0.5 * (sorted[m / 2 - 1] + sorted[m / 2]);
}

/**
 * Sub-sample peak by a parabola through the three samples around index i:
 * offset = (y[-1] - y[+1]) / (2 (y[-1] - 2 y0 + y[+1])), height = y0 - (y[-1] - y[+1]) offset / 4.
 * Reference: J. O. Smith, Spectral Audio Signal Processing, W3K 2011, "Quadratic interpolation of spectral peaks".
 */
export function parabolicPeak(y: ArrayLike<number>, i: number): { index: number; value: number } {
  if (i <= 0 || i >= y.length - 1) return { index: i, value: y[i] };
  const ym = y[i - 1],
    y0 = y[i],
    yp = y[i + 1];
  const den = ym - 2 * y0 + yp;
  if (den === 0) return { index: i, value: y0 };
  const d = Math.max(-0.5, Math.min(0.5, (0.5 * (ym - yp)) / den));
  return { index: i + d, value: y0 - 0.25 * (ym - yp) * d };
}

import FFT = require('fft.js');
import { normQuantile } from '../fit/dist';

export interface ResponseMeasure {
  /** polarity used: +1 positive-going, -1 negative-going */
  polarity: 1 | -1;
  /** window searched, sample indices */
  window: [number, number];
  noise: number;
  /** detection level = k x noise */
  level: number;
  detected: boolean;
  /** peak (signed value in signal units) and its fractional index */
  peakIndex: number;
  peak: number;
  /** onset: fractional index where the signal first crosses the level on the way into the peak */
  onsetIndex: number;
  /** offset: fractional index where the signal falls back below the level after the peak */
  offsetIndex: number;
  /** half-amplitude crossings (fractional indices) */
  halfRise: number;
  halfFall: number;
  /** centroid (fractional index) of the polarity-corrected signal between onset and offset */
  centroidIndex: number;
  /** max - min in the window */
  peakToPeak: number;
  /** signed and rectified area between onset and offset, signal units x samples */
  areaSamples: number;
  rectifiedAreaSamples: number;
  /**
   * the class's own waveform over window[0]..window[1] (signal units, recorded sign) when it is not simply the
   * recorded sweep there: the modelled class component of a velocity decomposition (measure/decompose.ts)
   */
  component?: Float64Array;
  /**
   * the class's modelled component over the same samples, when it was separated by a velocity decomposition: the
   * decomposition's fit of this class alone (without the residual of the other classes' fit, which dominates the
   * window of a class much smaller than its neighbour)
   */
  model?: Float64Array;
}

/**
 * Measure the response in x[a..b] with polarity p (or 'auto': the larger of the
 * positive and negative extremes) and detection level k x noise.
 */
export function measureResponse(
  x: ArrayLike<number>,
  a: number,
  b: number,
  noise: number,
  k: number,
  polarity: 1 | -1 | 'auto',
): ResponseMeasure {
  let imax = a,
    imin = a;
  for (let i = a; i <= b; i++) {
    if (x[i] > x[imax]) imax = i;
    if (x[i] < x[imin]) imin = i;
  }
  const p: 1 | -1 = polarity === 'auto' ? (Math.abs(x[imax]) >= Math.abs(x[imin]) ? 1 : -1) : polarity;
  const ip = p === 1 ? imax : imin;
  const three =
    ip > 0 && ip < x.length - 1
      ? parabolicPeak([p * x[ip - 1], p * x[ip], p * x[ip + 1]], 1)
      : { index: 1, value: p * x[ip] };
  const pk = { index: ip - 1 + three.index, value: three.value };
  const peakVal = p * pk.value;
  const level = k * noise;
  const y = (i: number) => p * x[i];
  // detection: the 3-point smoothed peak must pass max(k, z_(1 - 0.01/N)) x noise, N = samples in the
  // window, so that noise alone passes in under 1% of windows of any length (Bonferroni bound)
  const N = b - a + 1;
  const kEff = Math.max(k, normQuantile(1 - 0.01 / N));
  const sm = ip > 0 && ip < x.length - 1 ? (y(ip - 1) + y(ip) + y(ip + 1)) / 3 : y(ip);
  const detected = sm > kEff * noise && ip > a && ip < b;
  // onset: walk back from the peak while above the level, then interpolate the crossing
  let i = ip;
  while (i > a && y(i - 1) > level) i--;
  const onsetIndex = i > a || y(i) <= level ? crossing(y, i - 1, i, level) : a;
  let j = ip;
  while (j < b && y(j + 1) > level) j++;
  const offsetIndex = j < b ? crossing(y, j, j + 1, level) : b;
  const half = (p * peakVal) / 2;
  let h1 = ip;
  while (h1 > a && y(h1 - 1) > half) h1--;
  const halfRise = h1 > a ? crossing(y, h1 - 1, h1, half) : a;
  let h2 = ip;
  while (h2 < b && y(h2 + 1) > half) h2++;
  const halfFall = h2 < b ? crossing(y, h2, h2 + 1, half) : b;
  let area = 0,
    rect = 0,
    mom = 0,
    w = 0;
  const s0 = Math.max(a, Math.ceil(onsetIndex)),
    s1 = Math.min(b, Math.floor(offsetIndex));
  for (let q = s0; q <= s1; q++) {
    area += x[q];
    rect += Math.abs(x[q]);
    const yq = Math.max(0, y(q));
    mom += q * yq;
    w += yq;
  }
  return {
    polarity: p,
    window: [a, b],
    noise,
    level,
    detected,
    peakIndex: pk.index,
    peak: peakVal,
    centroidIndex: w > 0 ? mom / w : pk.index,
    onsetIndex,
    offsetIndex,
    halfRise,
    halfFall,
    peakToPeak: x[imax] - x[imin],
    areaSamples: area,
    rectifiedAreaSamples: rect,
  };
}

/**
 * Onset before a window's start: walking back from index `from` while p x stays above
 * level, down to `lo`; the interpolated crossing, or null when the signal is still
 * above the level at `lo`.
 */
export function onsetBefore(x: ArrayLike<number>, from: number, lo: number, level: number, p: 1 | -1): number | null {
  const y = (i: number) => p * x[i];
  let i = from;
  while (i > lo && y(i - 1) > level) i--;
  return i > lo ? crossing(y, i - 1, i, level) : null;
}

/** Fractional index between i0 and i1 where y crosses level (linear interpolation). */
function crossing(y: (i: number) => number, i0: number, i1: number, level: number): number {
  const y0 = y(i0),
    y1 = y(i1);
  if (y1 === y0) return i1;
  return i0 + (level - y0) / (y1 - y0);
}

/**
 * Delay (in samples, fractional) that best aligns b to a: the lag L maximising
 * sum_i a[i] b[i + L] over lags in [minLag, maxLag], refined by a parabola through
 * the three correlation values around the best integer lag.
 */
export function xcorrDelay(
  a: ArrayLike<number>,
  b: ArrayLike<number>,
  minLag: number,
  maxLag: number,
): { lag: number; r: number } {
  let best = -Infinity,
    bestLag = minLag;
  const na = a.length,
    nb = b.length;
  let ea = 0,
    eb = 0;
  for (let i = 0; i < na; i++) ea += a[i] * a[i];
  for (let i = 0; i < nb; i++) eb += b[i] * b[i];
  const nLags = maxLag - minLag + 1;
  const vals = new Float64Array(nLags);
  // direct sums for short searches; the FFT (fft.js) when it is cheaper (long C-fiber windows)
  let N = 4;
  while (N < na + nb) N *= 2;
  if (nLags * Math.min(na, nb) > 12 * N * Math.log2(N)) {
    const full = crossCorrelationFft(a, b, N);
    for (let L = minLag; L <= maxLag; L++) vals[L - minLag] = L > -na && L < nb ? full[(L + N) % N] : 0;
  } else {
    for (let L = minLag; L <= maxLag; L++) {
      let s = 0;
      const i0 = Math.max(0, -L),
        i1 = Math.min(na, nb - L);
      for (let i = i0; i < i1; i++) s += a[i] * b[i + L];
      vals[L - minLag] = s;
    }
  }
  for (let k = 0; k < nLags; k++)
    if (vals[k] > best) {
      best = vals[k];
      bestLag = k + minLag;
    }
  const k = bestLag - minLag;
  let lag = bestLag;
  if (k > 0 && k < nLags - 1) {
    const ym = vals[k - 1],
      yp = vals[k + 1];
    const den = ym - 2 * best + yp;
    if (den < 0) lag = bestLag + Math.max(-0.5, Math.min(0.5, (0.5 * (ym - yp)) / den));
  }
  return { lag, r: best / Math.sqrt(ea * eb || 1) };
}

/** An FFT of one size with its work arrays, kept between calls (a run uses a few sizes; building them dominated). */
interface FftPlan {
  f: FFT;
  ra: Float64Array;
  rb: Float64Array;
  A: number[];
  B: number[];
  C: number[];
  out: number[];
}
const fftPlans = new Map<number, FftPlan>();
function fftPlan(N: number): FftPlan {
  let p = fftPlans.get(N);
  if (!p) {
    const f = new FFT(N);
    p = {
      f,
      ra: new Float64Array(N),
      rb: new Float64Array(N),
      A: f.createComplexArray() as number[],
      B: f.createComplexArray() as number[],
      C: f.createComplexArray() as number[],
      out: f.createComplexArray() as number[],
    };
    // a few sizes per run: bounded memory
    if (fftPlans.size > 8) fftPlans.clear();
    fftPlans.set(N, p);
  }
  return p;
}

/** c[L] = sum_i a[i] b[i + L] for every lag, by FFT of size N >= len(a) + len(b) (negative lags at N + L). */
export function crossCorrelationFft(a: ArrayLike<number>, b: ArrayLike<number>, N: number): Float64Array {
  // the work arrays are reused: the inputs are zero-padded afresh, and the transforms write every entry they read
  const { f, ra, rb, A, B, C, out } = fftPlan(N);
  ra.fill(0);
  rb.fill(0);
  for (let i = 0; i < a.length; i++) ra[i] = a[i];
  for (let i = 0; i < b.length; i++) rb[i] = b[i];
  f.realTransform(A, ra);
  f.completeSpectrum(A);
  f.realTransform(B, rb);
  f.completeSpectrum(B);
  // conj(A) x B
  for (let k = 0; k < 2 * N; k += 2) {
    const ar = A[k],
      ai = A[k + 1],
      br = B[k],
      bi = B[k + 1];
    C[k] = ar * br + ai * bi;
    C[k + 1] = ar * bi - ai * br;
  }
  f.inverseTransform(out, C);
  const c = new Float64Array(N);
  for (let k = 0; k < N; k++) c[k] = out[2 * k]; // fft.js's inverse divides by N
  return c;
}

/** Latencies of one class measured on its own component, each by a definition that does not depend on the noise. */
export interface OwnLatencies {
  /** fractional index and value of the main-phase peak (parabolic refinement) */
  peakIndex: number;
  peak: number;
  /** first crossing of onsetFraction x peak, searched backwards from the peak; null when the component does not fall that low before its peak */
  onsetIndex: number | null;
  /** crossing of 0.5 x peak, searched backwards from the peak */
  halfRiseIndex: number | null;
  /** crossing of 0.5 x peak after the peak */
  halfFallIndex: number | null;
  /** centre of mass over the contiguous span around the peak above centroidFraction x peak, and that span */
  centroidIndex: number | null;
  centroidFrom: number | null;
  centroidTo: number | null;
  /** the peak is a local maximum of y (not a rising or falling edge cut by the span) */
  localMax: boolean;
}

/**
 * Latencies on a polarity-corrected component y (main phase positive) over y[a..b]:
 * peak = parabolic sub-sample maximum; onset = linear-interpolated crossing of
 * onsetFraction x peak walking backwards from the peak (the same definition at every
 * distance and noise level; 10% is common practice, no source); half-rise = the same at 50%;
 * centroid = sum(t y) / sum(y) over the span where y stays above centroidFraction x peak
 * around the peak, its bounds interpolated crossings of that level refined by local quadratic regression
 * (refineCrossing). The peak is searched in y[a..b], the crossings in y[lo..hi] (lo <= a, hi >= b: a wave may
 * start before its window).
 * @example ownLatencies(Float64Array.from({ length: 41 }, (_, i) => Math.exp(-0.5 * ((i - 20) / 4) ** 2)), 0, 40).peakIndex // 20
 */
export function ownLatencies(
  y: ArrayLike<number>,
  a: number,
  b: number,
  onsetFraction = 0.1,
  centroidFraction = 0.1,
  lo = a,
  hi = b,
): OwnLatencies {
  let ip = a;
  for (let i = a; i <= b; i++) if (y[i] > y[ip]) ip = i;
  const localMax =
    (ip > 0 ? y[ip - 1] <= y[ip] : true) &&
    (ip < y.length - 1 ? y[ip + 1] <= y[ip] : true) &&
    ip > 0 &&
    ip < y.length - 1;
  const pk = ip > a && ip < b ? parabolicPeak(y, ip) : { index: ip, value: y[ip] };
  const P = pk.value;
  const yf = (i: number) => y[i];
  const back = (level: number): number | null => {
    let i = ip;
    while (i > lo && y[i - 1] > level) i--;
    return i > lo ? crossing(yf, i - 1, i, level) : null;
  };
  const fwd = (level: number): number | null => {
    let j = ip;
    while (j < hi && y[j + 1] > level) j++;
    return j < hi ? crossing(yf, j, j + 1, level) : null;
  };
  if (!(P > 0))
    return {
      peakIndex: pk.index,
      peak: P,
      onsetIndex: null,
      halfRiseIndex: null,
      halfFallIndex: null,
      centroidIndex: null,
      centroidFrom: null,
      centroidTo: null,
      localMax,
    };
  const onset = back(onsetFraction * P);
  const half = back(0.5 * P);
  const halfFall = fwd(0.5 * P);
  const cFrom = refineCrossing(y, back(centroidFraction * P), centroidFraction * P, pk.index, lo, hi),
    cTo = refineCrossing(y, fwd(centroidFraction * P), centroidFraction * P, pk.index, lo, hi);
  let centroid: number | null = null;
  if (cFrom !== null && cTo !== null) {
    let m = 0,
      w = 0;
    for (let q = Math.ceil(cFrom); q <= Math.floor(cTo); q++) {
      m += q * y[q];
      w += y[q];
    }
    centroid = w > 0 ? m / w : null;
  }
  return {
    peakIndex: pk.index,
    peak: P,
    onsetIndex: onset,
    halfRiseIndex: half,
    halfFallIndex: halfFall,
    centroidIndex: centroid,
    centroidFrom: cFrom,
    centroidTo: cTo,
    localMax,
  };
}

/**
 * A level crossing located by local quadratic regression instead of the first sample below the level: the first
 * crossing walking out from the peak is biased towards the peak under noise (it takes the first dip), most of all
 * on a slowly falling edge (a small wave's long tail), where a noise of s moves it by s / |slope|. Around the first
 * crossing c0, a parabola is fitted by least squares to y over c0 +- d / 4 (d = |c0 - peak|, the edge's own scale,
 * at least 3 samples each side) and its crossing of the level nearest the window's centre taken; the window is
 * re-centred there and the fit repeated (up to 4 times, until it moves by less than a tenth of a sample). A
 * parabola is exact for a locally quadratic edge (no bias from the window on a smooth wave, unlike a line or a
 * kernel) and averages the noise of the window's samples (local polynomial regression: A. Savitzky, M. J. E. Golay,
 * Anal. Chem. 36 (1964) 1627-1639, from memory). The first crossing is kept when the fit has no crossing in its
 * window or the window leaves [lo, hi].
 * @example refineCrossing(Float64Array.from({ length: 41 }, (_, i) => 1 - i / 40), 20, 0.5, 0, 0, 40) // 20
 */
export function refineCrossing(
  y: ArrayLike<number>,
  c0: number | null,
  level: number,
  peakIndex: number,
  lo = 0,
  hi = y.length - 1,
): number | null {
  if (c0 === null) return null;
  const dir = c0 < peakIndex ? -1 : 1;
  const h = Math.max(3, Math.abs(c0 - peakIndex) / 4);
  let c = c0;
  for (let it = 0; it < 4; it++) {
    const a = Math.ceil(c - h),
      b = Math.floor(c + h);
    if (a < lo || b > hi || b - a < 4) return it === 0 ? c0 : c;
    // parabola in t = i - c: least squares on the samples a..b (normal equations, 3 x 3)
    let s0 = 0,
      s1 = 0,
      s2 = 0,
      s3 = 0,
      s4 = 0,
      r0 = 0,
      r1 = 0,
      r2 = 0;
    for (let i = a; i <= b; i++) {
      const t = i - c,
        t2 = t * t,
        v = y[i];
      s0 += 1;
      s1 += t;
      s2 += t2;
      s3 += t2 * t;
      s4 += t2 * t2;
      r0 += v;
      r1 += v * t;
      r2 += v * t2;
    }
    const q = solve3([s0, s1, s2, s1, s2, s3, s2, s3, s4], [r0, r1, r2]);
    if (!q) return it === 0 ? c0 : c;
    const [k0, k1, k2] = q;
    // roots of k2 t^2 + k1 t + (k0 - level) = 0 inside the window, on the edge's side (falling away from the peak)
    const roots: number[] = [];
    if (Math.abs(k2) < 1e-12 * (Math.abs(k1) + 1e-300)) {
      if (k1 !== 0) roots.push((level - k0) / k1);
    } else {
      const disc = k1 * k1 - 4 * k2 * (k0 - level);
      if (disc >= 0) {
        const sq = Math.sqrt(disc);
        roots.push((-k1 + sq) / (2 * k2), (-k1 - sq) / (2 * k2));
      }
    }
    const ok = roots.filter((t) => Math.abs(t) <= h && dir * (k1 + 2 * k2 * t) < 0);
    if (!ok.length) return it === 0 ? c0 : c;
    const t = ok.reduce((m, v) => (Math.abs(v) < Math.abs(m) ? v : m));
    const next = c + t;
    if (dir * (next - peakIndex) <= 0) return it === 0 ? c0 : c;
    const moved = Math.abs(next - c);
    c = next;
    if (moved < 0.1) break;
  }
  return c;
}

/** Solve a 3 x 3 system by Cramer's rule (null when singular). */
export function solve3(A: number[], b: number[]): [number, number, number] | null {
  const det = (m: number[]) =>
    m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) + m[2] * (m[3] * m[7] - m[4] * m[6]);
  const D = det(A);
  if (!(Math.abs(D) > 0) || !Number.isFinite(D)) return null;
  const col = (j: number) => A.map((v, k) => (k % 3 === j ? b[Math.floor(k / 3)] : v));
  return [det(col(0)) / D, det(col(1)) / D, det(col(2)) / D];
}

/**
 * Zero-phase Gaussian smoothing: z[i] = sum_j g(j) y[i + j] / sum_j g(j), g(j) = exp(-j^2 / (2 sigma^2)) for
 * |j| <= 3 sigma, the ends held at the first and last samples (the kernel is symmetric, so a peak's or centroid's
 * time is not moved for a symmetric wave). O(n sigma). sigma in samples; sigma < 0.5 returns a copy.
 * @example gaussianSmooth(Float64Array.of(0, 0, 3, 0, 0), 1)[2] // 1.197 (3 / (1 + 2 (e^-0.5 + e^-2 + e^-4.5)))
 */
export function gaussianSmooth(y: ArrayLike<number>, sigma: number): Float64Array {
  const n = y.length;
  if (!(sigma >= 0.5)) return Float64Array.from(y);
  const h = Math.ceil(3 * sigma);
  const g = Float64Array.from({ length: 2 * h + 1 }, (_, j) => Math.exp(-((j - h) ** 2) / (2 * sigma * sigma)));
  let gs = 0;
  for (let j = 0; j < g.length; j++) gs += g[j];
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = -h; j <= h; j++) s += g[j + h] * y[Math.min(n - 1, Math.max(0, i + j))];
    z[i] = s / gs;
  }
  return z;
}

/**
 * Precision of a latency read on a component: the 95% half-width, in samples, of the time at which y (main phase
 * positive) peaks (`kind` 'peak') or crosses `fraction` x its peak on the rise ('rise': onset, half-rise), when each
 * sample carries an independent error of SD `sigma` (the recording's noise, and for a class separated by a
 * decomposition the misfit of its neighbours' model).
 * - peak: the span around the peak where y stays within z sqrt(2) sigma of its maximum: the times whose value is not
 *   significantly below the peak's (the difference of two samples has SD sqrt(2) sigma); the half-width is the
 *   larger distance from the peak index to the span's ends, interpolated linearly. A flat top gives a wide span: its
 *   peak time is not determined by the data, whatever the refinement.
 * - rise: first-order error propagation (delta method) of the crossing t of level f P: the sample there and the
 *   level (f x the peak) each carry their errors, SD(t) = sigma sqrt(1 + f^2) / |y'(t)|, y' the least-squares slope
 *   over the five samples around the crossing; half-width z SD(t).
 * Returns null when it cannot be bounded: sigma not positive or not finite, an index outside y, or no rising slope.
 * O(width of the span). Formulas: common practice, no source.
 * @example latencyPrecision(Float64Array.from({ length: 41 }, (_, i) => 100 - (i - 20) ** 2), 20, 'peak', 1)
 * // 1.59 (the span's end interpolated linearly between u = 1 and 2; the parabola itself is within 2.77 of 100 for
 * // |u| <= 1.66)
 */
export function latencyPrecision(
  y: ArrayLike<number>,
  index: number,
  kind: 'peak' | 'rise',
  sigma: number,
  fraction = 0.5,
  z = 1.959964,
): number | null {
  const n = y.length;
  if (!(sigma > 0) || !Number.isFinite(sigma) || !(index >= 0) || !(index <= n - 1)) return null;
  if (kind === 'rise') {
    const j = Math.round(index);
    let num = 0,
      den = 0;
    for (let k = -2; k <= 2; k++) {
      const i = j + k;
      if (i < 0 || i >= n) continue;
      num += k * y[i];
      den += k * k;
    }
    const slope = den > 0 ? num / den : NaN;
    if (!(slope > 0)) return null;
    return (z * sigma * Math.sqrt(1 + fraction * fraction)) / slope;
  }
  // the largest sample within one sample of the (fractional) peak index
  let ip = Math.round(index);
  for (const i of [Math.floor(index), Math.ceil(index)]) if (i >= 0 && i < n && y[i] > y[ip]) ip = i;
  const level = y[ip] - z * Math.SQRT2 * sigma;
  let a = ip,
    b = ip;
  while (a > 0 && y[a - 1] >= level) a--;
  while (b < n - 1 && y[b + 1] >= level) b++;
  // the span's ends interpolated between the last sample above the level and the first below it
  const lo = a > 0 ? a - (y[a] - level) / (y[a] - y[a - 1]) : a;
  const hi = b < n - 1 ? b + (y[b] - level) / (y[b] - y[b + 1]) : b;
  return Math.max(index - lo, hi - index);
}
