/**
 * Stimulus-artifact removal. The artifact is not data (common practice, no source):
 * each method estimates it and removes it, leaving the neural response.
 */
import type { Conditions, ConditionValue } from '../sweeps/conditions';
import type { SampleView, VerbInput, VerbOutput } from './types';
import { OptionError, AnalysisError } from '../errors';
import { checkKeys, finite, oneOf, windowMs } from '../validate';
import { carryBaseline, windowIndices } from './baseline';
import { shareCopy, sharedSamples } from '../parallel/pool';
import { correctSweep, noCorrection } from '../parallel/kernels';
import { bridgeGap } from '../signal/bridge';

export type ArtifactMethod = 'blank' | 'template' | 'exponential' | 'alternate';

export interface ArtifactOptions {
  /**
   * 'blank': replace the window by a bridge; 'template': subtract a scaled artifact
   * template made from sub-threshold sweeps, from the window start to the sweep end;
   * 'exponential': fit and subtract the exponential tail, then blank the window;
   * 'alternate': average sweeps of opposite stimulus polarity (condition `polarity` +1 / -1).
   */
  method: ArtifactMethod;
  /** Artifact window [from, to], ms after the stimulus (default [0, 0.3]). */
  window?: [number, number];
  /** Bridge across the blanked window: 'linear' or 'hermite' (cubic Hermite with end slopes; default). */
  bridge?: 'linear' | 'hermite';
  /** template: sweeps with intensity <= this are artifact-only (default: the lowest intensity of each group). */
  maxIntensity?: number;
  /** template: explicit template sweep indices (overrides maxIntensity). */
  templateSweeps?: number[];
  /** template: conditions that define groups sharing one template (default: preparation, site, distanceMm when present). */
  templateBy?: string[];
  /** template: 'fit' (least squares in fitWindow, default) or 'intensity' (in proportion to stimulus intensity). */
  scaling?: 'fit' | 'intensity';
  /** template: window for the least-squares scale, ms (default: window). */
  fitWindow?: [number, number];
  /** exponential: window where the tail is fitted, ms (default [window end, window end + 0.4]). */
  tailWindow?: [number, number];
  /**
   * exponential: number of decaying exponentials (1, default, or 2: a fast decay and a slow tail, for
   * artifacts whose tail outlasts the first decay; give a tailWindow several slow time constants long)
   */
  exponentials?: 1 | 2;
}
export const artifactDefaults = {
  window: [0, 0.3] as [number, number],
  bridge: 'hermite' as const,
  scaling: 'fit' as const,
};

export { bridgeGap } from '../signal/bridge';

function groupKeys(set: SampleView, keys: string[]): Map<string, number[]> {
  const g = new Map<string, number[]>();
  set.conditions.forEach((c, i) => {
    const id = JSON.stringify(keys.map((k) => c[k] ?? null));
    const arr = g.get(id);
    if (arr) arr.push(i);
    else g.set(id, [i]);
  });
  return g;
}

/**
 * Remove the stimulus artifact by one of several methods (see ArtifactOptions).
 * @example set.removeArtifact({ method: 'template', window: [0, 0.4] })
 */
const ARTIFACT_KEYS: Record<ArtifactMethod, readonly string[]> = {
  blank: ['method', 'window', 'bridge'],
  exponential: ['method', 'window', 'bridge', 'tailWindow', 'exponentials'],
  template: ['method', 'window', 'scaling', 'fitWindow', 'templateBy', 'maxIntensity', 'templateSweeps'],
  alternate: ['method'],
};

const ALL_ARTIFACT_KEYS = [...new Set(Object.values(ARTIFACT_KEYS).flat())];

