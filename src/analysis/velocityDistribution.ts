/**
 * Conduction-velocity distribution of a nerve from supramaximal compound responses
 * recorded at two or more conduction distances.
 *
 * Methods ('method' option):
 * - 'decomposition' (default): each averaged response is modelled as a sum of single-fibre
 *   potentials arriving at t_u + x / v (analysis/vdistCore.ts), the potential's peak
 *   amplitude proportional to v^p and its duration to v^-q (user-selectable; defaults
 *   p = 2, q = 0, see below), plus an offset and a linear drift per distance. The summed
 *   amplitudes per velocity bin are found by non-negative least squares (Lawson & Hanson
 *   1974) with a second-difference smoothness penalty on the log-velocity grid, whose
 *   weight is chosen by generalised cross-validation (Golub, Heath & Wahba 1979). Rows are
 *   weighted by the inverse noise SD of each distance's averaged response.
 *   The single-fibre potential is either given (`sfp`) or estimated from the data: the
 *   amplitudes and the potential are found in turn (alternating least squares, a
 *   deconvolution across distances: the same potential must explain every distance, and
 *   dispersion grows with distance while the potential does not), starting from a flat
 *   distribution. With an estimated potential the utilisation delay is part of it (its
 *   time origin is the arrival time x / v).
 * - 'two-distance': the method of Cummins, Dorfman & Perkel (1979), in which the
 *   single-fibre waveform cancels between two responses (vdistCore.twoDistanceSolve),
 *   over every pair of distances. It needs the same waveform in every fibre (q = 0) and
 *   each response complete from its start: samples before the fit window count as zero.
 *   The potential is then estimated from the amplitudes to give the reconstruction.
 *
 * Number- and amplitude-weighted distributions. The fit yields the summed peak amplitude
 * per bin; the number of fibres is that divided by (v / vRef)^p. Default p = 2: in a
 * monophasic recording each fibre contributes in proportion to its axial conductance,
 * proportional to the axon's cross-section d^2 (cable theory), and myelinated fibres
 * conduct in proportion to their diameter (Hursh 1939), so amplitude ~ v^2; published
 * single-unit estimates range v^1.5 to v^2 (J Neurol Neurosurg Psychiatry 1981, 44:476).
 * For unmyelinated fibres v ~ sqrt(d) gives amplitude ~ v^4: set amplitudeExponent for
 * a C-fibre analysis. Default q = 0: the potential's time course at one site is set by
 * membrane kinetics, not by velocity, for a monophasic recording; a bipolar pair's
 * separation (bipolarSeparationMm) adds the velocity-dependent second phase explicitly.
 *
 * References
 * Cummins KL, Perkel DH, Dorfman LJ (1979) Nerve fiber conduction-velocity distributions.
 *   I. Estimation based on the single-fiber and compound action potentials.
 *   Electroencephalogr Clin Neurophysiol 46:634-646.
 * Cummins KL, Dorfman LJ, Perkel DH (1979) Nerve fiber conduction-velocity distributions.
 *   II. Estimation based on two compound action potentials. Electroencephalogr Clin
 *   Neurophysiol 46:647-658.
 * Lawson CL, Hanson RJ (1974) Solving Least Squares Problems. Prentice-Hall.
 * Bro R (1998) Multi-way analysis in the food industry. PhD thesis, University of Amsterdam
 *   (line search in alternating least squares).
 * Golub GH, Heath M, Wahba G (1979) Generalized cross-validation as a method for choosing
 *   a good ridge parameter. Technometrics 21:215-223.
 * Hursh JB (1939) Conduction velocity and diameter of nerve fibers. Am J Physiol 127:131-139.
 */
import type { SweepSet, Step, Source } from '../sweeps/SweepSet';
import type { Figure } from '../plot/figure';
import { Result } from '../notebook/result';
import { AnalysisError, OptionError } from '../errors';
import { checkKeys, finite, integerIn, oneOf, positive, windowMs, shown } from '../validate';
import { resolvePreset, scaledRange, type ClassPreset, type FiberClass } from '../measure/classes';
import { Rng } from '../model/random';
import { toFrame } from '../report/frame';
import { tableHtml, tableText, escapeHtml } from '../notebook/html';
import { VERSION } from '../version';
import {
  type Block,
  type Model,
  type Sfp,
  nuisanceBasis,
  dataVector,
  designMatrix,
  gram,
  atb,
  secondDifferencePenalty,
  gcvSolve,
  solveU,
  sfpStep,
  twoDistanceSolve,
  percentile,
  sfpAt,
  shapeSfp,
  nelderMead,
  subProblem,
  supportByGcv,
  type SfpShape,
} from './vdistCore';
import type { Row } from '../registry/types';

/** Draws a result's figure; set by src/plot/velocityDistribution.ts when it loads (plot imports analysis, not back). */
type FigureBuilder = (
  r: VelocityDistributionResult,
  o: { weighting?: 'number' | 'amplitude'; truth?: { velocity: number[]; weight?: number[]; label?: string } },
) => Figure;
let figureBuilder: FigureBuilder | null = null;
/** @internal Registration hook of the plot layer (src/plot/velocityDistribution.ts). */
export function registerVelocityDistributionFigure(f: FigureBuilder): void {
  figureBuilder = f;
}

export interface VelocityDistributionOptions {
  /** 'decomposition' (default) or 'two-distance' (Cummins, Dorfman & Perkel 1979) */
  method?: 'decomposition' | 'two-distance';
  /** velocity grid [slowest, fastest], m/s (default: from the fit window, see velocityGrid) */
  velocityRange?: [number, number];
  /** number of log-spaced grid velocities (default 60) */
  nVelocities?: number;
  /**
   * fitted samples [from, to], ms after the stimulus (default: from the first usable sample at each distance, after
   * the stimulus pulse and any clipped or blanked samples that follow it (usableStartMs), to the end of the sweep,
   * with the artifact modelled as decays from there, see artifactTauMs)
   */
  fitWindow?: [number, number];
  /**
   * end of each distance's fit: 'slowest-arrival' (default: t_u + x / v_min + the potential's length, at most the end
   * of fitWindow, so that waves slower than the grid seen at the nearer distances only are not fitted) or 'window'
   */
  fitEnd?: 'slowest-arrival' | 'window';
  /** per-distance fit start, ms, e.g. { 15: 0.45 } (overrides fitWindow[0] at that distance) */
  fitStartByDistance?: Record<string, number>;
  /** 'estimate' (default) or a given potential: samples at dtMs from t0Ms (ms, relative to the arrival x / v) */
  sfp?: 'estimate' | { samples: ArrayLike<number>; dtMs: number; t0Ms: number };
  /** support of an estimated potential [before, after] its arrival, ms (default: -1% and +25% of the fit window's length) */
  sfpWindow?: [number, number];
  /**
   * form of an estimated potential: 'two-phase' (default; a main phase and an opposite after-phase, five shape
   * parameters found with the amplitudes by variable projection) or 'free' (sampled on nodes, alternating least squares)
   */
  sfpModel?: 'two-phase' | 'free';
  /**
   * 'gcv' (default): the distribution's support on the grid chosen by generalised cross-validation (bins that only
   * fit noise are held at zero, see vdistCore.supportByGcv); 'grid': every grid bin is free
   */
  support?: 'gcv' | 'grid';
  /** refine a two-phase potential on nodes by alternating least squares, started from it (default true) */
  sfpRefine?: boolean;
  /**
   * second-difference penalty of a potential estimated on nodes, relative (default 1e-3), or 'gcv': chosen by
   * generalised cross-validation of the potential's step (at the first and fifth alternation), which counts fewer
   * effective node values when the data are noisy
   */
  sfpSmoothing?: number | 'gcv';
  /** p: peak amplitude proportional to v^p (default 2) */
  amplitudeExponent?: number;
  /** q: duration proportional to v^-q (default 0) */
  durationExponent?: number;
  /** velocity whose potential is the reference shape, m/s (default: geometric mean of the grid) */
  referenceVelocity?: number;
  /** separation of a bipolar recording pair, mm (default 0: monophasic) */
  bipolarSeparationMm?: number;
  /** utilisation delay t_u, ms, for a given potential (default 0; an estimated potential absorbs it) */
  utilisationMs?: number;
  /** per-distance nuisance: 'offset', 'linear' (default) or 'quadratic' drift */
  drift?: 'offset' | 'linear' | 'quadratic';
  /**
   * time constants (ms) of decaying exponentials from the fit start modelled as artifact, per distance (default: with
   * a detected fit start, 2 fitted samples to the start's delay after the stimulus, in factors of 2; else none)
   */
  artifactTauMs?: number[];
  /**
   * mains hum: frequencies (Hz, harmonics listed, e.g. [50, 100, 150]) modelled as a sine and
   * cosine per distance, or 'detect' (default): none, 50 or 60 Hz with two harmonics, whichever GCV prefers (a
   * frequency only when every distance's fit spans half its cycle or more: 10 ms for 50 Hz), chosen
   * once a two-phase potential is known and modelled while the potential is refined on nodes (a potential free on
   * nodes would otherwise take up the hum) and in the final amplitudes. Given frequencies are modelled throughout
   */
  humHz?: number[] | 'detect';
  /** quiet window for the noise SD, ms (default: sweep start to -0.1 ms) */
  noiseWindow?: [number, number];
  /** maximum alternations of amplitudes and potential (default 100) */
  iterations?: number;
  /** the alternation stops when the relative change of the amplitudes falls below this (default 3e-3) */
  tolerance?: number;
  /** smoothness weight of the final amplitudes, relative to tr(A'A)/tr(D'D), or 'gcv' (default) */
  lambda?: number | 'gcv';
  /** smoothness weight (relative) while the potential is being estimated (default 1e-3) */
  alternationLambda?: number;
  /** bootstrap resamples of sweeps within each distance (default 200; 0 = none) */
  bootstrap?: number;
  /** seed of the bootstrap (default 1) */
  seed?: number;
  /**
   * class preset or classes for the fraction per class (default 'mammalian'), scaled to the temperature with the
   * preset's Q10 from its reference temperature; a plain list of classes is taken at 37 C (measure/classes.ts):
   * give a preset object with refTemperatureC to state ranges at another temperature
   */
  classes?: string | ClassPreset | FiberClass[];
  /** temperature for the class ranges, C (default: the sweeps' temperatureC when they share one) */
  temperatureC?: number;
}

export const velocityDistributionDefaults = {
  method: 'decomposition' as const,
  nVelocities: 60,
  fitWindowStart: 'detected' as const,
  fitEnd: 'slowest-arrival' as const,
  sfpRefine: true,
  support: 'gcv' as const,
  humHz: 'detect' as const,
  sfpWindowFraction: [-0.01, 0.25] as [number, number],
  sfpSmoothing: 1e-3,
  sfpModel: 'two-phase' as const,
  amplitudeExponent: 2,
  durationExponent: 0,
  bipolarSeparationMm: 0,
  utilisationMs: 0,
  drift: 'linear' as const,
  iterations: 100,
  tolerance: 3e-3,
  lambda: 'gcv' as const,
  alternationLambda: 1e-3,
  bootstrap: 200,
  seed: 1,
  classes: 'mammalian',
  twoDistanceLambda: 1e-4,
  percentiles: [5, 10, 25, 50, 75, 90, 95],
};

