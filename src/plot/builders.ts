/** Figure builders for every result: sweeps, recruitment, velocity, dose-response, temperature, summaries. */
import type { SweepSet, ConditionValue } from '../sweeps/SweepSet';
import type { ComponentTable } from '../measure/table';
import { Figure, PALETTE, baseLayout } from './figure';
import { logLogistic4, boltzmann, weiss, lapicque } from '../fit/models';
import { tQuantile } from '../fit/dist';
import { summarize, linearFit } from '../analysis/stats';
import type { FitResult } from '../fit/lm';

type Row = Record<string, ConditionValue>;
const colour = (i: number) => PALETTE[i % PALETTE.length];
const uniq = <T>(xs: T[]) => [...new Set(xs)];

/**
 * Sweeps overlaid, with class windows shaded and onset and peak marks when a component
 * table is given (from its measurement intermediates), and the noise band.
 */
export function sweepsFigure(set: SweepSet, options: { sweeps?: number[]; table?: ComponentTable; title?: string; maxSweeps?: number } = {}): Figure {
  const idx = options.sweeps ?? Array.from({ length: Math.min(set.nSweeps, options.maxSweeps ?? 12) }, (_, i) => i);
  const t = Array.from(set.time());
  const step = Math.max(1, Math.floor(set.nSamples / 4000));
  const data: Record<string, unknown>[] = idx.map((s, k) => {
    const x = set.sweep(s);
    const xs: number[] = [], ys: number[] = [];
    for (let i = 0; i < set.nSamples; i += step) { xs.push(t[i]); ys.push(x[i]); }
    const c = set.conditions[s];
    return { type: 'scatter', mode: 'lines', x: xs, y: ys, name: `sweep ${s}${c.intensity !== undefined ? ` (${c.intensity} ${c.intensityUnit ?? ''})` : ''}`.trim(), line: { width: 1, color: colour(k) } };
  });
  const shapes: Record<string, unknown>[] = [];
  if (options.table) {
    const tb = options.table;
    const cls = tb.classes;
    for (const s of idx) {
      const rows = tb.rows.filter((r) => r.sweep === s);
      rows.forEach((r) => {
        const ci = cls.indexOf(r.class);
        if (s === idx[0]) shapes.push({ type: 'rect', xref: 'x', yref: 'paper', x0: r.window_start_ms, x1: r.window_end_ms, y0: 0, y1: 1, fillcolor: colour(ci + 3), opacity: 0.08, line: { width: 0 } });
        if (r.detected) {
          const marks = [['onset', r.onset_ms], ['peak', r.peak_ms]].filter((m) => typeof m[1] === 'number') as [string, number][];
          data.push({ type: 'scatter', mode: 'markers', x: marks.map((m) => m[1]), y: marks.map((m) => set.sweep(s)[set.indexAt(m[1])]), marker: { symbol: marks.map((m) => (m[0] === 'onset' ? 'triangle-up' : 'diamond')), size: 8, color: colour(ci + 3) }, name: `${r.class} onset/peak`, showlegend: s === idx[0] });
        }
      });
      const noise = rows[0]?.[`noise_${set.units}`];
      if (typeof noise === 'number' && s === idx[0]) {
        const k = tb.resolved.k;
        shapes.push({ type: 'rect', xref: 'paper', yref: 'y', x0: 0, x1: 1, y0: -k * noise, y1: k * noise, fillcolor: '#888', opacity: 0.12, line: { width: 0 } });
      }
    }
  }
  return new Figure('sweeps', { data, layout: baseLayout(options.title ?? 'Sweeps', 'time after stimulus (ms)', `signal (${set.units})`, { shapes, showlegend: idx.length <= 8 }) });
}

