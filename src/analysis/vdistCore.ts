/**
 * Numerical core of the conduction-velocity distribution (no SweepSet here): the
 * forward model, the two-distance equation of Cummins, Dorfman & Perkel (1979), the
 * single-fibre-potential step, the non-negative regularised decomposition with its
 * generalised cross-validation, and distribution summaries. Times in ms, distances in
 * mm, velocities in m/s (= mm/ms).
 *
 * Forward model (one recording distance x): response(t) = sum_k u_k s_k(t - t_u - x / v_k)
 * + nuisance(t), where u_k >= 0 is the summed peak amplitude of the fibres in velocity
 * bin k and s_k(t) = g(t r_k^q) - [bipolar] g((t - e / v_k) r_k^q), r_k = v_k / vRef, with g
 * the single-fibre potential (peak |g| = 1) of a fibre conducting at vRef, q the
 * duration exponent (duration proportional to v^-q) and e the separation of a bipolar
 * pair. The number of fibres in bin k is u_k / r_k^p (amplitude proportional to v^p).
 */
import { nnlsGram } from '../signal/nnls';

export interface Block {
  /** conduction distance, mm */
  distanceMm: number;
  /** times of the fitted samples, ms */
  t: Float64Array;
  /** the averaged response at those samples (signal units) */
  y: Float64Array;
  /** noise SD of the averaged response (signal units), the row weight is 1/sigma */
  sigma: number;
  /** the whole averaged response with its time axis, for the two-distance equation */
  full?: { t0Ms: number; dtMs: number; y: Float64Array; startMs: number };
}

export interface Model {
  /** velocity grid, m/s, ascending */
  v: Float64Array;
  vRef: number;
  /** duration exponent q */
  q: number;
  /** bipolar separation e, mm (0 = monophasic) */
  bipolarMm: number;
  /** utilisation delay t_u, ms */
  utilisationMs: number;
}

/**
 * Each bin stands for velocities spread evenly in log v across it (not a point mass):
 * its column is the mean over SUB velocities at the centres of SUB equal log-steps of
 * the bin (midpoint rule), which keeps the model smooth in the delay x / v.
 */
export const SUB = 4;
export function subVelocities(v: Float64Array, k: number): number[] {
  const K = v.length;
  const lo = k > 0 ? Math.sqrt(v[k - 1] * v[k]) : (v[0] * v[0]) / Math.sqrt(v[0] * v[1]);
  const hi = k + 1 < K ? Math.sqrt(v[k] * v[k + 1]) : (v[K - 1] * v[K - 1]) / Math.sqrt(v[K - 2] * v[K - 1]);
  const a = Math.log(lo),
    b = Math.log(hi);
  return Array.from({ length: SUB }, (_, i) => Math.exp(a + ((i + 0.5) * (b - a)) / SUB));
}

/** A single-fibre potential sampled on nodes tau0 + j h (ms), cubic (Keys) between nodes, 0 outside. */
export interface Sfp {
  tau0: number;
  h: number;
  g: Float64Array;
}

/** Catmull-Rom (Keys, a = -1/2) weights of nodes j-1, j, j+1, j+2 at fraction f. */
export function keysWeights(f: number, out: Float64Array): void {
  const f2 = f * f,
    f3 = f2 * f;
  out[0] = (-f3 + 2 * f2 - f) / 2;
  out[1] = (3 * f3 - 5 * f2 + 2) / 2;
  out[2] = (-3 * f3 + 4 * f2 + f) / 2;
  out[3] = (f3 - f2) / 2;
}

const KW = new Float64Array(4);
/** g at time x: cubic convolution (Keys 1981) between nodes, nodes outside the support count as 0. */
export function sfpAt(s: Sfp, x: number): number {
  const u = (x - s.tau0) / s.h;
  const j = Math.floor(u);
  const n = s.g.length;
  if (j < -2 || j > n) return 0;
  keysWeights(u - j, KW);
  let v = 0;
  for (let a = 0; a < 4; a++) {
    const i = j - 1 + a;
    if (i >= 0 && i < n) v += KW[a] * s.g[i];
  }
  return v;
}

