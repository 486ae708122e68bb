/**
 * Hodgkin-Huxley membrane (space clamp).
 *
 * The 1952 squid axon model with resting potential at -65 mV: gNa 120, gK 36,
 * gL 0.3 mS/cm2; ENa +50, EK -77, EL -54.387 mV; Cm 1 uF/cm2; rate functions in
 * 1/ms at 6.3 C multiplied by phi = 3^((T - 6.3)/10).
 * Integrator: classic fourth-order Runge-Kutta at a fixed step (default 0.01 ms),
 * with the removable singularities of alpha_m and alpha_n at V = -40 and -55 mV
 * replaced by their limits.
 * Reference: A. L. Hodgkin, A. F. Huxley, "A quantitative description of membrane
 * current and its application to conduction and excitation in nerve",
 * J. Physiol. 117 (1952) 500-544.
 */
import { OptionError } from '../errors';

export const HH = { gNa: 120, gK: 36, gL: 0.3, ENa: 50, EK: -77, EL: -54.387, Cm: 1 } as const;

/** phi = 3^((T - 6.3)/10), the 1952 temperature factor. */
export const hhPhi = (tempC: number): number => Math.pow(3, (tempC - 6.3) / 10);

function vtrap(x: number, y: number): number {
  // x / (1 - exp(-x / y)) with its limit y at x = 0
  return Math.abs(x / y) < 1e-6 ? y * (1 + x / y / 2) : x / (1 - Math.exp(-x / y));
}
export const alphaM = (V: number) => 0.1 * vtrap(V + 40, 10);
export const betaM = (V: number) => 4 * Math.exp(-(V + 65) / 18);
export const alphaH = (V: number) => 0.07 * Math.exp(-(V + 65) / 20);
export const betaH = (V: number) => 1 / (1 + Math.exp(-(V + 35) / 10));
export const alphaN = (V: number) => 0.01 * vtrap(V + 55, 10);
export const betaN = (V: number) => 0.125 * Math.exp(-(V + 65) / 80);

/** Steady-state gates at V. */
export function hhSteady(V: number): { m: number; h: number; n: number } {
  return {
    m: alphaM(V) / (alphaM(V) + betaM(V)),
    h: alphaH(V) / (alphaH(V) + betaH(V)),
    n: alphaN(V) / (alphaN(V) + betaN(V)),
  };
}

/** Ionic current density (uA/cm2, outward positive). */
export function hhIonic(V: number, m: number, h: number, n: number): number {
  return HH.gNa * m * m * m * h * (V - HH.ENa) + HH.gK * n * n * n * n * (V - HH.EK) + HH.gL * (V - HH.EL);
}

/** Resting state: the V where the steady-state ionic current is zero (bisection on [-70, -60] mV). */
export function hhRest(): { V: number; m: number; h: number; n: number } {
  let lo = -70,
    hi = -60;
  const f = (V: number) => {
    const s = hhSteady(V);
    return hhIonic(V, s.m, s.h, s.n);
  };
  for (let i = 0; i < 100; i++) {
    const mid = (lo + hi) / 2;
    if (f(lo) * f(mid) <= 0) hi = mid;
    else lo = mid;
  }
  const V = (lo + hi) / 2;
  return { V, ...hhSteady(V) };
}

/** A current-clamp stimulus: current density (uA/cm2) as a function of time (ms). */
export type Stimulus = (tMs: number) => number;
export const stepCurrent =
  (amp: number, start: number, duration: number): Stimulus =>
  (t) =>
    t >= start && t < start + duration ? amp : 0;
export const pulseTrain =
  (amp: number, start: number, width: number, period: number, count: number): Stimulus =>
  (t) => {
    const k = Math.floor((t - start) / period);
    return k >= 0 && k < count && t - start - k * period < width ? amp : 0;
  };