/** the option keys (also the manifest's, src/io/manifest.ts) */
export const VDIST_OPTION_KEYS = [
  'method',
  'velocityRange',
  'nVelocities',
  'fitWindow',
  'fitStartByDistance',
  'fitEnd',
  'sfp',
  'sfpWindow',
  'sfpSmoothing',
  'sfpModel',
  'sfpRefine',
  'support',
  'amplitudeExponent',
  'durationExponent',
  'referenceVelocity',
  'bipolarSeparationMm',
  'utilisationMs',
  'drift',
  'artifactTauMs',
  'humHz',
  'noiseWindow',
  'iterations',
  'tolerance',
  'lambda',
  'alternationLambda',
  'bootstrap',
  'seed',
  'classes',
  'temperatureC',
];
/** Conditions that must not vary within one distribution (select with set.where). */
const GROUP_KEYS = [
  'preparation',
  'temperatureC',
  'concentration',
  'drug',
  'epoch',
  'intensity',
  'pulseWidthMs',
  'polarity',
];

export interface VelocityDistributionFit {
  method: string;
  lambda: number;
  gcv: number;
  df: number;
  iterations: number;
  converged: boolean;
  status: string;
  notes: string[];
}

/** The result: distribution on the velocity grid, percentiles, class fractions, residuals, potential. */
export class VelocityDistributionResult extends Result {
  constructor(
    readonly grid: Row[],
    readonly percentiles: Row[],
    readonly classes: Row[],
    readonly residuals: Row[],
    readonly sfp: Row[],
    readonly reconstruction: { distanceMm: number; t: Float64Array; y: Float64Array; fit: Float64Array }[],
    readonly fit: VelocityDistributionFit,
    readonly units: string,
    readonly replicates: { number: Float64Array[]; amplitude: Float64Array[] },
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
  ) {
    super();
  }
  /** velocity grid, m/s */
  get velocities(): number[] {
    return this.grid.map((r) => r.velocity_m_s as number);
  }
  tables(): Record<string, readonly object[]> {
    return {
      velocity_distribution: this.grid,
      velocity_distribution_percentiles: this.percentiles,
      velocity_distribution_classes: this.classes,
      velocity_distribution_residuals: this.residuals,
      velocity_distribution_sfp: this.sfp,
    };
  }
  /** The distribution on the grid as a DataFrame (or another table by name). */
  frame(table: 'grid' | 'percentiles' | 'classes' | 'residuals' | 'sfp' = 'grid'): import('danfojs-node').DataFrame {
    const t = {
      grid: this.grid,
      percentiles: this.percentiles,
      classes: this.classes,
      residuals: this.residuals,
      sfp: this.sfp,
    }[table];
    if (!t)
      throw new OptionError(
        `invalid table: ${shown(table)}; must be one of "grid", "percentiles", "classes", "residuals", "sfp"`,
      );
    return toFrame(t as Record<string, unknown>[]);
  }
  /** A percentile (5, 10, 25, 50, 75, 90 or 95) of the number- or amplitude-weighted distribution, overall or in a class. */
  percentile(p: number, weighting: 'number' | 'amplitude' = 'number', scope = 'all'): number {
    const r = this.percentiles.find((q) => q.percentile === p && q.weighting === weighting && q.scope === scope);
    if (!r)
      throw new OptionError(
        `no percentile ${p} (${weighting}, ${scope}); percentiles are ${velocityDistributionDefaults.percentiles.join(', ')}, scopes all, ${this.classes.map((c) => c.class).join(', ')}`,
      );
    return r.velocity_m_s as number;
  }
  /**
   * The figure: distribution with its bootstrap band, class ranges, and an optional known distribution overlaid
   * (src/plot/velocityDistribution.ts draws it; the analysis layer does not load the plot layer, the plot module
   * registers itself when loaded, as `import ... from 'fascicle'` does).
   * @throws AnalysisError when the plot module has not been loaded.
   */
  figure(
    options: {
      weighting?: 'number' | 'amplitude';
      truth?: { velocity: number[]; weight?: number[]; label?: string };
    } = {},
  ): Figure {
    if (!figureBuilder)
      throw new AnalysisError(
        'the velocity-distribution figure is drawn by src/plot/velocityDistribution.ts, which is not loaded: ' +
          'import from the package index (or that module) first, or call velocityDistributionFigure(result) from it',
      );
    return figureBuilder(this, options);
  }
  methods(): string {
    const full = super.methods();
    const [body, refText = ''] = full.split('\n\nReferences\n');
    const [text, more] = methodsSentence(this.history[this.history.length - 1].options);
    const refs = new Set([...refText.split('\n').filter(Boolean), ...more]);
    const tail = /\s*Analyses were run with fascicle [^ ]+\.\s*$/;
    const lead = body.trimEnd().replace(tail, '');
    return `${lead ? lead + ' ' : ''}${text} Analyses were run with fascicle ${VERSION}.\n\nReferences\n${[...refs].sort().join('\n')}\n`;
  }
  toHTML(): string {
    const cap = `Conduction-velocity distribution (${escapeHtml(this.fit.method)}; status: ${escapeHtml(this.fit.status)})`;
    const pct = this.percentiles.filter((r) => r.scope === 'all');
    return `<div class="fascicle-vdist"><p><b>${cap}</b></p>${tableHtml(pct, { caption: 'Percentiles (m/s), 95% bootstrap interval' })}${tableHtml(this.classes, { caption: 'Fraction per class' })}${tableHtml(this.residuals, { caption: 'Reconstruction residual per distance' })}</div>`;
  }
  toString(): string {
    const pct = this.percentiles.filter((r) => r.scope === 'all');
    return (
      `VelocityDistributionResult (${this.fit.method}, ${this.grid.length} velocities, status ${this.fit.status})\n` +
      tableText(pct, { columns: ['weighting', 'percentile', 'velocity_m_s', 'ci95_low_m_s', 'ci95_high_m_s'] }) +
      '\n' +
      tableText(this.classes, {
        columns: ['class', 'range_low_m_s', 'range_high_m_s', 'number_fraction', 'amplitude_fraction', 'status'],
      }) +
      '\n' +
      tableText(this.residuals, {
        columns: ['distance_mm', 'sweeps', 'rms_residual', 'relative_residual', 'chi2_per_sample'],
      })
    );
  }
}

/** The methods sentence (and its references) for a velocityDistribution step's options. */
export function methodsSentence(o: Record<string, unknown>): [string, string[]] {
  const refs = [
    ...(o.sfp === 'estimate' && o.sfpModel !== 'free'
      ? [
          'Golub GH, Pereyra V (1973) The differentiation of pseudo-inverses and nonlinear least squares problems ' +
            'whose variables separate. SIAM J Numer Anal 10:413-432.',
          'Nelder JA, Mead R (1965) A simplex method for function minimization. Comput J 7:308-313.',
          ...(o.sfpRefine
            ? [
                'Morozov VA (1966) On the solution of functional equations by the method of regularization. ' +
                  'Soviet Math Dokl 7:414-417.',
              ]
            : []),
        ]
      : []),
    'Lawson CL, Hanson RJ (1974) Solving Least Squares Problems. Prentice-Hall, Englewood Cliffs.',
    'Golub GH, Heath M, Wahba G (1979) Generalized cross-validation as a method for choosing a good ridge parameter. Technometrics 21:215-223.',
  ];
  const p = o.amplitudeExponent,
    q = o.durationExponent;
  const range = o.velocityRange as number[];
  const grid = `${o.nVelocities} log-spaced velocities from ${fmt(range[0])} to ${fmt(range[1])} m/s`;
  const free =
    'alternating least squares across distances (the same potential at every distance; its time origin, the ' +
    'arrival x/v, absorbs the utilisation delay)';
  const twoPhase =
    'a two-phase form (a main phase and an opposite after-phase, each (s/tau)^n exp(n(1 - s/tau)), with its onset, ' +
    'two time constants, after-phase ratio and n) fitted with the amplitudes by variable projection ' +
    '(Golub & Pereyra 1973; Nelder-Mead simplex), its time origin absorbing the utilisation delay' +
    (o.sfpRefine && o.sfpRefined !== false
      ? `, then refined on nodes by ${free} (the two-phase form left more than the noise, discrepancy principle, ` +
        'Morozov 1966; the refinement lowered the generalised cross-validation score with its parameters counted)'
      : o.sfpRefine
        ? o.sfpRefineSkipped
          ? ' (not refined on nodes: the two-phase form explained the responses to the noise level, the ' +
            'discrepancy principle of Morozov 1966)'
          : ' (a refinement on nodes was tried and not kept: with its parameters counted it did not lower the ' +
            'generalised cross-validation score)'
        : '');
  const sfp =
    o.sfp === 'estimate'
      ? `a single-fibre potential estimated from the data by ${o.sfpModel === 'free' ? free : twoPhase}`
      : `a given single-fibre potential with a utilisation delay of ${o.utilisationMs} ms`;
  const lam =
    o.lambda === 'gcv'
      ? 'chosen by generalised cross-validation (Golub et al. 1979)'
      : `fixed at ${o.lambda} (relative)`;
  const rec =
    (o.bipolarSeparationMm as number) > 0
      ? `a bipolar pair ${o.bipolarSeparationMm} mm apart`
      : 'a monophasic recording';
  let s: string;
  if (o.method === 'two-distance') {
    refs.push(
      'Cummins KL, Dorfman LJ, Perkel DH (1979) Nerve fiber conduction-velocity distributions. II. Estimation based on two compound action potentials. Electroencephalogr Clin Neurophysiol 46:647-658.',
    );
    s = `The conduction-velocity distribution was estimated from the averaged supramaximal responses at ${o.distances} by the two-distance method of Cummins, Dorfman & Perkel (1979), in which the single-fibre waveform cancels between responses at two distances (solved in the time domain over every pair of distances, non-negatively (Lawson & Hanson 1974), with the sum of weights fixed and a second-difference penalty of relative weight ${o.twoDistanceLambda}), on ${grid}, for ${rec}.`;
  } else {
    refs.push(
      'Cummins KL, Perkel DH, Dorfman LJ (1979) Nerve fiber conduction-velocity distributions. I. Estimation based on the single-fiber and compound action potentials. Electroencephalogr Clin Neurophysiol 46:634-646.',
    );
    s = `The conduction-velocity distribution was estimated from the averaged supramaximal responses at ${o.distances} by modelling each response as a sum of single-fibre potentials arriving at x/v (Cummins, Perkel & Dorfman 1979), for ${rec}, with ${sfp}, whose peak amplitude scales as v^${p} and ${q === 0 ? 'whose duration does not depend on velocity' : `duration as v^-${q}`}, plus a ${o.drift} drift per distance${(o.artifactTauMs as number[]).length ? ` and artifact exponentials (time constants ${(o.artifactTauMs as number[]).join(', ')} ms)` : ''}; the amplitude per velocity on ${grid} was found by non-negative least squares (Lawson & Hanson 1974) with a second-difference smoothness penalty whose weight was ${lam}, samples weighted by the inverse noise SD of each distance's average, over ${fmtW(o.fitWindow)}.`;
  }
  const hz = (o.humHzUsed as number[] | undefined) ?? [];
  if (hz.length || o.humHz === 'detect')
    s +=
      ` Mains hum was modelled in the final amplitudes as a sine and cosine per distance at ` +
      `${hz.length ? `${hz.join(', ')} Hz` : 'no frequency'}` +
      `${o.humHz === 'detect' ? ' (none, 50 or 60 Hz with two harmonics, chosen by generalised cross-validation)' : ''}.`;
  if (o.support === 'gcv')
    s +=
      ' The support of the distribution (the grid bins allowed to be non-zero, ' +
      `${fmt((o.supportM_s as number[])[0])} to ${fmt((o.supportM_s as number[])[1])} m/s) was chosen by ` +
      'generalised cross-validation, trimming bins from either end.';
  if (o.fitEnd === 'slowest-arrival')
    s +=
      " Each distance was fitted up to the end of the slowest grid velocity's potential there (t_u + x/v_min + its " +
      `length; ${Object.entries(o.fitEndMs as Record<string, number>)
        .map(([k, x]) => `${k} ${fmt(x)} ms`)
        .join(', ')}), so that waves slower than the grid, seen only at the nearer distances, were not fitted.`;
  if (o.fitStart === 'detected')
    s +=
      ' Each distance was fitted from its first usable sample after the stimulus (after the pulse and any clipped ' +
      'or blanked samples), the artifact tail modelled as decaying exponentials from there.';
  if ((o.fitStride as number) > 1)
    s +=
      ` The noise was correlated between neighbouring samples (lag-${o.fitStride} differences in the quiet window ` +
      `correlated ${o.noiseDifferenceCorrelation}, as white noise's -0.5), so every ${ordinal(o.fitStride as number)} sample was ` +
      'fitted: generalised cross-validation assumes independent errors.';
  s += ` Fibre numbers were taken as the amplitude per velocity divided by (v/${fmt(o.referenceVelocity as number)} m/s)^${p} (amplitude proportional to v^${p}).`;
  if ((o.bootstrap as number) > 0)
    s += ` 95% bands are percentiles of ${o.bootstrap} bootstrap resamples of sweeps within each distance (seed ${o.seed}), with the potential and the smoothness weight held fixed.`;
  s += ` Class fractions use the velocity ranges of ${o.classSource}.`;
  return [s, refs];
}

