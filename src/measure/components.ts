/**
 * Fiber-class components of the compound response.
 *
 * Each class gets a latency window from the conduction distance and its velocity
 * range (scaled to the recording temperature with Q10): [u + L/vmax, u + L/vmin],
 * with its late end extended by `tailFraction` of its width (a fiber's potential
 * lasts after its arrival). Where neighbouring windows overlap, the boundary
 * follows the signal: the trough (smallest polarity-corrected value, after light
 * smoothing) between the two classes' peaks, and the slower class is measured above
 * a straight line from that trough to the level at the window's end (so the tail of
 * the faster wave is not counted as part of it). Every class is then measured in its window (measure/response.ts).
 */
import type { SweepSet, ConditionValue } from '../sweeps/SweepSet';
import { OptionError, AnalysisError } from '../errors';
import { resolvePreset, scaledRange, type ClassPreset, type FiberClass } from './classes';
import { measureResponse, noiseMad, onsetBefore, type ResponseMeasure } from './response';
import { windowIndices } from '../verbs/baseline';
import { windowMs, warnOnce } from '../validate';
import { VERSION } from '../version';

export interface ComponentOptions {
  /** class preset name ('mammalian', 'mammalian-detailed', 'amphibian'), a preset object, or a list of classes */
  preset?: string | ClassPreset | FiberClass[];
  /** keep only these classes (names) */
  classes?: string[];
  /** conduction distance, mm (default: each sweep's `distanceMm` condition) */
  distanceMm?: number;
  /** temperature, C (default: each sweep's `temperatureC`; without one, no scaling) */
  temperatureC?: number;
  /** Q10 for scaling velocity ranges (default: the preset's) */
  q10?: number;
  /** utilisation time, ms (default 0) */
  utilisationMs?: number;
  /** detection level as a multiple of the noise (default 4) */
  k?: number;
  /** 1 (positive-going), -1 (negative-going) or 'auto' (default: from the largest deflection of the mean sweep after the stimulus) */
  polarity?: 1 | -1 | 'auto';
  /** quiet window for the noise level, ms (default: sweep start to -0.1 ms) */
  noiseWindow?: [number, number];
  /** late extension of each window, as a fraction of its width (default 0.5) ... */
  tailFraction?: number;
  /** ... but at least this many ms (default 0.5: a fiber's potential lasts after its arrival) */
  tailMs?: number;
  /** samples before this time (ms) are never searched (default 0.1: the artifact) */
  earliestMs?: number;
}
export const componentDefaults = { preset: 'mammalian', k: 4, polarity: 'auto' as const, tailFraction: 0.5, tailMs: 0.5, utilisationMs: 0, earliestMs: 0.1 };

export interface ComponentRow {
  sweep: number;
  class: string;
  detected: boolean;
  polarity: number;
  [column: string]: ConditionValue;
}

export interface ResolvedComponentOptions {
  preset: ClassPreset;
  classes: FiberClass[];
  k: number;
  polarity: 1 | -1;
  utilisationMs: number;
  q10: number;
  tailFraction: number;
  tailMs: number;
  noiseWindow: [number, number];
  earliestMs: number;
  distanceMm: number | null;
  temperatureC: number | null;
}

