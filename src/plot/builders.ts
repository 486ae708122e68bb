/**
 * Figure builders for every result: sweeps, recruitment, velocity, dose-response,
 * temperature, summaries. Every text that comes from data (class, preparation and
 * condition names, units) is escaped for plotly (labels.ts plotlyText); units are
 * printed as µV, µM, °C; fits and shaded bands are named in the legend; log axes label
 * every tick with its full value.
 */
import type { SweepSet } from '../sweeps/SweepSet';
import type { ComponentTable } from '../measure/table';
import { Figure, PALETTE, MARKERS, layoutFor, sequentialColour, sequentialScale, legendOnly } from './figure';
import { plotlyText, unitText, sentenceCase, measureLabel, logAxis, tickNumber } from './labels';
import { logLogistic4, boltzmann, weiss, lapicque } from '../fit/models';
import { tQuantile } from '../fit/dist';
import { summarize, linearFit } from '../analysis/stats';
import type { FitResult } from '../fit/lm';
import { OptionError } from '../errors';
import { checkKeys, didYouMean } from '../validate';

import type { Row } from '../registry/types';
type Trace = Record<string, unknown>;
const colour = (i: number) => PALETTE[i % PALETTE.length];
const symbol = (i: number) => MARKERS[i % MARKERS.length];
const uniq = <T>(xs: T[]) => [...new Set(xs)];
const num = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);
const GREY = '#666';

/** A shaded area as a legend entry (a filled square in the legend). */
const areaEntry = (name: string, fill: string, opacity: number): Trace =>
  legendOnly(name, { mode: 'markers', marker: { symbol: 'square', size: 10, color: fill, opacity } });

/** One legend entry per class: its colour, marker and (when fitted) line style, e.g. "A-delta: 12.3 m/s". */
const classEntry = (name: string, ci: number, line?: Trace): Trace =>
  legendOnly(name, {
    mode: line ? 'lines+markers' : 'markers',
    marker: { color: colour(ci), symbol: symbol(ci), size: 7 },
    ...(line ? { line: { color: colour(ci), width: 1.5, ...line } } : {}),
  });

/** Values of an axis from traces (for log ticks). */
const axisValues = (data: Trace[], k: 'x' | 'y') =>
  data.flatMap((t) => (Array.isArray(t[k]) ? (t[k] as unknown[]) : []));

/** How a condition reads in a legend and on a colour bar. */
const CONDITION: Record<string, { title: (r: Row) => string; value: (v: number, r: Row) => string }> = {
  distanceMm: { title: () => 'Conduction distance (mm)', value: (v) => `${tickNumber(v)} mm` },
  temperatureC: { title: () => 'Temperature (°C)', value: (v) => `${tickNumber(v)} °C` },
  intensity: {
    title: (r) => `Stimulus intensity${r.intensityUnit ? ` (${unitText(r.intensityUnit)})` : ''}`,
    value: (v, r) => `${tickNumber(v)}${r.intensityUnit ? ' ' + unitText(r.intensityUnit) : ''}`,
  },
  concentration: {
    title: (r) => `Concentration${r.concentrationUnit ? ` (${unitText(r.concentrationUnit)})` : ''}`,
    value: (v, r) => `${tickNumber(v)}${r.concentrationUnit ? ' ' + unitText(r.concentrationUnit) : ''}`,
  },
  pulseWidthMs: { title: () => 'Pulse width (ms)', value: (v) => `${tickNumber(v)} ms pulse` },
};
const LABEL_KEYS = ['preparation', 'label', 'epoch', 'drug', 'site'];
const MARK_SYMBOL: Record<string, string> = { onset: 'triangle-up', peak: 'diamond', centroid: 'x' };

/** The artifact window of the last artifact step in a history, if any. */
function artifactWindow(set: SweepSet): [number, number] | null {
  for (let i = set.history.length - 1; i >= 0; i--) {
    const h = set.history[i];
    const w = (h.options as { window?: unknown }).window;
    if (h.verb === 'removeArtifact' && Array.isArray(w) && num(w[0]) && num(w[1])) return [w[0], w[1]];
  }
  return null;
}

/**
 * Sweeps overlaid. When one condition varies (intensity, concentration, temperature,
 * distance or pulse width) the sweeps are coloured along a sequential scale by it, with
 * a colour bar beyond 6 sweeps; when several vary the legend names each sweep by them
 * ("20 mm, 37 °C"). With a component table: class windows shaded, onset and peak
 * marks, the detection level (± k x noise) as a grey band. The artifact window of the
 * set's history is shaded.
 */