/** Recruitment curves with Boltzmann fits per class (points per preparation). */
export function recruitmentFigure(points: Row[], fits: Map<string, FitResult> | null, rows: Row[], units = 'uV'): Figure {
  const classes = uniq(points.map((p) => String(p.class)));
  const data: Record<string, unknown>[] = [];
  classes.forEach((cls, ci) => {
    const pts = points.filter((p) => p.class === cls);
    data.push({ type: 'scatter', mode: 'markers', x: pts.map((p) => p.intensity), y: pts.map((p) => p.response), name: `${cls} (sweeps)`, marker: { color: colour(ci), size: 5, opacity: 0.6 } });
    for (const r of rows.filter((q) => q.class === cls)) {
      const xs = pts.map((p) => p.intensity as number);
      const lo = Math.log10(Math.min(...xs)), hi = Math.log10(Math.max(...xs));
      const p = [r.floor, r.maximum, Math.log10(r.i50 as number), 0] as number[];
      // slope is not in the row: reconstruct from I95 = I50 * 10^(s ln 19)
      p[3] = (Math.log10(r.i95 as number) - p[2]) / Math.log(19);
      const gx = Array.from({ length: 100 }, (_, i) => lo + ((hi - lo) * i) / 99);
      data.push({ type: 'scatter', mode: 'lines', x: gx.map((v) => 10 ** v), y: gx.map((v) => boltzmann(v, p)), name: `${cls} fit${r.preparation ? ` ${r.preparation}` : ''}`, line: { color: colour(ci), width: 1.5 }, showlegend: false });
    }
  });
  void fits;
  return new Figure('recruitment', { data, layout: baseLayout('Recruitment', `stimulus intensity (${(rows[0]?.intensityUnit as string) ?? 'mA'})`, `amplitude (${units})`, { xaxis: { ...(baseLayout('', '', '').xaxis as object), type: 'log', title: { text: `stimulus intensity (${(rows[0]?.intensityUnit as string) ?? 'mA'})` } } }) });
}

/**
 * Strength-duration: criterion intensity against pulse width per class (log-log),
 * with 95% intervals and the fitted Weiss (solid) and Lapicque (dashed) curves.
 */
export function strengthDurationFigure(result: { rows: Row[]; points: Row[] }): Figure {
  const classes = uniq(result.points.map((p) => String(p.class)));
  const data: Record<string, unknown>[] = [];
  const unit = (result.rows.find((r) => r.intensityUnit)?.intensityUnit as string) ?? 'mA';
  classes.forEach((cls, ci) => {
    const pts = result.points.filter((p) => p.class === cls);
    const y = pts.map((p) => p.criterion as number);
    data.push({
      type: 'scatter', mode: 'markers', name: cls, x: pts.map((p) => p.pulseWidthMs), y, marker: { color: colour(ci), size: 7 },
      error_y: { type: 'data', symmetric: false, array: pts.map((p, k) => (typeof p.criterion_ci95_high === 'number' ? p.criterion_ci95_high - y[k] : 0)), arrayminus: pts.map((p, k) => (typeof p.criterion_ci95_low === 'number' ? y[k] - p.criterion_ci95_low : 0)), color: colour(ci), thickness: 1 },
    });
    const ws = pts.map((p) => p.pulseWidthMs as number);
    const lo = Math.log10(Math.min(...ws) / 1.5), hi = Math.log10(Math.max(...ws) * 1.5);
    const gx = Array.from({ length: 80 }, (_, i) => 10 ** (lo + ((hi - lo) * i) / 79));
    for (const r of result.rows.filter((q) => q.class === cls && typeof q.rheobase === 'number')) {
      data.push({ type: 'scatter', mode: 'lines', x: gx, y: gx.map((w) => weiss(w, [r.rheobase as number, r.chronaxie_ms as number])), name: `${cls} Weiss`, line: { color: colour(ci), width: 1.5 }, showlegend: false });
      data.push({ type: 'scatter', mode: 'lines', x: gx, y: gx.map((w) => lapicque(w, [r.lapicque_rheobase as number, r.lapicque_tau_ms as number])), name: `${cls} Lapicque`, line: { color: colour(ci), width: 1, dash: 'dash' }, showlegend: false });
    }
  });
  const base = baseLayout('Strength-duration', 'pulse width (ms)', `intensity at criterion (${unit})`);
  return new Figure('strength-duration', { data, layout: { ...base, xaxis: { ...(base.xaxis as object), type: 'log' }, yaxis: { ...(base.yaxis as object), type: 'log' } } });
}

