/**
 * Separation of overlapping fiber classes by decomposition into a conduction-velocity
 * distribution with a shared single-fiber waveform, using two or more recording distances.
 *
 * Model (the classical description of a compound response as a sum of single-fiber
 * potentials, e.g. J. E. Cummins, L. J. Dorfman, D. H. Perkel, "Nerve fiber
 * conduction-velocity distributions", in Computer-Aided Electromyography, Karger 1979;
 * K. Schoonhoven, D. F. Stegeman, "Models and analysis of compound nerve action
 * potentials", Crit. Rev. Biomed. Eng. 19 (1991) 47-111; both references from memory, not checked):
 *
 *   y_x(t) = sum_k W_k s(t - x u_k)      (bipolar: sum_k W_k [s(t - x u_k) - s(t - x_ref u_k)])
 *
 * where u_k = 1 / v_k is a grid of slownesses (ms/mm), W_k >= 0 the weight of the
 * fibers conducting at v_k, and s the single-fiber waveform (any sign and shape: mono-,
 * bi- or triphasic; its time origin absorbs the utilisation time). A class moves at its
 * own velocity, so with two or more distances the same W and s must explain every site:
 * the faster class's tail (its repolarisation and after-potential) moves by x du while
 * the slower class moves by more, which separates a slower class that is only a shoulder
 * on the faster class's tail. s and W are found by alternating least squares (W by
 * non-negative least squares, s by least squares with a second-difference penalty) on
 * the mean trace at each distance of a group, leaving out samples the caller excludes
 * (the artifact); each sweep then gets its own W with s fixed (a deconvolution with a
 * known kernel, possible at a single site), held towards the group's W (scaled to the trace by least squares) by a
 * small ridge.
 * Classes are split where W has its deepest valley between the two classes' velocity
 * ranges; a class whose part of W has no separate mode is "not resolved". Optional
 * nuisance terms (NUISANCE_TAU_MS, off unless the grid gives artifactFromMs) model an
 * artifact decay from a given time.
 */

export interface DecomposeTrace {
  /** samples (polarity as recorded) */
  y: ArrayLike<number>;
  /** conduction distance, mm */
  distanceMm: number;
  /** bipolar recording: conduction distance of the reference contact, mm (the trace is contact minus reference) */
  referenceMm?: number | null;
}

export interface DecomposeGrid {
  /** sample interval, ms */
  dtMs: number;
  /** time of sample 0, ms */
  t0Ms: number;
  /** fitted samples [first, last] per distance (same for every trace at that distance) */
  range: (distanceMm: number) => [number, number];
  /** samples excluded from the fit (clipped or artifact) at a distance */
  excluded?: (i: number, distanceMm: number) => boolean;
  /** slowness grid bounds, ms/mm: [1 / vFastest, 1 / vSlowest] */
  uBounds: [number, number];
  /** end of amplifier clipping at a distance (ms), from which the artifact's decay is fitted; null: none */
  artifactFromMs?: (distanceMm: number) => number | null;
  /** single-fiber waveform support, ms: [before arrival, after arrival] */
  sSupportMs: [number, number];
}

export interface SharedShape {
  u: Float64Array;
  /** s sampled at dtMs from -sSupport[0] */
  s: Float64Array;
  sLead: number;
  /** samples per node of s (s is linear between nodes) */
  sStep: number;
  /** group weights per slowness bin (from the group's mean traces) */
  W: Float64Array;
  /** rms residual of the group fit, signal units */
  rms: number;
  iterations: number;
  /** the artifact-decay amplitudes of the last W step, NUISANCE_TAU_MS.length per distance (ascending) */
  nuisance?: Float64Array;
}

/** Columns of the design for one distance: s shifted to each bin's arrival, on samples [r0, r1]. */
function design(
  s: Float64Array,
  sLead: number,
  u: Float64Array,
  x: number,
  g: DecomposeGrid,
  r0: number,
  r1: number,
  sStep = 1,
  ref: number | null = null,
): { M: Float64Array; lo: Int32Array; hi: Int32Array } {
  const nt = r1 - r0 + 1,
    nu = u.length,
    ns = s.length;
  const M = new Float64Array(nt * nu);
  const lo = new Int32Array(nu),
    hi = new Int32Array(nu);
  const at = (jf: number) => {
    const j0 = Math.floor(jf);
    if (j0 < -1 || j0 >= ns) return 0;
    const f = jf - j0;
    return (j0 >= 0 ? (1 - f) * s[j0] : 0) + (j0 + 1 < ns ? f * s[j0 + 1] : 0);
  };
  for (let k = 0; k < nu; k++) {
    // sample i (time t0 + i dt) sees s at tau = t - x u_k, node j = tau / (dt sStep) + sLead; a bipolar recording
    // (reference contact at `ref` mm) sees the difference of the two contacts
    const shift = (x * u[k] - g.t0Ms) / g.dtMs;
    const shiftRef = ref === null ? 0 : (ref * u[k] - g.t0Ms) / g.dtMs;
    let first = nt,
      last = -1;
    for (let i = 0; i < nt; i++) {
      const v = at((r0 + i - shift) / sStep + sLead) - (ref === null ? 0 : at((r0 + i - shiftRef) / sStep + sLead));
      if (v !== 0) {
        M[i * nu + k] = v;
        if (i < first) first = i;
        last = i;
      }
    }
    lo[k] = first;
    hi[k] = last;
  }
  return { M, lo, hi };
}

/**
 * Non-negative least squares on the normal equations: minimise x'Gx/2 - b'x with x_i >= 0 for the first
 * n - free unknowns (the last `free` are unconstrained), by the active-set method of C. L. Lawson and
 * R. J. Hanson, Solving Least Squares Problems, Prentice-Hall 1974, ch. 23 (the algorithm of scipy.optimize.nnls).
 */
