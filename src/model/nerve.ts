/**
 * A nerve as populations of fibers, and the compound action potential (CAP) it
 * gives at a recording electrode.
 *
 * Each fiber has a diameter (normal distribution per class, truncated), a
 * conduction velocity from its diameter at 37 C (myelinated: Hursh's factor, about
 * 6 m/s per um outer diameter, Hursh 1939; unmyelinated: velocity proportional to the
 * square root of diameter, from cable theory), scaled with temperature by Q10, and an
 * electrical threshold falling with diameter (larger fibers have lower thresholds:
 * common practice, no source). A recruited, unblocked fiber adds a single-fiber
 * waveform at latency utilisation + distance / velocity; its amplitude grows with
 * velocity as v^2 (single-unit amplitude scales about as v^1.5 to v^2, J Neurol
 * Neurosurg Psychiatry 1981 44:476). The CAP is the sum (the model of Cummins, Perkel
 * & Dorfman 1979). A blocker removes a fraction C^h / (C^h + IC50^h) of each class
 * (Hill law with class-specific IC50).
 *
 * Single-fiber waveform, monophasic: w(u) = (u / 2)^2 exp(2 - u) for u = (t - latency)/tau >= 0,
 * which starts at the fiber's arrival, peaks at 2 tau with height 1. Biphasic: the
 * same minus a copy delayed by electrodeSeparation / velocity.
 */
import { sharedSamples } from '../parallel/pool';
import { Rng } from './random';
import { SweepSet, type Conditions } from '../sweeps/SweepSet';
import { OptionError } from '../errors';
import { recoveryTable, secondPulse, timeScaledCable, REFRACTORY_FIBRE, type PulseOutcome } from './refractory';

export interface FiberPopulation {
  name: string;
  /** number of fibers simulated */
  count: number;
  myelinated: boolean;
  /** diameter distribution, um: mean and SD, truncated to [min, max] */
  diameterUm: { mean: number; sd: number; min: number; max: number };
  /** velocity per um (myelinated, m/s per um) or per sqrt(um) (unmyelinated) at 37 C */
  velocityFactor: number;
  /** amplitude of one fiber of velocity 1 m/s, in uV (scaled by v^2) */
  unitAmplitudeUv: number;
  /** single-fiber waveform time constant at 37 C, ms */
  tauMs: number;
  /** threshold (mA) of a fiber of the mean diameter at the reference pulse width; scales as mean/d */
  thresholdMa: number;
  /**
   * strength-duration chronaxie, ms (default 0.15 A, 0.3 A-delta, 1.5 C: invented
   * demo values of the right order, from memory): a fiber's threshold at pulse
   * width w is its threshold x (1 + chronaxie / w) / (1 + chronaxie / referencePulseWidthMs)
   * (Weiss's law)
   */
  chronaxieMs?: number;
  /**
   * refractoriness (refractory.ts): time scale of the class's Hodgkin-Huxley fibre at 37 C (default 11 for
   * myelinated classes of mean diameter >= 6 um, 7.5 for thinner myelinated, 3.3 unmyelinated: invented demo
   * values giving refractory periods of about 0.6, 0.9 and 2 ms at 37 C), its Q10 (default 3, the 1952 factor),
   * and the reference diameter (default mean + 0.5 SD): a fibre thinner than it has its time scale divided by
   * reference / diameter (thinner fibres recover later; common practice, no source)
   */
  refractory?: { timeScale37?: number; q10?: number; referenceDiameterUm?: number };
  /** blocker IC50 for this class (concentration units of the study) */
  ic50: number;
  /** blocker Hill slope */
  hill: number;
}

export interface NerveModel {
  populations: FiberPopulation[];
  /** Q10 of conduction velocity (default 1.4) */
  q10Velocity: number;
  /** Q10 of the single-fiber waveform rate (tau scales by Q10^-(T-37)/10; default 2) */
  q10Duration: number;
  /** utilisation time, ms */
  utilisationMs: number;
  /** pulse width (ms) at which the drawn thresholds hold (default 0.1) */
  referencePulseWidthMs?: number;
  /** pulses after the first drive a fibre at this multiple of its rested threshold (refractory.ts; default 4) */
  testDrive?: number;
}

