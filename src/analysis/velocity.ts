/**
 * Conduction velocity per fiber class, three ways (each with a 95% CI where the data give one):
 * - single site: distance / (latency - utilisation), summarised over sweeps;
 * - two sites: delta distance / delta latency over pairs of sweeps recorded at the same time (or
 *   of the same condition), the delay from the same latency definition at both sites, or from the
 *   cross-correlation of the class component (sub-sample refinement); for neighbouring sites, and
 *   with three or more sites also for the outermost pair;
 * - several distances: latency regressed on distance; velocity = 1 / slope with a t-based CI,
 *   intercept = utilisation time.
 * Every row names its latency definition (`definition`, `latency_column`): onset at a fraction of the
 * class's own peak, half-rise, peak, centroid (src/measure makes the columns; the same definition at
 * every distance, so two-site and regression velocities compare like with like).
 *
 * One bad estimate never discards good ones: a value that cannot be right becomes a row with
 * `status` and `reason`, its velocity left empty (the computed value in `rejected_velocity_m_s`),
 * and every other class, group and estimator goes on. Checks (common practice, no source):
 * - outside every nerve fibre's range (0.02-300 m/s): rejected (usually a distance or time unit);
 * - a delay shorter than 2 sample intervals, not positive, or a cross-correlation maximum on the
 *   edge of its search range: that pair is left out (counted); no pair left: rejected;
 * - latency not increasing with distance: rejected;
 * - a utilisation time (intercept at distance 0, from the regression or implied by a two-site
 *   velocity) below -25% of the latency at the nearest site (-50% for onsets, which run ahead in a
 *   dispersing volley), and below 0 beyond its 95% CI: rejected (a latency cannot be shorter than
 *   its conduction time);
 * - outside the class's own velocity range at that temperature (two-site and regression rows; a
 *   single-site velocity is biased low by the utilisation time): kept, status "outside class range"
 *   (the wave may belong to another class, or the preset may not fit this nerve);
 * - a two-site onset, half-rise or peak velocity whose 95% CI reaches outside the class's own range: kept, status
 *   "imprecise" (the latency is not determined well enough at these sites: a flat top, a slow rise beside the noise
 *   or the decomposition's misfit). Its CI comes from the sweeps' spread and from each latency's own precision
 *   (latencyPrecision: the span of a peak within the noise of its maximum, the crossing time's error propagated
 *   from the noise), so one pair of averaged sweeps still gets an interval.
 * Conduction velocity in m/s equals mm/ms. Formulas: common practice, no source.
 */
import type { SweepSet, ConditionValue } from '../sweeps/SweepSet';
import { summarize, linearFit } from './stats';
import { tQuantile } from '../fit/dist';
import { xcorrDelay, latencyPrecision, type ResponseMeasure } from '../measure/response';
import type { ComponentRow, ResolvedComponentOptions } from '../measure/components';
import { scaledRange, type FiberClass } from '../measure/classes';

export type LatencyBasis = 'onset' | 'halfrise' | 'peak' | 'centroid';
export type VelocityStatus = 'ok' | 'outside class range' | 'imprecise' | 'implausible' | 'not detected';

export interface VelocityRow {
  method: 'single-site' | 'two-site' | 'regression';
  basis: LatencyBasis | 'xcorr';
  /** the latency definition in words */
  definition: string;
  /** the component-table column the latencies came from (null for cross-correlation) */
  latency_column: string | null;
  class: string;
  group: string;
  /** null when the status says the value cannot be right or nothing was measured */
  velocity_m_s: number | null;
  ci95_low_m_s: number | null;
  ci95_high_m_s: number | null;
  n: number;
  status: VelocityStatus;
  reason: string | null;
  [k: string]: ConditionValue;
}

export interface LatencyDefinition {
  basis: LatencyBasis;
  column: string;
  definition: string;
}

/** Fibres of no nerve conduct outside this range (m/s); common practice, no source. */
export const FIBRE_RANGE_M_S: [number, number] = [0.02, 300];
/** the least delay (in sample intervals) a two-site estimate accepts */
export const MIN_DELAY_SAMPLES = 2;
/**
 * a utilisation time below -this x the nearest latency (and below 0 beyond its CI) is impossible;
 * an onset, which travels with the faster fibres of a dispersing volley, may extrapolate a little
 * below zero, so onset latencies get twice the margin
 */
export const NEGATIVE_UTILISATION_FRACTION = 0.25;
const utilisationMargin = (basis: string) => (basis === 'onset' ? 2 : 1) * NEGATIVE_UTILISATION_FRACTION;

