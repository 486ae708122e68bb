/**
 * Paired-pulse recovery (refractory period) per fibre class.
 *
 * Sweeps carry `pulsePair` ('paired', 'test-alone' or 'conditioning-alone') and, for paired sweeps, `intervalMs`
 * (the interstimulus interval: conditioning pulse at 0 ms, test pulse at the interval). Per group (preparation,
 * distance, temperature, concentration where present) the sweeps of each kind and interval are averaged. The
 * conditioning response is removed from each paired average by subtracting the conditioning-alone average; without
 * conditioning-alone sweeps it is extrapolated from the same sweep: an exponential decay fitted to the last
 * `extrapolateMs` before the test pulse (a straight level when the tail does not decay), said in every row's status;
 * a test response whose window overlaps a class's conditioning response that still runs at the test pulse is then
 * 'not measured' (extrapolation cannot predict it).
 * The difference is then moved so that the test pulse is at 0 ms (whole samples; the remaining fraction of a sample is
 * taken off every latency; before 0 ms it holds the quiet pre-conditioning samples, where the noise level is taken),
 * samples in `blankMs` after the test pulse are bridged by a straight line (its artifact),
 * and the test response is measured with measureComponents exactly as the test-alone average is. Per class:
 * amplitude, area and latency of the test response, as fractions of (and, for latency, the increase over) the
 * test-alone response.
 *
 * Conventions (after Bostock, Cikurel & Burke 1998, Muscle Nerve 21:137-158, from memory): the conditioning
 * response is subtracted before the test response is measured; recovery is shown against the interstimulus interval
 * on a log axis; the absolute refractory period is the longest interval with no test response above detection
 * (here: no detected response at that interval, while every longer interval has one; bracketed by the next interval
 * tested). Recovery curve: a logistic function of log10 interval with floor 0 and top 1 (full recovery = the
 * test-alone response), F(x) = 1 / (1 + exp((log10 R50 - x) / s)), fitted by Levenberg-Marquardt (fit/lm.ts) to the
 * area fractions (intervals with no detected test response count as 0); R50 and R90 = R50 x 10^(s ln 9) are
 * reported with profile-likelihood 95% intervals (Bates & Watts 1988, ch. 6), R90 by refitting the same curve with
 * log10 R90 as a parameter. Refractory slowing: the latency increase of the test response at the shortest interval
 * with a measured response.
 */
import { SweepSet, type ConditionValue, type Step, type Source } from '../sweeps/SweepSet';
import { Result } from '../notebook/result';
import { measureComponents, type ComponentOptions, type ComponentRow } from '../measure/components';
import { fitCurve, profileCI, type FitResult } from '../fit/lm';
import { AnalysisError, OptionError } from '../errors';
import { checkKeys } from '../validate';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';
import type { Figure } from '../plot/figure';

import type { Row } from '../registry/types';

export const pairedPulseDefaults = {
  roleKey: 'pulsePair',
  intervalKey: 'intervalMs',
  latency: 'peak_ms',
  measure: 'area' as 'area' | 'amplitude',
  blankMs: [0, 0.12] as [number, number],
  extrapolateMs: 0.5,
  minIntervals: 4,
};
const KEYS = [
  'components',
  'by',
  'roleKey',
  'intervalKey',
  'latency',
  'measure',
  'blankMs',
  'extrapolateMs',
  'minIntervals',
];

export interface PairedPulseOptions {
  /** options of measureComponents for the test responses (preset, classes, k, ...) */
  components?: ComponentOptions;
  /** conditions that make separate curves (default: preparation, distanceMm, temperatureC, concentration where present) */
  by?: string[];
  /** condition naming the sweep kind (default 'pulsePair') */
  roleKey?: string;
  /** condition holding the interstimulus interval in ms (default 'intervalMs') */
  intervalKey?: string;
  /** latency column (default 'peak_ms'; any latency column of the component table, e.g. 'onset10_ms', 'centroid_ms') */
  latency?: string;
  /** measure the recovery curve is fitted to: 'area' (default) or 'amplitude' */
  measure?: 'area' | 'amplitude';
  /** window after each test pulse bridged by a straight line (its artifact), ms (default [0, 0.12]) */
  blankMs?: [number, number];
  /** without conditioning-alone sweeps: length of the tail before the test pulse the extrapolation is fitted to, ms (default 0.5) */
  extrapolateMs?: number;
  /** fewest intervals a curve fit needs (default 4) */
  minIntervals?: number;
}

