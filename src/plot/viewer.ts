/**
 * A sweep viewer: one figure that steps through the sweeps of a set with a slider.
 * Each step shows one sweep, and with a component table each class's window, onset,
 * peak and centroid marks and the detection level (± k x noise); hovering reads out
 * time and amplitude. Saved for print (figure.save), it shows the first sweep without
 * the slider.
 */
import type { SweepSet, ConditionValue } from '../sweeps/SweepSet';
import type { ComponentTable } from '../measure/table';
import { Figure, PALETTE, layoutFor, legendOnly } from './figure';
import { plotlyText, unitText, sentenceCase, tickNumber } from './labels';
import { OptionError } from '../errors';
import { checkKeys } from '../validate';
import { classWindowShape } from './builders';

type Trace = Record<string, unknown>;
const num = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);
const colour = (i: number) => PALETTE[i % PALETTE.length];
const MARKS: [string, string, string][] = [
  ['onset_ms', 'onset', 'triangle-up'],
  ['peak_ms', 'peak', 'diamond'],
  ['centroid_ms', 'centroid', 'x'],
];

/** A sweep's conditions in a few words: "20 mA, 30 mm, 37 °C" (or its index). */
function sweepLabel(set: SweepSet, s: number): string {
  const c = set.conditions[s] as Record<string, ConditionValue>;
  const parts: string[] = [];
  if (num(c.intensity))
    parts.push(`${tickNumber(c.intensity)}${c.intensityUnit ? ' ' + unitText(c.intensityUnit) : ''}`);
  if (num(c.concentration) && c.concentration > 0)
    parts.push(`${tickNumber(c.concentration)}${c.concentrationUnit ? ' ' + unitText(c.concentrationUnit) : ''}`);
  if (num(c.distanceMm)) parts.push(`${tickNumber(c.distanceMm)} mm`);
  if (num(c.temperatureC)) parts.push(`${tickNumber(c.temperatureC)} °C`);
  if (num(c.pulseWidthMs)) parts.push(`${tickNumber(c.pulseWidthMs)} ms pulse`);
  if (c.preparation !== undefined && c.preparation !== null) parts.unshift(plotlyText(c.preparation));
  return `${s}${parts.length ? ': ' + parts.join(', ') : ''}`;
}

/**
 * Step through sweeps with a slider (at most `maxSweeps`, default 60; each drawn with
 * at most 3000 points). With `table`: class windows shaded, onset (triangle), peak
 * (diamond) and centroid (cross) marks per class, the detection level as a grey band.
 * @example sweepViewer(set, { table }).show()
 */