/** Orthonormal basis (Gram-Schmidt, twice) of the weighted nuisance columns of one block. */
export function nuisanceBasis(
  t: Float64Array,
  sigma: number,
  drift: number,
  artifactTauMs: readonly number[],
  humHz: readonly number[] = [],
  artifactFromMs = 0,
): Float64Array[] {
  const n = t.length;
  let lo = Infinity,
    hi = -Infinity;
  for (const x of t) {
    if (x < lo) lo = x;
    if (x > hi) hi = x;
  }
  const mid = (lo + hi) / 2,
    half = Math.max((hi - lo) / 2, 1e-12);
  const cols: Float64Array[] = [];
  for (let p = 0; p <= drift; p++) cols.push(Float64Array.from(t, (x) => ((x - mid) / half) ** p / sigma));
  // decays from the fit start (not from the stimulus: the same span of shapes, and no column that is ~0 everywhere)
  for (const tau of artifactTauMs)
    cols.push(Float64Array.from(t, (x) => Math.exp(-Math.max(x - artifactFromMs, 0) / tau) / sigma));
  // mains hum: a sine and cosine per frequency (the average of sweeps with any phases is one sinusoid per frequency)
  for (const f of humHz) {
    const w = (2 * Math.PI * f) / 1000;
    cols.push(Float64Array.from(t, (x) => Math.sin(w * x) / sigma));
    cols.push(Float64Array.from(t, (x) => Math.cos(w * x) / sigma));
  }
  const Q: Float64Array[] = [];
  for (const c of cols) {
    const q = Float64Array.from(c);
    for (let pass = 0; pass < 2; pass++)
      for (const e of Q) {
        let d = 0;
        for (let i = 0; i < n; i++) d += e[i] * q[i];
        for (let i = 0; i < n; i++) q[i] -= d * e[i];
      }
    let s = 0;
    for (let i = 0; i < n; i++) s += q[i] * q[i];
    const norm = Math.sqrt(s);
    let c2 = 0;
    for (let i = 0; i < n; i++) c2 += c[i] * c[i];
    if (!(norm > 1e-10 * Math.sqrt(c2))) continue;
    for (let i = 0; i < n; i++) q[i] /= norm;
    Q.push(q);
  }
  return Q;
}

/** x <- x - Q Q' x on the slice [off, off + n) of a strided column (stride = ncol, column c). */
function projectColumn(M: Float64Array, ncol: number, c: number, off: number, n: number, Q: Float64Array[]): void {
  for (const e of Q) {
    let d = 0;
    for (let i = 0; i < n; i++) d += e[i] * M[(off + i) * ncol + c];
    if (d === 0) continue;
    for (let i = 0; i < n; i++) M[(off + i) * ncol + c] -= d * e[i];
  }
}

export function projectVector(x: Float64Array, off: number, n: number, Q: Float64Array[]): void {
  for (const e of Q) {
    let d = 0;
    for (let i = 0; i < n; i++) d += e[i] * x[off + i];
    for (let i = 0; i < n; i++) x[off + i] -= d * e[i];
  }
}

/** Weighted, nuisance-projected data vector b (rows of all blocks). */
export function dataVector(
  blocks: readonly Block[],
  bases: Float64Array[][],
  ys?: readonly Float64Array[],
): Float64Array {
  const n = blocks.reduce((s, b) => s + b.t.length, 0);
  const b = new Float64Array(n);
  let off = 0;
  blocks.forEach((bl, i) => {
    const y = ys ? ys[i] : bl.y;
    for (let r = 0; r < bl.t.length; r++) b[off + r] = y[r] / bl.sigma;
    projectVector(b, off, bl.t.length, bases[i]);
    off += bl.t.length;
  });
  return b;
}