export function sweepsFigure(
  set: SweepSet,
  options: { sweeps?: number[]; table?: ComponentTable; title?: string; maxSweeps?: number; zoom?: string } = {},
): Figure {
  checkKeys('sweepsFigure options', options, ['sweeps', 'table', 'title', 'maxSweeps', 'zoom']);
  const idx = options.sweeps ?? Array.from({ length: Math.min(set.nSweeps, options.maxSweeps ?? 12) }, (_, i) => i);
  for (const s of idx)
    if (!(Number.isInteger(s) && s >= 0 && s < set.nSweeps))
      throw new OptionError(`invalid sweeps: ${s}; the set has sweeps 0..${set.nSweeps - 1}`);
  const t = set.time();
  // zoom: the time span of one class's window (plus a fifth of its width each side) over the shown sweeps
  let i0 = 0,
    i1 = set.nSamples;
  let zoomY: [number, number] | null = null;
  if (options.zoom !== undefined) {
    if (!options.table) throw new OptionError('sweepsFigure: zoom needs a component table (options.table)');
    if (!options.table.classes.includes(options.zoom))
      throw new OptionError(
        `invalid zoom: ${JSON.stringify(options.zoom)}${didYouMean(options.zoom, options.table.classes)}; classes are ${options.table.classes.join(', ')}`,
      );
    const rows = options.table.rows.filter((r) => r.class === options.zoom && idx.includes(r.sweep as number));
    const a = Math.min(...rows.map((r) => r.window_start_ms as number).filter(num)),
      b = Math.max(...rows.map((r) => r.window_end_ms as number).filter(num));
    if (!(b > a)) throw new OptionError(`sweepsFigure: class ${options.zoom} has no window in the shown sweeps`);
    const m = 0.2 * (b - a);
    i0 = Math.max(0, set.indexAt(a - m));
    i1 = Math.min(set.nSamples, set.indexAt(b + m) + 1);
    // the y range of the samples inside the window (a faster class's larger wave beside it stays out of scale)
    let lo = Infinity,
      hi = -Infinity;
    for (const s of idx) {
      const x = set.sweep(s);
      for (let i = Math.max(0, set.indexAt(a)); i < Math.min(set.nSamples, set.indexAt(b) + 1); i++) {
        if (x[i] < lo) lo = x[i];
        if (x[i] > hi) hi = x[i];
      }
    }
    const k = options.table.resolved.k;
    for (const r of rows) {
      const nz = r[`noise_${set.units}`];
      if (num(nz)) {
        lo = Math.min(lo, -k * nz);
        hi = Math.max(hi, k * nz);
      }
    }
    if (hi > lo) zoomY = [lo - 0.08 * (hi - lo), hi + 0.08 * (hi - lo)];
  }
  const step = Math.max(1, Math.floor((i1 - i0) / 4000));
  const conds = idx.map((s) => set.conditions[s] as Row);
  const varies = (k: string) => uniq(conds.map((c) => c[k] ?? null)).length > 1;
  const numeric = Object.keys(CONDITION).filter((k) => varies(k) && conds.every((c) => num(c[k])));
  // a user's own 'label' repeats what the numeric conditions say when they differ; keep it only when they do not
  const labels = LABEL_KEYS.filter((k) => varies(k) && !(k === 'label' && numeric.length));
  const seqKey = numeric.length === 1 ? numeric[0] : null;
  let pos: (v: number) => number = () => 0;
  if (seqKey) {
    const v = conds.map((c) => c[seqKey] as number);
    const lo = Math.min(...v),
      hi = Math.max(...v);
    const logScale = (seqKey === 'intensity' || seqKey === 'concentration') && lo > 0 && hi / lo >= 5;
    pos = logScale ? (x) => Math.log(x / lo) / Math.log(hi / lo) : (x) => (x - lo) / (hi - lo);
  }
  const name = (s: number, c: Row) => {
    const parts = [
      ...numeric.map((k) => CONDITION[k].value(c[k] as number, c)),
      ...labels.map((k) => plotlyText(c[k] ?? '-')),
    ];
    return parts.length ? parts.join(', ') : `sweep ${s}`;
  };
  const useBar = !!seqKey && idx.length > 6;
  const data: Trace[] = idx.map((s, k) => {
    const x = set.sweep(s);
    const xs: number[] = [],
      ys: number[] = [];
    for (let i = i0; i < i1; i += step) {
      xs.push(t[i]);
      ys.push(x[i]);
    }
    const c = conds[k];
    const col = seqKey
      ? sequentialColour(pos(c[seqKey] as number))
      : idx.length === 1 && options.table
        ? '#222'
        : colour(k);
    return {
      type: 'scatter',
      mode: 'lines',
      x: xs,
      y: ys,
      name: name(s, c),
      line: { width: 1, color: col },
      showlegend: !useBar && idx.length <= 8 && !(idx.length === 1 && options.table),
    };
  });
  if (useBar && seqKey) {
    const v = conds.map((c) => c[seqKey] as number);
    const lo = Math.min(...v),
      hi = Math.max(...v);
    const ticks = uniq(v).sort((a, b) => a - b);
    const shown = ticks.length <= 6 ? ticks : [ticks[0], ticks[Math.floor(ticks.length / 2)], ticks[ticks.length - 1]];
    data.push({
      type: 'scatter',
      mode: 'markers',
      x: [null],
      y: [null],
      showlegend: false,
      hoverinfo: 'skip',
      marker: {
        color: [0, 1],
        cmin: 0,
        cmax: 1,
        colorscale: sequentialScale(),
        showscale: true,
        colorbar: {
          title: { text: CONDITION[seqKey].title(conds[0]), side: 'right' },
          thickness: 10,
          len: 1,
          tickmode: 'array',
          tickvals: shown.map((x) => (hi > lo ? pos(x) : 0)),
          ticktext: shown.map((x) => tickNumber(Number(x.toPrecision(3)))),
          outlinewidth: 0,
        },
      },
    });
  }
  const shapes: Record<string, unknown>[] = [];
  const t0 = t[i0],
    t1 = t[i1 - 1];
  const art = artifactWindow(set);
  if (art && art[1] > t0 && art[0] < t1) {
    shapes.push({
      type: 'rect',
      xref: 'x',
      yref: 'paper',
      x0: Math.max(art[0], t0),
      x1: Math.min(art[1], t1),
      y0: 0,
      y1: 1,
      fillcolor: '#999',
      opacity: 0.3,
      line: { width: 0 },
      layer: 'below',
    });
    data.push(areaEntry('Artifact window', '#999', 0.45));
  }
  if (options.table) {
    const tb = options.table;
    const cls = tb.classes;
    const shownCls = new Set<string>();
    let marks = false;
    for (const s of idx) {
      const rows = tb.rows.filter((r) => r.sweep === s);
      rows.forEach((r) => {
        const ci = cls.indexOf(r.class);
        if (options.zoom !== undefined && r.class !== options.zoom) return;
        if (s === idx[0] && num(r.window_start_ms) && num(r.window_end_ms)) {
          shapes.push(classWindowShape(r, ci));
          if (!shownCls.has(r.class)) {
            shownCls.add(r.class);
            data.push(areaEntry(`${plotlyText(r.class)} window`, colour(ci), 0.3));
          }
        }
        if (r.detected) {
          const m = (
            [
              ['onset', r.onset_ms],
              ['peak', r.peak_ms],
              ...(options.zoom !== undefined ? [['centroid', r.centroid_ms]] : []),
            ] as [string, unknown][]
          ).filter((q) => num(q[1])) as [string, number][];
          if (!m.length) return;
          marks = true;
          data.push({
            type: 'scatter',
            mode: 'markers',
            x: m.map((q) => q[1]),
            y: m.map((q) => set.sweep(s)[set.indexAt(q[1])]),
            marker: {
              symbol: m.map((q) => MARK_SYMBOL[q[0]]),
              size: 8,
              color: colour(ci),
              line: { width: 0.5, color: '#fff' },
            },
            name: `${plotlyText(r.class)} onset, peak`,
            showlegend: false,
            text: m.map((q) => q[0]),
          });
        }
      });
      const noise = rows[0]?.[`noise_${set.units}`];
      if (num(noise) && s === idx[0]) {
        const k = tb.resolved.k;
        shapes.push({
          type: 'rect',
          xref: 'paper',
          yref: 'y',
          x0: 0,
          x1: 1,
          y0: -k * noise,
          y1: k * noise,
          fillcolor: '#888',
          opacity: 0.15,
          line: { width: 0 },
          layer: 'below',
        });
        data.push(areaEntry('Detection level', '#888', 0.3));
      }
    }
    if (marks) {
      for (const k of options.zoom !== undefined ? ['onset', 'peak', 'centroid'] : ['onset', 'peak']) {
        data.push(
          legendOnly(sentenceCase(k), { mode: 'markers', marker: { symbol: MARK_SYMBOL[k], size: 8, color: GREY } }),
        );
      }
    }
  }
  const title =
    options.title !== undefined
      ? plotlyText(sentenceCase(options.title))
      : options.zoom !== undefined
        ? `${plotlyText(options.zoom)} window`
        : 'Sweeps';
  const xaxis = options.zoom !== undefined ? { range: [t0, t1] } : {};
  const yaxis = zoomY ? { range: zoomY } : {};
  const figName = options.zoom !== undefined ? `sweeps-${options.zoom.replace(/[^A-Za-z0-9_.-]+/g, '_')}` : 'sweeps';
  return new Figure(figName, {
    data,
    layout: layoutFor(title, 'Time after stimulus (ms)', `Signal (${unitText(set.units)})`, { shapes, xaxis, yaxis }),
  });
}