export function sweepViewer(
  set: SweepSet,
  options: { table?: ComponentTable; sweeps?: number[]; maxSweeps?: number; title?: string } = {},
): Figure {
  checkKeys('sweepViewer options', options, ['table', 'sweeps', 'maxSweeps', 'title']);
  const max = options.maxSweeps ?? 60;
  if (!(Number.isInteger(max) && max >= 1 && max <= 1000))
    throw new OptionError(`invalid maxSweeps: ${String(max)}; must be an integer 1..1000`);
  const idx = options.sweeps ?? Array.from({ length: Math.min(set.nSweeps, max) }, (_, i) => i);
  if (!idx.length) throw new OptionError('sweepViewer: no sweeps to show');
  if (idx.length > max)
    throw new OptionError(
      `sweepViewer: ${idx.length} sweeps asked for, more than maxSweeps ${max}; pass fewer sweeps or raise maxSweeps`,
    );
  for (const s of idx)
    if (!(Number.isInteger(s) && s >= 0 && s < set.nSweeps))
      throw new OptionError(`invalid sweeps: ${s}; the set has sweeps 0..${set.nSweeps - 1}`);
  const t = set.time();
  const step = Math.max(1, Math.ceil(set.nSamples / 3000));
  const U = unitText(set.units);
  const tb = options.table;
  const classes = tb ? tb.classes : [];
  const data: Trace[] = [];
  const perSweep: { traces: number[]; shapes: Trace[] }[] = [];
  idx.forEach((s, k) => {
    const x = set.sweep(s);
    const xs: number[] = [],
      ys: number[] = [];
    for (let i = 0; i < set.nSamples; i += step) {
      xs.push(t[i]);
      ys.push(x[i]);
    }
    const mine: number[] = [data.length];
    data.push({
      type: 'scatter',
      mode: 'lines',
      x: xs,
      y: ys,
      name: `sweep ${sweepLabel(set, s)}`,
      visible: k === 0,
      showlegend: false,
      line: { width: 1, color: '#222' },
      hovertemplate: `%{x:.3f} ms, %{y:.4g} ${U}<extra></extra>`,
    });
    const shapes: Trace[] = [];
    if (tb) {
      const rows = tb.rows.filter((r) => r.sweep === s);
      for (const r of rows) {
        const ci = classes.indexOf(r.class);
        if (num(r.window_start_ms) && num(r.window_end_ms)) shapes.push(classWindowShape(r, ci));
        const m = MARKS.filter(([key]) => r.detected && num(r[key]));
        if (!m.length) continue;
        mine.push(data.length);
        data.push({
          type: 'scatter',
          mode: 'markers',
          visible: k === 0,
          showlegend: false,
          name: plotlyText(r.class),
          x: m.map(([key]) => r[key]),
          y: m.map(([key]) => x[set.indexAt(r[key] as number)]),
          text: m.map(([, word]) => `${plotlyText(r.class)} ${word}`),
          hovertemplate: `%{text}: %{x:.3f} ms, %{y:.4g} ${U}<extra></extra>`,
          marker: {
            symbol: m.map(([, , sym]) => sym),
            size: 9,
            color: colour(ci),
            line: { width: 0.5, color: '#fff' },
          },
        });
      }
      const noise = rows[0]?.[`noise_${set.units}`];
      if (num(noise))
        shapes.push({
          type: 'rect',
          xref: 'paper',
          yref: 'y',
          x0: 0,
          x1: 1,
          y0: -tb.resolved.k * noise,
          y1: tb.resolved.k * noise,
          fillcolor: '#888',
          opacity: 0.15,
          line: { width: 0 },
          layer: 'below',
        });
    }
    perSweep.push({ traces: mine, shapes });
  });
  // legend: what the shading and marks mean (legend-only entries, always visible)
  const entry = (name: string, style: Trace): Trace => legendOnly(name, { visible: true, ...style });
  const legend: Trace[] = [];
  if (tb) {
    classes.forEach((c, ci) =>
      legend.push(
        entry(`${plotlyText(c)} window`, {
          mode: 'markers',
          marker: { symbol: 'square', size: 10, color: colour(ci), opacity: 0.3 },
        }),
      ),
    );
    legend.push(
      entry('Detection level', {
        mode: 'markers',
        marker: { symbol: 'square', size: 10, color: '#888', opacity: 0.3 },
      }),
    );
    for (const [, word, sym] of MARKS)
      legend.push(entry(sentenceCase(word), { mode: 'markers', marker: { symbol: sym, size: 8, color: '#666' } }));
  }
  const nMain = data.length;
  data.push(...legend);
  const steps = idx.map((s, k) => {
    const visible = Array.from({ length: nMain }, () => false).concat(legend.map(() => true));
    for (const i of perSweep[k].traces) visible[i] = true;
    const every = Math.ceil(idx.length / 8);
    return {
      method: 'update',
      label: k % every === 0 ? String(s) : '',
      args: [
        { visible },
        {
          shapes: perSweep[k].shapes,
          'title.text': `${options.title !== undefined ? plotlyText(sentenceCase(options.title)) : 'Sweep'} ${sweepLabel(set, s)}`,
        },
      ],
    };
  });
  const title = `${options.title !== undefined ? plotlyText(sentenceCase(options.title)) : 'Sweep'} ${sweepLabel(set, idx[0])}`;
  const layout = layoutFor(title, 'Time after stimulus (ms)', `Signal (${U})`, {
    shapes: perSweep[0].shapes,
    hovermode: 'closest',
    sliders:
      idx.length > 1
        ? [
            {
              active: 0,
              steps,
              x: 0,
              len: 1,
              xanchor: 'left',
              y: 0,
              yanchor: 'top',
              pad: { t: 0, b: 0 },
              currentvalue: { visible: false },
              font: { size: 11 },
              ticklen: 3,
            },
          ]
        : [],
  });
  return new Figure('sweep-viewer', { data, layout });
}
