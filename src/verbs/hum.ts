import { runSweeps, shareCopy, sharedSamples } from '../parallel/pool';
import type { SampleView, VerbOutput } from './types';
import { AnalysisError, OptionError } from '../errors';
import { gramConditioning, type SineParts } from '../signal/sinefit';
import { invertSpd } from '../signal/linalg';
import { checkKeys, integerIn, shown } from '../validate';
import { carryBaseline, type BaselineFit } from './baseline';

/**
 * Options of removeHum. The hum is fitted per sweep over the samples outside `exclude` and subtracted from the
 * whole sweep; a slow drift is fitted with it (not subtracted), so the hum extrapolated over the response is
 * not biased by the drift; after a baseline step (mean levels), the part of the baseline levels that came from
 * the hum is given back, so baseline and hum removal give the same result in either order.
 */
export interface HumOptions {
  /** mains frequency in Hz, or 'detect' (default) to choose 50 or 60 Hz and refine it within +/-1 Hz from the data */
  frequency?: number | 'detect';
  /**
   * number of harmonics including the fundamental (default 5), or 'auto': the fundamental, and each
   * harmonic up to the 10th (below fs/2) whose fitted amplitude exceeds `humLimits.harmonicZ` times its
   * standard error, pooled over the sweeps
   */
  harmonics?: number | 'auto';
  /** time ranges [from, to] in ms left out of the fit (e.g. the artifact and the response); default none */
  exclude?: [number, number][];
  /**
   * slow drift fitted jointly with the sinusoids (and not subtracted): the order of a Legendre
   * polynomial over the sweep (0: a constant only), or 'auto' (default): the order 0..min(6, mains
   * periods in the sweep) with the lowest Bayesian information criterion pooled over the sweeps
   */
  drift?: number | 'auto';
}
export const humDefaults = {
  frequency: 'detect' as const,
  harmonics: 5,
  exclude: [] as [number, number][],
  drift: 'auto' as const,
};
/**
 * When a fit is refused (HumDesign.condition and extrapolationGain): the condition number of the fitted sinusoid
 * columns, and the extrapolation gain (power per sample subtracted where the fit did not look,
 * over power per sample removed where it did). About 1 for both when the fitted samples span a
 * mains period or more; they grow steeply below three quarters of a period (common practice, no
 * source: limits chosen from the design alone, never from data). harmonicZ: a harmonic beyond the
 * fundamental is fitted by harmonics 'auto' when its rms amplitude over the sweeps exceeds this many
 * standard errors (with noise alone the ratio is about 1; 3 is common practice for a detection, no source).
 */
export const humLimits = { maxCondition: 1e6, maxExtrapolationGain: 10, harmonicZ: 3 };
/** the largest drift order 'auto' considers, and the highest harmonic number harmonics 'auto' considers */
const MAX_DRIFT = 6;
const MAX_AUTO_HARMONIC = 10;

/**
 * A hum design: sinusoids at the given frequencies fitted jointly with a Legendre polynomial of
 * order q over the sweep, on the samples where mask is 1. The sinusoid columns are made orthogonal
 * to the polynomial over the fitted samples (Frisch-Waugh-Lovell: least squares of the data on the
 * residualised columns gives the sinusoid coefficients of the joint fit), so the per-sweep kernel
 * (parallel/kernels.ts removeSines: constant first, then cos/sin pairs) fits them unchanged and
 * subtracts only the sinusoids. Reference: R. Davidson and J. G. MacKinnon, Econometric Theory and
 * Methods, Oxford 2004, sec. 2.4 (the FWL theorem).
 */
export interface HumDesign {
  parts: SineParts;
  freqs: number[];
  driftOrder: number;
  /** fitted and left-out samples */
  fitted: number;
  excluded: number;
  /** 2-norm condition number of the residualised sinusoid columns scaled to unit norm */
  condition: number;
  /**
   * largest ratio, over all sinusoid coefficients, of the power per sample subtracted from the
   * left-out samples to the power per sample the sinusoids remove (beyond the drift) from the fitted ones
   */
  extrapolationGain: number;
  /** joint fit of one sweep's fitted samples: residual sum of squares and the sinusoid coefficients */
  fit(sweep: ArrayLike<number>): { rss: number; coef: Float64Array; se2: Float64Array };
}

