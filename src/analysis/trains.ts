/**
 * Stimulus trains: several pulses in one sweep (conditions `trainHz` and `trainPulses`, the first pulse at 0 ms).
 * Sweeps of one group and frequency are averaged; each response is measured in its own window from its own stimulus
 * time: the average is moved so that pulse k is at 0 ms (whole samples; the fraction left is taken off latencies),
 * samples from the next pulse on are set to zero, samples before the pulse are the quiet pre-train samples (so the
 * noise level is not taken from earlier responses), `blankMs` after the pulse is bridged by a straight line, and the
 * classes are measured with measureComponents. Per class and pulse: latency, amplitude, area, the latency increase from
 * pulse 1 (activity-dependent slowing) and the fractions of pulse 1 (frequency following). Summary per class and
 * frequency: latency increase at the last pulse (ms and % of pulse 1's latency), and the pulse at which the class
 * fails: the first pulse whose response is not detected, not resolved (no response of its own in its window, only an
 * earlier response's tail), or whose area is below `failFraction` (default 0.5) of pulse
 * 1's (a rule of ours; common practice, no source). A class whose pulse-1 response lasts past the next pulse is
 * flagged: its tail is cut at the next stimulus and a slower class's tail from the previous pulse is not removed; a class
 * whose pulse-1 response starts after the next pulse (measured on pulse 1 without the cut) is 'not measured'.
 */
import { SweepSet, type ConditionValue, type Step, type Source } from '../sweeps/SweepSet';
import { Result } from '../notebook/result';
import type { ComponentOptions } from '../measure/components';
import { AnalysisError, OptionError } from '../errors';
import { checkKeys } from '../validate';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';
import { meanSweeps, lockToStimulus, carried, measureLocked } from './pairedPulse';
import type { Figure } from '../plot/figure';

import type { Row } from '../registry/types';
export const trainDefaults = {
  frequencyKey: 'trainHz',
  pulsesKey: 'trainPulses',
  latency: 'peak_ms',
  blankMs: [0, 0.12] as [number, number],
  failFraction: 0.5,
};
const KEYS = ['components', 'by', 'frequencyKey', 'pulsesKey', 'latency', 'blankMs', 'failFraction'];

export interface TrainOptions {
  /** options of measureComponents */
  components?: ComponentOptions;
  /** conditions that make separate groups (default: preparation, distanceMm, temperatureC, concentration where present) */
  by?: string[];
  /** condition with the train frequency, Hz (default 'trainHz') */
  frequencyKey?: string;
  /** condition with the number of pulses (default 'trainPulses') */
  pulsesKey?: string;
  /** latency column (default 'peak_ms') */
  latency?: string;
  /** window after each pulse bridged by a straight line, ms (default [0, 0.12]) */
  blankMs?: [number, number];
  /** a class fails at the first pulse with area below this fraction of pulse 1's (default 0.5) */
  failFraction?: number;
}

export class TrainResult extends Result {
  constructor(
    readonly points: Row[],
    readonly summary: Row[],
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
  ) {
    super();
  }
  /** Tables for the bundle: train (per group, frequency, class and pulse) and train_summary (per group, frequency and class). */
  tables(): Record<string, readonly object[]> {
    return { train: this.points, train_summary: this.summary };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.summary as Record<string, unknown>[]);
  }
  toHTML(): string {
    return tableHtml(this.summary, {
      caption: 'Stimulus trains per class: latency increase at the last pulse and the failing pulse',
    });
  }
  toString(): string {
    const cols = [
      'preparation',
      'class',
      'train_hz',
      'pulses',
      'last_latency_increase_ms',
      'last_latency_increase_pct',
      'last_area_fraction',
      'failure_pulse',
      'status',
    ];
    return 'TrainResult\n' + tableText(this.summary, { columns: cols.filter((c) => this.summary.some((r) => c in r)) });
  }
  /** Train responses per class (trainFigure of src/plot/recovery.ts, registered when that module loads). */
  figure(): Figure {
    if (!figures.train)
      throw new AnalysisError(
        'the train figure is not loaded: import it from the package ("fascicle") or from src/plot/recovery',
      );
    return figures.train(this);
  }
}

/** Figure builder of train results, registered by src/plot/recovery.ts when it loads. */
const figures: { train: ((r: TrainResult) => Figure) | null } = { train: null };
/** @internal called by src/plot/recovery.ts */
export function registerTrainFigure(f: (r: TrainResult) => Figure): void {
  figures.train = f;
}

const num = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);
const ms = (v: number) => Number(v.toFixed(2));

