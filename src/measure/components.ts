/**
 * Fiber-class components of the compound response.
 *
 * Windows. Each class gets a latency window from the conduction distance and its
 * velocity range (scaled to the recording temperature with Q10): [u + L/vmax, u + L/vmin],
 * with its late end extended by `tailFraction` of its width (a fiber's potential lasts
 * after its arrival). Windows that overlap are split so that every sample belongs to
 * exactly one class: a peak on a boundary is counted once.
 *
 * Separation of overlapping classes ('auto', the default). When neighbouring classes'
 * windows overlap and the set holds two or more conduction distances for the same
 * preparation and temperature, the classes are separated by a decomposition into a
 * conduction-velocity distribution with a shared single-fiber waveform fitted to every
 * distance at once (measure/decompose.ts): each class moves at its own velocity, so the
 * faster class's tail (repolarisation and after-potential) is modelled from its own shape
 * at every site and a slower class that is only a shoulder on it is recovered. Each class is
 * then measured on the recording minus the other classes' modelled components. The split between the classes is
 * the deepest valley of the velocity distribution between their ranges; a class whose part has no separate mode is
 * "not resolved". Where every class has a mode, the distribution is refitted as one log-normal bump per class
 * (fitClassMixture: smooth class membership, so a class's fibres that overlap a neighbour's velocities stay with
 * their own class) and each sweep gets one amplitude per class; the valley split is kept when that fit is refused. With one distance (or `separation: 'trough'`) the
 * boundary is the trough between the two classes' peaks and a slower class without a peak
 * of its own is "not resolved: no separate peak or shoulder".
 *
 * Latencies are measured on each class's own component, each by one definition at every
 * distance, independent of the noise level (see componentLatencyText). The k x noise test
 * decides detection only.
 *
 * Polarity is chosen per class: the main phase of the class in its window, after the
 * stimulus artifact has decayed (from the end of rail clipping), or given per class. In a bipolar recording a slower
 * class whose window holds a faster class's wave at the reference contact takes that faster class's main phase.
 *
 * Peak latency of the fastest class of a decomposition (its component is not smoothed): the vertex of the
 * least-squares parabola through its top (topVertex), the same at any sampling rate.
 */
import type { SweepSet, ConditionValue } from '../sweeps/SweepSet';
import { OptionError, AnalysisError } from '../errors';
import { resolvePreset, scaledRange, type ClassPreset, type FiberClass } from './classes';
import {
  measureResponse,
  noiseMad,
  ownLatencies,
  gaussianSmooth,
  solve3,
  type ResponseMeasure,
  type OwnLatencies,
} from './response';
import {
  fitSharedShape,
  decomposeTrace,
  decomposeTraceMixture,
  fitClassMixture,
  valleyBin,
  MAX_CANCELLATION,
  type ClassMixture,
  type DecomposeGrid,
  type SharedShape,
} from './decompose';
import { normQuantile } from '../fit/dist';
import { sharedShapeScores } from '../fit/models';
import { windowIndices } from '../verbs/baseline';
import { windowMs, warnOnce, checkKeys, didYouMean, DISTANCE_RANGE_MM } from '../validate';
import { VERSION } from '../version';

export type Polarity = 1 | -1 | 'auto';

export interface ComponentOptions {
  /** class preset name ('mammalian', 'mammalian-detailed', 'amphibian'), a preset object, or a list of classes */
  preset?: string | ClassPreset | FiberClass[];
  /** keep only these classes (names) */
  classes?: string[];
  /** conduction distance, mm (default: each sweep's `distanceMm` condition) */
  distanceMm?: number;
  /** temperature, C (default: each sweep's `temperatureC`; without one, no scaling) */
  temperatureC?: number;
  /** Q10 for scaling velocity ranges (default: the preset's) */
  q10?: number;
  /** utilisation time, ms (default 0) */
  utilisationMs?: number;
  /** detection level as a multiple of the noise (default 4); decides detection only */
  k?: number;
  /**
   * main phase: 1 (positive-going), -1 (negative-going), 'auto' (default: per class, the larger phase in the
   * class's window after the artifact), or per class, e.g. { 'A-delta': -1 } (classes not named are 'auto')
   */
  polarity?: Polarity | Record<string, Polarity>;
  /** quiet window for the noise level, ms (default: sweep start to -0.1 ms) */
  noiseWindow?: [number, number];
  /** late extension of each window, as a fraction of its width (default 0.5) ... */
  tailFraction?: number;
  /** ... but at least this many ms (default 0.5: a fiber's potential lasts after its arrival) */
  tailMs?: number;
  /** samples before this time (ms) are never searched (default 0.1: the artifact) */
  earliestMs?: number;
  /** onset level as a fraction of the class's own peak (default 0.1: column onset10_ms) */
  onsetFraction?: number;
  /** the centroid is taken over the span around the peak above this fraction of the own peak (default 0.1) */
  centroidFraction?: number;
  /**
   * overlapping classes: 'auto' (default: the trough between peaks when every sweep shows the slower class's own
   * peak; otherwise the velocity decomposition when the group has two or more distances), 'decompose' (always the
   * decomposition where possible) or 'trough' (never)
   */
  separation?: 'auto' | 'decompose' | 'trough';
  /** conditions whose sweeps share one single-fiber waveform in the decomposition (default: preparation, temperatureC) */
  decomposeBy?: string[];
  /**
   * bipolar recording: conduction distance (mm) of the reference contact, the trace being contact minus reference
   * (default: each sweep's `referenceDistanceMm` condition; none: monopolar)
   */
  referenceDistanceMm?: number;
  /**
   * a class whose window overlaps no other class's is measured above the mean of a quiet flank just before it
   * (default true); false measures it above the sweep's baseline (e.g. paired-pulse test traces, where that flank
   * follows the test stimulus)
   */
  localBaseline?: boolean;
}
export const componentDefaults = {
  preset: 'mammalian',
  k: 4,
  polarity: 'auto' as const,
  tailFraction: 0.5,
  tailMs: 0.5,
  utilisationMs: 0,
  earliestMs: 0.1,
  onsetFraction: 0.1,
  centroidFraction: 0.1,
  separation: 'auto' as const,
};
/** the option keys (also the manifest's, src/io/manifest.ts) */
export const COMPONENT_OPTION_KEYS = [
  'preset',
  'classes',
  'distanceMm',
  'temperatureC',
  'q10',
  'utilisationMs',
  'k',
  'polarity',
  'noiseWindow',
  'tailFraction',
  'tailMs',
  'earliestMs',
  'onsetFraction',
  'centroidFraction',
  'separation',
  'decomposeBy',
  'referenceDistanceMm',
  'localBaseline',
];

export interface ComponentRow {
  sweep: number;
  class: string;
  detected: boolean;
  polarity: number;
  [column: string]: ConditionValue;
}

export interface ResolvedComponentOptions {
  preset: ClassPreset;
  classes: FiberClass[];
  k: number;
  /** the polarity of the first class (kept for callers that expect one value); per class in `polarities` */
  polarity: 1 | -1;
  polarities: Record<string, 1 | -1>;
  polaritySource: Record<string, 'option' | 'auto'>;
  utilisationMs: number;
  q10: number;
  tailFraction: number;
  tailMs: number;
  noiseWindow: [number, number];
  earliestMs: number;
  distanceMm: number | null;
  temperatureC: number | null;
  onsetFraction: number;
  centroidFraction: number;
  separation: 'auto' | 'decompose' | 'trough';
  decomposeBy: string[];
}

import { onsetColumn, componentLatencyText } from './latencyText';
export { onsetColumn, componentLatencyText, latencyMethodsText } from './latencyText';

/** Options of clipEndMs. */
export interface ClipOptions {
  /**
   * the amplifier's rails [low, high] in signal units, e.g. the extremes of every sweep of a recording (default: this
   * sweep's own minimum and maximum); a sweep extreme further than 5% of the rail from it (more than a baseline shift) is not on the rail
   */
  rail?: [number, number];
  /** shortest stretch on the rail that counts as clipping, ms (default 0.04; and at least 2 samples) */
  minRunMs?: number;
}

/**
 * Robust standard deviation of the sample-to-sample noise: the median absolute first difference / (0.6745 sqrt 2)
 * (common practice, no source: the MAD of differences ignores slow waves and a few large steps).
 */
function diffNoise(x: ArrayLike<number>): number {
  const d = new Float64Array(Math.max(0, x.length - 1));
  for (let i = 1; i < x.length; i++) d[i - 1] = Math.abs(x[i] - x[i - 1]);
  d.sort();
  return d.length ? d[Math.floor(d.length / 2)] / (0.6745 * Math.SQRT2) : 0;
}

/** Whether samples a..b lie within maxDev of one least-squares parabola (the top of a smooth wave). */
function smoothTop(x: ArrayLike<number>, a: number, b: number, maxDev: number): boolean {
  const m = b - a + 1;
  if (m < 4) return true;
  // normal equations of y = c0 + c1 u + c2 u^2, u centred
  const mid = (a + b) / 2;
  const S = new Float64Array(5),
    T = new Float64Array(3);
  for (let i = a; i <= b; i++) {
    const u = i - mid;
    let p = 1;
    for (let k = 0; k < 5; k++) {
      S[k] += p;
      if (k < 3) T[k] += p * x[i];
      p *= u;
    }
  }
  const M = [
    [S[0], S[1], S[2], T[0]],
    [S[1], S[2], S[3], T[1]],
    [S[2], S[3], S[4], T[2]],
  ];
  for (let c = 0; c < 3; c++) {
    let p = c;
    for (let r = c + 1; r < 3; r++) if (Math.abs(M[r][c]) > Math.abs(M[p][c])) p = r;
    [M[c], M[p]] = [M[p], M[c]];
    for (let r = 0; r < 3; r++)
      if (r !== c) {
        const q = M[r][c] / M[c][c];
        for (let k = c; k < 4; k++) M[r][k] -= q * M[c][k];
      }
  }
  const c0 = M[0][3] / M[0][0],
    c1 = M[1][3] / M[1][1],
    c2 = M[2][3] / M[2][2];
  for (let i = a; i <= b; i++) {
    const u = i - mid;
    if (Math.abs(x[i] - (c0 + c1 * u + c2 * u * u)) > maxDev) return false;
  }
  return true;
}

/**
 * End (ms) of rail clipping after the stimulus: the last sample of the last run, between fromMs and toMs, of samples
 * within a tolerance of the sweep's extreme that lasts at least `minRunMs` (and 2 samples); null when there is none.
 * The tolerance is 0.1% of the extreme (at least of the sweep's range), or, when no run is found so, 4 x the sample-to-sample noise SD (diffNoise)
 * about the median of the samples within 6 SDs of the extreme, so that a rail perturbed after the amplifier (hum,
 * noise, rounding on storage) is still found; the run must not be the top of a smooth wave (a parabola through it and
 * one sample on either side misses one by more than twice the tolerance: a rail is hit or left at once) and lie
 * more than 20 tolerances and a quarter of the sweep's range from the median sample (the floor of a one-signed
 * wave is no rail), and a sweep whose
 * extreme is more than 5% away from `rail` (when given) does not reach the rail at all (common practice, no source).
 */