/** Unknown keys, and keys that the chosen method does not use, are errors naming the method that uses them. */
function checkArtifactKeys(options: ArtifactOptions, method: ArtifactMethod): void {
  checkKeys('removeArtifact options', options, ALL_ARTIFACT_KEYS);
  for (const k of Object.keys(options)) {
    if (ARTIFACT_KEYS[method].includes(k)) continue;
    const users = (Object.keys(ARTIFACT_KEYS) as ArtifactMethod[]).filter((m) => ARTIFACT_KEYS[m].includes(k));
    throw new OptionError(
      `option "${k}" in removeArtifact options is not used by method "${method}" (only by ${users.map((m) => `"${m}"`).join(', ')}); method "${method}" takes ${ARTIFACT_KEYS[method].join(', ')}`,
    );
  }
}

/** The removeArtifact verb on samples (SweepSet.removeArtifact). */
export function removeArtifactSamples(set: VerbInput, options: ArtifactOptions): VerbOutput {
  if (options === null || typeof options !== 'object')
    throw new OptionError(
      'removeArtifact needs options { method } ("blank", "template", "exponential" or "alternate")',
    );
  const method = oneOf('method', options?.method, ['blank', 'template', 'exponential', 'alternate'] as const);
  checkArtifactKeys(options, method);
  const window = windowMs('window', options.window ?? artifactDefaults.window);
  const bridge = oneOf('bridge', options.bridge ?? artifactDefaults.bridge, ['linear', 'hermite'] as const);
  const n = set.nSamples;
  if (method === 'alternate') return alternate(set);
  const [a, b] = windowIndices(set, window, 'window');
  if (method === 'blank') {
    // left pending (a few samples per sweep): bridged as each sweep is next read, after
    // any pending baseline or template correction, as the eager order would do it
    const pending = set.pending;
    const prior = pending && !pending.correction.bridge ? pending.correction : null;
    const base = prior ? pending!.base : set.data;
    const correction = {
      ...(prior ?? noCorrection()),
      bridge: true,
      bridgeFrom: a,
      bridgeTo: b,
      bridgeHermite: bridge === 'hermite',
    };
    return {
      data: { base, correction },
      extras: carryBaseline(set.extras),
      step: { verb: 'removeArtifact', options: { method, window, bridge } },
    };
  }
  if (method === 'exponential') {
    const tail = windowMs('tailWindow', options.tailWindow ?? [window[1], window[1] + 0.4]);
    const [ta, tb] = windowIndices(set, tail, 'tailWindow');
    if (tb - ta < 4)
      throw new OptionError(
        `invalid tailWindow: [${tail[0]}, ${tail[1]}] ms holds ${tb - ta + 1} samples; need at least 5 to fit an exponential`,
      );
    const K = options.exponentials ?? 1;
    if (K !== 1 && K !== 2)
      throw new OptionError(`invalid exponentials: ${JSON.stringify(K)}; must be 1 or 2 (decaying exponentials)`);
    if (K === 2 && tb - ta < 8)
      throw new OptionError(
        `invalid tailWindow: [${tail[0]}, ${tail[1]}] ms holds ${tb - ta + 1} samples; need at least 9 to fit ` +
          `two exponentials`,
      );
    const out = sharedSamples(set.data.length);
    out.set(set.data);
    const taus: number[][] = [];
    const railEnds: (number | null)[] = [];
    const need = K === 1 ? 5 : 9;
    for (let s = 0; s < set.nSweeps; s++) {
      const x = out.subarray(s * n, (s + 1) * n);
      // samples still on the amplifier's rail (either side) are not a decay: the fit starts after them,
      // and the blanked span reaches the rail's end when the rail outlasts the window
      const r = railEnd(x, a, tb, n - 1);
      railEnds.push(r < 0 ? null : set.timeAt(r));
      const fa = Math.max(ta, r + 1);
      if (tb - fa + 1 < need)
        throw new AnalysisError(
          `sweep ${s}: the amplifier rail lasts until ${set.timeAt(r).toFixed(3)} ms, leaving ${Math.max(0, tb - fa + 1)} ` +
            `samples of tailWindow [${tail[0]}, ${tail[1]}] ms to fit (need ${need}); give a tailWindow that ` +
            `reaches further past the rail`,
        );
      const terms =
        K === 1
          ? [fitExpTail(x, fa, tb, set.fs)].map((f) => ({ A: f.A, tauMs: f.tauMs }))
          : fitExpTails(x, fa, tb, set.fs).terms;
      taus.push(terms.map((q) => q.tauMs));
      for (const q of terms) for (let i = a; i < n; i++) x[i] -= q.A * Math.exp(-((i - fa) * 1000) / set.fs / q.tauMs);
      bridgeGap(x, a, Math.max(b, r), bridge);
    }
    return {
      data: out,
      extras: {
        artifactTauMs: K === 1 ? taus.map((q) => q[0]) : taus,
        artifactRailEndMs: railEnds,
        ...carryBaseline(set.extras),
      },
      step: {
        verb: 'removeArtifact',
        options: { method, window, bridge, tailWindow: tail, ...(K === 2 ? { exponentials: 2 } : {}) },
      },
    };
  }
  // template
  const scaling = oneOf('scaling', options.scaling ?? artifactDefaults.scaling, ['fit', 'intensity'] as const);
  const fitWindow = windowMs('fitWindow', options.fitWindow ?? window);
  const [fa, fb] = windowIndices(set, fitWindow, 'fitWindow');
  if (
    options.templateSweeps !== undefined &&
    (!Array.isArray(options.templateSweeps) ||
      options.templateSweeps.some((i) => !Number.isInteger(i) || i < 0 || i >= set.nSweeps))
  ) {
    throw new OptionError(
      `invalid templateSweeps: ${JSON.stringify(options.templateSweeps)}; must be an array of sweep indices 0..${set.nSweeps - 1}`,
    );
  }
  if (options.maxIntensity !== undefined) finite('maxIntensity', options.maxIntensity);
  if (
    options.templateBy !== undefined &&
    (!Array.isArray(options.templateBy) || options.templateBy.some((k) => typeof k !== 'string'))
  ) {
    throw new OptionError(
      `invalid templateBy: ${JSON.stringify(options.templateBy)}; must be an array of condition names`,
    );
  }
  const keys =
    options.templateBy ?? ['preparation', 'site', 'distanceMm'].filter((k) => set.conditions.some((c) => k in c));
  const groups = groupKeys(set, keys);
  // a pending baseline is applied on the fly; the subtraction is left pending too
  const pending = set.pending;
  const prior = pending && !pending.correction.template && !pending.correction.bridge ? pending.correction : null;
  const base = prior ? pending!.base : set.data;
  const corrected = (i: number, dst: Float64Array, i0 = 0, i1 = n): Float64Array => {
    if (prior) correctSweep(base, n, prior, i, dst, 0, i0, i1);
    else dst.set(base.subarray(i * n + i0, i * n + i1), i0);
    return dst;
  };
  const scratch = new Float64Array(n);
  const used: Record<string, number[]> = {};
  const templates = new Float64Array(groups.size * n);
  const scales = new Float64Array(set.nSweeps);
  const groupOf = new Int32Array(set.nSweeps);
  let g = -1;
  for (const [id, members] of groups) {
    g++;
    let tmpl: number[];
    if (options.templateSweeps) tmpl = options.templateSweeps.filter((i) => members.includes(i));
    else {
      const I = members.map((i) => set.conditions[i].intensity);
      if (I.some((v) => typeof v !== 'number')) {
        throw new AnalysisError(
          `template artifact removal needs the condition "intensity" on every sweep (group ${id}), or templateSweeps`,
        );
      }
      const limit = options.maxIntensity ?? Math.min(...(I as number[]));
      tmpl = members.filter((_, k) => (I[k] as number) <= limit);
    }
    if (tmpl.length === 0)
      throw new AnalysisError(
        `no template sweeps in group ${id}: give maxIntensity or templateSweeps that select sub-threshold sweeps`,
      );
    used[id] = tmpl;
    const T = templates.subarray(g * n, (g + 1) * n);
    for (const i of tmpl) {
      const x = corrected(i, scratch);
      for (let k = 0; k < n; k++) T[k] += x[k] / tmpl.length;
    }
    // no artifact precedes the stimulus: the template is zero before the window, so the
    // subtraction never changes a sample before it (and the scale fits what is subtracted)
    T.fill(0, 0, a);
    const tI = tmpl.reduce((acc, i) => acc + ((set.conditions[i].intensity as number) ?? NaN), 0) / tmpl.length;
    let tt = 0;
    for (let k = fa; k <= fb; k++) tt += T[k] * T[k];
    for (const i of members) {
      let scale: number;
      if (scaling === 'fit') {
        const x = corrected(i, scratch, fa, fb + 1);
        let xt = 0;
        for (let k = fa; k <= fb; k++) xt += x[k] * T[k];
        scale = tt > 0 ? xt / tt : 0;
      } else {
        const I = set.conditions[i].intensity;
        if (typeof I !== 'number' || !(tI > 0))
          throw new AnalysisError(
            `scaling "intensity" needs a positive intensity on sweep ${i} and its template sweeps`,
          );
        scale = I / tI;
      }
      scales[i] = scale;
      groupOf[i] = g;
    }
  }
  const correction = {
    ...(prior ?? noCorrection()),
    template: true,
    scale: shareCopy(scales),
    group: shareCopy(groupOf),
    templates: shareCopy(templates),
  };
  return {
    data: { base, correction },
    extras: { templateSweeps: used, ...carryBaseline(set.extras) },
    step: {
      verb: 'removeArtifact',
      options: {
        method,
        window,
        scaling,
        fitWindow,
        templateBy: keys,
        maxIntensity: options.maxIntensity ?? null,
        templateSweeps: options.templateSweeps ?? null,
      },
    },
  };
}