export function nnlsGram(
  G: Float64Array,
  b: Float64Array,
  n: number,
  free: number,
  x: Float64Array,
  maxIter = 3 * n,
): Float64Array {
  // warm start: the positive entries of x (a feasible point) form the first passive set
  const passive = new Uint8Array(n);
  for (let i = 0; i < n; i++) passive[i] = i >= n - free || x[i] > 0 ? 1 : 0;
  for (let i = 0; i < n - free; i++) if (!(x[i] > 0)) x[i] = 0;
  const warm = x.some((v, i) => i < n - free && v > 0);
  const solveP = (): Float64Array | null => {
    const idx: number[] = [];
    for (let i = 0; i < n; i++) if (passive[i]) idx.push(i);
    const m = idx.length;
    const A = new Float64Array(m * m),
      r = new Float64Array(m);
    for (let a = 0; a < m; a++) {
      r[a] = b[idx[a]];
      for (let c = 0; c < m; c++) A[a * m + c] = G[idx[a] * n + idx[c]];
    }
    const z = spdSolve(A, r, m);
    if (!z) return null;
    const full = new Float64Array(n);
    idx.forEach((i, a) => (full[i] = z[a]));
    return full;
  };
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(b[i]));
  const tol = 1e-10 * (scale || 1);
  const inner = (): boolean => {
    for (let k = 0; k < n; k++) {
      const z = solveP();
      if (!z) return false;
      let alpha = Infinity;
      for (let i = 0; i < n - free; i++) {
        if (passive[i] && z[i] <= 0) {
          const a = x[i] / (x[i] - z[i]);
          if (a < alpha) alpha = a;
        }
      }
      if (alpha === Infinity) {
        x.set(z);
        return true;
      }
      for (let i = 0; i < n; i++) x[i] += alpha * (z[i] - x[i]);
      for (let i = 0; i < n - free; i++)
        if (passive[i] && x[i] <= 1e-15 * (scale || 1)) {
          passive[i] = 0;
          x[i] = 0;
        }
    }
    return true;
  };
  if (free > 0 || warm) inner();
  for (let it = 0; it < maxIter; it++) {
    // gradient of the objective's negative: w = b - G x
    let best = -1,
      bw = tol;
    for (let i = 0; i < n - free; i++) {
      if (passive[i]) continue;
      let w = b[i];
      for (let j = 0; j < n; j++) w -= G[i * n + j] * x[j];
      if (w > bw) {
        bw = w;
        best = i;
      }
    }
    if (best < 0) break;
    passive[best] = 1;
    if (!inner()) {
      passive[best] = 0;
      return x;
    }
  }
  return x;
}

/** Cholesky solve of a symmetric positive-definite n x n system (in place copy). */
function spdSolve(A: Float64Array, b: Float64Array, n: number): Float64Array | null {
  const L = Float64Array.from(A);
  for (let j = 0; j < n; j++) {
    let d = L[j * n + j];
    for (let k = 0; k < j; k++) d -= L[j * n + k] ** 2;
    if (!(d > 0)) return null;
    d = Math.sqrt(d);
    L[j * n + j] = d;
    for (let i = j + 1; i < n; i++) {
      let s = L[i * n + j];
      for (let k = 0; k < j; k++) s -= L[i * n + k] * L[j * n + k];
      L[i * n + j] = s / d;
    }
  }
  const z = Float64Array.from(b);
  for (let i = 0; i < n; i++) {
    let s = z[i];
    for (let k = 0; k < i; k++) s -= L[i * n + k] * z[k];
    z[i] = s / L[i * n + i];
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = z[i];
    for (let k = i + 1; k < n; k++) s -= L[k * n + i] * z[k];
    z[i] = s / L[i * n + i];
  }
  return z;
}

/** Add lambda x (second-difference penalty) to the top-left m x m block of an n x n matrix. */
function addSecondDifference(G: Float64Array, n: number, m: number, lambda: number): void {
  for (let r = 0; r + 2 < m; r++) {
    const idx = [r, r + 1, r + 2],
      c = [1, -2, 1];
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) G[idx[a] * n + idx[b]] += lambda * c[a] * c[b];
  }
}

interface WFit {
  W: Float64Array;
  nuis: Float64Array;
  rss: number;
  n: number;
}

/**
 * Nuisance terms of a trace whose amplifier clipped on the stimulus artifact: the artifact's decay from the end of
 * clipping, as free amplitudes (either sign) of exponentials with a geometric ladder of time constants (common
 * practice, no source; fast amplifier recovery only: slower terms trade off against the classes). No offset or
 * drift is fitted: they trade off against the slowest fibers' weights, so the baseline should be removed first.
 */
export const NUISANCE_TAU_MS = [0.01, 0.02, 0.04, 0.08];
const NB = NUISANCE_TAU_MS.length;
function nuisanceBasis(tMs: number, j: number, fromMs: number | null): number {
  return fromMs !== null && tMs >= fromMs ? Math.exp(-(tMs - fromMs) / NUISANCE_TAU_MS[j]) : 0;
}

/** Weights W (>= 0) and offset/drift for one trace, s fixed. */
function solveWeights(
  M: Float64Array,
  lo: Int32Array,
  hi: Int32Array,
  nt: number,
  nu: number,
  y: Float64Array,
  keep: Uint8Array,
  tc: Float64Array,
  lambdaW: number,
  prior: Float64Array | undefined,
  art: number | null,
  priorWeight = 0.02,
): WFit {
  const n = nu + NB;
  const G = new Float64Array(n * n),
    b = new Float64Array(n);
  const col = (i: number, k: number) => (k < nu ? M[i * nu + k] : nuisanceBasis(tc[i], k - nu, art));
  for (let k = 0; k < n; k++) {
    const ka = k < nu ? lo[k] : 0,
      kb = k < nu ? hi[k] : nt - 1;
    if (kb < ka) continue;
    for (let l = k; l < n; l++) {
      const la = l < nu ? lo[l] : 0,
        lb = l < nu ? hi[l] : nt - 1;
      const a = Math.max(ka, la),
        e = Math.min(kb, lb);
      let s = 0;
      for (let i = a; i <= e; i++) if (keep[i]) s += col(i, k) * col(i, l);
      G[k * n + l] = s;
      G[l * n + k] = s;
    }
    let s = 0;
    for (let i = ka; i <= kb; i++) if (keep[i]) s += col(i, k) * y[i];
    b[k] = s;
  }
  // the prior scaled to this trace first (the least-squares scale c >= 0 of the group's weights, from the data alone):
  // the ridge then keeps the group's shape of W where the trace does not determine it, not the group's size, so a
  // sweep with no response (below threshold, fully blocked) is not pulled towards the group's mean response
  let pc = prior;
  if (prior) {
    let num = 0,
      den = 0;
    for (let k = 0; k < nu; k++) {
      if (prior[k] === 0) continue;
      num += b[k] * prior[k];
      for (let l = 0; l < nu; l++) den += prior[k] * G[k * n + l] * prior[l];
    }
    const c = den > 0 ? Math.max(0, num / den) : 1;
    pc = Float64Array.from(prior.subarray(0, nu), (v) => c * v);
  }
  let tr = 0;
  for (let k = 0; k < nu; k++) tr += G[k * n + k];
  addSecondDifference(G, n, nu, (lambdaW * tr) / nu);
  for (let k = 0; k < n; k++)
    G[k * n + k] += 1e-9 * (tr / nu) + (k >= nu ? (art !== null ? 1e-9 : 1e6) * (tr / nu || 1) : 0);
  // a ridge towards the group's weights: bins the trace cannot see (arrivals in excluded samples) keep the group's value
  const mu = (priorWeight * tr) / nu;
  if (pc)
    for (let k = 0; k < nu; k++) {
      G[k * n + k] += mu;
      b[k] += mu * pc[k];
    }
  const x = new Float64Array(n);
  if (pc) x.set(pc);
  nnlsGram(G, b, n, NB, x);
  let rss = 0,
    cnt = 0;
  for (let i = 0; i < nt; i++) {
    if (!keep[i]) continue;
    let m = 0;
    for (let j = 0; j < NB; j++) m += x[nu + j] * nuisanceBasis(tc[i], j, art);
    for (let k = 0; k < nu; k++) if (i >= lo[k] && i <= hi[k]) m += M[i * nu + k] * x[k];
    rss += (y[i] - m) ** 2;
    cnt++;
  }
  return { W: x.subarray(0, nu), nuis: x.subarray(nu), rss, n: cnt };
}