export function clipEndMs(
  x: ArrayLike<number>,
  t0Ms: number,
  dtMs: number,
  fromMs = 0,
  toMs = 20,
  options: ClipOptions = {},
): number | null {
  const minRunMs = options.minRunMs ?? 0.04;
  if (!(minRunMs >= 0)) throw new OptionError(`invalid minRunMs: ${minRunMs}; must be >= 0 ms`);
  const i0 = Math.max(0, Math.ceil((fromMs - t0Ms) / dtMs)),
    i1 = Math.min(x.length - 1, Math.floor((toMs - t0Ms) / dtMs));
  let mx = -Infinity,
    mn = Infinity;
  for (let i = 0; i < x.length; i++) {
    if (x[i] > mx) mx = x[i];
    if (x[i] < mn) mn = x[i];
  }
  const sd = diffNoise(x);
  const sorted = Float64Array.from(x).sort();
  const mid = sorted.length ? sorted[Math.floor(sorted.length / 2)] : 0;
  const minRun = Math.max(2, Math.ceil(minRunMs / dtMs - 1e-9));
  const levels = [mx, mn].filter((v, j) => {
    const r = options.rail?.[j === 0 ? 1 : 0];
    return r === undefined || Math.abs(v - r) <= 0.05 * Math.abs(r);
  });
  // the last run of `minRun` or more samples within tol of v that is not the top of a smooth wave (a parabola through
  // the run and one sample on either side misses one of them by more than twice the tolerance: a rail is hit or left
  // at once), v far from the baseline (the median sample: at least 20 tolerances; the floor of a one-signed wave is
  // no rail)
  // a rail is the sweep's largest excursion: at least a quarter of the sweep's range from the median sample
  const farOut = (v: number, tol: number) => Math.abs(v - mid) > Math.max(20 * tol, 0.25 * (mx - mn));
  const runEnd = (v: number, tol: number): number | null => {
    if (!farOut(v, tol)) return null;
    let end: number | null = null;
    for (let i = i0; i <= i1; i++) {
      if (!(Math.abs(x[i] - v) <= tol)) continue;
      let j = i;
      while (j + 1 <= i1 && Math.abs(x[j + 1] - v) <= tol) j++;
      const abrupt = j - i + 1 >= minRun && !smoothTop(x, Math.max(0, i - 1), Math.min(x.length - 1, j + 1), 2 * tol);
      if (abrupt) end = j;
      i = j;
    }
    return end;
  };
  let last: number | null = null;
  const onRail: { v: number; tol: number }[] = [];
  for (const ext of levels) {
    // first within 0.1% of the extreme (a rail recorded as it is, or moved by a slow hum); when that finds no run, or
    // one whose samples vary (noise on the rail), a rail with noise on it: its level the median of the samples within
    // 6 noise SDs of the extreme (the extreme is the rail plus the largest excursion), and within 4 noise SDs of it
    // (0.1% of the extreme, or of the sweep's range when the extreme is near zero: never a zero tolerance)
    const tight = 1e-3 * Math.max(Math.abs(ext), mx - mn);
    let end = runEnd(ext, tight);
    let level = { v: ext, tol: tight };
    // a run whose samples spread by more than half the tight tolerance has noise on it: the noise tolerance decides
    let spread = 0;
    if (end !== null) {
      let lo = x[end],
        hi = x[end];
      for (let i = end; i >= i0 && Math.abs(x[i] - ext) <= tight; i--) {
        lo = Math.min(lo, x[i]);
        hi = Math.max(hi, x[i]);
      }
      spread = hi - lo;
    }
    if (end === null || spread > tight / 2) {
      const near: number[] = [];
      for (let i = i0; i <= i1; i++) if (Math.abs(x[i] - ext) <= 6 * sd) near.push(x[i]);
      near.sort((p, q) => p - q);
      const v = near.length ? near[Math.floor(near.length / 2)] : ext;
      const loose = { v, tol: Math.max(tight, 4 * sd) };
      const e2 = runEnd(loose.v, loose.tol);
      if (e2 !== null && (end === null || e2 >= end)) {
        end = e2;
        level = loose;
      }
    }
    if (farOut(level.v, level.tol)) onRail.push(level);
    if (end !== null && (last === null || end > last)) last = end;
  }
  // samples right after the last run that sit on either rail are clipped too (a stimulus that swings from one rail to
  // the other stays a single sample on the second)
  const railed = (v: number) => onRail.some((r) => Math.abs(v - r.v) <= r.tol);
  if (last !== null) while (last + 1 <= i1 && railed(x[last + 1])) last++;
  return last === null ? null : t0Ms + last * dtMs;
}

/**
 * The stimulus artifact's decay after rail clipping, a exp(-(t - t1) / tau) from the first unclipped sample t1:
 * log-linear least squares on the first three unclipped samples, where the artifact is close to the rail and the
 * compound response small beside it (common practice, no source). Null when they do not decay monotonically
 * towards zero from the rail's side.
 */
export function artifactDecay(
  x: ArrayLike<number>,
  clipIndex: number,
): { from: number; a: number; tauSamples: number } | null {
  const i1 = clipIndex + 1;
  if (i1 + 2 >= x.length) return null;
  const v = [x[i1], x[i1 + 1], x[i1 + 2]];
  const sgn = Math.sign(x[clipIndex]);
  if (!v.every((q) => Math.sign(q) === sgn) || !(Math.abs(v[0]) > Math.abs(v[1]) && Math.abs(v[1]) > Math.abs(v[2])))
    return null;
  const l = v.map((q) => Math.log(Math.abs(q)));
  const slope = (l[2] - l[0]) / 2;
  const icpt = (l[0] + l[1] + l[2]) / 3 - slope;
  if (!(slope < 0)) return null;
  return { from: i1, a: sgn * Math.exp(icpt), tauSamples: -1 / slope };
}

/** A stretch of one sweep where only the stimulus artifact is recorded (sample indices, the same time base for all). */
export interface ArtifactStretch {
  x: ArrayLike<number>;
  /** first sample after rail clipping */
  from: number;
  /** last sample before the earliest class can arrive (may be below `from`: then only the scale is fitted) */
  to: number;
}

/**
 * The artifact's shape after rail clipping, shared by a set of sweeps: f(i) = exp(-(i - ref) / tau1) + rho
 * exp(-(i - ref) / tau2) (sample units; one exponential when rho is 0), each sweep scaled by its own factor.
 */
export interface ArtifactShape {
  ref: number;
  tau1: number;
  tau2: number;
  rho: number;
  /** residual sum of squares over the fitted samples and their number */
  rss: number;
  n: number;
}

export const artifactShapeValue = (f: ArtifactShape, i: number): number =>
  Math.exp(-(i - f.ref) / f.tau1) + (f.rho !== 0 ? f.rho * Math.exp(-(i - f.ref) / f.tau2) : 0);

/** Least-squares scale g of a shape on samples [from, max(from, to)] of x, and its residual sum of squares. */
function scaleFit(x: ArrayLike<number>, f: ArtifactShape, from: number, to: number): { g: number; rss: number } {
  let yy = 0,
    yf = 0,
    ff = 0;
  for (let i = from; i <= Math.max(from, to) && i < x.length; i++) {
    const v = artifactShapeValue(f, i);
    yy += x[i] * x[i];
    yf += x[i] * v;
    ff += v * v;
  }
  const g = ff > 0 ? yf / ff : 0;
  return { g, rss: Math.max(0, yy - g * yf) };
}

/** Least-squares scale of a shape on samples [from, max(from, to)] of x (scaleFit). */
export function artifactScale(x: ArrayLike<number>, f: ArtifactShape, from: number, to: number): number {
  return scaleFit(x, f, from, to).g;
}

/** Nelder-Mead simplex minimisation (Nelder and Mead 1965, standard coefficients 1, 2, 0.5, 0.5). */
function nelderMead(fn: (p: number[]) => number, start: number[], step: number[], iterations = 400): number[] {
  const m = start.length;
  let simplex = [start, ...start.map((_, k) => start.map((v, j) => (j === k ? v + step[k] : v)))];
  let vals = simplex.map(fn);
  for (let it = 0; it < iterations; it++) {
    const order = vals.map((_, i) => i).sort((a, b) => vals[a] - vals[b]);
    simplex = order.map((i) => simplex[i]);
    vals = order.map((i) => vals[i]);
    if (Math.abs(vals[m] - vals[0]) <= 1e-12 * (Math.abs(vals[0]) + 1e-300)) break;
    const c = start.map((_, j) => simplex.slice(0, m).reduce((acc, p) => acc + p[j], 0) / m);
    const at = (t: number) => c.map((v, j) => v + t * (simplex[m][j] - v));
    const r = at(-1),
      fr = fn(r);
    if (fr < vals[0]) {
      const e = at(-2),
        fe = fn(e);
      [simplex[m], vals[m]] = fe < fr ? [e, fe] : [r, fr];
    } else if (fr < vals[m - 1]) [simplex[m], vals[m]] = [r, fr];
    else {
      const k = at(fr < vals[m] ? -0.5 : 0.5),
        fk = fn(k);
      if (fk < Math.min(fr, vals[m])) [simplex[m], vals[m]] = [k, fk];
      else
        for (let i = 1; i <= m; i++) {
          simplex[i] = simplex[i].map((v, j) => simplex[0][j] + 0.5 * (v - simplex[0][j]));
          vals[i] = fn(simplex[i]);
        }
    }
  }
  return simplex[vals.indexOf(Math.min(...vals))];
}

/**
 * The artifact's decay after rail clipping, one shape for a set of sweeps (the same stimulus through the same
 * electrodes: the artifact has the same time course at every site and intensity, scaled): one or two exponentials
 * fitted by least squares over every sweep's artifact-only stretch (from the end of clipping to the earliest arrival
 * of the fastest class; a far site shows it longest), each sweep with its own scale (variable projection; the time
 * constants and the second term's relative size by Nelder-Mead). The second exponential is kept when it lowers the
 * Bayesian information criterion, n ln(RSS / n) + k ln n (Schwarz 1978), its time constant at most three times the
 * longest stretch (a slower decay is not seen there). Null when fewer than three samples are artifact-only.
 */
export function fitArtifactShape(stretches: ArtifactStretch[]): ArtifactShape | null {
  const use = stretches.filter((q) => q.to >= q.from + 2 && q.from >= 0);
  const n = use.reduce((acc, q) => acc + Math.min(q.to, q.x.length - 1) - q.from + 1, 0);
  if (n < 3) return null;
  const ref = Math.min(...use.map((q) => q.from));
  const span = Math.max(...use.map((q) => q.to - q.from + 1));
  const rssOf = (f: ArtifactShape): number => {
    let rss = 0;
    for (const q of use) rss += scaleFit(q.x, f, q.from, q.to).rss;
    return rss;
  };
  const tauMin = 0.2,
    tauMax = 3 * span;
  const one = (lt: number): ArtifactShape => {
    const tau1 = Math.min(tauMax, Math.max(tauMin, Math.exp(lt)));
    return { ref, tau1, tau2: tau1, rho: 0, rss: 0, n };
  };
  // one exponential: a coarse scan of log tau, then the simplex
  let best1 = Math.log(tauMin);
  for (let lt = Math.log(tauMin); lt <= Math.log(tauMax); lt += 0.1) if (rssOf(one(lt)) < rssOf(one(best1))) best1 = lt;
  best1 = nelderMead((p) => rssOf(one(p[0])), [best1], [0.1])[0];
  const f1 = one(best1);
  f1.rss = rssOf(f1);
  if (n < 6) return f1;
  // two exponentials: tau2 = tau1 (1 + e^q) > tau1, started from several ratios
  const two = (p: number[]): ArtifactShape => {
    const tau1 = Math.min(tauMax, Math.max(tauMin, Math.exp(p[0])));
    const tau2 = Math.min(tauMax, tau1 * (1 + Math.exp(p[1])));
    return { ref, tau1, tau2, rho: p[2], rss: 0, n };
  };
  let f2: ArtifactShape | null = null;
  for (const q0 of [Math.log(2), Math.log(9), Math.log(49)]) {
    const p = nelderMead((v) => rssOf(two(v)), [Math.log(f1.tau1), q0, 0.01], [0.2, 0.5, 0.05], 600);
    const f = two(p);
    f.rss = rssOf(f);
    if (!f2 || f.rss < f2.rss) f2 = f;
  }
  const bic = (rss: number, k: number) => n * Math.log(Math.max(rss, 1e-300) / n) + k * Math.log(n);
  const k0 = use.length;
  return f2 && f2.tau2 > 1.5 * f2.tau1 && bic(f2.rss, k0 + 3) < bic(f1.rss, k0 + 1) ? f2 : f1;
}