/**
 * One zoomed view per class of the table (sweepsFigure with `zoom`): the class's window,
 * its onset, peak and centroid marks and the detection level, on the time span of that
 * class, so fast classes are not crushed into a few ms of a full-sweep view.
 * @example classViews(set, table, { sweeps: [set.nSweeps - 1] }).forEach((f) => f.show())
 */
export function classViews(set: SweepSet, table: ComponentTable, options: { sweeps?: number[] } = {}): Figure[] {
  checkKeys('classViews options', options, ['sweeps']);
  const sweeps = options.sweeps ?? [set.nSweeps - 1];
  return table.classes
    .filter((c) =>
      table.rows.some((r) => r.class === c && sweeps.includes(r.sweep as number) && num(r.window_start_ms)),
    )
    .map((c) => sweepsFigure(set, { sweeps, table, zoom: c }));
}

/** Recruitment curves: response against stimulus intensity per class, with the Boltzmann fit per preparation. */
export function recruitmentFigure(
  points: Row[],
  fits: Map<string, FitResult> | null,
  rows: Row[],
  units = 'uV',
): Figure {
  const classes = uniq(points.map((p) => String(p.class)));
  const data: Trace[] = [];
  const entries: Trace[] = [];
  let fitted = false;
  const iu = (rows.find((r) => r.intensityUnit)?.intensityUnit ??
    points.find((r) => r.intensityUnit)?.intensityUnit ??
    'mA') as string;
  classes.forEach((cls, ci) => {
    const C = plotlyText(cls);
    const pts = points.filter((p) => p.class === cls && num(p.intensity) && (p.intensity as number) > 0);
    data.push({
      type: 'scatter',
      mode: 'markers',
      x: pts.map((p) => p.intensity),
      y: pts.map((p) => p.response),
      name: C,
      showlegend: false,
      text: pts.map((p) => plotlyText(p.preparation ?? '')),
      marker: { color: colour(ci), symbol: symbol(ci), size: 6, opacity: 0.7 },
    });
    let first = true;
    for (const r of rows.filter((q) => q.class === cls)) {
      if (!num(r.floor) || !num(r.maximum) || !num(r.i50) || !num(r.i95) || !(r.i50 > 0) || !(r.i95 > 0)) continue;
      const xs = pts
        .filter((p) => !r.preparation || p.preparation === undefined || p.preparation === r.preparation)
        .map((p) => p.intensity as number);
      if (!xs.length) continue;
      const lo = Math.log10(Math.min(...xs)),
        hi = Math.log10(Math.max(...xs));
      // the slope is not in the row: from I95 = I50 * 10^(s ln 19)
      const p = [r.floor, r.maximum, Math.log10(r.i50), (Math.log10(r.i95) - Math.log10(r.i50)) / Math.log(19)];
      const gx = Array.from({ length: 100 }, (_, i) => lo + ((hi - lo) * i) / 99);
      data.push({
        type: 'scatter',
        mode: 'lines',
        x: gx.map((v) => 10 ** v),
        y: gx.map((v) => boltzmann(v, p)),
        name: `${C} Boltzmann fit${r.preparation ? ` (${plotlyText(r.preparation)})` : ''}`,
        line: { color: colour(ci), width: 1.5 },
        showlegend: false,
      });
      first = false;
    }
    entries.push(classEntry(C, ci, first ? undefined : {}));
    fitted ||= !first;
  });
  data.push(...entries);
  if (fitted) data.push(legendOnly('Boltzmann fit', { mode: 'lines', line: { color: GREY, width: 1.5 } }));
  void fits;
  const xt = `Stimulus intensity (${unitText(iu)})`;
  return new Figure('recruitment', {
    data,
    layout: layoutFor('Recruitment', xt, `Amplitude (${unitText(units)})`, { xaxis: logAxis(axisValues(data, 'x')) }),
  });
}

