/** Methods text written from the history of steps: plain English, with references. */
import type { Step } from '../sweeps/SweepSet';
import { VERSION } from '../version';
import { FIBRE_RANGE_M_S, NEGATIVE_UTILISATION_FRACTION, MIN_DELAY_SAMPLES } from '../analysis/velocity';
import { latencyMethodsText } from '../measure/latencyText';

/**
 * The analyses' own methods sentences (sweep QC, group statistics, mixed model, velocity distribution). Those
 * modules import report/result, which imports this one, so they are handed in at start-up (report/pipeline.ts
 * registers them) instead of imported here.
 */
export interface StepMethods {
  qcStepMethods: (step: Step) => string;
  qcReferences: readonly string[];
  groupStepMethods: (step: Step) => string;
  groupReferences: readonly string[];
  mixedStepMethods: (step: Step) => string;
  mixedReferences: readonly string[];
  velocityDistributionSentence: (o: Record<string, unknown>) => [string, string[]];
}
let stepMethods: StepMethods | null = null;
/** @internal called once by report/pipeline.ts */
export function registerStepMethods(m: StepMethods): void {
  stepMethods = m;
}
/** (registered whenever report/pipeline.ts is loaded, as by the package index; without it these steps add nothing) */
const analysisMethods = (): StepMethods | null => stepMethods;

const REFS: Record<string, string> = {
  butterworth: 'Butterworth S (1930) On the theory of filter amplifiers. Wireless Engineer 7:536-541.',
  gustafsson:
    'Gustafsson F (1996) Determining the initial states in forward-backward filtering. IEEE Trans Signal Process 44:988-992.',
  mad: 'Rousseeuw PJ, Croux C (1993) Alternatives to the median absolute deviation. J Am Stat Assoc 88:1273-1283.',
  classes:
    'Erlanger-Gasser fiber classes as tabulated by J. A. Kiernan (table of nerve fibre types, University of Western Ontario).',
  hill: 'Hill AV (1910) The possible effects of the aggregation of the molecules of haemoglobin on its dissociation curves. J Physiol 40:iv-vii.',
  drc: 'Ritz C, Baty F, Streibig JC, Gerhard D (2015) Dose-response analysis using R. PLoS ONE 10:e0146021.',
  lm: 'Marquardt DW (1963) An algorithm for least-squares estimation of nonlinear parameters. J Soc Ind Appl Math 11:431-441.',
  bates: 'Bates DM, Watts DG (1988) Nonlinear Regression Analysis and Its Applications. Wiley.',
  arrhenius:
    'Arrhenius S (1889) Uber die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch Sauren. Z Phys Chem 4:226-248.',
  sines: 'Kay SM (1993) Fundamentals of Statistical Signal Processing: Estimation Theory. Prentice Hall.',
  // from memory (as the paired-pulse module cites it)
  bostock:
    'Bostock H, Cikurel K, Burke D (1998) Threshold tracking techniques in the study of human peripheral nerve. Muscle Nerve 21:137-158.',
};

/** References the group and mixed-model sentences cite (Lazic, Aarts, and their own). */
const cited = (sentence: string, refs: readonly string[]) =>
  refs.filter((r) =>
    sentence.includes(
      r
        .split(/ \(\d{4}\)/)[0]
        .split(',')[0]
        .split(' ')[0],
    ),
  );

const fmtW = (w: unknown) => (Array.isArray(w) ? `${w[0]} to ${w[1]} ms` : String(w));
const ord = (n: number) =>
  `${n}${n % 10 === 1 && n !== 11 ? 'st' : n % 10 === 2 && n !== 12 ? 'nd' : n % 10 === 3 && n !== 13 ? 'rd' : 'th'}`;