interface Win {
  a: number;
  b: number;
}

/**
 * Whether the slower of two overlapping classes shows a peak of its own: a local maximum (3-point smoothed, polarity p)
 * inside its window after the faster class's peak, with a lower point between the two.
 */
function ownPeak(x: ArrayLike<number>, fast: Win, slow: Win, p: 1 | -1, n: number): boolean {
  const y = (i: number) => (p * (x[Math.max(0, i - 1)] + x[i] + x[Math.min(n - 1, i + 1)])) / 3;
  const fb = Math.min(fast.b, n - 1),
    sb = Math.min(slow.b, n - 1);
  let p1 = fast.a;
  for (let i = fast.a; i <= fb; i++) if (y(i) > y(p1)) p1 = i;
  let p2 = Math.max(slow.a, p1 + 1);
  if (p2 >= sb) return false;
  for (let i = p2; i <= sb; i++) if (y(i) > y(p2)) p2 = i;
  if (p2 <= p1 + 1 || p2 >= sb) return false;
  let tr = Infinity;
  for (let i = p1 + 1; i < p2; i++) tr = Math.min(tr, y(i));
  return tr < y(p2) && y(p2) >= y(p2 - 1) && y(p2) >= y(p2 + 1);
}

/** Fraction of its own maximum within which the top of a wave is fitted by a parabola (topVertex). */
export const PEAK_TOP_FRACTION = 0.02;

/**
 * Peak time (fractional sample index) of a wave whose largest sample is y[ip]: the vertex of the least-squares
 * parabola through the contiguous samples around ip within max(PEAK_TOP_FRACTION of the maximum, 3 noise SDs) of it
 * (at least one on each side, within [lo, hi]: a sharp top gives the three-point parabola). The span is a property
 * of the wave's shape and the noise, not a count of samples, so the same wave sampled at 50 or 100 kHz gives the
 * same time; a flat top whose samples differ by less than the noise is not decided by its single largest sample
 * (the three-point parabola of that sample moves by a sample with the noise). The vertex is kept within the fitted span; null when the parabola does not open
 * downwards (common practice, no source: local polynomial regression of a peak).
 */
export function topVertex(y: ArrayLike<number>, ip: number, lo: number, hi: number, noise: number): number | null {
  const P = y[ip];
  if (!(P > 0) || ip <= lo || ip >= hi) return null;
  const level = P - Math.max(PEAK_TOP_FRACTION * P, 3 * (noise > 0 ? noise : 0));
  let a = ip,
    b = ip;
  while (a > lo && (y[a - 1] > level || a === ip)) a--;
  while (b < hi && (y[b + 1] > level || b === ip)) b++;
  if (b - a < 2) return null;
  // y = c0 + c1 u + c2 u^2, u = i - ip (normal equations, 3 x 3)
  const S = new Float64Array(5),
    T = new Float64Array(3);
  for (let i = a; i <= b; i++) {
    const u = i - ip;
    let q = 1;
    for (let k = 0; k < 5; k++) {
      S[k] += q;
      if (k < 3) T[k] += q * y[i];
      q *= u;
    }
  }
  const c = solve3([S[0], S[1], S[2], S[1], S[2], S[3], S[2], S[3], S[4]], [T[0], T[1], T[2]]);
  if (!c || !(c[2] < 0)) return null;
  const v = ip - c[1] / (2 * c[2]);
  return Math.min(b, Math.max(a, v));
}

