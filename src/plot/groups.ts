/**
 * Group-comparison figure: one point per preparation (the analysis's `animal` field), and the
 * mean with its t-based 95% CI per group; with a within-preparation condition, conditions along
 * the x axis, groups side by side and each preparation's points joined. User strings (group,
 * condition, preparation names, labels)
 * are escaped for plotly (plotlyText: & < > as entities), since plotly renders tags in names and labels;
 * the axis title with its unit comes from measureLabel (plot/labels.ts).
 */
import type { ConditionValue } from '../sweeps/SweepSet';
import type { GroupComparison } from '../analysis/groups';
import { Figure, PALETTE, baseLayout, legendOnly } from './figure';
import { plotlyText as esc, measureLabel, unitText } from './labels';
import { OptionError } from '../errors';

const colour = (i: number) => PALETTE[i % PALETTE.length];
const same = (a: unknown, b: unknown) => JSON.stringify(a) === JSON.stringify(b);

/** A deterministic jitter in [-1, 1] from a label (so a figure is the same on every run). */
function jitter(label: string): number {
  let h = 2166136261;
  for (let i = 0; i < label.length; i++) h = Math.imul(h ^ label.charCodeAt(i), 16777619);
  return ((h >>> 0) / 4294967295) * 2 - 1;
}

export interface GroupFigureOptions {
  /** values of the comparison's `by` columns to show (default: the first cell) */
  cell?: Record<string, ConditionValue>;
  /** y-axis label without unit (default: from the value column, with its unit) */
  label?: string;
  title?: string;
}

/**
 * The figure of one cell of the comparison's `by` columns (default: the first cell).
 * @example groupFigure(compareGroups(rows, { value: 'amplitude_uV', condition: 'epoch' }), { cell: { class: 'A' } })
 */
