/**
 * Methods text written from the history of steps: plain English, with references. The conditioning and measurement
 * steps are worded here; every registered analysis words its own steps (src/registry, through registry/sentences).
 */
import type { Step } from '../sweeps/SweepSet';
import { VERSION } from '../version';
import { latencyMethodsText } from '../measure/latencyText';
import { sentenceFor } from '../registry/sentences';

const REFS: Record<string, string> = {
  butterworth: 'Butterworth S (1930) On the theory of filter amplifiers. Wireless Engineer 7:536-541.',
  gustafsson:
    'Gustafsson F (1996) Determining the initial states in forward-backward filtering. IEEE Trans Signal Process 44:988-992.',
  mad: 'Rousseeuw PJ, Croux C (1993) Alternatives to the median absolute deviation. J Am Stat Assoc 88:1273-1283.',
  classes:
    'Erlanger-Gasser fiber classes as tabulated by J. A. Kiernan (table of nerve fibre types, University of Western Ontario).',
  sines: 'Kay SM (1993) Fundamentals of Statistical Signal Processing: Estimation Theory. Prentice Hall.',
};

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
      case 'averageRepeats':
        s.push(
          `Repeated sweeps of each condition (equal conditions apart from the repeat index and acquisition time) were averaged (${o.method}) before measuring (${o.sweeps} sweeps into ${o.groups}).`,
        );
        break;
      default: {
        // an analysis step: its registered sentence (src/registry)
        const said = sentenceFor(h.verb)?.(h);
        if (said) {
          s.push(said.text);
          (said.refs ?? []).forEach((r) => refs.add(r));
        }
        break;
      }
    }
  }
  s.push(`Analyses were run with fascicle ${VERSION}.`);
  return s.join(' ') + (refs.size ? '\n\nReferences\n' + [...refs].sort().join('\n') : '') + '\n';
}