/** Legendre polynomials P0..Pq at u in [-1, 1] (Bonnet's recurrence). */
function legendre(u: number, q: number, out: Float64Array): void {
  out[0] = 1;
  if (q >= 1) out[1] = u;
  for (let k = 2; k <= q; k++) out[k] = ((2 * k - 1) * u * out[k - 1] - (k - 1) * out[k - 2]) / k;
}

function norm(v: Float64Array): number {
  let s = 0;
  for (let k = 0; k < v.length; k++) s += v[k] * v[k];
  return Math.sqrt(s);
}

/** Subtract from v its projection on the orthonormal columns Q (twice, for rounding). */
function project(Q: Float64Array[], v: Float64Array): void {
  for (let pass = 0; pass < 2; pass++)
    for (const c of Q) {
      let d = 0;
      for (let k = 0; k < v.length; k++) d += c[k] * v[k];
      for (let k = 0; k < v.length; k++) v[k] -= d * c[k];
    }
}

/** Build the joint design (see HumDesign). fitOnly: no full-sweep sinusoids (frequency and order search). */
export function humDesign(
  tMs: ArrayLike<number>,
  freqs: readonly number[],
  driftOrder: number,
  mask: Uint8Array,
  fitOnly = false,
): HumDesign {
  const n = tMs.length;
  const list: number[] = [];
  for (let i = 0; i < n; i++) if (mask[i]) list.push(i);
  const m = list.length;
  const idx = Int32Array.from(list);
  const K = freqs.length,
    p = 2 * K;
  const t0 = tMs[0],
    span = tMs[n - 1] - tMs[0] || 1;
  // orthonormal drift basis over the fitted samples (Gram-Schmidt on P0..Pq)
  const P = new Float64Array(driftOrder + 1);
  const raw = Array.from({ length: driftOrder + 1 }, () => new Float64Array(m));
  for (let k = 0; k < m; k++) {
    legendre((2 * (tMs[idx[k]] - t0)) / span - 1, driftOrder, P);
    for (let j = 0; j <= driftOrder; j++) raw[j][k] = P[j];
  }
  const Q: Float64Array[] = [];
  let driftOk = true;
  for (const c of raw) {
    const before = norm(c);
    project(Q, c);
    const nrm = norm(c);
    if (!(nrm > 1e-8 * before)) driftOk = false;
    for (let k = 0; k < m; k++) c[k] /= nrm || 1;
    Q.push(c);
  }
  const X = Array.from({ length: p }, () => new Float64Array(m));
  const full = new Float64Array(fitOnly ? 0 : p * n);
  const Z = Array.from({ length: p }, () => new Array<number>(p).fill(0)); // left-out Gram of the raw sinusoids
  const row = new Float64Array(p);
  let k = 0;
  for (let i = 0; i < n; i++) {
    for (let h = 0; h < K; h++) {
      const w = (2 * Math.PI * freqs[h]) / 1000;
      row[2 * h] = Math.cos(w * tMs[i]);
      row[2 * h + 1] = Math.sin(w * tMs[i]);
    }
    if (!fitOnly) for (let j = 0; j < p; j++) full[j * n + i] = row[j];
    if (k < m && idx[k] === i) {
      for (let j = 0; j < p; j++) X[j][k] = row[j];
      k++;
    } else for (let j = 0; j < p; j++) for (let l = 0; l <= j; l++) Z[j][l] += row[j] * row[l];
  }
  for (const c of X) project(Q, c);
  const G = Array.from({ length: p }, () => new Array<number>(p).fill(0));
  for (let j = 0; j < p; j++)
    for (let l = 0; l <= j; l++) {
      const u = X[j],
        v = X[l];
      let s = 0;
      for (let q = 0; q < m; q++) s += u[q] * v[q];
      G[j][l] = G[l][j] = s;
    }
  for (let j = 0; j < p; j++) for (let l = 0; l < j; l++) Z[l][j] = Z[j][l];
  const excluded = n - m;
  const d = G.map((r, j) => Math.sqrt(Math.max(r[j], 0)));
  const { condition, extrapolationGain } = driftOk
    ? gramConditioning(G, Z, m, excluded)
    : { condition: Infinity, extrapolationGain: Infinity };
  // the kernel's design: a constant (orthogonal to the residualised columns), then the cos/sin pairs
  // (the search designs, fitOnly, need neither: they only give residuals). The residualised columns are
  // orthogonal to the constant, so the scaled normal matrix is G scaled, bordered by the constant's 1.
  const cols = new Float64Array(fitOnly ? 0 : (p + 1) * m);
  if (!fitOnly) {
    cols.fill(1, 0, m);
    X.forEach((c, j) => cols.set(c, (j + 1) * m));
  }
  const scale = Float64Array.from({ length: p + 1 }, (_, j) => (j === 0 ? Math.sqrt(m) : d[j - 1] || 1));
  const A0 = new Float64Array((p + 1) * (p + 1));
  A0[0] = 1;
  for (let j = 0; j < p; j++)
    for (let l = 0; l < p; l++) A0[(j + 1) * (p + 1) + l + 1] = G[j][l] / (scale[j + 1] * scale[l + 1]);
  const parts: SineParts = { idx, cols, full, A0, scale, p: p + 1, m, n };
  const Ginv = invertSpd(G);
  const y = new Float64Array(m);
  const xty = new Float64Array(p);
  const dof = Math.max(1, m - p - driftOrder - 1);
  return {
    parts,
    freqs: [...freqs],
    driftOrder,
    fitted: m,
    excluded,
    condition,
    extrapolationGain,
    fit(x) {
      for (let q = 0; q < m; q++) y[q] = x[idx[q]];
      project(Q, y);
      let rss = 0;
      for (let q = 0; q < m; q++) rss += y[q] * y[q];
      const coef = new Float64Array(p);
      const se2 = new Float64Array(p);
      if (!Ginv) return { rss, coef, se2: se2.fill(Infinity) };
      for (let j = 0; j < p; j++) {
        let s = 0;
        for (let q = 0; q < m; q++) s += X[j][q] * y[q];
        xty[j] = s;
      }
      for (let j = 0; j < p; j++) {
        let s = 0;
        for (let l = 0; l < p; l++) s += Ginv[j][l] * xty[l];
        coef[j] = s;
        rss -= s * xty[j];
      }
      rss = Math.max(rss, 0);
      for (let j = 0; j < p; j++) se2[j] = (rss / dof) * Ginv[j][j];
      return { rss, coef, se2 };
    },
  };
}

