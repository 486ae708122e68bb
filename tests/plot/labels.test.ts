/** Words, ticks and colours of figures: units, escaping, log-axis labels, palettes, fits drawn in the axis's space. */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import {
  plotlyText,
  unitText,
  measureLabel,
  logTicks,
  PALETTE,
  MARKERS,
  SEQUENTIAL,
  sequentialColour,
  velocityFigure,
  doseResponseFigure,
  temperatureFigure,
  recruitmentFigure,
  strengthDurationFigure,
  summaryFigure,
  sweepsFigure,
  SweepSet,
  classViews,
  model,
  sweepQcFigure,
} from '../../src';
import type { Figure } from '../../src';
import { bundleFigures, notebookFigures, realFixture } from './realFigures';

type Trace = {
  name?: string;
  x?: unknown[];
  y?: unknown[];
  mode?: string;
  showlegend?: boolean;
  line?: { dash?: string };
};
const traces = (f: Figure) => f.spec.data as Trace[];
const legendNames = (f: Figure) =>
  traces(f)
    .filter((t) => t.showlegend !== false && t.name)
    .map((t) => t.name!);
const allText = (f: Figure) => JSON.stringify(f.spec);

describe('units and names as printed', () => {
  it('µV, µM, °C instead of ASCII spellings (SI Brochure, 9th ed., BIPM 2019: symbol µ for micro, °C for degree Celsius)', () => {
    expect(unitText('uV')).toBe('µV');
    expect(unitText('uM')).toBe('µM');
    expect(unitText('C')).toBe('°C');
    expect(unitText('degC')).toBe('°C');
    expect(unitText('mA')).toBe('mA');
    expect(unitText('<b>V</b>')).toBe('&lt;b&gt;V&lt;/b&gt;');
  });
  it('measure names become words with units, never internal identifiers', () => {
    expect(measureLabel('centroid_velocity_m_s')).toBe('conduction velocity (m/s)');
    expect(measureLabel('regression_velocity')).toBe('conduction velocity (m/s)');
    expect(measureLabel('amplitude_uV')).toBe('amplitude (µV)');
    expect(measureLabel('width_ms')).toBe('width (ms)');
    expect(measureLabel('ea_kJ_mol')).toBe('ea (kJ/mol)');
    expect(measureLabel('1/peak_ms')).toBe('1 / peak latency (ms)');
  });
  it('plotlyText keeps markup as text (entities plotly decodes: &amp; &lt; &gt;)', () => {
    expect(plotlyText('<a href="x">N1</a> & co')).toBe('&lt;a href="x"&gt;N1&lt;/a&gt; &amp; co');
  });
});