/**
 * Strength-duration: criterion intensity against pulse width per class (log-log),
 * with 95% intervals and the fitted Weiss (solid) and Lapicque (dashed) curves.
 */
export function strengthDurationFigure(result: { rows: Row[]; points: Row[] }): Figure {
  const classes = uniq(result.points.map((p) => String(p.class)));
  const data: Trace[] = [];
  const unit = (result.rows.find((r) => r.intensityUnit)?.intensityUnit as string) ?? 'mA';
  let fitted = false;
  classes.forEach((cls, ci) => {
    const C = plotlyText(cls);
    const pts = result.points.filter((p) => p.class === cls && num(p.criterion) && num(p.pulseWidthMs));
    const y = pts.map((p) => p.criterion as number);
    data.push({
      type: 'scatter',
      mode: 'markers',
      name: C,
      x: pts.map((p) => p.pulseWidthMs),
      y,
      marker: { color: colour(ci), symbol: symbol(ci), size: 7 },
      error_y: {
        type: 'data',
        symmetric: false,
        array: pts.map((p, k) => (num(p.criterion_ci95_high) ? p.criterion_ci95_high - y[k] : 0)),
        arrayminus: pts.map((p, k) => (num(p.criterion_ci95_low) ? y[k] - p.criterion_ci95_low : 0)),
        color: colour(ci),
        thickness: 1,
      },
    });
    if (!pts.length) return;
    const ws = pts.map((p) => p.pulseWidthMs as number);
    const lo = Math.log10(Math.min(...ws) / 1.5),
      hi = Math.log10(Math.max(...ws) * 1.5);
    const gx = Array.from({ length: 80 }, (_, i) => 10 ** (lo + ((hi - lo) * i) / 79));
    for (const r of result.rows.filter((q) => q.class === cls && num(q.rheobase))) {
      fitted = true;
      data.push({
        type: 'scatter',
        mode: 'lines',
        x: gx,
        y: gx.map((w) => weiss(w, [r.rheobase as number, r.chronaxie_ms as number])),
        name: `${C} Weiss fit`,
        line: { color: colour(ci), width: 1.5 },
        showlegend: false,
      });
      if (num(r.lapicque_rheobase) && num(r.lapicque_tau_ms))
        data.push({
          type: 'scatter',
          mode: 'lines',
          x: gx,
          y: gx.map((w) => lapicque(w, [r.lapicque_rheobase as number, r.lapicque_tau_ms as number])),
          name: `${C} Lapicque fit`,
          line: { color: colour(ci), width: 1, dash: 'dash' },
          showlegend: false,
        });
    }
  });
  if (fitted) {
    data.push(legendOnly('Weiss fit', { mode: 'lines', line: { color: GREY, width: 1.5 } }));
    data.push(legendOnly('Lapicque fit', { mode: 'lines', line: { color: GREY, width: 1, dash: 'dash' } }));
  }
  data.push(
    legendOnly('95% CI', {
      mode: 'markers',
      marker: { symbol: 'line-ns-open', size: 9, color: GREY, line: { width: 1, color: GREY } },
    }),
  );
  return new Figure('strength-duration', {
    data,
    layout: layoutFor('Strength-duration', 'Pulse width (ms)', `Intensity at criterion (${unitText(unit)})`, {
      xaxis: logAxis(axisValues(data, 'x')),
      yaxis: logAxis(axisValues(data, 'y')),
    }),
  });
}

