/**
 * Figures of a conduction-velocity distribution: the distribution on a log velocity axis
 * with its 95% bootstrap band, the class ranges shaded, an optional known distribution
 * (binned on the same grid) overlaid; and the reconstruction of each distance's response.
 */
import { Figure, PALETTE, baseLayout } from './figure';
import { plotlyText, unitText } from './labels';
import { registerVelocityDistributionFigure, type VelocityDistributionResult } from '../analysis/velocityDistribution';

const colour = (i: number) => PALETTE[i % PALETTE.length];
/** A palette colour (#rrggbb) with transparency, for a shaded band that keeps its line's colour. */
const translucent = (hex: string, alpha: number) =>
  `rgba(${[1, 3, 5].map((k) => parseInt(hex.slice(k, k + 2), 16)).join(',')},${alpha})`;

/** Bin known fibre velocities (optionally weighted) on the result's grid, as fractions. */
export function binOnGrid(
  result: VelocityDistributionResult,
  velocity: readonly number[],
  weight?: readonly number[],
): number[] {
  const lo = result.grid.map((r) => r.bin_low_m_s as number),
    hi = result.grid.map((r) => r.bin_high_m_s as number);
  const out = new Array(lo.length).fill(0);
  let tot = 0;
  velocity.forEach((x, i) => {
    const w = weight ? weight[i] : 1;
    const k = lo.findIndex((a, j) => x >= a && x < hi[j]);
    if (k >= 0) {
      out[k] += w;
      tot += w;
    }
  });
  return out.map((x) => (tot > 0 ? x / tot : 0));
}

export interface VelocityDistributionFigureOptions {
  /** which fraction to draw (default 'number') */
  weighting?: 'number' | 'amplitude';
  /** a known distribution (e.g. a simulation's fibres) binned on the same grid and overlaid */
  truth?: { velocity: number[]; weight?: number[]; label?: string };
}

/**
 * The distribution (number- or amplitude-weighted fraction per grid bin) with its band,
 * class ranges and, when given, a known distribution (e.g. a simulation's truth).
 */
export function velocityDistributionFigure(
  result: VelocityDistributionResult,
  options: VelocityDistributionFigureOptions = {},
): Figure {
  const wt = options.weighting ?? 'number';
  const v = result.grid.map((r) => r.velocity_m_s as number);
  const y = result.grid.map((r) => r[`${wt}_fraction`] as number);
  const lo = result.grid.map((r) => r[`${wt}_fraction_ci95_low`] as number | null);
  const hi = result.grid.map((r) => r[`${wt}_fraction_ci95_high`] as number | null);
  const data: Record<string, unknown>[] = [];
  const line = (x: unknown, yy: unknown, name: string, more: Record<string, unknown>) => ({
    type: 'scatter',
    mode: 'lines',
    x,
    y: yy,
    name,
    ...more,
  });
  if (lo.every((x) => typeof x === 'number')) {
    data.push(line(v, hi, 'band high', { line: { width: 0 }, showlegend: false, hoverinfo: 'skip' }));
    const band = { line: { width: 0 }, fill: 'tonexty', fillcolor: translucent(colour(0), 0.2) };
    data.push(line(v, lo, '95% bootstrap band', band));
  }
  data.push(line(v, y, `estimate (${wt}-weighted)`, { line: { color: colour(0), width: 2 } }));
  if (options.truth) {
    const tb = binOnGrid(result, options.truth.velocity, options.truth.weight);
    data.push(
      line(v, tb, plotlyText(options.truth.label ?? 'known distribution'), {
        line: { color: colour(1), width: 1.5, dash: 'dash', shape: 'hvh' },
      }),
    );
  }
  const shapes = result.classes.map((c, i) => ({
    type: 'rect',
    xref: 'x',
    yref: 'paper',
    x0: c.range_low_m_s,
    x1: c.range_high_m_s,
    y0: 0,
    y1: 1,
    fillcolor: colour(i + 2),
    opacity: 0.07,
    line: { width: 0 },
  }));
  const annotations = result.classes.map((c) => ({
    x: Math.log10(Math.sqrt((c.range_low_m_s as number) * (c.range_high_m_s as number))),
    y: 1,
    xref: 'x',
    yref: 'paper',
    yanchor: 'bottom',
    text: plotlyText(c.class),
    showarrow: false,
  }));
  const title = `Conduction-velocity distribution (${plotlyText(result.fit.method)})`;
  const layout = baseLayout(title, 'conduction velocity (m/s)', `${wt}-weighted fraction per bin`, {
    shapes,
    annotations,
    xaxis: { type: 'log' },
  });
  return new Figure('velocity-distribution', { data, layout });
}

/** Each distance's averaged response and its reconstruction from the distribution. */
export function velocityReconstructionFigure(result: VelocityDistributionResult): Figure {
  const data: Record<string, unknown>[] = [];
  result.reconstruction.forEach((r, i) => {
    const step = Math.max(1, Math.floor(r.t.length / 3000));
    const xs: number[] = [],
      ys: number[] = [],
      fs: number[] = [];
    for (let j = 0; j < r.t.length; j += step) {
      xs.push(r.t[j]);
      ys.push(r.y[j]);
      fs.push(r.fit[j]);
    }
    const d = plotlyText(r.distanceMm);
    data.push({
      type: 'scatter',
      mode: 'lines',
      x: xs,
      y: ys,
      name: `${d} mm, recorded`,
      line: { color: colour(i), width: 1 },
    });
    data.push({
      type: 'scatter',
      mode: 'lines',
      x: xs,
      y: fs,
      name: `${d} mm, reconstructed`,
      line: { color: colour(i), width: 1.5, dash: 'dot' },
    });
  });
  const y = `signal (${unitText(result.units)})`;
  return new Figure('velocity-reconstruction', {
    data,
    layout: baseLayout('Responses and their reconstruction', 'time after stimulus (ms)', y),
  });
}

// result.figure() draws with this module (the analysis layer does not import plot)
registerVelocityDistributionFigure(velocityDistributionFigure);