describe('log-axis ticks label full values', () => {
  // common practice, no source: a log axis labelled 1, 10, 100 (or 1, 2, 5, 10 over a short span), never "5, 2, 10, 5, 2, 1"
  const fullValue = (t: { tickvals: number[]; ticktext: string[] }) =>
    t.tickvals.every((v, i) => Number(t.ticktext[i]) === v || /^10<sup>-?\d+<\/sup>$/.test(t.ticktext[i]));
  it('four decades: decades only, with unlabelled minor ticks at 2-9', () => {
    const t = logTicks([0.3, 1000])!;
    expect(t.tickvals).toEqual([1, 10, 100, 1000]);
    expect(t.minor).toContain(2);
    expect(t.minor).toContain(500);
    expect(fullValue(t)).toBe(true);
  });
  it('two decades: 1-3 steps (half-log, as dose-response axes are often drawn)', () => {
    const t = logTicks([0.45, 50])!;
    expect(t.tickvals).toEqual([1, 3, 10, 30]);
    expect(fullValue(t)).toBe(true);
  });
  it('one decade: 1-2-5 steps', () => {
    const t = logTicks([1, 9])!;
    expect(t.tickvals).toEqual([1, 2, 5, 10]); // the range is padded by 0.06 decade: 0.87-10.3
  });
  it('a short span (8-14 m/s) gets at least three evenly stepped values, each written in full', () => {
    const t = logTicks([8, 14])!;
    expect(t.tickvals.length).toBeGreaterThanOrEqual(3);
    expect(t.tickvals.every((v) => v >= 10 ** t.range[0] && v <= 10 ** t.range[1])).toBe(true);
    expect(fullValue(t)).toBe(true);
    expect(new Set(t.ticktext).size).toBe(t.ticktext.length);
  });
  it('no labels repeat and all lie in the range, over spans from 0.1 to 8 decades', () => {
    for (let lo = -3; lo <= 1; lo += 0.37) {
      for (const span of [0.1, 0.3, 0.7, 1.1, 1.9, 2.6, 4, 8]) {
        const t = logTicks([10 ** lo, 10 ** (lo + span)])!;
        expect(new Set(t.ticktext).size).toBe(t.ticktext.length);
        expect(t.tickvals.length).toBeGreaterThanOrEqual(2);
        expect(t.tickvals.length).toBeLessThanOrEqual(6);
        expect(t.tickvals.every((v) => Math.log10(v) >= t.range[0] - 1e-9 && Math.log10(v) <= t.range[1] + 1e-9)).toBe(
          true,
        );
      }
    }
  });
  it('no positive values: no log ticks', () => expect(logTicks([0, -1, NaN])).toBeNull());
});

describe('palette and sequential scale', () => {
  it('classes get the Wong (2011, Nat Methods 8:441) colour-blind-safe colours and distinct marker shapes', () => {
    // Wong's eight colours (values from memory of the published table): black, orange, sky blue, bluish green,
    // yellow, blue, vermillion, reddish purple; fascicle leaves out yellow
    const wong = ['#000000', '#E69F00', '#56B4E9', '#009E73', '#F0E442', '#0072B2', '#D55E00', '#CC79A7'];
    expect(PALETTE.every((c) => wong.includes(c))).toBe(true);
    expect(PALETTE).not.toContain('#F0E442');
    expect(new Set(MARKERS).size).toBe(MARKERS.length);
  });
  it('the sequential scale is viridis as plotly.js ships it (stops read from the installed plotly.js-dist-min)', () => {
    const src = readFileSync(require.resolve('plotly.js-dist-min'), 'utf8');
    const m = /Viridis:(\[\[[^\]]*\](?:,\[[^\]]*\])*\])/.exec(src)!;
    const ref = JSON.parse(m[1].replace(/\[\./g, '[0.')) as [number, string][];
    for (const [x, c] of SEQUENTIAL) expect(ref.find((r) => Math.abs(r[0] - x) < 1e-12)?.[1]).toBe(c);
    expect(sequentialColour(0)).toBe('#440154');
    expect(sequentialColour(1)).toBe(SEQUENTIAL[SEQUENTIAL.length - 1][1]);
  });
  it('sweeps varying in one condition are coloured along the scale, in order, with a colour bar beyond 6 sweeps', () => {
    const n = 20,
      k = 8;
    const data = new Float64Array(n * k).map((_, i) => Math.sin(i));
    const set = new SweepSet({
      data,
      nSweeps: k,
      nSamples: n,
      fs: 10000,
      t0Ms: 0,
      units: 'uV',
      conditions: Array.from({ length: k }, (_, i) => ({ intensity: 0.1 * 2 ** i, intensityUnit: 'mA' })),
    });
    const f = sweepsFigure(set);
    const lines = traces(f).filter((t) => t.mode === 'lines') as { line: { color: string } }[];
    expect(lines[0].line.color).toBe('#440154');
    expect(new Set(lines.map((l) => l.line.color)).size).toBe(k);
    const bar = traces(f).find((t) => (t as { marker?: { showscale?: boolean } }).marker?.showscale) as {
      marker: { colorbar: { title: { text: string } } };
    };
    expect(bar.marker.colorbar.title.text).toBe('Stimulus intensity (mA)');
    expect(allText(f)).toContain('Signal (µV)');
  });
  it('the legend says what differs between sweeps (distance and temperature), not "sweep 0-3"', () => {
    const n = 10;
    const conds = [10, 30].flatMap((d) => [22, 37].map((T) => ({ distanceMm: d, temperatureC: T })));
    const set = new SweepSet({
      data: new Float64Array(n * 4),
      nSweeps: 4,
      nSamples: n,
      fs: 10000,
      t0Ms: 0,
      units: 'uV',
      conditions: conds,
    });
    expect(legendNames(sweepsFigure(set))).toEqual(['10 mm, 22 °C', '10 mm, 37 °C', '30 mm, 22 °C', '30 mm, 37 °C']);
  });
});