/** Latency against distance with the regression line per class. */
export function velocityFigure(componentRows: Row[], basis: 'centroid' | 'peak' | 'onset' = 'centroid'): Figure {
  const rows = componentRows.filter((r) => r.detected && typeof r[`${basis}_ms`] === 'number');
  const classes = uniq(rows.map((r) => String(r.class)));
  const data: Record<string, unknown>[] = [];
  classes.forEach((cls, ci) => {
    const rr = rows.filter((r) => r.class === cls);
    const x = rr.map((r) => r.distance_mm as number), y = rr.map((r) => r[`${basis}_ms`] as number);
    data.push({ type: 'scatter', mode: 'markers', x, y, name: cls, marker: { color: colour(ci), size: 6 } });
    if (uniq(x).length >= 2) {
      const f = linearFit(x, y);
      const xs = [0, Math.max(...x) * 1.05];
      data.push({ type: 'scatter', mode: 'lines', x: xs, y: xs.map((v) => f.intercept + f.slope * v), name: `${cls}: ${(1 / f.slope).toPrecision(3)} m/s`, line: { color: colour(ci), dash: 'dot' } });
    }
  });
  return new Figure('velocity', { data, layout: baseLayout(`Latency against distance (${basis})`, 'conduction distance (mm)', `${basis} latency (ms)`, { yaxis: { ...(baseLayout('', '', '').yaxis as object), type: 'log', title: { text: `${basis} latency (ms, log scale)` } } }) });
}

/** Dose-response per class: per-preparation points, pooled Hill fit and its 95% band. */
export function doseResponseFigure(points: Row[], summary: Row[], fits?: Map<string, FitResult>): Figure {
  const classes = uniq(points.map((p) => String(p.class)));
  const data: Record<string, unknown>[] = [];
  const unit = (summary[0]?.concentrationUnit as string) ?? '';
  classes.forEach((cls, ci) => {
    const pts = points.filter((p) => p.class === cls);
    data.push({ type: 'scatter', mode: 'markers', x: pts.map((p) => p.concentration), y: pts.map((p) => p.normalized), text: pts.map((p) => String(p.preparation)), name: `${cls} (preparations)`, marker: { color: colour(ci), size: 6, opacity: 0.7 } });
    const s = summary.find((r) => r.class === cls);
    if (!s) return;
    const xs = pts.map((p) => p.concentration as number);
    const lo = Math.log10(Math.min(...xs)) - 0.5, hi = Math.log10(Math.max(...xs)) + 0.5;
    const gx = Array.from({ length: 120 }, (_, i) => 10 ** (lo + ((hi - lo) * i) / 119));
    const p = [s.pooled_hill as number, s.pooled_bottom as number, 1, Math.log(s.pooled_ic50 as number)];
    data.push({ type: 'scatter', mode: 'lines', x: gx, y: gx.map((c) => logLogistic4(c, p)), name: `${cls}: IC50 ${(s.ic50 as number).toPrecision(3)} ${unit}`, line: { color: colour(ci), width: 2 } });
    const f = fits?.get(`${cls}|pooled`);
    if (f && f.covariance) {
      const t = tQuantile(0.975, f.df);
      const band = gx.map((c) => {
        const g = f.params.map((_, k) => {
          const h = 1e-6 * Math.max(1, Math.abs(f.params[k]));
          const pp = [...f.params], pm = [...f.params];
          pp[k] += h; pm[k] -= h;
          return (logLogistic4(c, pp) - logLogistic4(c, pm)) / (2 * h);
        });
        let v = 0;
        for (let a = 0; a < g.length; a++) for (let b = 0; b < g.length; b++) v += g[a] * f.covariance![a][b] * g[b];
        return t * Math.sqrt(Math.max(0, v));
      });
      const mid = gx.map((c) => logLogistic4(c, f.params));
      data.push({ type: 'scatter', mode: 'lines', x: [...gx, ...[...gx].reverse()], y: [...mid.map((m, i) => m + band[i]), ...mid.map((m, i) => m - band[i]).reverse()], fill: 'toself', fillcolor: colour(ci), opacity: 0.15, line: { width: 0 }, name: `${cls} 95% band`, showlegend: false, hoverinfo: 'skip' });
    }
  });
  return new Figure('dose-response', { data, layout: baseLayout('Dose-response', `concentration (${unit})`, 'response (fraction of baseline)', { xaxis: { ...(baseLayout('', '', '').xaxis as object), type: 'log', title: { text: `concentration (${unit}, log scale)` } } }) });
}