/**
 * The latency definitions a component table holds, in the order onset, half-rise, peak, centroid.
 * Onset: `onset<N>_ms` (N% of the class's own peak) when present, else the older `onset_ms`.
 */
export function latencyDefinitions(
  rows: readonly ComponentRow[],
  resolved?: ResolvedComponentOptions,
): LatencyDefinition[] {
  const cols = new Set<string>();
  for (const r of rows.slice(0, 50)) for (const k of Object.keys(r)) cols.add(k);
  const out: LatencyDefinition[] = [];
  const onsetN = [...cols].map((c) => /^onset(\d+)_ms$/.exec(c)).find((m) => m !== null);
  if (onsetN)
    out.push({
      basis: 'onset',
      column: onsetN[0],
      definition: `onset at ${Number(onsetN[1])}% of the class's own peak`,
    });
  else if (cols.has('onset_ms'))
    out.push({
      basis: 'onset',
      column: 'onset_ms',
      definition: 'onset (crossing of k x noise; depends on the noise level)',
    });
  if (cols.has('halfrise_ms'))
    out.push({ basis: 'halfrise', column: 'halfrise_ms', definition: "half-rise (50% of the class's own peak)" });
  if (cols.has('peak_ms')) out.push({ basis: 'peak', column: 'peak_ms', definition: 'peak (parabolic sub-sample)' });
  if (cols.has('centroid_ms')) {
    const f = (resolved as unknown as { centroidFraction?: number } | undefined)?.centroidFraction;
    out.push({
      basis: 'centroid',
      column: 'centroid_ms',
      definition: cols.has('centroid_from_ms')
        ? `centroid (centre of mass where the component exceeds ${Math.round(100 * (f ?? 0.1))}% of its own peak)`
        : 'centroid (centre of mass between onset and offset)',
    });
  }
  return out;
}

const key = (r: Record<string, ConditionValue>, by: string[]) => by.map((k) => `${k}=${r[k] ?? ''}`).join(', ');

function pick(r: Record<string, ConditionValue>, keys: string[]): Record<string, ConditionValue> {
  const o: Record<string, ConditionValue> = {};
  for (const k of keys) o[k] = r[k] ?? null;
  return o;
}

/** a row was measured (detected, and resolved when the table says so) */
export const measured = (r: ComponentRow): boolean =>
  r.detected === true && (r.status === undefined || r.status === null || r.status === 'measured');

/** Why rows were not measured, in words: their statuses (and the commonest reason) with counts. */
function whyNot(rows: readonly ComponentRow[]): string {
  const not = rows.filter((r) => !measured(r));
  if (!not.length) return '';
  const by = new Map<string, number>();
  for (const r of not) {
    const k = String(r.status ?? (r.detected ? 'measured' : 'not detected')) + (r.reason ? `: ${r.reason}` : '');
    by.set(k, (by.get(k) ?? 0) + 1);
  }
  const top = [...by]
    .sort((a, b) => b[1] - a[1])
    .slice(0, 2)
    .map(([k, n]) => `${n} x ${k}`);
  return ` (${top.join('; ')}${by.size > 2 ? '; ...' : ''})`;
}

function groupRows(rows: readonly ComponentRow[], id: (r: ComponentRow) => string): Map<string, ComponentRow[]> {
  const groups = new Map<string, ComponentRow[]>();
  for (const r of rows) {
    const k = id(r);
    const g = groups.get(k);
    if (g) g.push(r);
    else groups.set(k, [r]);
  }
  return groups;
}

/** The class's velocity range at the group's temperature, or null when the class is unknown. */
function classRange(
  resolved: ResolvedComponentOptions | undefined,
  cls: string,
  r0: ComponentRow,
): [number, number] | null {
  const c = resolved?.classes.find((k) => k.name === cls);
  if (!c || !resolved) return null;
  const T =
    typeof r0.temperature_C === 'number'
      ? r0.temperature_C
      : typeof r0.temperatureC === 'number'
        ? r0.temperatureC
        : undefined;
  return scaledRange(c, resolved.preset, T, resolved.q10);
}

const fmt = (v: number) => (Math.abs(v) >= 100 ? v.toFixed(0) : v.toPrecision(3));