/**
 * The last sample in [a, b] that sits on the amplifier's rail, or -1. A rail is the largest or the
 * smallest value of samples a..c (c >= b, default b), on either side, lying far from the level before
 * the stimulus (the median of the samples before a; at least half as far from it as the farthest
 * extreme, so a flat stretch at the signal's own level is not a rail). A sample is on the rail within
 * 1e-6 of the rail's size (a rail stored with a gain or as float32 is found); only runs of at least
 * three such samples count.
 */
export function railEnd(x: ArrayLike<number>, a: number, b: number, c = b): number {
  let hi = -Infinity,
    lo = Infinity;
  for (let i = a; i <= c; i++) {
    if (x[i] > hi) hi = x[i];
    if (x[i] < lo) lo = x[i];
  }
  const pre = Array.from({ length: a }, (_, i) => x[i]).sort((p, q) => p - q);
  const level = pre.length ? pre[pre.length >> 1] : 0.5 * (hi + lo);
  const far = Math.max(hi - level, level - lo);
  const tol = 1e-6 * Math.max(Math.abs(hi), Math.abs(lo));
  if (!(hi - lo > tol) || !(far > tol)) return -1;
  const useHi = hi - level >= 0.5 * far,
    useLo = level - lo >= 0.5 * far;
  const on = (v: number) => (useHi && v >= hi - tol) || (useLo && v <= lo + tol);
  let last = -1,
    run = 0;
  for (let i = a; i <= b; i++) {
    if (on(x[i])) {
      run++;
      if (run >= 3) last = i;
    } else run = 0;
  }
  return last;
}