/** A rodent sciatic-like nerve: A-alpha/beta, A-delta and C populations. */
export function rodentSciatic(over: Partial<NerveModel> = {}): NerveModel {
  return {
    q10Velocity: 1.4,
    q10Duration: 2,
    utilisationMs: 0.05,
    populations: [
      {
        name: 'A-alpha/beta',
        count: 400,
        myelinated: true,
        diameterUm: { mean: 13, sd: 1.4, min: 10.2, max: 19 },
        velocityFactor: 6,
        unitAmplitudeUv: 0.0008,
        tauMs: 0.06,
        thresholdMa: 0.08,
        ic50: 60,
        hill: 1.2,
      },
      {
        name: 'A-delta',
        count: 600,
        myelinated: true,
        diameterUm: { mean: 3.2, sd: 0.6, min: 1.8, max: 4.9 },
        velocityFactor: 6,
        unitAmplitudeUv: 0.004,
        tauMs: 0.12,
        thresholdMa: 0.5,
        ic50: 25,
        hill: 1.2,
      },
      {
        name: 'C',
        count: 2000,
        myelinated: false,
        diameterUm: { mean: 0.8, sd: 0.2, min: 0.3, max: 1.5 },
        velocityFactor: 1.3,
        unitAmplitudeUv: 0.25,
        tauMs: 0.5,
        thresholdMa: 2.5,
        ic50: 8,
        hill: 1.0,
      },
    ],
    ...over,
  };
}

export interface Fiber {
  pop: number;
  diameterUm: number;
  v37: number;
  threshold: number;
  block: number;
}

/** Draw the fibers of one nerve (seeded). `block` is a uniform number used to decide conduction block. */
export function drawFibers(model: NerveModel, seed: number): Fiber[] {
  const rng = new Rng(seed);
  const out: Fiber[] = [];
  model.populations.forEach((p, pi) => {
    for (let k = 0; k < p.count; k++) {
      let d: number;
      do d = p.diameterUm.mean + p.diameterUm.sd * rng.normal();
      while (d < p.diameterUm.min || d > p.diameterUm.max);
      const v37 = p.myelinated ? p.velocityFactor * d : p.velocityFactor * Math.sqrt(d);
      const threshold = p.thresholdMa * (p.diameterUm.mean / d) * Math.exp(0.1 * rng.normal());
      out.push({ pop: pi, diameterUm: d, v37, threshold, block: rng.uniform() });
    }
  });
  return out;
}

export interface RecordingConditions {
  /** stimulus intensity, mA */
  intensity: number;
  /** stimulus pulse width, ms (default: the model's referencePulseWidthMs, where thresholds are as drawn) */
  pulseWidthMs?: number;
  /** conduction distance, mm */
  distanceMm: number;
  temperatureC: number;
  /** blocker concentration (0 = none) */
  concentration: number;
  /** 'monophasic' (default) or 'biphasic' with electrodeSeparationMm (default 3) */
  recording?: 'monophasic' | 'biphasic';
  electrodeSeparationMm?: number;
  /** per-sweep latency jitter SD, ms */
  jitterMs?: number;
  /**
   * stimulus times within the sweep, ms, ascending, first 0 (default: one pulse at 0). Two times are a
   * conditioning-test pair, more a train; each fibre's response to each pulse comes from refractory.ts.
   */
  pulsesMs?: number[];
}

export interface SweepGrid {
  fs: number;
  t0Ms: number;
  nSamples: number;
}

const unitWave = (u: number) => (u <= 0 ? 0 : 0.25 * u * u * Math.exp(2 - u));

export const defaultReferencePulseWidthMs = 0.1;
const defaultChronaxieMs = (p: FiberPopulation) =>
  p.chronaxieMs ?? (!p.myelinated ? 1.5 : p.diameterUm.mean >= 6 ? 0.15 : 0.3);

