/**
 * Conduction velocity per fiber class, three ways (each with a 95% CI):
 * - single site: distance / (latency - utilisation), onset-based (fastest fibers),
 *   peak-based (the fibers that make the peak) and centroid-based (the centre of
 *   mass of the class component: its latency grows with distance at exactly the
 *   amplitude-weighted mean of 1/velocity), summarised over sweeps;
 * - two sites: delta distance / delta latency, the delay from cross-correlation of
 *   the class component (sub-sample refinement) and from matched onsets and peaks,
 *   over pairs of sweeps;
 * - several distances: latency regressed on distance; velocity = 1 / slope with a
 *   t-based CI, intercept = utilisation time.
 * Conduction velocity in m/s equals mm/ms. Formulas: common practice, no source.
 */
import type { SweepSet, ConditionValue } from '../sweeps/SweepSet';
import { AnalysisError } from '../errors';
import { summarize, linearFit } from './stats';
import { tQuantile } from '../fit/dist';
import { xcorrDelay, type ResponseMeasure } from '../measure/response';
import type { ComponentRow, ResolvedComponentOptions } from '../measure/components';

export interface VelocityRow {
  method: 'single-site' | 'two-site' | 'regression';
  basis: 'onset' | 'peak' | 'centroid' | 'xcorr';
  class: string;
  group: string;
  velocity_m_s: number;
  ci95_low_m_s: number;
  ci95_high_m_s: number;
  n: number;
  [k: string]: ConditionValue;
}

const key = (r: Record<string, ConditionValue>, by: string[]) => by.map((k) => `${k}=${r[k] ?? ''}`).join(', ');

function plausible(v: number, what: string): void {
  if (Number.isFinite(v) && (v > 300 || v < 0.02)) {
    throw new AnalysisError(`${what}: velocity ${v.toPrecision(3)} m/s is outside any nerve fiber's range (0.02-300 m/s); check the distance unit (mm expected) and the time axis (ms)`);
  }
}

/** Single-site velocities summarised per group, distance and class. */
export function singleSiteVelocity(rows: readonly ComponentRow[], by: string[]): VelocityRow[] {
  const groups = new Map<string, ComponentRow[]>();
  for (const r of rows) {
    if (!r.detected) continue;
    const id = `${key(r, by)}|${r.distance_mm}|${r.class}`;
    const g = groups.get(id);
    if (g) g.push(r); else groups.set(id, [r]);
  }
  const out: VelocityRow[] = [];
  for (const g of groups.values()) {
    const r0 = g[0];
    for (const basis of ['onset', 'peak', 'centroid'] as const) {
      const vals = g.map((r) => r[`${basis}_velocity_m_s`]).filter((v): v is number => typeof v === 'number');
      if (!vals.length) continue;
      const s = summarize(vals);
      plausible(s.mean, `class ${r0.class} (${key(r0, by)})`);
      out.push({ method: 'single-site', basis, class: r0.class, group: key(r0, by), ...pick(r0, by), distance_mm: r0.distance_mm as number, velocity_m_s: s.mean, ci95_low_m_s: s.ci95[0], ci95_high_m_s: s.ci95[1], sd_m_s: s.sd, n: s.n });
    }
  }
  return out;
}

function pick(r: Record<string, ConditionValue>, keys: string[]): Record<string, ConditionValue> {
  const o: Record<string, ConditionValue> = {};
  for (const k of keys) o[k] = r[k] ?? null;
  return o;
}

/** Velocity from the regression of latency on distance, per group and class. */
export function regressionVelocity(rows: readonly ComponentRow[], by: string[]): VelocityRow[] {
  const groups = new Map<string, ComponentRow[]>();
  for (const r of rows) {
    if (!r.detected) continue;
    const id = `${key(r, by)}|${r.class}`;
    const g = groups.get(id);
    if (g) g.push(r); else groups.set(id, [r]);
  }
  const out: VelocityRow[] = [];
  for (const g of groups.values()) {
    const dists = new Set(g.map((r) => r.distance_mm));
    if (dists.size < 2 || g.length < 3) continue;
    const r0 = g[0];
    for (const basis of ['onset', 'peak', 'centroid'] as const) {
      const ok = g.filter((r) => typeof r[`${basis}_ms`] === 'number');
      if (new Set(ok.map((r) => r.distance_mm)).size < 2 || ok.length < 3) continue;
      const x = ok.map((r) => r.distance_mm as number);
      const y = ok.map((r) => r[`${basis}_ms`] as number);
      const f = linearFit(x, y);
      if (!(f.slope > 0)) {
        throw new AnalysisError(`class ${r0.class} (${key(r0, by)}): ${basis} latency does not increase with distance (slope ${f.slope.toPrecision(3)} ms/mm); check that distances are conduction distances from the stimulating electrode`);
      }
      const t = tQuantile(0.975, f.df);
      const v = 1 / f.slope;
      plausible(v, `class ${r0.class} (${key(r0, by)})`);
      const lo = 1 / (f.slope + t * f.seSlope);
      const hiSlope = f.slope - t * f.seSlope;
      out.push({
        method: 'regression', basis, class: r0.class, group: key(r0, by), ...pick(r0, by),
        velocity_m_s: v, ci95_low_m_s: lo, ci95_high_m_s: hiSlope > 0 ? 1 / hiSlope : Infinity, n: g.length,
        distances: dists.size, r2: f.r2,
        utilisation_ms: f.intercept, utilisation_ci95_low_ms: f.intercept - t * f.seIntercept, utilisation_ci95_high_ms: f.intercept + t * f.seIntercept,
      });
    }
  }
  return out;
}