/** Judge a velocity: rejected outside every fibre's range, kept but flagged outside its class's range. */
function judge(
  v: number,
  range: [number, number] | null,
  cls: string,
): { status: VelocityStatus; reason: string | null } {
  if (!Number.isFinite(v) || v < FIBRE_RANGE_M_S[0] || v > FIBRE_RANGE_M_S[1]) {
    return {
      status: 'implausible',
      reason: `${Number.isFinite(v) ? fmt(v) : String(v)} m/s is outside any nerve fibre's range (${FIBRE_RANGE_M_S[0]}-${FIBRE_RANGE_M_S[1]} m/s); check the distance unit (mm expected), the time axis (ms) and which recording is which`,
    };
  }
  if (range && (v < range[0] || v > range[1])) {
    return {
      status: 'outside class range',
      reason: `${fmt(v)} m/s is outside the ${cls} range at this temperature (${fmt(range[0])}-${fmt(range[1])} m/s): the wave may belong to another class, or the class preset may not fit this nerve`,
    };
  }
  return { status: 'ok', reason: null };
}

/** The judgement of a velocity whose 95% CI reaches outside its class's range. */
function imprecise(
  lo: number,
  hi: number,
  range: [number, number],
  cls: string,
  definition: string,
): { status: VelocityStatus; reason: string } {
  return {
    status: 'imprecise',
    reason:
      `95% CI ${fmt(lo)}-${Number.isFinite(hi) ? fmt(hi) : 'unbounded'} m/s reaches outside the ${cls} range at ` +
      `this temperature (${fmt(range[0])}-${fmt(range[1])} m/s): its ${definition} latency is not determined well ` +
      'enough at these sites (a flat top or slow rise beside the noise and fit residual)',
  };
}

/** A rejected row keeps its computed value aside; its velocity and interval are left empty. */
function finish(row: VelocityRow, v: number): VelocityRow {
  if (row.status === 'implausible')
    return {
      ...row,
      velocity_m_s: null,
      ci95_low_m_s: null,
      ci95_high_m_s: null,
      rejected_velocity_m_s: Number.isFinite(v) ? v : null,
    };
  return row;
}

const num = (v: number): number | null => (Number.isFinite(v) ? v : null);

/** Single-site velocities summarised per group, distance, class and latency definition. */
export function singleSiteVelocity(
  rows: readonly ComponentRow[],
  by: string[],
  resolved?: ResolvedComponentOptions,
): VelocityRow[] {
  const defs = latencyDefinitions(rows, resolved);
  const groups = groupRows(rows, (r) => `${key(r, by)}|${r.distance_mm ?? r.distanceMm}|${r.class}`);
  const out: VelocityRow[] = [];
  const util = resolved?.utilisationMs ?? 0;
  for (const g of groups.values()) {
    const r0 = g[0];
    const cls = String(r0.class);
    const ok = g.filter(measured);
    for (const d of defs) {
      const base = {
        method: 'single-site' as const,
        basis: d.basis,
        definition: d.definition,
        latency_column: d.column,
        class: cls,
        group: key(r0, by),
        ...pick(r0, by),
        distance_mm: (r0.distance_mm ?? r0.distanceMm ?? null) as number | null,
      };
      const vals = ok
        .map((r) => r[d.column])
        .filter((t): t is number => typeof t === 'number')
        .map((t) => (base.distance_mm as number) / (t - util));
      if (!vals.length) {
        out.push({
          ...base,
          velocity_m_s: null,
          ci95_low_m_s: null,
          ci95_high_m_s: null,
          sd_m_s: null,
          n: 0,
          status: 'not detected',
          reason: `${cls} not measured in any of ${g.length} sweeps${whyNot(g)}`,
        });
        continue;
      }
      const s = summarize(vals);
      // a single-site velocity includes the utilisation time and the waveform's rise, so it sits
      // below the conduction velocity: only the fibre range is checked, not the class's own range
      const j = judge(s.mean, null, cls);
      out.push(
        finish(
          {
            ...base,
            velocity_m_s: s.mean,
            ci95_low_m_s: num(s.ci95[0]),
            ci95_high_m_s: num(s.ci95[1]),
            sd_m_s: num(s.sd),
            n: s.n,
            excluded_not_measured: g.length - ok.length,
            status: j.status,
            reason: j.reason,
          },
          s.mean,
        ),
      );
    }
  }
  return out;
}

/** The intercept (utilisation time) check shared by regression and two-site rows. */
function utilisationProblem(intercept: number, ciHigh: number, nearLatency: number, basis: string): string | null {
  const f = utilisationMargin(basis);
  if (intercept < -f * Math.abs(nearLatency) && !(ciHigh >= 0)) {
    return `the latency extrapolated to distance 0 (utilisation time) is ${intercept.toFixed(3)} ms, below -${100 * f}% of the latency at the nearest site (${nearLatency.toFixed(3)} ms): a latency cannot be shorter than its conduction time; check the distances (conduction distance from the stimulating cathode), the stimulus time and which phase was measured`;
  }
  return null;
}