/** Refuse a fit that cannot determine the sinusoids it would subtract. */
function checkConditioning(c: HumDesign, f: number, exclude: readonly unknown[]): void {
  const n = c.fitted + c.excluded;
  const where = exclude.length
    ? `exclude ${shown(exclude)} leaves ${c.fitted} of ${n} samples to fit`
    : `sweeps of ${n} samples`;
  const H = c.freqs.length;
  const what = `${H} harmonic${H === 1 ? '' : 's'} of ${Number(f.toFixed(4))} Hz`;
  const drift = c.driftOrder === 0 ? 'a constant' : `a drift polynomial of order ${c.driftOrder}`;
  const fix =
    `fit over at least about one mains period (${(1000 / f).toFixed(1)} ms), or use fewer harmonics` +
    (c.driftOrder > 0 ? ' or a lower drift order' : '');
  const E = exclude.length ? OptionError : AnalysisError;
  if (!(c.condition <= humLimits.maxCondition)) {
    throw new E(
      `cannot remove hum: ${where}, over which the ${what} cannot be told apart from each other and ${drift} ` +
        `(condition number ${c.condition.toExponential(2)}; at most ${humLimits.maxCondition.toExponential(0)}): ${fix}`,
    );
  }
  if (!(c.extrapolationGain <= humLimits.maxExtrapolationGain)) {
    throw new E(
      `cannot remove hum: ${where}; the ${what} fitted there could be subtracted from the ${c.excluded} left-out ` +
        `samples with ${c.extrapolationGain.toExponential(2)} times the power per sample it removes from the ` +
        `fitted ones (at most ${humLimits.maxExtrapolationGain}): ${fix}`,
    );
  }
}

const wellConditioned = (c: HumDesign) =>
  c.condition <= humLimits.maxCondition && c.extrapolationGain <= humLimits.maxExtrapolationGain;

/** Sweeps (at most k, evenly spread) used to choose the frequency, the drift order and the harmonics. */
function probeSweeps(nSweeps: number, k: number): number[] {
  const c = Math.min(k, nSweeps);
  return Array.from({ length: c }, (_, j) => Math.floor((j * nSweeps) / c));
}