export interface DecomposeOptions {
  iterations?: number;
  /** second-difference penalty on W, relative to the mean diagonal of its Gram matrix */
  lambdaW?: number;
  /** second-difference penalty on s, relative to the mean diagonal of its Gram matrix */
  lambdaS?: number;
  /** per-trace fits: ridge towards the group's weights, relative to the mean diagonal of the Gram matrix (default 0.02) */
  priorWeight?: number;
}

/**
 * Fit the shared single-fiber waveform s and the velocity distribution W to the mean
 * traces of one group (two or more distances). Returns null when fewer than two distances.
 */
export function fitSharedShape(
  traces: DecomposeTrace[],
  g: DecomposeGrid,
  opts: DecomposeOptions = {},
): SharedShape | null {
  const dists = [...new Set(traces.map((t) => t.distanceMm))].sort((a, b) => a - b);
  // two sites are needed: two distances, or one bipolar recording (two contacts)
  if (dists.length < 2 && !traces.some((t) => typeof t.referenceMm === 'number')) return null;
  const iterations = opts.iterations ?? 40;
  const lambdaW = opts.lambdaW ?? 1e-3;
  const lambdaS = opts.lambdaS ?? 1e-2;
  const xFar = Math.max(...dists, ...traces.map((t) => t.referenceMm ?? 0));
  const [u0, u1] = g.uBounds;
  const nu = Math.max(20, Math.min(160, Math.round(((u1 - u0) * xFar) / (2 * g.dtMs))));
  const u = Float64Array.from({ length: nu }, (_, k) => u0 + ((u1 - u0) * k) / (nu - 1));
  // s on nodes every sStep samples, at most about 250 nodes (the s step costs samples x nodes^2)
  const sStep = Math.max(1, Math.ceil((g.sSupportMs[0] + g.sSupportMs[1]) / g.dtMs / 250));
  const sLead = Math.round(g.sSupportMs[0] / g.dtMs / sStep);
  const ns = sLead + Math.round(g.sSupportMs[1] / g.dtMs / sStep) + 1;
  // mean trace per distance
  const per = dists.map((x) => {
    const [r0, r1] = g.range(x);
    const nt = r1 - r0 + 1;
    const y = new Float64Array(nt);
    const members = traces.filter((t) => t.distanceMm === x);
    for (const t of members) for (let i = 0; i < nt; i++) y[i] += t.y[r0 + i] / members.length;
    const keep = new Uint8Array(nt).fill(1);
    if (g.excluded) for (let i = 0; i < nt; i++) if (g.excluded(r0 + i, x)) keep[i] = 0;
    const tc = Float64Array.from({ length: nt }, (_, i) => g.t0Ms + (r0 + i) * g.dtMs);
    return {
      x,
      r0,
      r1,
      nt,
      y,
      keep,
      tc,
      art: g.artifactFromMs ? g.artifactFromMs(x) : null,
      ref: members[0]?.referenceMm ?? null,
    };
  });
  // start: s = the nearest site's mean trace from its largest deflection back by a quarter of the lead,
  // i.e. the compound response itself, which is s convolved with a narrow W for the fastest class
  const near = per[0];
  let ipk = 0;
  for (let i = 0; i < near.nt; i++) if (near.keep[i] && Math.abs(near.y[i]) > Math.abs(near.y[ipk])) ipk = i;
  let s = Float64Array.from({ length: ns }, (_, j) => {
    const i = ipk + (j - sLead) * sStep - Math.round((sLead * sStep) / 2);
    return i >= 0 && i < near.nt && near.keep[i] ? near.y[i] / (Math.abs(near.y[ipk]) || 1) : 0;
  });
  let W = new Float64Array(nu);
  const warm = per.map(() => undefined as Float64Array | undefined);
  let rms = Infinity;
  let it = 0;
  let lastNuis = new Float64Array(NB * per.length);
  for (; it < iterations; it++) {
    // W step: one W and a separate offset/drift per distance, jointly (stacked normal equations)
    const n = nu + NB * per.length;
    const G = new Float64Array(n * n),
      b = new Float64Array(n);
    const Ms = per.map((p) => design(s, sLead, u, p.x, g, p.r0, p.r1, sStep, p.ref));
    per.forEach((p, pi) => {
      const { M, lo, hi } = Ms[pi];
      const own = (k: number) => k >= nu + NB * pi && k < nu + NB * (pi + 1);
      const cols = (i: number, k: number) =>
        k < nu ? M[i * nu + k] : own(k) ? nuisanceBasis(p.tc[i], k - nu - NB * pi, p.art) : 0;
      const active = (k: number) => k < nu || own(k);
      for (let k = 0; k < n; k++) {
        if (!active(k)) continue;
        const ka = k < nu ? lo[k] : 0,
          kb = k < nu ? hi[k] : p.nt - 1;
        if (kb < ka) continue;
        for (let l = k; l < n; l++) {
          if (!active(l)) continue;
          const la = l < nu ? lo[l] : 0,
            lb = l < nu ? hi[l] : p.nt - 1;
          const a = Math.max(ka, la),
            e = Math.min(kb, lb);
          let acc = 0;
          for (let i = a; i <= e; i++) if (p.keep[i]) acc += cols(i, k) * cols(i, l);
          G[k * n + l] += acc;
          if (l !== k) G[l * n + k] += acc;
        }
        let acc = 0;
        for (let i = ka; i <= kb; i++) if (p.keep[i]) acc += cols(i, k) * p.y[i];
        b[k] += acc;
      }
    });
    let tr = 0;
    for (let k = 0; k < nu; k++) tr += G[k * n + k];
    addSecondDifference(G, n, nu, (lambdaW * tr) / nu);
    // unused nuisance columns (no artifact time given) are pinned at zero by a large ridge
    const off = (k: number) => k >= nu && per[Math.floor((k - nu) / NB)].art === null;
    for (let k = 0; k < n; k++) G[k * n + k] += 1e-9 * (tr / nu || 1) + (off(k) ? 1e6 * (tr / nu || 1) : 0);
    const x = new Float64Array(n);
    x.set(W);
    if (warm[0]) x.set(warm[0].subarray(nu), nu);
    nnlsGram(G, b, n, NB * per.length, x);
    W = Float64Array.from(x.subarray(0, nu));
    warm[0] = x;
    const nuis = x.subarray(nu);
    lastNuis = Float64Array.from(nuis);
    // s step: y - offset - drift = B s, B[i, j] = sum_k W_k phi(i - shift_k - j)
    const H = new Float64Array(ns * ns),
      c = new Float64Array(ns);
    let rss = 0,
      cnt = 0;
    per.forEach((p, pi) => {
      const B = waveformDesign(p, W, u, g, ns, sStep, sLead);
      for (let i = 0; i < p.nt; i++) {
        if (!p.keep[i]) continue;
        let r = p.y[i];
        for (let j = 0; j < NB; j++) r -= nuis[NB * pi + j] * nuisanceBasis(p.tc[i], j, p.art);
        const row = i * ns;
        for (let j = 0; j < ns; j++) {
          const bj = B[row + j];
          if (bj === 0) continue;
          c[j] += bj * r;
          for (let l = j; l < ns; l++) H[j * ns + l] += bj * B[row + l];
        }
        let m = 0;
        for (let j = 0; j < ns; j++) m += B[row + j] * s[j];
        rss += (r - m) ** 2;
        cnt++;
      }
    });
    rms = Math.sqrt(rss / Math.max(1, cnt));
    for (let j = 0; j < ns; j++) for (let l = 0; l < j; l++) H[j * ns + l] = H[l * ns + j];
    let trH = 0;
    for (let j = 0; j < ns; j++) trH += H[j * ns + j];
    addSecondDifference(H, ns, ns, (lambdaS * trH) / ns);
    for (let j = 0; j < ns; j++) H[j * ns + j] += 1e-9 * (trH / ns || 1);
    const sNew = spdSolve(H, c, ns);
    if (!sNew) break;
    // scale: |s| peaks at 1 (W carries the amplitude)
    let mx = 0;
    for (let j = 0; j < ns; j++) mx = Math.max(mx, Math.abs(sNew[j]));
    if (!(mx > 0)) break;
    for (let j = 0; j < ns; j++) sNew[j] /= mx;
    for (let k = 0; k < nu; k++) W[k] *= mx;
    s = sNew;
  }
  return { u, s, sLead, sStep, W, rms, iterations: it, nuisance: lastNuis };
}