/** Train responses per class (module comment). */
export function trains(set: SweepSet, options: TrainOptions = {}): TrainResult {
  checkKeys('trains options', options as Record<string, unknown>, KEYS);
  const o = { ...trainDefaults, ...options };
  if (!(o.failFraction > 0 && o.failFraction < 1))
    throw new OptionError(`invalid failFraction: ${o.failFraction}; must be 0 < failFraction < 1`);
  for (let i = 0; i < set.nSweeps; i++) {
    const c = set.conditions[i];
    if (!num(c[o.frequencyKey]) || !((c[o.frequencyKey] as number) > 0)) {
      throw new AnalysisError(
        `sweep ${i}: "${o.frequencyKey}" must be a frequency > 0 Hz (got ${JSON.stringify(c[o.frequencyKey])})`,
      );
    }
    if (!Number.isInteger(c[o.pulsesKey]) || !((c[o.pulsesKey] as number) >= 2)) {
      throw new AnalysisError(
        `sweep ${i}: "${o.pulsesKey}" must be an integer >= 2 (got ${JSON.stringify(c[o.pulsesKey])})`,
      );
    }
  }
  const by =
    o.by ??
    ['preparation', 'distanceMm', 'temperatureC', 'concentration'].filter((k) => set.conditions.some((c) => k in c));
  const u = set.units;
  const groups = new Map<string, number[]>();
  for (let i = 0; i < set.nSweeps; i++) {
    const c = set.conditions[i];
    const id = JSON.stringify([...by.map((k) => c[k] ?? null), c[o.frequencyKey], c[o.pulsesKey]]);
    const g = groups.get(id);
    if (g) g.push(i);
    else groups.set(id, [i]);
  }
  const points: Row[] = [],
    summary: Row[] = [];
  const dt = 1000 / set.fs;
  for (const [, idx] of groups) {
    const c0 = set.conditions[idx[0]];
    const hz = c0[o.frequencyKey] as number,
      n = c0[o.pulsesKey] as number;
    const head: Row = { ...Object.fromEntries(by.map((k) => [k, c0[k] ?? null])), ...carried(set, idx, by) };
    const period = 1000 / hz;
    const mean = meanSweeps(set, idx);
    const lastIndex = Math.round(((n - 1) * period - set.t0Ms) / dt);
    if (lastIndex >= set.nSamples) {
      throw new AnalysisError(
        `train at ${hz} Hz with ${n} pulses: pulse ${n} at ${(n - 1) * period} ms is after the sweep's end ` +
          `(${set.t0Ms + (set.nSamples - 1) * dt} ms)`,
      );
    }
    const traces: Float64Array[] = [],
      rem: number[] = [];
    for (let k = 0; k < n; k++) {
      const l = lockToStimulus(mean, set.fs, set.t0Ms, k * period, o.blankMs);
      // before its own stimulus: the quiet pre-train samples (the noise level comes from there, not from earlier responses)
      const zero = Math.min(l.y.length, Math.max(0, Math.round(-set.t0Ms / dt)));
      for (let i = 0; i < zero; i++) l.y[i] = mean[i];
      // own window: nothing from the next pulse on
      if (k + 1 < n) {
        const cut = Math.round((period - set.t0Ms) / dt);
        for (let i = Math.max(0, cut); i < l.y.length; i++) l.y[i] = 0;
      }
      traces.push(l.y);
      rem.push(l.remainderMs);
    }
    // and pulse 1 without the cut at pulse 2: where each class's pulse-1 response lies
    traces.push(lockToStimulus(mean, set.fs, set.t0Ms, 0, o.blankMs).y);
    rem.push(0);
    const data = new Float64Array(traces.length * set.nSamples);
    traces.forEach((t, k) => data.set(t, k * set.nSamples));
    const conds = traces.map((_, k) => ({
      ...head,
      distanceMm: c0.distanceMm ?? null,
      temperatureC: c0.temperatureC ?? null,
      pulse: k < n ? k + 1 : 1,
    }));
    // every pulse's response keeps pulse 1's polarity per class (unless given)
    const rows = measureLocked(set, data, conds, o.components);
    for (const cls of [...new Set(rows.map((r) => r.class))]) {
      const all = rows.filter((r) => r.class === cls).sort((a, b) => a.sweep - b.sweep);
      const cr = all.slice(0, n),
        whole = all[n];
      const ref = cr[0];
      if (whole.status === 'measured' && num(whole.centroid_from_ms) && (whole.centroid_from_ms as number) >= period) {
        // the class answers pulse 1 only after pulse 2: it has no window of its own at this frequency
        const why =
          `the pulse-1 response starts at ${ms(whole.centroid_from_ms as number)} ms, after the next pulse at ` +
          `${ms(period)} ms: no window of its own at ${hz} Hz`;
        cr.forEach((_, k) =>
          points.push({
            ...head,
            class: cls,
            train_hz: hz,
            pulses: n,
            pulse: k + 1,
            stimulus_ms: k * period,
            detected: false,
            latency_ms: null,
            [`amplitude_${u}`]: null,
            [`area_${u}_ms`]: null,
            latency_increase_ms: null,
            amplitude_fraction: null,
            area_fraction: null,
            status: 'not measured',
            reason: why,
          }),
        );
        summary.push({
          ...head,
          class: cls,
          train_hz: hz,
          pulses: n,
          first_latency_ms: null,
          status: 'not measured',
          reason: why,
        });
        continue;
      }
      if (!(o.latency in ref))
        throw new OptionError(`invalid latency: ${JSON.stringify(o.latency)} is not a column of the component table`);
      const refOk = ref.status === 'measured' && num(ref[o.latency]);
      const lat0 = refOk ? (ref[o.latency] as number) : null;
      const pts: Row[] = cr.map((r, k) => {
        const m = r.status === 'measured';
        const lat = m && num(r[o.latency]) ? (r[o.latency] as number) - rem[k] : null;
        return {
          ...head,
          class: cls,
          train_hz: hz,
          pulses: n,
          pulse: k + 1,
          stimulus_ms: k * period,
          detected: m,
          latency_ms: lat,
          [`amplitude_${u}`]: m ? r[`amplitude_${u}`] : null,
          [`area_${u}_ms`]: m ? r[`area_${u}_ms`] : null,
          latency_increase_ms: refOk && lat !== null ? lat - lat0! : null,
          amplitude_fraction: refOk && m ? (r[`amplitude_${u}`] as number) / (ref[`amplitude_${u}`] as number) : null,
          area_fraction: refOk && m ? (r[`area_${u}_ms`] as number) / (ref[`area_${u}_ms`] as number) : null,
          status: refOk ? r.status : 'not measured',
          reason: refOk ? (r.reason ?? null) : `pulse-1 response of ${cls} not measured (${ref.status})`,
        };
      });
      points.push(...pts);
      const row: Row = { ...head, class: cls, train_hz: hz, pulses: n, first_latency_ms: lat0 };
      if (!refOk) {
        const cut =
          whole.status === 'measured' && num(whole.centroid_to_ms) && (whole.centroid_to_ms as number) > period
            ? `; uncut, it spans ${ms(whole.centroid_from_ms as number)}-${ms(whole.centroid_to_ms as number)} ms, past the next pulse at ` +
              `${ms(period)} ms, so its own window holds too little of it`
            : '';
        const why = `pulse-1 response not measured (${ref.status}${ref.reason ? `: ${ref.reason}` : ''})${cut}`;
        summary.push({ ...row, status: 'not measured', reason: why });
        continue;
      }
      const notes: string[] = [];
      if (num(ref.centroid_to_ms) && (ref.centroid_to_ms as number) > period) {
        notes.push(
          `the pulse-1 response lasts to ${ms(ref.centroid_to_ms as number)} ms, past the next pulse at ${ms(period)} ms: ` +
            'later responses overlap its tail',
        );
      }
      const noResponse = (p: Row) => p.status === 'not detected' || p.status === 'not resolved';
      const fail = pts.findIndex(
        (p) => noResponse(p) || (num(p.area_fraction) && (p.area_fraction as number) < o.failFraction),
      );
      const last = pts[pts.length - 1];
      summary.push({
        ...row,
        last_latency_increase_ms: last.latency_increase_ms,
        last_latency_increase_pct: num(last.latency_increase_ms)
          ? (100 * (last.latency_increase_ms as number)) / lat0!
          : null,
        last_area_fraction: last.area_fraction,
        failure_pulse: fail < 0 ? null : fail + 1,
        status: notes.length ? notes.join('; ') : 'ok',
        reason:
          fail < 0
            ? null
            : `fails at pulse ${fail + 1} (${noResponse(pts[fail]) ? String(pts[fail].status) : `area below ${o.failFraction} of pulse 1`})`,
      });
    }
  }
  const step: Step = {
    verb: 'trains',
    version: VERSION,
    options: {
      by,
      frequencyKey: o.frequencyKey,
      pulsesKey: o.pulsesKey,
      latency: o.latency,
      blankMs: o.blankMs,
      failFraction: o.failFraction,
      components: o.components ?? {},
      windows: 'each response from its own stimulus to the next stimulus',
    },
  };
  return new TrainResult(points, summary, [...set.history, step], set.sources);
}
