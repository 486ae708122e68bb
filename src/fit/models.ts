/**
 * Models with their formulas and sources. Each is a ModelFn (x, p) => y for fitCurve.
 */
import type { ModelFn } from './lm';

/**
 * Four-parameter log-logistic (Hill) in ln concentration, the parametrisation of
 * Ritz, Baty, Streibig & Gerhard (PLoS ONE 10 (2015) e0146021, the drc package):
 * y = c + (d - c) / (1 + exp(b (ln x - ln e))); e = IC50 (or ED50), b = Hill slope,
 * c = lower asymptote, d = upper asymptote. p = [b, c, d, ln e]. At x = 0, y = d (b > 0).
 * Reference: A. V. Hill, J. Physiol. 40 (1910) iv-vii.
 */
export const logLogistic4: ModelFn = (x, p) => {
  const [b, c, d, lne] = p;
  if (x <= 0) return b > 0 ? d : c;
  return c + (d - c) / (1 + Math.exp(b * (Math.log(x) - lne)));
};

/**
 * Boltzmann sigmoid for recruitment in log10 intensity: y = lo + (hi - lo) / (1 + exp((x50 - x) / s)),
 * x = log10 intensity, p = [lo, hi, x50, s]. (Boltzmann form as used for recruitment curves; common practice, no source.)
 */
export const boltzmann: ModelFn = (x, p) => p[0] + (p[1] - p[0]) / (1 + Math.exp((p[2] - x) / p[3]));

/** Weiss strength-duration law: I = Irh (1 + tch / t); p = [Irh, tch] (Geddes, IEEE TBME 51 (2004) 176). */
export const weiss: ModelFn = (t, p) => p[0] * (1 + p[1] / t);

/** Lapicque strength-duration law: I = Irh / (1 - exp(-t / tau)); chronaxie = tau ln 2; p = [Irh, tau] (from memory). */
export const lapicque: ModelFn = (t, p) => p[0] / (1 - Math.exp(-t / p[1]));

/** Single exponential approach (wash-in / wash-out): y = yInf + (y0 - yInf) exp(-(t - t0)/tau); p = [y0, yInf, tau], t0 fixed at the first time. */
export const singleExponential =
  (t0: number): ModelFn =>
  (t, p) =>
    p[1] + (p[0] - p[1]) * Math.exp(-(t - t0) / p[2]);

/** Gas constant, J / (mol K) (CODATA 2018, exact). */
export const R_GAS = 8.314462618;

/** Q10 from two rates: Q10 = (r2 / r1)^(10 / (T2 - T1)). */
export const q10FromRates = (r1: number, T1: number, r2: number, T2: number): number =>
  Math.pow(r2 / r1, 10 / (T2 - T1));

/** Arrhenius activation energy (J/mol) equivalent to a Q10 between T1 and T2 (C): Ea = R T1 T2 ln(Q10) / 10 (T in K). */
export const activationEnergyFromQ10 = (q10: number, T1: number, T2: number): number =>
  (R_GAS * (T1 + 273.15) * (T2 + 273.15) * Math.log(q10)) / 10;

/** Q10 equivalent to an activation energy over T1..T2 (C): Q10 = exp(10 Ea / (R T1 T2)). */
export const q10FromActivationEnergy = (Ea: number, T1: number, T2: number): number =>
  Math.exp((10 * Ea) / (R_GAS * (T1 + 273.15) * (T2 + 273.15)));