/** Design matrix A (rows x K, row-major): weighted, nuisance-projected columns of the model for a given g. */
export function designMatrix(
  blocks: readonly Block[],
  bases: Float64Array[][],
  m: Model,
  sfp: Sfp,
  project = true,
): Float64Array {
  const K = m.v.length;
  const n = blocks.reduce((s, b) => s + b.t.length, 0);
  const A = new Float64Array(n * K);
  let off = 0;
  blocks.forEach((bl, i) => {
    for (let k = 0; k < K; k++) {
      for (const vk of subVelocities(m.v, k)) {
        const r = Math.pow(vk / m.vRef, m.q);
        const d = m.utilisationMs + bl.distanceMm / vk;
        const e = m.bipolarMm / vk;
        for (let row = 0; row < bl.t.length; row++) {
          const s = bl.t[row] - d;
          let val = sfpAt(sfp, s * r);
          if (m.bipolarMm > 0) val -= sfpAt(sfp, (s - e) * r);
          A[(off + row) * K + k] += val / bl.sigma / SUB;
        }
      }
      if (project) projectColumn(A, K, k, off, bl.t.length, bases[i]);
    }
    off += bl.t.length;
  });
  return A;
}

/** G = A'A (K x K) and c = A'b. */
export function gram(
  A: Float64Array,
  n: number,
  K: number,
  b: Float64Array,
): { G: Float64Array; c: Float64Array; bb: number } {
  const G = new Float64Array(K * K),
    c = new Float64Array(K);
  let bb = 0;
  for (let r = 0; r < n; r++) {
    const o = r * K,
      br = b[r];
    bb += br * br;
    for (let j = 0; j < K; j++) {
      const a = A[o + j];
      if (a === 0) continue;
      c[j] += a * br;
      for (let l = j; l < K; l++) G[j * K + l] += a * A[o + l];
    }
  }
  for (let j = 0; j < K; j++) for (let l = 0; l < j; l++) G[j * K + l] = G[l * K + j];
  return { G, c, bb };
}

export function atb(A: Float64Array, n: number, K: number, b: Float64Array): Float64Array {
  const c = new Float64Array(K);
  for (let r = 0; r < n; r++) {
    const br = b[r];
    if (br === 0) continue;
    const o = r * K;
    for (let j = 0; j < K; j++) c[j] += A[o + j] * br;
  }
  return c;
}

/** R = D2'D2 for second differences on a grid of K points. */
export function secondDifferencePenalty(K: number): Float64Array {
  const R = new Float64Array(K * K);
  for (let i = 0; i + 2 < K; i++) {
    const idx = [i, i + 1, i + 2],
      coef = [1, -2, 1];
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) R[idx[a] * K + idx[b]] += coef[a] * coef[b];
  }
  return R;
}

/** Cholesky solve of a small SPD system (row-major n x n) for several right-hand sides; null if not positive definite. */
export function cholSolve(M: Float64Array, n: number, B: Float64Array, nrhs: number): Float64Array | null {
  const L = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = M[i * n + j];
      for (let k = 0; k < j; k++) s -= L[i * n + k] * L[j * n + k];
      if (i === j) {
        if (!(s > 0)) return null;
        L[i * n + i] = Math.sqrt(s);
      } else L[i * n + j] = s / L[j * n + j];
    }
  }
  const X = Float64Array.from(B);
  for (let c = 0; c < nrhs; c++) {
    for (let i = 0; i < n; i++) {
      let s = X[i * nrhs + c];
      for (let k = 0; k < i; k++) s -= L[i * n + k] * X[k * nrhs + c];
      X[i * nrhs + c] = s / L[i * n + i];
    }
    for (let i = n - 1; i >= 0; i--) {
      let s = X[i * nrhs + c];
      for (let k = i + 1; k < n; k++) s -= L[k * n + i] * X[k * nrhs + c];
      X[i * nrhs + c] = s / L[i * n + i];
    }
  }
  return X;
}