describe('fits drawn in the axis space and named in the legend', () => {
  const V = [50, 12, 0.8];
  const rows = ['A-alpha/beta', 'A-delta', 'C'].flatMap((cls, ci) =>
    [20, 40].map((d) => ({
      class: cls,
      preparation: 'N1',
      detected: true,
      distance_mm: d,
      centroid_ms: 0.1 + d / V[ci],
    })),
  );
  it('latency against distance: each fit is a dense curve through the data on the log axis, latency = 0.1 ms + d / v', () => {
    const f = velocityFigure(rows);
    expect((f.spec.layout.yaxis as { type: string }).type).toBe('log');
    const fits = traces(f).filter((t) => t.mode === 'lines' && t.x!.length > 2);
    expect(fits).toHaveLength(3);
    fits.forEach((t, ci) => {
      expect(t.x!.length).toBeGreaterThanOrEqual(30);
      // every vertex lies on the line (exact data: intercept 0.1 ms, slope 1 / v ms per mm)
      (t.x as number[]).forEach((x, i) => expect((t.y as number[])[i]).toBeCloseTo(0.1 + x / V[ci], 9));
      expect(Math.min(...(t.x as number[]))).toBeLessThanOrEqual(20);
      expect(Math.max(...(t.x as number[]))).toBeGreaterThanOrEqual(40);
    });
    expect(legendNames(f)).toEqual(['A-alpha/beta 50 m/s', 'A-delta 12 m/s', 'C 0.8 m/s', 'Linear fit']);
  });
  it('a linear axis where latencies span less than a factor of 10 (the fit is then a straight line from distance 0)', () => {
    const f = velocityFigure(rows.filter((r) => r.class === 'C'));
    expect((f.spec.layout.yaxis as { type?: string }).type).not.toBe('log');
    const fit = traces(f).find((t) => t.mode === 'lines' && t.x!.length > 2)!;
    expect((fit.x as number[])[0]).toBe(0);
  });
  it('dose-response names the fit and the shaded band; no "animals", no uM', () => {
    const pts = [1, 10, 100].flatMap((c) =>
      ['a', 'b'].map((p) => ({ preparation: p, class: 'C', concentration: c, normalized: 1 / (1 + c / 10) })),
    );
    const f = doseResponseFigure(pts, [
      { class: 'C', ic50: 10, pooled_ic50: 10, pooled_hill: 1, pooled_bottom: 0, concentrationUnit: 'uM' },
    ]);
    expect(legendNames(f)).toContain('Hill fit, pooled');
    expect(legendNames(f)[0]).toBe('C IC<sub>50</sub> 10 µM');
    expect(allText(f)).not.toMatch(/uM|animals/);
  });
  it('strength-duration explains solid (Weiss) and dashed (Lapicque) in the legend', () => {
    const f = strengthDurationFigure({
      points: [0.1, 0.5, 1].map((w) => ({ class: 'C', pulseWidthMs: w, criterion: 1 + 1 / w })),
      rows: [{ class: 'C', rheobase: 1, chronaxie_ms: 1, lapicque_rheobase: 1, lapicque_tau_ms: 1.44 }],
    });
    const entries = traces(f).filter((t) => t.showlegend !== false && t.mode === 'lines');
    expect(entries.map((t) => [t.name, t.line?.dash ?? 'solid'])).toEqual([
      ['Weiss fit', 'solid'],
      ['Lapicque fit', 'dash'],
    ]);
  });
  it('temperature: °C on the axis, Q10 in the legend, a readable y title', () => {
    const pts = [25, 30, 35].map((T) => ({
      class: 'A',
      preparation: 'a',
      temperatureC: T,
      value: 10 * 1.4 ** ((T - 35) / 10),
      measure: 'centroid_velocity_m_s',
    }));
    const f = temperatureFigure(pts, [{ class: 'A', q10: 1.4, ea_kJ_mol: 25 }], 'q10');
    const l = f.spec.layout as { xaxis: { title: { text: string } }; yaxis: { title: { text: string } } };
    expect(l.xaxis.title.text).toBe('Temperature (°C)');
    expect(l.yaxis.title.text).toBe('Conduction velocity (m/s)');
    expect(legendNames(f)).toEqual(['A Q<sub>10</sub> 1.40', 'Log-linear fit']);
    expect(allText(f)).not.toContain('velocity_m_s (');
  });
  it('recruitment and summary say "preparation", name the fit, and print µV', () => {
    const pts = [0.1, 0.3, 1, 3].map((I) => ({
      class: 'A',
      preparation: 'N1',
      intensity: I,
      response: 100 / (1 + 1 / I),
    }));
    const rec = recruitmentFigure(
      pts,
      null,
      [{ class: 'A', preparation: 'N1', floor: 0, maximum: 100, i50: 1, i95: 10, intensityUnit: 'mA' }],
      'uV',
    );
    expect(legendNames(rec)).toEqual(['A', 'Boltzmann fit']);
    expect(allText(rec)).toContain('Amplitude (µV)');
    const sum = summaryFigure(
      [
        { class: 'A', preparation: 'a', v: 1 },
        { class: 'A', preparation: 'b', v: 2 },
      ],
      'v',
      'velocity (m/s)',
    );
    expect(legendNames(sum)).toEqual(['One preparation', 'Mean and 95% CI']);
    expect(allText(sum)).not.toContain('animal');
    expect((sum.spec.layout.title as { text: string }).text).toBe('Velocity across preparations');
  });
  it('titles are in sentence case', () => {
    for (const f of [velocityFigure(rows), temperatureFigure([], [], 'arrhenius')]) {
      const t = (f.spec.layout.title as { text: string }).text;
      expect(t[0]).toBe(t[0].toUpperCase());
      expect(t.slice(1)).toBe(t.slice(1).replace(/\b(Latency|Against|Distance|Plot)\b/g, (w) => w.toLowerCase()));
    }
  });
  it('user labels are escaped in legend names and hover text of every builder', () => {
    const evil = '<a href="x">N1</a>';
    const f = velocityFigure(rows.map((r) => ({ ...r, class: evil, preparation: evil })).slice(0, 2));
    expect(allText(f)).not.toContain('<a href');
    expect(allText(f)).toContain('&lt;a href=\\"x\\"&gt;N1&lt;/a&gt;');
  });
});