const fmt = (x: number) => String(Number(x.toPrecision(4)));
const ordinal = (m: number) => `${m}${m === 1 ? 'st' : m === 2 ? 'nd' : m === 3 ? 'rd' : 'th'}`;
const fmtW = (w: unknown) => (Array.isArray(w) ? `${fmt(w[0])} to ${fmt(w[1])} ms` : String(w));

interface Prepared {
  blocks: Block[];
  perSweep: Float64Array[][];
  distances: number[];
  notes: string[];
  /** fit start per distance, ms */
  starts: number[];
  /** every stride-th sample is fitted (noiseStride), and the lag-stride correlation of the noise's differences */
  stride: number;
  strideCorrelation: number;
}

/**
 * The row stride at which the recording's noise is uncorrelated, from the quiet window: the smallest lag m (1..8)
 * at which the differences d_i = x_(i+m) - x_i are correlated with d_(i+m) as those of white noise are (-1/2, as
 * r = (2 rho_m - 1 - rho_2m) / (2 (1 - rho_m)) for noise autocorrelation rho; differences leave out the hum and
 * drift), within max(0.1, 4 / sqrt(pairs)). Noise that is band-limited below the sampling rate (a recording
 * resampled up, or an anti-alias filter well below Nyquist) is correlated between neighbouring samples; generalised
 * cross-validation assumes independent errors and picks too little smoothing under positively correlated noise
 * (Opsomer, Wang & Yang 2001, Stat Sci 16:134-153), and the noise SD from neighbouring differences is too small.
 * Fitting every m-th sample keeps rows whose noise is (nearly) independent. White noise gives m = 1: all samples.
 * When no lag up to 8 qualifies, the least correlated one is returned (white: false).
 */
export function noiseStride(
  sweeps: readonly Float64Array[],
  na: number,
  nb: number,
): { stride: number; correlation: number; pairs: number; white: boolean } {
  let best = { stride: 1, correlation: NaN, pairs: 0, white: true };
  for (let m = 1; m <= 8; m++) {
    let num = 0,
      den = 0,
      pairs = 0;
    for (const x of sweeps) {
      const n = nb - na + 1 - m;
      if (n < 2 * m + 4) continue;
      let mean = 0;
      for (let i = 0; i < n; i++) mean += (x[na + i + m] - x[na + i]) / n;
      const d = (i: number) => x[na + i + m] - x[na + i] - mean;
      for (let i = 0; i < n; i++) den += d(i) ** 2;
      for (let i = 0; i + m < n; i++) {
        num += d(i) * d(i + m);
        pairs++;
      }
    }
    if (!(den > 0) || pairs < 16) return best;
    const r = num / den;
    if (r <= -0.5 + Math.max(0.1, 4 / Math.sqrt(pairs))) return { stride: m, correlation: r, pairs, white: true };
    if (m === 1 || r < best.correlation) best = { stride: m, correlation: r, pairs, white: false };
  }
  return best;
}

function prepare(
  set: SweepSet,
  fit: [number, number],
  startBy: Record<string, number>,
  noiseWindow: [number, number] | undefined,
  needFull: boolean,
): Prepared {
  const notes: string[] = [];
  const byD = new Map<number, number[]>();
  set.conditions.forEach((c, i) => {
    const d = c.distanceMm;
    if (typeof d !== 'number' || !(d > 0))
      throw new AnalysisError(
        `sweep ${i}: condition "distanceMm" is ${shown(d ?? null)}; a velocity distribution needs every sweep's conduction distance in mm (> 0)`,
      );
    (byD.get(d) ?? byD.set(d, []).get(d)!).push(i);
  });
  const distances = [...byD.keys()].sort((a, b) => a - b);
  if (distances.length < 2)
    throw new AnalysisError(
      `a velocity distribution needs responses at two or more conduction distances; the set has ${distances.length} (${distances.join(', ')} mm)`,
    );
  for (const k of GROUP_KEYS) {
    const lv = new Set(set.conditions.map((c) => (k in c ? c[k] : null)));
    if (lv.size > 1)
      throw new AnalysisError(
        `the sweeps differ in "${k}" (${[...lv].map(shown).join(', ')}); one distribution is for one condition: select it first, e.g. set.where({ ${k}: ${shown([...lv][0])} })`,
      );
  }
  for (const k of Object.keys(startBy))
    if (!distances.includes(Number(k)))
      throw new OptionError(
        `invalid fitStartByDistance: distance ${k} mm is not in the set (distances ${distances.join(', ')} mm)`,
      );
  const n = set.nSamples,
    dt = set.dtMs;
  const nw = noiseWindow ?? [set.t0Ms, -0.1];
  const blocks: Block[] = [];
  const perSweep: Float64Array[][] = [];
  const starts: number[] = [];
  const na = Math.max(0, Math.ceil((nw[0] - set.t0Ms) / dt - 1e-9)),
    nb = Math.min(n - 1, Math.floor((nw[1] - set.t0Ms) / dt + 1e-9));
  // one stride for the recording (the same amplifier and sampling at every distance): the largest over distances
  const strides = distances.map((d) =>
    noiseStride(
      byD.get(d)!.map((s) => set.sweep(s)),
      na,
      nb,
    ),
  );
  const worst = strides.reduce((a, x) => (x.stride > a.stride ? x : a), strides[0]);
  const stride = worst.stride;
  if (!worst.white)
    notes.push(
      `the noise is correlated over more than 8 samples (quiet window ${fmtW(nw)}): every ${ordinal(stride)} sample is ` +
        `fitted, where its differences are least correlated (${worst.correlation.toFixed(2)}; white noise -0.5)`,
    );
  else if (stride > 1)
    notes.push(
      `the noise is correlated between neighbouring samples (quiet window ${fmtW(nw)}): every ${ordinal(stride)} sample ` +
        `is fitted (lag-${stride} differences correlated ${worst.correlation.toFixed(2)}, white noise -0.5)`,
    );
  for (const d of distances) {
    const idx = byD.get(d)!;
    const start = startBy[String(d)] ?? (Number.isNaN(fit[0]) ? usableStartMs(set, idx) : fit[0]);
    starts.push(start);
    const a = Math.max(0, Math.ceil((start - set.t0Ms) / dt - 1e-9)),
      b = Math.min(n - 1, Math.floor((fit[1] - set.t0Ms) / dt + 1e-9));
    if (b - a < 10)
      throw new AnalysisError(
        `distance ${d} mm: the fit window ${fmtW([start, fit[1]])} holds ${Math.max(0, b - a + 1)} samples of the sweep (${fmt(set.t0Ms)} to ${fmt(set.timeAt(n - 1))} ms); need at least 11`,
      );
    const rows = Math.floor((b - a) / stride) + 1;
    const t = new Float64Array(rows);
    for (let r = 0; r < rows; r++) t[r] = set.timeAt(a + r * stride);
    const mean = new Float64Array(n);
    for (const s of idx) {
      const x = set.sweep(s);
      for (let i = 0; i < n; i++) mean[i] += x[i] / idx.length;
    }
    const pick = (x: Float64Array) => Float64Array.from({ length: rows }, (_, r) => x[a + r * stride]);
    perSweep.push(idx.map((s) => pick(set.sweep(s))));
    // noise: MAD of differences at the row stride / sqrt 2 in the quiet window, median over sweeps, of the mean
    let sigma = NaN;
    if (nb - na >= 8 * stride) {
      const per = idx
        .map((s) => {
          const x = set.sweep(s);
          const df = Array.from({ length: nb - na + 1 - stride }, (_, i) => Math.abs(x[na + i + stride] - x[na + i]));
          df.sort((p, q) => p - q);
          return (1.4826 * df[Math.floor(df.length / 2)]) / Math.SQRT2;
        })
        .sort((p, q) => p - q);
      sigma = per[Math.floor(per.length / 2)] / Math.sqrt(idx.length);
    }
    blocks.push({
      distanceMm: d,
      t,
      y: pick(mean),
      sigma,
      full: needFull ? { t0Ms: set.t0Ms, dtMs: dt, y: mean, startMs: start } : undefined,
    });
  }
  if (blocks.some((bl) => !(bl.sigma > 0))) {
    notes.push(`no quiet window ${fmtW(nw)} with 9 or more samples at every distance: rows are not weighted by noise`);
    for (const bl of blocks) bl.sigma = 1;
  }
  return { blocks, perSweep, distances, notes, starts, stride, strideCorrelation: worst.correlation };
}