/**
 * Velocity from the regression of latency on distance, per group, class and latency definition. With `data` (the set
 * and the component table's measures), each latency's own precision (latencyHalfWidth) also bounds the slope: its
 * standard error for known latency SDs (weighted least squares, weights 1 / SD^2), so that two distances (no degree of
 * freedom left) still give an interval; the interval is the wider of that and the t interval of the residuals, and a
 * CI reaching outside the class's range is status "imprecise", as for two-site rows.
 */
export function regressionVelocity(
  rows: readonly ComponentRow[],
  by: string[],
  resolved?: ResolvedComponentOptions,
  data?: { set: SweepSet; measures: ResponseMeasure[][] },
): VelocityRow[] {
  const ixOf = new Map((resolved?.classes ?? []).map((c, i) => [c.name, i]));
  const defs = latencyDefinitions(rows, resolved);
  const groups = groupRows(rows, (r) => `${key(r, by)}|${r.class}`);
  const out: VelocityRow[] = [];
  for (const g of groups.values()) {
    const dists = new Set(g.map((r) => r.distance_mm ?? r.distanceMm));
    if (dists.size < 2) continue;
    const r0 = g[0];
    const cls = String(r0.class);
    const range = classRange(resolved, cls, r0);
    const okRows = g.filter(measured);
    for (const d of defs) {
      const base = {
        method: 'regression' as const,
        basis: d.basis,
        definition: d.definition,
        latency_column: d.column,
        class: cls,
        group: key(r0, by),
        ...pick(r0, by),
        distances: dists.size,
      };
      const ok = okRows.filter((r) => typeof r[d.column] === 'number');
      const okDists = new Set(ok.map((r) => r.distance_mm as number));
      if (okDists.size < 2) {
        out.push({
          ...base,
          velocity_m_s: null,
          ci95_low_m_s: null,
          ci95_high_m_s: null,
          n: ok.length,
          status: 'not detected',
          reason: `${cls} measured at ${okDists.size} of ${dists.size} distances (${ok.length} of ${g.length} sweeps); a regression needs two${whyNot(g)}`,
        });
        continue;
      }
      const x = ok.map((r) => r.distance_mm as number);
      const y = ok.map((r) => r[d.column] as number);
      const f = linearFit(x, y);
      const v = 1 / f.slope;
      const t = f.df > 0 ? tQuantile(0.975, f.df) : NaN;
      // the slope's and intercept's 95% half-widths: t intervals of the residuals, widened to the latencies' own
      // precision (standard errors of a weighted fit with known SDs) where every latency has one
      let slopeHalf = t * f.seSlope,
        interceptHalf = t * f.seIntercept;
      const ix = ixOf.get(cls);
      if (data && ix !== undefined && (d.basis === 'peak' || d.basis === 'onset' || d.basis === 'halfrise')) {
        const sds = ok.map(
          (r) =>
            (latencyHalfWidth(
              r,
              data.measures[r.sweep]?.[ix],
              d.basis,
              d.column,
              data.set,
              data.set.units,
              resolved?.onsetFraction ?? 0.1,
            ) ?? NaN) / 1.959964,
        );
        if (sds.every((q) => q > 0 && Number.isFinite(q))) {
          const w = sds.map((q) => 1 / (q * q));
          const sw = w.reduce((a, b) => a + b, 0);
          const xm = w.reduce((a, wi, i) => a + wi * x[i], 0) / sw;
          const sxx = w.reduce((a, wi, i) => a + wi * (x[i] - xm) ** 2, 0);
          if (sxx > 0) {
            const seS = 1 / Math.sqrt(sxx),
              seI = Math.sqrt(1 / sw + xm * xm * seS * seS);
            slopeHalf = Math.max(Number.isFinite(slopeHalf) ? slopeHalf : -Infinity, 1.959964 * seS);
            interceptHalf = Math.max(Number.isFinite(interceptHalf) ? interceptHalf : -Infinity, 1.959964 * seI);
          }
        }
      }
      const hiSlope = f.slope - slopeHalf;
      const nearest = Math.min(...okDists);
      const nearLat = summarize(ok.filter((r) => r.distance_mm === nearest).map((r) => r[d.column] as number)).mean;
      const uHigh = f.intercept + interceptHalf;
      let j: { status: VelocityStatus; reason: string | null };
      if (!(f.slope > 0))
        j = {
          status: 'implausible',
          reason: `${d.definition} latency does not increase with distance (slope ${f.slope.toPrecision(3)} ms/mm); check that distances are conduction distances from the stimulating electrode`,
        };
      else {
        const u = utilisationProblem(f.intercept, uHigh, nearLat, d.basis);
        j = u ? { status: 'implausible', reason: u } : judge(v, range, cls);
      }
      const ciLow = num(1 / (f.slope + slopeHalf)),
        ciHigh = Number.isFinite(hiSlope) ? (hiSlope > 0 ? 1 / hiSlope : Infinity) : null;
      if (j.status === 'ok' && range && ciLow !== null && ciHigh !== null && (ciLow < range[0] || ciHigh > range[1]))
        j = imprecise(ciLow, ciHigh, range, cls, d.definition);
      out.push(
        finish(
          {
            ...base,
            velocity_m_s: v,
            ci95_low_m_s: ciLow,
            ci95_high_m_s: ciHigh,
            n: ok.length,
            excluded_not_measured: g.length - okRows.length,
            r2: num(f.r2),
            utilisation_ms: f.intercept,
            utilisation_ci95_low_ms: num(f.intercept - interceptHalf),
            utilisation_ci95_high_ms: num(uHigh),
            status: j.status,
            reason: j.reason,
          },
          v,
        ),
      );
    }
  }
  return out;
}