export function groupFigure(result: GroupComparison, options: GroupFigureOptions = {}): Figure {
  const o = result.options;
  const cells = result.summary.map((s) => Object.fromEntries(o.by.map((k) => [k, s[k]])));
  if (!cells.length) throw new OptionError('groupFigure: the comparison has no summary rows');
  const cell = options.cell ?? cells[0];
  if (!cells.some((c) => o.by.every((k) => same(c[k], cell[k])))) {
    const all = [...new Set(cells.map((c) => JSON.stringify(c)))].join(', ');
    throw new OptionError(`groupFigure: no cell ${JSON.stringify(cell)}; cells are ${all}`);
  }
  const inCell = (r: Record<string, unknown>) => o.by.every((k) => same(r[k], cell[k]));
  const pts = result.points.filter((p) => inCell(p.key));
  const sum = result.summary.filter(inCell);
  // groups and conditions in the comparison's order (its summary rows: given levels, else first appearance)
  const levels = (k: 'group' | 'condition') =>
    [...new Set(sum.map((s) => JSON.stringify(k === 'condition' && !o.condition ? null : s[k])))].map(
      (g) => JSON.parse(g) as ConditionValue,
    );
  const groups = levels('group');
  const conds = levels('condition');
  const G = groups.length;
  const width = 0.7 / Math.max(1, G);
  const xOf = (c: ConditionValue, g: ConditionValue) =>
    conds.findIndex((q) => same(q, c)) + (groups.findIndex((q) => same(q, g)) - (G - 1) / 2) * width;
  const data: Record<string, unknown>[] = [];
  groups.forEach((g, gi) => {
    const mine = pts.filter((p) => same(p.group, g));
    const name = esc(String(g));
    if (o.condition && conds.length > 1) {
      for (const a of [...new Set(mine.map((p) => String(p.animal)))]) {
        const line = conds.map((c) => mine.find((p) => String(p.animal) === a && same(p.condition, c)));
        data.push({
          type: 'scatter',
          mode: 'lines',
          name: `${name} ${esc(a)}`,
          x: line.map((p, k) => (p ? xOf(conds[k], g) + 0.25 * width * jitter(a) : null)),
          y: line.map((p) => (p ? p.value : null)),
          line: { color: colour(gi), width: 0.8 },
          opacity: 0.35,
          showlegend: false,
          hoverinfo: 'skip',
        });
      }
    }
    data.push({
      type: 'scatter',
      mode: 'markers',
      name: `${name} (preparations)`,
      x: mine.map((p) => xOf(p.condition, g) + 0.25 * width * jitter(String(p.animal))),
      y: mine.map((p) => p.value),
      text: mine.map((p) => `${esc(String(p.animal))}: mean of ${p.n}`),
      hoverinfo: 'text+y',
      marker: { color: colour(gi), size: 7, opacity: 0.75 },
      showlegend: false,
    });
    const s = conds.map((c) => sum.find((q) => same(q.group, g) && (!o.condition || same(q.condition, c))));
    const ok = s.filter((q) => q && q.status === 'ok').map((q) => q!);
    data.push({
      type: 'scatter',
      mode: 'markers',
      name: `${name} mean, 95% CI`,
      x: ok.map((q) => xOf(o.condition ? (q.condition as ConditionValue) : null, g)),
      y: ok.map((q) => q.mean),
      error_y: {
        type: 'data',
        symmetric: false,
        color: '#222',
        thickness: 1.5,
        width: 6,
        array: ok.map((q) => (q.ci95_high as number) - (q.mean as number)),
        arrayminus: ok.map((q) => (q.mean as number) - (q.ci95_low as number)),
      },
      marker: { symbol: 'line-ew-open', size: 22, color: '#222', line: { width: 2 } },
      showlegend: false,
    });
  });
  // the legend says what the marks are; with a condition on the x axis it also names the groups by colour
  const entry = (name: string, marker: Record<string, unknown>) => legendOnly(name, { mode: 'markers', marker });
  const byCondition = !!o.condition && conds.length > 1;
  if (byCondition) groups.forEach((g, gi) => data.push(entry(esc(String(g)), { color: colour(gi), size: 7 })));
  // with conditions, a preparation's points are joined: its entry is a point on a line, as drawn
  data.push({
    ...entry('One preparation', { color: '#666', size: 7, opacity: 0.75 }),
    ...(byCondition ? { mode: 'lines+markers', line: { color: '#666', width: 0.8 } } : {}),
  });
  data.push(entry('Mean and 95% CI', { symbol: 'line-ew-open', size: 16, color: '#222', line: { width: 2 } }));
  // the y title: the caller's label with the unit, or the column's measure label (which carries its unit)
  const unit = o.unit ? ` (${unitText(o.unit)})` : '';
  const auto = measureLabel(o.value);
  const yTitle =
    options.label !== undefined ? `${esc(options.label)}${unit}` : /\)$/.test(auto) ? auto : `${auto}${unit}`;
  const what = yTitle.replace(/ \([^()]*\)$/, '');
  const where = o.by.map((k) => `${esc(k)} ${esc(String(cell[k]))}`).join(', ');
  const title =
    options.title !== undefined
      ? esc(options.title)
      : `${what} by group${where ? ` (${where})` : ''}: preparations as the unit`;
  const xTitle = o.condition && conds.length > 1 ? esc(o.condition) : esc(o.group || 'group');
  const base = baseLayout(title, xTitle, yTitle);
  // x ticks: the conditions (groups side by side, named in the legend), or with one condition the groups themselves
  const xaxis = {
    ...(base.xaxis as object),
    tickmode: 'array',
    tickvals: byCondition ? conds.map((_, i) => i) : groups.map((g) => xOf(conds[0] ?? null, g)),
    ticktext: byCondition ? conds.map((c) => esc(String(c))) : groups.map((g) => esc(String(g))),
    range: [-0.6, conds.length - 0.4],
  };
  const name = `groups-${o.value}${o.by.map((k) => `-${String(cell[k])}`).join('')}`.replace(/[^A-Za-z0-9_.-]+/g, '_');
  return new Figure(name, { data, layout: { ...base, xaxis } });
}

/** One group figure per cell of the comparison's `by` columns. */
export function groupFigures(result: GroupComparison, options: { label?: string } = {}): Figure[] {
  const o = result.options;
  const seen = new Set<string>();
  const out: Figure[] = [];
  for (const s of result.summary) {
    const cell = Object.fromEntries(o.by.map((k) => [k, s[k]]));
    const id = JSON.stringify(cell);
    if (seen.has(id)) continue;
    seen.add(id);
    out.push(groupFigure(result, { cell, label: options.label }));
  }
  return out;
}