/**
 * The drift order with the lowest Bayesian information criterion pooled over the probe sweeps
 * (each sweep has its own drift coefficients): sum of m ln(rss / m) + (parameters) ln m. Orders
 * whose design fails the conditioning limits are not considered (nor any higher order).
 * Reference: G. Schwarz, Estimating the dimension of a model, Ann. Statist. 6 (1978) 461-464.
 */
function chooseDriftOrder(
  set: SampleView,
  t: Float64Array,
  freqs: number[],
  mask: Uint8Array,
  maxOrder: number,
  probe: number[],
): number {
  let best = -1,
    bestBic = Infinity;
  for (let q = 0; q <= maxOrder; q++) {
    const d = humDesign(t, freqs, q, mask, true);
    if (!wellConditioned(d)) break;
    const m = d.fitted;
    if (m <= 2 * freqs.length + q + 3) break;
    let bic = 0;
    for (const s of probe) bic += m * Math.log(Math.max(d.fit(set.sweep(s)).rss, 1e-300) / m);
    bic += probe.length * (q + 1 + 2 * freqs.length) * Math.log(m);
    if (bic < bestBic) {
      bestBic = bic;
      best = q;
    }
  }
  return Math.max(best, 0);
}

/**
 * Harmonics 'auto': the fundamental, and each further harmonic whose rms amplitude over the probe
 * sweeps exceeds humLimits.harmonicZ times its rms standard error (from each sweep's residual
 * variance and the design: Kay 1993, sec. 4.6; with noise alone the ratio is about 1).
 */
function chooseHarmonics(set: SampleView, d: HumDesign, probe: number[]): number[] {
  const K = d.freqs.length;
  const a2 = new Float64Array(K),
    s2 = new Float64Array(K);
  for (const s of probe) {
    const r = d.fit(set.sweep(s));
    for (let h = 0; h < K; h++) {
      a2[h] += r.coef[2 * h] ** 2 + r.coef[2 * h + 1] ** 2;
      s2[h] += r.se2[2 * h] + r.se2[2 * h + 1];
    }
  }
  const keep: number[] = [];
  for (let h = 0; h < K; h++) if (h === 0 || Math.sqrt(a2[h] / s2[h]) > humLimits.harmonicZ) keep.push(h + 1);
  return keep;
}

/**
 * A baseline subtracted before the hum was removed measured its levels on the hum too (10 ms of a
 * 50 Hz sinusoid has a mean of up to 2/pi of its amplitude), leaving a level and a slope per sweep
 * that no hum fit can take out. When the set's extras hold the baseline's windows (baselineFit, mean
 * levels, same samples), the level and slope that the removed hum (x - out) has over those windows are
 * added back, so the result is the baseline of the hum-free sweep: baseline and hum removal commute.
 * Median levels are not linear in the hum and are left as they are (returns false).
 */
function giveBackBaseline(set: SampleView, x: Float64Array, out: Float64Array): boolean {
  const f = set.extras.baselineFit as BaselineFit | undefined;
  if (!f || f.method !== 'mean' || f.nSamples !== set.nSamples) return false;
  const n = set.nSamples;
  const ca = (f.a + f.b) / 2;
  const cb = f.late ? (f.late[0] + f.late[1]) / 2 : 0;
  const mean = (o: number, i0: number, i1: number) => {
    let s = 0;
    for (let i = i0; i <= i1; i++) s += x[o + i] - out[o + i];
    return s / (i1 - i0 + 1);
  };
  for (let s = 0; s < set.nSweeps; s++) {
    const o = s * n;
    const level = mean(o, f.a, f.b);
    const slope = f.late ? (mean(o, f.late[0], f.late[1]) - level) / (cb - ca) : 0;
    for (let i = 0; i < n; i++) out[o + i] += level + slope * (i - ca);
  }
  return true;
}