export interface TraceDecomposition {
  /** per class (bins [from, to] of u), the modelled class waveform on samples [r0, r1] */
  components: Float64Array[];
  r0: number;
  r1: number;
  W: Float64Array;
  /** the fitted artifact tail on samples [r0, r1] */
  nuisance: Float64Array;
  /** 1 where the sample was fitted, 0 where excluded */
  fitted: Uint8Array;
  rms: number;
  /** how much the classes' modelled components cancel each other (componentCancellation; 1: they only add) */
  cancellation: number;
}

/**
 * How much the classes' modelled components cancel each other: the largest sum of their magnitudes over the fitted
 * samples, max_i sum_j |c_j(i)|, divided by the largest magnitude of their sum, max_i |sum_j c_j(i)|. Components of
 * one sign add (1 at a monopolar site, whatever their overlap); a biphasic (bipolar) recording lets a faster class's
 * late phase overlap a slower class's early one, but where the classes' own components reach well beyond the
 * largest deflection they explain together, the split is one of the many the data allow (large components of
 * opposite sign whose difference fits), not a measurement of either class. 1 when nothing was modelled.
 * O(classes x samples).
 * @example componentCancellation([Float64Array.of(0, 2, 1), Float64Array.of(0, -1, 1)]) // 3 / 2 = 1.5
 */
/**
 * The most a decomposition's class components may cancel each other (componentCancellation) before the split of a
 * trace is taken as undetermined: the clean class-only components of the development set FNPG-N07 (15 mm minus
 * 25 mm, and each site alone) give 1.000 at every temperature; the degenerate fit of one bipolar channel there gives
 * 1.75-2.16. Half again the largest deflection leaves room for a faster class's late phase over a slower one's
 * early phase (common practice, no source).
 */
export const MAX_CANCELLATION = 1.5;

export function componentCancellation(components: readonly Float64Array[], fitted?: ArrayLike<number>): number {
  let gross = 0,
    net = 0;
  const n = components.length ? components[0].length : 0;
  for (let i = 0; i < n; i++) {
    if (fitted && !fitted[i]) continue;
    let g = 0,
      v = 0;
    for (const c of components) {
      g += Math.abs(c[i]);
      v += c[i];
    }
    if (g > gross) gross = g;
    if (Math.abs(v) > net) net = Math.abs(v);
  }
  return net > 0 ? gross / net : 1;
}