/**
 * Fit y = A exp(-(t - t_a)/tau) + c on samples [ta, tb]: golden-section search over
 * log tau (0.02 to 50 ms) with A and c by linear least squares at each tau.
 */
export function fitExpTail(
  x: Float64Array,
  ta: number,
  tb: number,
  fs: number,
): { A: number; c: number; tauMs: number; rss: number } {
  const m = tb - ta + 1;
  const at = (logTau: number) => {
    const tau = Math.exp(logTau);
    let se = 0,
      see = 0,
      sy = 0,
      sey = 0;
    for (let k = 0; k < m; k++) {
      const e = Math.exp(-(k * 1000) / fs / tau);
      se += e;
      see += e * e;
      sy += x[ta + k];
      sey += e * x[ta + k];
    }
    const det = see * m - se * se;
    const A = det !== 0 ? (sey * m - se * sy) / det : 0;
    const c = (sy - A * se) / m;
    let rss = 0;
    for (let k = 0; k < m; k++) rss += (x[ta + k] - A * Math.exp(-(k * 1000) / fs / tau) - c) ** 2;
    return { A, c, tauMs: tau, rss };
  };
  let lo = Math.log(0.02),
    hi = Math.log(50);
  const g = (Math.sqrt(5) - 1) / 2;
  let x1 = hi - g * (hi - lo),
    x2 = lo + g * (hi - lo);
  let f1 = at(x1).rss,
    f2 = at(x2).rss;
  for (let it = 0; it < 60; it++) {
    if (f1 < f2) {
      hi = x2;
      x2 = x1;
      f2 = f1;
      x1 = hi - g * (hi - lo);
      f1 = at(x1).rss;
    } else {
      lo = x1;
      x1 = x2;
      f1 = f2;
      x2 = lo + g * (hi - lo);
      f2 = at(x2).rss;
    }
  }
  return at((lo + hi) / 2);
}

