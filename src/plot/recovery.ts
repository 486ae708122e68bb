/**
 * Figures of refractoriness and trains: paired-pulse recovery per class (test response as a fraction of test alone
 * against the interstimulus interval, log axis, with the fitted logistic and R50 marks) and train responses per
 * class (latency increase and area fraction against pulse number). Text from data is escaped (labels.ts).
 */
import { Figure, PALETTE, MARKERS, layoutFor, legendOnly } from './figure';
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

const GREY = '#666';
const DASHES = ['solid', 'dash', 'dot', 'dashdot', 'longdash'];
const fmt = (v: number) => String(Number(v.toPrecision(3)));
/** "0.647 ms" for one value, "0.64–0.79 ms" (two significant digits) for a range over preparations. */
const span = (vs: number[]) => {
  const lo = Math.min(...vs),
    hi = Math.max(...vs);
  const f2 = (v: number) => String(Number(v.toPrecision(2)));
  if (vs.length === 1) return `${fmt(lo)} ms`;
  return f2(lo) === f2(hi) ? `${f2(lo)} ms` : `${f2(lo)}–${f2(hi)} ms`;
};

/**
 * Paired-pulse recovery: test response (area or amplitude fraction of the test alone) against the interval per class,
 * the fitted logistic per preparation and the absolute refractory period marked. One colour and marker per class
 * (its legend entry gives the R50, or their range over preparations); the line style tells the recovery measure.
 */
export function recoveryFigure(result: PairedPulseResult): Figure {
  const data: Trace[] = [];
  const entries: Trace[] = [];
  const classes = [...new Set(result.summary.filter((r) => r.class !== null).map((r) => String(r.class)))];
  const measures = [
    ...new Set(result.summary.map((r) => (r.recovery_measure === 'amplitude' ? 'amplitude' : 'area'))),
  ].sort();
  const dashOf = (m: string) => DASHES[Math.max(0, (measures as string[]).indexOf(m)) % DASHES.length];
  const preps = new Set(result.summary.map((r) => String(r.preparation ?? '')));
  let fitted = false,
    arp = false;
  classes.forEach((cls, ci) => {
    const C = plotlyText(cls);
    const r50: number[] = [];
    for (const s of result.summary.filter((r) => r.class === cls)) {
      const m = s.recovery_measure === 'amplitude' ? 'amplitude' : 'area';
      const key = `${m}_fraction`;
      const pts = result.points.filter(
        (p) => p.class === cls && (s.preparation === undefined || p.preparation === s.preparation),
      );
      const y = pts.map((p) => (p.status === 'not detected' ? 0 : num(p[key]) ? p[key] : null));
      data.push({
        type: 'scatter',
        mode: 'markers',
        x: pts.map((p) => p.interval_ms),
        y,
        name: `${C}${label(s)}`,
        text: pts.map(() => `${C}${label(s)}`),
        showlegend: false,
        marker: { color: colour(ci), symbol: symbol(ci), size: 6, opacity: 0.75 },
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
          name: `${C}${label(s)} logistic fit, R<sub>50</sub> ${fmt(s.r50_ms)} ms`,
          showlegend: false,
          line: { color: colour(ci), width: 1.2, dash: dashOf(m) },
        });
        r50.push(s.r50_ms);
        fitted = true;
      }
      if (num(s.arp_ms)) {
        data.push({
          type: 'scatter',
          mode: 'markers',
          x: [s.arp_ms],
          y: [0],
          name: `${C}${label(s)} absolute refractory period ${fmt(s.arp_ms)} ms`,
          showlegend: false,
          marker: { color: colour(ci), symbol: 'line-ns-open', size: 12, line: { width: 1.5, color: colour(ci) } },
        });
        arp = true;
      }
    }
    entries.push(
      legendOnly(r50.length ? `${C} R<sub>50</sub> ${span(r50)}` : C, {
        mode: 'markers',
        marker: { color: colour(ci), symbol: symbol(ci), size: 7 },
      }),
    );
  });
  data.push(...entries);
  const per = preps.size > 1 ? ', one per preparation' : '';
  if (fitted)
    for (const m of measures)
      data.push(
        legendOnly(measures.length > 1 ? `Logistic fit to ${m}${per}` : `Logistic fit${per}`, {
          mode: 'lines',
          line: { color: GREY, width: 1.2, dash: dashOf(m) },
        }),
      );
  if (arp)
    data.push(
      legendOnly('Absolute refractory period', {
        mode: 'markers',
        marker: { color: GREY, symbol: 'line-ns-open', size: 10, line: { width: 1.5, color: GREY } },
      }),
    );
  const yText =
    measures.length === 1
      ? `Test response ${measures[0]}, fraction of test alone`
      : 'Test response, fraction of test alone';
  const xs = result.points.map((p) => p.interval_ms);
  const layout = layoutFor('Paired-pulse recovery', 'Interstimulus interval (ms)', yText, {
    xaxis: logAxis(xs),
    yaxis: { rangemode: 'tozero' },
  });
  return new Figure('paired-pulse recovery', { data, layout });
}

