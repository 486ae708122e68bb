/**
 * Paired-pulse and train protocols on the nerve model, and their ground truth.
 *
 * Sweeps. A paired-pulse series has, per interstimulus interval, sweeps with a conditioning pulse at 0 ms and a
 * test pulse at the interval (condition `pulsePair: 'paired'`, `intervalMs`), plus test-alone sweeps (one pulse at
 * 0 ms, `pulsePair: 'test-alone'`) and optionally conditioning-alone sweeps (`pulsePair: 'conditioning-alone'`).
 * Conditioning and test have the same intensity. A train series has `trainPulses` pulses at `trainHz` in one sweep.
 *
 * Truth. Computed from the drawn fibres and the direct single-fibre simulations of refractory.ts, never from the
 * analysis: per class, the absolute refractory period (the shortest refractory period among the recruited fibres:
 * the longest interval at which no fibre of the class answers the test), the recovery of the test response's area
 * (sum over fibres of unit area x the test spike's height ratio, over the test-alone sum; each unit waveform of a
 * class has the same shape, so its area is proportional to its amplitude), the intervals where that recovery first
 * reaches 50% and 90%, and the shift of the class's centre of mass in time (amplitude-weighted mean arrival time of
 * the test volley minus the test-alone one). Trains: the same per pulse, against pulse 1.
 */
import { SweepSet } from '../sweeps/SweepSet';
import { OptionError } from '../errors';
import {
  conducts,
  drawFibers,
  fiberPulseOutcomes,
  fiberTimeScale,
  fiberVelocity,
  simulateNerve,
  weissFactor,
  defaultReferencePulseWidthMs,
  type Fiber,
  type NerveModel,
  type Nuisance,
  type RecordingConditions,
  type SweepGrid,
} from './nerve';
import { recoveryTable, REFRACTORY_FIBRE } from './refractory';

export type PairedPulseBase = Omit<RecordingConditions, 'pulsesMs'>;

/** The fibres a sweep recruits and that conduct through the blocker. */
function recruited(model: NerveModel, fibers: Fiber[], rc: PairedPulseBase): Fiber[] {
  const ref = model.referencePulseWidthMs ?? defaultReferencePulseWidthMs;
  return fibers.filter((f) => {
    const p = model.populations[f.pop];
    const sd = rc.pulseWidthMs === undefined ? 1 : weissFactor(p, rc.pulseWidthMs, ref);
    return rc.intensity >= f.threshold * sd && conducts(model, f, rc.concentration);
  });
}

export interface PairedPulseSeriesOptions {
  model: NerveModel;
  seed: number;
  grid: SweepGrid;
  /** intensity, distance, temperature, concentration (and recording) of every sweep */
  base: PairedPulseBase;
  /** interstimulus intervals, ms */
  intervalsMs: number[];
  /** sweeps per interval and per alone-condition (default 1) */
  repeats?: number;
  /** add conditioning-alone sweeps (default true) */
  conditioningAlone?: boolean;
  nuisance?: Nuisance;
  /** extra conditions on every sweep (e.g. preparation) */
  conditions?: Record<string, string | number>;
}

/** Simulate a paired-pulse series (module comment) as one SweepSet. */
export function simulatePairedPulse(o: PairedPulseSeriesOptions): SweepSet {
  if (!o.intervalsMs.length || o.intervalsMs.some((x) => !(x > 0)))
    throw new OptionError('invalid intervalsMs: need one or more intervals > 0 ms');
  const reps = o.repeats ?? 1;
  const sweeps: (RecordingConditions & { conditions: Record<string, string | number | null> })[] = [];
  for (let r = 0; r < reps; r++) {
    const extra = { ...(o.conditions ?? {}), repeat: r };
    sweeps.push({ ...o.base, pulsesMs: [0], conditions: { ...extra, pulsePair: 'test-alone', intervalMs: null } });
    if (o.conditioningAlone ?? true)
      sweeps.push({
        ...o.base,
        pulsesMs: [0],
        conditions: { ...extra, pulsePair: 'conditioning-alone', intervalMs: null },
      });
    for (const isi of o.intervalsMs)
      sweeps.push({ ...o.base, pulsesMs: [0, isi], conditions: { ...extra, pulsePair: 'paired', intervalMs: isi } });
  }
  return simulateNerve({ model: o.model, seed: o.seed, grid: o.grid, sweeps, nuisance: o.nuisance });
}