/**
 * Fit y = A1 exp(-(t - t_a)/tau1) + A2 exp(-(t - t_a)/tau2) + c on samples [ta, tb] (tau1 < tau2) by
 * variable projection: the amplitudes and c by linear least squares at each (tau1, tau2); the time
 * constants by a grid over log tau (0.01 ms to 4 x the window, 32 points a side), then a Nelder-Mead
 * search in (log tau1, log tau2) from the best grid point. When the second exponential does not lower
 * the residual (one decay only), the result is the single-exponential fit with A2 = 0.
 * Reference: G. H. Golub and V. Pereyra, The differentiation of pseudo-inverses and nonlinear least
 * squares problems whose variables separate, SIAM J. Numer. Anal. 10 (1973) 413-432.
 */
export function fitExpTails(
  x: Float64Array,
  ta: number,
  tb: number,
  fs: number,
): { terms: { A: number; tauMs: number }[]; c: number; rss: number } {
  const m = tb - ta + 1;
  const tk = Float64Array.from({ length: m }, (_, k) => (k * 1000) / fs);
  const y = Float64Array.from({ length: m }, (_, k) => x[ta + k]);
  const e1 = new Float64Array(m),
    e2 = new Float64Array(m);
  const at = (l1: number, l2: number) => {
    const t1 = Math.exp(l1),
      t2 = Math.exp(l2);
    for (let k = 0; k < m; k++) {
      e1[k] = Math.exp(-tk[k] / t1);
      e2[k] = Math.exp(-tk[k] / t2);
    }
    // normal equations of [e1, e2, 1] (3 x 3), solved with partial pivoting
    const cols = [e1, e2, null];
    const G = [0, 1, 2].map((i) => [0, 1, 2].map((j) => dotCols(cols[i], cols[j], m)));
    const r = [0, 1, 2].map((i) => dotCols(cols[i], y, m));
    const coef = solve3(G, r);
    if (!coef) return { rss: Infinity, coef: [0, 0, 0], t1, t2 };
    let rss = 0;
    for (let k = 0; k < m; k++) rss += (y[k] - coef[0] * e1[k] - coef[1] * e2[k] - coef[2]) ** 2;
    return { rss, coef, t1, t2 };
  };
  const lo = Math.log(0.01),
    hi = Math.log(4 * Math.max(tk[m - 1], 1e-3));
  const N = 32;
  let best = { l1: lo, l2: hi, rss: Infinity };
  for (let i = 0; i < N; i++)
    for (let j = i + 1; j < N; j++) {
      const l1 = lo + ((hi - lo) * i) / (N - 1),
        l2 = lo + ((hi - lo) * j) / (N - 1);
      const r = at(l1, l2).rss;
      if (r < best.rss) best = { l1, l2, rss: r };
    }
  // Nelder-Mead in (log tau1, log tau2), kept inside [lo, hi]
  const clampL = (v: number) => Math.min(hi, Math.max(lo, v));
  const f = (p: number[]) => at(clampL(p[0]), clampL(p[1])).rss;
  const step = (hi - lo) / (N - 1);
  let simplex = [
    [best.l1, best.l2],
    [best.l1 + step, best.l2],
    [best.l1, best.l2 + step],
  ].map((p) => ({ p, v: f(p) }));
  for (let it = 0; it < 300; it++) {
    simplex.sort((u, w) => u.v - w.v);
    const [b0, b1, w] = simplex;
    if (Math.abs(w.v - b0.v) <= 1e-15 * Math.abs(b0.v) + 1e-300 && it > 20) break;
    const c = [(b0.p[0] + b1.p[0]) / 2, (b0.p[1] + b1.p[1]) / 2];
    const pt = (k: number) => [c[0] + k * (w.p[0] - c[0]), c[1] + k * (w.p[1] - c[1])];
    const r = { p: pt(-1), v: f(pt(-1)) };
    if (r.v < b0.v) {
      const e = { p: pt(-2), v: f(pt(-2)) };
      simplex = [b0, b1, e.v < r.v ? e : r];
    } else if (r.v < b1.v) simplex = [b0, b1, r];
    else {
      const k = { p: pt(r.v < w.v ? -0.5 : 0.5), v: 0 };
      k.v = f(k.p);
      if (k.v < Math.min(w.v, r.v)) simplex = [b0, b1, k];
      else
        simplex = [
          b0,
          ...[b1, w].map((q) => {
            const p = [(q.p[0] + b0.p[0]) / 2, (q.p[1] + b0.p[1]) / 2];
            return { p, v: f(p) };
          }),
        ];
    }
  }
  simplex.sort((u, w) => u.v - w.v);
  const two = at(clampL(simplex[0].p[0]), clampL(simplex[0].p[1]));
  const one = fitExpTail(x, ta, tb, fs);
  if (!(two.rss < one.rss)) return { terms: [{ A: one.A, tauMs: one.tauMs }], c: one.c, rss: one.rss };
  const terms = [
    { A: two.coef[0], tauMs: two.t1 },
    { A: two.coef[1], tauMs: two.t2 },
  ].sort((p, q) => p.tauMs - q.tauMs);
  return { terms, c: two.coef[2], rss: two.rss };
}

