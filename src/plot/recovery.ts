/**
 * Figures of refractoriness and trains: paired-pulse recovery per class (test response as a fraction of test alone
 * against the interstimulus interval, log axis, with the fitted logistic and R50 marks) and train responses per
 * class (latency increase and area fraction against pulse number). Text from data is escaped (labels.ts).
 */
import { Figure, PALETTE, MARKERS, layoutFor } from './figure';
import { plotlyText, logAxis } from './labels';
import { recoveryLogistic, registerRecoveryFigure } from '../analysis/pairedPulse';
import type { PairedPulseResult } from '../analysis/pairedPulse';
import { registerTrainFigure } from '../analysis/trains';
import type { TrainResult } from '../analysis/trains';
import type { ConditionValue } from '../sweeps/SweepSet';

type Row = Record<string, ConditionValue>;
type Trace = Record<string, unknown>;
const num = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);
const colour = (i: number) => PALETTE[i % PALETTE.length];
const symbol = (i: number) => MARKERS[i % MARKERS.length];
const label = (r: Row) =>
  r.preparation !== undefined && r.preparation !== null ? ` (${plotlyText(r.preparation)})` : '';

/** Paired-pulse recovery: area (or amplitude) fraction against interval per class, fitted logistic, R50 marked. */
export function recoveryFigure(result: PairedPulseResult): Figure {
  const data: Trace[] = [];
  const classes = [...new Set(result.summary.filter((r) => r.class !== null).map((r) => String(r.class)))];
  classes.forEach((cls, ci) => {
    for (const s of result.summary.filter((r) => r.class === cls)) {
      const measure = s.recovery_measure === 'amplitude' ? 'amplitude_fraction' : 'area_fraction';
      const pts = result.points.filter(
        (p) => p.class === cls && (s.preparation === undefined || p.preparation === s.preparation),
      );
      const y = pts.map((p) => (p.status === 'not detected' ? 0 : num(p[measure]) ? p[measure] : null));
      data.push({
        type: 'scatter',
        mode: 'markers',
        x: pts.map((p) => p.interval_ms),
        y,
        name: `${plotlyText(cls)}${label(s)}`,
        marker: { color: colour(ci), symbol: symbol(ci), size: 7 },
      });
      if (num(s.r50_ms) && num(s.slope_log10)) {
        const xs = pts.map((p) => p.interval_ms as number);
        const lo = Math.log10(Math.min(...xs)),
          hi = Math.log10(Math.max(...xs));
        const gx = Array.from({ length: 120 }, (_, i) => lo + ((hi - lo) * i) / 119);
        const p = [Math.log10(s.r50_ms), s.slope_log10];
        data.push({
          type: 'scatter',
          mode: 'lines',
          x: gx.map((v) => 10 ** v),
          y: gx.map((v) => recoveryLogistic(v, p)),
          name: `${plotlyText(cls)} logistic fit, R50 ${Number(s.r50_ms.toPrecision(3))} ms`,
          line: { color: colour(ci), width: 1.5 },
        });
      }
      if (num(s.arp_ms)) {
        data.push({
          type: 'scatter',
          mode: 'markers',
          x: [s.arp_ms],
          y: [0],
          name: `${plotlyText(cls)} absolute refractory period ${Number(s.arp_ms.toPrecision(3))} ms`,
          marker: { color: colour(ci), symbol: 'line-ns-open', size: 14, line: { width: 2, color: colour(ci) } },
        });
      }
    }
  });
  const m = result.summary.find((r) => r.recovery_measure)?.recovery_measure === 'amplitude' ? 'amplitude' : 'area';
  const xs = result.points.map((p) => p.interval_ms);
  const layout = layoutFor(
    'Paired-pulse recovery',
    'Interstimulus interval (ms)',
    `Test response ${m}, fraction of test alone`,
    {
      xaxis: logAxis(xs),
      yaxis: { rangemode: 'tozero' },
    },
  );
  return new Figure('paired-pulse recovery', { data, layout });
}

/** Trains: latency increase from pulse 1 (top) and area fraction of pulse 1 (bottom) against pulse number, per class and frequency. */
export function trainFigure(result: TrainResult): Figure {
  const data: Trace[] = [];
  const classes = [...new Set(result.points.map((r) => String(r.class)))];
  const freqs = [...new Set(result.points.map((r) => r.train_hz as number))].sort((a, b) => a - b);
  const dashes = ['solid', 'dash', 'dot', 'dashdot', 'longdash'];
  classes.forEach((cls, ci) => {
    freqs.forEach((hz, fi) => {
      const pts = result.points.filter((p) => p.class === cls && p.train_hz === hz);
      const name = `${plotlyText(cls)} ${hz} Hz`;
      const line = { color: colour(ci), dash: dashes[fi % dashes.length], width: 1.5 };
      const marker = { color: colour(ci), symbol: symbol(ci), size: 6 };
      const x = pts.map((p) => p.pulse);
      data.push({
        type: 'scatter',
        mode: 'lines+markers',
        x,
        y: pts.map((p) => p.latency_increase_ms),
        name,
        line,
        marker,
        xaxis: 'x',
        yaxis: 'y',
      });
      const area = pts.map((p) => (p.status === 'not detected' ? 0 : p.area_fraction));
      data.push({
        type: 'scatter',
        mode: 'lines+markers',
        x,
        y: area,
        name,
        showlegend: false,
        line,
        marker,
        xaxis: 'x',
        yaxis: 'y2',
      });
    });
  });
  const layout = layoutFor('Responses in a stimulus train', 'Pulse number', 'Latency increase from pulse 1 (ms)', {
    grid: { rows: 2, columns: 1, pattern: 'coupled' },
    yaxis: { title: { text: 'Latency increase from pulse 1 (ms)' }, domain: [0.55, 1] },
    yaxis2: { title: { text: 'Area, fraction of pulse 1' }, domain: [0, 0.45], rangemode: 'tozero' },
    xaxis: { title: { text: 'Pulse number' }, dtick: 1 },
  });
  return new Figure('train responses', { data, layout });
}

// the results' figure() methods (the analysis layer does not import this one)
registerRecoveryFigure(recoveryFigure);
registerTrainFigure(trainFigure);