/** Condition keys that differ between the two sites only (file, site, channel, distance): not used to pair sweeps. */
function pairKeys(near: Record<string, ConditionValue>[], far: Record<string, ConditionValue>[]): string[] {
  const keys = new Set<string>();
  for (const c of near) for (const k of Object.keys(c)) keys.add(k);
  const out: string[] = [];
  for (const k of keys) {
    if (k === 'sweep' || k === 'count') continue;
    const a = new Set(near.map((c) => JSON.stringify(c[k] ?? null)));
    const b = new Set(far.map((c) => JSON.stringify(c[k] ?? null)));
    if ([...a].some((v) => b.has(v))) out.push(k);
  }
  return out;
}

/**
 * Pairs of rows (near, far) recorded together: equal conditions apart from the keys that only
 * tell the sites apart; in sweep order within equal conditions. Without conditions to match,
 * the k-th sweep at one site goes with the k-th at the other.
 */
function pairRows(set: SweepSet, near: ComponentRow[], far: ComponentRow[]): [ComponentRow, ComponentRow][] {
  const cn = near.map((r) => set.conditions[r.sweep] ?? {}),
    cf = far.map((r) => set.conditions[r.sweep] ?? {});
  const ks = pairKeys(cn, cf);
  const id = (c: Record<string, ConditionValue>) => JSON.stringify(ks.map((k) => c[k] ?? null));
  const byId = new Map<string, ComponentRow[]>();
  far.forEach((r, i) => {
    const k = id(cf[i]);
    (byId.get(k) ?? byId.set(k, []).get(k)!).push(r);
  });
  const pairs: [ComponentRow, ComponentRow][] = [];
  near.forEach((r, i) => {
    const q = byId.get(id(cn[i]));
    const b = q?.shift();
    if (b) pairs.push([r, b]);
  });
  if (pairs.length) return pairs;
  const m = Math.min(near.length, far.length);
  for (let p = 0; p < m; p++) pairs.push([near[p], far[p]]);
  return pairs;
}

/**
 * The 95% half-width (ms) of one row's latency of a definition, from its own component (latencyPrecision). The error
 * per sample: the row's noise, or for a class separated by a decomposition (its component is the recording minus the
 * neighbours' model, `model` its own) the larger of that and the rms of the decomposition's residual (component
 * minus own model) where the latency is read (a peak: its top above 80% of the peak; a crossing: a quarter of the
 * width at half maximum either side): the
 * neighbours' misfit there is not noise and does not average out. null when the row has no component or the
 * definition has no precision here (centroid).
 */