/** Mean of several sweeps. */
export function meanSweeps(set: SweepSet, idx: readonly number[]): Float64Array {
  const out = new Float64Array(set.nSamples);
  for (const i of idx) {
    const x = set.sweep(i);
    for (let j = 0; j < out.length; j++) out[j] += x[j];
  }
  for (let j = 0; j < out.length; j++) out[j] /= idx.length;
  return out;
}

/**
 * A sweep moved so that a stimulus at `atMs` is at 0 ms: whole samples (the fraction left, in ms, is returned and
 * must be taken off latencies); the end is padded with zeros. `blankMs` after the stimulus is bridged linearly.
 */
export function lockToStimulus(
  x: Float64Array,
  fs: number,
  t0Ms: number,
  atMs: number,
  blankMs: [number, number] | null,
): { y: Float64Array; remainderMs: number } {
  const dt = 1000 / fs;
  const n = Math.round(atMs / dt);
  const y = new Float64Array(x.length);
  for (let i = 0; i < y.length; i++) y[i] = i + n < x.length && i + n >= 0 ? x[i + n] : 0;
  if (blankMs) {
    const a = Math.max(0, Math.floor((blankMs[0] - t0Ms) / dt)),
      b = Math.min(y.length - 1, Math.ceil((blankMs[1] - t0Ms) / dt));
    if (a > 0 && b > a) for (let i = a + 1; i < b; i++) y[i] = y[a] + ((y[b] - y[a]) * (i - a)) / (b - a);
  }
  return { y, remainderMs: atMs - n * dt };
}

/** Extrapolate a decaying tail over [from, end): exponential fit (log-linear) to the window, else its mean level. */
export function extrapolateTail(
  x: Float64Array,
  fs: number,
  t0Ms: number,
  testMs: number,
  windowMs: number,
): { y: Float64Array; method: string } {
  const dt = 1000 / fs;
  const b = Math.round((testMs - t0Ms) / dt),
    a = Math.max(0, b - Math.max(3, Math.round(windowMs / dt)));
  const y = new Float64Array(x.length);
  for (let i = 0; i < b && i < x.length; i++) y[i] = x[i];
  const seg = Array.from(x.subarray(a, b));
  const sign = Math.sign(seg.reduce((p, q) => p + q, 0));
  let method = 'mean level of the last part before the test pulse';
  let f = (_i: number) => seg.reduce((p, q) => p + q, 0) / seg.length;
  if (sign !== 0 && seg.every((v) => v * sign > 0)) {
    const tx = seg.map((_, k) => k),
      ly = seg.map((v) => Math.log(v * sign));
    const mx = tx.reduce((p, q) => p + q, 0) / tx.length,
      my = ly.reduce((p, q) => p + q, 0) / ly.length;
    let sxy = 0,
      sxx = 0;
    for (let k = 0; k < tx.length; k++) {
      sxy += (tx[k] - mx) * (ly[k] - my);
      sxx += (tx[k] - mx) ** 2;
    }
    const slope = sxy / sxx;
    if (slope < 0) {
      method = 'exponential decay fitted to the last part before the test pulse';
      f = (i) => sign * Math.exp(my + slope * (i - a - mx));
    }
  }
  for (let i = b; i < x.length; i++) y[i] = f(i);
  return { y, method };
}

/** Logistic recovery in log10 interval, floor 0, top 1; p = [log10 R50, s]. */
export const recoveryLogistic = (x: number, p: readonly number[]): number => 1 / (1 + Math.exp((p[0] - x) / p[1]));
/** The same curve with p = [log10 R90, s]: R50 = R90 / 10^(s ln 9). */
export const recoveryLogistic90 = (x: number, p: readonly number[]): number =>
  1 / (1 + Math.exp((p[0] - p[1] * Math.log(9) - x) / p[1]));

export interface RecoveryFit {
  r50Ms: number;
  r50Ci: [number, number];
  r90Ms: number;
  r90Ci: [number, number];
  slope: number;
  fit: FitResult;
  status: string;
}