export interface WSolution {
  u: Float64Array;
  lambda: number;
  gcv: number;
  df: number;
  rss: number;
  curve: { lambda: number; gcv: number; df: number; rss: number }[];
}

const trace = (G: Float64Array, K: number) => {
  let s = 0;
  for (let i = 0; i < K; i++) s += G[i * K + i];
  return s;
};

/**
 * Non-negative Tikhonov solution u = argmin ||A u - b||^2 + lambda ||D2 u||^2, u >= 0, for a
 * given lambda, and the effective degrees of freedom of the fit over the free (positive)
 * set: df = tr[(G_FF + lambda R_FF)^-1 G_FF], the usual approximation for a constrained
 * solution (the active constraints held fixed).
 */
export function solveU(
  G: Float64Array,
  c: Float64Array,
  bb: number,
  R: Float64Array,
  K: number,
  lambda: number,
  wantDf = true,
): { u: Float64Array; df: number; rss: number } {
  const M = new Float64Array(K * K);
  for (let i = 0; i < K * K; i++) M[i] = G[i] + lambda * R[i];
  const r = nnlsGram(M, c, K, { maxIter: 20 * K });
  const u = r.x;
  let q = 0;
  for (let i = 0; i < K; i++) {
    if (u[i] === 0) continue;
    let s = 0;
    for (let j = 0; j < K; j++) s += G[i * K + j] * u[j];
    q += u[i] * s - 2 * c[i] * u[i];
  }
  const rss = Math.max(0, bb + q);
  const F = r.positive;
  let df = wantDf ? 0 : NaN;
  if (wantDf && F.length) {
    const p = F.length;
    const MF = new Float64Array(p * p),
      GF = new Float64Array(p * p);
    for (let a = 0; a < p; a++)
      for (let b = 0; b < p; b++) {
        MF[a * p + b] = M[F[a] * K + F[b]];
        GF[a * p + b] = G[F[a] * K + F[b]];
      }
    const X = cholSolve(MF, p, GF, p);
    if (X) for (let a = 0; a < p; a++) df += X[a * p + a];
    else df = p;
  }
  return { u, df, rss };
}

/**
 * The regularisation weight by generalised cross-validation (Golub, Heath & Wahba 1979):
 * GCV(lambda) = n RSS / (n - df - nNuisance)^2, minimised over a log grid of lambda
 * relative to tr(G)/tr(R) (`grid`, default 10^-8 ... 10^2 in half decades).
 */
export function gcvSolve(
  G: Float64Array,
  c: Float64Array,
  bb: number,
  R: Float64Array,
  K: number,
  n: number,
  nNuisance: number,
  grid?: number[],
): WSolution {
  const scale = trace(G, K) / Math.max(trace(R, K), 1e-300);
  const rel = grid ?? Array.from({ length: 21 }, (_, i) => Math.pow(10, -8 + i / 2));
  let best: WSolution | null = null;
  const curve: WSolution['curve'] = [];
  for (const l of rel) {
    const lambda = l * scale;
    const s = solveU(G, c, bb, R, K, lambda);
    const dof = n - s.df - nNuisance;
    const gcv = dof > 0 ? (n * s.rss) / (dof * dof) : Infinity;
    curve.push({ lambda: l, gcv, df: s.df, rss: s.rss });
    if (!best || gcv < best.gcv) best = { u: s.u, lambda: l, gcv, df: s.df, rss: s.rss, curve };
  }
  return best!;
}

/**
 * The single-fibre potential given the amplitudes u: linear least squares for the node
 * values of g (with a second-difference penalty of relative weight `smoothing` and the
 * nuisance projected out), then scaled to peak |g| = 1 (the scale moves into u).
 */