/** Measure each fiber class in every sweep. */
export function measureComponents(
  set: SweepSet,
  options: ComponentOptions = {},
): { rows: ComponentRow[]; measures: ResponseMeasure[][]; resolved: ResolvedComponentOptions } {
  checkKeys('components options', options, COMPONENT_OPTION_KEYS);
  const presetArg =
    options.preset ??
    (set.extras.manifest as { classPreset?: string } | undefined)?.classPreset ??
    componentDefaults.preset;
  const preset = resolvePreset(presetArg);
  let classes = [...preset.classes].sort((a, b) => b.velocity[1] - a.velocity[1]);
  if (options.classes) {
    for (const c of options.classes)
      if (!classes.some((k) => k.name === c))
        throw new OptionError(
          `invalid classes: ${JSON.stringify(c)} is not in preset ${preset.name} (${classes.map((k) => k.name).join(', ')})`,
        );
    classes = classes.filter((c) => options.classes!.includes(c.name));
  }
  const k = options.k ?? componentDefaults.k;
  if (!(k > 0)) throw new OptionError(`invalid k: ${k}; must be > 0`);
  const tailFraction = options.tailFraction ?? componentDefaults.tailFraction;
  if (!(tailFraction >= 0 && tailFraction <= 5))
    throw new OptionError(`invalid tailFraction: ${tailFraction}; must be 0 <= tailFraction <= 5`);
  const tailMs = options.tailMs ?? componentDefaults.tailMs;
  if (!(tailMs >= 0 && tailMs <= 100))
    throw new OptionError(`invalid tailMs: ${tailMs}; must be 0 <= tailMs <= 100 ms`);
  const util = options.utilisationMs ?? componentDefaults.utilisationMs;
  if (!(util >= 0 && util < 10))
    throw new OptionError(`invalid utilisationMs: ${util}; must be 0 <= utilisationMs < 10 ms`);
  const q10 = options.q10 ?? preset.q10;
  if (!(q10 > 0)) throw new OptionError(`invalid q10: ${q10}; must be > 0`);
  const earliest = options.earliestMs ?? componentDefaults.earliestMs;
  const localBaseline = options.localBaseline ?? true;
  if (typeof localBaseline !== 'boolean')
    throw new OptionError(`invalid localBaseline: ${JSON.stringify(localBaseline)}; expected true or false`);
  const onsetFraction = options.onsetFraction ?? componentDefaults.onsetFraction;
  if (!(onsetFraction > 0 && onsetFraction < 1))
    throw new OptionError(
      `invalid onsetFraction: ${onsetFraction}; must be 0 < onsetFraction < 1 (a fraction of the class's own peak, e.g. 0.1)`,
    );
  const centroidFraction = options.centroidFraction ?? componentDefaults.centroidFraction;
  if (!(centroidFraction >= 0 && centroidFraction < 1))
    throw new OptionError(`invalid centroidFraction: ${centroidFraction}; must be 0 <= centroidFraction < 1`);
  const separation = options.separation ?? componentDefaults.separation;
  if (separation !== 'auto' && separation !== 'trough' && separation !== 'decompose')
    throw new OptionError(
      `invalid separation: ${JSON.stringify(separation)}; must be "auto", "decompose" or "trough"${didYouMean(String(separation), ['auto', 'decompose', 'trough'])}`,
    );
  const decomposeBy =
    options.decomposeBy ?? ['preparation', 'temperatureC'].filter((c) => set.conditions.some((q) => c in q));
  if (!Array.isArray(decomposeBy) || decomposeBy.some((c) => typeof c !== 'string'))
    throw new OptionError(`invalid decomposeBy: ${JSON.stringify(decomposeBy)}; must be a list of condition names`);
  if (!(set.t0Ms < -0.2) && !options.noiseWindow)
    throw new OptionError(
      `invalid noiseWindow: the sweeps start at ${set.t0Ms} ms, so there is no pre-stimulus window for the noise level; give noiseWindow: [from, to] in ms (a quiet part of the sweep)`,
    );
  const noiseWindow = windowMs('noiseWindow', options.noiseWindow ?? [set.t0Ms, -0.1]);
  const [na, nb] = windowIndices(set, noiseWindow, 'noiseWindow');
  if (nb - na < 10)
    throw new OptionError(`invalid noiseWindow: [${noiseWindow}] ms holds ${nb - na + 1} samples; need at least 11`);

  // polarity options: one value or one per class
  const popt = options.polarity ?? componentDefaults.polarity;
  const polOpt: Record<string, Polarity> = {};
  const okPol = (v: unknown): v is Polarity => v === 1 || v === -1 || v === 'auto';
  if (typeof popt === 'object' && popt !== null) {
    checkKeys(
      'polarity (class names)',
      popt,
      classes.map((c) => c.name),
    );
    for (const [name, v] of Object.entries(popt)) {
      if (!okPol(v))
        throw new OptionError(
          `invalid polarity for class ${JSON.stringify(name)}: ${JSON.stringify(v)}; must be 1, -1 or "auto"`,
        );
      polOpt[name] = v;
    }
  } else if (okPol(popt)) for (const c of classes) polOpt[c.name] = popt;
  else
    throw new OptionError(
      `invalid polarity: ${JSON.stringify(popt)}; must be 1, -1, "auto" or an object of class name -> 1, -1 or "auto"`,
    );

  const distOf = (i: number): number => {
    const d = options.distanceMm ?? set.conditions[i].distanceMm;
    // name the file and its own sweep where the set came from files (sweep i of an averaged set is hard to find)
    const c = set.conditions[i];
    const where =
      `sweep ${i}` + (c.file !== undefined ? ` (${String(c.file)}, sweep ${String(c.fileSweep ?? '?')})` : '');
    if (typeof d !== 'number' || !(d > 0))
      throw new AnalysisError(
        `${where}: no conduction distance; give the condition distanceMm (mm) or the option distanceMm`,
      );
    if (d > DISTANCE_RANGE_MM[1] || d < DISTANCE_RANGE_MM[0])
      throw new AnalysisError(
        `${where}: conduction distance ${d} mm is implausible for an isolated nerve ` +
          `(expected ${DISTANCE_RANGE_MM[0]}-${DISTANCE_RANGE_MM[1]} mm); is it in another unit (m or cm)?`,
      );
    return d;
  };
  const refOf = (i: number): number | null => {
    const r = options.referenceDistanceMm ?? set.conditions[i].referenceDistanceMm;
    if (r === undefined || r === null) return null;
    if (typeof r !== 'number' || !(r > distOf(i)))
      throw new OptionError(
        `invalid referenceDistanceMm for sweep ${i}: ${JSON.stringify(r)}; must be a number of mm beyond the recording contact (${distOf(i)} mm)`,
      );
    return r;
  };
  const tempOf = (i: number): number | undefined => {
    const T = options.temperatureC ?? set.conditions[i].temperatureC;
    if (typeof T === 'number') return T;
    warnOnce(
      'components-no-temperature',
      `no temperature for some sweeps: class velocity ranges are used unscaled (as at ${preset.refTemperatureC} C)`,
    );
    return undefined;
  };

  const n = set.nSamples,
    dt = set.dtMs;
  const iEarliest = set.indexAt(earliest);
  const tAt = (fi: number) => set.timeAt(0) + fi * dt;
  // the artifact's decay after rail clipping: its time constant is estimated at the farthest site of each group
  // (decomposeBy), where the compound response arrives last and disturbs the estimate least, and used at every site
  const groupOf = (s: number) => decomposeBy.map((c) => String(set.conditions[s][c] ?? '')).join('|');
  // a sweep whose noise (in the noise window, as recorded) is more than ten times the set's median noise (a glitch,
  // a spike spread by a filter, a loose lead) is measured on its own but takes no part in what the sweeps share (the
  // amplifier's rails, polarity, the blocked reference, the decomposition's shared waveform, the shared amplitude
  // shape): one wild sweep must not decide them for the others (common practice, no source)
  const rawNoise = Array.from({ length: set.nSweeps }, (_, s) => noiseMad(set.sweep(s), na, nb));
  const noiseMedian = (() => {
    const v = rawNoise.filter((x) => Number.isFinite(x) && x > 0).sort((a, b) => a - b);
    return v.length ? v[Math.floor(v.length / 2)] : NaN;
  })();
  const wild = (s: number) => Number.isFinite(noiseMedian) && !(rawNoise[s] <= 10 * noiseMedian);
  const tame = (list: number[]) => (list.some((s) => !wild(s)) ? list.filter((s) => !wild(s)) : list);
  // the amplifier's rails: the extremes over every sweep but the wild ones (a sweep that clips sits on one of them)
  let railLo = Infinity,
    railHi = -Infinity;
  for (const s of tame(Array.from({ length: set.nSweeps }, (_, i) => i))) {
    const x = set.sweep(s);
    for (let i = 0; i < x.length; i++) {
      if (x[i] < railLo) railLo = x[i];
      if (x[i] > railHi) railHi = x[i];
    }
  }
  const clips = Array.from({ length: set.nSweeps }, (_, s) =>
    clipEndMs(set.sweep(s), set.t0Ms, dt, 0, 20, { rail: [railLo, railHi] }),
  );
  // the artifact's shape after rail clipping, one per preparation (the same stimulus through the same electrodes),
  // fitted on every clipped sweep from the end of clipping to the earliest arrival of the preset's fastest class
  // (fastest fibers of its velocity range at the sweep's temperature); each sweep is scaled on its own stretch (at
  // least its first unclipped sample, where the artifact is near the rail and the response small beside it)
  const artKey = (s: number) => String(set.conditions[s].preparation ?? '');
  const fastest = [...preset.classes].sort((p, q) => q.velocity[1] - p.velocity[1])[0];
  const arrivalIndex = (s: number) => {
    const vhi = scaledRange(fastest, preset, tempOf(s), q10)[1];
    return set.indexAt(Math.max(util + distOf(s) / vhi, earliest));
  };
  const stretchOf = (s: number): ArtifactStretch | null =>
    clips[s] === null ? null : { x: set.sweep(s), from: set.indexAt(clips[s]!) + 1, to: arrivalIndex(s) - 1 };
  const shapeOf = new Map<string, ArtifactShape | null>();
  {
    const by = new Map<string, ArtifactStretch[]>();
    for (let s = 0; s < set.nSweeps; s++) {
      const q = stretchOf(s);
      if (q) (by.get(artKey(s)) ?? by.set(artKey(s), []).get(artKey(s))!).push(q);
    }
    for (const [key, v] of by) {
      let f = fitArtifactShape(v);
      if (!f) {
        // too few artifact-only samples for a fit: one exponential, its time constant the median of log-linear fits
        // to the first three unclipped samples at the farthest site (artifactDecay), where the response arrives last
        const members = [...Array(set.nSweeps).keys()].filter((s) => clips[s] !== null && artKey(s) === key);
        const far = Math.max(...members.map(distOf));
        const taus = members
          .filter((s) => distOf(s) === far)
          .map((s) => artifactDecay(set.sweep(s), set.indexAt(clips[s]!))?.tauSamples)
          .filter((t): t is number => t !== undefined)
          .sort((a, b) => a - b);
        if (taus.length) {
          const tau1 = taus[Math.floor(taus.length / 2)];
          f = { ref: Math.min(...v.map((q) => q.from)), tau1, tau2: tau1, rho: 0, rss: NaN, n: 0 };
        }
      }
      shapeOf.set(key, f);
    }
  }
  // the artifact is linear in the stimulus current: at one site its scale per unit of intensity is taken from the
  // sweeps where clipping ends longest before the response can arrive (the earliest arrival minus the first
  // unclipped sample, within one sample of the best; of those the most blocked, at the highest concentration; their
  // median): there the response adds least to the first unclipped samples. A sweep with fewer than three artifact-only samples of its own takes that per-unit scale times
  // its intensity (common practice, no source: the volume-conducted artifact is proportional to the current)
  const siteKey = (s: number) => `${artKey(s)}|${distOf(s)}|${refOf(s) ?? ''}`;
  const intensityOf = (s: number) => {
    const v = set.conditions[s].intensity;
    return typeof v === 'number' && v > 0 ? v : null;
  };
  const concOf = (s: number) => {
    const v = set.conditions[s].concentration;
    return typeof v === 'number' && v > 0 ? v : 0;
  };
  const perUnit = new Map<string, number>();
  {
    const by = new Map<string, { margin: number; conc: number; k: number }[]>();
    for (let s = 0; s < set.nSweeps; s++) {
      const q = stretchOf(s),
        f = shapeOf.get(artKey(s)),
        I = intensityOf(s);
      if (!q || !f || I === null) continue;
      const e = { margin: q.to - q.from, conc: concOf(s), k: artifactScale(q.x, f, q.from, q.to) / I };
      (by.get(siteKey(s)) ?? by.set(siteKey(s), []).get(siteKey(s))!).push(e);
    }
    for (const [key, v0] of by) {
      const best = Math.max(...v0.map((e) => e.margin));
      const v1 = v0.filter((e) => e.margin >= best - 1);
      // among those, the most blocked (the highest concentration): the smallest response on the first samples
      const cTop = Math.max(...v1.map((e) => e.conc));
      const v = v1
        .filter((e) => e.conc === cTop)
        .map((e) => e.k)
        .sort((a, b) => a - b);
      perUnit.set(key, v[Math.floor(v.length / 2)]);
    }
  }
  const polStartOf = (clip: number) => set.indexAt(clip + Math.max(0.05, clip));
  // per sweep: distance, temperature, noise, artifact end (rail clipping) and raw class windows
  const info = Array.from({ length: set.nSweeps }, (_, s) => {
    const raw0 = set.sweep(s);
    const L = distOf(s),
      T = tempOf(s);
    const clip = clips[s];
    // after rail clipping the artifact's decay (the preparation's shape, this sweep's scale) is subtracted
    const q = stretchOf(s);
    const shape = q ? (shapeOf.get(artKey(s)) ?? null) : null;
    let decay: { from: number; tauSamples: number; value: (i: number) => number } | null = null;
    if (q && shape) {
      const k0 = perUnit.get(siteKey(s)),
        I = intensityOf(s);
      const g =
        q.to - q.from + 1 >= 3 || k0 === undefined || I === null ? artifactScale(raw0, shape, q.from, q.to) : k0 * I;
      decay = { from: q.from, tauSamples: shape.tau1, value: (i) => g * artifactShapeValue(shape, i) };
    }
    let x: ArrayLike<number> = raw0;
    if (decay) {
      const c = Float64Array.from(raw0);
      for (let i = decay.from; i < n; i++) c[i] -= decay.value(i);
      x = c;
    }
    // the decomposition fits from the end of rail clipping (with the artifact's decay as a nuisance term); the
    // polarity decision waits until the artifact has decayed: as long again as the clipping lasted from the
    // stimulus (at least 0.05 ms; common practice, no source)
    // fitted from two fast time constants after the clipping when its decay was subtracted (the error of the
    // subtraction, proportional to the fast term, has fallen to e^-2 of it), otherwise once the artifact has decayed
    const fitStart = Math.max(
      iEarliest,
      clip === null ? 0 : decay ? decay.from + Math.ceil(2 * decay.tauSamples) - 1 : polStartOf(clip),
    );
    const polStart = Math.max(iEarliest, clip === null ? 0 : polStartOf(clip));
    const wins: Win[] = classes.map((c) => {
      const [vlo, vhi] = scaledRange(c, preset, T, q10);
      const t0 = util + L / vhi,
        t1 = util + L / vlo;
      // clipped samples carry no signal: a window starts after the rail at the earliest
      const a = Math.max(set.indexAt(Math.max(t0, earliest)), iEarliest, clip === null ? 0 : set.indexAt(clip) + 1);
      const b = set.indexAt(t1 + Math.max(tailMs, tailFraction * (t1 - t0)));
      return { a, b };
    });
    return { L, T, noise: noiseMad(x, na, nb), clip, decay, x, fitStart, polStart, wins };
  });

  // the artifact's late tail, one per preparation: a slow decay (time constants of ms) left after the rail's fast
  // decay, or after blanking, lies under the slower classes' early edges (a 3 ms tail of 0.1 mV/mA is still 18 uV
  // at 12 ms after a 10 mA stimulus). It has the same time course in every sweep of a preparation (the same
  // electrodes), its size proportional to the stimulus current at each site (common practice, no source), while the
  // responses move with temperature, distance and drug; so it is fitted on the samples where no class can be
  // recorded: after every faster class's window and before the slowest class's window (the slowest class's fastest
  // fibers at the sweep's temperature), of every sweep at once: one or two exponentials with time constants shared
  // by the preparation (a ladder of time constants, ratio 1.2, from a fifth of the earliest such stretch's start to
  // its latest end), amplitudes per site times the sweep's current (linear least squares), the number of terms by the
  // Bayesian information criterion (Schwarz 1978) against no tail, and only when it exceeds the noise level at the
  // start of some sweep's stretch. It is subtracted from the end of the faster classes' windows on, where it decays
  // towards zero (never extrapolated backwards under a faster class).
  if (classes.length >= 2) {
    const last = classes.length - 1;
    const tailFrom = (s: number) => {
      let g0 = info[s].fitStart;
      for (let ci = 0; ci < last; ci++) g0 = Math.max(g0, info[s].wins[ci].b + 1);
      // a bipolar recording shows the faster classes again (inverted) when they reach the reference contact
      const ref = refOf(s);
      if (ref !== null)
        for (let ci = 0; ci < last; ci++) {
          const [vlo, vhi] = scaledRange(classes[ci], preset, info[s].T, q10);
          const t0 = util + ref / vhi,
            t1 = util + ref / vlo;
          g0 = Math.max(g0, set.indexAt(t1 + Math.max(tailMs, tailFraction * (t1 - t0))) + 1);
        }
      return g0;
    };
    const byPrep = new Map<string, number[]>();
    // a sweep with a second stimulus (paired pulses, a train) has responses to the other stimulus running through
    // every stretch between the windows: no such stretch is free of responses there, so it neither sets nor gets a tail
    const oneStimulus = (s: number) => {
      const c = set.conditions[s];
      return typeof c.intervalMs !== 'number' && c.trainHz === undefined && c.pulsesMs === undefined;
    };
    for (let s = 0; s < set.nSweeps; s++)
      if (!wild(s) && oneStimulus(s)) (byPrep.get(artKey(s)) ?? byPrep.set(artKey(s), []).get(artKey(s))!).push(s);
    for (const members of byPrep.values()) {
      const gaps = members
        .map((s) => ({ s, g0: tailFrom(s), g1: Math.min(n - 1, info[s].wins[last].a - 1) }))
        .filter((q) => q.g1 - q.g0 + 1 >= 5);
      const nFit = gaps.reduce((acc, q) => acc + q.g1 - q.g0 + 1, 0);
      if (gaps.length === 0 || nFit < 20) continue;
      const sites = [...new Set(gaps.map((q) => siteKey(q.s)))];
      const tStart = Math.min(...gaps.map((q) => tAt(q.g0))),
        tEnd = Math.max(...gaps.map((q) => tAt(q.g1)));
      if (!(tStart > 0) || !(tEnd > tStart)) continue;
      // a decay is identified only where it is seen for at least one time constant: no time constant longer than
      // the longest stretch (over a stretch much shorter than tau an exponential is a line, and a response's
      // slope, e.g. the last lobe of a triphasic wave, would be taken for a tail)
      const span = Math.max(...gaps.map((q) => tAt(q.g1) - tAt(q.g0)));
      const ladder: number[] = [];
      for (let tau = tStart / 5; tau <= Math.min(tEnd, span); tau *= 1.2) ladder.push(tau);
      const cur = (s: number) => intensityOf(s) ?? 1;
      let rss0 = 0;
      for (const q of gaps) for (let i = q.g0; i <= q.g1; i++) rss0 += info[q.s].x[i] ** 2;
      // per site, least squares of the gap samples on I_s exp(-t / tau_k): the normal equations for 1 or 2 terms
      const fit = (taus: number[]) => {
        let rss = 0;
        const coef = new Map<string, number[]>();
        for (const site of sites) {
          const m = taus.length;
          const G = new Float64Array(m * m),
            r = new Float64Array(m);
          let yy = 0;
          for (const q of gaps) {
            if (siteKey(q.s) !== site) continue;
            const I = cur(q.s),
              x = info[q.s].x;
            for (let i = q.g0; i <= q.g1; i++) {
              const t = tAt(i);
              const f0 = I * Math.exp(-t / taus[0]),
                f1 = m > 1 ? I * Math.exp(-t / taus[1]) : 0;
              G[0] += f0 * f0;
              r[0] += f0 * x[i];
              if (m > 1) {
                G[1] += f0 * f1;
                G[3] += f1 * f1;
                r[1] += f1 * x[i];
              }
              yy += x[i] * x[i];
            }
          }
          let c: number[];
          if (m === 1) c = G[0] > 0 ? [r[0] / G[0]] : [0];
          else {
            const det = G[0] * G[3] - G[1] * G[1];
            if (!(Math.abs(det) > 1e-12 * G[0] * G[3])) return null;
            c = [(G[3] * r[0] - G[1] * r[1]) / det, (G[0] * r[1] - G[1] * r[0]) / det];
          }
          rss += yy - c.reduce((acc, ck, k) => acc + ck * r[k], 0);
          coef.set(site, c);
        }
        return { rss: Math.max(rss, 0), coef, taus };
      };
      const bic = (rss: number, k: number) => nFit * Math.log(Math.max(rss, 1e-300) / nFit) + k * Math.log(nFit);
      let best: { rss: number; coef: Map<string, number[]>; taus: number[] } | null = null;
      let bestBic = bic(rss0, 0);
      for (let a = 0; a < ladder.length; a++) {
        const f1 = fit([ladder[a]]);
        if (f1 && bic(f1.rss, sites.length + 1) < bestBic) [best, bestBic] = [f1, bic(f1.rss, sites.length + 1)];
        for (let b = a + 2; b < ladder.length; b++) {
          const f2 = fit([ladder[a], ladder[b]]);
          // two decays of opposite sign at one site cancel each other: an ill-conditioned pair, not a tail
          const sameSign = f2 !== null && [...f2.coef.values()].every((c) => c[0] * c[1] >= 0);
          if (f2 && sameSign && bic(f2.rss, 2 * sites.length + 2) < bestBic)
            [best, bestBic] = [f2, bic(f2.rss, 2 * sites.length + 2)];
        }
      }
      if (!best) continue;
      const chosen = best;
      // a tail that stays under the noise level on every fitted sample (a drift or noise the criterion took) moves
      // no latency by more than the noise does: it is left alone
      const noiseAt = gaps.map((q) => info[q.s].noise).sort((p1, p2) => p1 - p2)[Math.floor(gaps.length / 2)];
      let largest = 0;
      for (const q of gaps) {
        const c = chosen.coef.get(siteKey(q.s))!;
        const v = c.reduce((acc, ck, k) => acc + cur(q.s) * ck * Math.exp(-tAt(q.g0) / chosen.taus[k]), 0);
        largest = Math.max(largest, Math.abs(v));
      }
      if (!(largest > noiseAt)) continue;
      for (const s of members) {
        const c = chosen.coef.get(siteKey(s));
        if (!c) continue;
        const I = cur(s);
        const value = (i: number) => c.reduce((acc, ck, k) => acc + I * ck * Math.exp(-tAt(i) / chosen.taus[k]), 0);
        const from = tailFrom(s);
        const y = Float64Array.from(info[s].x);
        for (let i = from; i < n; i++) y[i] -= value(i);
        info[s].x = y;
      }
    }
  }

  // polarity per class: the larger phase (sum of the positive and of the negative extremes) in the class's window
  // after the artifact, on the unblocked sweeps (concentration 0 or none); where a site has blocked sweeps at its
  // highest intensity, on the unblocked sweeps at that intensity minus the mean of those at the highest concentration
  // (the artifact and its tail, the same stimulus, cancel; what is left is the response the drug took away), so that
  // an artifact tail larger than a small class, or a blocked sweep with no class left, cannot choose its sign
  const polSweeps: { s: number; ref: Float64Array | null }[] = [];
  {
    const bySite = new Map<string, number[]>();
    for (let s = 0; s < set.nSweeps; s++)
      (bySite.get(siteKey(s)) ?? bySite.set(siteKey(s), []).get(siteKey(s))!).push(s);
    for (const all of bySite.values()) {
      const members = tame(all);
      const top = Math.max(...members.map((s) => intensityOf(s) ?? -Infinity));
      const atTop = members.filter((s) => (intensityOf(s) ?? -Infinity) === top);
      const unblocked = atTop.filter((s) => concOf(s) === 0);
      const cMax = Math.max(...atTop.map(concOf));
      const blocked = cMax > 0 ? atTop.filter((s) => concOf(s) === cMax) : [];
      let ref: Float64Array | null = null;
      if (unblocked.length && blocked.length) {
        ref = new Float64Array(n);
        for (const s of blocked) for (let i = 0; i < n; i++) ref[i] += info[s].x[i] / blocked.length;
      }
      // without blocked sweeps to subtract, every unblocked sweep of the site counts (a recruitment series: the
      // artifact grows with the intensity as the response does, so the top intensity alone is no better)
      const use = ref ? unblocked : members.filter((s) => concOf(s) === 0);
      for (const s of use.length ? use : members) polSweeps.push({ s, ref });
    }
  }
  const polarities: Record<string, 1 | -1> = {};
  const polaritySource: Record<string, 'option' | 'auto'> = {};
  classes.forEach((c, ci) => {
    const o = polOpt[c.name] ?? 'auto';
    if (o !== 'auto') {
      polarities[c.name] = o;
      polaritySource[c.name] = 'option';
      return;
    }
    let up = 0,
      down = 0;
    for (const { s, ref } of polSweeps) {
      const x = info[s].x;
      const { a, b } = info[s].wins[ci];
      let mx = 0,
        mn = 0;
      for (let i = Math.max(a, info[s].polStart); i <= Math.min(b, n - 1); i++) {
        const v = ref ? x[i] - ref[i] : x[i];
        if (v > mx) mx = v;
        if (v < mn) mn = v;
      }
      up += mx;
      down -= mn;
    }
    polarities[c.name] = up >= down ? 1 : -1;
    polaritySource[c.name] = 'auto';
  });
  // a bipolar recording (contact minus reference) shows a faster class a second time, inverted, when it reaches the
  // reference contact; where that reference-contact wave (the faster class's window at the reference distance)
  // overlaps a slower class's window, the slower class's extremes there are the faster class's, not its own: the
  // slower class then takes the main phase of the next faster class (the same contacts record every class of a
  // nerve with the same main phase: the sign comes from the electrode geometry and the direction of propagation;
  // common practice, no source); a polarity given per class stays
  for (let ci = 1; ci < classes.length; ci++) {
    const c = classes[ci];
    if (polaritySource[c.name] !== 'auto') continue;
    const shadowed = polSweeps.some(({ s }) => {
      const ref = refOf(s);
      if (ref === null) return false;
      const { a, b } = info[s].wins[ci];
      return classes.slice(0, ci).some((f) => {
        const [vlo, vhi] = scaledRange(f, preset, info[s].T, q10);
        const r0 = set.indexAt(util + ref / vhi),
          r1 = set.indexAt(util + ref / vlo + Math.max(tailMs, tailFraction * (ref / vlo - ref / vhi)));
        return r0 <= b && r1 >= Math.max(a, info[s].polStart);
      });
    });
    if (shadowed) polarities[c.name] = polarities[classes[ci - 1].name];
  }

  // chains of classes whose windows overlap (at any sweep), fastest first
  const overlaps = (ci: number) => info.some((q) => q.wins[ci].b >= q.wins[ci + 1].a);
  const chains: number[][] = [];
  for (let ci = 0; ci < classes.length; ci++) {
    if (ci > 0 && overlaps(ci - 1)) chains[chains.length - 1].push(ci);
    else chains.push([ci]);
  }

  // decomposition per group (decomposeBy) and chain, when the group has two or more distances
  const groupKey = (s: number) => decomposeBy.map((c) => String(set.conditions[s][c] ?? '')).join('|');
  const groups = new Map<string, number[]>();
  for (let s = 0; s < set.nSweeps; s++)
    (groups.get(groupKey(s)) ?? groups.set(groupKey(s), []).get(groupKey(s))!).push(s);
  interface Decomp {
    shape: SharedShape | null;
    grid: DecomposeGrid | null;
    bins: [number, number][];
    resolved: boolean[];
    reason: (string | null)[];
    valleys: (number | null)[];
    /** smooth class membership (one log-normal bump per class), when every class of the chain was resolved */
    mixture: ClassMixture | null;
  }
  const decomps = new Map<string, Decomp>();
  if (separation !== 'trough') {
    for (const [gk, members] of groups) {
      const dists = [...new Set(members.map((s) => info[s].L))].sort((a, b) => a - b);
      const bip = members.some((s) => refOf(s) !== null);
      if (dists.length < 2 && !bip) continue;
      for (const chain of chains) {
        if (chain.length < 2) continue;
        // 'auto': a group where every sweep shows the slower class's own peak keeps the trough method (one bipolar
        // channel too: its decomposition is barely determined, and where the own peaks stand clear it is not needed)
        if (
          separation === 'auto' &&
          members.every((s) =>
            chain.every(
              (ci, j) =>
                j === 0 ||
                ownPeak(info[s].x, info[s].wins[chain[j - 1]], info[s].wins[ci], polarities[classes[ci].name], n),
            ),
          )
        )
          continue;
        const T = info[members[0]].T;
        const ranges = chain.map((ci) => scaledRange(classes[ci], preset, T, q10));
        const vFast = ranges[0][1] * 2,
          vSlow = ranges[ranges.length - 1][0] / 2;
        const last = chain[chain.length - 1];
        const rangeAt = new Map<number, [number, number]>();
        for (const x of dists) {
          const at = members.filter((s) => info[s].L === x);
          const r0 = Math.max(...at.map((s) => Math.max(iEarliest, info[s].wins[chain[0]].a - Math.round(0.2 / dt))));
          const r1 = Math.min(n - 1, Math.max(...at.map((s) => info[s].wins[last].b)));
          rangeAt.set(x, [Math.max(0, r0), r1]);
        }
        // a chain whose fitted span is empty or a few samples at some distance (the rail lasting past the class
        // windows) is not decomposed
        if ([...rangeAt.values()].some(([r0, r1]) => r1 - r0 < 10)) continue;
        const nearLen = rangeAt.get(dists[0])![1] - rangeAt.get(dists[0])![0];
        const trustAt = new Map(
          dists.map((x) => [x, Math.max(...members.filter((s) => info[s].L === x).map((s) => info[s].fitStart))]),
        );
        // fibers so fast that their waveform (which may start `lead` before the arrival x / v) begins at the
        // farthest site before its recording is trusted (the artifact) are not determined by the data: the slowness
        // grid starts where that waveform's start is trusted there
        const lead = Math.max(0.1, 5 * dt),
          xFar = dists[dists.length - 1];
        const u0 = Math.max(1 / vFast, (tAt(trustAt.get(xFar)!) - util + lead) / xFar);
        const grid: DecomposeGrid = {
          dtMs: dt,
          t0Ms: set.t0Ms,
          range: (x) => rangeAt.get(x)!,
          uBounds: [u0, 1 / vSlow],
          excluded: (i, x) => i < trustAt.get(x)!,
          sSupportMs: [lead, Math.min(400, Math.max(20, nearLen)) * dt],
        };
        const traces = tame(members).map((s) => ({ y: info[s].x, distanceMm: info[s].L, referenceMm: refOf(s) }));
        const shape = fitSharedShape(traces, grid, { iterations: 60 });
        const key = `${gk}#${chain.join(',')}`;
        if (!shape) continue;
        // a degenerate fit separates nothing (the waveform's largest excursion at the end of its support, or most of
        // the distribution on a bound of the slowness grid, as one bipolar channel can give): the trough method and
        // the window's polarity stay
        let im = 0;
        for (let j = 0; j < shape.s.length; j++) if (Math.abs(shape.s[j]) > Math.abs(shape.s[im])) im = j;
        // the fast bound set by the artifact (fibres whose waveform starts before the trusted samples at the farthest
        // site) is not a bound the fit chose: the fastest fibres' weight piles up there by design
        const trustCut = u0 > 1 / vFast;
        let wSum = 0,
          wEdge = 0;
        for (let j = 0; j < shape.W.length; j++) {
          wSum += shape.W[j];
          if ((j < 2 && !trustCut) || j >= shape.W.length - 2) wEdge += shape.W[j];
        }
        if (im >= shape.s.length - Math.max(2, Math.round(0.05 * shape.s.length)) || !(wSum > 0) || wEdge > 0.5 * wSum)
          continue;
        // boundaries between consecutive classes at the deepest valley of W between their ranges
        const bins: [number, number][] = [];
        const resolved: boolean[] = [true];
        const reason: (string | null)[] = [null];
        const valleys: (number | null)[] = [null];
        let from = 0;
        for (let j = 0; j + 1 < chain.length; j++) {
          const v = valleyBin(shape.W, shape.u, ranges[j], ranges[j + 1]);
          if (!v) {
            // no mode on one side: the slower class is not resolved; the faster keeps the bins
            resolved.push(false);
            reason.push(
              `not resolved: the velocity distribution has no separate mode between ${ranges[j + 1][0].toPrecision(3)} and ${ranges[j + 1][1].toPrecision(3)} m/s`,
            );
            valleys.push(null);
            bins.push([from, shape.u.length - 1]);
            from = shape.u.length;
            continue;
          }
          bins.push([from, v.bin - 1]);
          from = v.bin;
          const ok = v.depth < 0.9;
          resolved.push(ok);
          reason.push(
            ok
              ? null
              : `not resolved: no separate mode in the velocity distribution (valley at ${(1 / shape.u[v.bin]).toPrecision(3)} m/s is ${(100 * v.depth).toFixed(0)}% of the smaller mode)`,
          );
          valleys.push(1 / shape.u[v.bin]);
        }
        bins.push([Math.min(from, shape.u.length - 1), shape.u.length - 1]);
        while (bins.length < chain.length) bins.push([shape.u.length, shape.u.length - 1]);
        const mixture = resolved.every((r) => r) ? fitClassMixture(traces, grid, shape, bins, { zones: ranges }) : null;
        decomps.set(key, { shape, grid, bins, resolved, reason, valleys, mixture });
        // classes separated by the decomposition take the sign of the shared waveform's main phase unless given
        // (for a bipolar recording, the near contact's)
        for (const ci of chain)
          if (polaritySource[classes[ci].name] === 'auto') polarities[classes[ci].name] = shape.s[im] >= 0 ? 1 : -1;
      }
    }
  }

  const rows: ComponentRow[] = [];
  const measures: ResponseMeasure[][] = [];
  // each measured row's peak as a multiple of its detection level (for the check across sites)
  const margins = new Map<ComponentRow, number>();
  const smooth = new Float64Array(n);
  const u = set.units;
  const oc = onsetColumn(onsetFraction);
  // the local baseline of a class alone in its window: the mean level of the flank before it (as long as half its
  // span above centroidFraction of its peak, ending a tenth of that span before it), where it has not arrived yet,
  // after the artifact; an offset left there by drift or by a faster class's slow tail then counts neither as
  // response nor in the onset level. m: the flank's mean, sd: its spread; m0: the mean of the stretch of the same
  // length before it (null where the artifact leaves none)
  const flankOf = (s: number, ci: number) => {
    const p = polarities[classes[ci].name];
    const w = info[s].wins[ci];
    const a = ci === 0 ? Math.min(w.a, info[s].fitStart) : w.a,
      b = Math.min(n - 1, w.b);
    if (b - w.a < 2 || w.a >= n) return null;
    const y = Float64Array.from({ length: b - a + 1 }, (_, i) => info[s].x[a + i]);
    const l0 = ownLatencies(
      Float64Array.from(y, (v) => p * v),
      w.a - a,
      y.length - 1,
      onsetFraction,
      centroidFraction,
      0,
      y.length - 1,
    );
    if (l0.centroidFrom === null || l0.centroidTo === null) return null;
    const span = l0.centroidTo - l0.centroidFrom;
    const f1 = Math.floor(l0.centroidFrom - 0.1 * span) - 1,
      f0 = f1 - Math.max(3, Math.round(0.5 * span)) + 1;
    const start = Math.max(0, info[s].polStart - a);
    if (f0 < start || f1 <= f0) return null;
    const mean = (i0: number, i1: number) => {
      let m = 0;
      for (let i = i0; i <= i1; i++) m += y[i] / (i1 - i0 + 1);
      return m;
    };
    const m = mean(f0, f1);
    let v = 0;
    for (let i = f0; i <= f1; i++) v += (y[i] - m) ** 2 / (f1 - f0 + 1);
    const g1 = f0 - 1,
      g0 = Math.max(start, g1 - (f1 - f0));
    const m0 = g1 - g0 >= 2 ? mean(g0, g1) : null;
    // standard error of the difference of the two means (white noise: noise x sqrt(1/n + 1/n'))
    const se = info[s].noise * Math.sqrt(1 / (f1 - f0 + 1) + 1 / Math.max(1, g1 - g0 + 1));
    return { m, sd: Math.sqrt(v), m0, se, p };
  };
  // A flank of the sign opposite to the class's main phase whose level is not flat (it differs from the stretch
  // before it by more than twice the standard error of the difference) is the wave's own first phase: a triphasic
  // monopolar wave (line-source model: the second derivative of the travelling action potential), not an offset,
  // which is flat there. The wave's shape belongs to the recording site, not to one sweep: it is decided once per
  // group, site and class, on the sweep with the class's largest deflection (where a first phase stands clearest
  // above the noise), so a dose or intensity series is measured the same way at every level.
  const firstPhaseSeen = new Map<string, boolean>();
  const firstPhaseAt = (s: number, ci: number): boolean => {
    const key = `${groupKey(s)}|${info[s].L}|${refOf(s) ?? ''}|${ci}`;
    const seen = firstPhaseSeen.get(key);
    if (seen !== undefined) return seen;
    const p = polarities[classes[ci].name];
    let best = -1,
      bestPeak = -Infinity;
    for (let q = 0; q < set.nSweeps; q++) {
      if (wild(q) || `${groupKey(q)}|${info[q].L}|${refOf(q) ?? ''}|${ci}` !== key) continue;
      const w = info[q].wins[ci];
      for (let i = Math.max(0, w.a); i <= Math.min(n - 1, w.b); i++)
        if (p * info[q].x[i] > bestPeak) {
          bestPeak = p * info[q].x[i];
          best = q;
        }
    }
    const f = best >= 0 ? flankOf(best, ci) : null;
    const first = f !== null && f.m0 !== null && f.p * f.m < 0 && Math.abs(f.m - f.m0) > 2 * f.se;
    firstPhaseSeen.set(key, first);
    return first;
  };
  for (let s = 0; s < set.nSweeps; s++) {
    const { L, T, noise, wins: raw, x, decay } = info[s];
    const cond = set.conditions[s];
    // 3-point smoothing that never takes a sample on the amplifier's rail: the first unclipped sample is smoothed
    // with its later neighbours only (a rail neighbour would make it the largest value of the fastest class's window)
    const f0 = info[s].clip === null ? 0 : Math.min(n - 1, set.indexAt(info[s].clip!) + 1);
    for (let i = 0; i < n; i++) {
      const j = Math.max(i, f0);
      smooth[i] = (x[Math.max(f0, j - 1)] + x[j] + x[Math.min(n - 1, j + 1)]) / 3;
    }
    const wins = raw.map((w) => ({ ...w }));
    const ms: ResponseMeasure[] = new Array(classes.length);
    const done = new Array<boolean>(classes.length).fill(false);
    // y: the class's own component over samples [a, b] (y[i - a], recorded sign); its peak is searched in y[peakFrom..peakTo]
    const emit = (
      ci: number,
      y: Float64Array,
      a: number,
      b: number,
      sep: string,
      status0: string | null,
      reason0: string | null,
      extra: Record<string, ConditionValue>,
      peakFrom = 0,
      peakTo = y.length - 1,
      model?: Float64Array,
      shoulder = false,
    ) => {
      const c = classes[ci];
      const p = polarities[c.name];
      // y holds the class's own component over [a, b] in recorded sign (y[i - a])
      // smoothing matched to the class's own width and noise: a zero-phase Gaussian with sigma just large enough to
      // bring white noise to 2% of the peak (noise / sqrt(2 sqrt(pi) sigma)), but at most a twentieth of the span
      // above centroidFraction of the peak (first pass on the unsmoothed component); the noise level for detection is
      // that of the quiet window smoothed alike (common practice, no source: a wide slow wave is judged against
      // the noise at its own time scale, and its latencies are not moved by sample-to-sample noise)
      // (classes split by the velocity decomposition are not smoothed: a shoulder on the faster class's residual
      // sits on a slope, where a kernel would move its peak)
      const smoothOk = sep === 'window';
      const y0 = Float64Array.from(y, (v) => p * v);
      const first = ownLatencies(y0, peakFrom, peakTo, onsetFraction, centroidFraction, 0, y0.length - 1);
      const sigma =
        first.centroidFrom !== null && first.centroidTo !== null && first.peak > 0
          ? Math.min(
              (first.centroidTo - first.centroidFrom) / 20,
              (noise / (0.02 * first.peak)) ** 2 / (2 * Math.sqrt(Math.PI)),
            )
          : 0;
      const yc = smoothOk && sigma >= 0.5 ? gaussianSmooth(y0, sigma) : y0;
      const noiseS =
        smoothOk && sigma >= 0.5
          ? noiseMad(gaussianSmooth(Array.prototype.slice.call(x, na, nb + 1), sigma), 0, nb - na)
          : noise;
      const lat0: OwnLatencies = ownLatencies(yc, peakFrom, peakTo, onsetFraction, centroidFraction, 0, yc.length - 1);
      // the peak time of the fastest class of a decomposed chain (its whole wave, never smoothed): the vertex of a
      // parabola through its top (topVertex), not its single largest sample; a slower decomposed class (a shoulder
      // on the faster class's residual, `shoulder`) and a window class (smoothed to its own width and noise) keep
      // the three-point parabola
      const i0 = Math.round(lat0.peakIndex);
      const vtx =
        lat0.localMax && sep === 'velocity-decomposition' && !shoulder
          ? topVertex(yc, i0, peakFrom, peakTo, noiseS)
          : null;
      const lat: OwnLatencies = vtx === null ? lat0 : { ...lat0, peakIndex: vtx };
      const N = peakTo - peakFrom + 1;
      const kEff = Math.max(k, normQuantile(1 - 0.01 / N));
      const ip = i0;
      const sm = ip > 0 && ip < yc.length - 1 ? (yc[ip - 1] + yc[ip] + yc[ip + 1]) / 3 : yc[ip];
      const above = sm > kEff * noiseS;
      let status = status0 ?? (above ? 'measured' : 'not detected');
      let reason =
        reason0 ??
        (above
          ? null
          : `peak ${sm.toPrecision(3)} ${u} is below max(k, z) x noise = ${(kEff * noiseS).toPrecision(3)} ${u}`);
      // a peak on the first or last sample of the class's part is still its own when it is a local maximum of the
      // whole sweep (the neighbouring class then sees a falling edge there): a peak on a boundary counts once
      let localMax = lat.localMax;
      if (!localMax && sep === 'window' && (ip === 0 || ip === yc.length - 1)) {
        const i = a + ip,
          nb = ip === 0 ? i - 1 : i + 1,
          other = ip === 0 ? i + 1 : i - 1;
        localMax = nb >= 0 && nb < n && p * x[nb] <= p * x[i] && (other < 0 || other >= n || p * x[other] <= p * x[i]);
      }
      if (status === 'measured' && !localMax) {
        status = 'not resolved';
        // the largest value on the first sample after the rail: the peak may lie under it (not a missing shoulder)
        const first = info[s].clip === null ? -1 : set.indexAt(info[s].clip!) + 1;
        reason =
          a + ip <= first
            ? `not resolved: the largest value of the class is on the first sample after the amplifier's rail ` +
              `(${tAt(first).toFixed(3)} ms): its peak may lie under the rail`
            : 'not resolved: no separate peak or shoulder (the largest value of the class is at the edge of its part ' +
              'of the sweep)';
      }
      // nothing is read under the rail: the first unclipped sample is the earliest time a peak can have (a peak
      // before it, in a modelled component, leaves the class not resolved); an onset, half-rise or centroid before
      // the artifact's subtraction is trusted (two fast time constants after the rail, fitStart) is not measured in a
      // window, and read on the modelled component (with a reason saying so) after the decomposition
      const tFirst = info[s].clip === null ? -Infinity : tAt(set.indexAt(info[s].clip!) + 1);
      const tTrust = info[s].clip === null ? -Infinity : Math.max(tFirst, tAt(info[s].fitStart));
      if (status === 'measured' && tAt(a + lat.peakIndex) < tFirst) {
        status = 'not resolved';
        reason = `not resolved: the peak lies under the amplifier's rail (clipping ends at ${tFirst.toFixed(3)} ms)`;
      }
      const ok = status === 'measured';
      // a class separated by the decomposition has its own modelled component there (fitted on every site and on
      // the samples after the rail): its early latencies are read on it and say so; a window's are not measured
      const modelled = sep === 'velocity-decomposition';
      const hidden: string[] = [];
      const t = (fi: number | null, name?: string) => {
        if (!ok || fi === null) return null;
        if (tAt(a + fi) < (name ? tTrust : tFirst)) {
          if (name) hidden.push(name);
          if (!modelled || !name) return null;
        }
        return tAt(a + fi);
      };
      // the old k x noise onset on the recorded sweep (informational only)
      const old = measureResponse(y, peakFrom, peakTo, noise, k, p);
      const m: ResponseMeasure = {
        ...old,
        window: [a, b],
        detected: ok,
        component: Float64Array.from(y),
        ...(model ? { model } : {}),
      };
      ms[ci] = m;
      done[ci] = true;
      let area = 0,
        rect = 0;
      for (let i = 0; i < y.length; i++) {
        area += y[i];
        rect += Math.abs(y[i]);
      }
      const tOn = t(lat.onsetIndex, 'onset'),
        tHalf = t(lat.halfRiseIndex, 'half-rise'),
        tPk = t(lat.peakIndex),
        tC = t(lat.centroidIndex, 'centroid');
      if (hidden.length)
        reason =
          `${hidden.join(', ')} before the artifact's subtraction is trusted (${tTrust.toFixed(3)} ms, clipping ` +
          `ends at ${tFirst.toFixed(3)} ms): ${modelled ? 'read on the modelled component' : 'not measured'}` +
          (reason ? `; ${reason}` : '');
      const vel = (tt: number | null) => (tt !== null && tt - util > 0 ? L / (tt - util) : null);
      rows.push({
        ...cond,
        sweep: s,
        class: c.name,
        detected: ok,
        status,
        reason,
        separation: sep,
        polarity: p,
        polarity_source: polaritySource[c.name],
        distance_mm: L,
        temperature_C: T ?? null,
        window_start_ms: tAt(a),
        window_end_ms: tAt(b),
        [`noise_${u}`]: noise,
        artifact_tau_ms: decay ? decay.tauSamples * dt : null,
        ...extra,
        [oc]: tOn,
        ...(oc !== 'onset_ms' ? { onset_ms: tOn } : {}),
        halfrise_ms: tHalf,
        peak_ms: tPk,
        centroid_ms: tC,
        centroid_from_ms: t(lat.centroidFrom),
        centroid_to_ms: t(lat.centroidTo),
        onset_knoise_ms: ok && old.onsetIndex > 0 ? tAt(a + old.onsetIndex) : null,
        [`amplitude_${u}`]: ok ? first.peak : null,
        [`peak_to_peak_${u}`]: ok ? old.peakToPeak : null,
        half_width_ms:
          ok && lat.halfRiseIndex !== null && lat.halfFallIndex !== null
            ? (lat.halfFallIndex - lat.halfRiseIndex) * dt
            : null,
        duration_ms:
          ok && lat.centroidFrom !== null && lat.centroidTo !== null ? (lat.centroidTo - lat.centroidFrom) * dt : null,
        [`area_${u}_ms`]: ok ? area * dt : null,
        [`rectified_area_${u}_ms`]: ok ? rect * dt : null,
        onset_velocity_m_s: vel(tOn),
        halfrise_velocity_m_s: vel(tHalf),
        peak_velocity_m_s: vel(tPk),
        centroid_velocity_m_s: vel(tC),
      });
      if (ok) margins.set(rows[rows.length - 1], sm / (kEff * noiseS));
    };

    // decomposed chains
    for (const chain of chains) {
      const dk = `${groupKey(s)}#${chain.join(',')}`;
      const d = decomps.get(dk);
      if (!d || !d.shape || !d.grid) continue;
      const dec = d.mixture
        ? decomposeTraceMixture(x, L, { ...d.shape, s: d.mixture.s }, d.grid, d.mixture.weights, refOf(s))
        : decomposeTrace(x, L, d.shape, d.grid, d.bins, {}, refOf(s));
      // a split whose class components cancel each other is not determined by the data (componentCancellation):
      // the slower classes are not resolved; the fastest keeps its component (its peak comes before the others)
      const cancels = dec.cancellation > MAX_CANCELLATION;
      const cancelReason =
        `not resolved: the decomposition's class components cancel each other (their magnitudes add up to ` +
        `${dec.cancellation.toFixed(2)} x the largest deflection they explain together, above ${MAX_CANCELLATION}): ` +
        'the split between the classes is not determined by this recording';
      chain.forEach((ci, j) => {
        // the class's own component: the recording minus the other classes' modelled components
        // (before the artifact has decayed, where nothing was fitted, the class's own modelled component)
        const comp = Float64Array.from({ length: dec.r1 - dec.r0 + 1 }, (_, i) =>
          dec.r0 + i >= info[s].fitStart ? x[dec.r0 + i] - dec.nuisance[i] : 0,
        );
        dec.components.forEach((o, jj) => {
          for (let i = 0; i < comp.length; i++) {
            if (dec.r0 + i < info[s].fitStart) {
              if (jj === j) comp[i] = o[i];
            } else if (jj !== j) comp[i] -= o[i];
          }
        });
        const pa = Math.max(0, Math.min(comp.length - 1, raw[ci].a - dec.r0)),
          pb = Math.max(pa, Math.min(comp.length - 1, raw[ci].b - dec.r0));
        const extra: Record<string, ConditionValue> = {
          [`fit_rms_${u}`]: dec.rms,
          boundary_velocity_m_s: j > 0 ? d.valleys[j] : null,
        };
        emit(
          ci,
          comp,
          dec.r0,
          dec.r1,
          'velocity-decomposition',
          d.resolved[j] && !(cancels && j > 0) ? null : 'not resolved',
          d.resolved[j] && cancels && j > 0 ? cancelReason : d.reason[j],
          extra,
          pa,
          pb,
          dec.components[j],
          j > 0,
        );
      });
    }

    // the rest: windows, overlapping neighbours split at the trough between their peaks (first all
    // boundaries, then the measurements)
    const floors = new Float64Array(classes.length);
    const sepReason: (string | null)[] = classes.map(() => null);
    for (let ci = 1; ci < classes.length; ci++) {
      if (done[ci] || done[ci - 1]) continue;
      const prev = wins[ci - 1],
        w = wins[ci];
      if (prev.b < w.a) continue;
      const p = polarities[classes[ci].name],
        pp = polarities[classes[ci - 1].name];
      let p1 = prev.a;
      for (let i = prev.a; i <= Math.min(prev.b, n - 1); i++) if (pp * smooth[i] > pp * smooth[p1]) p1 = i;
      // the slower class's peak is looked for after the faster class's falling edge (its first local minimum)
      let fall = p1 + 1;
      while (fall < Math.min(w.b, n - 1) && pp * smooth[fall + 1] < pp * smooth[fall]) fall++;
      let p2 = Math.max(w.a, fall);
      for (let i = p2; i <= Math.min(w.b, n - 1); i++) if (p * smooth[i] > p * smooth[p2]) p2 = i;
      let trough = Math.min(prev.b, w.a + Math.floor((prev.b - w.a) / 2));
      let tr = p1 + 1;
      for (let i = p1 + 1; i < p2; i++) if (p * smooth[i] < p * smooth[tr]) tr = i;
      // a separate peak rises above the trough before it by the detection level (not a noise bump on the tail)
      if (p2 > p1 + 1 && p2 < Math.min(w.b, n - 1) && p * (smooth[p2] - smooth[tr]) > k * info[s].noise) trough = tr;
      else sepReason[ci] = 'not resolved: no separate peak or shoulder after the faster class';
      // samples up to the trough belong to the faster class, after it to this one: a peak on the boundary counts once
      prev.b = Math.max(prev.a + 2, Math.min(prev.b, trough));
      w.a = Math.min(w.b - 2, Math.max(w.a, trough + 1));
      floors[ci] = Math.max(0, p * smooth[trough]) * p;
    }
    for (let ci = 0; ci < classes.length; ci++) {
      if (done[ci]) continue;
      const c = classes[ci];
      const p = polarities[c.name];
      const w = wins[ci];
      const b = Math.min(n - 1, w.b);
      // the earliest class may start before its window (fibers faster than the class range, or a single-fiber
      // waveform that rises before the arrival): its crossings are looked for back to the earliest time analysed
      const a = ci === 0 ? Math.min(w.a, info[s].fitStart) : w.a;
      if (b - w.a < 2 || w.a >= n) {
        rows.push({
          ...cond,
          sweep: s,
          class: c.name,
          detected: false,
          status: 'window outside the sweep',
          reason: `the class window (${tAt(w.a).toFixed(3)}-${tAt(w.b).toFixed(3)} ms) is outside the sweep`,
          polarity: p,
          polarity_source: polaritySource[c.name],
          distance_mm: L,
          temperature_C: T ?? null,
          separation: 'window',
        });
        ms[ci] = null as unknown as ResponseMeasure;
        done[ci] = true;
        continue;
      }
      // a slower class is measured above a straight line from the trough to the level at its window's end
      const floor = floors[ci];
      const y = new Float64Array(b - a + 1);
      const endLevel = floor !== 0 && p * smooth[b] > 0 ? smooth[b] : 0;
      for (let i = a; i <= b; i++)
        y[i - a] = x[i] - (floor !== 0 ? floor + ((endLevel - floor) * (i - a)) / Math.max(1, b - a) : 0);
      // a class whose window overlaps no other class's is measured above its own local baseline: the mean level of
      // the flank before it (as long as half its span above centroidFraction of its peak, ending a tenth of that
      // span before it, and quiet: its spread within twice the noise), where it has not arrived yet, after the
      // artifact; an offset left there by drift or by a faster class's slow tail then counts neither as response
      // nor in the onset level
      const alone = (ci === 0 || raw[ci - 1].b < raw[ci].a) && (ci === classes.length - 1 || raw[ci].b < raw[ci + 1].a);
      let localBase: number | null = null;
      if (alone && floor === 0 && localBaseline) {
        const f = flankOf(s, ci);
        // only a quiet flank (spread within twice the noise) is a baseline: not a wave or an artifact; where the
        // site's wave has a first phase, a flank of the first phase's sign is that phase (what is left of it in a
        // blocked sweep), while an offset of the main phase's sign is still an offset
        if (f !== null && f.sd <= 2 * noise && !(f.p * f.m < 0 && firstPhaseAt(s, ci))) {
          for (let i = 0; i < y.length; i++) y[i] -= f.m;
          localBase = f.m;
        }
      }
      emit(
        ci,
        y,
        a,
        b,
        'window',
        sepReason[ci] ? 'not resolved' : null,
        sepReason[ci],
        { [`trough_level_${u}`]: floor, [`local_baseline_${u}`]: localBase },
        w.a - a,
      );
    }
    measures.push(ms);
  }
  // a class is seen at every distance recorded at the same time (the same stimulus, the same group, intensity and
  // concentration): a detection is taken as noise when the class is not detected at a nearer distance (where its wave
  // is larger: dispersion only lowers it with distance), or when its peak is less than twice its detection level and
  // the class is not detected at a farther distance (the chance of a false exceedance over a long window is not small)
  {
    const eventOf = (s: number) => `${groupKey(s)}|${intensityOf(s) ?? ''}|${concOf(s)}`;
    const byEvent = new Map<string, ComponentRow[]>();
    for (const r of rows) {
      if (refOf(r.sweep) !== null) continue;
      const key = `${eventOf(r.sweep)}|${r.class}`;
      (byEvent.get(key) ?? byEvent.set(key, []).get(key)!).push(r);
    }
    const measuredOnly = [
      oc,
      'onset_ms',
      'halfrise_ms',
      'peak_ms',
      'centroid_ms',
      'centroid_from_ms',
      'centroid_to_ms',
      'onset_knoise_ms',
      `amplitude_${u}`,
      `peak_to_peak_${u}`,
      'half_width_ms',
      'duration_ms',
      `area_${u}_ms`,
      `rectified_area_${u}_ms`,
      'onset_velocity_m_s',
      'halfrise_velocity_m_s',
      'peak_velocity_m_s',
      'centroid_velocity_m_s',
    ];
    for (const g of byEvent.values()) {
      // a wild sweep's miss says nothing about the class (its noise hides it)
      const missing = g.filter((r) => r.status === 'not detected' && !wild(r.sweep));
      if (new Set(g.map((r) => r.distance_mm)).size < 2 || !missing.length) continue;
      for (const r of g) {
        const m = margins.get(r);
        if (r.status !== 'measured' || m === undefined) continue;
        const L = r.distance_mm as number;
        const nearer = missing.some((q) => (q.distance_mm as number) < L);
        if (!nearer && m >= 2) continue;
        const other = missing.map((q) => q.distance_mm).join(', ');
        r.status = 'not detected';
        r.detected = false;
        r.reason =
          `not confirmed: peak ${m.toFixed(2)} x its detection level at ${L} mm, not detected at ${other} mm in ` +
          `the same stimulus (a class is seen at every distance, largest at the nearest)`;
        for (const col of measuredOnly) if (col in r) r[col] = null;
        const ci = classes.findIndex((c) => c.name === r.class);
        if (measures[r.sweep]?.[ci]) measures[r.sweep][ci].detected = false;
      }
    }
  }
  fittedAmplitudes(
    rows,
    measures,
    classes,
    polarities,
    (s) => `${groupKey(s)}|${info[s].L}|${refOf(s) ?? ''}`,
    u,
    wild,
  );
  // rows in sweep order, then class order
  const order = new Map(classes.map((c, i) => [c.name, i]));
  rows.sort((r1, r2) => r1.sweep - r2.sweep || order.get(r1.class)! - order.get(r2.class)!);
  return {
    rows,
    measures,
    resolved: {
      preset,
      classes,
      k,
      polarity: polarities[classes[0].name],
      polarities,
      polaritySource,
      utilisationMs: util,
      q10,
      tailFraction,
      tailMs,
      noiseWindow,
      earliestMs: earliest,
      distanceMm: options.distanceMm ?? null,
      temperatureC: options.temperatureC ?? null,
      onsetFraction,
      centroidFraction,
      separation,
      decomposeBy,
    },
  };
}