export interface TrainSeriesOptions {
  model: NerveModel;
  seed: number;
  grid: SweepGrid;
  base: PairedPulseBase;
  /** train frequencies, Hz */
  frequenciesHz: number[];
  /** pulses per train */
  pulses: number;
  repeats?: number;
  nuisance?: Nuisance;
  conditions?: Record<string, string | number>;
}

/** Pulse times (ms) of a train of `n` pulses at `hz`, the first at 0. */
export const trainTimes = (hz: number, n: number): number[] => Array.from({ length: n }, (_, k) => (k * 1000) / hz);

/** Simulate trains (one train per sweep, conditions trainHz and trainPulses). */
export function simulateTrain(o: TrainSeriesOptions): SweepSet {
  if (!Number.isInteger(o.pulses) || o.pulses < 2)
    throw new OptionError(`invalid pulses: ${o.pulses}; must be an integer >= 2`);
  if (!o.frequenciesHz.length || o.frequenciesHz.some((x) => !(x > 0)))
    throw new OptionError('invalid frequenciesHz: need one or more frequencies > 0 Hz');
  const sweeps: (RecordingConditions & { conditions: Record<string, string | number> })[] = [];
  for (let r = 0; r < (o.repeats ?? 1); r++) {
    for (const hz of o.frequenciesHz) {
      sweeps.push({
        ...o.base,
        pulsesMs: trainTimes(hz, o.pulses),
        conditions: { ...(o.conditions ?? {}), repeat: r, trainHz: hz, trainPulses: o.pulses },
      });
    }
  }
  return simulateNerve({ model: o.model, seed: o.seed, grid: o.grid, sweeps, nuisance: o.nuisance });
}

export interface RecoveryPoint {
  intervalMs: number;
  areaFraction: number;
  centroidShiftMs: number | null;
}
export interface PairedPulseClassTruth {
  name: string;
  recruited: number;
  /** absolute refractory period of the class, ms (null: no fibre recruited) */
  arpMs: number | null;
  /** interval where the test area first reaches 50% / 90% of test-alone, ms */
  r50Ms: number | null;
  r90Ms: number | null;
  curve: RecoveryPoint[];
}

interface Weighted {
  f: Fiber;
  w: number;
  lat0: number;
  s: number;
  v: number;
}

function weighted(model: NerveModel, fibers: Fiber[], rc: PairedPulseBase, pop: number): Weighted[] {
  const p = model.populations[pop];
  return recruited(model, fibers, rc)
    .filter((f) => f.pop === pop)
    .map((f) => {
      const v = fiberVelocity(model, f, rc.temperatureC);
      return {
        f,
        v,
        w: p.unitAmplitudeUv * v * v,
        lat0: model.utilisationMs + rc.distanceMm / v,
        s: fiberTimeScale(model, f, rc.temperatureC),
      };
    });
}

/** Area fraction and centroid shift of a class's test volley at one interval (fibres' own outcomes). */
function pairAt(model: NerveModel, fs: Weighted[], rc: PairedPulseBase, isi: number): RecoveryPoint {
  let sw = 0,
    swl = 0,
    sh = 0,
    shl = 0;
  for (const x of fs) {
    sw += x.w;
    swl += x.w * x.lat0;
    const q = fiberPulseOutcomes(model, x.f, [0, isi], rc.temperatureC)[1];
    if (!q.conducted) continue;
    const wh = x.w * q.heightRatio!;
    sh += wh;
    shl += wh * (model.utilisationMs + (rc.distanceMm / x.v) * q.conductionRatio!);
  }
  return { intervalMs: isi, areaFraction: sw > 0 ? sh / sw : 0, centroidShiftMs: sh > 0 ? shl / sh - swl / sw : null };
}

