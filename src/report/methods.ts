/**
 * Methods text written from the history of steps: plain English, with references. The conditioning and measurement
 * steps are worded here; every registered analysis words its own steps (src/registry, through registry/sentences).
 * What the history does not hold (sampling rate, sweep counts, recording temperatures, preparation type, recording
 * configuration) comes from `MethodsContext`, which the command line fills from the study; without it the text
 * words those parts neutrally instead of guessing.
 */
import type { Step } from '../sweeps/SweepSet';
import { VERSION } from '../version';
import { latencyMethodsText } from '../measure/latencyText';
import { sentenceFor } from '../registry/sentences';

const REFS: Record<string, string> = {
  butterworth: 'Butterworth S (1930) On the theory of filter amplifiers. Wireless Engineer 7:536-541.',
  gustafsson:
    'Gustafsson F (1996) Determining the initial states in forward-backward filtering. ' +
    'IEEE Trans Signal Process 44:988-992.',
  mad: 'Rousseeuw PJ, Croux C (1993) Alternatives to the median absolute deviation. J Am Stat Assoc 88:1273-1283.',
  classes:
    'Erlanger-Gasser fibre classes as tabulated by J. A. Kiernan (table of nerve fibre types, ' +
    'University of Western Ontario).',
  // authors, year and pages from memory (REFERENCES.md lists the values, not the full citation)
  lowitzsch:
    'Lowitzsch K, Hopf HC, Galland J (1977) Changes of sensory conduction velocity and refractory periods with ' +
    'decreasing tissue temperature in man. J Neurol 216:181-188.',
  sines: 'Kay SM (1993) Fundamentals of Statistical Signal Processing: Estimation Theory. Prentice Hall.',
  schwarz: 'Schwarz G (1978) Estimating the dimension of a model. Ann Stat 6:461-464.',
};

/**
 * Where each class preset's velocity ranges and Q10 come from, in the methods text's words: a published table, or
 * said to be common practice when no table backs them. A preset not listed here is cited by its own `source`.
 */
export const PRESET_CITATIONS: Record<string, { ranges: string; q10: string; refs: string[] }> = {
  mammalian: {
    ranges:
      'Erlanger-Gasser classes as tabulated by Kiernan, mammalian nerve at about 37 °C; A-alpha and A-beta merged',
    q10: 'within the 1.36-1.44 reported for human sensory nerve conduction, Lowitzsch et al. 1977',
    refs: [REFS.classes, REFS.lowitzsch],
  },
  'mammalian-detailed': {
    ranges: 'Erlanger-Gasser classes as tabulated by Kiernan, mammalian nerve at about 37 °C',
    q10: 'within the 1.36-1.44 reported for human sensory nerve conduction, Lowitzsch et al. 1977',
    refs: [REFS.classes, REFS.lowitzsch],
  },
  amphibian: {
    ranges: 'ranges common in practice for frog sciatic nerve at room temperature, not taken from a published table',
    q10: 'a value common in practice for amphibian nerve, not taken from a published table',
    refs: [],
  },
  custom: { ranges: 'ranges set by the user', q10: 'set by the user', refs: [] },
};

/** What the methods text states beside the history (the command line fills it from the study). */
export interface MethodsContext {
  /** files listed in the manifest */
  files?: number;
  /** preparations analysed */
  preparations?: number;
  /** sampling rates (Hz) of the recordings */
  sampleRatesHz?: number[];
  /** sweeps given to the pipeline */
  sweeps?: number;
  /** sweeps measured (after QC removal and averaging of repeats) */
  measured?: number;
  /** recording temperatures (°C) of the measured sweeps; [] when none was given (undefined: not known here) */
  temperaturesC?: number[];
  /** preparation types ('in vitro', 'in vivo', 'ex vivo', ...) from the sweeps' preparationType condition */
  preparationTypes?: string[];
  /** 'monopolar' and/or 'bipolar' */
  configurations?: string[];
  /** conduction distances (mm) of the measured sweeps */
  distancesMm?: number[];
  /** stimulus pulse widths (ms) of the measured sweeps */
  pulseWidthsMs?: number[];
  /** sweeps removed by sweep QC before measuring */
  removedByQc?: number;
}

const fmtW = (w: unknown) => (Array.isArray(w) ? `${w[0]} to ${w[1]} ms` : String(w));
const ord = (n: number) =>
  `${n}${n % 10 === 1 && n !== 11 ? 'st' : n % 10 === 2 && n !== 12 ? 'nd' : n % 10 === 3 && n !== 13 ? 'rd' : 'th'}`;
const list = (xs: readonly (string | number)[]) =>
  xs.length <= 1 ? xs.join('') : `${xs.slice(0, -1).join(', ')} and ${xs[xs.length - 1]}`;