/** Decompose one trace with a fixed shared shape; `bins` are [first, last] u-bin indices per class. */
export function decomposeTrace(
  y: ArrayLike<number>,
  x: number,
  shape: SharedShape,
  g: DecomposeGrid,
  bins: [number, number][],
  opts: DecomposeOptions = {},
  ref: number | null = null,
): TraceDecomposition {
  const [r0, r1] = g.range(x);
  const nt = r1 - r0 + 1,
    nu = shape.u.length;
  const { M, lo, hi } = design(shape.s, shape.sLead, shape.u, x, g, r0, r1, shape.sStep, ref);
  const yy = Float64Array.from({ length: nt }, (_, i) => y[r0 + i]);
  const keep = new Uint8Array(nt).fill(1);
  if (g.excluded) for (let i = 0; i < nt; i++) if (g.excluded(r0 + i, x)) keep[i] = 0;
  const tc = Float64Array.from({ length: nt }, (_, i) => g.t0Ms + (r0 + i) * g.dtMs);
  const art = g.artifactFromMs ? g.artifactFromMs(x) : null;
  const f = solveWeights(M, lo, hi, nt, nu, yy, keep, tc, opts.lambdaW ?? 1e-3, shape.W, art, opts.priorWeight ?? 0.02);
  const components = bins.map(([b0, b1]) => {
    const c = new Float64Array(nt);
    for (let k = b0; k <= b1; k++) {
      const w = f.W[k];
      if (w === 0) continue;
      for (let i = lo[k]; i <= hi[k]; i++) c[i] += w * M[i * nu + k];
    }
    return c;
  });
  const nuisance = Float64Array.from(tc, (t) => {
    let v = 0;
    for (let j = 0; j < NB; j++) v += f.nuis[j] * nuisanceBasis(t, j, art);
    return v;
  });
  return {
    components,
    r0,
    r1,
    W: Float64Array.from(f.W),
    nuisance,
    fitted: keep,
    rms: Math.sqrt(f.rss / Math.max(1, f.n)),
    cancellation: componentCancellation(components, keep),
  };
}

/**
 * The u-bin where W has its deepest valley between two velocity ranges' centres:
 * W is smoothed over 5 bins; the valley is the minimum between the two modes (the
 * largest W inside each class's search zone), the middle of a run of equal minima.
 * Returns null when one side has no mode.
 */
export function valleyBin(
  W: Float64Array,
  u: Float64Array,
  fastZone: [number, number],
  slowZone: [number, number],
): { bin: number; depth: number; fastMode: number; slowMode: number } | null {
  const n = W.length;
  const sm = Float64Array.from({ length: n }, (_, k) => {
    let s = 0,
      c = 0;
    for (let j = Math.max(0, k - 2); j <= Math.min(n - 1, k + 2); j++) {
      s += W[j];
      c++;
    }
    return s / c;
  });
  // zones in slowness: fast classes have small u
  const inZone = (k: number, z: [number, number]) => u[k] >= 1 / z[1] && u[k] <= 1 / z[0];
  let fm = -1,
    sMode = -1;
  for (let k = 0; k < n; k++) {
    if (inZone(k, fastZone) && (fm < 0 || sm[k] > sm[fm])) fm = k;
    if (inZone(k, slowZone) && (sMode < 0 || sm[k] > sm[sMode])) sMode = k;
  }
  if (fm < 0 || sMode < 0 || sMode <= fm) return null;
  let mn = fm + 1;
  for (let k = fm + 1; k < sMode; k++) if (sm[k] < sm[mn]) mn = k;
  let e = mn;
  while (e + 1 < sMode && sm[e + 1] <= sm[mn] * (1 + 1e-9) + 1e-300) e++;
  const bin = Math.round((mn + e) / 2);
  const lower = Math.min(sm[fm], sm[sMode]);
  return { bin, depth: lower > 0 ? sm[mn] / lower : 1, fastMode: fm, slowMode: sMode };
}

export interface ClassMixture {
  /** per class: centre and SD of ln(velocity / (m/s)), and the class's share of the weights relative to the first */
  centre: Float64Array;
  sd: Float64Array;
  share: Float64Array;
  /** per class: the Box-Cox exponent of its bump (0: log-normal in velocity, 1: normal in velocity) */
  lambda: Float64Array;
  /** per class: its weight on each slowness bin */
  weights: Float64Array[];
  /** the shared single-fiber waveform refitted with these weights (|s| peaks at 1) */
  s: Float64Array;
  rms: number;
  iterations: number;
  /** the number of fitted samples (every distance) */
  samples: number;
}

/**
 * Smooth class membership: the velocity distribution as a sum of one log-normal bump per class,
 * W_k = sum_j a_j g_j(v_k) / sum_k g_j(v_k), g_j(v) = exp(-(ln v - m_j)^2 / (2 sd_j^2)), fitted with the shared
 * waveform s to the group's mean traces (s by penalised least squares inside, m_j, sd_j and a_j by
 * Levenberg-Marquardt on the residual; variable projection, G. H. Golub, V. Pereyra, SIAM J. Numer. Anal. 10 (1973)
 * 413-432, from memory). A class's fibres whose velocities overlap a neighbour's range stay in their own bump
 * instead of going to whichever side of a valley they fall on: a class's velocity distribution is taken to be
 * unimodal in log velocity (fiber diameters within a class are, common practice, no source). Started from the
 * modes of the free distribution W between the valleys (`bins`), each inside its class's own velocity range when
 * `zones` gives them; the artifact terms of the last W step are kept. The parameters stay in a box (projected
 * steps): each centre inside its part of W, each SD between one bin and half the log width of the class's range
 * (with zones). The boundary is then a property of velocity alone (where the bumps cross), not of the heights of
 * the modes, which is where the deepest valley of W falls.
 * The bumps' shape: the fit above (log-normal bumps) and a second one where each bump's Box-Cox exponent lambda_j
 * (LAMBDA_BOX: log-normal to normal in velocity, boxCoxZ) is fitted too; the second is kept when the Bayesian
 * information criterion prefers it. Where two classes overlap, the tails of their bumps decide which class the
 * overlapping fibres go to: on the development set (normal diameters for A-alpha/beta) the log-normal bump gave
 * A-alpha/beta's slowest fibres to A-delta (A-delta two-site cross-correlation velocity +5.9% at 20 C, +3.5% with
 * the exponents; tests/measure/separationShape.test.ts checks the exponents on synthetic data).
 * Returns null (the caller keeps the split at the valleys) when a part of W is empty, a centre leaves its part, a
 * bump narrows below one bin, or the rms residual exceeds both 1.25 x that of the free W and 1% of the largest
 * deflection (for both fits).
 */