/** Fit the recovery logistic to (interval ms, fraction) points; profile-likelihood 95% intervals for R50 and R90. */
export function fitRecovery(intervalsMs: readonly number[], fractions: readonly number[]): RecoveryFit {
  if (intervalsMs.length !== fractions.length || intervalsMs.length < 3) {
    throw new AnalysisError(`a recovery fit needs 3 or more points (got ${intervalsMs.length})`);
  }
  const x = intervalsMs.map((v) => Math.log10(v));
  let x50 = x[Math.floor(x.length / 2)];
  const order = x.map((_, i) => i).sort((i, j) => x[i] - x[j]);
  for (const i of order)
    if (fractions[i] >= 0.5) {
      x50 = x[i];
      break;
    }
  const names = ['log10_r50', 'slope'];
  const f = fitCurve({
    model: recoveryLogistic,
    x,
    y: fractions,
    p0: [x50, 0.1],
    names,
    lower: [-Infinity, 1e-4],
    upper: [Infinity, 5],
  });
  const f9 = fitCurve({
    model: recoveryLogistic90,
    x,
    y: fractions,
    p0: [f.params[0] + f.params[1] * Math.log(9), f.params[1]],
    names: ['log10_r90', 'slope'],
    lower: [-Infinity, 1e-4],
    upper: [Infinity, 5],
  });
  const ci = (g: FitResult): [number, number] => {
    const c = profileCI(g, 0);
    return [10 ** c[0], 10 ** c[1]];
  };
  const st = [...new Set([...f.status, ...f9.status])].filter((q) => q !== 'ok');
  return {
    r50Ms: 10 ** f.params[0],
    r50Ci: ci(f),
    r90Ms: 10 ** f9.params[0],
    r90Ci: ci(f9),
    slope: f.params[1],
    fit: f,
    status: st.length ? st.join('; ') : 'ok',
  };
}

export class PairedPulseResult extends Result {
  constructor(
    readonly points: Row[],
    readonly summary: Row[],
    readonly fits: Map<string, FitResult>,
    readonly history: readonly Step[],
    readonly sources: readonly Source[] = [],
    readonly units = 'uV',
  ) {
    super();
  }
  /** Tables for the bundle: paired_pulse (per group, class and interval) and paired_pulse_summary (per group and class). */
  tables(): Record<string, readonly object[]> {
    return { paired_pulse: this.points, paired_pulse_summary: this.summary };
  }
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.summary as Record<string, unknown>[]);
  }
  toHTML(): string {
    return tableHtml(this.summary, {
      caption: 'Paired-pulse recovery per class (logistic in log10 interval; profile 95% intervals)',
    });
  }
  toString(): string {
    return (
      'PairedPulseResult\n' +
      tableText(this.summary, {
        columns: [
          'preparation',
          'class',
          'arp_ms',
          'arp_next_ms',
          'r50_ms',
          'r50_ci95_low',
          'r50_ci95_high',
          'r90_ms',
          'latency_increase_ms',
          'status',
        ].filter((c) => this.summary.some((r) => c in r)),
      })
    );
  }
  /**
   * Recovery curves per class (recoveryFigure of src/plot/recovery.ts, which registers itself when loaded, as the
   * package index loads it: this layer does not import the plot layer).
   */
  figure(): Figure {
    if (!figures.recovery)
      throw new AnalysisError(
        'the recovery figure is not loaded: import it from the package ("fascicle") or from src/plot/recovery',
      );
    return figures.recovery(this);
  }
}

/** Figure builders of this module's results, registered by src/plot/recovery.ts when it loads. */
const figures: { recovery: ((r: PairedPulseResult) => Figure) | null } = { recovery: null };
/** @internal called by src/plot/recovery.ts */
export function registerRecoveryFigure(f: (r: PairedPulseResult) => Figure): void {
  figures.recovery = f;
}

const num = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

/** Span after a slower class's boundary over which a faster class still falling shows the split is no trough, ms. */
export const SPLIT_CHECK_MS = 0.1;

/**
 * Test responses whose split from the faster class lies on that class's falling edge are 'not measured'. When a
 * slower class's test response is smaller than the faster class's tail where its window opens (at short intervals
 * the slower class's response is small and the faster one's slowed tail runs into its window), the trough search
 * takes the window's first sample as the slower class's peak, and the class is measured above a line from the
 * faster class's tail: a wrong, often negative, area. Detected here, per trace: the trace (in the faster class's
 * polarity) still falls by more than 3 x noise over the SPLIT_CHECK_MS after the boundary (common practice, no
 * source: a boundary between two responses lies where the signal stops falling).
 */