const plural = (n: number, w: string) => `${n} ${w}${n === 1 ? '' : 's'}`;
const khz = (hz: number) => (hz >= 1000 ? `${Number((hz / 1000).toPrecision(6))} kHz` : `${hz} Hz`);

/** The latency definitions of a components step, in words (the same definition at every distance). */
function latencySentence(o: Record<string, unknown>): string {
  const pct = (f: unknown, d: number) => `${Math.round(100 * (typeof f === 'number' ? f : d))}%`;
  if (o.onsetFraction === undefined && o.centroidFraction === undefined) {
    return (
      `Onset latency was the interpolated crossing of ${o.k} times the noise leading into the peak (for the ` +
      `earliest class searched back before its window, down to ${o.earliestMs} ms); peak latency and amplitude ` +
      'were refined by parabolic interpolation; the centroid latency was the centre of mass of the component ' +
      'between onset and offset.'
    );
  }
  return (
    "Latencies were measured on each class's own component, with the same definitions at every distance: onset, " +
    `the first crossing of ${pct(o.onsetFraction, 0.1)} of the component's own peak, searched back from the peak ` +
    'and interpolated between samples; half-rise, the crossing of 50% of the peak on the rising side; peak, ' +
    'refined by parabolic interpolation; and centroid, the centre of mass of the component over the contiguous ' +
    `span around its peak where it exceeds ${pct(o.centroidFraction, 0.1)} of the peak.`
  );
}

/** The recording: sampling rate, sweep counts, configuration (only what the context states). */
function recordingSentence(x: MethodsContext): string {
  const parts: string[] = [];
  if (x.sampleRatesHz?.length) parts.push(`sampled at ${list(x.sampleRatesHz.map(khz))}`);
  const conf = x.configurations ?? [];
  if (conf.length === 1 && conf[0] === 'bipolar')
    parts.push('recorded bipolar (an active and a reference contact on the nerve, the reference distance given)');
  else if (conf.length === 1 && conf[0] === 'monopolar')
    parts.push('treated as monopolar recordings (no reference-contact distance was given)');
  else if (conf.length > 1)
    parts.push('treated as bipolar where a reference-contact distance was given, else as monopolar');
  const num = (v: number) => String(Number(v.toPrecision(6)));
  if (x.distancesMm?.length)
    parts.push(
      `recorded at ${x.distancesMm.length === 1 ? 'a conduction distance' : 'conduction distances'} of ` +
        `${list(x.distancesMm.map(num))} mm from the stimulating electrode`,
    );
  if (x.pulseWidthsMs?.length) {
    const w = list(x.pulseWidthsMs.map(num));
    parts.push(x.pulseWidthsMs.length === 1 ? `evoked by ${w} ms stimulus pulses` : `evoked by pulses ${w} ms wide`);
  }
  let counts = '';
  if (x.sweeps !== undefined) {
    counts = `${plural(x.sweeps, 'sweep')} were analysed`;
    const removed = x.removedByQc ?? 0;
    if (x.measured !== undefined && x.measured !== x.sweeps) {
      const steps = [
        removed > 0 ? `removing ${removed} flagged by QC` : '',
        x.measured < x.sweeps - removed ? 'averaging repeats' : '',
      ].filter(Boolean);
      counts += ` (${x.measured} measured after ${steps.join(' and ') || 'QC'})`;
    }
  }
  if (!parts.length && !counts) return '';
  const how = parts.length ? `Responses were ${list(parts)}` : '';
  return how && counts ? `${how}; ${counts}.` : `${how || counts[0].toUpperCase() + counts.slice(1)}.`;
}

/** The temperature clause of the class windows: scaled with a Q10 only when a recording temperature was given. */
function windowTemperature(o: Record<string, unknown>, x: MethodsContext): { text: string; cited: boolean } {
  const ref = Number(o.refTemperatureC);
  const cite = PRESET_CITATIONS[String(o.preset)]?.q10;
  const q10 = `Q10 = ${o.q10}${cite ? ` (${cite})` : ''}`;
  const where =
    (x.preparationTypes ?? []).every((t) => /in vitro|ex vivo|isolated/i.test(t)) && x.preparationTypes?.length
      ? 'bath temperature'
      : 'recording temperature';
  const temps = typeof o.temperatureC === 'number' ? [o.temperatureC] : x.temperaturesC;
  if (temps === undefined)
    return {
      text: `, scaled from ${ref} °C to each sweep's ${where}, where one was given, with ${q10}`,
      cited: !!cite,
    };
  if (!temps.length)
    return {
      text: ` (no recording temperature was given, so the ranges were used as tabulated, unscaled)`,
      cited: false,
    };
  if (temps.every((t) => t === ref)) return { text: ` (recorded at ${ref} °C: no temperature scaling)`, cited: false };
  const at = `${list(temps)} °C`;
  return { text: `, scaled from ${ref} °C to the ${where} of each sweep (${at}) with ${q10}`, cited: !!cite };
}