export function fitClassMixture(
  traces: DecomposeTrace[],
  g: DecomposeGrid,
  shape: SharedShape,
  bins: [number, number][],
  opts: MixtureOptions = {},
): ClassMixture | null {
  const logNormal = mixtureOnce(traces, g, shape, bins, { ...opts, shapeFree: false });
  if (opts.shapeFree === false) return logNormal;
  // each bump's shape free as well (the same start, each exponent 0): kept when the Bayesian information criterion
  // (G. Schwarz, Ann. Stat. 6 (1978) 461-464, from memory), n ln(rss / n) + k ln(n), says the extra exponents are
  // worth it
  const free = mixtureOnce(traces, g, shape, bins, { ...opts, shapeFree: true });
  if (!free) return logNormal;
  if (!logNormal) return free;
  const n = free.samples;
  const bic = (m: ClassMixture, k: number) => n * Math.log(m.rms * m.rms) + k * Math.log(n);
  return bic(free, bins.length) < bic(logNormal, 0) ? free : logNormal;
}

export interface MixtureOptions {
  lambdaS?: number;
  iterations?: number;
  /** per class, its velocity range (m/s, [slowest, fastest]) at the group's temperature */
  zones?: [number, number][];
  /**
   * fit each bump's Box-Cox exponent in LAMBDA_BOX as well, and keep that fit when the information criterion
   * prefers it (default true); false: every bump log-normal in velocity
   */
  shapeFree?: boolean;
}