export function sfpStep(
  blocks: readonly Block[],
  bases: Float64Array[][],
  m: Model,
  u: Float64Array,
  b: Float64Array,
  tau0: number,
  h: number,
  J: number,
  smoothing: number,
  gcv?: { n: number; fixedDf: number; bb: number },
): { sfp: Sfp; scale: number; df: number; smoothing: number } | null {
  const K = m.v.length;
  // G = (PB)'(PB) = B'B - sum over blocks and basis vectors e of (e'B)(e'B)', built from the
  // sparse rows of B (four nodes per velocity); c = (PB)'b = B'b because b is already projected.
  const G = new Float64Array(J * J),
    c = new Float64Array(J);
  const row = new Float64Array(J);
  const touched = new Int32Array(J);
  const mark = new Uint8Array(J);
  const kw = new Float64Array(4);
  const subs = Array.from({ length: K }, (_, k) => subVelocities(m.v, k));
  let off = 0;
  blocks.forEach((bl, i) => {
    const Z = bases[i].map(() => new Float64Array(J));
    for (let r = 0; r < bl.t.length; r++) {
      let nt = 0;
      const add = (s: number, val: number) => {
        const x = (s - tau0) / h,
          j = Math.floor(x);
        if (j < -2 || j > J) return;
        keysWeights(x - j, kw);
        for (let a = 0; a < 4; a++) {
          const i = j - 1 + a;
          if (i < 0 || i >= J) continue;
          if (!mark[i]) {
            mark[i] = 1;
            touched[nt++] = i;
          }
          row[i] += val * kw[a];
        }
      };
      for (let k = 0; k < K; k++) {
        if (u[k] === 0) continue;
        const w = u[k] / bl.sigma / SUB;
        for (const vk of subs[k]) {
          const rr = Math.pow(vk / m.vRef, m.q);
          const s = bl.t[r] - m.utilisationMs - bl.distanceMm / vk;
          add(s * rr, w);
          if (m.bipolarMm > 0) add((s - m.bipolarMm / vk) * rr, -w);
        }
      }
      const br = b[off + r];
      for (let a = 0; a < nt; a++) {
        const ja = touched[a],
          va = row[ja];
        c[ja] += va * br;
        for (let q = 0; q < nt; q++) G[ja * J + touched[q]] += va * row[touched[q]];
        for (let e = 0; e < Z.length; e++) Z[e][ja] += bases[i][e][r] * va;
      }
      for (let a = 0; a < nt; a++) {
        row[touched[a]] = 0;
        mark[touched[a]] = 0;
      }
    }
    for (const z of Z)
      for (let j = 0; j < J; j++) {
        if (z[j] === 0) continue;
        for (let l = 0; l < J; l++) G[j * J + l] -= z[j] * z[l];
      }
    off += bl.t.length;
  });
  const R = secondDifferencePenalty(J);
  const G0 = Float64Array.from(G);
  const scale = trace(G, J) / J;
  if (!(scale > 0)) return null;
  if (gcv) {
    // the potential's own smoothness weight by generalised cross-validation: RSS = b'b - 2 g'c + g'G g and the
    // effective number of node values tr[(G + s R)^-1 G], with the amplitudes' and the nuisance's parameters fixed
    let best = Infinity;
    for (let e = -6; e <= 2 + 1e-9; e += 0.5) {
      const sm = Math.pow(10, e);
      const M = new Float64Array(J * J);
      for (let i = 0; i < J * J; i++) M[i] = G0[i] + sm * scale * R[i];
      for (let i = 0; i < J; i++) M[i * J + i] += 1e-9 * scale;
      const gg = cholSolve(M, J, c, 1);
      const X = gg && cholSolve(M, J, G0, J);
      if (!gg || !X) continue;
      let rss = gcv.bb,
        df = 0;
      for (let j = 0; j < J; j++) {
        let s2 = 0;
        for (let l = 0; l < J; l++) s2 += G0[j * J + l] * gg[l];
        rss += gg[j] * s2 - 2 * gg[j] * c[j];
        df += X[j * J + j];
      }
      const dof = gcv.n - df - gcv.fixedDf;
      const score = dof > 0 ? (gcv.n * Math.max(rss, 0)) / (dof * dof) : Infinity;
      if (score < best) {
        best = score;
        smoothing = sm;
      }
    }
  }
  for (let i = 0; i < J * J; i++) G[i] += smoothing * scale * R[i];
  for (let i = 0; i < J; i++) G[i * J + i] += 1e-9 * scale;
  const g = cholSolve(G, J, c, 1);
  if (!g) return null;
  // effective number of parameters of the penalised node values: tr[(G + s R)^-1 G]
  const X = cholSolve(G, J, G0, J);
  let df = 0;
  if (X) for (let j = 0; j < J; j++) df += X[j * J + j];
  let peak = 0;
  for (const x of g) if (Math.abs(x) > Math.abs(peak)) peak = x;
  if (peak === 0) return null;
  const sc = Math.abs(peak);
  for (let j = 0; j < J; j++) g[j] /= sc;
  return { sfp: { tau0, h, g }, scale: sc, df, smoothing };
}