export function splitOnFallingEdge<R extends Record<string, ConditionValue | undefined>>(
  rows: R[],
  traces: readonly Float64Array[],
  set: { fs: number; t0Ms: number },
  units: string,
): R[] {
  const dt = 1000 / set.fs;
  const at = (y: Float64Array, t: number) => y[Math.min(y.length - 1, Math.max(0, Math.round((t - set.t0Ms) / dt)))];
  return rows.map((r, i) => {
    const prev = rows[i - 1];
    if (
      !prev ||
      prev.sweep !== r.sweep ||
      r.status !== 'measured' ||
      !num(r.window_start_ms) ||
      !num(r.noise_uV ?? r[`noise_${units}`])
    )
      return r;
    const y = traces[r.sweep as number];
    const p = prev.polarity === -1 ? -1 : 1;
    const t = r.window_start_ms as number;
    const drop = p * (at(y, t) - at(y, t + SPLIT_CHECK_MS));
    const noise = (r[`noise_${units}`] ?? r.noise_uV) as number;
    if (!(drop > 3 * noise)) return r;
    return {
      ...r,
      status: 'not measured',
      reason:
        `its split from ${prev.class} at ${t.toFixed(3)} ms lies on ${prev.class}'s falling edge (the trace falls ` +
        `${drop.toPrecision(3)} ${units} more in the next ${SPLIT_CHECK_MS} ms, noise ${noise.toPrecision(3)} ${units}): ` +
        "no trough separates the two test responses, so this class's part cannot be measured",
    };
  });
}

/** Conditions that describe the animal, carried into the rows when constant over a curve's sweeps (for groups). */
export const CARRIED_CONDITIONS = ['group', 'animal'];

/** The CARRIED_CONDITIONS (not in `by`) that have one value over the sweeps `idx`. */
export function carried(set: SweepSet, idx: readonly number[], by: readonly string[]): Row {
  const out: Row = {};
  for (const k of CARRIED_CONDITIONS) {
    if (by.includes(k)) continue;
    const v = set.conditions[idx[0]][k];
    if (v === undefined || v === null) continue;
    if (idx.every((i) => set.conditions[i][k] === v)) out[k] = v;
  }
  return out;
}

/**
 * Paired-pulse recovery per class and group (module comment). Throws AnalysisError when the set has no paired or no
 * test-alone sweeps, naming the condition it looked for.
 */