function latencyHalfWidth(
  row: ComponentRow,
  m: ResponseMeasure | undefined,
  basis: LatencyBasis,
  column: string,
  set: SweepSet,
  units: string,
  onsetFraction: number,
): number | null {
  const t = row[column];
  const y0 = m?.component;
  if (!y0 || typeof t !== 'number' || basis === 'centroid') return null;
  const fs = set.fs / 1000;
  const index = (t - set.t0Ms) * fs - m!.window[0];
  const noise = row[`noise_${units}`];
  const p = row.polarity === -1 ? -1 : 1;
  const y = p === 1 ? y0 : y0.map((v) => -v);
  let sigma = typeof noise === 'number' ? noise : 0;
  const model = m!.model;
  if (model && model.length === y.length) {
    const pk = typeof row.peak_ms === 'number' ? Math.round((row.peak_ms - set.t0Ms) * fs - m!.window[0]) : -1;
    if (pk >= 0 && pk < y.length) {
      // where the latency is read: the top (above 80% of the peak) for a peak, a quarter of the width at half
      // maximum either side of a crossing
      const f = basis === 'peak' ? 0.8 : 0.5;
      let a = pk,
        b = pk;
      while (a > 0 && y[a - 1] > f * y[pk]) a--;
      while (b < y.length - 1 && y[b + 1] > f * y[pk]) b++;
      const c = Math.round(index),
        r = basis === 'peak' ? 0 : Math.max(2, Math.ceil((b - a) / 4));
      const [i0, i1] = basis === 'peak' ? [Math.min(a, c - 2), Math.max(b, c + 2)] : [c - r, c + r];
      let ss = 0,
        k = 0;
      for (let i = Math.max(0, i0); i <= Math.min(y.length - 1, i1); i++) {
        ss += (y0[i] - model[i]) ** 2;
        k++;
      }
      if (k) sigma = Math.max(sigma, Math.sqrt(ss / k));
    }
  }
  const h =
    basis === 'peak'
      ? latencyPrecision(y, index, 'peak', sigma)
      : latencyPrecision(y, index, 'rise', sigma, basis === 'onset' ? onsetFraction : 0.5);
  return h === null ? null : h / fs;
}

/**
 * Two-site velocity: for each pair of neighbouring distances within a group and class, pairs of
 * sweeps recorded together (see pairRows); delay by each latency definition and by
 * cross-correlation of the class component. Pairs with a delay that cannot be right are left out
 * and counted (`excluded_pairs`, `excluded_reason`).
 */