function validate(o: VelocityDistributionOptions): void {
  checkKeys('velocityDistribution options', o, VDIST_OPTION_KEYS);
  if (o.method !== undefined) oneOf('method', o.method, ['decomposition', 'two-distance']);
  if (o.velocityRange !== undefined) {
    const r = o.velocityRange;
    if (!Array.isArray(r) || r.length !== 2 || !(r[0] > 0) || !(r[1] > r[0]) || !Number.isFinite(r[1]))
      throw new OptionError(
        `invalid velocityRange: ${shown(r)}; must be [slowest, fastest] m/s with 0 < slowest < fastest`,
      );
  }
  if (o.nVelocities !== undefined) integerIn('nVelocities', o.nVelocities, 8, 400);
  if (o.fitWindow !== undefined) windowMs('fitWindow', o.fitWindow);
  if (o.fitStartByDistance !== undefined) {
    if (
      typeof o.fitStartByDistance !== 'object' ||
      o.fitStartByDistance === null ||
      Array.isArray(o.fitStartByDistance)
    )
      throw new OptionError(
        `invalid fitStartByDistance: ${shown(o.fitStartByDistance)}; must be an object of distance (mm) to fit start (ms), e.g. { 15: 0.45 }`,
      );
    for (const [k, v] of Object.entries(o.fitStartByDistance)) {
      if (!(Number(k) > 0))
        throw new OptionError(`invalid fitStartByDistance key ${JSON.stringify(k)}; must be a distance in mm (> 0)`);
      finite(`fitStartByDistance[${k}]`, v, 'ms');
    }
  }
  if (o.sfp !== undefined && o.sfp !== 'estimate') {
    const s = o.sfp as { samples?: ArrayLike<number>; dtMs?: number; t0Ms?: number };
    if (typeof s !== 'object' || s === null)
      throw new OptionError(`invalid sfp: ${shown(o.sfp)}; must be "estimate" or { samples, dtMs, t0Ms }`);
    checkKeys('sfp', s, ['samples', 'dtMs', 't0Ms']);
    if (!s.samples || typeof s.samples.length !== 'number' || s.samples.length < 3)
      throw new OptionError('invalid sfp.samples: must be an array of 3 or more numbers');
    for (let i = 0; i < s.samples.length; i++) finite(`sfp.samples[${i}]`, s.samples[i]);
    positive('sfp.dtMs', s.dtMs, 'ms');
    finite('sfp.t0Ms', s.t0Ms, 'ms');
  }
  if (o.sfpWindow !== undefined) windowMs('sfpWindow', o.sfpWindow);
  if (o.sfpModel !== undefined) oneOf('sfpModel', o.sfpModel, ['two-phase', 'free']);
  if (o.fitEnd !== undefined) oneOf('fitEnd', o.fitEnd, ['slowest-arrival', 'window']);
  if (o.support !== undefined) oneOf('support', o.support, ['gcv', 'grid']);
  if (o.sfpRefine !== undefined && typeof o.sfpRefine !== 'boolean')
    throw new OptionError(`invalid sfpRefine: ${shown(o.sfpRefine)}; must be true or false`);
  if (o.sfpSmoothing !== undefined && o.sfpSmoothing !== 'gcv') {
    finite('sfpSmoothing', o.sfpSmoothing);
    if (!(o.sfpSmoothing >= 0)) throw new OptionError(`invalid sfpSmoothing: ${o.sfpSmoothing}; must be >= 0`);
  }
  if (o.amplitudeExponent !== undefined) finite('amplitudeExponent', o.amplitudeExponent);
  if (o.durationExponent !== undefined) finite('durationExponent', o.durationExponent);
  if (o.referenceVelocity !== undefined) positive('referenceVelocity', o.referenceVelocity, 'm/s');
  if (o.bipolarSeparationMm !== undefined) {
    finite('bipolarSeparationMm', o.bipolarSeparationMm, 'mm');
    if (!(o.bipolarSeparationMm >= 0))
      throw new OptionError(`invalid bipolarSeparationMm: ${o.bipolarSeparationMm} mm; must be >= 0 (0 = monophasic)`);
  }
  if (o.utilisationMs !== undefined) finite('utilisationMs', o.utilisationMs, 'ms');
  if (o.drift !== undefined) oneOf('drift', o.drift, ['offset', 'linear', 'quadratic']);
  if (o.artifactTauMs !== undefined) {
    if (!Array.isArray(o.artifactTauMs))
      throw new OptionError(
        `invalid artifactTauMs: ${shown(o.artifactTauMs)}; must be an array of time constants in ms`,
      );
    o.artifactTauMs.forEach((x, i) => positive(`artifactTauMs[${i}]`, x, 'ms'));
  }
  if (o.humHz !== undefined && o.humHz !== 'detect') {
    if (!Array.isArray(o.humHz))
      throw new OptionError(
        `invalid humHz: ${shown(o.humHz)}; must be "detect" or an array of frequencies in Hz, e.g. [50, 100, 150]`,
      );
    o.humHz.forEach((x, i) => positive(`humHz[${i}]`, x, 'Hz'));
  }
  if (o.noiseWindow !== undefined) windowMs('noiseWindow', o.noiseWindow);
  if (o.iterations !== undefined) integerIn('iterations', o.iterations, 1, 10000);
  if (o.tolerance !== undefined) positive('tolerance', o.tolerance);
  if (o.lambda !== undefined && o.lambda !== 'gcv') {
    positive('lambda', o.lambda);
  }
  if (o.alternationLambda !== undefined) positive('alternationLambda', o.alternationLambda);
  if (o.bootstrap !== undefined) integerIn('bootstrap', o.bootstrap, 0, 100000);
  if (o.seed !== undefined) integerIn('seed', o.seed, 0, 2 ** 32 - 1);
  if (o.temperatureC !== undefined) finite('temperatureC', o.temperatureC, 'C');
  if (o.method === 'two-distance' && (o.durationExponent ?? 0) !== 0)
    throw new OptionError(
      `invalid durationExponent: ${o.durationExponent} with method "two-distance"; the two-distance method needs the same waveform in every fibre (durationExponent 0); use method "decomposition"`,
    );
  if (o.method === 'two-distance' && o.sfp !== undefined && o.sfp !== 'estimate')
    throw new OptionError(
      'invalid sfp with method "two-distance": the waveform cancels in that method; use method "decomposition" to give a potential',
    );
}

/**
 * Default velocity grid, log-spaced: every grid velocity's arrival x / v lies inside the fit window at every
 * distance, so that each is seen at all distances (the dispersion between distances is what separates the
 * velocities from the potential's shape): from x_max / (end - t_u) to the smallest x / (start_x - t_u) over the
 * distances (start_x the fit start at distance x), at most 200 m/s.
 */
export function velocityGrid(
  distances: number[],
  fit: [number, number],
  utilisationMs: number,
  K: number,
  range?: [number, number],
  starts?: number[],
): Float64Array {
  let lo: number, hi: number;
  if (range) [lo, hi] = range;
  else {
    const end = fit[1] - utilisationMs;
    lo = distances[distances.length - 1] / end;
    hi = 200;
    distances.forEach((x, i) => {
      const start = Math.max((starts?.[i] ?? fit[0]) - utilisationMs, 0.01);
      hi = Math.min(hi, x / start);
    });
    if (!(hi > lo * 1.5))
      throw new AnalysisError(
        `the fit window ${fmtW(fit)} and distances ${distances.join(', ')} mm give no velocity range (${fmt(lo)} to ${fmt(hi)} m/s); give velocityRange`,
      );
  }
  return Float64Array.from({ length: K }, (_, k) =>
    Math.exp(Math.log(lo) + (k * (Math.log(hi) - Math.log(lo))) / (K - 1)),
  );
}

/**
 * The first sample after the stimulus that is usable, per sweep, the latest over the sweeps: after the stimulus
 * pulse (condition pulseWidthMs; none: from t = 0) and after any run of samples held on the amplifier's rail (at
 * the sweep's own maximum or minimum) or blanked (equal consecutive values) that follows it.
 */
export function usableStartMs(set: SweepSet, sweeps: readonly number[]): number {
  const dt = set.dtMs;
  let latest = -Infinity;
  for (const s of sweeps) {
    const x = set.sweep(s);
    const pw = set.conditions[s].pulseWidthMs;
    const from = typeof pw === 'number' && pw > 0 ? pw : 0;
    let i = Math.max(0, Math.ceil((from - set.t0Ms) / dt - 1e-9));
    let mx = -Infinity,
      mn = Infinity;
    for (const y of x) {
      if (y > mx) mx = y;
      if (y < mn) mn = y;
    }
    const tol = 1e-9 * Math.max(mx - mn, 1e-300);
    const stuck = (j: number) =>
      j < x.length &&
      (Math.abs(x[j] - mx) <= tol ||
        Math.abs(x[j] - mn) <= tol ||
        (j + 1 < x.length && x[j + 1] === x[j]) ||
        (j > 0 && x[j - 1] === x[j]));
    // a held run must start at (or continue from) the stimulus: scan from t = 0
    let j = Math.max(0, Math.ceil(-set.t0Ms / dt - 1e-9));
    while (j < i || stuck(j)) j++;
    i = Math.max(i, j);
    latest = Math.max(latest, set.timeAt(Math.min(i, set.nSamples - 1)));
  }
  return latest;
}

/** Bin edges (geometric midpoints) of a log grid. */
function edges(v: Float64Array): Float64Array {
  const K = v.length,
    e = new Float64Array(K + 1);
  for (let k = 1; k < K; k++) e[k] = Math.sqrt(v[k - 1] * v[k]);
  e[0] = (v[0] * v[0]) / e[1];
  e[K] = (v[K - 1] * v[K - 1]) / e[K - 1];
  return e;
}

/** Mass of each bin inside [lo, hi) (fraction of the bin's log width). */
function overlap(e: Float64Array, lo: number, hi: number): Float64Array {
  const K = e.length - 1,
    f = new Float64Array(K);
  for (let k = 0; k < K; k++) {
    const a = Math.max(Math.log(e[k]), Math.log(lo)),
      b = Math.min(Math.log(e[k + 1]), Math.log(hi));
    f[k] = b > a ? (b - a) / (Math.log(e[k + 1]) - Math.log(e[k])) : 0;
  }
  return f;
}

const quantile = (xs: number[], p: number) => {
  const s = xs.filter(Number.isFinite).sort((a, b) => a - b);
  if (!s.length) return NaN;
  const h = (s.length - 1) * p,
    i = Math.floor(h);
  return i + 1 < s.length ? s[i] + (h - i) * (s[i + 1] - s[i]) : s[i];
};

/**
 * Conduction-velocity distribution from supramaximal responses at two or more distances
 * (the sweeps' `distanceMm` condition), one condition at a time. See the module comment.
 * @throws OptionError for a bad option (naming it, with the nearest valid key for a typo);
 *   AnalysisError when the set cannot support the analysis (fewer than two distances,
 *   mixed conditions, a fit window without samples).
 * @example velocityDistribution(set.where({ temperatureC: 30 }), { fitWindow: [0.45, 18], velocityRange: [2.5, 120] })
 *   .percentile(50, 'number', 'A-alpha/beta')
 */