export interface MembraneOptions {
  stimulus: Stimulus;
  /** duration, ms */
  tMax: number;
  /** integration step, ms (default 0.01; must be <= 0.05) */
  dt?: number;
  /** temperature, C (default 6.3) */
  temperatureC?: number;
  /** record every k-th step (default 1) */
  every?: number;
}

export interface MembraneResult {
  t: Float64Array;
  V: Float64Array;
  /** spike times (ms): upward crossings of 0 mV, interpolated */
  spikes: number[];
}

/** Simulate the space-clamped membrane from rest. */
export function simulateMembrane(o: MembraneOptions): MembraneResult {
  const dt = o.dt ?? 0.01;
  if (!(dt > 0 && dt <= 0.05))
    throw new OptionError(`invalid dt: ${dt} ms; must be 0 < dt <= 0.05 ms for a stable RK4 step`);
  if (!(o.tMax > 0)) throw new OptionError(`invalid tMax: ${o.tMax} ms; must be > 0`);
  const phi = hhPhi(o.temperatureC ?? 6.3);
  const every = o.every ?? 1;
  const steps = Math.round(o.tMax / dt);
  const rest = hhRest();
  let y = [rest.V, rest.m, rest.h, rest.n];
  const deriv = (t: number, s: number[]) => {
    const [V, m, h, n] = s;
    return [
      (o.stimulus(t) - hhIonic(V, m, h, n)) / HH.Cm,
      phi * (alphaM(V) * (1 - m) - betaM(V) * m),
      phi * (alphaH(V) * (1 - h) - betaH(V) * h),
      phi * (alphaN(V) * (1 - n) - betaN(V) * n),
    ];
  };
  const nOut = Math.floor(steps / every) + 1;
  const T = new Float64Array(nOut),
    VV = new Float64Array(nOut);
  T[0] = 0;
  VV[0] = y[0];
  const spikes: number[] = [];
  for (let k = 0; k < steps; k++) {
    const t = k * dt;
    const k1 = deriv(t, y);
    const k2 = deriv(
      t + dt / 2,
      y.map((v, i) => v + (dt / 2) * k1[i]),
    );
    const k3 = deriv(
      t + dt / 2,
      y.map((v, i) => v + (dt / 2) * k2[i]),
    );
    const k4 = deriv(
      t + dt,
      y.map((v, i) => v + dt * k3[i]),
    );
    const next = y.map((v, i) => v + (dt / 6) * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i]));
    if (y[0] < 0 && next[0] >= 0) spikes.push(t + (dt * (0 - y[0])) / (next[0] - y[0]));
    y = next;
    if ((k + 1) % every === 0) {
      T[(k + 1) / every] = (k + 1) * dt;
      VV[(k + 1) / every] = y[0];
    }
  }
  return { t: T, V: VV, spikes };
}

/**
 * Smallest amplitude (uA/cm2) of a step of `durationMs` that gives at least
 * `minSpikes` spikes, by bisection to `tol`.
 */
export function stepThreshold(o: {
  durationMs: number;
  minSpikes?: number;
  temperatureC?: number;
  lo?: number;
  hi?: number;
  tol?: number;
  dt?: number;
  after?: number;
}): number {
  const need = o.minSpikes ?? 1;
  let lo = o.lo ?? 0,
    hi = o.hi ?? 200;
  const tol = o.tol ?? 1e-3;
  const fires = (amp: number) => {
    const r = simulateMembrane({
      stimulus: stepCurrent(amp, 1, o.durationMs),
      tMax: o.durationMs + 20,
      dt: o.dt ?? 0.01,
      temperatureC: o.temperatureC,
    });
    return r.spikes.filter((s) => s >= 1 + (o.after ?? 0)).length >= need;
  };
  if (!fires(hi)) throw new OptionError(`no spike up to ${hi} uA/cm2`);
  while (hi - lo > tol) {
    const mid = (lo + hi) / 2;
    if (fires(mid)) hi = mid;
    else lo = mid;
  }
  return hi;
}
