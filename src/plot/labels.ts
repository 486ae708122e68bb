/**
 * Words and ticks on figures: plotly markup escaping for user text, units as printed
 * (µV, µM, °C), readable names for table columns, sentence case, and log-axis ticks
 * that label every value in full.
 */

/**
 * A user's text (a preparation name, a label, a unit) as plotly shows it: `&`, `<`
 * and `>` become entities, so `<a href=...>` or `<b>` stay visible text instead of
 * becoming a link or bold (plotly reads a small HTML subset in names, titles and hover text).
 */
export function plotlyText(s: unknown): string {
  return String(s).replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;');
}

/** Plotly markup as plain text: tags dropped (<br> as a space), entities decoded. */
export function plainText(markup: string): string {
  return markup
    .replace(/<br\s*\/?>/gi, ' ')
    .replace(/<[^>]*>/g, '')
    .replace(/&lt;/g, '<')
    .replace(/&gt;/g, '>')
    .replace(/&quot;/g, '"')
    .replace(/&#39;/g, "'")
    .replace(/&amp;/g, '&')
    .trim();
}

/** ASCII spellings of units and how a figure prints them. */
const UNIT_PRINT: Record<string, string> = {
  uV: 'µV',
  uv: 'µV',
  uM: 'µM',
  um: 'µm',
  uA: 'µA',
  us: 'µs',
  uS: 'µS',
  uF: 'µF',
  uL: 'µL',
  ul: 'µL',
  uN: 'µN',
  nM: 'nM',
  mM: 'mM',
  C: '°C',
  degC: '°C',
  deg_C: '°C',
  'deg C': '°C',
  celsius: '°C',
  Celsius: '°C',
  ohm: 'Ω',
  kohm: 'kΩ',
  Mohm: 'MΩ',
  'uA/cm2': 'µA/cm²',
  'mA/cm2': 'mA/cm²',
  'uF/cm2': 'µF/cm²',
  m_s: 'm/s',
  'm s-1': 'm/s',
};

/** A unit as printed on a figure: 'uV' -> 'µV', 'uM' -> 'µM', 'C' -> '°C'; others unchanged (escaped for plotly). */
export function unitText(unit: unknown): string {
  const u = String(unit ?? '').trim();
  return plotlyText(UNIT_PRINT[u] ?? u);
}

/** First letter upper case, the rest as written (acronyms and class names such as A-delta stay as they are). */
export function sentenceCase(s: string): string {
  return s ? s[0].toUpperCase() + s.slice(1) : s;
}

/** Unit suffixes of table column names (after the last underscore-separated word). */
const SUFFIX_UNITS: [RegExp, string][] = [
  [/_m_s$/, 'm/s'],
  [/_ms$/, 'ms'],
  [/_mm$/, 'mm'],
  [/_uV$/i, 'µV'],
  [/_mV$/, 'mV'],
  [/_mA$/, 'mA'],
  [/_uA$/, 'µA'],
  [/_uM$/, 'µM'],
  [/_kJ_mol$/, 'kJ/mol'],
  [/_C$/, '°C'],
  [/_s$/, 's'],
  [/_V$/, 'V'],
];

/** Names for the measures the analyses use, as a reader of a paper knows them. */
const MEASURES: Record<string, string> = {
  velocity_m_s: 'conduction velocity (m/s)',
  centroid_velocity_m_s: 'conduction velocity (m/s)',
  peak_velocity_m_s: 'conduction velocity (m/s)',
  onset_velocity_m_s: 'conduction velocity (m/s)',
  regression_velocity_m_s: 'conduction velocity (m/s)',
  regression_velocity: 'conduction velocity (m/s)',
  amplitude: 'amplitude',
  area: 'area',
  centroid_ms: 'centroid latency (ms)',
  peak_ms: 'peak latency (ms)',
  onset_ms: 'onset latency (ms)',
  utilisation_ms: 'utilisation time (ms)',
};

/**
 * A table column or measure name as an axis title: 'centroid_velocity_m_s' ->
 * 'conduction velocity, centroid latency (m/s)'; unknown names lose their underscores
 * and get their unit from the suffix ('width_ms' -> 'width (ms)'). '1/x' -> '1 / (x)'.
 * Returns plotly markup (the name is escaped).
 */
export function measureLabel(name: string): string {
  if (name.startsWith('1/')) return `1 / ${measureLabel(name.slice(2))}`;
  const known = MEASURES[name];
  if (known) return plotlyText(known);
  for (const [re, unit] of SUFFIX_UNITS) {
    if (re.test(name)) return plotlyText(`${name.replace(re, '').replace(/_/g, ' ')} (${unit})`);
  }
  return plotlyText(name.replace(/_/g, ' '));
}

/** A number as a tick label: full digits, no exponent between 1e-4 and 1e6. */
export function tickNumber(v: number): string {
  const a = Math.abs(v);
  if (a !== 0 && (a < 1e-4 || a >= 1e6)) {
    const e = Math.round(Math.log10(a));
    if (Math.abs(a / 10 ** e - 1) < 1e-9) return `10<sup>${e}</sup>`;
    return v.toExponential(1);
  }
  return String(Number(v.toPrecision(6)));
}

export interface LogTicks {
  tickvals: number[];
  ticktext: string[];
  /** unlabelled minor ticks (2..9 times each decade where labels are decades only) */
  minor: number[];
  /** axis range in log10 units */
  range: [number, number];
}

/**
 * Ticks of a log axis where every label is the full value ("0.1, 1, 10, 100", or
 * "1, 2, 5, 10, 20" over a short span), never plotly's leading-digit style
 * ("5, 2, 10, 5, 2, 1") that a reader cannot tell apart. Spans under about half a
 * decade get evenly stepped values (1-2-5 steps) so at least three labels show.
 * `values`: the data on the axis (non-positive and non-finite values are ignored).
 */
export function logTicks(values: readonly unknown[], padDecades = 0.06): LogTicks | null {
  const v = values.filter((x): x is number => typeof x === 'number' && Number.isFinite(x) && x > 0);
  if (!v.length) return null;
  let lo = Math.log10(Math.min(...v)),
    hi = Math.log10(Math.max(...v));
  if (hi - lo < 0.2) {
    const m = (lo + hi) / 2;
    lo = m - 0.1;
    hi = m + 0.1;
  }
  const pad = padDecades * Math.max(1, hi - lo);
  const range: [number, number] = [lo - pad, hi + pad];
  const span = range[1] - range[0];
  const inRange = (x: number) => Math.log10(x) >= range[0] - 1e-9 && Math.log10(x) <= range[1] + 1e-9;
  const d0 = Math.floor(range[0]),
    d1 = Math.ceil(range[1]);
  const at = (mults: number[], every = 1) => {
    const out: number[] = [];
    for (let d = d0; d <= d1; d++) {
      if ((d - d0) % every) continue;
      for (const m of mults) {
        const x = Number((m * 10 ** d).toPrecision(12));
        if (inRange(x)) out.push(x);
      }
    }
    return out;
  };
  // the densest full-value set with at most 6 labels: 1-2-5, 1-3, decades, every other decade...
  let vals: number[] = [];
  let mults: number[] = [1];
  for (const m of [[1, 2, 5], [1, 3], [1]]) {
    vals = at(m);
    mults = m;
    if (vals.length <= 6) break;
  }
  for (let every = 2; vals.length > 6; every++) vals = at([1], every);
  const minor: number[] = [];
  if (mults.length === 1) {
    for (let d = d0; d <= d1; d++)
      for (let m = 2; m <= 9; m++) {
        const x = Number((m * 10 ** d).toPrecision(12));
        if (inRange(x)) minor.push(x);
      }
  }
  if (vals.length < 3) {
    // short span: evenly stepped values (1-2-5 steps), 3 to 6 of them
    const a = 10 ** range[0],
      b = 10 ** range[1];
    const e = 10 ** Math.floor(Math.log10(b - a));
    for (const st of [5, 2, 1, 0.5, 0.2, 0.1, 0.05, 0.02, 0.01].map((m) => m * e)) {
      vals = [];
      for (let k = Math.ceil(a / st); k * st <= b * (1 + 1e-12); k++) vals.push(Number((k * st).toPrecision(12)));
      if (vals.length >= 3) break;
    }
    minor.length = 0;
  }
  return { tickvals: vals, ticktext: vals.map(tickNumber), minor, range };
}

/** Axis settings for a log axis over `values` (merged into an axis object). */
export function logAxis(values: readonly unknown[]): Record<string, unknown> {
  const t = logTicks(values);
  if (!t) return { type: 'log' };
  return {
    type: 'log',
    range: t.range,
    tickmode: 'array',
    tickvals: t.tickvals,
    ticktext: t.ticktext,
    ...(t.minor.length
      ? { minor: { tickmode: 'array', tickvals: t.minor, ticks: 'outside', ticklen: 2, showgrid: false } }
      : {}),
  };
}