/** Linear interpolation of a sampled response at time x (0 before `startMs` and outside). */
function sampleAt(f: NonNullable<Block['full']>, x: number): number {
  if (x < f.startMs) return 0;
  const u = (x - f.t0Ms) / f.dtMs,
    j = Math.floor(u);
  if (j < 0 || j + 1 >= f.y.length) return 0;
  const a = u - j;
  return (1 - a) * f.y[j] + a * f.y[j + 1];
}

/**
 * The two-distance equation (Cummins, Dorfman & Perkel 1979): with the same single-fibre
 * waveform in every fibre, response_b * h_a = response_a * h_b, where h_x is the train of
 * delays x / v_k weighted by u_k, so that sum_k u_k [R_b(t - x_a / v_k) - R_a(t - x_b / v_k)] = 0
 * for every pair of distances; the single-fibre waveform and a common utilisation delay
 * cancel. Solved here in the time domain (equivalent, by Parseval's theorem, to the
 * frequency-domain form), non-negatively, with sum u = 1 as a heavily weighted row and a
 * second-difference penalty of weight `lambda` relative to the equation's scale.
 * Bipolar pairs generalise it: h_x becomes h_x - h_(x+e). Returns u normalised to sum 1.
 */
export function twoDistanceSolve(
  blocks: readonly Block[],
  m: Model,
  lambda: number,
): { u: Float64Array; residual: number } {
  const K = m.v.length;
  const subs = Array.from({ length: K }, (_, k) => subVelocities(m.v, k));
  const rowsList: Float64Array[] = [];
  for (let a = 0; a < blocks.length; a++) {
    for (let b = a + 1; b < blocks.length; b++) {
      const A = blocks[a],
        Bk = blocks[b];
      const fa = A.full!,
        fb = Bk.full!;
      for (let r = 0; r < Bk.t.length; r++) {
        const t = Bk.t[r];
        const row = new Float64Array(K);
        for (let k = 0; k < K; k++) {
          for (const vk of subs[k]) {
            let val = sampleAt(fb, t - A.distanceMm / vk) - sampleAt(fa, t - Bk.distanceMm / vk);
            if (m.bipolarMm > 0)
              val -=
                sampleAt(fb, t - (A.distanceMm + m.bipolarMm) / vk) -
                sampleAt(fa, t - (Bk.distanceMm + m.bipolarMm) / vk);
            row[k] += val / SUB;
          }
        }
        rowsList.push(row);
      }
    }
  }
  const n = rowsList.length;
  const A = new Float64Array(n * K);
  let mx = 0;
  rowsList.forEach((row, r) => {
    A.set(row, r * K);
    for (const x of row) if (Math.abs(x) > mx) mx = Math.abs(x);
  });
  if (mx > 0) for (let i = 0; i < A.length; i++) A[i] /= mx;
  const { G, c } = gram(A, n, K, new Float64Array(n));
  const scale = trace(G, K) / K;
  const R = secondDifferencePenalty(K);
  const big = 1e3 * Math.sqrt(Math.max(scale, 1e-300));
  for (let i = 0; i < K * K; i++) G[i] += lambda * scale * R[i] + big * big;
  for (let k = 0; k < K; k++) c[k] += big * big;
  const r = nnlsGram(G, c, K, { maxIter: 20 * K });
  const u = r.x;
  let s = 0;
  for (const x of u) s += x;
  if (s > 0) for (let k = 0; k < K; k++) u[k] /= s;
  let res = 0;
  for (let row = 0; row < n; row++) {
    let z = 0;
    for (let k = 0; k < K; k++) z += A[row * K + k] * u[k];
    res += z * z;
  }
  return { u, residual: Math.sqrt(res / Math.max(n, 1)) };
}

