/**
 * Refractoriness of single fibres, computed by direct simulation of a Hodgkin-Huxley cable.
 *
 * The fibre: the 1952 squid-axon membrane (hh.ts) on a uniform cable (diameter 20 um, axoplasm
 * 35.4 ohm cm, 16 mm long, grid 0.25 mm, sealed ends), stimulated over its first 0.75 mm by
 * rectangular current pulses of 0.2 ms (kinetic time, below) at `drive` times the rested fibre's
 * threshold. A pulse is conducted when its spike crosses -20 mV at the node at 80% of the length.
 *
 * Time scale. A fibre of time scale s has every HH rate constant multiplied by s AND its membrane
 * capacitance divided by s: its equations are the 6.3 C squid fibre's with time t replaced by s t,
 * so every interval (refractory period, recovery, spike duration) is the squid fibre's divided by s,
 * exactly, while distances are unchanged. The model gives each fibre class a time scale at 37 C and
 * a Q10 (default 3, the 1952 factor); `timeScaledCable` simulates a fibre at any s directly (the
 * tests check the scaling law on it), and the tables below are made once at s = 1 (kinetic time).
 *
 * Per pulse the simulation reports: conducted or not; the conduction-time ratio (time the spike takes
 * between the nodes at 40% and 80% of the length, over the rested fibre's: > 1 is refractory slowing);
 * and the height ratio (peak at the 80% node above the resting potential, over the rested spike's).
 *
 * References: A. L. Hodgkin, A. F. Huxley, J. Physiol. 117 (1952) 500-544 (membrane, phi factor and
 * the refractoriness of the model); S. Rush, H. Larsen, IEEE Trans. Biomed. Eng. 25 (1978) 389-392
 * (exponential gate update); the backward-Euler cable step and Thomas solver of cable.ts.
 */
import { OptionError } from '../errors';
import { HH, alphaH, alphaM, alphaN, betaH, betaM, betaN, hhRest } from './hh';
import { thomas } from './cable';

/** Geometry and numerics of the refractoriness fibre (kinetic time, s = 1). */
export const REFRACTORY_FIBRE = {
  diameterUm: 20,
  resistivity: 35.4,
  lengthMm: 16,
  dxMm: 0.25,
  stimLengthMm: 0.75,
  pulseMs: 0.2,
  dtMs: 0.01,
  /** test pulses at this multiple of the rested threshold (default of the nerve model) */
  drive: 4,
} as const;

export interface PulseOutcome {
  /** stimulus time, ms (as given) */
  timeMs: number;
  /** the spike reached the node at 80% of the length */
  conducted: boolean;
  /** conduction time 40%-80% over the rested fibre's (null: not conducted) */
  conductionRatio: number | null;
  /** spike peak above rest at the 80% node over the rested spike's (null: not conducted) */
  heightRatio: number | null;
}

export interface TimeScaledOptions {
  /** time scale s (rates x s, capacitance / s); default 1 (the squid fibre at 6.3 C) */
  timeScale?: number;
  /** pulse amplitude as a multiple of the rested threshold (default 4) */
  drive?: number;
  /** integration step in kinetic time (ms at s = 1), default 0.01; the real step is this / s */
  kineticDtMs?: number;
}

interface RawRun {
  mid: number[];
  far: number[];
  farPeak: number[];
}