describe('class views: each class on its own time span', () => {
  const nerve = model.rodentSciatic();
  const set = model
    .simulateNerve({
      model: nerve,
      seed: 1,
      grid: { fs: 20000, t0Ms: -2, nSamples: 1600 },
      nuisance: { noiseUv: 5 },
      sweeps: [
        { intensity: 20, distanceMm: 30, temperatureC: 37, concentration: 0, conditions: { preparation: 'sim' } },
      ],
    })
    .baseline()
    .removeArtifact({ method: 'blank', window: [0, 0.12], bridge: 'linear' });
  const table = set.components({ preset: 'mammalian' });
  it('one figure per class, x range = the window and a fifth of its width each side, marks of that class only', () => {
    const views = classViews(set, table, { sweeps: [0] });
    expect(views.map((v) => v.name)).toEqual(table.classes.map((c) => `sweeps-${c.replace(/[^A-Za-z0-9_.-]+/g, '_')}`));
    views.forEach((v, k) => {
      const r = table.rows.find((q) => q.class === table.classes[k] && q.sweep === 0)!;
      const [a, b] = [r.window_start_ms as number, r.window_end_ms as number];
      const range = (v.spec.layout.xaxis as { range: number[] }).range;
      expect(range[0]).toBeGreaterThanOrEqual(Math.max(-2, a - 0.2 * (b - a)) - 0.05); // one sample is 0.05 ms
      expect(range[1]).toBeLessThanOrEqual(b + 0.2 * (b - a) + 0.05);
      const names = legendNames(v).join('|');
      expect(names).toContain(`${table.classes[k]} window`);
      for (const other of table.classes.filter((c) => c !== table.classes[k]))
        expect(names).not.toContain(`${other} window`);
      if (r.detected) expect(names).toMatch(/Onset\|Peak\|Centroid/);
    });
  });
  it('the artifact window of the history is shaded and named', () => {
    const f = sweepsFigure(set.crop(-1, 3));
    expect(legendNames(f)).toContain('Artifact window');
    const shapes = f.spec.layout.shapes as { x0: number; x1: number }[];
    expect(shapes.some((sh) => sh.x0 === 0 && sh.x1 === 0.12)).toBe(true);
  });
  it('an unknown class or option is an error naming the nearest valid name', () => {
    expect(() => sweepsFigure(set, { table, zoom: 'A-dleta' })).toThrow(
      /invalid zoom: "A-dleta".*did you mean "A-delta"/,
    );
    expect(() => sweepsFigure(set, { zoom: 'C' })).toThrow(/zoom needs a component table/);
    expect(() => sweepsFigure(set, { swepes: [0] } as never)).toThrow(/unknown key "swepes".*did you mean "sweeps"/);
    expect(() => sweepsFigure(set, { sweeps: [5] })).toThrow(/invalid sweeps: 5; the set has sweeps 0..0/);
  });
});