/** The removeHum verb on samples (SweepSet.removeHum). */
export function removeHumSamples(set: SampleView, options: HumOptions = {}): VerbOutput {
  checkKeys('removeHum options', options, ['frequency', 'harmonics', 'exclude', 'drift']);
  const hOpt = options.harmonics ?? humDefaults.harmonics;
  const autoH = hOpt === 'auto';
  if (!autoH && !Number.isInteger(hOpt))
    throw new OptionError(`invalid harmonics: ${shown(hOpt)}; must be an integer 1..20 or "auto"`);
  const harmonics = autoH ? 1 : integerIn('harmonics', hOpt, 1, 20);
  const driftOpt = options.drift ?? humDefaults.drift;
  if (driftOpt !== 'auto' && !Number.isInteger(driftOpt))
    throw new OptionError(
      `invalid drift: ${shown(driftOpt)}; must be the order of the drift polynomial (an integer 0..10) or "auto"`,
    );
  const fixedDrift = driftOpt === 'auto' ? null : integerIn('drift', driftOpt, 0, 10);
  const exclude = options.exclude ?? humDefaults.exclude;
  if (!Array.isArray(exclude))
    throw new OptionError(`invalid exclude: ${shown(exclude)}; must be a list of [from, to] ranges in ms`);
  const t = set.time();
  const mask = new Uint8Array(set.nSamples).fill(1);
  for (const w of exclude) {
    if (!Array.isArray(w) || w.length !== 2 || !Number.isFinite(w[0]) || !Number.isFinite(w[1]) || !(w[1] > w[0]))
      throw new OptionError(`invalid exclude: ${JSON.stringify(w)}; must be [from, to] in ms with from < to`);
    for (let i = 0; i < t.length; i++) if (t[i] >= w[0] && t[i] <= w[1]) mask[i] = 0;
  }
  const kept = mask.reduce((a, b) => a + b, 0);
  const terms = 2 * harmonics + 1 + (fixedDrift ?? 0);
  if (kept < terms + 3) throw new OptionError(`invalid exclude: leaves ${kept} samples to fit ${terms} terms`);
  const freqOpt = options.frequency ?? humDefaults.frequency;
  if (freqOpt !== 'detect' && (typeof freqOpt !== 'number' || !Number.isFinite(freqOpt))) {
    throw new OptionError(
      `invalid frequency: ${JSON.stringify(freqOpt)}; must be a mains frequency in Hz (a number such as 50 or 60) ` +
        `or "detect"`,
    );
  }
  const probe = probeSweeps(set.nSweeps, 16);
  // drift orders 'auto' considers: at most one per mains period in the sweep (a polynomial of order q turns
  // q - 1 times, a mains sinusoid twice per period, so the drift cannot follow the hum), and at most 6
  const maxDrift = (f: number) => Math.max(0, Math.min(MAX_DRIFT, Math.floor((f * set.durationMs) / 1000)));
  const harmonicList = (H: number) => Array.from({ length: H }, (_, h) => h + 1);
  let f: number;
  if (freqOpt === 'detect') {
    if (set.durationMs < 35) {
      throw new OptionError(
        `invalid frequency: "detect" needs sweeps of at least 35 ms (about two mains cycles); these are ` +
          `${set.durationMs.toFixed(1)} ms, so give frequency: 50 or 60`,
      );
    }
    // harmonics of both candidates (up to 70 Hz x H) below fs/2; the drift as given, else a quadratic
    const H = Math.max(1, Math.min(autoH ? 5 : harmonics, Math.floor((set.fs / 2 - 1) / 70)));
    const q = fixedDrift ?? Math.min(2, maxDrift(50));
    const design = (fr: number) =>
      humDesign(
        t,
        harmonicList(H).map((h) => h * fr),
        q,
        mask,
        true,
      );
    const rssAt = (fr: number) => {
      const d = design(fr);
      return probe.reduce((s, i) => s + d.fit(set.sweep(i)).rss, 0);
    };
    checkConditioning(
      humDesign(
        t,
        harmonicList(H).map((h) => h * 50),
        q,
        mask,
        true,
      ),
      50,
      exclude,
    );
    checkConditioning(
      humDesign(
        t,
        harmonicList(H).map((h) => h * 60),
        q,
        mask,
        true,
      ),
      60,
      exclude,
    );
    const f0 = rssAt(50) <= rssAt(60) ? 50 : 60;
    // a grid fine enough that the highest harmonic's residual has one minimum between grid points
    // (spacing a quarter of 1 / (H x sweep duration)), then a golden-section search around the best point
    const step = Math.max(2 / 200, Math.min(0.25, 1000 / (4 * H * set.durationMs)));
    let best = f0,
      bestR = Infinity;
    for (let fr = f0 - 1; fr <= f0 + 1 + 1e-9; fr += step) {
      const r = rssAt(fr);
      if (r < bestR) [best, bestR] = [fr, r];
    }
    let lo = best - step,
      hi = best + step;
    const g = (Math.sqrt(5) - 1) / 2;
    let x1 = hi - g * (hi - lo),
      x2 = lo + g * (hi - lo);
    let f1 = rssAt(x1),
      f2 = rssAt(x2);
    // 14 steps shrink the bracket to 2 x step x 0.618^14 (6e-4 Hz for a 0.25 Hz grid: 3e-3 of a cycle of the
    // 5th harmonic over a 1 s sweep)
    for (let it = 0; it < 14; it++) {
      if (f1 < f2) {
        hi = x2;
        x2 = x1;
        f2 = f1;
        x1 = hi - g * (hi - lo);
        f1 = rssAt(x1);
      } else {
        lo = x1;
        x1 = x2;
        f1 = f2;
        x2 = lo + g * (hi - lo);
        f2 = rssAt(x2);
      }
    }
    f = (lo + hi) / 2;
  } else {
    if (!(freqOpt > 0 && freqOpt * harmonics < set.fs / 2)) {
      throw new OptionError(
        `invalid frequency: ${freqOpt} Hz with ${harmonics} harmonics; must be > 0 with frequency x harmonics < fs/2 ` +
          `(fs=${set.fs} Hz)`,
      );
    }
    f = freqOpt;
  }
  if (f * harmonics >= set.fs / 2)
    throw new OptionError(`invalid harmonics: ${harmonics} at ${f.toFixed(2)} Hz reach fs/2 (fs=${set.fs} Hz)`);
  // candidate harmonics: as given, or ('auto') up to the 10th below fs/2, fewer while the design is ill-conditioned
  let numbers = harmonicList(harmonics);
  if (autoH) {
    let H = Math.max(1, Math.min(MAX_AUTO_HARMONIC, Math.ceil(set.fs / 2 / f) - 1));
    while (
      H > 1 &&
      !wellConditioned(
        humDesign(
          t,
          harmonicList(H).map((h) => h * f),
          0,
          mask,
          true,
        ),
      )
    )
      H--;
    numbers = harmonicList(H);
  }
  const driftOrder =
    fixedDrift ??
    chooseDriftOrder(
      set,
      t,
      numbers.map((h) => h * f),
      mask,
      maxDrift(f),
      probe,
    );
  if (autoH) {
    const d = humDesign(
      t,
      numbers.map((h) => h * f),
      driftOrder,
      mask,
      true,
    );
    checkConditioning(d, f, exclude);
    numbers = chooseHarmonics(set, d, probeSweeps(set.nSweeps, 64)).map((k) => numbers[k - 1]);
  }
  const design = humDesign(
    t,
    numbers.map((h) => h * f),
    driftOrder,
    mask,
  );
  checkConditioning(design, f, exclude);
  const x = set.data;
  const out = sharedSamples(x.length);
  const d = design.parts;
  const amp = shareCopy(new Float64Array(set.nSweeps));
  const shared = {
    ...d,
    idx: shareCopy(d.idx),
    cols: shareCopy(d.cols),
    full: shareCopy(d.full),
    A0: shareCopy(d.A0),
    scale: shareCopy(d.scale),
  };
  runSweeps('removeSines', { x, out, d: shared, amp }, set.nSweeps, x.length);
  const amplitudes = Array.from(amp);
  const refit = giveBackBaseline(set, x, out);
  return {
    data: out,
    extras: {
      humFrequencyHz: f,
      humAmplitude: amplitudes,
      humDriftOrder: driftOrder,
      humHarmonics: numbers,
      ...carryBaseline(set.extras),
    },
    step: {
      verb: 'removeHum',
      options: {
        frequency: freqOpt,
        fittedFrequencyHz: Number(f.toFixed(4)),
        harmonics: numbers[numbers.length - 1],
        fittedHarmonics: numbers,
        harmonicsRule: autoH ? 'auto' : 'given',
        exclude,
        drift: driftOpt,
        driftOrder,
        baselineRefit: refit,
      },
    },
  };
}