/** Threshold multiplier at pulse width w relative to the reference width (Weiss's law). */
export function weissFactor(p: FiberPopulation, w: number, ref: number): number {
  if (!(w > 0)) throw new OptionError(`invalid pulseWidthMs: ${w}; must be > 0 ms`);
  const c = defaultChronaxieMs(p);
  return (1 + c / w) / (1 + c / ref);
}

/** The chronaxie (ms) a population is simulated with. */
export function populationChronaxieMs(p: FiberPopulation): number {
  return defaultChronaxieMs(p);
}

/** Velocity of a fiber at temperature T. */
export function fiberVelocity(model: NerveModel, f: Fiber, temperatureC: number): number {
  return f.v37 * Math.pow(model.q10Velocity, (temperatureC - 37) / 10);
}

/** Whether a fiber conducts through the blocker at concentration c (Hill law over the class). */
export function conducts(model: NerveModel, f: Fiber, c: number): boolean {
  if (!(c > 0)) return true;
  const p = model.populations[f.pop];
  const blocked = Math.pow(c, p.hill) / (Math.pow(c, p.hill) + Math.pow(p.ic50, p.hill));
  return f.block >= blocked;
}

/** What every fibre of one synthesized sweep shares (the jitter draw is the sweep's first use of rng). */
function capSetup(model: NerveModel, rc: RecordingConditions, grid: SweepGrid, rng?: Rng) {
  const dtMs = 1000 / grid.fs;
  const jitter = rc.jitterMs && rng ? rc.jitterMs * rng.normal() : 0;
  const tauScale = Math.pow(model.q10Duration, -(rc.temperatureC - 37) / 10);
  const biphasic = rc.recording === 'biphasic';
  const sep = rc.electrodeSeparationMm ?? 3;
  const pw = rc.pulseWidthMs;
  const sd = model.populations.map((p) =>
    pw === undefined ? 1 : weissFactor(p, pw, model.referencePulseWidthMs ?? defaultReferencePulseWidthMs),
  );
  return { dtMs, jitter, tauScale, biphasic, sep, sd };
}

/** The noiseless CAP (uV) of one sweep into out (length grid.nSamples); per-class parts when `parts` is given. */
export function synthesizeCap(
  model: NerveModel,
  fibers: Fiber[],
  rc: RecordingConditions,
  grid: SweepGrid,
  out: Float64Array,
  rng?: Rng,
  parts?: Float64Array[],
): Float64Array {
  if (rc.pulsesMs) return synthesizePulses(model, fibers, rc, grid, out, rng, parts);
  out.fill(0);
  const { dtMs, jitter, tauScale, biphasic, sep, sd } = capSetup(model, rc, grid, rng);
  for (const f of fibers) {
    if (rc.intensity < f.threshold * sd[f.pop]) continue;
    if (!conducts(model, f, rc.concentration)) continue;
    const p = model.populations[f.pop];
    const v = fiberVelocity(model, f, rc.temperatureC);
    const lat = model.utilisationMs + rc.distanceMm / v + jitter;
    const tau = p.tauMs * tauScale;
    const amp = p.unitAmplitudeUv * v * v * (p.myelinated ? 1 : 1);
    const delay = biphasic ? sep / v : 0;
    const i0 = Math.max(0, Math.floor((lat - grid.t0Ms) / dtMs));
    const i1 = Math.min(grid.nSamples - 1, Math.ceil((lat + delay + 14 * tau - grid.t0Ms) / dtMs));
    const part = parts?.[f.pop];
    for (let i = i0; i <= i1; i++) {
      const t = grid.t0Ms + i * dtMs;
      let w = unitWave((t - lat) / tau);
      if (biphasic) w -= unitWave((t - lat - delay) / tau);
      out[i] += amp * w;
      if (part) part[i] += amp * w;
    }
  }
  return out;
}