/**
 * Least-squares amplitude (column amplitude_fit_<units>, standard error amplitude_fit_se_<units> for white noise of
 * the row's noise level): each measured or not-detected class component fitted as a s + b + c t, with s the shape
 * shared by the group's rows at the same site (the leading singular vector after each row's offset and slope,
 * fit/models.ts sharedShapeScores), over the span around the reference's peak where it exceeds 10% of that peak,
 * widened by half that span on each side, reported relative to the reference rows' mean score x the reference's peak
 * (a class alone in its window is already measured above its own local baseline). The reference is the mean
 * component of the group's unblocked sweeps (concentration 0 or none) at their highest intensity. The shape is
 * estimated from every row, so the reference's own noise neither makes it exactly 1 nor shrinks the others (as a
 * projection on one noisy reference trace does: errors in the regressor). Linear in each row's data, so noise
 * does not inflate a small response as a picked peak does (the maximum of noise is positive); for a wave that
 * keeps its shape it equals the peak amplitude (common practice, no source: a matched-filter estimate).
 */
function fittedAmplitudes(
  rows: ComponentRow[],
  measures: ResponseMeasure[][],
  classes: FiberClass[],
  polarities: Record<string, 1 | -1>,
  siteKey: (s: number) => string,
  units: string,
  wild: (s: number) => boolean = () => false,
): void {
  const col = `amplitude_fit_${units}`,
    seCol = `amplitude_fit_se_${units}`;
  const groups = new Map<string, ComponentRow[]>();
  for (const r of rows) {
    const k = `${siteKey(r.sweep)}|${r.class}`;
    (groups.get(k) ?? groups.set(k, []).get(k)!).push(r);
  }
  const ciOf = new Map(classes.map((c, i) => [c.name, i]));
  for (const g of groups.values()) {
    for (const r of g) {
      r[col] = null;
      r[seCol] = null;
    }
    const ci = ciOf.get(g[0].class)!;
    const p = polarities[g[0].class];
    const comp = (r: ComponentRow) => measures[r.sweep]?.[ci];
    const measured = g.filter((r) => r.status === 'measured' && comp(r)?.component);
    // every row with a component of its own is projected (a small blocked response that fails detection still has
    // an unbiased least-squares amplitude); the reference is made of measured rows only
    // (a wild sweep, noise ten times the set's median, is left out: it would set the shared shape for the others)
    const projectable = g.filter(
      (r) => (r.status === 'measured' || r.status === 'not detected') && comp(r)?.component && !wild(r.sweep),
    );
    const unblocked = measured.filter((r) => !(typeof r.concentration === 'number' && r.concentration > 0));
    const top = Math.max(...unblocked.map((r) => (typeof r.intensity === 'number' ? r.intensity : -Infinity)));
    const ref = unblocked.filter((r) => (typeof r.intensity === 'number' ? r.intensity : -Infinity) === top);
    if (!ref.length) continue;
    // the reference on absolute sample indices [lo, hi] common to every measured component of the group
    let lo = -Infinity,
      hi = Infinity;
    for (const r of projectable) {
      const m = comp(r)!;
      lo = Math.max(lo, m.window[0]);
      hi = Math.min(hi, m.window[0] + m.component!.length - 1);
    }
    if (!(hi > lo + 2)) continue;
    const at = (r: ComponentRow, i: number) => {
      const m = comp(r)!;
      return p * m.component![i - m.window[0]];
    };
    const tmpl = Float64Array.from({ length: hi - lo + 1 }, (_, j) => {
      let v = 0;
      for (const r of ref) v += at(r, lo + j) / ref.length;
      return v;
    });
    let ip = 0;
    for (let j = 1; j < tmpl.length; j++) if (tmpl[j] > tmpl[ip]) ip = j;
    // the class's own peak: start from the reference rows' measured peak and climb to the template's local maximum
    // (a decomposed class's component spans the whole chain, whose first samples hold the faster class's residue)
    const pks = ref.map((r) => comp(r)!.window[0] + comp(r)!.peakIndex).filter(Number.isFinite);
    if (pks.length) {
      ip = Math.max(0, Math.min(tmpl.length - 1, Math.round(pks.reduce((a, b) => a + b, 0) / pks.length) - lo));
      for (;;) {
        if (ip > 0 && tmpl[ip - 1] > tmpl[ip]) ip--;
        else if (ip < tmpl.length - 1 && tmpl[ip + 1] > tmpl[ip]) ip++;
        else break;
      }
    }
    if (!(tmpl[ip] > 0)) continue;
    let j0 = ip,
      j1 = ip;
    while (j0 > 0 && tmpl[j0 - 1] > 0.1 * tmpl[ip]) j0--;
    while (j1 < tmpl.length - 1 && tmpl[j1 + 1] > 0.1 * tmpl[ip]) j1++;
    const P = tmpl[ip];
    // y_j = a tmpl_j + b + c u_j over the 10% span extended by half its length on each side (u centred, scaled to
    // the span): a slow offset or drift across a wide window is not taken for amplitude (a matched filter with a
    // nuisance baseline; common practice, no source)
    const ext = Math.round((j1 - j0) / 2);
    const k0 = Math.max(0, j0 - ext),
      k1 = Math.min(tmpl.length - 1, j1 + ext),
      jm = (k0 + k1) / 2,
      w = Math.max(1, k1 - k0);
    // every projectable row's amplitude relative to the reference rows from one shape shared by the group
    // (rank one after each row's offset and slope): the shape is estimated from every row, so the reference's own
    // noise neither sets it to exactly 1 nor shrinks the others (fit/models.ts sharedShapeScores)
    const len = k1 - k0 + 1;
    const uu = Float64Array.from({ length: len }, (_, j) => (k0 + j - jm) / w);
    const traces = projectable.map((r) => Float64Array.from({ length: len }, (_, j) => at(r, lo + k0 + j)));
    const refIdx = projectable.map((r, i) => (ref.includes(r) ? i : -1)).filter((i) => i >= 0);
    const fit = sharedShapeScores(traces, [new Float64Array(len).fill(1), uu], refIdx);
    if (!fit) continue;
    projectable.forEach((r, i) => {
      r[col] = (P * fit.scores[i]) / fit.referenceScore;
      // standard error for white noise of the row's level (the shape taken as known): sd / reference score, times P
      const sd = r[`noise_${units}`];
      r[seCol] = typeof sd === 'number' ? (P * sd) / fit.referenceScore : null;
    });
  }
}

export function componentStep(r: ResolvedComponentOptions): {
  verb: string;
  options: Record<string, unknown>;
  version: string;
} {
  return {
    verb: 'components',
    options: {
      preset: r.preset.name,
      presetSource: r.preset.source,
      refTemperatureC: r.preset.refTemperatureC,
      classes: r.classes.map((c) => ({ name: c.name, velocity: c.velocity })),
      q10: r.q10,
      k: r.k,
      polarity: r.polarity,
      utilisationMs: r.utilisationMs,
      tailFraction: r.tailFraction,
      tailMs: r.tailMs,
      noiseWindow: r.noiseWindow,
      earliestMs: r.earliestMs,
      distanceMm: r.distanceMm,
      temperatureC: r.temperatureC,
      polarities: r.polarities,
      polaritySource: r.polaritySource,
      onsetFraction: r.onsetFraction,
      centroidFraction: r.centroidFraction,
      separation: r.separation,
      decomposeBy: r.decomposeBy,
      latencyDefinitions: componentLatencyText(r.onsetFraction, r.centroidFraction),
    },
    version: VERSION,
  };
}