export function pairedPulse(set: SweepSet, options: PairedPulseOptions = {}): PairedPulseResult {
  checkKeys('pairedPulse options', options as Record<string, unknown>, KEYS);
  const o = { ...pairedPulseDefaults, ...options };
  if (o.measure !== 'area' && o.measure !== 'amplitude') {
    throw new OptionError(`invalid measure: ${JSON.stringify(o.measure)}; must be "area" or "amplitude"`);
  }
  if (!(o.extrapolateMs > 0)) throw new OptionError(`invalid extrapolateMs: ${o.extrapolateMs}; must be > 0 ms`);
  if (!Number.isInteger(o.minIntervals) || o.minIntervals < 3) {
    throw new OptionError(`invalid minIntervals: ${o.minIntervals}; must be an integer >= 3`);
  }
  const role = (i: number) => set.conditions[i][o.roleKey];
  const roles = new Set(set.conditions.map((c) => c[o.roleKey]));
  for (const r of roles) {
    if (r !== 'paired' && r !== 'test-alone' && r !== 'conditioning-alone') {
      throw new AnalysisError(
        `condition "${o.roleKey}" has value ${JSON.stringify(r)}; expected "paired", "test-alone" or "conditioning-alone"`,
      );
    }
  }
  if (!roles.has('paired') || !roles.has('test-alone')) {
    throw new AnalysisError(`paired-pulse analysis needs sweeps with "${o.roleKey}" = "paired" and "test-alone"`);
  }
  for (let i = 0; i < set.nSweeps; i++) {
    if (role(i) === 'paired' && !num(set.conditions[i][o.intervalKey])) {
      throw new AnalysisError(`sweep ${i}: paired sweep without a numeric "${o.intervalKey}" (ms)`);
    }
  }
  const by =
    o.by ??
    ['preparation', 'distanceMm', 'temperatureC', 'concentration'].filter((k) => set.conditions.some((c) => k in c));
  const u = set.units;
  const groups = new Map<string, number[]>();
  for (let i = 0; i < set.nSweeps; i++) {
    const id = JSON.stringify(by.map((k) => set.conditions[i][k] ?? null));
    const g = groups.get(id);
    if (g) g.push(i);
    else groups.set(id, [i]);
  }
  const points: Row[] = [],
    summary: Row[] = [];
  const fits = new Map<string, FitResult>();
  const latCol = o.latency,
    measCol = o.measure === 'area' ? `area_${u}_ms` : `amplitude_${u}`;
  for (const [, idx] of groups) {
    const head: Row = {
      ...Object.fromEntries(by.map((k) => [k, set.conditions[idx[0]][k] ?? null])),
      ...carried(set, idx, by),
    };
    const test = idx.filter((i) => role(i) === 'test-alone'),
      cond = idx.filter((i) => role(i) === 'conditioning-alone');
    const isis = [
      ...new Set(idx.filter((i) => role(i) === 'paired').map((i) => set.conditions[i][o.intervalKey] as number)),
    ].sort((a, b) => a - b);
    if (!test.length || !isis.length) {
      const why = !test.length ? 'no test-alone sweeps in this group' : 'no paired sweeps in this group';
      summary.push({ ...head, class: null, status: 'not measured', reason: why });
      continue;
    }
    const condMean = cond.length ? meanSweeps(set, cond) : null;
    const traces: Float64Array[] = [lockToStimulus(meanSweeps(set, test), set.fs, set.t0Ms, 0, o.blankMs).y];
    const remainder: number[] = [0];
    const subtraction: string[] = ['none (test alone)'];
    const nSweeps: number[] = [test.length];
    for (const isi of isis) {
      const pi = idx.filter((i) => role(i) === 'paired' && set.conditions[i][o.intervalKey] === isi);
      const pm = meanSweeps(set, pi);
      const ref = condMean ?? extrapolateTail(pm, set.fs, set.t0Ms, isi, o.extrapolateMs);
      const r = condMean ? condMean : (ref as { y: Float64Array }).y;
      const d = new Float64Array(pm.length);
      for (let j = 0; j < d.length; j++) d[j] = pm[j] - r[j];
      const l = lockToStimulus(d, set.fs, set.t0Ms, isi, o.blankMs);
      // before the test pulse: the quiet pre-conditioning samples (of the difference; of the paired mean when the
      // conditioning response was extrapolated, where the difference is zero by construction)
      const quiet = condMean ? d : pm;
      const zero = Math.min(l.y.length, Math.max(0, Math.round(-set.t0Ms / (1000 / set.fs))));
      for (let j = 0; j < zero; j++) l.y[j] = quiet[j];
      traces.push(l.y);
      remainder.push(l.remainderMs);
      nSweeps.push(pi.length);
      subtraction.push(
        condMean
          ? `conditioning-alone mean (${cond.length} sweeps)`
          : `extrapolated: ${(ref as { method: string }).method}`,
      );
    }
    const base = set.conditions[test[0]];
    const data = new Float64Array(traces.length * set.nSamples);
    traces.forEach((t, k) => data.set(t, k * set.nSamples));
    const conds = traces.map((_, k) => ({
      ...head,
      distanceMm: base.distanceMm ?? null,
      temperatureC: base.temperatureC ?? null,
      intervalMs: k ? isis[k - 1] : null,
    }));
    // the test responses keep the test-alone response's polarity per class (unless given): chosen on the test-alone
    // average alone, so that differences at short intervals cannot flip it
    const rows = splitOnFallingEdge(measureLocked(set, data, conds, o.components), traces, set, u);
    const classes = [...new Set(rows.map((r) => r.class))];
    // spans of the classes' test-alone responses (= the conditioning responses), ms from their stimulus
    const spans = rows
      .filter((r) => r.sweep === 0 && r.status === 'measured' && num(r.centroid_from_ms) && num(r.centroid_to_ms))
      .map((r) => ({ cls: r.class, from: r.centroid_from_ms as number, to: r.centroid_to_ms as number }));
    /** Without conditioning-alone sweeps: a class whose conditioning response still runs at the test pulse and overlaps the test window. */
    const overlap = (cls: string, isi: number): string | null => {
      if (condMean) return null;
      const own = spans.find((q) => q.cls === cls);
      if (!own) return null;
      const y = spans.find((q) => q.to > isi && q.from < isi + own.to && q.to > isi + own.from);
      return y ? y.cls : null;
    };
    for (const cls of classes) {
      const cr = rows.filter((r) => r.class === cls);
      const ref = cr.find((r) => r.sweep === 0)!;
      const refOk = ref.status === 'measured' && num(ref[latCol]) && num(ref[measCol]);
      if (!(latCol in ref))
        throw new OptionError(`invalid latency: ${JSON.stringify(latCol)} is not a column of the component table`);
      const pts: Row[] = [];
      for (let k = 1; k < traces.length; k++) {
        const r0 = cr.find((q) => q.sweep === k)!;
        const ov = overlap(cls, isis[k - 1]);
        const why =
          `the conditioning response of ${ov} still runs at the test pulse and overlaps this class's test window; ` +
          'extrapolation cannot remove it (give conditioning-alone sweeps)';
        const r = ov ? { ...r0, status: 'not measured', reason: why } : r0;
        const measured = r.status === 'measured';
        const lat = measured && num(r[latCol]) ? (r[latCol] as number) - remainder[k] : null;
        const ok = refOk && measured;
        const p: Row = {
          ...head,
          class: cls,
          interval_ms: isis[k - 1],
          sweeps: nSweeps[k],
          conditioning_subtracted: subtraction[k],
          detected: refOk && measured,
          [`amplitude_${u}`]: measured ? (r[`amplitude_${u}`] as number) : null,
          [`area_${u}_ms`]: measured ? (r[`area_${u}_ms`] as number) : null,
          latency_ms: lat,
          amplitude_fraction: ok ? (r[`amplitude_${u}`] as number) / (ref[`amplitude_${u}`] as number) : null,
          area_fraction: ok ? (r[`area_${u}_ms`] as number) / (ref[`area_${u}_ms`] as number) : null,
          latency_increase_ms: ok && lat !== null ? lat - (ref[latCol] as number) : null,
          status: !refOk ? 'not measured' : r.status,
          reason: !refOk ? `test-alone response of ${cls} not measured (${ref.status})` : (r.reason ?? null),
        };
        pts.push(p);
      }
      points.push(...pts);
      const row: Row = {
        ...head,
        class: cls,
        intervals: isis.length,
        [`test_alone_amplitude_${u}`]: refOk ? ref[`amplitude_${u}`] : null,
        [`test_alone_area_${u}_ms`]: refOk ? ref[`area_${u}_ms`] : null,
        test_alone_latency_ms: refOk ? ref[latCol] : null,
      };
      if (!refOk) {
        summary.push({
          ...row,
          status: 'not measured',
          reason: `test-alone response not measured (${ref.status}${ref.reason ? `: ${ref.reason}` : ''})`,
        });
        continue;
      }
      const notes: string[] = [];
      if (!condMean)
        notes.push('conditioning response extrapolated from each paired sweep (no conditioning-alone sweeps)');
      // absolute refractory period: the longest interval without a response while every longer interval has one
      // (intervals whose test response could not be measured at all take no part)
      const usable = pts.filter((p) => p.status !== 'not measured');
      const uIsi = usable.map((p) => p.interval_ms as number);
      const det = usable.map((p) => p.detected === true);
      let j = det.length;
      while (j > 0 && det[j - 1]) j--;
      if (!usable.length) {
        Object.assign(row, { arp_ms: null, arp_next_ms: null });
        notes.push('no interval with a measurable test response');
      } else if (j === det.length) {
        Object.assign(row, { arp_ms: null, arp_next_ms: null });
        notes.push('no test response at the longest interval tested: the absolute refractory period is not bracketed');
      } else if (j === 0) {
        Object.assign(row, { arp_ms: null, arp_next_ms: uIsi[0] });
        notes.push(
          `a test response at every usable interval: the absolute refractory period is shorter than ${uIsi[0]} ms`,
        );
      } else Object.assign(row, { arp_ms: uIsi[j - 1], arp_next_ms: uIsi[j] });
      if (usable.length < pts.length)
        notes.push(`${pts.length - usable.length} interval(s) not measured (see the rows' reasons)`);
      if (det.slice(0, j).some(Boolean)) {
        notes.push(
          'a response detected at a shorter interval than the refractory period found (isolated; counted in the fit)',
        );
      }
      // refractory slowing at the shortest interval with a response
      const first = pts.find((p) => num(p.latency_increase_ms));
      Object.assign(row, {
        latency_increase_ms: first ? first.latency_increase_ms : null,
        latency_increase_interval_ms: first ? first.interval_ms : null,
      });
      // recovery curve fit
      const fx: number[] = [],
        fy: number[] = [];
      const fracCol = o.measure === 'area' ? 'area_fraction' : 'amplitude_fraction';
      // no response at or below the refractory period counts as 0 (not detected or not resolved there); elsewhere a
      // response that was not detected counts as 0 and one that was not resolved is left out
      const arpAt = num(row.arp_ms) ? (row.arp_ms as number) : -Infinity;
      for (const p of pts) {
        const x = p.interval_ms as number;
        if (p.status === 'not detected' || (x <= arpAt && p.detected !== true)) {
          fx.push(x);
          fy.push(0);
        } else if (num(p[fracCol])) {
          fx.push(x);
          fy.push(p[fracCol] as number);
        }
      }
      if (fx.length < o.minIntervals) {
        const st = notes
          .concat(`recovery curve not fitted: ${fx.length} usable intervals, need ${o.minIntervals}`)
          .join('; ');
        summary.push({ ...row, r50_ms: null, r90_ms: null, status: st, reason: 'too few intervals' });
        continue;
      }
      const fr = fitRecovery(fx, fy);
      fits.set(JSON.stringify([...by.map((k) => head[k]), cls]), fr.fit);
      const within = (v: number) => v >= isis[0] && v <= isis[isis.length - 1];
      if (!within(fr.r50Ms) || !within(fr.r90Ms)) notes.push('R50 or R90 outside the intervals tested (extrapolated)');
      if (fr.status !== 'ok') notes.push(fr.status);
      summary.push({
        ...row,
        recovery_measure: o.measure,
        r50_ms: fr.r50Ms,
        r50_ci95_low: fr.r50Ci[0],
        r50_ci95_high: fr.r50Ci[1],
        r90_ms: fr.r90Ms,
        r90_ci95_low: fr.r90Ci[0],
        r90_ci95_high: fr.r90Ci[1],
        slope_log10: fr.slope,
        status: notes.length ? notes.join('; ') : 'ok',
        reason: null,
      });
    }
  }
  const step: Step = {
    verb: 'pairedPulse',
    version: VERSION,
    options: {
      by,
      roleKey: o.roleKey,
      intervalKey: o.intervalKey,
      latency: latCol,
      measure: o.measure,
      blankMs: o.blankMs,
      extrapolateMs: o.extrapolateMs,
      minIntervals: o.minIntervals,
      components: o.components ?? {},
      model: 'logistic in log10 interval, floor 0, top 1 (test alone)',
      intervals: 'profile likelihood 95%',
      arp: 'longest interval with no detected test response, every longer interval detected',
    },
  };
  return new PairedPulseResult(points, summary, fits, [...set.history, step], set.sources, u);
}

/**
 * Measure stimulus-locked traces (one per `conds` row, on `set`'s time base) as components: above the sweep's baseline
 * (the flank before a class follows that trace's own stimulus), and with the first trace's polarity per class unless
 * the options give one.
 */
export function measureLocked(
  set: SweepSet,
  data: Float64Array,
  conds: Record<string, ConditionValue>[],
  components: ComponentOptions = {},
): ComponentRow[] {
  const locked = new SweepSet({
    data,
    nSweeps: conds.length,
    nSamples: set.nSamples,
    fs: set.fs,
    t0Ms: set.t0Ms,
    units: set.units,
    conditions: conds,
    extras: set.extras,
  });
  const copt: ComponentOptions = { localBaseline: false, ...components };
  const polarity = copt.polarity ?? measureComponents(locked.select([0]), copt).resolved.polarities;
  return measureComponents(locked, { ...copt, polarity }).rows;
}