const BASIS_WORD: Record<string, string> = { centroid: 'centroid', peak: 'peak', onset: 'onset' };

/**
 * Latency against conduction distance per class with the fitted line latency =
 * utilisation + distance / velocity. The y axis is logarithmic when the classes'
 * latencies span more than a factor of 10 (the fit is then drawn as the curve it is on
 * that axis), else linear. `axis` forces one.
 */
export function velocityFigure(
  componentRows: Row[],
  basis: 'centroid' | 'peak' | 'onset' = 'centroid',
  options: { axis?: 'log' | 'linear' } = {},
): Figure {
  const rows = componentRows.filter((r) => r.detected && num(r[`${basis}_ms`]) && num(r.distance_mm));
  const classes = uniq(rows.map((r) => String(r.class)));
  const all = rows.map((r) => r[`${basis}_ms`] as number).filter((v) => v > 0);
  const log = options.axis ? options.axis === 'log' : all.length > 0 && Math.max(...all) / Math.min(...all) > 10;
  const pooled = uniq(rows.map((r) => String(r.preparation ?? ''))).length > 1;
  const data: Trace[] = [],
    entries: Trace[] = [];
  let fitted = false;
  classes.forEach((cls, ci) => {
    const C = plotlyText(cls);
    const rr = rows.filter((r) => r.class === cls);
    const x = rr.map((r) => r.distance_mm as number),
      y = rr.map((r) => r[`${basis}_ms`] as number);
    data.push({
      type: 'scatter',
      mode: 'markers',
      x,
      y,
      name: C,
      showlegend: false,
      text: rr.map((r) => plotlyText(r.preparation ?? '')),
      marker: { color: colour(ci), symbol: symbol(ci), size: 6 },
    });
    if (uniq(x).length < 2) entries.push(classEntry(C, ci));
    else {
      const f = linearFit(x, y);
      const a = log ? Math.min(...x) * 0.8 : 0,
        b = Math.max(...x) * 1.05;
      const gx = Array.from({ length: 60 }, (_, i) => a + ((b - a) * i) / 59);
      const pts = gx.map((v) => [v, f.intercept + f.slope * v]).filter((p) => !log || p[1] > 0);
      const v = 1 / f.slope;
      const label = num(v) && v > 0 ? `${C} ${Number(v.toPrecision(3))} m/s` : `${C} (no positive slope)`;
      data.push({
        type: 'scatter',
        mode: 'lines',
        x: pts.map((p) => p[0]),
        y: pts.map((p) => p[1]),
        name: label,
        showlegend: false,
        line: { color: colour(ci), width: 1.5, dash: 'dot' },
      });
      entries.push(classEntry(label, ci, { dash: 'dot' }));
      fitted = true;
    }
  });
  data.push(...entries);
  if (fitted)
    data.push(
      legendOnly(pooled ? 'Linear fit, preparations pooled' : 'Linear fit', {
        mode: 'lines',
        line: { color: GREY, width: 1.5, dash: 'dot' },
      }),
    );
  const w = BASIS_WORD[basis] ?? plotlyText(basis);
  const yTitle = `${sentenceCase(w)} latency (ms)`;
  const yaxis = log ? logAxis(axisValues(data, 'y')) : { rangemode: 'tozero' };
  return new Figure('velocity', {
    data,
    layout: layoutFor(`${sentenceCase(w)} latency against distance`, 'Conduction distance (mm)', yTitle, {
      xaxis: { rangemode: 'tozero' },
      yaxis,
    }),
  });
}