export interface Nuisance {
  /** white noise SD, uV */
  noiseUv?: number;
  /** mains hum amplitude (uV), frequency (Hz) and harmonic amplitudes relative to the fundamental */
  humUv?: number;
  humHz?: number;
  humHarmonics?: number[];
  /** artifact peak (uV) at saturation, half-saturation intensity (mA), tail time constant (ms), pulse width (ms) */
  artifactUv?: number;
  artifactHalfMa?: number;
  artifactTauMs?: number;
  pulseWidthMs?: number;
  /** slow drift: linear slope, uV per ms (random sign per sweep, SD) */
  driftUvPerMs?: number;
}

/** Add rig nuisances to a sweep (uV) in place. */
export function addNuisance(
  x: Float64Array,
  grid: SweepGrid,
  intensity: number,
  nz: Nuisance,
  rng: Rng,
  stimulusTimesMs?: readonly number[],
): void {
  const dtMs = 1000 / grid.fs;
  const humPhase = 2 * Math.PI * rng.uniform();
  const drift = (nz.driftUvPerMs ?? 0) * rng.normal();
  const offset = 20 * rng.normal();
  const sat = (nz.artifactUv ?? 0) * Math.tanh(intensity / (nz.artifactHalfMa ?? 1));
  const tau = nz.artifactTauMs ?? 0.1;
  const pw = nz.pulseWidthMs ?? 0.05;
  const harm = nz.humHarmonics ?? [0.3, 0.15];
  for (let i = 0; i < x.length; i++) {
    const t = grid.t0Ms + i * dtMs;
    let v = x[i] + offset + drift * t + (nz.noiseUv ?? 0) * rng.normal();
    if (nz.humUv) {
      const w = (2 * Math.PI * (nz.humHz ?? 50) * t) / 1000;
      v += nz.humUv * Math.sin(w + humPhase);
      harm.forEach((a, k) => (v += nz.humUv! * a * Math.sin((k + 2) * (w + humPhase))));
    }
    if (stimulusTimesMs) {
      for (const t0 of stimulusTimesMs)
        if (sat && t >= t0) v += t - t0 < pw ? sat : sat * 0.5 * Math.exp(-(t - t0 - pw) / tau);
    } else if (sat && t >= 0) v += t < pw ? sat : sat * 0.5 * Math.exp(-(t - pw) / tau);
    x[i] = v;
  }
}

export interface SimulateOptions {
  model: NerveModel;
  seed: number;
  grid: SweepGrid;
  /** one entry per sweep */
  sweeps: (RecordingConditions & { conditions?: Conditions })[];
  nuisance?: Nuisance;
}

/** Simulate sweeps (uV) with conditions filled in. Deterministic for a seed. */
export function simulateNerve(o: SimulateOptions): SweepSet {
  if (!(o.grid.fs > 0) || !(o.grid.nSamples > 1))
    throw new OptionError('invalid grid: fs must be > 0 and nSamples > 1');
  const fibers = drawFibers(o.model, o.seed);
  const rng = new Rng(o.seed ^ 0x9e3779b9);
  const n = o.grid.nSamples;
  const data = sharedSamples(o.sweeps.length * n);
  const conds: Conditions[] = [];
  o.sweeps.forEach((rc, s) => {
    const x = data.subarray(s * n, (s + 1) * n);
    synthesizeCap(o.model, fibers, rc, o.grid, x, rng);
    if (o.nuisance) addNuisance(x, o.grid, rc.intensity, o.nuisance, rng, rc.pulsesMs);
    const pulseCond: Record<string, number> = rc.pulsesMs ? { pulses: rc.pulsesMs.length } : {};
    conds.push({
      ...pulseCond,
      intensity: rc.intensity,
      intensityUnit: 'mA',
      ...(rc.pulseWidthMs !== undefined ? { pulseWidthMs: rc.pulseWidthMs } : {}),
      distanceMm: rc.distanceMm,
      temperatureC: rc.temperatureC,
      concentration: rc.concentration,
      ...(rc.conditions ?? {}),
    });
  });
  return new SweepSet({
    data,
    nSweeps: o.sweeps.length,
    nSamples: n,
    fs: o.grid.fs,
    t0Ms: o.grid.t0Ms,
    units: 'uV',
    conditions: conds,
    history: [{ verb: 'simulateNerve', options: { seed: o.seed }, version: '' }],
  });
}