function mixtureOnce(
  traces: DecomposeTrace[],
  g: DecomposeGrid,
  shape: SharedShape,
  bins: [number, number][],
  opts: MixtureOptions,
): ClassMixture | null {
  const nc = bins.length;
  const shapeFree = opts.shapeFree ?? true;
  if (nc < 2) return null;
  const { u, sLead, sStep } = shape;
  const nu = u.length,
    ns = shape.s.length;
  const lambdaS = opts.lambdaS ?? 1e-2;
  const lnv = Float64Array.from(u, (q) => -Math.log(q));
  const dists = [...new Set(traces.map((t) => t.distanceMm))].sort((a, b) => a - b);
  const per = dists.map((x, pi) => {
    const [r0, r1] = g.range(x);
    const nt = r1 - r0 + 1;
    const y = new Float64Array(nt);
    const members = traces.filter((t) => t.distanceMm === x);
    for (const t of members) for (let i = 0; i < nt; i++) y[i] += t.y[r0 + i] / members.length;
    const keep = new Uint8Array(nt).fill(1);
    if (g.excluded) for (let i = 0; i < nt; i++) if (g.excluded(r0 + i, x)) keep[i] = 0;
    const art = g.artifactFromMs ? g.artifactFromMs(x) : null;
    for (let i = 0; i < nt; i++) {
      const t = g.t0Ms + (r0 + i) * g.dtMs;
      for (let j = 0; j < NB; j++) y[i] -= (shape.nuisance?.[NB * pi + j] ?? 0) * nuisanceBasis(t, j, art);
    }
    return { x, r0, nt, y, keep, ref: members[0]?.referenceMm ?? null };
  });
  // start: each class's part of W, at its mode (W smoothed over 5 bins) with the SD from the full width at half
  // that mode (robust to stray weight at the part's far end); the fit is refused when a centre leaves its part
  const p0: number[] = [];
  const keepIn: [number, number][] = [];
  const minSd: number[] = [];
  const maxSd: number[] = [];
  const sm = Float64Array.from({ length: nu }, (_, k) => {
    let a = 0,
      c = 0;
    for (let q = Math.max(0, k - 2); q <= Math.min(nu - 1, k + 2); q++) {
      a += shape.W[q];
      c++;
    }
    return a / c;
  });
  let w0 = 0;
  for (let j = 0; j < nc; j++) {
    const [b0, b1] = bins[j];
    let sw = 0,
      km = b0;
    // the start: the mode of W within the class's own velocity range (where valleyBin looks for it), else within
    // its part (the slowest class's part reaches below its range, where W holds what the fit could not place)
    const zone = opts.zones?.[j];
    const inZone = (k: number) => !zone || (1 / u[k] >= zone[0] && 1 / u[k] <= zone[1]);
    let kz = -1;
    for (let k = b0; k <= b1; k++) {
      sw += shape.W[k];
      if (sm[k] > sm[km]) km = k;
      if (inZone(k) && (kz < 0 || sm[k] > sm[kz])) kz = k;
    }
    if (kz >= 0) km = kz;
    if (!(sw > 0) || b1 <= b0) return null;
    let k0 = km,
      k1 = km;
    while (k0 > b0 && sm[k0 - 1] > 0.5 * sm[km]) k0--;
    while (k1 < b1 && sm[k1 + 1] > 0.5 * sm[km]) k1++;
    const spacing = Math.abs(lnv[b0] - lnv[b1]) / (b1 - b0);
    p0.push(lnv[km], Math.log(Math.max(Math.abs(lnv[k0] - lnv[k1]) / 2.355, 2 * spacing)));
    keepIn.push([lnv[b1], lnv[b0]]);
    minSd.push(spacing);
    // a class's spread in log velocity is at most half the log width of its own range (its fibres span that range)
    maxSd.push(zone ? Math.max(2 * spacing, 0.5 * Math.log(zone[1] / zone[0])) : Infinity);
    p0[p0.length - 1] = Math.min(p0[p0.length - 1], Math.log(maxSd[j]));
    // the share: the part's weight within 3 SD of the mode, so that stray far weight does not count
    let near = 0;
    for (let k = b0; k <= b1; k++)
      if (Math.abs(lnv[k] - lnv[km]) <= 3 * Math.exp(p0[p0.length - 1])) near += shape.W[k];
    if (j === 0) w0 = near;
    else p0.push(Math.log(Math.max(near, 1e-12) / w0));
    // the bump's shape: log-normal in velocity to start with (lambda 0)
    if (shapeFree) p0.push(0);
  }
  const weightsOf = (p: ArrayLike<number>): Float64Array[] => {
    const out: Float64Array[] = [];
    let q = 0;
    for (let j = 0; j < nc; j++) {
      const m = p[q++],
        sd = Math.exp(p[q++]),
        a = j === 0 ? 1 : Math.exp(p[q++]),
        lam = shapeFree ? p[q++] : 0;
      const w = Float64Array.from(lnv, (l) => Math.exp(-0.5 * boxCoxZ(l - m, sd, lam) ** 2));
      let sum = 0;
      for (let k = 0; k < nu; k++) sum += w[k];
      for (let k = 0; k < nu; k++) w[k] = w[k] > 1e-4 ? (a * w[k]) / (sum || 1) : 0;
      out.push(w);
    }
    return out;
  };
  // s for given weights, and the residual on every fitted sample
  const solve = (p: ArrayLike<number>): { s: Float64Array; r: Float64Array } | null => {
    const ws = weightsOf(p);
    const W = new Float64Array(nu);
    for (const w of ws) for (let k = 0; k < nu; k++) W[k] += w[k];
    const H = new Float64Array(ns * ns),
      c = new Float64Array(ns);
    const Bs = per.map((q) => {
      const B = waveformDesign(q, W, u, g, ns, sStep, sLead);
      for (let i = 0; i < q.nt; i++) {
        if (!q.keep[i]) continue;
        const row = i * ns;
        let first = -1,
          last = -1;
        for (let j = 0; j < ns; j++)
          if (B[row + j] !== 0) {
            if (first < 0) first = j;
            last = j;
          }
        if (first < 0) continue;
        for (let j = first; j <= last; j++) {
          const bj = B[row + j];
          if (bj === 0) continue;
          c[j] += bj * q.y[i];
          for (let l = j; l <= last; l++) H[j * ns + l] += bj * B[row + l];
        }
      }
      return B;
    });
    for (let j = 0; j < ns; j++) for (let l = 0; l < j; l++) H[j * ns + l] = H[l * ns + j];
    let trH = 0;
    for (let j = 0; j < ns; j++) trH += H[j * ns + j];
    addSecondDifference(H, ns, ns, (lambdaS * trH) / ns);
    for (let j = 0; j < ns; j++) H[j * ns + j] += 1e-9 * (trH / ns || 1);
    const s = spdSolve(H, c, ns);
    if (!s) return null;
    const res: number[] = [];
    per.forEach((q, pi) => {
      const B = Bs[pi];
      for (let i = 0; i < q.nt; i++) {
        if (!q.keep[i]) continue;
        let m = 0;
        for (let j = 0; j < ns; j++) m += B[i * ns + j] * s[j];
        res.push(m - q.y[i]);
      }
    });
    return { s, r: Float64Array.from(res) };
  };
  const cost = (r: Float64Array) => r.reduce((a, v) => a + v * v, 0);
  // bounds (a projected Levenberg-Marquardt step, each parameter clamped to its box after the step): each centre
  // inside its part of W, each SD between one bin and maxSd, so that a weakly determined bump can neither leave its
  // class (e.g. to take up a slow residue beyond it) nor spread over the whole grid
  const clamp = (q: Float64Array) => {
    let i = 0;
    for (let j = 0; j < nc; j++) {
      q[i] = Math.min(keepIn[j][1], Math.max(keepIn[j][0], q[i]));
      i++;
      q[i] = Math.min(Math.log(maxSd[j]), Math.max(Math.log(minSd[j]), q[i]));
      i += j > 0 ? 2 : 1;
      if (shapeFree) {
        q[i] = Math.min(LAMBDA_BOX[1], Math.max(LAMBDA_BOX[0], q[i]));
        i++;
      }
    }
  };
  // Levenberg-Marquardt with a forward-difference Jacobian (D. W. Marquardt, J. SIAM 11 (1963) 431-441)
  let p = Float64Array.from(p0);
  let cur = solve(p);
  if (!cur) return null;
  const start = cost(cur.r);
  let C = start;
  let mu = 1e-3;
  const np = p.length;
  let it = 0;
  for (; it < (opts.iterations ?? 15); it++) {
    const J: Float64Array[] = [];
    for (let a = 0; a < np; a++) {
      const h = 1e-4 * Math.max(1, Math.abs(p[a]));
      const q = Float64Array.from(p);
      q[a] += h;
      const o = solve(q);
      if (!o) return null;
      J.push(Float64Array.from(o.r, (v, i) => (v - cur!.r[i]) / h));
    }
    const A = new Float64Array(np * np),
      b = new Float64Array(np);
    for (let a = 0; a < np; a++) {
      for (let c2 = a; c2 < np; c2++) {
        let acc = 0;
        for (let i = 0; i < J[a].length; i++) acc += J[a][i] * J[c2][i];
        A[a * np + c2] = acc;
        A[c2 * np + a] = acc;
      }
      let acc = 0;
      for (let i = 0; i < J[a].length; i++) acc -= J[a][i] * cur.r[i];
      b[a] = acc;
    }
    let stepped = false;
    for (let tries = 0; tries < 8 && !stepped; tries++) {
      const D = Float64Array.from(A);
      for (let a = 0; a < np; a++) D[a * np + a] += mu * (A[a * np + a] || 1e-12);
      const d = spdSolve(D, b, np);
      if (d) {
        const q = Float64Array.from(p, (v, a) => v + d[a]);
        clamp(q);
        const o = solve(q);
        if (o && cost(o.r) < C) {
          const rel = (C - cost(o.r)) / C;
          p = q;
          cur = o;
          C = cost(o.r);
          mu = Math.max(1e-9, mu / 3);
          stepped = true;
          if (rel < 1e-6) it = Infinity;
          continue;
        }
      }
      mu *= 4;
    }
    if (!stepped) break;
  }
  if (!(C <= start) || !Number.isFinite(C)) return null;
  const weights = weightsOf(p);
  let mx = 0;
  for (let j = 0; j < ns; j++) mx = Math.max(mx, Math.abs(cur.s[j]));
  if (!(mx > 0)) return null;
  const s = Float64Array.from(cur.s, (v) => v / mx);
  for (const w of weights) for (let k = 0; k < nu; k++) w[k] *= mx;
  const centre = new Float64Array(nc),
    sd = new Float64Array(nc),
    share = new Float64Array(nc),
    lambda = new Float64Array(nc);
  let q = 0;
  for (let j = 0; j < nc; j++) {
    centre[j] = p[q++];
    sd[j] = Math.exp(p[q++]);
    share[j] = j === 0 ? 1 : Math.exp(p[q++]);
    lambda[j] = shapeFree ? p[q++] : 0;
    if (!(centre[j] > keepIn[j][0] && centre[j] < keepIn[j][1]) || !(sd[j] >= minSd[j])) return null;
  }
  // a bump collapsed, or a fit worse than the free distribution's by more than a quarter and by more than 1% of the
  // largest deflection, is not a description of the data
  const rms = Math.sqrt(C / Math.max(1, cur.r.length));
  let ymax = 0;
  for (const q of per) for (let i = 0; i < q.nt; i++) if (q.keep[i]) ymax = Math.max(ymax, Math.abs(q.y[i]));
  if (!(rms <= Math.max(1.25 * shape.rms, 0.01 * ymax))) return null;
  return { centre, sd, share, lambda, weights, s, rms, iterations: it, samples: cur.r.length };
}