/** One run of the cable with pulses at `times` (real ms) of amplitude `amp` (uA/cm2). */
function runCable(times: readonly number[], amp: number, s: number, kdt: number): RawRun {
  const F = REFRACTORY_FIBRE;
  const d = F.diameterUm * 1e-4,
    dx = F.dxMm / 10,
    L = F.lengthMm / 10;
  const N = Math.round(L / dx) + 1;
  const D = (1000 * d) / (4 * F.resistivity) / (dx * dx);
  const Cm = HH.Cm / s;
  const dt = kdt / s;
  const width = F.pulseMs / s;
  const stimN = Math.max(1, Math.round(F.stimLengthMm / F.dxMm));
  const rest = hhRest();
  const V = new Float64Array(N).fill(rest.V);
  const m = new Float64Array(N).fill(rest.m),
    h = new Float64Array(N).fill(rest.h),
    n = new Float64Array(N).fill(rest.n);
  const a = new Float64Array(N),
    b = new Float64Array(N),
    c = new Float64Array(N),
    rhs = new Float64Array(N);
  const cp = new Float64Array(N);
  const iMid = Math.round(0.4 * (N - 1)),
    iFar = Math.round(0.8 * (N - 1));
  // rested transit to the far node is about 6.3 ms at s = 1; allow slowing and a margin
  const tEnd = times[times.length - 1] + 10 / s;
  const steps = Math.round(tEnd / dt);
  const mid: number[] = [],
    far: number[] = [],
    farPeak: number[] = [];
  let peak = -Infinity,
    inSpike = false;
  for (let k = 0; k < steps; k++) {
    const t = (k + 1) * dt;
    let on = false;
    for (const p of times)
      if (t > p && t <= p + width) {
        on = true;
        break;
      }
    for (let i = 0; i < N; i++) {
      const v = V[i];
      const am = s * alphaM(v),
        bm = s * betaM(v),
        ah = s * alphaH(v),
        bh = s * betaH(v),
        an = s * alphaN(v),
        bn = s * betaN(v);
      let tau = 1 / (am + bm);
      m[i] = am * tau + (m[i] - am * tau) * Math.exp(-dt / tau);
      tau = 1 / (ah + bh);
      h[i] = ah * tau + (h[i] - ah * tau) * Math.exp(-dt / tau);
      tau = 1 / (an + bn);
      n[i] = an * tau + (n[i] - an * tau) * Math.exp(-dt / tau);
      const gNa = HH.gNa * m[i] ** 3 * h[i],
        gK = HH.gK * n[i] ** 4,
        gL = HH.gL;
      const ll = i === N - 1 ? 2 * D : i > 0 ? D : 0,
        rr = i === 0 ? 2 * D : i < N - 1 ? D : 0;
      a[i] = -ll;
      c[i] = -rr;
      b[i] = Cm / dt + ll + rr + gNa + gK + gL;
      rhs[i] = (Cm / dt) * v + gNa * HH.ENa + gK * HH.EK + gL * HH.EL + (on && i < stimN ? amp : 0);
    }
    thomas(a, b, c, rhs, cp);
    const cross = (i: number, out: number[]) => {
      if (V[i] < -20 && rhs[i] >= -20) out.push(t - dt + (dt * (-20 - V[i])) / (rhs[i] - V[i]));
    };
    cross(iMid, mid);
    const before = far.length;
    cross(iFar, far);
    if (far.length > before) {
      if (inSpike) farPeak.push(peak);
      inSpike = true;
      peak = rhs[iFar];
    }
    if (inSpike && rhs[iFar] > peak) peak = rhs[iFar];
    for (let i = 0; i < N; i++) V[i] = rhs[i];
  }
  if (inSpike) farPeak.push(peak);
  return { mid, far, farPeak };
}

const thresholdCache = new Map<string, number>();

/** Threshold (uA/cm2) of the rested fibre for one pulse, by bisection (the same at every time scale). */
export function refractoryFibreThreshold(kineticDtMs: number = REFRACTORY_FIBRE.dtMs): number {
  const key = String(kineticDtMs);
  const hit = thresholdCache.get(key);
  if (hit !== undefined) return hit;
  let lo = 0,
    hi = 4000;
  for (let i = 0; i < 22; i++) {
    const mid = (lo + hi) / 2;
    if (runCable([0.2], mid, 1, kineticDtMs).far.length > 0) hi = mid;
    else lo = mid;
  }
  thresholdCache.set(key, hi);
  return hi;
}