/** Temperature: ln(value) against temperature (Q10 view) or against 1000/T (Arrhenius view). */
export function temperatureFigure(points: Row[], rows: Row[], view: 'q10' | 'arrhenius' = 'q10'): Figure {
  const classes = uniq(points.map((p) => String(p.class)));
  const data: Record<string, unknown>[] = [];
  const X = (T: number) => (view === 'q10' ? T : 1000 / (T + 273.15));
  classes.forEach((cls, ci) => {
    const pts = points.filter((p) => p.class === cls);
    data.push({ type: 'scatter', mode: 'markers', x: pts.map((p) => X(p.temperatureC as number)), y: pts.map((p) => p.value), text: pts.map((p) => String(p.preparation)), name: cls, marker: { color: colour(ci), size: 7 } });
    const r = rows.find((q) => q.class === cls);
    if (r && typeof r.q10 === 'number') {
      const Ts = pts.map((p) => p.temperatureC as number);
      const Tm = Ts.reduce((a, b) => a + b, 0) / Ts.length;
      const lm = pts.reduce((a, p) => a + Math.log(p.value as number), 0) / pts.length;
      const g = Array.from({ length: 30 }, (_, i) => Math.min(...Ts) + ((Math.max(...Ts) - Math.min(...Ts)) * i) / 29);
      const y = view === 'q10'
        ? g.map((T) => Math.exp(lm + (Math.log(r.q10 as number) / 10) * (T - Tm)))
        : g.map((T) => Math.exp(lm - ((r.ea_kJ_mol as number) * 1000) / 8.314462618 * (1 / (T + 273.15) - 1 / (Tm + 273.15))));
      data.push({ type: 'scatter', mode: 'lines', x: g.map(X), y, name: view === 'q10' ? `${cls}: Q10 ${(r.q10 as number).toFixed(2)}` : `${cls}: Ea ${(r.ea_kJ_mol as number).toFixed(1)} kJ/mol`, line: { color: colour(ci), dash: 'dot' } });
    }
  });
  const yl = String(points[0]?.measure ?? 'value').replace(/_m_s$/, ' (m/s)');
  return new Figure(`temperature-${view}`, { data, layout: baseLayout(view === 'q10' ? 'Temperature dependence (log-linear)' : 'Arrhenius plot', view === 'q10' ? 'temperature (C)' : '1000 / T (1/K)', `${yl}, log scale`, { yaxis: { ...(baseLayout('', '', '').yaxis as object), type: 'log', title: { text: `${yl} (log scale)` } } }) });
}

/** Across preparations: one point per animal, mean and 95% CI, per class. */
export function summaryFigure(rows: Row[], measure: string, label = measure): Figure {
  const classes = uniq(rows.map((r) => String(r.class)));
  const data: Record<string, unknown>[] = [];
  classes.forEach((cls, ci) => {
    const byPrep = new Map<string, number[]>();
    for (const r of rows.filter((q) => q.class === cls && typeof q[measure] === 'number')) (byPrep.get(String(r.preparation)) ?? byPrep.set(String(r.preparation), []).get(String(r.preparation))!).push(r[measure] as number);
    const vals = [...byPrep.values()].map((v) => v.reduce((a, b) => a + b, 0) / v.length);
    data.push({ type: 'scatter', mode: 'markers', x: vals.map(() => cls), y: vals, text: [...byPrep.keys()], name: `${cls} (animals)`, marker: { color: colour(ci), size: 8, opacity: 0.7 } });
    const s = summarize(vals);
    data.push({ type: 'scatter', mode: 'markers', x: [cls], y: [s.mean], error_y: { type: 'data', symmetric: false, array: [s.ci95[1] - s.mean], arrayminus: [s.mean - s.ci95[0]], color: '#222' }, marker: { symbol: 'line-ew-open', size: 24, color: '#222' }, name: `${cls} mean, 95% CI`, showlegend: ci === 0 });
  });
  return new Figure('summary', { data, layout: baseLayout(`${label} across preparations`, 'fiber class', label) });
}