/** Masses on a log-spaced grid to a percentile (q in 0..1), interpolating linearly in log v between bin edges. */
export function percentile(v: Float64Array, mass: ArrayLike<number>, q: number, from = 0, to = v.length): number {
  let tot = 0;
  for (let k = from; k < to; k++) tot += mass[k];
  if (!(tot > 0)) return NaN;
  const edge = (k: number) => {
    if (k <= 0) return Math.log(v[0]) - 0.5 * Math.log(v[1] / v[0]);
    if (k >= v.length) return Math.log(v[v.length - 1]) + 0.5 * Math.log(v[v.length - 1] / v[v.length - 2]);
    return 0.5 * (Math.log(v[k - 1]) + Math.log(v[k]));
  };
  let acc = 0;
  for (let k = from; k < to; k++) {
    const next = acc + mass[k] / tot;
    if (next >= q && mass[k] > 0) {
      const f = (q - acc) / (mass[k] / tot);
      return Math.exp(edge(k) + f * (edge(k + 1) - edge(k)));
    }
    acc = next;
  }
  return Math.exp(edge(to));
}

/**
 * Shape parameters of the two-phase single-fibre potential (times in ms from the arrival x / v):
 * g(s) = f(s - shift; rise) - ratio f(s - shift; after), f(s; tau) = (s / tau)^n exp(n (1 - s / tau)) for s > 0,
 * scaled to peak |g| = 1 and multiplied by `sign`. f rises from 0 to 1 at s = tau and decays; the second phase is
 * the slower, opposite after-potential of a membrane action potential (undershoot) in a monophasic recording.
 */
export interface SfpShape {
  shift: number;
  rise: number;
  after: number;
  ratio: number;
  n: number;
  sign: number;
}

const phase = (s: number, tau: number, n: number) => (s > 0 ? Math.pow(s / tau, n) * Math.exp(n * (1 - s / tau)) : 0);

/** The two-phase potential sampled on nodes (spacing at most `maxStep` and rise / 8) over its support. */
export function shapeSfp(p: SfpShape, maxStep: number): Sfp {
  const h = Math.min(maxStep, p.rise / 8);
  const len = Math.max(p.after, p.rise) * (6 + 24 / p.n);
  const J = Math.min(20000, Math.ceil(len / h) + 1);
  const g = new Float64Array(J);
  let pk = 0;
  for (let j = 0; j < J; j++) {
    const s = j * h;
    g[j] = phase(s, p.rise, p.n) - p.ratio * phase(s, p.after, p.n);
    if (Math.abs(g[j]) > pk) pk = Math.abs(g[j]);
  }
  for (let j = 0; j < J; j++) g[j] = (p.sign * g[j]) / (pk || 1);
  return { tau0: p.shift, h, g };
}

/**
 * Nelder-Mead simplex minimisation (Nelder & Mead 1965; Lagarias et al. 1998 coefficients 1, 2, 1/2, 1/2) of f
 * from x0 with initial steps `step`; stops after `maxEval` evaluations or when the simplex's values agree to `ftol`
 * (relative).
 */