/** A class's latency window as a light band behind the sweeps (the sweep figure and the sweep viewer). */
export function classWindowShape(r: Record<string, unknown>, ci: number): Record<string, unknown> {
  return {
    type: 'rect',
    xref: 'x',
    yref: 'paper',
    x0: r.window_start_ms,
    x1: r.window_end_ms,
    y0: 0,
    y1: 1,
    fillcolor: colour(ci),
    opacity: 0.1,
    line: { width: 0 },
    layer: 'below',
  };
}

/** Dose-response per class: per-preparation points, pooled Hill fit and its 95% confidence band. */
export function doseResponseFigure(points: Row[], summary: Row[], fits?: Map<string, FitResult>): Figure {
  const classes = uniq(points.map((p) => String(p.class)));
  const data: Trace[] = [];
  const unit = (summary.find((r) => r.concentrationUnit)?.concentrationUnit as string) ?? '';
  const entries: Trace[] = [];
  let fitted = false,
    banded = false;
  const U = unitText(unit);
  classes.forEach((cls, ci) => {
    const C = plotlyText(cls);
    const pts = points.filter((p) => p.class === cls && num(p.concentration) && (p.concentration as number) > 0);
    data.push({
      type: 'scatter',
      mode: 'markers',
      x: pts.map((p) => p.concentration),
      y: pts.map((p) => p.normalized),
      text: pts.map((p) => plotlyText(p.preparation ?? '')),
      name: `${C} (preparations)`,
      showlegend: false,
      marker: { color: colour(ci), symbol: symbol(ci), size: 6, opacity: 0.75 },
    });
    // a class fitted per recording site has one summary row per site: draw a fitted one
    const s = summary.find((r) => r.class === cls && num(r.pooled_ic50)) ?? summary.find((r) => r.class === cls);
    if (!s || !pts.length || !num(s.pooled_hill) || !num(s.pooled_bottom) || !num(s.pooled_ic50)) {
      entries.push(classEntry(C, ci));
      return;
    }
    const xs = pts.map((p) => p.concentration as number);
    const lo = Math.log10(Math.min(...xs)) - 0.5,
      hi = Math.log10(Math.max(...xs)) + 0.5;
    const gx = Array.from({ length: 120 }, (_, i) => 10 ** (lo + ((hi - lo) * i) / 119));
    const p = [s.pooled_hill, s.pooled_bottom, 1, Math.log(s.pooled_ic50)];
    const ic = num(s.ic50) ? ` IC<sub>50</sub> ${Number(s.ic50.toPrecision(3))}${U ? ' ' + U : ''}` : '';
    data.push({
      type: 'scatter',
      mode: 'lines',
      x: gx,
      y: gx.map((c) => logLogistic4(c, p)),
      name: `${C} Hill fit${ic}`,
      showlegend: false,
      line: { color: colour(ci), width: 2 },
    });
    entries.push(classEntry(`${C}${ic}`, ci, { width: 2 }));
    fitted = true;
    const f = fits?.get(`${cls}|pooled`);
    if (f && f.covariance) {
      const t = tQuantile(0.975, f.df);
      const band = gx.map((c) => {
        const g = f.params.map((_, k) => {
          const h = 1e-6 * Math.max(1, Math.abs(f.params[k]));
          const pp = [...f.params],
            pm = [...f.params];
          pp[k] += h;
          pm[k] -= h;
          return (logLogistic4(c, pp) - logLogistic4(c, pm)) / (2 * h);
        });
        let v = 0;
        for (let a = 0; a < g.length; a++) for (let b = 0; b < g.length; b++) v += g[a] * f.covariance![a][b] * g[b];
        return t * Math.sqrt(Math.max(0, v));
      });
      const mid = gx.map((c) => logLogistic4(c, f.params));
      data.push({
        type: 'scatter',
        mode: 'lines',
        x: [...gx, ...[...gx].reverse()],
        y: [...mid.map((m, i) => m + band[i]), ...mid.map((m, i) => m - band[i]).reverse()],
        fill: 'toself',
        fillcolor: colour(ci),
        opacity: 0.15,
        line: { width: 0 },
        name: `${C} 95% confidence band`,
        showlegend: false,
        hoverinfo: 'skip',
      });
      banded = true;
    }
  });
  data.push(...entries);
  if (fitted) data.push(legendOnly('Hill fit, pooled', { mode: 'lines', line: { color: GREY, width: 2 } }));
  if (banded) data.push(areaEntry('95% CI of fit', GREY, 0.3));
  const xv = points.map((p) => p.concentration);
  return new Figure('dose-response', {
    data,
    layout: layoutFor('Dose-response', `Concentration${U ? ` (${U})` : ''}`, 'Response (fraction of baseline)', {
      xaxis: logAxis(xv),
    }),
  });
}