const restedCache = new Map<string, { transit: number; height: number; latency: number }>();
function rested(drive: number, kdt: number): { transit: number; height: number; latency: number } {
  const key = `${drive}|${kdt}`;
  const hit = restedCache.get(key);
  if (hit) return hit;
  const r = runCable([0.2], drive * refractoryFibreThreshold(kdt), 1, kdt);
  if (r.far.length !== 1 || r.mid.length !== 1)
    throw new OptionError(`the refractoriness fibre did not conduct one spike at drive ${drive}`);
  const out = { transit: r.far[0] - r.mid[0], height: r.farPeak[0] - hhRest().V, latency: r.far[0] - 0.2 };
  restedCache.set(key, out);
  return out;
}

/**
 * Direct simulation of one fibre of time scale s given pulses at `pulseTimesMs` (real ms, ascending, the
 * first >= 0): per pulse, conducted or not, conduction-time ratio and height ratio (module comment).
 * @example timeScaledCable([0, 10]).map((p) => p.conducted) // [true, true] (squid fibre, 10 ms apart)
 */
export function timeScaledCable(pulseTimesMs: readonly number[], o: TimeScaledOptions = {}): PulseOutcome[] {
  const s = o.timeScale ?? 1,
    drive = o.drive ?? REFRACTORY_FIBRE.drive,
    kdt = o.kineticDtMs ?? REFRACTORY_FIBRE.dtMs;
  if (!(s > 0) || !Number.isFinite(s)) throw new OptionError(`invalid timeScale: ${s}; must be > 0`);
  if (!(drive >= 1.05)) throw new OptionError(`invalid drive: ${drive}; must be >= 1.05 (times the rested threshold)`);
  if (!pulseTimesMs.length || pulseTimesMs.some((t, i) => !(t >= 0) || (i > 0 && !(t > pulseTimesMs[i - 1])))) {
    throw new OptionError('invalid pulse times: need one or more ascending times >= 0 ms');
  }
  // shift so the first pulse is at 0.2 kinetic ms, as for the threshold
  const shift = 0.2 / s - pulseTimesMs[0];
  const times = pulseTimesMs.map((t) => t + shift);
  const r = runCable(times, drive * refractoryFibreThreshold(kdt), s, kdt);
  const ref = rested(drive, kdt);
  // each spike at the far node belongs to the latest pulse at least 0.97 rested latencies before it
  // (refractory spikes are slower, and the supernormal ones at most a few % faster)
  const owner = new Map<number, number>();
  r.far.forEach((x, j) => {
    let k = -1;
    for (let q = 0; q < times.length; q++) if (times[q] + (0.97 * ref.latency) / s <= x) k = q;
    if (k >= 0 && !owner.has(k)) owner.set(k, j);
  });
  const out: PulseOutcome[] = times.map((_, k) => {
    const j = owner.get(k);
    if (j === undefined) return { timeMs: pulseTimesMs[k], conducted: false, conductionRatio: null, heightRatio: null };
    const x = r.far[j];
    let xm = NaN;
    for (const y of r.mid) if (y < x && y > times[k]) xm = y;
    return {
      timeMs: pulseTimesMs[k],
      conducted: true,
      conductionRatio: Number.isNaN(xm) ? null : ((x - xm) * s) / ref.transit,
      heightRatio: (r.farPeak[j] - hhRest().V) / ref.height,
    };
  });
  return out;
}

/**
 * Absolute refractory period of a fibre of time scale s (ms): the shortest interval at which the second of two
 * pulses is conducted, by bisection on the interval to `tolMs` (real ms) from direct simulations.
 */