export function velocityDistribution(
  set: SweepSet,
  options: VelocityDistributionOptions = {},
): VelocityDistributionResult {
  validate(options);
  const D = velocityDistributionDefaults;
  const method = options.method ?? D.method;
  const K = options.nVelocities ?? D.nVelocities;
  // NaN start: detected per distance (usableStartMs)
  const fit: [number, number] = options.fitWindow ?? [NaN, set.timeAt(set.nSamples - 1)];
  const p = options.amplitudeExponent ?? D.amplitudeExponent;
  const q = options.durationExponent ?? D.durationExponent;
  const bip = options.bipolarSeparationMm ?? D.bipolarSeparationMm;
  const sfpGiven = options.sfp !== undefined && options.sfp !== 'estimate' ? options.sfp : null;
  const tu = sfpGiven ? (options.utilisationMs ?? D.utilisationMs) : 0;
  if (!sfpGiven && options.utilisationMs !== undefined && options.utilisationMs !== 0) {
    throw new OptionError(
      `invalid utilisationMs: ${options.utilisationMs} ms with an estimated potential; the estimated potential's time origin absorbs the utilisation delay (give sfp to set it)`,
    );
  }
  const drift = options.drift ?? D.drift;
  const driftDeg = { offset: 0, linear: 1, quadratic: 2 }[drift];
  const autoStart = options.fitWindow === undefined;
  const humOpt = options.humHz ?? D.humHz;
  const iterations = options.iterations ?? D.iterations;
  const tolerance = options.tolerance ?? D.tolerance;
  const lambdaOpt = options.lambda ?? D.lambda;
  const alternationLambda = options.alternationLambda ?? D.alternationLambda;
  const twoLambda = typeof options.lambda === 'number' ? options.lambda : D.twoDistanceLambda;
  const nBoot = options.bootstrap ?? D.bootstrap;
  const seed = options.seed ?? D.seed;
  const prep = prepare(set, fit, options.fitStartByDistance ?? {}, options.noiseWindow, method === 'two-distance');
  const { blocks, distances, notes, starts } = prep;
  // the fitted rows' spacing (every stride-th sample when the noise is correlated between neighbours, noiseStride)
  const rowDt = prep.stride * set.dtMs;
  if (autoStart) fit[0] = Math.min(...starts);
  // artifact: decays from the fit start; by default (detected start only) time constants from two samples to the
  // time from the stimulus to that distance's fit start, in factors of 2, free at each distance. A longer free decay
  // spans the rise of the earliest fibre waves at the nearest distance (the grid's fastest velocity arrives there at
  // the fit start) and trades with them (a longer tail is left to the drift terms). Diagnosis (notes/vdist-api.md):
  // with decays to twice the start, a 0.32 ms decay moved the devset's A-alpha/beta +8% (median) and, with 4 sweeps
  // per distance, its A-delta -60%; to the start, both within 3%, also with a longer or a biphasic artifact. The
  // shortest is two FITTED rows (rowDt): with every 2nd sample fitted (100 kHz, noiseStride) a decay over one row is
  // a free value of the first row, and it traded with the fastest bins (A-alpha/beta amplitude x5)
  const tausBy = starts.map((st) => {
    if (options.artifactTauMs) return options.artifactTauMs;
    const out: number[] = [];
    if (autoStart) for (let tau = 2 * rowDt; tau <= st + 1e-12; tau *= 2) out.push(tau);
    return out;
  });
  const taus = [...new Set(tausBy.flat())].sort((a, b) => a - b);
  const v = velocityGrid(distances, fit, tu, K, options.velocityRange, starts);
  const vRef = options.referenceVelocity ?? Math.sqrt(v[0] * v[K - 1]);
  const model: Model = { v, vRef, q, bipolarMm: bip, utilisationMs: tu };
  const W = fit[1] - fit[0];
  const sw = options.sfpWindow ?? [D.sfpWindowFraction[0] * W, D.sfpWindowFraction[1] * W];
  // each distance is fitted only as long as a grid velocity's potential can still be there: to t_u + x / v_min + the
  // potential's length (its support, stretched as v^-q at v_min). Later samples at the nearer distances hold waves
  // slower than the grid (at the far distance they arrive after the window), which the grid would take up as
  // spurious slow mass (e.g. the C wave at the end of a short sweep at the nearer electrode)
  const fitEnd = options.fitEnd ?? D.fitEnd;
  if (method === 'decomposition' && fitEnd === 'slowest-arrival') {
    const sfpEnd = sfpGiven ? sfpGiven.t0Ms + (sfpGiven.samples.length - 1) * sfpGiven.dtMs : sw[1];
    const stretch = Math.pow(v[0] / vRef, -q);
    blocks.forEach((bl, i) => {
      const tEnd = tu + (bl.distanceMm + bip) / v[0] + Math.max(sfpEnd, 0) * stretch;
      let m = bl.t.length;
      while (m > 11 && bl.t[m - 1] > tEnd + 1e-9) m--;
      if (m === bl.t.length) return;
      bl.t = bl.t.slice(0, m);
      bl.y = bl.y.slice(0, m);
      prep.perSweep[i] = prep.perSweep[i].map((x) => x.slice(0, m));
    });
  }
  // given hum frequencies are modelled from the start (also while the potential is estimated: a potential free on
  // nodes would otherwise take up hum); 'detect' chooses them once a two-phase potential is known (below)
  const baseHz = Array.isArray(humOpt) ? humOpt : [];
  const family = (f: number) => [f, 2 * f, 3 * f].filter((x) => x < set.fs / 2);
  // 'detect' considers a mains frequency only when every distance's fit spans at least half its cycle: over a shorter
  // span a sinusoid is a smooth curve the drift terms and the waves already span, so the hum cannot be identified
  // (and GCV would trade it with the response); what such a span holds of the hum is left to the drift terms
  const spanMs = Math.min(...blocks.map((bl) => bl.t[bl.t.length - 1] - bl.t[0]));
  const humCandidates = [50, 60].filter((f) => spanMs >= 500 / f).map(family);
  const basesFor = (hz: number[]) =>
    blocks.map((bl, i) => nuisanceBasis(bl.t, bl.sigma, driftDeg, tausBy[i], hz, bl.t[0]));
  let bases = basesFor(baseHz);
  let nNuis = bases.reduce((s, b) => s + b.length, 0);
  const nRows = blocks.reduce((s, b) => s + b.t.length, 0);
  let b = dataVector(blocks, bases);
  const R = secondDifferencePenalty(K);
  const h = Math.max(rowDt, (sw[1] - sw[0]) / 200);
  const J = Math.floor((sw[1] - sw[0]) / h) + 1;
  const smoothingOpt = options.sfpSmoothing ?? D.sfpSmoothing;
  const sfpSmoothingGcv = smoothingOpt === 'gcv';
  const smoothing = sfpSmoothingGcv ? 1e-3 : (smoothingOpt as number);
  let smoothingNow = smoothing;
  const sfpModel = options.sfpModel ?? D.sfpModel;
  const sfpRefine = options.sfpRefine ?? D.sfpRefine;
  const supportOpt = options.support ?? D.support;

  let sfp!: Sfp;
  let u!: Float64Array;
  let sol!: { u: Float64Array; lambda: number; gcv: number; df: number };
  let iter = 0,
    converged = true;
  let shape: SfpShape | null = null;
  type ShapeFit = { sfp: Sfp; u: Float64Array; sol: typeof sol; converged: boolean };
  let shapeFit: ShapeFit | null = null;
  let sfpDf = NaN;
  let refined = false;
  /** the two-phase shape search again from its result (after hum was detected), or null */
  let reSearch: (() => void) | null = null;
  /** the weighted residual sum of squares of a fit against its chi-square expectation n - p (p: amplitudes' df,
   * nuisance, 5 shape parameters), in SDs sqrt(2 (n - p)): the discrepancy principle's statistic */
  const discrepancy = (f: { sol: { gcv: number; df: number } }) => {
    const nu = nRows - f.sol.df - nNuis - 5;
    const rss = (f.sol.gcv * (nRows - f.sol.df - nNuis) ** 2) / nRows;
    return { nu, rss, z: nu > 0 ? (rss - nu) / Math.sqrt(2 * nu) : Infinity };
  };
  const discrepancyZ = (f: { sol: { gcv: number; df: number } }) => discrepancy(f).z;
  const choose = (G: Float64Array, c: Float64Array, bb: number) =>
    lambdaOpt === 'gcv'
      ? gcvSolve(G, c, bb, R, K, nRows, nNuis)
      : (() => {
          const scale = trG(G, K) / trG(R, K);
          const s = solveU(G, c, bb, R, K, (lambdaOpt as number) * scale);
          const dof = nRows - s.df - nNuis;
          return {
            u: s.u,
            lambda: lambdaOpt as number,
            gcv: dof > 0 ? (nRows * s.rss) / (dof * dof) : Infinity,
            df: s.df,
          };
        })();
  if (sfpGiven) {
    const g = Float64Array.from(sfpGiven.samples as ArrayLike<number>);
    let pk = 0;
    for (const x of g) if (Math.abs(x) > Math.abs(pk)) pk = x;
    if (pk === 0) throw new OptionError('invalid sfp.samples: all zero');
    for (let i = 0; i < g.length; i++) g[i] /= Math.abs(pk);
    sfp = { tau0: sfpGiven.t0Ms, h: sfpGiven.dtMs, g };
    const A = designMatrix(blocks, bases, model, sfp);
    const gg = gram(A, nRows, K, b);
    sol = choose(gg.G, gg.c, gg.bb);
    u = sol.u;
  } else if (method === 'decomposition' && sfpModel === 'two-phase') {
    // the potential's four shape parameters (and its sign) by variable projection: for each shape the amplitudes are
    // the non-negative penalised least-squares solution, and the shape minimises what is left (Golub & Pereyra 1973)
    const lamRel = lambdaOpt === 'gcv' ? alternationLambda : (lambdaOpt as number);
    const maxStep = set.dtMs;
    const toShape = (x: number[], sign: number): SfpShape => ({
      shift: x[0],
      rise: Math.exp(x[1]),
      after: Math.exp(x[1]) * (2 + Math.exp(x[2])),
      ratio: 1 / (1 + Math.exp(-x[3])),
      n: Math.min(8, Math.max(0.5, Math.exp(x[4]))),
      sign,
    });
    const objective = (x: number[], sign: number) => {
      const gg = gram(designMatrix(blocks, bases, model, shapeSfp(toShape(x, sign), maxStep)), nRows, K, b);
      const scale = trG(gg.G, K) / trG(R, K);
      if (!(scale > 0)) return Infinity;
      const sU = solveU(gg.G, gg.c, gg.bb, R, K, lamRel * scale, false);
      let pen = 0;
      for (let k = 0; k + 2 < K; k++) pen += (sU.u[k] - 2 * sU.u[k + 1] + sU.u[k + 2]) ** 2;
      return sU.rss + lamRel * scale * pen;
    };
    // start: the best of rise times from 2 samples to 1/20 of the fit window in factors of 2, either sign
    let best = { x: [0, 0, Math.log(3), Math.log(0.1 / 0.9), Math.log(2)], sign: 1, f: Infinity };
    for (let rise = 2 * set.dtMs; rise <= Math.max(W / 20, 4 * set.dtMs); rise *= 2)
      for (const sign of [1, -1]) {
        const x = [0, Math.log(rise), Math.log(3), Math.log(0.1 / 0.9), Math.log(2)];
        const f = objective(x, sign);
        if (f < best.f) best = { x, sign, f };
      }
    // the shape search from x0 with the current nuisance (bases, b: the closure reads them when called)
    const search = (x0: number[], sign: number) => {
      const nm = nelderMead(
        (x) => objective(x, sign),
        x0,
        [Math.exp(x0[1]) / 2, 0.5, 0.7, 1, 0.3],
        iterations * 4,
        1e-7,
      );
      iter += nm.evaluations;
      converged = nm.evaluations < iterations * 4;
      shape = toShape(nm.x, sign);
      sfp = shapeSfp(shape, maxStep);
      const gg = gram(designMatrix(blocks, bases, model, sfp), nRows, K, b);
      sol = choose(gg.G, gg.c, gg.bb);
      u = sol.u;
      shapeFit = { sfp, u, sol, converged };
      return nm.x;
    };
    const x1 = search(best.x, best.sign);
    reSearch = () => search(x1, best.sign);
  }
  // hum 'detect' before a refinement on nodes: none, 50 or 60 Hz with two harmonics, whichever GCV prefers with the
  // two-phase potential fixed; the refinement and its comparison with the two-phase potential then model it
  let hzEstimate: number[] = baseHz;
  if (humOpt === 'detect' && shapeFit && method === 'decomposition') {
    for (const hz of humCandidates) {
      const bF = basesFor(hz);
      const nF = bF.reduce((s, x) => s + x.length, 0);
      const bv = dataVector(blocks, bF);
      const gg = gram(designMatrix(blocks, bF, model, sfp), nRows, K, bv);
      const keep = nNuis;
      nNuis = nF;
      const s2 = choose(gg.G, gg.c, gg.bb);
      const sf = shapeFit as ShapeFit;
      if (s2.gcv < sf.sol.gcv) {
        [bases, b, hzEstimate] = [bF, bv, hz];
        shapeFit = { ...sf, u: s2.u, sol: s2 };
        u = s2.u;
        sol = s2;
      } else nNuis = keep;
    }
    // hum found: the shape is searched again with the hum modelled. Searched without it, the potential's width and
    // after-phase trade with the hum: with 4 sweeps per distance (less hum averaged out) the devset's slow window
    // gave a two-phase fit 19.5 SD above the noise level, then a node refinement 3.9 ms wide (C p10 -66%)
    // The re-searched shape is kept when its fit reaches the noise level (below); otherwise the node refinement
    // starts from the first shape, as it was developed (devset fast window: from the re-searched shape the refinement
    // ended with A-delta p50 -67%, from the first one within 2%)
    if (hzEstimate.length && reSearch) {
      const before = { shape, sfp, u, sol, converged, shapeFit };
      (reSearch as () => void)();
      if (!(discrepancyZ(shapeFit as ShapeFit) <= 3)) ({ shape, sfp, u, sol, converged, shapeFit } = before);
    }
  }
  // the discrepancy principle (Morozov 1966): the two-phase potential is refined on nodes only when its fit leaves
  // more than the noise, i.e. the weighted residual sum of squares (rows weighted by 1/noise SD from the quiet
  // window) exceeds its expectation n - p by more than 3 SD of a chi-square (sqrt(2 (n - p))). A fit already at the
  // noise level has nothing for ~180 more node values to explain but the noise: with 4 sweeps per distance GCV kept
  // such a refinement on the devset's slow window (potential 3.9 ms wide, C p10 -66%); the fast window's two-phase
  // fit leaves chi2/sample 2.0 and 1.5 (refined: 0.73, 0.99)
  let sfpRefineSkipped = false;
  if (shapeFit && sfpRefine && method === 'decomposition' && !notes.some((x) => x.startsWith('no quiet window'))) {
    const { nu, rss, z } = discrepancy(shapeFit as ShapeFit);
    if (nu > 0 && z <= 3) {
      sfpRefineSkipped = true;
      notes.push(
        `the two-phase potential was kept without refining it on nodes: its fit leaves the noise level ` +
          `(weighted residual sum of squares ${rss.toFixed(0)} for ${nu.toFixed(0)} degrees of freedom, ` +
          `${z.toFixed(1)} SD from it; discrepancy principle)`,
      );
    } else if (nu > 0)
      notes.push(
        `the two-phase potential's fit leaves more than the noise (weighted residual sum of squares ` +
          `${rss.toFixed(0)} for ${nu.toFixed(0)} degrees of freedom, ${z.toFixed(1)} SD above it): refinement on nodes tried`,
      );
  }
  if (!sfpGiven && !sfpRefineSkipped && (method !== 'decomposition' || sfpModel !== 'two-phase' || sfpRefine)) {
    const initU = shape ? Float64Array.from(u) : null;
    // refining a two-phase potential: the amplitudes are held to the support GCV gives for that potential, so that
    // empty ends of the grid cannot trade with the potential's after-phase while it is refined
    let est: [number, number] = [0, K];
    if (shape && supportOpt === 'gcv') {
      const g0 = gram(designMatrix(blocks, bases, model, sfp), nRows, K, b);
      const abs = (lambdaOpt === 'gcv' ? alternationLambda : (lambdaOpt as number)) * (trG(g0.G, K) / trG(R, K));
      const sp = supportByGcv(g0.G, g0.c, g0.bb, R, K, abs, nRows, nNuis);
      est = [sp.lo, sp.hi];
    }
    if (method === 'two-distance') {
      u = twoDistanceSolve(blocks, model, twoLambda).u;
    } else u = initU ?? new Float64Array(K).fill(1 / K);
    let lamRel = lambdaOpt === 'gcv' ? alternationLambda : (lambdaOpt as number);
    let prev = Float64Array.from(u);
    const maxIt = method === 'two-distance' ? 1 : iterations;
    converged = false;
    sol = { u, lambda: lamRel, gcv: NaN, df: NaN };
    let s0: Sfp | null = null;
    const bNorm2 = b.reduce((acc, x) => acc + x * x, 0);
    let prevG: Float64Array | null = null;
    for (iter = 1; iter <= maxIt; iter++) {
      const pickSmoothing = sfpSmoothingGcv && (iter === 1 || iter === 5);
      const st = sfpStep(
        blocks,
        bases,
        model,
        u,
        b,
        sw[0],
        h,
        J,
        smoothingNow,
        pickSmoothing ? { n: nRows, fixedDf: nNuis + (Number.isFinite(sol.df) ? sol.df : 0), bb: bNorm2 } : undefined,
      );
      if (!st)
        throw new AnalysisError(
          'the single-fibre potential could not be estimated (no signal in the fit window at the grid velocities); check fitWindow, velocityRange and sfpWindow',
        );
      s0 = st.sfp;
      sfpDf = st.df;
      smoothingNow = st.smoothing;
      const A = designMatrix(blocks, bases, model, s0);
      const gg = gram(A, nRows, K, b);
      if (method === 'two-distance') {
        // amplitudes in signal units: scale the two-distance solution by least squares
        let num = 0,
          den = 0;
        for (let i = 0; i < K; i++) {
          num += gg.c[i] * u[i];
          let s = 0;
          for (let j = 0; j < K; j++) s += gg.G[i * K + j] * u[j];
          den += u[i] * s;
        }
        const a = den > 0 ? num / den : 0;
        u = u.map((x) => x * a);
        sol = { u, lambda: twoLambda, gcv: NaN, df: NaN };
        converged = true;
        break;
      }
      const scale = trG(gg.G, K) / trG(R, K);
      if (est[0] > 0 || est[1] < K) {
        const sp = subProblem(gg.G, gg.c, R, K, est[0], est[1]);
        u = new Float64Array(K);
        u.set(solveU(sp.G, sp.c, gg.bb, sp.R, sp.m, lamRel * scale, false).u, est[0]);
      } else u = solveU(gg.G, gg.c, gg.bb, R, K, lamRel * scale, false).u;
      // line-search extrapolation of the alternation (as used to speed up alternating least squares,
      // Bro 1998): try (u, g) + a ((u, g) - previous) for a = 2, 4, 8 and keep the best objective
      if (prevG && iter >= 3) {
        const objective = (uu: Float64Array, gs: Sfp) => {
          const Aa = designMatrix(blocks, bases, model, gs);
          let f = 0;
          for (let r = 0; r < nRows; r++) {
            let m = 0;
            for (let k = 0; k < K; k++) m += Aa[r * K + k] * uu[k];
            f += (b[r] - m) ** 2;
          }
          let pen = 0;
          for (let k = 0; k + 2 < K; k++) pen += (uu[k] - 2 * uu[k + 1] + uu[k + 2]) ** 2;
          return f + lamRel * scale * pen;
        };
        let best = objective(u, s0),
          bestU: Float64Array | null = null;
        for (const a of [2, 4, 8]) {
          const ua = Float64Array.from(u, (x, k) => Math.max(0, prev[k] + a * (x - prev[k])));
          const ga = Float64Array.from(s0.g, (x, j) => prevG![j] + a * (x - prevG![j]));
          let pk = 0;
          for (const x of ga) if (Math.abs(x) > pk) pk = Math.abs(x);
          if (!(pk > 0)) continue;
          for (let j = 0; j < J; j++) ga[j] /= pk;
          for (let k = 0; k < K; k++) ua[k] *= pk;
          const f = objective(ua, { tau0: s0.tau0, h: s0.h, g: ga });
          if (f < best) {
            best = f;
            bestU = ua;
          } else break;
        }
        if (bestU) u = bestU;
      }
      prevG = Float64Array.from(s0.g);
      let dn = 0,
        dd = 0;
      for (let k = 0; k < K; k++) {
        dn += (u[k] - prev[k]) ** 2;
        dd += u[k] ** 2;
      }
      prev = Float64Array.from(u);
      if (iter >= 5 && dd > 0 && Math.sqrt(dn / dd) < tolerance) {
        converged = true;
        break;
      }
    }
    if (iter > maxIt) iter = maxIt;
    // the final amplitudes with the potential fixed, smoothness weight by GCV (or as given)
    if (method !== 'two-distance') {
      const gg = gram(designMatrix(blocks, bases, model, s0!), nRows, K, b);
      sol = choose(gg.G, gg.c, gg.bb);
      u = sol.u;
      lamRel = sol.lambda;
    }
    if (iter > maxIt) iter = maxIt;
    sfp = s0!;
    refined = true;
    // the node refinement of a two-phase potential is kept only when it pays for its parameters: generalised
    // cross-validation with the potential's own degrees of freedom counted (5 shape parameters; the effective number
    // of the penalised node values, sfpStep), the amplitudes' smoothness weight by GCV for each potential
    if (shapeFit && method === 'decomposition') {
      const withSfp = (g: number, df: number, extra: number) => {
        const d0 = nRows - df - nNuis,
          d1 = d0 - extra;
        return d1 > 0 ? g * (d0 / d1) ** 2 : Infinity;
      };
      const gRefined = withSfp(sol.gcv, sol.df, sfpDf);
      const gShape = withSfp(shapeFit.sol.gcv, shapeFit.sol.df, 5);
      if (!(gRefined < gShape)) {
        notes.push(
          `the two-phase potential was kept: refining it on nodes (${sfpDf.toFixed(0)} effective parameters) ` +
            `did not lower the generalised cross-validation score (${gRefined.toPrecision(4)} vs ${gShape.toPrecision(4)})`,
        );
        ({ sfp, u, sol, converged } = shapeFit);
        refined = false;
      }
    }
  }
  // final amplitudes with the potential fixed: mains hum (given, or detected: none, 50 or 60 Hz with two harmonics,
  // whichever GCV prefers; added only now, as with the potential free it would trade with its after-phase), the
  // smoothness weight and the support of the distribution by GCV (bins outside held at zero)
  const humSets: number[][] = humOpt === 'detect' ? [[], ...humCandidates] : [humOpt];
  const Araw = designMatrix(blocks, bases, model, sfp, false);
  const scaleOf = (GG: Float64Array, RR: Float64Array, m: number) => trG(GG, m) / trG(RR, m);
  interface Final {
    hz: number[];
    bases: Float64Array[][];
    nNuis: number;
    A: Float64Array;
    G: Float64Array;
    u: Float64Array;
    sol: typeof sol;
    lamAbs: number;
    lo: number;
    hi: number;
  }
  let fin: Final | null = null;
  for (const hz of humSets) {
    const same = hz.join() === hzEstimate.join();
    const bF = same ? bases : basesFor(hz);
    const nF = bF.reduce((a, x) => a + x.length, 0);
    const bv = same ? b : dataVector(blocks, bF);
    const AF = designMatrix(blocks, bF, model, sfp);
    const gF = gram(AF, nRows, K, bv);
    const full = scaleOf(gF.G, R, K);
    const solve = (GG: Float64Array, cc: Float64Array, RR: Float64Array, m: number) => {
      if (lambdaOpt === 'gcv') {
        const s2 = gcvSolve(GG, cc, gF.bb, RR, m, nRows, nF);
        const abs = s2.lambda * scaleOf(GG, RR, m);
        return { u: s2.u, lambda: abs / full, gcv: s2.gcv, df: s2.df, abs };
      }
      const abs = (lambdaOpt as number) * full;
      const s2 = solveU(GG, cc, gF.bb, RR, m, abs);
      const dof = nRows - s2.df - nF;
      return {
        u: s2.u,
        lambda: lambdaOpt as number,
        gcv: dof > 0 ? (nRows * s2.rss) / (dof * dof) : Infinity,
        df: s2.df,
        abs,
      };
    };
    let sF = solve(gF.G, gF.c, R, K);
    let uF = sF.u;
    let a = 0,
      z = K;
    if (supportOpt === 'gcv' && method === 'decomposition') {
      ({ lo: a, hi: z } = supportByGcv(gF.G, gF.c, gF.bb, R, K, sF.abs, nRows, nF));
      if (a > 0 || z < K) {
        const sp = subProblem(gF.G, gF.c, R, K, a, z);
        sF = solve(sp.G, sp.c, sp.R, sp.m);
        uF = new Float64Array(K);
        uF.set(sF.u, a);
      }
    }
    if (method === 'two-distance' && !sfpGiven) {
      // the two-distance amplitudes are kept (scaled); only the nuisance changes
      uF = u;
      sF = { ...sF, u, lambda: sol.lambda };
    }
    const cand: Final = {
      hz,
      bases: bF,
      nNuis: nF,
      A: AF,
      G: gF.G,
      u: uF,
      sol: { u: uF, lambda: sF.lambda, gcv: sF.gcv, df: sF.df },
      lamAbs: sF.abs,
      lo: a,
      hi: z,
    };
    if (!fin || cand.sol.gcv < fin.sol.gcv) fin = cand;
  }
  const { A, G, lamAbs, lo, hi } = fin!;
  const finalBases = fin!.bases;
  u = fin!.u;
  sol = fin!.sol;
  const subBoot = subProblem(G, atb(A, nRows, K, dataVector(blocks, finalBases)), R, K, lo, hi);
  const residuals: Row[] = [];
  const reconstruction: VelocityDistributionResult['reconstruction'] = [];
  let off = 0;
  blocks.forEach((bl, i) => {
    const m = bl.t.length;
    const fitv = new Float64Array(m);
    for (let r = 0; r < m; r++) {
      let s = 0;
      for (let k = 0; k < K; k++) s += Araw[(off + r) * K + k] * u[k];
      fitv[r] = s * bl.sigma;
    }
    // nuisance: least squares of (y - model) on the block's basis
    const res = new Float64Array(m);
    for (let r = 0; r < m; r++) res[r] = (bl.y[r] - fitv[r]) / bl.sigma;
    const before = Float64Array.from(res);
    for (const e of finalBases[i]) {
      let d = 0;
      for (let r = 0; r < m; r++) d += e[r] * res[r];
      for (let r = 0; r < m; r++) res[r] -= d * e[r];
    }
    for (let r = 0; r < m; r++) fitv[r] += (before[r] - res[r]) * bl.sigma;
    let ss = 0,
      sy = 0,
      mean = 0;
    for (let r = 0; r < m; r++) mean += bl.y[r] / m;
    for (let r = 0; r < m; r++) {
      ss += (res[r] * bl.sigma) ** 2;
      sy += (bl.y[r] - mean) ** 2;
    }
    reconstruction.push({ distanceMm: bl.distanceMm, t: bl.t, y: bl.y, fit: fitv });
    residuals.push({
      distance_mm: bl.distanceMm,
      sweeps: prep.perSweep[i].length,
      samples: m,
      fit_from_ms: bl.t[0],
      fit_to_ms: bl.t[m - 1],
      rms_data: Math.sqrt(sy / m),
      rms_residual: Math.sqrt(ss / m),
      relative_residual: Math.sqrt(ss / Math.max(sy, 1e-300)),
      noise_sd: notes.some((n) => n.startsWith('no quiet window')) ? null : bl.sigma,
      chi2_per_sample: notes.some((n) => n.startsWith('no quiet window')) ? null : ss / (bl.sigma * bl.sigma) / m,
      units: set.units,
    });
    off += m;
  });
  // bootstrap over sweeps (potential and lambda fixed)
  const rng = new Rng(seed);
  const repsU: Float64Array[] = [];
  for (let rep = 0; rep < nBoot; rep++) {
    const ys = prep.perSweep.map((sw2) => {
      const m = sw2[0].length,
        y = new Float64Array(m);
      for (let j = 0; j < sw2.length; j++) {
        const pick = sw2[Math.floor(rng.uniform() * sw2.length)];
        for (let r = 0; r < m; r++) y[r] += pick[r] / sw2.length;
      }
      return y;
    });
    const bs = dataVector(blocks, finalBases, ys);
    const c = atb(A, nRows, K, bs);
    const ur = new Float64Array(K);
    ur.set(solveU(subBoot.G, c.slice(lo, hi), 0, subBoot.R, subBoot.m, lamAbs, false).u, lo);
    repsU.push(ur);
  }
  // distributions
  const e = edges(v);
  const numberOf = (uu: Float64Array) => Float64Array.from(uu, (x, k) => x / Math.pow(v[k] / vRef, p));
  const nTot = (x: Float64Array) => x.reduce((s, y) => s + y, 0);
  const nu = numberOf(u);
  const repsN = repsU.map(numberOf);
  const norm = (x: Float64Array) => {
    const s = nTot(x);
    return Float64Array.from(x, (y) => (s > 0 ? y / s : NaN));
  };
  const band = (reps: Float64Array[], k: number, lo: boolean) =>
    quantile(
      reps.map((r) => norm(r)[k]),
      lo ? 0.025 : 0.975,
    );
  const grid: Row[] = [];
  const nN = norm(nu),
    nA = norm(u);
  for (let k = 0; k < K; k++) {
    grid.push({
      velocity_m_s: v[k],
      bin_low_m_s: e[k],
      bin_high_m_s: e[k + 1],
      amplitude: u[k],
      amplitude_fraction: nA[k],
      amplitude_fraction_ci95_low: nBoot ? band(repsU, k, true) : null,
      amplitude_fraction_ci95_high: nBoot ? band(repsU, k, false) : null,
      number_fraction: nN[k],
      number_fraction_ci95_low: nBoot ? band(repsN, k, true) : null,
      number_fraction_ci95_high: nBoot ? band(repsN, k, false) : null,
      number_density_per_m_s: nN[k] / (e[k + 1] - e[k]),
      units: set.units,
    });
  }
  // classes
  const preset = resolvePreset(options.classes ?? D.classes);
  const temps = new Set(set.conditions.map((c) => c.temperatureC));
  const T =
    options.temperatureC ??
    (temps.size === 1 && typeof [...temps][0] === 'number' ? ([...temps][0] as number) : undefined);
  const classRanges = preset.classes.map((c) => ({ name: c.name, range: scaledRange(c, preset, T) }));
  // Is the summed PEAK amplitude of a class identified? The compound wave of a class is its arrival-time spread
  // convolved with the potential; when the potential's main phase (area over peak, w) is short against the spread
  // (SD s of the class's amplitude-weighted arrival times x / v at the nearest distance), the wave fixes the
  // amplitudes times the potential's area, and the width, hence the peak, only through a small term (the wave's
  // variance is about s^2 + w^2/12 for a box of length w: under 2% of it for w < s / 2). Diagnosis on the devset's C
  // fibres (notes/vdist-api.md): w 0.5 ms against s 3.4 ms; estimated potentials 0.7-1.0 ms wide with generalised
  // cross-validation scores equal within 0.1%, summed peak amplitude -27% to -58%. Flagged for an estimated potential
  // (a given one sets the width): the class's amplitude is then not comparable with classes fitted elsewhere.
  const sfpWidthMs = (() => {
    let pk = 0,
      area = 0;
    for (const g of sfp.g) if (Math.abs(g) > Math.abs(pk)) pk = g;
    for (const g of sfp.g) if (g * pk > 0) area += (g / pk) * sfp.h;
    return area;
  })();
  const nearMm = distances[0];
  const amplitudeScaleNote = (uc: Float64Array): string | null => {
    if (sfpGiven || method !== 'decomposition') return null;
    let sw0 = 0,
      m1 = 0,
      m2 = 0;
    for (let k = 0; k < K; k++) {
      const tk = nearMm / v[k];
      sw0 += uc[k];
      m1 += uc[k] * tk;
      m2 += uc[k] * tk * tk;
    }
    if (!(sw0 > 0)) return null;
    const sd = Math.sqrt(Math.max(m2 / sw0 - (m1 / sw0) ** 2, 0));
    if (!(sfpWidthMs < sd / 2)) return null;
    return (
      `summed peak amplitude not identified: arrivals spread over ${fmt(sd)} ms (SD at ${fmt(nearMm)} mm) against ` +
      `an estimated potential ${fmt(sfpWidthMs)} ms long (area over peak); the wave fixes amplitude times the ` +
      "potential's area, not its peak, so this class's amplitude is not comparable with classes fitted elsewhere " +
      '(give sfp to fix the potential)'
    );
  };
  const classes: Row[] = [];
  const percentiles: Row[] = [];
  const pcts = D.percentiles;
  const scopes: { name: string; w: Float64Array | null; range: [number, number] | null }[] = [
    { name: 'all', w: null, range: null },
  ];
  for (const c of classRanges) scopes.push({ name: c.name, w: overlap(e, c.range[0], c.range[1]), range: c.range });
  const masked = (x: Float64Array, w: Float64Array | null) => (w ? Float64Array.from(x, (y, k) => y * w[k]) : x);
  for (const sc of scopes) {
    for (const [weighting, point, reps] of [
      ['number', nu, repsN],
      ['amplitude', u, repsU],
    ] as const) {
      const mp = masked(point, sc.w);
      if (!(nTot(mp) > 0)) continue;
      for (const pc of pcts) {
        let est = percentile(v, mp, pc / 100);
        if (sc.range) est = Math.min(Math.max(est, sc.range[0]), sc.range[1]);
        const rv = reps.map((r) => {
          const x = percentile(v, masked(r, sc.w), pc / 100);
          return sc.range ? Math.min(Math.max(x, sc.range[0]), sc.range[1]) : x;
        });
        percentiles.push({
          scope: sc.name,
          weighting,
          percentile: pc,
          velocity_m_s: est,
          ci95_low_m_s: nBoot ? quantile(rv, 0.025) : null,
          ci95_high_m_s: nBoot ? quantile(rv, 0.975) : null,
        });
      }
    }
    if (!sc.range) continue;
    const frac = (x: Float64Array) => nTot(masked(x, sc.w)) / nTot(x);
    const st: string[] = [];
    if (sc.range[1] <= v[0] || sc.range[0] >= v[K - 1])
      st.push(`range outside the velocity grid (${fmt(v[0])}-${fmt(v[K - 1])} m/s): not measured here`);
    else if (sc.range[0] < e[0] || sc.range[1] > e[K])
      st.push(`range only partly inside the velocity grid (${fmt(e[0])}-${fmt(e[K])} m/s)`);
    const scaleNote = amplitudeScaleNote(masked(u, sc.w));
    if (scaleNote) st.push(scaleNote);
    classes.push({
      class: sc.name,
      range_low_m_s: sc.range[0],
      range_high_m_s: sc.range[1],
      number_fraction: st[0]?.startsWith('range outside') ? null : frac(nu),
      number_fraction_ci95_low: nBoot ? quantile(repsN.map(frac), 0.025) : null,
      number_fraction_ci95_high: nBoot ? quantile(repsN.map(frac), 0.975) : null,
      amplitude_fraction: st[0]?.startsWith('range outside') ? null : frac(u),
      amplitude_fraction_ci95_low: nBoot ? quantile(repsU.map(frac), 0.025) : null,
      amplitude_fraction_ci95_high: nBoot ? quantile(repsU.map(frac), 0.975) : null,
      status: st.length ? st.join('; ') : 'ok',
    });
  }
  const sfpRows: Row[] = Array.from(sfp.g, (g, j) => ({
    time_from_arrival_ms: sfp.tau0 + j * sfp.h,
    sfp: g,
    velocity_m_s: vRef,
  }));
  // status
  const st: string[] = [];
  if (!converged)
    st.push(
      refined || !shape
        ? `amplitudes and potential did not settle in ${iterations} alternations`
        : `the two-phase potential's shape search stopped at its limit of ${iterations * 4} evaluations`,
    );
  const tot = nTot(u);
  const edgeMass = (u[0] + u[1] + u[K - 2] + u[K - 1]) / Math.max(tot, 1e-300);
  if (!(tot > 0)) st.push('no fibres found: the distribution is empty');
  else if (edgeMass > 0.05)
    st.push(
      `${(100 * edgeMass).toFixed(0)}% of the amplitude lies in the two outermost bins at either end of the grid: the distribution may extend beyond ${fmt(v[0])}-${fmt(v[K - 1])} m/s`,
    );
  if (lambdaOpt === 'gcv' && sol.lambda !== undefined && (sol.lambda <= 1e-8 || sol.lambda >= 1e2))
    st.push('the GCV minimum lies at the edge of the smoothness grid');
  const fitInfo: VelocityDistributionFit = {
    method,
    lambda: sol.lambda,
    gcv: sol.gcv,
    df: sol.df,
    iterations: iter,
    converged,
    status: st.length ? st.join('; ') : 'ok',
    notes,
  };
  const step: Step = {
    verb: 'velocityDistribution',
    options: {
      method,
      distances: distances.map((d) => `${fmt(d)}`).join(', ') + ' mm',
      velocityRange: [v[0], v[K - 1]],
      nVelocities: K,
      fitWindow: fit,
      fitStartByDistance: options.fitStartByDistance ?? {},
      sfp: sfpGiven ? 'given' : 'estimate',
      sfpWindow: sw,
      sfpSmoothing: sfpSmoothingGcv ? 'gcv' : smoothing,
      sfpSmoothingUsed: smoothingNow,
      sfpModel,
      sfpRefine,
      sfpRefined: refined,
      sfpRefineSkipped,
      support: supportOpt,
      supportM_s: [Number(v[lo].toPrecision(4)), Number(v[hi - 1].toPrecision(4))],
      sfpShape: shape
        ? Object.fromEntries(Object.entries(shape as SfpShape).map(([k, x]) => [k, Number(x.toPrecision(4))]))
        : null,
      fitEnd: method === 'decomposition' ? fitEnd : 'window',
      fitEndMs: Object.fromEntries(
        blocks.map((bl) => [`${fmt(bl.distanceMm)} mm`, Number(bl.t[bl.t.length - 1].toPrecision(6))]),
      ),
      fitStartMs: Object.fromEntries(distances.map((d, i) => [`${fmt(d)} mm`, Number(starts[i].toPrecision(6))])),
      fitStart: autoStart ? 'detected' : 'given',
      fitStride: prep.stride,
      noiseDifferenceCorrelation: Number(prep.strideCorrelation.toPrecision(3)),
      amplitudeExponent: p,
      durationExponent: q,
      referenceVelocity: vRef,
      bipolarSeparationMm: bip,
      utilisationMs: tu,
      drift,
      artifactTauMs: taus.map((x) => Number(x.toPrecision(4))),
      humHz: humOpt,
      humHzUsed: fin!.hz,
      humHzWhileEstimating: hzEstimate,
      lambda: lambdaOpt,
      alternationLambda,
      chosenLambda: sol.lambda,
      bootstrap: nBoot,
      seed,
      twoDistanceLambda: twoLambda,
      classSource: `${preset.source}${T !== undefined ? `, scaled to ${T} C with Q10 ${preset.q10}` : ''}`,
    },
    version: VERSION,
  };
  return new VelocityDistributionResult(
    grid,
    percentiles,
    classes,
    residuals,
    sfpRows,
    reconstruction,
    fitInfo,
    set.units,
    { number: repsN, amplitude: repsU },
    [...set.history, step],
    set.sources,
  );
}