/** Temperature: the measure against temperature on a log axis (Q10 view) or against 1000/T (Arrhenius view). */
export function temperatureFigure(points: Row[], rows: Row[], view: 'q10' | 'arrhenius' = 'q10'): Figure {
  const classes = uniq(points.map((p) => String(p.class)));
  const data: Trace[] = [];
  const X = (T: number) => (view === 'q10' ? T : 1000 / (T + 273.15));
  const entries: Trace[] = [];
  let fitted = false;
  classes.forEach((cls, ci) => {
    const C = plotlyText(cls);
    const pts = points.filter((p) => p.class === cls && num(p.temperatureC) && num(p.value) && (p.value as number) > 0);
    data.push({
      type: 'scatter',
      mode: 'markers',
      x: pts.map((p) => X(p.temperatureC as number)),
      y: pts.map((p) => p.value),
      text: pts.map((p) => plotlyText(p.preparation ?? '')),
      name: C,
      showlegend: false,
      marker: { color: colour(ci), symbol: symbol(ci), size: 7 },
    });
    const r = rows.find((q) => q.class === cls);
    if (r && num(r.q10) && pts.length && (view === 'q10' || num(r.ea_kJ_mol))) {
      const Ts = pts.map((p) => p.temperatureC as number);
      const Tm = Ts.reduce((a, b) => a + b, 0) / Ts.length;
      const lm = pts.reduce((a, p) => a + Math.log(p.value as number), 0) / pts.length;
      const g = Array.from({ length: 30 }, (_, i) => Math.min(...Ts) + ((Math.max(...Ts) - Math.min(...Ts)) * i) / 29);
      const y =
        view === 'q10'
          ? g.map((T) => Math.exp(lm + (Math.log(r.q10 as number) / 10) * (T - Tm)))
          : g.map((T) =>
              Math.exp(lm - (((r.ea_kJ_mol as number) * 1000) / 8.314462618) * (1 / (T + 273.15) - 1 / (Tm + 273.15))),
            );
      const name =
        view === 'q10'
          ? `${C} Q<sub>10</sub> ${(r.q10 as number).toFixed(2)}`
          : `${C} E<sub>a</sub> ${(r.ea_kJ_mol as number).toFixed(1)}`;
      data.push({
        type: 'scatter',
        mode: 'lines',
        x: g.map(X),
        y,
        name,
        showlegend: false,
        line: { color: colour(ci), width: 1.5 },
      });
      entries.push(classEntry(name, ci, {}));
      fitted = true;
    } else entries.push(classEntry(C, ci));
  });
  data.push(...entries);
  if (fitted)
    data.push(
      legendOnly(view === 'q10' ? 'Log-linear fit' : 'Fit (E<sub>a</sub> in kJ/mol)', {
        mode: 'lines',
        line: { color: GREY, width: 1.5 },
      }),
    );
  // the measure: a column name (centroid_velocity_m_s) or the analysis's words for the estimate per class
  // ('regression peak velocity'); velocities are labelled as such with their unit, the estimate in the title
  // when every class has the same one, else in each class's legend entry
  const measures = uniq(points.map((p) => String(p.measure ?? 'value')));
  const allVelocity = measures.length > 0 && measures.every((x) => /velocity/.test(x));
  const yl = allVelocity ? 'Conduction velocity (m/s)' : sentenceCase(measureLabel(measures[0] ?? 'value'));
  const estimate = (x: string) => {
    const m = /^(centroid|peak|onset)_velocity/.exec(x);
    if (m) return `${m[1]} latency`;
    return / /.test(x) ? plotlyText(x.replace(/\s*velocity\s*/, ' ').trim()) : '';
  };
  const est = measures.map(estimate);
  const view0 = view === 'q10' ? 'Temperature dependence' : 'Arrhenius plot';
  const title = allVelocity && measures.length === 1 && est[0] ? `${view0} (velocity from ${est[0]})` : view0;
  if (allVelocity && measures.length > 1)
    for (const e of entries) {
      const cls = classes.find((c) => String(e.name).startsWith(plotlyText(c)));
      const x = points.find((p) => String(p.class) === cls)?.measure;
      if (x !== undefined && estimate(String(x))) e.name = `${String(e.name)}, ${estimate(String(x))}`;
    }
  const xt = view === 'q10' ? 'Temperature (°C)' : '1000 / T (K<sup>−1</sup>)';
  return new Figure(`temperature-${view}`, {
    data,
    layout: layoutFor(title, xt, yl, { yaxis: logAxis(axisValues(data, 'y')) }),
  });
}