/** The first interval (ms) at which the class's test area reaches `level` of test-alone: scan then bisection. */
function firstReach(model: NerveModel, fs: Weighted[], rc: PairedPulseBase, level: number, arp: number): number | null {
  const step = arp / 100;
  let lo = arp,
    hi = NaN;
  for (let x = arp; x < 40 * arp; x += step) {
    if (pairAt(model, fs, rc, x).areaFraction >= level) {
      hi = x;
      break;
    }
    lo = x;
  }
  if (Number.isNaN(hi)) return null;
  for (let i = 0; i < 30 && hi - lo > 1e-6; i++) {
    const mid = (lo + hi) / 2;
    if (pairAt(model, fs, rc, mid).areaFraction >= level) hi = mid;
    else lo = mid;
  }
  return hi;
}

/** Ground truth of a paired-pulse series per class (module comment), at the intervals given. */
export function pairedPulseTruth(
  model: NerveModel,
  fibers: Fiber[],
  rc: PairedPulseBase,
  intervalsMs: readonly number[] = [],
): PairedPulseClassTruth[] {
  const table = recoveryTable(model.testDrive ?? REFRACTORY_FIBRE.drive);
  return model.populations.map((p, pi) => {
    const fs = weighted(model, fibers, rc, pi);
    if (!fs.length) return { name: p.name, recruited: 0, arpMs: null, r50Ms: null, r90Ms: null, curve: [] };
    const arp = Math.min(...fs.map((x) => table.arpMs / x.s));
    return {
      name: p.name,
      recruited: fs.length,
      arpMs: arp,
      r50Ms: firstReach(model, fs, rc, 0.5, arp),
      r90Ms: firstReach(model, fs, rc, 0.9, arp),
      curve: intervalsMs.map((isi) => pairAt(model, fs, rc, isi)),
    };
  });
}

export interface TrainClassTruth {
  name: string;
  hz: number;
  /** per pulse: area over pulse 1's, and centroid shift from pulse 1 (ms) */
  areaFraction: number[];
  centroidShiftMs: (number | null)[];
  /** first pulse (1-based) whose area is below half of pulse 1's (null: every pulse at least half) */
  failurePulse: number | null;
}

/** Ground truth of a train per class: every recruited fibre's direct-simulation outcomes, summed. */
export function trainTruth(
  model: NerveModel,
  fibers: Fiber[],
  rc: PairedPulseBase,
  hz: number,
  pulses: number,
): TrainClassTruth[] {
  const times = trainTimes(hz, pulses);
  return model.populations.map((p, pi) => {
    const fs = weighted(model, fibers, rc, pi);
    const area = new Array(pulses).fill(0),
      lat = new Array(pulses).fill(0);
    for (const x of fs) {
      fiberPulseOutcomes(model, x.f, times, rc.temperatureC).forEach((q, k) => {
        if (!q.conducted) return;
        const wh = x.w * q.heightRatio!;
        area[k] += wh;
        lat[k] += wh * (model.utilisationMs + (rc.distanceMm / x.v) * q.conductionRatio!);
      });
    }
    const frac = area.map((a) => (area[0] > 0 ? a / area[0] : 0));
    const cen = lat.map((l, k) => (area[k] > 0 && area[0] > 0 ? l / area[k] - lat[0] / area[0] : null));
    const fail = frac.findIndex((a) => a < 0.5);
    return { name: p.name, hz, areaFraction: frac, centroidShiftMs: cen, failurePulse: fail < 0 ? null : fail + 1 };
  });
}

/** Convenience: the fibres a seed draws (as simulateNerve does). */
export const fibersFor = (model: NerveModel, seed: number): Fiber[] => drawFibers(model, seed);