/** The components step: class windows, noise, separation, latency definitions and polarity. */
function componentsSentences(o: Record<string, any>, x: MethodsContext, refs: Set<string>): string[] {
  // eslint-disable-line @typescript-eslint/no-explicit-any
  const cls = (o.classes as { name: string; velocity: number[] }[])
    .map((c) => `${c.name} ${c.velocity[0]}-${c.velocity[1]} m/s`)
    .join(', ');
  const cite = PRESET_CITATIONS[String(o.preset)];
  const temp = windowTemperature(o, x);
  const out: string[] = [];
  const separation =
    o.separation !== undefined
      ? latencyMethodsText({
          onsetFraction: Number(o.onsetFraction ?? 0.1),
          centroidFraction: Number(o.centroidFraction ?? 0.1),
          separation: o.separation,
          k: Number(o.k),
        })
      : 'Where windows of neighbouring classes overlapped, the boundary was placed at the trough between the two ' +
        'components and the slower component was measured above a straight line from the trough to the level at ' +
        `the end of its window; a component counted as present when its smoothed peak exceeded max(${o.k}, z) ` +
        'times the noise, with z the normal quantile at 1 - 0.01/N for a window of N samples (this test decides ' +
        `detection only). ${latencySentence(o)}`;
  out.push(
    'Fibre-class components were identified in latency windows computed from the conduction distance and the ' +
      `velocity ranges of each class (${cls}; ${cite?.ranges ?? o.presetSource})${temp.text}, with a utilisation ` +
      `time of ${o.utilisationMs} ms; each window's late end was extended by ${o.tailFraction} of its width (at ` +
      `least ${o.tailMs} ms). Noise was estimated as 1.4826 times the median absolute deviation of ` +
      `${fmtW(o.noiseWindow)} (Rousseeuw & Croux 1993). ${separation}`,
  );
  const pol = o.polarities as Record<string, number> | undefined,
    src = o.polaritySource as Record<string, string> | undefined;
  if (pol && Object.keys(pol).length) {
    const each = Object.entries(pol)
      .map(([c, p]) => `${c} ${p === -1 ? 'negative' : 'positive'}${src?.[c] === 'option' ? ' (set by the user)' : ''}`)
      .join(', ');
    out.push(
      'Each class was measured on its main phase, chosen per class from the signal after the artifact unless set ' +
        `by the user: ${each}.`,
    );
  }
  for (const r of cite?.refs ?? [REFS.classes]) if (r !== REFS.lowitzsch || temp.cited) refs.add(r);
  refs.add(REFS.mad);
  return out;
}

