/**
 * Rational-rate resampling with a polyphase FIR filter, the method of SciPy's
 * resample_poly (and its defaults): up-sample by `up` (zero insertion), low-pass
 * with a Kaiser-windowed sinc (firwin, 2 x 10 x max(up, down) + 1 taps, cutoff
 * 1 / max(up, down) of the Nyquist frequency, beta 5), down-sample by `down`, with
 * the filter's delay removed so that output sample k falls at input time
 * k x down / up. Checked against scipy.signal.resample_poly and firwin in
 * tests/signal (fixtures from tests/reference/make_filters.py).
 */
import { OptionError } from '../errors';

/** Modified Bessel function of the first kind, order 0 (power series; |x| <= 50). */
export function besselI0(x: number): number {
  const q = (x * x) / 4;
  let term = 1,
    sum = 1;
  for (let k = 1; k < 500; k++) {
    term *= q / (k * k);
    sum += term;
    if (term < sum * 1e-17) break;
  }
  return sum;
}

/** Symmetric Kaiser window of M points (SciPy's get_window(('kaiser', beta), M, fftbins=False)). */
export function kaiser(M: number, beta: number): Float64Array {
  const w = new Float64Array(M);
  if (M === 1) {
    w[0] = 1;
    return w;
  }
  const alpha = (M - 1) / 2;
  const d = besselI0(beta);
  for (let n = 0; n < M; n++) {
    const r = (n - alpha) / alpha;
    w[n] = besselI0(beta * Math.sqrt(Math.max(0, 1 - r * r))) / d;
  }
  return w;
}

const sinc = (x: number) => (x === 0 ? 1 : Math.sin(Math.PI * x) / (Math.PI * x));

/**
 * Linear-phase low-pass FIR by the window method, scaled to unit gain at DC
 * (SciPy's firwin(numtaps, cutoff, window=('kaiser', beta)) with cutoff relative to
 * the Nyquist frequency).
 */
export function firwinKaiser(numtaps: number, cutoff: number, beta: number): Float64Array {
  if (!Number.isInteger(numtaps) || numtaps < 1)
    throw new OptionError(`invalid numtaps: ${numtaps}; must be an integer >= 1`);
  if (!(cutoff > 0 && cutoff < 1))
    throw new OptionError(
      `invalid cutoff: ${cutoff}; must lie strictly between 0 and 1 (fraction of the Nyquist frequency)`,
    );
  const alpha = 0.5 * (numtaps - 1);
  const w = kaiser(numtaps, beta);
  const h = new Float64Array(numtaps);
  let s = 0;
  for (let i = 0; i < numtaps; i++) {
    h[i] = cutoff * sinc(cutoff * (i - alpha)) * w[i];
    s += h[i];
  }
  for (let i = 0; i < numtaps; i++) h[i] /= s;
  return h;
}

const gcd = (a: number, b: number): number => (b === 0 ? a : gcd(b, a % b));

/**
 * The smallest up/down (each <= maxFactor) with fsOut / fsIn = up / down exactly
 * (to 1e-12 relative). @throws OptionError naming fs when there is none.
 */
export function rationalRatio(fsIn: number, fsOut: number, maxFactor = 1000): { up: number; down: number } {
  const r = fsOut / fsIn;
  // continued fraction of r
  let h0 = 1,
    h1 = 0,
    k0 = 0,
    k1 = 1,
    x = r;
  for (let it = 0; it < 64; it++) {
    const a = Math.floor(x);
    const h = a * h0 + h1,
      k = a * k0 + k1;
    if (h > maxFactor || k > maxFactor) break;
    h1 = h0;
    h0 = h;
    k1 = k0;
    k0 = k;
    if (Math.abs(h / k - r) <= 1e-12 * r) {
      const g = gcd(h, k);
      return { up: h / g, down: k / g };
    }
    const frac = x - a;
    if (frac < 1e-15) break;
    x = 1 / frac;
  }
  throw new OptionError(
    `invalid fs: ${fsOut} Hz; the ratio to the current ${fsIn} Hz must be a fraction up/down with up and down at most ${maxFactor}`,
  );
}

/** Design of a resample_poly filter: taps (scaled by up) and the samples to drop at the start. */
export function polyphaseDesign(up: number, down: number, beta = 5): { h: Float64Array; preRemove: number } {
  const maxRate = Math.max(up, down);
  const halfLen = 10 * maxRate;
  const core = firwinKaiser(2 * halfLen + 1, 1 / maxRate, beta);
  const prePad = down - (halfLen % down);
  const h = new Float64Array(prePad + core.length);
  for (let i = 0; i < core.length; i++) h[prePad + i] = core[i] * up;
  return { h, preRemove: Math.floor((halfLen + prePad) / down) };
}

/** Number of output samples for n input samples (ceil(n up / down)). */
export function resampledLength(n: number, up: number, down: number): number {
  return Math.ceil((n * up) / down);
}

/**
 * Resample x (zero padding outside the signal, as resample_poly's default
 * padtype 'constant'; subtract a background first for 'mean') into out.
 */
export function resamplePolyInto(
  x: ArrayLike<number>,
  up: number,
  down: number,
  h: Float64Array,
  preRemove: number,
  out: Float64Array,
  background = 0,
): void {
  const n = x.length,
    L = h.length,
    m = out.length;
  for (let j = 0; j < m; j++) {
    // full output index (before removing the filter delay), in the up-sampled domain
    const p = (j + preRemove) * down;
    let kHi = Math.floor(p / up);
    if (kHi > n - 1) kHi = n - 1;
    const kLo = Math.max(0, Math.ceil((p - (L - 1)) / up));
    let acc = 0;
    for (let k = kLo; k <= kHi; k++) acc += h[p - k * up] * (x[k] - background);
    out[j] = acc + background;
  }
}