/** Ground truth per class at a temperature: fastest velocity, amplitude-weighted modal velocity, IC50, Hill slope. */
/**
 * Ground truth per class at a temperature. vMax, vMin: fastest and slowest fiber;
 * vMedian: median fiber; vMode: the velocity at the mode of the amplitude-weighted
 * arrival-time density (each fiber weighted by its amplitude a(v) ~ v^2 and by the
 * Jacobian dv/dt ~ v^2 of the change from velocity to latency), i.e. the velocity of
 * the fibers that make the peak of the class's compound wave; estimated with a
 * Gaussian kernel (Silverman's bandwidth) over velocity. vCentroid: 1 / (amplitude-
 * weighted mean of 1/v) = sum v^2 / sum v for a ~ v^2: the slope of the class wave's
 * centre of mass against distance.
 */
export function classTruth(
  model: NerveModel,
  fibers: Fiber[],
  temperatureC: number,
): {
  name: string;
  vMax: number;
  vMin: number;
  vMode: number;
  vMedian: number;
  vCentroid: number;
  ic50: number;
  hill: number;
  minThreshold: number;
}[] {
  return model.populations.map((p, pi) => {
    const fs = fibers.filter((f) => f.pop === pi);
    const v = fs.map((f) => fiberVelocity(model, f, temperatureC)).sort((a, b) => a - b);
    const lo = v[0],
      hi = v[v.length - 1];
    const mean = v.reduce((a, b) => a + b, 0) / v.length;
    const sd = Math.sqrt(v.reduce((a, b) => a + (b - mean) ** 2, 0) / (v.length - 1));
    const bw = 1.06 * sd * Math.pow(v.length, -0.2);
    let best = lo,
      bestD = -1;
    for (let g = 0; g <= 400; g++) {
      const vg = lo + ((hi - lo) * g) / 400;
      let dens = 0;
      for (const x of v) dens += Math.exp(-0.5 * ((vg - x) / bw) ** 2);
      dens *= vg ** 4;
      if (dens > bestD) {
        bestD = dens;
        best = vg;
      }
    }
    return {
      name: p.name,
      vMax: hi,
      vMin: lo,
      vMode: best,
      vMedian: v[Math.floor(v.length / 2)],
      vCentroid: v.reduce((a, b) => a + b * b, 0) / v.reduce((a, b) => a + b, 0),
      ic50: p.ic50,
      hill: p.hill,
      minThreshold: Math.min(...fs.map((f) => f.threshold)),
    };
  });
}

// ---- several pulses per sweep: paired pulses and trains ----

const defaultTimeScale37 = (p: FiberPopulation) =>
  p.refractory?.timeScale37 ?? (!p.myelinated ? 3.3 : p.diameterUm.mean >= 6 ? 11 : 7.5);

/** The time scale of a class's Hodgkin-Huxley fibre at temperature T (refractory.ts): timeScale37 x Q10^((T - 37)/10). */
export function classTimeScale(p: FiberPopulation, temperatureC: number): number {
  return defaultTimeScale37(p) * Math.pow(p.refractory?.q10 ?? 3, (temperatureC - 37) / 10);
}

/** A fibre's time scale: its class's, divided by reference diameter / diameter when thinner than the reference. */
export function fiberTimeScale(model: NerveModel, f: Fiber, temperatureC: number): number {
  const p = model.populations[f.pop];
  const ref = p.refractory?.referenceDiameterUm ?? p.diameterUm.mean + 0.5 * p.diameterUm.sd;
  return classTimeScale(p, temperatureC) / Math.max(1, ref / f.diameterUm);
}

/** Fibres of similar time scale share one train simulation: time scales rounded to 5% steps in ln. */
const TRAIN_GROUP_STEP = 0.05;
const trainCache = new Map<string, PulseOutcome[]>();