/**
 * Trains: latency increase from pulse 1 (top) and area fraction of pulse 1 (bottom) against pulse number. One colour
 * and marker per class, one line style per train frequency; the legend names each once.
 */
export function trainFigure(result: TrainResult): Figure {
  const data: Trace[] = [];
  const classes = [...new Set(result.points.map((r) => String(r.class)))];
  const freqs = [...new Set(result.points.map((r) => r.train_hz as number))].sort((a, b) => a - b);
  classes.forEach((cls, ci) => {
    freqs.forEach((hz, fi) => {
      const pts = result.points.filter((p) => p.class === cls && p.train_hz === hz);
      const name = `${plotlyText(cls)} ${hz} Hz`;
      const line = { color: colour(ci), dash: DASHES[fi % DASHES.length], width: 1.2 };
      const marker = { color: colour(ci), symbol: symbol(ci), size: 5 };
      const x = pts.map((p) => p.pulse);
      const base = { type: 'scatter', mode: 'lines+markers', x, name, line, marker, showlegend: false, xaxis: 'x' };
      data.push({ ...base, y: pts.map((p) => p.latency_increase_ms), yaxis: 'y' });
      data.push({ ...base, y: pts.map((p) => (p.status === 'not detected' ? 0 : p.area_fraction)), yaxis: 'y2' });
    });
  });
  classes.forEach((cls, ci) =>
    data.push(
      legendOnly(plotlyText(cls), { mode: 'markers', marker: { color: colour(ci), symbol: symbol(ci), size: 7 } }),
    ),
  );
  freqs.forEach((hz, fi) =>
    data.push(
      legendOnly(`${hz} Hz`, { mode: 'lines', line: { color: GREY, width: 1.2, dash: DASHES[fi % DASHES.length] } }),
    ),
  );
  const layout = layoutFor(
    'Responses in a stimulus train, relative to pulse 1',
    'Pulse number',
    'Latency increase (ms)',
    {
      grid: { rows: 2, columns: 1, pattern: 'coupled' },
      yaxis: { title: { text: 'Latency increase (ms)' }, domain: [0.55, 1] },
      xaxis: { title: { text: 'Pulse number' }, dtick: 1 },
    },
  );
  // the lower panel's axis in the house style too (axis line, outside ticks, no zero line)
  layout.yaxis2 = {
    ...(layout.yaxis as object),
    title: { text: 'Area, fraction of pulse 1', standoff: 6 },
    domain: [0, 0.45],
    rangemode: 'tozero',
  };
  return new Figure('train responses', { data, layout });
}

// the results' figure() methods (the analysis layer does not import this one)
registerRecoveryFigure(recoveryFigure);
registerTrainFigure(trainFigure);