/**
 * The bump's standardised distance from its centre: Box-Cox transform (G. E. P. Box, D. R. Cox, J. R. Stat. Soc. B 26
 * (1964) 211-252, from memory) of velocity, scaled so that `sd` is the SD in log velocity at the centre:
 * z = (exp(lambda d) - 1) / (lambda sd), d = ln v - centre; lambda 0 gives d / sd (log-normal), 1 a normal in v.
 */
export function boxCoxZ(d: number, sd: number, lambda: number): number {
  return Math.abs(lambda) < 1e-6 ? d / sd : Math.expm1(lambda * d) / (lambda * sd);
}

/**
 * The range of the bumps' Box-Cox exponent: from log-normal to normal in velocity. Fibre diameters within a class
 * are distributed between the two (a symmetric histogram for the large myelinated fibres, a right-skewed one for
 * the small; common practice, no source), and velocity is proportional to diameter in myelinated fibres.
 */
export const LAMBDA_BOX: [number, number] = [0, 1];

/**
 * Decompose one trace with a fixed shared waveform and fixed class weight shapes (fitClassMixture): one
 * non-negative amplitude per class and the artifact terms, by least squares.
 */
export function decomposeTraceMixture(
  y: ArrayLike<number>,
  x: number,
  shape: SharedShape,
  g: DecomposeGrid,
  weights: Float64Array[],
  ref: number | null = null,
): TraceDecomposition {
  const [r0, r1] = g.range(x);
  const nt = r1 - r0 + 1,
    nu = shape.u.length,
    nc = weights.length;
  const { M, lo, hi } = design(shape.s, shape.sLead, shape.u, x, g, r0, r1, shape.sStep, ref);
  const cols = weights.map((w) => {
    const c = new Float64Array(nt);
    for (let k = 0; k < nu; k++) {
      if (w[k] === 0) continue;
      for (let i = lo[k]; i <= hi[k]; i++) c[i] += w[k] * M[i * nu + k];
    }
    return c;
  });
  const keep = new Uint8Array(nt).fill(1);
  if (g.excluded) for (let i = 0; i < nt; i++) if (g.excluded(r0 + i, x)) keep[i] = 0;
  const tc = Float64Array.from({ length: nt }, (_, i) => g.t0Ms + (r0 + i) * g.dtMs);
  const art = g.artifactFromMs ? g.artifactFromMs(x) : null;
  const n = nc + NB;
  const col = (i: number, k: number) => (k < nc ? cols[k][i] : nuisanceBasis(tc[i], k - nc, art));
  const G = new Float64Array(n * n),
    b = new Float64Array(n);
  for (let i = 0; i < nt; i++) {
    if (!keep[i]) continue;
    for (let k = 0; k < n; k++) {
      const ck = col(i, k);
      if (ck === 0) continue;
      b[k] += ck * y[r0 + i];
      for (let l = k; l < n; l++) G[k * n + l] += ck * col(i, l);
    }
  }
  for (let k = 0; k < n; k++) for (let l = 0; l < k; l++) G[k * n + l] = G[l * n + k];
  let tr = 0;
  for (let k = 0; k < nc; k++) tr += G[k * n + k];
  for (let k = 0; k < n; k++)
    G[k * n + k] += 1e-9 * (tr / nc || 1) + (k >= nc && art === null ? 1e6 * (tr / nc || 1) : 0);
  const a = new Float64Array(n);
  nnlsGram(G, b, n, NB, a);
  const components = cols.map((c, j) => Float64Array.from(c, (v) => a[j] * v));
  const nuisance = Float64Array.from(tc, (t) => {
    let v = 0;
    for (let j = 0; j < NB; j++) v += a[nc + j] * nuisanceBasis(t, j, art);
    return v;
  });
  let rss = 0,
    cnt = 0;
  for (let i = 0; i < nt; i++) {
    if (!keep[i]) continue;
    let m = nuisance[i];
    for (const c of components) m += c[i];
    rss += (y[r0 + i] - m) ** 2;
    cnt++;
  }
  const W = new Float64Array(nu);
  weights.forEach((w, j) => {
    for (let k = 0; k < nu; k++) W[k] += a[j] * w[k];
  });
  return {
    components,
    r0,
    r1,
    W,
    nuisance,
    fitted: keep,
    rms: Math.sqrt(rss / Math.max(1, cnt)),
    cancellation: componentCancellation(components, keep),
  };
}

/**
 * The design of the waveform step for one trace: B[i, j] = sum_k W_k phi(i - shift_k - j), the waveform sampled
 * on its own grid (step sStep samples, sLead samples before the arrival) and interpolated linearly; each fibre
 * arrives at the contact at x u_k and, for a bipolar trace, with the opposite sign at the reference contact.
 */
function waveformDesign(
  q: { x: number; ref: number | null; nt: number; r0: number },
  W: ArrayLike<number>,
  u: ArrayLike<number>,
  g: { t0Ms: number; dtMs: number },
  ns: number,
  sStep: number,
  sLead: number,
): Float64Array {
  const B = new Float64Array(q.nt * ns);
  const sites: [number, number][] =
    q.ref === null
      ? [[q.x, 1]]
      : [
          [q.x, 1],
          [q.ref, -1],
        ];
  for (let k = 0; k < W.length; k++) {
    if (W[k] === 0) continue;
    for (const [site, sign] of sites) {
      const shift = (site * u[k] - g.t0Ms) / g.dtMs;
      for (let i = 0; i < q.nt; i++) {
        const jf = (q.r0 + i - shift) / sStep + sLead;
        const j0 = Math.floor(jf);
        if (j0 < -1 || j0 >= ns) continue;
        const f = jf - j0;
        if (j0 >= 0) B[i * ns + j0] += sign * W[k] * (1 - f);
        if (j0 + 1 < ns) B[i * ns + j0 + 1] += sign * W[k] * f;
      }
    }
  }
  return B;
}