function dotCols(a: Float64Array | null, b: Float64Array | null, m: number): number {
  let s = 0;
  for (let k = 0; k < m; k++) s += (a ? a[k] : 1) * (b ? b[k] : 1);
  return s;
}

function solve3(A: number[][], b: number[]): number[] | null {
  const M = A.map((r, i) => [...r, b[i]]);
  for (let c = 0; c < 3; c++) {
    let p = c;
    for (let r = c + 1; r < 3; r++) if (Math.abs(M[r][c]) > Math.abs(M[p][c])) p = r;
    if (!(Math.abs(M[p][c]) > 1e-12 * Math.max(1e-300, Math.abs(M[0][0]), Math.abs(M[1][1]), Math.abs(M[2][2]))))
      return null;
    [M[c], M[p]] = [M[p], M[c]];
    for (let r = c + 1; r < 3; r++) {
      const q = M[r][c] / M[c][c];
      for (let k = c; k < 4; k++) M[r][k] -= q * M[c][k];
    }
  }
  const out = [0, 0, 0];
  for (let r = 2; r >= 0; r--) {
    let s = M[r][3];
    for (let k = r + 1; k < 3; k++) s -= M[r][k] * out[k];
    out[r] = s / M[r][r];
  }
  return out;
}

const PAIR_IGNORE = new Set(['polarity', 'repeat', 'acquiredS', 'fileSweep', 'label', 'file']);