export function absoluteRefractoryMs(o: TimeScaledOptions & { tolMs?: number } = {}): number {
  const s = o.timeScale ?? 1;
  const tol = o.tolMs ?? 0.002 / s;
  let lo = 3 / s,
    hi = 15 / s;
  const ok = (isi: number) => timeScaledCable([0, isi], o)[1].conducted;
  if (ok(lo))
    throw new OptionError(`the fibre conducts a second pulse ${lo} ms after the first; no refractory period found`);
  if (!ok(hi)) throw new OptionError(`the fibre does not conduct a second pulse ${hi} ms after the first`);
  while (hi - lo > tol) {
    const mid = (lo + hi) / 2;
    if (ok(mid)) hi = mid;
    else lo = mid;
  }
  return hi;
}

export interface RecoveryTable {
  drive: number;
  /** absolute refractory period at s = 1, ms */
  arpMs: number;
  /** intervals at s = 1 (ms) above the refractory period, ascending, with outcomes of the second pulse */
  intervalMs: number[];
  conductionRatio: number[];
  heightRatio: number[];
}

/** Multiples of the refractory period where the recovery table is simulated (denser near it). */
export const RECOVERY_GRID = [
  1.0005, 1.01, 1.03, 1.06, 1.1, 1.15, 1.2, 1.3, 1.4, 1.55, 1.7, 1.85, 2, 2.25, 2.5, 2.8, 3.2, 3.7, 4.3, 5,
];

const tableCache = new Map<string, RecoveryTable>();

/**
 * The recovery of the second of two pulses in kinetic time (s = 1): the refractory period by bisection
 * (to 0.002 ms) and the outcomes at RECOVERY_GRID multiples of it, all by direct simulation. Cached per drive.
 */
export function recoveryTable(drive: number = REFRACTORY_FIBRE.drive): RecoveryTable {
  const key = String(drive);
  const hit = tableCache.get(key);
  if (hit) return hit;
  const arp = absoluteRefractoryMs({ drive, tolMs: 0.002 });
  const intervalMs: number[] = [],
    conductionRatio: number[] = [],
    heightRatio: number[] = [];
  for (const g of RECOVERY_GRID) {
    const isi = arp * g;
    const r = timeScaledCable([0, isi], { drive })[1];
    if (!r.conducted) continue; // a non-monotone edge: left out of the table
    intervalMs.push(isi);
    conductionRatio.push(r.conductionRatio!);
    heightRatio.push(r.heightRatio!);
  }
  const t: RecoveryTable = { drive, arpMs: arp, intervalMs, conductionRatio, heightRatio };
  tableCache.set(key, t);
  return t;
}

/**
 * The second pulse's outcome at interval `intervalMs` for a fibre of time scale s, from the table (linear
 * interpolation in the interval; past the table's end the fibre is treated as recovered: ratios 1).
 */
export function secondPulse(
  table: RecoveryTable,
  intervalMs: number,
  timeScale: number,
): { conducted: boolean; conductionRatio: number; heightRatio: number } {
  const k = intervalMs * timeScale;
  if (!(k >= table.arpMs)) return { conducted: false, conductionRatio: NaN, heightRatio: 0 };
  const x = table.intervalMs;
  if (k <= x[0])
    return { conducted: true, conductionRatio: table.conductionRatio[0], heightRatio: table.heightRatio[0] };
  if (k >= x[x.length - 1]) {
    // relax the last simulated values towards 1 over one further table span (no jump at the end)
    const span = x[x.length - 1] - x[0];
    const u = Math.min(1, (k - x[x.length - 1]) / span);
    const lastC = table.conductionRatio[x.length - 1],
      lastH = table.heightRatio[x.length - 1];
    return { conducted: true, conductionRatio: lastC + (1 - lastC) * u, heightRatio: lastH + (1 - lastH) * u };
  }
  let i = 1;
  while (x[i] < k) i++;
  const u = (k - x[i - 1]) / (x[i] - x[i - 1]);
  return {
    conducted: true,
    conductionRatio: table.conductionRatio[i - 1] + u * (table.conductionRatio[i] - table.conductionRatio[i - 1]),
    heightRatio: table.heightRatio[i - 1] + u * (table.heightRatio[i] - table.heightRatio[i - 1]),
  };
}