describe('class colours stay apart under simulated colour-vision deficiency', () => {
  // Machado, Oliveira & Fernandes 2009 (IEEE TVCG 15:1291) simulation matrices at severity 1.0, applied to
  // linear sRGB (matrix values from memory of the paper's table); distances as CIE 1976 Delta E in CIELAB (D65).
  const M: Record<string, number[][]> = {
    protanopia: [
      [0.152286, 1.052583, -0.204868],
      [0.114503, 0.786281, 0.099216],
      [-0.003882, -0.048116, 1.051998],
    ],
    deuteranopia: [
      [0.367322, 0.860646, -0.227968],
      [0.280085, 0.672501, 0.047413],
      [-0.01182, 0.04294, 0.968881],
    ],
    tritanopia: [
      [1.255528, -0.076749, -0.178779],
      [-0.078411, 0.930809, 0.147602],
      [0.004733, 0.691367, 0.3039],
    ],
  };
  // the smallest pairwise Delta E of PALETTE, computed with NumPy 2.4 by the same recipe: python3 tests/plot/cvd_palette.py
  const numpy: Record<string, number> = { protanopia: 20.66, deuteranopia: 17.88, tritanopia: 16.05 };
  const lin = (c: number) => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);
  const lab = (rgb: number[]) => {
    const X = [
      [0.4124, 0.3576, 0.1805],
      [0.2126, 0.7152, 0.0722],
      [0.0193, 0.1192, 0.9505],
    ].map((r) => r[0] * rgb[0] + r[1] * rgb[1] + r[2] * rgb[2]);
    const w = [0.95047, 1, 1.08883];
    const f = X.map((x, i) => {
      const t = x / w[i];
      return t > (6 / 29) ** 3 ? Math.cbrt(t) : t / (3 * (6 / 29) ** 2) + 4 / 29;
    });
    return [116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])];
  };
  const rgb = PALETTE.map((c) => [1, 3, 5].map((i) => lin(parseInt(c.slice(i, i + 2), 16) / 255)));
  for (const [kind, m] of Object.entries(M)) {
    it(`${kind}: every pair of class colours at least Delta E 15 apart (2.3 is a just-noticeable difference, Sharma 2003)`, () => {
      const L = rgb.map((c) => lab(m.map((r) => Math.min(1, Math.max(0, r[0] * c[0] + r[1] * c[1] + r[2] * c[2])))));
      let min = Infinity;
      for (let i = 0; i < L.length; i++)
        for (let j = i + 1; j < L.length; j++)
          min = Math.min(min, Math.hypot(L[i][0] - L[j][0], L[i][1] - L[j][1], L[i][2] - L[j][2]));
      expect(min).toBeGreaterThan(15);
      expect(min).toBeCloseTo(numpy[kind], 1);
    });
  }
});