/** Measure each fiber class in every sweep. */
export function measureComponents(set: SweepSet, options: ComponentOptions = {}): { rows: ComponentRow[]; measures: ResponseMeasure[][]; resolved: ResolvedComponentOptions } {
  const presetArg = options.preset ?? ((set.extras.manifest as { classPreset?: string } | undefined)?.classPreset) ?? componentDefaults.preset;
  const preset = resolvePreset(presetArg);
  let classes = [...preset.classes].sort((a, b) => b.velocity[1] - a.velocity[1]);
  if (options.classes) {
    for (const c of options.classes) if (!classes.some((k) => k.name === c)) throw new OptionError(`invalid classes: ${JSON.stringify(c)} is not in preset ${preset.name} (${classes.map((k) => k.name).join(', ')})`);
    classes = classes.filter((c) => options.classes!.includes(c.name));
  }
  const k = options.k ?? componentDefaults.k;
  if (!(k > 0)) throw new OptionError(`invalid k: ${k}; must be > 0`);
  const tailFraction = options.tailFraction ?? componentDefaults.tailFraction;
  if (!(tailFraction >= 0 && tailFraction <= 5)) throw new OptionError(`invalid tailFraction: ${tailFraction}; must be 0 <= tailFraction <= 5`);
  const tailMs = options.tailMs ?? componentDefaults.tailMs;
  if (!(tailMs >= 0 && tailMs <= 100)) throw new OptionError(`invalid tailMs: ${tailMs}; must be 0 <= tailMs <= 100 ms`);
  const util = options.utilisationMs ?? componentDefaults.utilisationMs;
  if (!(util >= 0 && util < 10)) throw new OptionError(`invalid utilisationMs: ${util}; must be 0 <= utilisationMs < 10 ms`);
  const q10 = options.q10 ?? preset.q10;
  if (!(q10 > 0)) throw new OptionError(`invalid q10: ${q10}; must be > 0`);
  const earliest = options.earliestMs ?? componentDefaults.earliestMs;
  if (!(set.t0Ms < -0.2) && !options.noiseWindow) throw new OptionError(`invalid noiseWindow: the sweeps start at ${set.t0Ms} ms, so there is no pre-stimulus window for the noise level; give noiseWindow: [from, to] in ms (a quiet part of the sweep)`);
  const noiseWindow = windowMs('noiseWindow', options.noiseWindow ?? [set.t0Ms, -0.1]);
  const [na, nb] = windowIndices(set, noiseWindow, 'noiseWindow');
  if (nb - na < 10) throw new OptionError(`invalid noiseWindow: [${noiseWindow}] ms holds ${nb - na + 1} samples; need at least 11`);

  const distOf = (i: number): number => {
    const d = options.distanceMm ?? set.conditions[i].distanceMm;
    if (typeof d !== 'number' || !(d > 0)) throw new AnalysisError(`sweep ${i}: no conduction distance; give the condition distanceMm (mm) or the option distanceMm`);
    if (d > 1000 || d < 0.5) throw new AnalysisError(`sweep ${i}: conduction distance ${d} mm is implausible for an isolated nerve (expected 0.5-1000 mm); is it in another unit (m or cm)?`);
    return d;
  };
  const tempOf = (i: number): number | undefined => {
    const T = options.temperatureC ?? set.conditions[i].temperatureC;
    if (typeof T === 'number') return T;
    warnOnce('components-no-temperature', `no temperature for some sweeps: class velocity ranges are used unscaled (as at ${preset.refTemperatureC} C)`);
    return undefined;
  };

  // polarity from the mean sweep after the stimulus
  let polarity: 1 | -1;
  const popt = options.polarity ?? componentDefaults.polarity;
  if (popt === 'auto') {
    const n = set.nSamples;
    const s0 = set.indexAt(earliest);
    const data = set.data;
    let mx = 0, mn = 0;
    for (let i = s0; i < n; i++) {
      let m = 0;
      for (let s = 0; s < set.nSweeps; s++) m += data[s * n + i];
      m /= set.nSweeps;
      if (m > mx) mx = m;
      if (m < mn) mn = m;
    }
    polarity = mx >= -mn ? 1 : -1;
  } else if (popt === 1 || popt === -1) polarity = popt;
  else throw new OptionError(`invalid polarity: ${JSON.stringify(popt)}; must be 1, -1 or "auto"`);

  const rows: ComponentRow[] = [];
  const measures: ResponseMeasure[][] = [];
  const dt = set.dtMs;
  const smooth = new Float64Array(set.nSamples);
  // scratch for a window measured above a baseline line (measureResponse reads only a - 1 .. b + 1)
  const shifted = new Float64Array(set.nSamples);
  for (let s = 0; s < set.nSweeps; s++) {
    const x = set.sweep(s);
    const L = distOf(s);
    const T = tempOf(s);
    const noise = noiseMad(x, na, nb);
    // 3-point moving average for finding troughs
    for (let i = 0; i < x.length; i++) smooth[i] = (x[Math.max(0, i - 1)] + x[i] + x[Math.min(x.length - 1, i + 1)]) / 3;
    const wins = classes.map((c) => {
      const [vlo, vhi] = scaledRange(c, preset, T, q10);
      const t0 = util + L / vhi;
      const t1 = util + L / vlo;
      return [Math.max(t0, earliest), t1 + Math.max(tailMs, tailFraction * (t1 - t0))] as [number, number];
    });
    const idx = wins.map(([a, b]) => [Math.max(set.indexAt(a), set.indexAt(earliest)), set.indexAt(b)] as [number, number]);
    // level of the trough that starts a class overlapped by a faster one (0 when none)
    const floor = new Float64Array(classes.length);
    // boundaries follow the trough between neighbouring classes' peaks
    for (let c = 0; c + 1 < idx.length; c++) {
      const [a1, b1] = idx[c];
      const [a2, b2] = idx[c + 1];
      if (b1 < a2) continue; // no overlap
      const peakIn = (a: number, b: number) => {
        let best = a;
        for (let i = a; i <= b; i++) if (polarity * smooth[i] > polarity * smooth[best]) best = i;
        return best;
      };
      const p1 = peakIn(a1, b1);
      const p2 = peakIn(Math.max(a2, p1 + 1), b2);
      let trough = Math.min(b1, a2 + Math.floor((b1 - a2) / 2));
      if (p2 > p1 + 1) {
        trough = p1 + 1;
        for (let i = p1 + 1; i < p2; i++) if (polarity * smooth[i] < polarity * smooth[trough]) trough = i;
      }
      idx[c][1] = Math.max(a1 + 2, Math.min(b1, trough));
      idx[c + 1][0] = Math.min(b2 - 2, Math.max(a2, trough));
      floor[c + 1] = Math.max(0, polarity * smooth[idx[c + 1][0]]) * polarity;
    }
    const ms: ResponseMeasure[] = [];
    const firstClass = idx.reduce((best, w, ci) => (w[0] < idx[best][0] ? ci : best), 0);
    classes.forEach((c, ci) => {
      const [a, b] = idx[ci];
      const cond = set.conditions[s];
      if (b - a < 2) {
        rows.push({ ...cond, sweep: s, class: c.name, detected: false, polarity, note: 'window outside the sweep' });
        ms.push(null as unknown as ResponseMeasure);
        return;
      }
      // an overlapped class is measured above the trough that separates it from the faster class
      let xs: Float64Array = x;
      if (floor[ci] !== 0) {
        // a straight line from the trough to the window's end level (the faster wave's tail decays under the slower one)
        xs = shifted;
        if (a > 0) xs[a - 1] = x[a - 1];
        if (b + 1 < x.length) xs[b + 1] = x[b + 1];
        const endLevel = polarity * smooth[b] > 0 ? smooth[b] : 0;
        for (let i = a; i <= b; i++) xs[i] = x[i] - (floor[ci] + ((endLevel - floor[ci]) * (i - a)) / Math.max(1, b - a));
      }
      const m = measureResponse(xs, a, b, noise, k, polarity);
      // an onset is only an onset when the signal starts below the level inside the window;
      // the earliest class may start before its window (fibers faster than the class range, or
      // a single-fiber waveform that rises before the arrival): its onset is then looked for
      // back to the earliest time analysed, where nothing but that class can be
      if (m.detected && m.onsetIndex <= a && ci === firstClass && floor[ci] === 0) {
        const before = onsetBefore(x, a, set.indexAt(earliest), m.level, m.polarity);
        if (before !== null) m.onsetIndex = before;
      }
      const onsetOk = m.detected && (m.onsetIndex > a || (ci === firstClass && m.onsetIndex < a));
      ms.push(m);
      const t = (fi: number) => set.timeAt(0) + fi * dt;
      const u = set.units;
      rows.push({
        ...cond,
        sweep: s,
        class: c.name,
        detected: m.detected,
        polarity,
        distance_mm: L,
        temperature_C: T ?? null,
        window_start_ms: t(a),
        window_end_ms: t(b),
        [`noise_${u}`]: noise,
        [`trough_level_${u}`]: floor[ci],
        onset_ms: onsetOk ? t(m.onsetIndex) : null,
        peak_ms: t(m.peakIndex),
        centroid_ms: m.detected ? t(m.centroidIndex) : null,
        [`amplitude_${u}`]: polarity * m.peak,
        [`peak_to_peak_${u}`]: m.peakToPeak,
        duration_ms: onsetOk ? (m.offsetIndex - m.onsetIndex) * dt : null,
        half_width_ms: m.detected ? (m.halfFall - m.halfRise) * dt : null,
        [`area_${u}_ms`]: m.areaSamples * dt,
        [`rectified_area_${u}_ms`]: m.rectifiedAreaSamples * dt,
        onset_velocity_m_s: onsetOk ? L / (t(m.onsetIndex) - util) : null,
        peak_velocity_m_s: m.detected ? L / (t(m.peakIndex) - util) : null,
        centroid_velocity_m_s: m.detected ? L / (t(m.centroidIndex) - util) : null,
      });
    });
    measures.push(ms);
  }
  return {
    rows, measures,
    resolved: { preset, classes, k, polarity, utilisationMs: util, q10, tailFraction, tailMs, noiseWindow, earliestMs: earliest, distanceMm: options.distanceMm ?? null, temperatureC: options.temperatureC ?? null },
  };
}

export function componentStep(r: ResolvedComponentOptions): { verb: string; options: Record<string, unknown>; version: string } {
  return {
    verb: 'components',
    options: {
      preset: r.preset.name, presetSource: r.preset.source, refTemperatureC: r.preset.refTemperatureC,
      classes: r.classes.map((c) => ({ name: c.name, velocity: c.velocity })),
      q10: r.q10, k: r.k, polarity: r.polarity, utilisationMs: r.utilisationMs, tailFraction: r.tailFraction, tailMs: r.tailMs,
      noiseWindow: r.noiseWindow, earliestMs: r.earliestMs, distanceMm: r.distanceMm, temperatureC: r.temperatureC,
    },
    version: VERSION,
  };
}