export function twoSiteVelocity(
  set: SweepSet,
  rows: readonly ComponentRow[],
  measures: ResponseMeasure[][],
  resolved: ResolvedComponentOptions,
  by: string[],
): VelocityRow[] {
  const defs = latencyDefinitions(rows, resolved);
  const out: VelocityRow[] = [];
  const groups = groupRows(rows, (r) => `${key(r, by)}|${r.class}`);
  const ci = resolved.classes.map((c) => c.name);
  const fs = set.fs / 1000; // samples per ms
  const minDelay = MIN_DELAY_SAMPLES / fs;
  for (const g of groups.values()) {
    const r0 = g[0];
    const cls = String(r0.class);
    const ix = ci.indexOf(cls);
    const own = classRange(resolved, cls, r0);
    const range = own ?? FIBRE_RANGE_M_S;
    const dists = [...new Set(g.map((r) => (r.distance_mm ?? r.distanceMm) as number))].sort((a, b) => a - b);
    // neighbouring sites, and with three or more sites also the outermost pair (the longest baseline)
    const sitePairs: [number, number][] = dists.slice(1).map((d, k) => [dists[k], d]);
    if (dists.length > 2) sitePairs.push([dists[0], dists[dists.length - 1]]);
    for (const [d1, d2] of sitePairs) {
      const dL = d2 - d1;
      const pairs = pairRows(
        set,
        g.filter((r) => (r.distance_mm ?? r.distanceMm) === d1),
        g.filter((r) => (r.distance_mm ?? r.distanceMm) === d2),
      );
      const both = pairs.filter(([a, b]) => measured(a) && measured(b));
      const bases = [...defs.map((d) => d.basis), 'xcorr' as const];
      for (const basis of bases) {
        const d = defs.find((q) => q.basis === basis);
        const base = {
          method: 'two-site' as const,
          basis,
          definition: d ? d.definition : 'cross-correlation of the class component (parabolic sub-sample refinement)',
          latency_column: d ? d.column : null,
          class: cls,
          group: key(r0, by),
          ...pick(r0, by),
          near_mm: d1,
          far_mm: d2,
        };
        const delays: number[] = [];
        const nearLat: number[] = [];
        // each pair's 95% half-width of its delay from the two latencies' own precision (NaN: not known)
        const widths: number[] = [];
        const bad = new Map<string, number>();
        const reject = (why: string) => bad.set(why, (bad.get(why) ?? 0) + 1);
        for (const [a, b] of both) {
          let delay: number;
          let w = NaN;
          if (basis === 'xcorr') {
            const ma = measures[a.sweep]?.[ix],
              mb = measures[b.sweep]?.[ix];
            if (!ma || !mb) continue;
            const seg = (m: ResponseMeasure, r: ComponentRow) => {
              // a class separated by the decomposition is correlated on its modelled component: in the recording
              // minus the neighbours' fit, the residual of a much larger neighbour would dominate a small class
              const comp = m.model ?? m.component;
              const x = comp ?? set.sweep(r.sweep).subarray(m.window[0], m.window[1] + 1);
              const p = typeof r.polarity === 'number' ? r.polarity : 1;
              return p === 1 ? x : x.map((v) => -v);
            };
            const segA = seg(ma, a),
              segB = seg(mb, b);
            const sa = ma.window[0],
              sb = mb.window[0];
            // search delays for a generous velocity range (class range / 3 .. x 3)
            const minLag = Math.floor((dL / (range[1] * 3)) * fs) - (sb - sa);
            const maxLag = Math.ceil((dL / (range[0] / 3)) * fs) - (sb - sa);
            const lo = Math.max(minLag, -(segA.length - 1)),
              hi = Math.min(maxLag, segB.length - 1);
            if (!(hi > lo)) {
              reject('the windows at the two sites do not overlap in any plausible delay');
              continue;
            }
            const { lag } = xcorrDelay(segA, segB, lo, hi);
            if (lag <= lo + 0.5 || lag >= hi - 0.5) {
              reject('cross-correlation maximum on the edge of its search range');
              continue;
            }
            delay = (sb - sa + lag) / fs;
          } else {
            const ta = a[d!.column],
              tb = b[d!.column];
            if (typeof ta !== 'number' || typeof tb !== 'number') continue;
            delay = tb - ta;
            nearLat.push(ta);
            const f = resolved.onsetFraction ?? 0.1;
            const ha = latencyHalfWidth(a, measures[a.sweep]?.[ix], basis, d!.column, set, set.units, f),
              hb = latencyHalfWidth(b, measures[b.sweep]?.[ix], basis, d!.column, set, set.units, f);
            w = ha !== null && hb !== null ? Math.hypot(ha, hb) : NaN;
          }
          if (!(delay > 0)) {
            reject('delay not positive (the response must arrive later at the farther site)');
            continue;
          }
          if (delay < minDelay) {
            reject(
              `delay shorter than ${MIN_DELAY_SAMPLES} sample intervals (${minDelay.toPrecision(2)} ms): not resolved at this sampling rate`,
            );
            continue;
          }
          delays.push(delay);
          widths.push(w);
        }
        const excluded = [...bad.values()].reduce((s, v) => s + v, 0);
        const why = bad.size ? [...bad].map(([w, c]) => `${c} pair(s): ${w}`).join('; ') : null;
        if (!delays.length) {
          const none = both.length === 0 || excluded === 0;
          const what =
            both.length === 0
              ? `${cls} measured at both sites in none of ${pairs.length} pair(s) of sweeps${whyNot(pairs.flat())}`
              : `${cls} measured at both sites in ${both.length} of ${pairs.length} pair(s) of sweeps, but its ${d ? `${d.definition} latency` : 'component'} in none of them`;
          out.push({
            ...base,
            velocity_m_s: null,
            ci95_low_m_s: null,
            ci95_high_m_s: null,
            delay_ms: null,
            n: 0,
            excluded_pairs: excluded,
            status: none ? 'not detected' : 'implausible',
            reason: none ? what : `no usable pair: ${why}`,
          });
          continue;
        }
        const s = summarize(delays);
        const v = dL / s.mean;
        // the delay's 95% CI: the larger of the t interval over pairs and the pairs' own precision (their half-widths
        // combined as independent errors of the mean), so that one pair still has an interval and a few pairs that
        // happen to agree do not hide a flat top
        const tHalf = (s.ci95[1] - s.ci95[0]) / 2;
        const own95 =
          widths.length === delays.length && widths.every(Number.isFinite)
            ? Math.sqrt(widths.reduce((q, w) => q + w * w, 0)) / delays.length
            : NaN;
        const half = Math.max(Number.isFinite(tHalf) ? tHalf : -Infinity, Number.isFinite(own95) ? own95 : -Infinity);
        const [dlo, dhi] = Number.isFinite(half) ? [s.mean - half, s.mean + half] : [NaN, NaN];
        let j = judge(v, own, cls);
        const ciLow = dhi > 0 ? dL / dhi : null,
          ciHigh = Number.isFinite(dlo) ? (dlo > 0 ? dL / dlo : Infinity) : null;
        if (j.status === 'ok' && own && d && ciLow !== null && ciHigh !== null && (ciLow < own[0] || ciHigh > own[1]))
          j = imprecise(ciLow, ciHigh, own, cls, d.definition);
        if (j.status !== 'implausible' && nearLat.length) {
          // the utilisation time this velocity implies at the near site
          const lat = summarize(nearLat).mean;
          const u = utilisationProblem(lat - d1 / v, dhi > 0 ? lat - d1 / (dL / dhi) : NaN, lat, basis);
          if (u) j = { status: 'implausible', reason: u };
        }
        out.push(
          finish(
            {
              ...base,
              delay_ms: s.mean,
              velocity_m_s: v,
              ci95_low_m_s: ciLow,
              ci95_high_m_s: ciHigh,
              delay_ci95_half_ms: Number.isFinite(half) ? half : null,
              n: s.n,
              excluded_pairs: excluded,
              excluded_reason: why,
              status: j.status,
              reason: j.reason,
            },
            v,
          ),
        );
      }
    }
  }
  return out;
}