export function nelderMead(
  f: (x: number[]) => number,
  x0: number[],
  step: number[],
  maxEval = 400,
  ftol = 1e-6,
): { x: number[]; f: number; evaluations: number } {
  const n = x0.length;
  let evals = 0;
  const F = (x: number[]) => {
    evals++;
    const v = f(x);
    return Number.isFinite(v) ? v : Infinity;
  };
  let pts = [x0.slice(), ...x0.map((_, i) => x0.map((v, j) => (i === j ? v + step[i] : v)))];
  let vals = pts.map(F);
  while (evals < maxEval) {
    const order = vals.map((v, i) => i).sort((a, b) => vals[a] - vals[b]);
    pts = order.map((i) => pts[i]);
    vals = order.map((i) => vals[i]);
    if (Math.abs(vals[n] - vals[0]) <= ftol * (Math.abs(vals[0]) + 1e-300)) break;
    const c = Array.from({ length: n }, (_, j) => pts.slice(0, n).reduce((s, p) => s + p[j], 0) / n);
    const at = (t: number) => c.map((v, j) => v + t * (pts[n][j] - v));
    const xr = at(-1),
      fr = F(xr);
    if (fr < vals[0]) {
      const xe = at(-2),
        fe = F(xe);
      [pts[n], vals[n]] = fe < fr ? [xe, fe] : [xr, fr];
    } else if (fr < vals[n - 1]) [pts[n], vals[n]] = [xr, fr];
    else {
      const xc = fr < vals[n] ? at(-0.5) : at(0.5),
        fc = F(xc);
      if (fc < Math.min(fr, vals[n])) [pts[n], vals[n]] = [xc, fc];
      else
        for (let i = 1; i <= n; i++) {
          pts[i] = pts[i].map((v, j) => pts[0][j] + 0.5 * (v - pts[0][j]));
          vals[i] = F(pts[i]);
        }
    }
  }
  const b = vals.indexOf(Math.min(...vals));
  return { x: pts[b], f: vals[b], evaluations: evals };
}

/** The problem on the grid bins [lo, hi) only (the others held at zero): sub-blocks of G, c and R. */
export function subProblem(
  G: Float64Array,
  c: Float64Array,
  R: Float64Array,
  K: number,
  lo: number,
  hi: number,
): { G: Float64Array; c: Float64Array; R: Float64Array; m: number } {
  const m = hi - lo;
  const Gs = new Float64Array(m * m),
    Rs = new Float64Array(m * m);
  for (let i = 0; i < m; i++)
    for (let j = 0; j < m; j++) {
      Gs[i * m + j] = G[(lo + i) * K + lo + j];
      Rs[i * m + j] = R[(lo + i) * K + lo + j];
    }
  return { G: Gs, c: c.slice(lo, hi), R: Rs, m };
}

/**
 * The support of the distribution, [lo, hi) in grid bins, by the same generalised cross-validation that sets the
 * smoothness weight: bins are dropped from the slow end, then from the fast end, while GCV falls (at the given
 * absolute weight; the penalty keeps its terms that reach outside the support, so the distribution falls to zero
 * at its edges). Bins that only fit noise cost degrees of freedom and are removed; bins the data need are kept.
 */
export function supportByGcv(
  G: Float64Array,
  c: Float64Array,
  bb: number,
  R: Float64Array,
  K: number,
  lambdaAbs: number,
  n: number,
  nNuisance: number,
  minBins = 3,
): { lo: number; hi: number; gcv: number } {
  const score = (lo: number, hi: number) => {
    const sp = subProblem(G, c, R, K, lo, hi);
    const s = solveU(sp.G, sp.c, bb, sp.R, sp.m, lambdaAbs);
    const dof = n - s.df - nNuisance;
    return dof > 0 ? (n * s.rss) / (dof * dof) : Infinity;
  };
  let lo = 0,
    hi = K,
    best = score(0, K);
  for (let a = 1; a <= K - minBins; a++) {
    const g = score(a, K);
    if (g < best) {
      best = g;
      lo = a;
    }
  }
  for (let b = K - 1; b >= lo + minBins; b--) {
    const g = score(lo, b);
    if (g < best) {
      best = g;
      hi = b;
    }
  }
  return { lo, hi, gcv: best };
}