/** The latency definitions of a components step, in words (the same definition at every distance). */
function latencySentence(o: Record<string, unknown>): string {
  const pct = (f: unknown, d: number) => `${Math.round(100 * (typeof f === 'number' ? f : d))}%`;
  if (o.onsetFraction === undefined && o.centroidFraction === undefined) {
    return `Onset latency was the interpolated crossing of ${o.k} times the noise leading into the peak (for the earliest class searched back before its window, down to ${o.earliestMs} ms); peak latency and amplitude were refined by parabolic interpolation; the centroid latency was the centre of mass of the component between onset and offset.`;
  }
  return `Latencies were measured on each class's own component, with the same definitions at every distance: onset, the first crossing of ${pct(o.onsetFraction, 0.1)} of the component's own peak, searched back from the peak and interpolated between samples; half-rise, the crossing of 50% of the peak on the rising side; peak, refined by parabolic interpolation; and centroid, the centre of mass of the component over the contiguous span around its peak where it exceeds ${pct(o.centroidFraction, 0.1)} of the peak.`;
}

/** A methods paragraph (and reference list) for a history of steps. */
export function methodsText(history: readonly Step[], extra: { files?: number; preparations?: number } = {}): string {
  const s: string[] = [];
  const refs = new Set<string>();
  for (const h of history) {
    const o = h.options as Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any
    switch (h.verb) {
      case 'readManifest':
        s.push(
          `Recordings were loaded from ${extra.files ?? o.files} files listed in a study manifest${o.study ? ` ("${o.study}")` : ''}${extra.preparations ? `, from ${extra.preparations} preparations` : ''}, each sweep with its experimental conditions.`,
        );
        break;
      case 'baseline':
        s.push(
          `Each sweep was baseline-corrected by subtracting the ${o.method} of the pre-stimulus window (${fmtW(o.window)} relative to the stimulus)${o.lateWindow ? `, with a linear detrend to the level of a late quiet window (${fmtW(o.lateWindow)})` : ''}.`,
        );
        break;
      case 'removeArtifact':
        if (o.method === 'blank')
          s.push(
            `The stimulus artifact was removed by blanking ${fmtW(o.window)} after the stimulus and bridging the gap by ${o.bridge === 'linear' ? 'linear interpolation' : 'cubic Hermite interpolation'}.`,
          );
        else if (o.method === 'template')
          s.push(
            `The stimulus artifact was removed by subtracting a template averaged from sub-threshold sweeps of the same ${(o.templateBy ?? []).join(', ') || 'set'}, scaled to each sweep ${o.scaling === 'fit' ? `by least squares over ${fmtW(o.fitWindow)}` : 'in proportion to stimulus intensity'}.`,
          );
        else if (o.method === 'exponential')
          s.push(
            `The stimulus artifact was removed by fitting and subtracting a single exponential to its tail (${fmtW(o.tailWindow)}) and bridging ${fmtW(o.window)}.`,
          );
        else
          s.push(
            'The stimulus artifact was cancelled by averaging pairs of sweeps recorded with opposite stimulus polarity.',
          );
        break;
      case 'alignStimulus':
        s.push(`The stimulus time was found from the artifact (steepest step) and set to 0 ms.`);
        break;
      case 'removeHum':
        s.push(
          `Mains interference was removed by fitting and subtracting, per sweep, sinusoids at ${o.fittedFrequencyHz} Hz and its harmonics up to the ${ord(o.harmonics)} by linear least squares${o.exclude?.length ? `, leaving ${o.exclude.map(fmtW).join(' and ')} out of the fit` : ''} (Kay 1993).`,
        );
        refs.add(REFS.sines);
        break;
      case 'notch':
        s.push(`A second-order IIR notch at ${o.frequency} Hz (Q = ${o.Q}) was applied forwards and backwards.`);
        break;
      case 'filter': {
        const cut = Array.isArray(o.cutoff) ? `${o.cutoff[0]}-${o.cutoff[1]} Hz` : `${o.cutoff} Hz`;
        s.push(
          `Sweeps were ${o.btype === 'lowpass' ? 'low-pass' : o.btype === 'highpass' ? 'high-pass' : o.btype === 'bandpass' ? 'band-pass' : 'band-stop'} filtered with a ${ord(o.order)}-order Butterworth filter (cutoff ${cut}; Butterworth 1930) applied forwards and backwards for zero phase shift (effective order ${2 * o.order}), with odd-extension padding of ${o.padlen} samples and steady-state initial conditions (Gustafsson 1996).`,
        );
        refs.add(REFS.butterworth);
        refs.add(REFS.gustafsson);
        break;
      }
      case 'decimate':
        s.push(
          `Sweeps were down-sampled by ${o.factor} after a zero-phase ${ord(o.order)}-order Butterworth anti-alias filter at ${Number(o.cutoffHz).toFixed(0)} Hz.`,
        );
        break;
      case 'resample':
        s.push(
          `Sweeps were resampled to ${o.fs} Hz (factor ${o.up}/${o.down}) with a polyphase anti-alias FIR filter (${o.taps} taps, Kaiser window, beta ${o.beta}, cutoff ${Number(o.cutoffHz).toFixed(0)} Hz; zero phase; ${o.padtype === 'constant' ? 'zero' : o.padtype} padding at the sweep ends).`,
        );
        break;
      case 'average':
        s.push(`Sweeps were averaged (${o.method}) within groups of equal ${(o.by ?? []).join(', ')}.`);
        break;
      case 'components': {
        const cls = (o.classes as { name: string; velocity: number[] }[])
          .map((c) => `${c.name} ${c.velocity[0]}-${c.velocity[1]} m/s`)
          .join(', ');
        s.push(
          `Fiber-class components were identified in latency windows computed from the conduction distance and the velocity ranges of each class (${cls}; ${o.presetSource}), scaled to the bath temperature with Q10 = ${o.q10} from ${o.refTemperatureC} C, with a utilisation time of ${o.utilisationMs} ms; each window's late end was extended by ${o.tailFraction} of its width (at least ${o.tailMs} ms). Noise was estimated as 1.4826 times the median absolute deviation of ${fmtW(o.noiseWindow)} (Rousseeuw & Croux 1993).${o.separation !== undefined ? ` ${latencyMethodsText({ onsetFraction: Number(o.onsetFraction ?? 0.1), centroidFraction: Number(o.centroidFraction ?? 0.1), separation: o.separation, k: Number(o.k) })}` : ` Where windows of neighbouring classes overlapped, the boundary was placed at the trough between the two components and the slower component was measured above a straight line from the trough to the level at the end of its window; a component counted as present when its smoothed peak exceeded max(${o.k}, z) times the noise, with z the normal quantile at 1 - 0.01/N for a window of N samples (this test decides detection only). ${latencySentence(o)}`}`,
        );
        const pol = o.polarities as Record<string, number> | undefined,
          src = o.polaritySource as Record<string, string> | undefined;
        if (pol && Object.keys(pol).length) {
          const each = Object.entries(pol)
            .map(
              ([c, p]) =>
                `${c} ${p === -1 ? 'negative' : 'positive'}${src?.[c] === 'option' ? ' (set by the user)' : ''}`,
            )
            .join(', ');
          s.push(
            `Each class was measured on its main phase, chosen per class from the signal after the artifact unless set by the user: ${each}.`,
          );
        }
        refs.add(REFS.classes);
        refs.add(REFS.mad);
        break;
      }
      case 'velocity': {
        type E = { method?: string; basis?: string };
        const rec = o.recommended as { fastest?: E; unmyelinated?: E; other?: E } | undefined;
        const say = (e?: E) =>
          e?.method === 'regression'
            ? `the regression of ${e.basis} latency on distance (with two distances, the two-site ${e.basis} velocity)`
            : e?.basis === 'xcorr'
              ? 'the two-site delay from cross-correlation of its own component'
              : `the ${e?.method} ${e?.basis} velocity`;
        s.push(
          `Conduction velocity was computed per class as distance divided by latency (single site), as the distance between two recording sites divided by the delay between them over pairs of sweeps recorded together (the delay from the same latency definition at both sites, or from the cross-correlation of the class component with parabolic sub-sample refinement), and as the inverse slope of latency regressed on distance, whose intercept estimates the utilisation time; each velocity is reported with its latency definition, and 95% confidence intervals are t-based over sweeps or from the regression (none when the data give no residual degree of freedom).${rec?.fastest ? ` The velocity reported (and used for Q10) was, for the fastest class, ${say(rec.fastest)}; for unmyelinated classes, ${say(rec.unmyelinated)}; for other classes, ${say(rec.other)}.` : ''}`,
        );
        s.push(
          `Implausible values were not reported as velocities but flagged with a reason, without discarding other classes, groups or estimators: a velocity outside any nerve fibre's range (${FIBRE_RANGE_M_S[0]}-${FIBRE_RANGE_M_S[1]} m/s), a latency not increasing with distance, a utilisation time below -${100 * NEGATIVE_UTILISATION_FRACTION}% of the latency at the nearest site (-${200 * NEGATIVE_UTILISATION_FRACTION}% for onset latencies; and below 0 beyond its 95% CI); pairs of sweeps with a delay not positive, shorter than ${MIN_DELAY_SAMPLES} sample intervals, or a cross-correlation maximum on the edge of its search range were left out and counted; a velocity outside its class's range at that temperature was kept and flagged.`,
        );
        break;
      }
      case 'averageRepeats':
        s.push(
          `Repeated sweeps of each condition (equal conditions apart from the repeat index and acquisition time) were averaged (${o.method}) before measuring (${o.sweeps} sweeps into ${o.groups}).`,
        );
        break;
      case 'recruitment':
        s.push(
          `Recruitment curves (component amplitude against stimulus intensity) were fitted, per preparation, recording site and class, to the sweeps in which the class was measured (sweeps where it was not detected, and intensities of 0 or below, were left out and counted; the floor was fixed at 0 when the class was not detected at lower intensities; a class measured at fewer than ${o.minLevels ?? 4} intensities was reported as not detected), with a Boltzmann sigmoid in log10 intensity by the Levenberg-Marquardt method (Marquardt 1963); the threshold was taken where the fit reaches ${100 * o.thresholdFraction}% of its range and the supramaximal intensity as ${o.supramaximalFactor} times the intensity reaching 95% of the maximum.`,
        );
        refs.add(REFS.lm);
        break;
      case 'strengthDuration':
        s.push(
          `For each pulse width, the intensity reaching ${100 * o.fraction}% of the maximum response was taken from a Boltzmann fit of the recruitment curve in log10 intensity; rheobase and chronaxie were estimated by fitting Weiss's law, I = Irh (1 + tch / w), and Lapicque's law, I = Irh / (1 - exp(-w / tau)) with chronaxie tau ln 2, to log intensity by the Levenberg-Marquardt method (Marquardt 1963), with a profile-likelihood 95% interval for the chronaxie.`,
        );
        refs.add(REFS.lm);
        break;
      case 'doseResponse':
        s.push(
          `For dose-response analysis only sweeps in which the class was measured were used (others left out and counted; a curve with fewer than ${o.minConcentrations ?? 4} measured concentrations was reported as not detected, and the bottom was fixed at 0 when the class was not measured at the highest concentrations), ${o.poolSites ? 'pooling all recording sites' : 'one curve per recording site'}. The steady-state response at each concentration (mean of the last ${o.lastN} sweeps, or of all when there were fewer) was normalised to the preparation's own pre-drug baseline${o.runDown === 'washout' ? ', corrected for run-down by linear interpolation between baseline and washout' : o.runDown === 'vehicle' ? ', corrected for run-down by the linear decline, per class, of time-matched vehicle controls relative to their own baseline' : ''}, and fitted per preparation and class with the four-parameter log-logistic (Hill) model (Hill 1910; Ritz et al. 2015) with the top fixed at 1${o.fixBottom === null ? ' and the bottom free' : ` and the bottom fixed at ${o.fixBottom}`}, by the Levenberg-Marquardt method. IC50 values were combined across preparations as the mean of log10 IC50 with a t-based 95% confidence interval (preparations, not sweeps, as replicates); a pooled fit over all preparations gave a profile-likelihood interval (Bates & Watts 1988)${o.bootstrap ? ` and a bootstrap interval over preparations (${o.bootstrap} resamples)` : ''}. Classes were compared with the extra-sum-of-squares F test of a shared IC50.`,
        );
        refs.add(REFS.hill);
        refs.add(REFS.drc);
        refs.add(REFS.lm);
        refs.add(REFS.bates);
        break;
      case 'temperature':
        const what =
          o.measure === 'regression_velocity_m_s'
            ? 'conduction velocity, itself from the regression of centroid latency on distance at each temperature'
            : / velocity$/.test(String(o.measure))
              ? `conduction velocity (${String(o.measure).replace(/ velocity$/, '')} latency) at each temperature`
              : String(o.measure).replace(/_/g, ' ');
        s.push(
          `Temperature dependence was summarised, from the measured values only, as Q10 from the regression of the logarithm of ${what} on temperature and as the Arrhenius activation energy from the regression on the inverse absolute temperature (Arrhenius 1889), each with preparation-specific intercepts and a t-based 95% confidence interval (none when the residuals cannot estimate one: flat or exact data, or no residual degree of freedom).`,
        );
        refs.add(REFS.arrhenius);
        break;
      case 'sweepQc':
      case 'rejectFlagged': {
        const m = analysisMethods();
        if (!m) break;
        const t = m.qcStepMethods(h);
        s.push(
          h.verb === 'sweepQc'
            ? `${t.replace(/ Flagged sweeps were kept\.$/, '')} Flagged sweeps were kept (listed in the sweep QC table; removal only when asked for).`
            : t,
        );
        m.qcReferences.forEach((r) => refs.add(r));
        break;
      }
      case 'pairedPulse':
        s.push(
          `Paired-pulse recovery: the conditioning-alone response was subtracted from each paired sweep, the test response was measured from the test stimulus as for test-alone sweeps, and expressed as a fraction of the test-alone response. The absolute refractory period was the longest interstimulus interval with no test response above detection while every longer interval had one. R50 and R90 came from a logistic function of log10 interval (floor 0, top 1) fitted by least squares, with 95% profile-likelihood intervals (conventions after Bostock, Cikurel & Burke 1998).`,
        );
        refs.add(REFS.bostock);
        break;
      case 'trains':
        s.push(
          `Trains: each response was measured in its own window from its own stimulus to the next; a class failed at the first pulse not detected or with an area below ${Math.round(100 * Number(o.failFraction ?? 0.5))}% of pulse 1's.`,
        );
        break;
      case 'compareGroups': {
        const m = analysisMethods();
        if (!m) break;
        const t = m.groupStepMethods(h);
        s.push(t);
        cited(t, m.groupReferences).forEach((r) => refs.add(r));
        break;
      }
      case 'mixedModel': {
        const m = analysisMethods();
        if (!m) break;
        const t = m.mixedStepMethods(h);
        s.push(t);
        cited(t, [...m.groupReferences, ...m.mixedReferences]).forEach((r) => refs.add(r));
        break;
      }
      // the pipeline's step over its velocity distributions (a result's own 'velocityDistribution' step is worded by
      // the result's methods(), which adds the sentence itself)
      case 'velocityDistributions': {
        const m = analysisMethods();
        if (!m) break;
        const [t, more] = m.velocityDistributionSentence(o);
        const each = `${o.count} distribution${o.count === 1 ? '' : 's'}: one per preparation, temperature and concentration with two or more distances, from the sweeps at the top intensity`;
        s.push(o.count !== undefined ? `${t.replace(/\.\s*$/, '')} (${each}).` : t);
        more.forEach((r) => refs.add(r));
        break;
      }
      default:
        break;
    }
  }
  s.push(`Analyses were run with fascicle ${VERSION}.`);
  return s.join(' ') + (refs.size ? '\n\nReferences\n' + [...refs].sort().join('\n') : '') + '\n';
}