/**
 * Across preparations: one point per preparation (its mean over rows), the mean and
 * 95% CI per class. `label` is plain text (default: a readable name for `measure`).
 */
export function summaryFigure(rows: Row[], measure: string, label?: string): Figure {
  let classes = uniq(rows.map((r) => String(r.class)));
  // velocities: classes fast to slow, the order their names follow (Erlanger and Gasser), so colours match the others
  if (/velocity/.test(measure)) {
    const mean = (c: string) => {
      const v = rows.filter((r) => r.class === c && num(r[measure])).map((r) => r[measure] as number);
      return v.length ? v.reduce((a, b) => a + b, 0) / v.length : -Infinity;
    };
    classes = [...classes].sort((a, b) => mean(b) - mean(a));
  }
  const data: Trace[] = [];
  const L = label !== undefined ? plotlyText(label) : measureLabel(measure);
  classes.forEach((cls, ci) => {
    const C = plotlyText(cls);
    const byPrep = new Map<string, number[]>();
    for (const r of rows.filter((q) => q.class === cls && num(q[measure]))) {
      const k = String(r.preparation);
      if (!byPrep.has(k)) byPrep.set(k, []);
      byPrep.get(k)!.push(r[measure] as number);
    }
    const vals = [...byPrep.values()].map((v) => v.reduce((a, b) => a + b, 0) / v.length);
    data.push({
      type: 'scatter',
      mode: 'markers',
      x: vals.map(() => C),
      y: vals,
      text: [...byPrep.keys()].map(plotlyText),
      name: `${C} (preparations)`,
      marker: { color: colour(ci), symbol: symbol(ci), size: 8, opacity: 0.75 },
      showlegend: false,
    });
    if (vals.length >= 2) {
      const s = summarize(vals);
      data.push({
        type: 'scatter',
        mode: 'markers',
        x: [C],
        y: [s.mean],
        error_y: {
          type: 'data',
          symmetric: false,
          array: [s.ci95[1] - s.mean],
          arrayminus: [s.mean - s.ci95[0]],
          color: '#222',
          thickness: 1.5,
        },
        marker: { symbol: 'line-ew-open', size: 24, color: '#222', line: { width: 2 } },
        name: `${C} mean, 95% CI`,
        showlegend: false,
      });
    }
  });
  data.push(
    legendOnly('One preparation', {
      mode: 'markers',
      marker: { symbol: 'circle', size: 8, color: GREY, opacity: 0.75 },
    }),
  );
  data.push(
    legendOnly('Mean and 95% CI', {
      mode: 'markers',
      marker: { symbol: 'line-ew-open', size: 16, color: '#222', line: { width: 2 } },
    }),
  );
  return new Figure('summary', {
    data,
    layout: layoutFor(
      `${sentenceCase(L.replace(/\s*\([^()]*\)$/, ''))} across preparations`,
      'Fiber class',
      sentenceCase(L),
      { xaxis: { type: 'category' } },
    ),
  });
}