/**
 * Two-site velocity: for each pair of distances within a group and class, pair the
 * k-th sweep at the near site with the k-th at the far site; delay by
 * cross-correlation of the class component, and by matched onsets and peaks.
 */
export function twoSiteVelocity(set: SweepSet, rows: readonly ComponentRow[], measures: ResponseMeasure[][], resolved: ResolvedComponentOptions, by: string[]): VelocityRow[] {
  const out: VelocityRow[] = [];
  const groups = new Map<string, ComponentRow[]>();
  for (const r of rows) {
    const id = `${key(r, by)}|${r.class}`;
    const g = groups.get(id);
    if (g) g.push(r); else groups.set(id, [r]);
  }
  const ci = resolved.classes.map((c) => c.name);
  for (const g of groups.values()) {
    const r0 = g[0];
    const cls = ci.indexOf(r0.class);
    const dists = [...new Set(g.map((r) => r.distance_mm as number))].sort((a, b) => a - b);
    for (let k = 0; k + 1 < dists.length; k++) {
      const d1 = dists[k], d2 = dists[k + 1];
      const near = g.filter((r) => r.distance_mm === d1 && r.detected);
      const far = g.filter((r) => r.distance_mm === d2 && r.detected);
      const m = Math.min(near.length, far.length);
      if (m === 0) continue;
      const dL = d2 - d1;
      const vr = resolved.classes[cls].velocity;
      const est: Record<'xcorr' | 'onset' | 'peak' | 'centroid', number[]> = { xcorr: [], onset: [], peak: [], centroid: [] };
      for (let p = 0; p < m; p++) {
        const a = near[p], b = far[p];
        const ma = measures[a.sweep][cls], mb = measures[b.sweep][cls];
        if (!ma || !mb) continue;
        const xa = set.sweep(a.sweep), xb = set.sweep(b.sweep);
        const [sa, ea] = ma.window, [sb, eb] = mb.window;
        const segA = xa.subarray(sa, ea + 1), segB = xb.subarray(sb, eb + 1);
        // expected delay from a generous velocity range (class range / 3 .. x 3)
        const minDelay = dL / (vr[1] * 3), maxDelay = dL / (vr[0] / 3);
        const fs = set.fs / 1000;
        const minLag = Math.floor(minDelay * fs) - (sb - sa);
        const maxLag = Math.ceil(maxDelay * fs) - (sb - sa);
        const lo = Math.max(minLag, -(segA.length - 1)), hi = Math.min(maxLag, segB.length - 1);
        if (hi > lo) {
          const { lag } = xcorrDelay(segA, segB, lo, hi);
          est.xcorr.push((sb - sa + lag) / fs);
        }
        if (typeof a.onset_ms === 'number' && typeof b.onset_ms === 'number') est.onset.push(b.onset_ms - a.onset_ms);
        est.peak.push((b.peak_ms as number) - (a.peak_ms as number));
        if (typeof a.centroid_ms === 'number' && typeof b.centroid_ms === 'number') est.centroid.push(b.centroid_ms - a.centroid_ms);
      }
      for (const basis of ['xcorr', 'onset', 'peak', 'centroid'] as const) {
        const delays = est[basis];
        if (!delays.length) continue;
        const s = summarize(delays);
        if (!(s.mean > 0)) {
          throw new AnalysisError(`class ${r0.class} (${key(r0, by)}): the ${basis} delay from ${d1} mm to ${d2} mm is ${s.mean.toPrecision(3)} ms; a response must arrive later at the farther site (check the distances and which recording is which)`);
        }
        const v = dL / s.mean;
        plausible(v, `class ${r0.class} (${key(r0, by)})`);
        const [dlo, dhi] = s.ci95;
        out.push({
          method: 'two-site', basis, class: r0.class, group: key(r0, by), ...pick(r0, by),
          near_mm: d1, far_mm: d2, delay_ms: s.mean,
          velocity_m_s: v, ci95_low_m_s: dhi > 0 ? dL / dhi : NaN, ci95_high_m_s: dlo > 0 ? dL / dlo : Infinity, n: s.n,
        });
      }
    }
  }
  return out;
}