/** Average each +1 polarity sweep with its -1 partner of the same conditions (k-th with k-th). */
function alternate(set: SampleView): VerbOutput {
  const pol = set.column('polarity');
  pol.forEach((p, i) => {
    if (p !== 1 && p !== -1)
      throw new AnalysisError(
        `alternating-polarity averaging needs the condition "polarity" (+1 or -1); sweep ${i} has ${JSON.stringify(p)}`,
      );
  });
  const groups = new Map<string, { pos: number[]; neg: number[] }>();
  set.conditions.forEach((c, i) => {
    const key = JSON.stringify(
      Object.keys(c)
        .filter((k) => !PAIR_IGNORE.has(k))
        .sort()
        .map((k) => [k, c[k]]),
    );
    let g = groups.get(key);
    if (!g) groups.set(key, (g = { pos: [], neg: [] }));
    (c.polarity === 1 ? g.pos : g.neg).push(i);
  });
  const pairs: [number, number][] = [];
  for (const g of groups.values()) {
    if (g.pos.length !== g.neg.length)
      throw new AnalysisError(
        `alternating-polarity averaging: ${g.pos.length} positive and ${g.neg.length} negative sweeps for conditions of sweep ${g.pos[0] ?? g.neg[0]}; expected equal numbers`,
      );
    g.pos.forEach((p, k) => pairs.push([p, g.neg[k]]));
  }
  pairs.sort((x, y) => Math.min(...x) - Math.min(...y));
  const n = set.nSamples;
  const out = new Float64Array(pairs.length * n);
  const conds: Conditions[] = pairs.map(([p, q], k) => {
    const xp = set.sweep(p),
      xq = set.sweep(q);
    for (let i = 0; i < n; i++) out[k * n + i] = 0.5 * (xp[i] + xq[i]);
    const c: Record<string, ConditionValue> = { ...set.conditions[p], polarity: null, count: 2 };
    return c;
  });
  return {
    data: out,
    nSweeps: pairs.length,
    conditions: conds,
    step: { verb: 'removeArtifact', options: { method: 'alternate' } },
  };
}

export interface StimulusDetection {
  /** detected stimulus time per sweep, ms on the sweep's current time axis */
  perSweepMs: number[];
  /** median over sweeps, ms */
  timeMs: number;
  /** spread (max - min) over sweeps, ms */
  spreadMs: number;
}

/**
 * Find the stimulus time from the artifact: in each sweep, the first sample whose
 * step from the previous sample exceeds half the largest step in the search window.
 */
export function detectStimulus(set: SampleView, options: { search?: [number, number] } = {}): StimulusDetection {
  checkKeys('detectStimulus options', options, ['search']);
  const search = windowMs('search', options.search ?? [set.t0Ms, set.timeAt(set.nSamples - 1)]);
  const [a, b] = windowIndices(set, search, 'search');
  const per: number[] = [];
  for (let s = 0; s < set.nSweeps; s++) {
    const x = set.sweep(s);
    let mx = 0;
    for (let i = Math.max(1, a); i <= b; i++) mx = Math.max(mx, Math.abs(x[i] - x[i - 1]));
    let at = -1;
    for (let i = Math.max(1, a); i <= b; i++)
      if (Math.abs(x[i] - x[i - 1]) > 0.5 * mx) {
        at = i;
        break;
      }
    per.push(at < 0 ? NaN : set.timeAt(at));
  }
  const sorted = per.filter(Number.isFinite).sort((p, q) => p - q);
  if (!sorted.length) throw new AnalysisError('no stimulus artifact found in the search window');
  return {
    perSweepMs: per,
    timeMs: sorted[Math.floor((sorted.length - 1) / 2)],
    spreadMs: sorted[sorted.length - 1] - sorted[0],
  };
}

/** The alignStimulus verb on samples (SweepSet.alignStimulus). */
export function alignStimulusSamples(set: SampleView, options: { search?: [number, number] } = {}): VerbOutput {
  const d = detectStimulus(set, options);
  return {
    t0Ms: set.t0Ms - d.timeMs,
    extras: { ...set.extras, stimulusDetection: d },
    step: {
      verb: 'alignStimulus',
      options: { search: options.search ?? null, detectedMs: d.timeMs, spreadMs: d.spreadMs },
    },
  };
}