function trG(G: Float64Array, K: number): number {
  let s = 0;
  for (let i = 0; i < K; i++) s += G[i * K + i];
  return s;
}

/** The potential of the result at time s from arrival (ms), for plotting; 0 outside its support. */
export function sfpValue(result: VelocityDistributionResult, s: number): number {
  const rows = result.sfp;
  if (rows.length < 2) return 0;
  const tau0 = rows[0].time_from_arrival_ms as number,
    h = (rows[1].time_from_arrival_ms as number) - tau0;
  return sfpAt({ tau0, h, g: Float64Array.from(rows, (r) => r.sfp as number) }, s);
}

/**
 * Difference between two distributions on the same grid (e.g. before and after a blocker
 * concentration, or at two temperatures): `after - before` of the number and amplitude
 * fractions per bin and per class, with a 95% band from the bootstrap replicates of the
 * two conditions (independent resamples paired by index: the percentiles of the differences).
 * Fractions are of each condition's own total, so a class blocked first shows as a negative
 * difference at its velocities; `amplitude_ratio` is the ratio of summed amplitudes per class
 * (after / before, in signal units), which keeps the loss in absolute terms.
 * @throws OptionError when the grids differ (give both the same velocityRange and nVelocities).
 */
export function compareVelocityDistributions(
  before: VelocityDistributionResult,
  after: VelocityDistributionResult,
): { grid: Row[]; classes: Row[] } {
  const va = before.velocities,
    vb = after.velocities;
  if (va.length !== vb.length || va.some((x, i) => Math.abs(x / vb[i] - 1) > 1e-9)) {
    throw new OptionError(
      'the two distributions have different velocity grids; give both the same velocityRange and nVelocities',
    );
  }
  const reps = Math.min(before.replicates.number.length, after.replicates.number.length);
  const frac = (x: Float64Array) => {
    const s = x.reduce((a, y) => a + y, 0);
    return Float64Array.from(x, (y) => y / s);
  };
  const grid: Row[] = va.map((v, k) => {
    const row: Row = { velocity_m_s: v };
    for (const w of ['number', 'amplitude'] as const) {
      const d = (after.grid[k][`${w}_fraction`] as number) - (before.grid[k][`${w}_fraction`] as number);
      const rd = Array.from(
        { length: reps },
        (_, i) => frac(after.replicates[w][i])[k] - frac(before.replicates[w][i])[k],
      );
      row[`${w}_fraction_difference`] = d;
      row[`${w}_difference_ci95_low`] = reps ? quantile(rd, 0.025) : null;
      row[`${w}_difference_ci95_high`] = reps ? quantile(rd, 0.975) : null;
    }
    return row;
  });
  const classes: Row[] = before.classes.map((cb) => {
    const ca = after.classes.find((c) => c.class === cb.class);
    const row: Row = { class: cb.class, range_low_m_s: cb.range_low_m_s, range_high_m_s: cb.range_high_m_s };
    for (const w of ['number', 'amplitude'] as const) {
      const a = ca?.[`${w}_fraction`],
        b = cb[`${w}_fraction`];
      row[`${w}_fraction_before`] = b ?? null;
      row[`${w}_fraction_after`] = a ?? null;
      row[`${w}_fraction_difference`] = typeof a === 'number' && typeof b === 'number' ? a - b : null;
    }
    const e = edges(Float64Array.from(va));
    const ov = overlap(e, cb.range_low_m_s as number, cb.range_high_m_s as number);
    const sumIn = (r: VelocityDistributionResult) => r.grid.reduce((s, g, k) => s + (g.amplitude as number) * ov[k], 0);
    const sb = sumIn(before);
    row.amplitude_ratio = sb > 0 ? sumIn(after) / sb : null;
    const rr = Array.from({ length: reps }, (_, i) => {
      const s0 = before.replicates.amplitude[i].reduce((s, x, k) => s + x * ov[k], 0),
        s1 = after.replicates.amplitude[i].reduce((s, x, k) => s + x * ov[k], 0);
      return s0 > 0 ? s1 / s0 : NaN;
    });
    row.amplitude_ratio_ci95_low = reps ? quantile(rr, 0.025) : null;
    row.amplitude_ratio_ci95_high = reps ? quantile(rr, 0.975) : null;
    return row;
  });
  return { grid, classes };
}