/**
 * A fibre's response to each pulse of `pulsesMs` (conducted, conduction-time ratio, height ratio): the first
 * pulse meets a rested fibre; a pair uses the recovery table (refractory.ts) at the fibre's own time scale;
 * a train of three or more is simulated directly for fibres grouped by time scale (5% steps).
 */
export function fiberPulseOutcomes(
  model: NerveModel,
  f: Fiber,
  pulsesMs: readonly number[],
  temperatureC: number,
): PulseOutcome[] {
  const drive = model.testDrive ?? REFRACTORY_FIBRE.drive;
  const s = fiberTimeScale(model, f, temperatureC);
  if (pulsesMs.length === 1) return [{ timeMs: pulsesMs[0], conducted: true, conductionRatio: 1, heightRatio: 1 }];
  if (pulsesMs.length === 2) {
    const r = secondPulse(recoveryTable(drive), pulsesMs[1] - pulsesMs[0], s);
    return [
      { timeMs: pulsesMs[0], conducted: true, conductionRatio: 1, heightRatio: 1 },
      {
        timeMs: pulsesMs[1],
        conducted: r.conducted,
        conductionRatio: r.conducted ? r.conductionRatio : null,
        heightRatio: r.conducted ? r.heightRatio : null,
      },
    ];
  }
  const sq = Math.exp(Math.round(Math.log(s) / TRAIN_GROUP_STEP) * TRAIN_GROUP_STEP);
  const key = `${sq.toPrecision(8)}|${drive}|${pulsesMs.join(',')}`;
  let r = trainCache.get(key);
  if (!r) {
    r = timeScaledCable(
      pulsesMs.map((t) => t - pulsesMs[0]),
      { timeScale: sq, drive },
    ).map((q, k) => ({ ...q, timeMs: pulsesMs[k] }));
    trainCache.set(key, r);
  }
  return r;
}

function checkPulses(p: readonly number[]): void {
  if (!p.length || p[0] !== 0 || p.some((t, i) => !Number.isFinite(t) || (i > 0 && !(t > p[i - 1])))) {
    throw new OptionError(`invalid pulsesMs: [${p.join(', ')}]; must be ascending times in ms starting at 0`);
  }
}

/** synthesizeCap for sweeps with pulsesMs: each recruited, conducting fiber adds one waveform per conducted pulse. */
function synthesizePulses(
  model: NerveModel,
  fibers: Fiber[],
  rc: RecordingConditions,
  grid: SweepGrid,
  out: Float64Array,
  rng?: Rng,
  parts?: Float64Array[],
): Float64Array {
  const pulses = rc.pulsesMs!;
  checkPulses(pulses);
  out.fill(0);
  const { dtMs, jitter, tauScale, biphasic, sep, sd } = capSetup(model, rc, grid, rng);
  for (const f of fibers) {
    if (rc.intensity < f.threshold * sd[f.pop]) continue;
    if (!conducts(model, f, rc.concentration)) continue;
    const p = model.populations[f.pop];
    const v = fiberVelocity(model, f, rc.temperatureC);
    const tau = p.tauMs * tauScale;
    const amp0 = p.unitAmplitudeUv * v * v;
    const delay = biphasic ? sep / v : 0;
    const part = parts?.[f.pop];
    for (const q of fiberPulseOutcomes(model, f, pulses, rc.temperatureC)) {
      if (!q.conducted) continue;
      const lat = q.timeMs + model.utilisationMs + (rc.distanceMm / v) * (q.conductionRatio ?? 1) + jitter;
      const amp = amp0 * (q.heightRatio ?? 1);
      const i0 = Math.max(0, Math.floor((lat - grid.t0Ms) / dtMs));
      const i1 = Math.min(grid.nSamples - 1, Math.ceil((lat + delay + 14 * tau - grid.t0Ms) / dtMs));
      for (let i = i0; i <= i1; i++) {
        const t = grid.t0Ms + i * dtMs;
        let w = unitWave((t - lat) / tau);
        if (biphasic) w -= unitWave((t - lat - delay) / tau);
        out[i] += amp * w;
        if (part) part[i] += amp * w;
      }
    }
  }
  return out;
}