describe('plain text of markup (PDF and SVG titles, text output)', () => {
  it('drops tags, decodes the entities plotlyText writes', async () => {
    const { plainText } = await import('../../src/plot/labels');
    expect(plainText(`C IC<sub>50</sub> 10 µM<br>${plotlyText('<a href="x"> & co')}`)).toBe(
      'C IC50 10 µM <a href="x"> & co',
    );
  });
});

describe('the real figures (the demo bundles and the notebooks) follow the label rules', () => {
  // the figures a user gets, with their real names (tests/plot/realFigures.ts); rules from issue 16 and the
  // SI Brochure (9th ed., BIPM 2019) for unit symbols
  const figs = [...bundleFigures(), ...notebookFigures()];
  type L = Record<string, unknown>;
  const titleOf = (a: unknown) => ((a as { title?: { text?: string } })?.title?.text ?? '') as string;
  const texts = (f: Figure) => {
    const L = f.spec.layout as L;
    const axes = Object.keys(L).filter((k) => /^[xy]axis\d*$/.test(k));
    return {
      title: titleOf(L),
      axes: axes.map((k) => titleOf(L[k])).filter(Boolean),
      ticks: axes.flatMap((k) => ((L[k] as { ticktext?: string[] }).ticktext ?? []).map(String)),
      legend: legendNames(f),
    };
  };
  it('covers every kind the pipeline writes and the notebooks draw', () => {
    const kinds = figs.map((f) => f.name.replace(/^[a-z]+\//, ''));
    for (const k of ['recruitment', 'velocity', 'dose-response', 'temperature-q10', 'temperature-arrhenius'])
      expect(kinds).toContain(k);
    for (const k of [
      'summary',
      'paired-pulse',
      'train',
      'sweep-viewer',
      'velocity-distribution',
      'groups-r50',
      'sweep-qc-group',
    ])
      expect(kinds).toContain(k);
  });
  it('units as µV, µM, °C; no internal identifiers (snake_case column names) in titles, axes or legends', () => {
    const bad: string[] = [];
    for (const f of figs) {
      const t = texts(f);
      for (const s of [t.title, ...t.axes, ...t.legend, ...t.ticks]) {
        if (/\bu[VMA]\b|\(C\)|\d C\b/.test(s)) bad.push(`${f.name}: ASCII unit in "${s}"`);
        if (/[a-z]_[a-z]/i.test(s)) bad.push(`${f.name}: identifier in "${s}"`);
      }
      // every y title of a measured quantity carries a unit in parentheses (fractions and counts excepted)
      for (const a of t.axes)
        if (!/\(.+\)|fraction|number|class|group|epoch|preparation/i.test(a)) bad.push(`${f.name}: no unit in "${a}"`);
    }
    expect(bad).toEqual([]);
  });
  it('titles and axis titles in sentence case', () => {
    for (const f of figs)
      for (const s of [texts(f).title, ...texts(f).axes]) if (s) expect(s[0], f.name).toMatch(/[A-Z0-9]/);
  });
  it('fits and shaded bands are named in the legend', () => {
    for (const f of figs) {
      const data = f.spec.data as (Trace & { fill?: string })[];
      const hidden = data.filter((t) => t.showlegend === false);
      const L = legendNames(f).join(' | ');
      if (hidden.some((t) => /fit/i.test(t.name ?? '') && /lines/.test(t.mode ?? '')))
        expect(L, f.name).toMatch(/fit/i);
      if (data.some((t) => t.fill === 'toself')) expect(L, f.name).toMatch(/CI|band/);
    }
  });
  it('paired-pulse recovery: one colour per class, the legend says what the colours, lines and marks are', () => {
    for (const f of figs.filter((x) => /paired-pulse/.test(x.name))) {
      const data = f.spec.data as (Trace & { marker?: { color?: string }; line?: { color?: string } })[];
      const byClass = new Map<string, Set<string>>();
      for (const t of data.filter((t) => t.showlegend === false)) {
        const cls = /^(A-alpha\/beta|A-delta|C)\b/.exec(t.name ?? '')?.[1];
        if (!cls) continue;
        if (!byClass.has(cls)) byClass.set(cls, new Set());
        byClass.get(cls)!.add(t.marker?.color ?? t.line?.color ?? '');
      }
      expect(byClass.size, f.name).toBeGreaterThanOrEqual(1);
      for (const [cls, cs] of byClass) expect([cls, cs.size]).toEqual([cls, 1]);
      expect(new Set([...byClass.values()].map((s) => [...s][0])).size).toBe(byClass.size);
      const L = legendNames(f);
      expect(L.length, f.name).toBeLessThanOrEqual(6); // was 18 entries: one per class, preparation and mark
      expect(L.join(' | ')).toMatch(/Logistic fit, one per preparation/);
      expect(L.join(' | ')).toMatch(/Absolute refractory period/);
      expect(L.filter((n) => /R<sub>50<\/sub>/.test(n))).toHaveLength(byClass.size);
    }
  });
  it('the group figure names its groups under the x axis (one tick label per group, at the group)', () => {
    for (const f of figs.filter((x) => /groups/.test(x.name))) {
      const xa = (f.spec.layout as L).xaxis as { tickvals: number[]; ticktext: string[] };
      expect(xa.ticktext.length, f.name).toBe(xa.tickvals.length);
      expect(xa.ticktext.every((t) => t.length > 0)).toBe(true);
      expect(xa.ticktext.length).toBeGreaterThanOrEqual(2);
    }
  });
  it('class colours are the same in every figure (the summary orders classes fast to slow)', () => {
    for (const f of figs.filter((x) => /summary/.test(x.name))) {
      const first = (f.spec.data as Trace[])[0] as { x: string[]; marker: { color: string } };
      expect([first.x[0], first.marker.color]).toEqual(['A-alpha/beta', PALETTE[0]]);
    }
  });
});

describe('sweep QC figure', () => {
  it('rings every flagged sweep once per flag and counts them in the title (two-group demo: saturated sweeps)', () => {
    const fx = realFixture();
    const rows = fx.group.tables.sweep_qc;
    const f = sweepQcFigure(rows as never, fx.group.units);
    const flagged = rows.filter((r) => r.flagged === true);
    expect(flagged.length).toBeGreaterThan(0);
    const title = (f.spec.layout as { title: { text: string } }).title.text;
    expect(title).toBe(`Sweep quality control: ${flagged.length} of ${rows.length} sweeps flagged`);
    const marks = (f.spec.data as Trace[]).filter((t) => /^Flagged: /.test(t.name ?? ''));
    const perFlag = flagged.reduce((n, r) => n + String(r.flags).split(',').length, 0);
    expect(marks.reduce((n, t) => n + (t.x?.length ?? 0), 0)).toBe(perFlag);
    expect(legendNames(f)).toEqual(expect.arrayContaining(['N1', 'Flagged: saturated']));
  });
});