/** A methods paragraph (and reference list) for a history of steps. */
export function methodsText(history: readonly Step[], extra: MethodsContext = {}): string {
  const s: string[] = [];
  const refs = new Set<string>();
  // the recording (sampling, counts, configuration): after the manifest sentence, else first
  const rec = recordingSentence(extra);
  let said = !history.some((h) => h.verb === 'readManifest');
  if (rec && said) s.push(rec);
  for (const h of history) {
    const o = h.options as Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any
    switch (h.verb) {
      case 'readManifest': {
        const study = o.study ? ` ("${o.study}")` : '';
        const preps = extra.preparations ? `, from ${extra.preparations} preparations` : '';
        s.push(
          `Recordings were loaded from ${extra.files ?? o.files} files listed in a study manifest${study}${preps}, ` +
            'each sweep with its experimental conditions.',
        );
        if (rec && !said) s.push(rec);
        said = true;
        break;
      }
      case 'baseline': {
        const late = o.lateWindow
          ? `, with a linear detrend to the level of a late quiet window (${fmtW(o.lateWindow)})`
          : '';
        s.push(
          `Each sweep was baseline-corrected by subtracting the ${o.method} of the pre-stimulus window ` +
            `(${fmtW(o.window)} relative to the stimulus)${late}.`,
        );
        break;
      }
      case 'removeArtifact':
        if (o.method === 'blank') {
          const bridge = o.bridge === 'linear' ? 'linear interpolation' : 'cubic Hermite interpolation';
          s.push(
            `The stimulus artifact was removed by blanking ${fmtW(o.window)} after the stimulus and bridging the gap ` +
              `by ${bridge}.`,
          );
        } else if (o.method === 'template') {
          const scaled =
            o.scaling === 'fit' ? `by least squares over ${fmtW(o.fitWindow)}` : 'in proportion to stimulus intensity';
          s.push(
            'The stimulus artifact was removed by subtracting a template averaged from sub-threshold sweeps of the ' +
              `same ${(o.templateBy ?? []).join(', ') || 'set'}, scaled to each sweep ${scaled}.`,
          );
        } else if (o.method === 'exponential')
          s.push(
            'The stimulus artifact was removed by fitting and subtracting ' +
              `${o.exponentials === 2 ? 'two exponentials (a fast decay and a slow tail)' : 'a single exponential'} ` +
              `to its tail (${fmtW(o.tailWindow)}) and bridging ${fmtW(o.window)}; samples on the amplifier rail ` +
              'were left out of the fit and blanked.',
          );
        else
          s.push(
            'The stimulus artifact was cancelled by averaging pairs of sweeps recorded with opposite stimulus ' +
              'polarity.',
          );
        break;
      case 'alignStimulus':
        s.push(`The stimulus time was found from the artifact (steepest step) and set to 0 ms.`);
        break;
      case 'removeHum': {
        const ex = o.exclude?.length ? `, leaving ${o.exclude.map(fmtW).join(' and ')} out of the fit` : '';
        // the harmonics fitted (a rule may keep only some), the drift term and the baseline refit, as recorded
        const hs = (o.fittedHarmonics as number[] | undefined) ?? null;
        const which =
          hs && hs.length !== o.harmonics
            ? `harmonics ${hs.join(', ')}`
            : `its harmonics up to the ${ord(o.harmonics)}`;
        const rule =
          o.harmonicsRule === 'auto' ? ' (a harmonic kept when its amplitude exceeded 3 standard errors)' : '';
        const drift =
          o.driftOrder > 0
            ? ` jointly with a Legendre polynomial of order ${o.driftOrder} for slow drift (fitted, not subtracted)` +
              (o.drift === 'auto' ? ' (its order chosen by the Bayesian information criterion; Schwarz 1978)' : '')
            : '';
        const back = o.baselineRefit ? '; the share of the hum in the preceding baseline levels was restored' : '';
        s.push(
          `Mains interference was removed by fitting and subtracting, per sweep, sinusoids at ${o.fittedFrequencyHz} ` +
            `Hz and ${which}${rule}${drift} by linear least squares${ex} (Kay 1993)${back}.`,
        );
        refs.add(REFS.sines);
        if (drift && o.drift === 'auto') refs.add(REFS.schwarz);
        break;
      }
      case 'notch':
        s.push(`A second-order IIR notch at ${o.frequency} Hz (Q = ${o.Q}) was applied forwards and backwards.`);
        break;
      case 'filter': {
        // in kHz from 1 kHz on (10000 Hz reads "10 kHz"); a band in the unit of its upper edge
        const cut = Array.isArray(o.cutoff)
          ? o.cutoff[1] >= 1000
            ? `${Number((o.cutoff[0] / 1000).toPrecision(6))}-${khz(o.cutoff[1])}`
            : `${o.cutoff[0]}-${o.cutoff[1]} Hz`
          : khz(o.cutoff);
        const kind =
          o.btype === 'lowpass'
            ? 'low-pass'
            : o.btype === 'highpass'
              ? 'high-pass'
              : o.btype === 'bandpass'
                ? 'band-pass'
                : 'band-stop';
        s.push(
          `Sweeps were ${kind} filtered with a ${ord(o.order)}-order Butterworth filter (cutoff ${cut}; Butterworth ` +
            `1930) applied forwards and backwards for zero phase shift (effective order ${2 * o.order}), with ` +
            `odd-extension padding of ${o.padlen} samples and steady-state initial conditions (Gustafsson 1996).`,
        );
        refs.add(REFS.butterworth);
        refs.add(REFS.gustafsson);
        break;
      }
      case 'decimate':
        s.push(
          `Sweeps were down-sampled by ${o.factor} after a zero-phase ${ord(o.order)}-order Butterworth anti-alias ` +
            `filter at ${Number(o.cutoffHz).toFixed(0)} Hz.`,
        );
        break;
      case 'resample': {
        const pad = o.padtype === 'constant' ? 'zero' : o.padtype;
        s.push(
          `Sweeps were resampled to ${o.fs} Hz (factor ${o.up}/${o.down}) with a polyphase anti-alias FIR filter ` +
            `(${o.taps} taps, Kaiser window, beta ${o.beta}, cutoff ${Number(o.cutoffHz).toFixed(0)} Hz; zero ` +
            `phase; ${pad} padding at the sweep ends).`,
        );
        break;
      }
      case 'average':
        s.push(`Sweeps were averaged (${o.method}) within groups of equal ${(o.by ?? []).join(', ')}.`);
        break;
      case 'components':
        s.push(...componentsSentences(o, extra, refs));
        break;
      case 'averageRepeats':
        s.push(
          'Repeated sweeps of each condition (equal conditions apart from the repeat index and acquisition time) ' +
            `were averaged (${o.method}) before measuring (${o.sweeps} sweeps into ${o.groups}).`,
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