export interface Estimator {
  method: VelocityRow['method'];
  basis: VelocityRow['basis'];
}

/**
 * The estimator the README recommends, by the class's place in its preset (see "Which velocity
 * to report", measured on the independent development set): the fastest class, whose wave is the
 * first, largest and sharpest, by the regression of its peak latency on distance (with two
 * distances, the two-site peak velocity); unmyelinated classes, whose waves are broad and small,
 * by the regression of their centroid latency (the whole component, not its noisy top); any other
 * class, usually a shoulder on a faster class's tail, by the two-site cross-correlation of its own
 * component.
 */
export const RECOMMENDED_VELOCITY: { fastest: Estimator; unmyelinated: Estimator; other: Estimator } = {
  fastest: { method: 'regression', basis: 'peak' },
  unmyelinated: { method: 'regression', basis: 'centroid' },
  other: { method: 'two-site', basis: 'xcorr' },
};

/** The recommended estimator for a class of a preset (the fastest-class rule when the classes are unknown). */
export function recommendedEstimator(cls: string, classes?: readonly FiberClass[]): Estimator {
  const list = classes ? [...classes].sort((a, b) => b.velocity[1] - a.velocity[1]) : [];
  const c = list.find((k) => k.name === cls);
  if (!c || list[0].name === cls) return RECOMMENDED_VELOCITY.fastest;
  return c.myelinated === false ? RECOMMENDED_VELOCITY.unmyelinated : RECOMMENDED_VELOCITY.other;
}

/**
 * Mark the recommended estimator's rows (`recommended: true`), per class; of two-site rows, only
 * the pair of sites farthest apart in each group (one recommended value per class and group).
 */
export function markRecommended(rows: readonly VelocityRow[], classes?: readonly FiberClass[]): VelocityRow[] {
  const span = new Map<string, number>();
  for (const r of rows) {
    if (r.method !== 'two-site') continue;
    const k = `${r.class}|${r.group}`;
    span.set(k, Math.max(span.get(k) ?? -Infinity, (r.far_mm as number) - (r.near_mm as number)));
  }
  const marked = rows.map((r) => {
    const e = recommendedEstimator(r.class, classes);
    const widest =
      r.method !== 'two-site' || (r.far_mm as number) - (r.near_mm as number) === span.get(`${r.class}|${r.group}`);
    return { ...r, recommended: r.method === e.method && r.basis === e.basis && widest };
  });
  // one distance: no two-site or regression estimate exists for a class and group, so the single-site peak
  // velocity is the one marked, with a note (it includes the utilisation time and the waveform's rise: biased low)
  const multi = new Set(marked.filter((r) => r.method !== 'single-site').map((r) => `${r.class}|${r.group}`));
  return marked.map((r) =>
    r.method === 'single-site' && r.basis === 'peak' && !multi.has(`${r.class}|${r.group}`)
      ? { ...r, recommended: true, recommended_note: SINGLE_SITE_NOTE }
      : r,
  );
}

/** Why a single-site velocity is the recommended one (one distance only). */
export const SINGLE_SITE_NOTE =
  'one distance only: distance / peak latency, which includes the utilisation time and the rise of the waveform ' +
  '(biased low); two-site and regression velocities need two or more distances';
