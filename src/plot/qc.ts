/**
 * Sweep quality control at a glance: each sweep's baseline noise (1.4826 MAD of its quiet window, as sweepQc
 * measures it) against its place in the recording, one colour per preparation, flagged sweeps ringed with one mark
 * per flag kind (the reasons in the hover text). Reads the rows of sweepQc (or the bundle's sweep_qc table).
 */
import { Figure, PALETTE, MARKERS, layoutFor } from './figure';
import { plotlyText, unitText, logAxis } from './labels';

import type { Row } from '../registry/types';
type Trace = Record<string, unknown>;
const num = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);
const GREY = '#666';

/**
 * The QC figure of a sweepQc result (or its rows): noise per sweep, flagged sweeps marked by flag.
 * @example sweepQcFigure(study.qc()).show()
 */
export function sweepQcFigure(qc: { rows: readonly Row[]; units?: string } | readonly Row[], units?: string): Figure {
  const rows = (Array.isArray(qc) ? qc : (qc as { rows: readonly Row[] }).rows) as readonly Row[];
  const u = units ?? (Array.isArray(qc) ? undefined : (qc as { units?: string }).units) ?? 'uV';
  const key = [`noise_${u}`, 'noise_uV'].find((k) => rows.some((r) => num(r[k]))) ?? `noise_${u}`;
  const preps = [...new Set(rows.map((r) => String(r.preparation ?? '')))];
  const kinds = [
    ...new Set(rows.flatMap((r) => (r.flagged === true ? String(r.flags ?? '').split(',') : [])).filter(Boolean)),
  ];
  const data: Trace[] = [];
  const text = (r: Row) =>
    `sweep ${String(r.sweep)}${r.preparation !== undefined ? ` (${plotlyText(r.preparation)})` : ''}` +
    (r.flagged === true ? `: ${plotlyText(r.reasons ?? r.flags ?? '')}` : '');
  // one marker trace of the sweeps rr (noise against sweep number, the reasons in the hover)
  const points = (rr: Row[], style: Trace): Trace => ({
    type: 'scatter',
    mode: 'markers',
    x: rr.map((r) => r.sweep),
    y: rr.map((r) => r[key]),
    text: rr.map(text),
    hoverinfo: 'text+y',
    ...style,
  });
  preps.forEach((p, pi) => {
    const rr = rows.filter((r) => String(r.preparation ?? '') === p && num(r[key]));
    data.push(
      points(rr, {
        name: p ? plotlyText(p) : 'sweeps',
        showlegend: preps.length > 1,
        marker: { color: PALETTE[pi % PALETTE.length], size: 4, opacity: 0.7 },
      }),
    );
  });
  kinds.forEach((k, ki) => {
    const rr = rows.filter((r) => r.flagged === true && String(r.flags).split(',').includes(k) && num(r[key]));
    data.push(
      points(rr, {
        name: `Flagged: ${plotlyText(k)}`,
        marker: {
          symbol: `${MARKERS[(ki + 1) % MARKERS.length]}-open`,
          size: 9,
          color: '#000',
          line: { width: 1, color: '#000' },
        },
      }),
    );
  });
  if (!kinds.length)
    data.push({
      type: 'scatter',
      x: [null],
      y: [null],
      mode: 'markers',
      name: 'No sweep flagged',
      hoverinfo: 'skip',
      marker: { color: GREY, size: 1, opacity: 0 },
    });
  const n = rows.filter((r) => r.flagged === true).length;
  const title = `Sweep quality control: ${n} of ${rows.length} sweep${rows.length === 1 ? '' : 's'} flagged`;
  const ys = rows.map((r) => r[key]).filter(num);
  const log = ys.length > 1 && Math.min(...ys) > 0 && Math.max(...ys) / Math.min(...ys) > 10;
  return new Figure('sweep-qc', {
    data,
    layout: layoutFor(title, 'Sweep number', `Baseline noise, robust SD (${unitText(u)})`, {
      yaxis: log ? logAxis(ys) : { rangemode: 'tozero' },
    }),
  });
}
