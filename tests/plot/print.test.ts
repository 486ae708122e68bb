/**
 * Print export at journal widths, checked in headless Chromium. The figures are the real ones (realFigures.ts):
 * every figure the pipeline writes for the demo bundle, the paired-pulse and train demo and the two-group demo, and
 * the notebooks' figures on the demo data, with their real names, legends and data; plus the simulated figures of
 * notebook 05. Each is rendered for print at single (85 mm), the narrowest and a middle one-and-a-half (114, 120 mm)
 * and double column (175, 180 mm) width, the exported SVG is put back into a page and the bounding box of every text
 * element is measured: no two overlap, none leaves the canvas, no legend entry is cut off, no title sits on a plot
 * area, a legend inside the plot covers no data, text is 7-9 pt at print size, and the plot area keeps at least
 * PLOT_MIN (figure.ts: 40% of the canvas width, 45% of its height; it says why) of the canvas.
 * Widths: common journal practice (85-90, 114-140, 170-180 mm), no single source.
 * One browser launch for the whole file. FASCICLE_PRINT_DIR=<folder> keeps a PNG of each figure at each width;
 * FASCICLE_PRINT_ONLY=<regex> checks only the figures whose name matches.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import {
  model,
  sweepsFigure,
  recruitmentFigure,
  strengthDurationFigure,
  velocityFigure,
  doseResponseFigure,
  temperatureFigure,
  summaryFigure,
  classViews,
  sweepViewer,
  Figure,
  baseLayout,
  findBrowser,
  openExporter,
  FigureExporter,
  saveFigures,
  compareGroups,
  groupFigure,
} from '../../src';
import { saveWithSharedExporter, sharedExporterOpen, closeSharedExporter } from '../../src/plot/export';
import { PLOT_MIN } from '../../src/plot/figure';
import { bundleFigures, notebookFigures } from './realFigures';

const CLASSES = ['A-alpha/beta', 'A-delta', 'C'];

/** A small simulated experiment (fascicle's forward model): two distances, two temperatures, an intensity series. */
function simulated() {
  const nerve = model.rodentSciatic();
  const sweeps = [10, 30].flatMap((d) =>
    [22, 37].map((T) => ({
      intensity: 20,
      distanceMm: d,
      temperatureC: T,
      concentration: 0,
      conditions: { preparation: 'sim' },
    })),
  );
  const sim = model
    .simulateNerve({
      model: nerve,
      seed: 1,
      grid: { fs: 20000, t0Ms: -2, nSamples: 1600 },
      sweeps,
      nuisance: { noiseUv: 5 },
    })
    .baseline();
  const series = model
    .simulateNerve({
      model: nerve,
      seed: 2,
      grid: { fs: 20000, t0Ms: -2, nSamples: 400 },
      nuisance: { noiseUv: 5 },
      sweeps: Array.from({ length: 10 }, (_, k) => ({
        intensity: 0.05 * 1.6 ** k,
        distanceMm: 20,
        temperatureC: 37,
        concentration: 0,
        conditions: { preparation: 'sim', intensityUnit: 'mA' },
      })),
    })
    .baseline()
    .removeArtifact({ method: 'blank', window: [0, 0.12], bridge: 'linear' });
  return { sim, series };
}

function figures(): Figure[] {
  const { sim, series } = simulated();
  const table = sim.components({ preset: 'mammalian' });
  const one = sim.where({ distanceMm: 30, temperatureC: 37 });
  const tOne = one.components({ preset: 'mammalian' });
  const rec = series.components({ preset: 'mammalian', earliestMs: 0.12 }).recruitment();
  const sdPts = CLASSES.flatMap((cls, ci) =>
    [0.02, 0.05, 0.1, 0.2, 0.5, 1].map((w) => {
      const c = 0.1 * (ci + 1) * (1 + (0.3 * (ci + 1)) / w);
      return { class: cls, pulseWidthMs: w, criterion: c, criterion_ci95_low: c * 0.9, criterion_ci95_high: c * 1.1 };
    }),
  );
  const sdRows = CLASSES.map((cls, ci) => ({
    class: cls,
    rheobase: 0.1 * (ci + 1),
    chronaxie_ms: 0.3 * (ci + 1),
    lapicque_rheobase: 0.1 * (ci + 1),
    lapicque_tau_ms: 0.43 * (ci + 1),
    intensityUnit: 'mA',
  }));
  const groupRows = ['control', 'treated'].flatMap((g, gi) =>
    [1, 2, 3, 4].flatMap((k) =>
      ['baseline', 'drug'].map((e, ei) => ({
        group: g,
        preparation: `${g}-${k}`,
        epoch: e,
        class: 'C',
        amplitude_uV: 100 - 30 * gi * ei + 5 * k,
      })),
    ),
  );
  const hh = model.simulateMembrane({ stimulus: model.stepCurrent(20, 1, 0.5), tMax: 20 });
  return [
    sweepsFigure(sim, { title: 'Simulated compound responses' }),
    sweepsFigure(one, { table: tOne, title: 'Class windows, onset and peak marks' }),
    sweepsFigure(series, { title: 'Intensity series' }),
    ...classViews(one, tOne, { sweeps: [0] }),
    sweepViewer(sim, { table, title: 'Sweep' }),
    recruitmentFigure(rec.points, rec.fits, rec.rows, series.units),
    strengthDurationFigure({ rows: sdRows, points: sdPts }),
    velocityFigure(
      table.rows.filter((r) => r.temperatureC === 37),
      'peak',
    ),
    groupFigure(compareGroups(groupRows, { value: 'amplitude_uV', condition: 'epoch' })),
    new Figure('hh', {
      data: [{ type: 'scatter', mode: 'lines', x: Array.from(hh.t), y: Array.from(hh.V), name: 'V' }],
      layout: baseLayout('Hodgkin-Huxley membrane, 6.3 °C', 'time (ms)', 'membrane potential (mV)'),
    }),
  ].map((f) => new Figure(`simulated/${f.name}`, f.spec));
}

interface Box {
  text: string;
  cls: string;
  inLegend: boolean;
  l: number;
  r: number;
  t: number;
  b: number;
  fontPx: number;
}
type Rect = { l: number; r: number; t: number; b: number };
interface Check {
  canvas: { w: number; h: number };
  boxes: Box[];
  plot: Rect | null;
  subplots: Rect[];
  legend: Rect | null;
  marks: Rect[];
  strokes: number[];
}

/** Load an exported SVG into a page and measure its text. Written here, independent of the layout code. */
async function measure(page: Page, svg: string): Promise<Check> {
  return page.evaluate((svgText) => {
    document.body.innerHTML = svgText;
    const root = document.querySelector('svg')!;
    const R = root.getBoundingClientRect();
    const rel = (r: DOMRect) => ({ l: r.left - R.left, r: r.right - R.left, t: r.top - R.top, b: r.bottom - R.top });
    const boxes = [...root.querySelectorAll('text')]
      .filter((e) => (e.textContent ?? '').trim() && e.getBoundingClientRect().width > 0)
      .map((e) => ({
        text: e.textContent!.trim(),
        cls: (e.parentNode as Element).getAttribute('class') ?? '',
        inLegend: !!e.closest('.legend'),
        ...rel(e.getBoundingClientRect()),
        fontPx: parseFloat(getComputedStyle(e).fontSize),
      }));
    // the plot area: x extent of the x-axis lines, y extent of the y-axis lines (over every subplot)
    // each subplot's area: the x extent of the x-axis lines (a shared axis draws one) by its y-axis line's extent
    const xl = [...root.querySelectorAll('path.xlines-above, path.xlines-below')]
        .map((e) => rel(e.getBoundingClientRect()))
        .filter((r) => r.r - r.l > 1),
      yl = [...root.querySelectorAll('path.ylines-above, path.ylines-below')]
        .map((e) => rel(e.getBoundingClientRect()))
        .filter((r) => r.b - r.t > 1);
    const subplots = xl.length
      ? yl.map((y) => ({ l: Math.min(...xl.map((r) => r.l)), r: Math.max(...xl.map((r) => r.r)), t: y.t, b: y.b }))
      : [];
    const plot = subplots.length
      ? {
          l: Math.min(...subplots.map((r) => r.l)),
          r: Math.max(...subplots.map((r) => r.r)),
          t: Math.min(...subplots.map((r) => r.t)),
          b: Math.max(...subplots.map((r) => r.b)),
        }
      : null;
    const lg = root.querySelector('.legend rect.bg') ?? root.querySelector('.legend');
    const L = lg ? rel(lg.getBoundingClientRect()) : null;
    // data marks outside the legend that fall inside its box: markers and error bars by their boxes,
    // lines by their vertices and points every 2 px between them
    const marks: { l: number; r: number; t: number; b: number }[] = [];
    // (only what is drawn: inside the plot area, where plotly clips the data)
    const hit = (x0: number, x1: number, y0: number, y1: number) =>
      !!L &&
      x1 > L.l + 0.5 &&
      x0 < L.r - 0.5 &&
      y1 > L.t + 0.5 &&
      y0 < L.b - 0.5 &&
      (!plot || (x1 > plot.l && x0 < plot.r && y1 > plot.t && y0 < plot.b));
    const outsideLegend = (e: Element) => !e.closest('.legend');
    root.querySelectorAll('.scatterlayer path.point, .errorbars path').forEach((e) => {
      const r = rel(e.getBoundingClientRect());
      if (outsideLegend(e) && hit(r.l, r.r, r.t, r.b)) marks.push(r);
    });
    if (L)
      root.querySelectorAll('.scatterlayer path.js-line').forEach((e) => {
        if (!outsideLegend(e)) return;
        const d = e.getAttribute('d') ?? '',
          m = (e as SVGPathElement).getScreenCTM()!;
        if (/[^MLZ\d\s,.eE+-]/.test(d)) throw new Error(`unexpected path commands in ${d.slice(0, 40)}`);
        let prev: [number, number] | null = null;
        for (const seg of d.split(/(?=[MLZ])/)) {
          const n = seg
            .slice(1)
            .split(/[\s,]+/)
            .filter(Boolean)
            .map(Number);
          if (seg[0] === 'M') prev = null;
          for (let k = 0; k + 1 < n.length; k += 2) {
            const x = m.a * n[k] + m.c * n[k + 1] + m.e - R.left,
              y = m.b * n[k] + m.d * n[k + 1] + m.f - R.top;
            if (prev && hit(Math.min(x, prev[0]), Math.max(x, prev[0]), Math.min(y, prev[1]), Math.max(y, prev[1]))) {
              const steps = Math.ceil(Math.hypot(x - prev[0], y - prev[1]) / 2);
              for (let j = 1; j < steps; j++) {
                const px = prev[0] + ((x - prev[0]) * j) / steps,
                  py = prev[1] + ((y - prev[1]) * j) / steps;
                if (hit(px, px, py, py)) marks.push({ l: px, r: px, t: py, b: py });
              }
            }
            if (hit(x, x, y, y)) marks.push({ l: x, r: x, t: y, b: y });
            prev = [x, y];
          }
        }
      });
    const strokes = [...root.querySelectorAll('.scatterlayer path.js-line')]
      .map((e) => parseFloat(getComputedStyle(e).strokeWidth))
      .filter((w) => w > 0);
    return { canvas: { w: R.width, h: R.height }, boxes, plot, subplots, legend: L, marks, strokes };
  }, svg);
}

/** An SVG as PNG bytes (for looking at the figures: FASCICLE_PRINT_DIR). */
async function rasterize(page: Page, svg: string, w: number, h: number): Promise<Buffer> {
  const b64: string = await page.evaluate(
    async ({ svg, w, h }) => {
      const img = new Image();
      img.src = 'data:image/svg+xml;charset=utf-8,' + encodeURIComponent(svg);
      await img.decode();
      const c = document.createElement('canvas');
      c.width = w;
      c.height = h;
      const ctx = c.getContext('2d')!;
      ctx.fillStyle = '#fff';
      ctx.fillRect(0, 0, w, h);
      ctx.drawImage(img, 0, 0, w, h);
      return c.toDataURL('image/png').split(',')[1];
    },
    { svg, w, h },
  );
  return Buffer.from(b64, 'base64');
}

const TOL = 0.5; // px of slack for anti-aliased edges
const overlap = (
  a: { l: number; r: number; t: number; b: number },
  b: { l: number; r: number; t: number; b: number },
) => Math.min(a.r, b.r) - Math.max(a.l, b.l) > TOL && Math.min(a.b, b.b) - Math.max(a.t, b.t) > TOL;

/** Problems of a rendered figure; text sizes in pt at 96 px per inch (print: 7-9 pt). */
function problems(c: Check, size = { minPt: 7, maxPt: 9 }): string[] {
  const out: string[] = [];
  for (const b of c.boxes) {
    if (b.l < -TOL || b.t < -TOL || b.r > c.canvas.w + TOL || b.b > c.canvas.h + TOL)
      out.push(
        `"${b.text}" leaves the canvas (${b.l.toFixed(1)}, ${b.t.toFixed(1)}, ${b.r.toFixed(1)}, ${b.b.toFixed(1)} in ${c.canvas.w} x ${c.canvas.h})`,
      );
    // 7-9 pt at 96 px per inch: 9.33-12 px; superscripts and subscripts are tspans and not counted here
    if (!(b.fontPx >= (size.minPt * 96) / 72 - 0.01 && b.fontPx <= (size.maxPt * 96) / 72 + 0.01))
      out.push(`"${b.text}" is ${((b.fontPx * 72) / 96).toFixed(1)} pt`);
  }
  for (let i = 0; i < c.boxes.length; i++) {
    for (let j = i + 1; j < c.boxes.length; j++)
      if (overlap(c.boxes[i], c.boxes[j])) out.push(`"${c.boxes[i].text}" overlaps "${c.boxes[j].text}"`);
  }
  if (!c.plot) out.push('no plot area found');
  else if (c.plot.r - c.plot.l < PLOT_MIN.w * c.canvas.w - TOL || c.plot.b - c.plot.t < PLOT_MIN.h * c.canvas.h - TOL) {
    // the data keep at least this share of the canvas (figure.ts PLOT_MIN says why: 45% x 45%)
    out.push(
      `plot area ${(c.plot.r - c.plot.l).toFixed(0)} x ${(c.plot.b - c.plot.t).toFixed(0)} px is under ` +
        `${100 * PLOT_MIN.w}% x ${100 * PLOT_MIN.h}% of the canvas (${c.canvas.w} x ${c.canvas.h})`,
    );
  }
  // every legend entry whole: none cut off at the legend's edge (a legend too tall for its room scrolls)
  if (c.legend)
    for (const b of c.boxes)
      if (b.inLegend && b.r - b.l > 0 && (b.t < c.legend.t - 1 || b.b > c.legend.b + 1))
        out.push(`legend entry "${b.text}" is cut off at the legend's edge`);
  // a legend inside the plot area must not cover data: no marker, error bar or line point inside its box
  const inside = (r: Rect, p: Rect) => p.r > r.l + TOL && p.l < r.r - TOL && p.b > r.t + TOL && p.t < r.b - TOL;
  if (c.legend) {
    const n = c.marks.filter((m) => inside(c.legend!, m)).length;
    if (n) out.push(`the legend covers ${n} data marks`);
  }
  // titles never sit on the plot area (tick labels are outside it by construction; legend entries are checked above)
  for (const p of c.subplots)
    for (const b of c.boxes)
      if (/title/.test(b.cls) && !/cbtitle/.test(b.cls) && overlap(p, b))
        out.push(`"${b.text}" (${b.cls}) sits on the plot area`);
  return out;
}

const SIZES = [
  { name: 'single column', widthMm: 85, heightMm: 60 },
  { name: 'narrowest one-and-a-half column', widthMm: 114, heightMm: 76 },
  { name: 'one-and-a-half column', widthMm: 120, heightMm: 80 },
  { name: 'double column', widthMm: 175, heightMm: 100 },
  { name: 'widest double column', widthMm: 180, heightMm: 110 },
];

const browser = findBrowser();
describe.skipIf(!browser)('print export at journal widths (headless Chromium)', () => {
  let ex: FigureExporter;
  let page: Page;
  let figs: Figure[];
  beforeAll(async () => {
    if (process.env.FASCICLE_PRINT_DIR) mkdirSync(process.env.FASCICLE_PRINT_DIR, { recursive: true });
    figs = [...bundleFigures(), ...notebookFigures(), ...figures()];
    // FASCICLE_PRINT_ONLY=<regex> checks only the figures whose name matches (while working on one)
    const only = process.env.FASCICLE_PRINT_ONLY;
    if (only) figs = figs.filter((f) => new RegExp(only).test(f.name));
    ex = await openExporter();
    page = await ex.browser.newPage();
  }, 60000);
  afterAll(async () => {
    await ex?.close();
  });

  for (const size of SIZES) {
    it(`every figure kind at ${size.name} (${size.widthMm} x ${size.heightMm} mm): no text overlaps or leaves the canvas, 7-9 pt`, async () => {
      const bad: string[] = [];
      for (const f of figs) {
        const t0 = Date.now();
        const r = await ex.svg(f, { widthMm: size.widthMm, heightMm: size.heightMm });
        const t1 = Date.now();
        const c = await measure(page, r.svg);
        if (process.env.FASCICLE_PRINT_TIMES)
          console.log(`TIME ${size.widthMm} ${f.name} render ${t1 - t0} ms, check ${Date.now() - t1} ms`);
        expect(c.canvas.w).toBeCloseTo(Math.round((size.widthMm * 96) / 25.4), 0);
        expect(c.boxes.length).toBeGreaterThan(4); // ticks and titles were drawn
        // FASCICLE_PRINT_DIR=folder keeps a PNG of each figure (CI artifacts, looking at them)
        if (process.env.FASCICLE_PRINT_DIR)
          await ex.save(
            f,
            join(
              process.env.FASCICLE_PRINT_DIR,
              `${size.widthMm}mm-${figs.indexOf(f)}-${f.name.replace(/[^A-Za-z0-9_.-]+/g, '_')}.png`,
            ),
            {
              widthMm: size.widthMm,
              heightMm: size.heightMm,
              dpi: 150,
            },
          );
        if (process.env.FASCICLE_PRINT_TIMES && c.plot)
          console.log(
            `PLOT ${size.widthMm} ${f.name} ${((c.plot.r - c.plot.l) / c.canvas.w).toFixed(2)} x ` +
              `${((c.plot.b - c.plot.t) / c.canvas.h).toFixed(2)}`,
          );
        for (const p of problems(c)) bad.push(`${f.name} "${(f.spec.layout.title as { text: string }).text}": ${p}`);
        // data lines for print: 0.5-1.5 pt (common practice for journal artwork, no single source)
        for (const w of c.strokes)
          if (!(w >= (0.5 * 96) / 72 - 0.01 && w <= (1.5 * 96) / 72 + 0.01))
            bad.push(`${f.name}: a data line is ${((w * 72) / 96).toFixed(2)} pt wide`);
      }
      expect(bad).toEqual([]);
    }, 300000);
  }

  it('every figure kind as a notebook shows it (toHTML, 640 x 420 px): no text overlaps or leaves the canvas', async () => {
    const bad: string[] = [];
    for (const f of figs) {
      const html = f.toHTML('page');
      // run the figure's own script, wait for its layout to settle, then measure the live plot's SVG layers
      const svg: string = await ex.page.evaluate(async (h) => {
        document.body.innerHTML = '';
        const holder = document.createElement('div');
        holder.innerHTML = h;
        document.body.appendChild(holder.firstElementChild!);
        const code = holder.querySelector('script')!.textContent!;
        (0, eval)(code); // eslint-disable-line no-eval
        const gd = document.querySelector('.fascicle-figure') as HTMLElement & { _fullLayout?: unknown };
        for (let i = 0; i < 200 && !gd._fullLayout; i++) await new Promise((r) => setTimeout(r, 10));
        let last = '';
        for (let i = 0; i < 100; i++) {
          // settled when the SVG stops changing
          await new Promise((r) => setTimeout(r, 30));
          const now =
            gd.innerHTML.length +
            ':' +
            JSON.stringify((gd as unknown as { layout: { margin: unknown } }).layout.margin);
          if (now === last) break;
          last = now;
        }
        const P = (window as unknown as { Plotly: any }).Plotly; // eslint-disable-line @typescript-eslint/no-explicit-any
        return decodeURIComponent(
          (await P.toImage(gd, { format: 'svg', width: 640, height: 420 })).replace(/^data:image\/svg\+xml,/, ''),
        );
      }, html);
      const c = await measure(page, svg);
      if (process.env.FASCICLE_PRINT_DIR)
        writeFileSync(join(process.env.FASCICLE_PRINT_DIR, `screen-${figs.indexOf(f)}.svg`), svg);
      if (process.env.FASCICLE_PRINT_DIR)
        writeFileSync(
          join(
            process.env.FASCICLE_PRINT_DIR,
            `screen-${figs.indexOf(f)}-${f.name.replace(/[^A-Za-z0-9_.-]+/g, '_')}.png`,
          ),
          await rasterize(page, svg, 640, 420),
        );
      // on screen: 10 px (7.5 pt at 96 px per inch) is the smallest text, 14 px the largest
      for (const p of problems(c, { minPt: 7.5, maxPt: 10.5 })) bad.push(`${f.name}: ${p}`);
    }
    expect(bad).toEqual([]);
  }, 300000);

  it('the sweep viewer steps through sweeps: each step shows one sweep with its marks, hover reads time and amplitude', async () => {
    const f = figs.find((x) => x.name === 'simulated/sweep-viewer')!;
    const r = await ex.page.evaluate(async (spec) => {
      document.body.innerHTML = '<div id="v"></div>';
      const P = (window as unknown as { Plotly: any }).Plotly; // eslint-disable-line @typescript-eslint/no-explicit-any
      const gd = await P.newPlot('v', spec.data, spec.layout);
      const shown = () =>
        gd.data
          .map((t: { visible: boolean; name: string; x: unknown[] }, i: number) =>
            t.visible === true && t.x[0] !== null ? i : -1,
          )
          .filter((i: number) => i >= 0);
      const first = shown();
      const step = gd.layout.sliders[0].steps[2];
      await P.update(gd, step.args[0], step.args[1]);
      const third = shown();
      P.Fx.hover(gd, [{ curveNumber: third[0], pointNumber: 100 }]);
      await new Promise((res) => setTimeout(res, 50));
      return {
        n: gd.layout.sliders[0].steps.length,
        first,
        third,
        names: third.map((i: number) => gd.data[i].name),
        title: gd.layout.title.text,
        hover: document.querySelector('#v .hoverlayer')!.textContent,
      };
    }, JSON.parse(f.specJson()));
    expect(r.n).toBe(4); // the simulated set: 2 distances x 2 temperatures
    expect(r.first).not.toEqual(r.third);
    expect(r.names[0]).toBe('sweep 2: sim, 20 mA, 30 mm, 22 °C');
    expect(r.names.length).toBeGreaterThan(1); // the sweep and at least one class's marks
    expect(r.title).toBe('Sweep 2: sim, 20 mA, 30 mm, 22 °C');
    expect(r.hover).toMatch(/ms, -?[\d.]+(e-?\d+)? µV/);
  }, 30000);

  it('the checker itself finds an overlap and text off the canvas (a legend placed over the x-axis title, a long title)', async () => {
    const f = figs.find((x) => x.name === 'demo/dose-response')!;
    const broken = new Figure('broken', {
      data: f.spec.data,
      layout: {
        ...f.spec.layout,
        title: { text: 'A title far too long to fit into a single column figure at nine points, surely' },
        legend: { orientation: 'h', y: -0.2 },
        margin: { l: 40, r: 10, t: 30, b: 40 },
      },
    });
    // render without the layout fit, the way plotly would on its own
    const svg: string = await ex.page.evaluate(async (spec) => {
      document.body.innerHTML = '<div id="g"></div>';
      const P = (window as unknown as { Plotly: any }).Plotly; // eslint-disable-line @typescript-eslint/no-explicit-any
      const gd = await P.newPlot(
        'g',
        spec.data,
        { ...spec.layout, width: 321, height: 227, font: { size: 10.667 } },
        { staticPlot: true },
      );
      return decodeURIComponent(
        (await P.toImage(gd, { format: 'svg', width: 321, height: 227 })).replace(/^data:image\/svg\+xml,/, ''),
      );
    }, JSON.parse(broken.specJson()));
    const p = problems(await measure(page, svg));
    expect(p.some((x) => /overlaps/.test(x))).toBe(true);
    expect(p.some((x) => /leaves the canvas/.test(x))).toBe(true);
    // and a legend put over the middle of a dense line
    const covered: string = await ex.page.evaluate(async () => {
      document.body.innerHTML = '<div id="g"></div>';
      const P = (window as unknown as { Plotly: any }).Plotly; // eslint-disable-line @typescript-eslint/no-explicit-any
      const x = Array.from({ length: 200 }, (_, i) => i);
      const gd = await P.newPlot(
        'g',
        [
          { x, y: x, mode: 'lines', name: 'a' },
          { x, y: x.map((v) => 200 - v), mode: 'markers', name: 'b' },
        ],
        { width: 321, height: 227, showlegend: true, legend: { x: 0.5, y: 0.5, xanchor: 'center', yanchor: 'middle' } },
        { staticPlot: true },
      );
      return decodeURIComponent(
        (await P.toImage(gd, { format: 'svg', width: 321, height: 227 })).replace(/^data:image\/svg\+xml,/, ''),
      );
    });
    expect(problems(await measure(page, covered)).some((x) => /the legend covers \d+ data marks/.test(x))).toBe(true);
  }, 30000);

  it('labels reach plotly as text: a preparation named <a href=...> is no link in the legend or the hover text', async () => {
    const evil = '<a href="https://example.invalid/x">N9</a> & <b>bold</b>';
    const rows = [20, 40].map((d) => ({
      class: evil,
      preparation: evil,
      detected: true,
      distance_mm: d,
      centroid_ms: d / 10,
    }));
    const fig = velocityFigure(rows, 'centroid');
    const result = await ex.page.evaluate(async (spec) => {
      document.body.innerHTML = '<div id="h"></div>';
      const P = (window as unknown as { Plotly: any }).Plotly; // eslint-disable-line @typescript-eslint/no-explicit-any
      const gd = await P.newPlot('h', spec.data, { ...spec.layout, width: 500, height: 350 });
      P.Fx.hover(gd, [{ curveNumber: 0, pointNumber: 0 }]);
      await new Promise((r) => setTimeout(r, 50));
      const hover = document.querySelector('.hoverlayer')!;
      return {
        links: document.querySelectorAll('#h svg a').length,
        bold: document.querySelectorAll('#h tspan[style*="bold"]').length,
        legend: [...document.querySelectorAll('#h .legendtext')].map((e) => e.textContent),
        hover: hover.textContent,
      };
    }, JSON.parse(fig.specJson()));
    expect(result.links).toBe(0);
    expect(result.bold).toBe(0);
    expect(result.legend[0]).toBe(`${evil} 10 m/s`); // slope 0.1 ms/mm -> 10 m/s
    expect(result.hover).toContain(evil);
  }, 30000);

  it('saves SVG, PNG at the requested dpi and a titled PDF for several figures in one launch', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-print-'));
    const [a, b] = [
      figs.find((f) => f.name === 'demo/dose-response')!,
      figs.find((f) => f.name === 'demo/temperature-arrhenius')!,
    ];
    await saveFigures([
      { figure: a, path: join(dir, 'a.svg'), column: 'single' },
      { figure: a, path: join(dir, 'a.png'), widthMm: 85, heightMm: 60, dpi: 600 },
      { figure: b, path: join(dir, 'b.png'), column: 'double', heightMm: 100 },
      { figure: b, path: join(dir, 'b.pdf'), widthMm: 120, heightMm: 80 },
    ]);
    const svg = readFileSync(join(dir, 'a.svg'), 'utf8');
    expect(svg).toMatch(/^<svg[^>]*width="85mm" height="59.5mm"/); // default height 0.7 x 85 mm
    expect(svg).toContain('<title>Dose-response</title>');
    const png = readFileSync(join(dir, 'a.png'));
    // 85 mm at 600 dpi = 85 / 25.4 * 600 = 2007.9 -> 2008 px; 60 mm -> 1417.3 -> 1417 px
    expect(png.subarray(1, 4).toString()).toBe('PNG');
    expect(png.readUInt32BE(16)).toBe(2008);
    expect(png.readUInt32BE(20)).toBe(1417);
    // pHYs: 600 dpi = 23622 pixels per metre (600 / 0.0254), unit 1 (metre); PNG spec (W3C 2003) section 11.3.5.3
    const at = png.indexOf('pHYs');
    expect(at).toBeGreaterThan(0);
    expect(png.indexOf('pHYs', at + 4)).toBe(-1);
    expect(png.readUInt32BE(at + 4)).toBe(23622);
    expect(png[at + 12]).toBe(1);
    // the chunk's CRC over type and data, as zlib computes it (node:zlib crc32, Node >= 20.15)
    const zlib = (await import('node:zlib')) as unknown as { crc32?: (b: Uint8Array) => number };
    if (zlib.crc32) expect(png.readUInt32BE(at + 13)).toBe(zlib.crc32(png.subarray(at, at + 13)) >>> 0);
    const png2 = readFileSync(join(dir, 'b.png'));
    // default 300 dpi: 175 mm -> 2066.9 -> 2067 px; 100 mm -> 1181.1 -> 1181 px
    expect(png2.readUInt32BE(16)).toBe(2067);
    expect(png2.readUInt32BE(20)).toBe(1181);
    const pdf = readFileSync(join(dir, 'b.pdf'), 'latin1');
    expect(pdf.startsWith('%PDF')).toBe(true);
    // MediaBox in points: 120 mm = 340.2 pt, 80 mm = 226.8 pt
    const mb = /MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)/.exec(pdf);
    expect(Math.abs(Number(mb![1]) - 340.16)).toBeLessThan(1.5);
    expect(Math.abs(Number(mb![2]) - 226.77)).toBeLessThan(1.5);
    expect(pdf).not.toContain('about:blank');
    expect(pdfTitle(pdf)).toBe('Arrhenius plot');
  }, 60000);

  it('figures without data or legend still export (no text problems, no page errors)', async () => {
    const errors: string[] = [];
    ex.page.on('pageerror', (e) => errors.push(String(e)));
    const empty = [
      doseResponseFigure([], []),
      temperatureFigure([], [], 'q10'),
      velocityFigure([]),
      summaryFigure([], 'velocity_m_s'),
    ];
    for (const f of empty) {
      const r = await ex.svg(f, { widthMm: 85, heightMm: 60 });
      const p = problems(await measure(page, r.svg)).filter((x) => !/plot area|no plot area/.test(x));
      expect(p).toEqual([]);
    }
    expect(errors).toEqual([]);
  }, 30000);

  it('title: false leaves the title to the caption (no title text, the plot grows into its space)', async () => {
    const f = figs.find((x) => x.name === 'demo/dose-response')!;
    const withTitle = await measure(page, (await ex.svg(f, { widthMm: 85, heightMm: 60 })).svg);
    const without = await measure(page, (await ex.svg(f, { widthMm: 85, heightMm: 60, title: false })).svg);
    expect(withTitle.boxes.some((b) => b.cls === 'g-gtitle')).toBe(true);
    expect(without.boxes.some((b) => b.cls === 'g-gtitle')).toBe(false);
    expect(without.plot!.b - without.plot!.t).toBeGreaterThan(withTitle.plot!.b - withTitle.plot!.t);
    expect(problems(without)).toEqual([]);
  }, 30000);

  it('notebook saves share one browser until it has been idle (fig.save in a kernel)', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-shared-'));
    const f = figs.find((x) => x.name === 'demo/summary')!;
    await saveWithSharedExporter(f, join(dir, 'a.svg'), {}, 300000);
    expect(sharedExporterOpen()).toBe(true);
    await saveWithSharedExporter(f, join(dir, 'b.svg'), { column: 'double' }, 400);
    expect(readFileSync(join(dir, 'b.svg'), 'utf8')).toMatch(/width="175mm"/);
    expect(sharedExporterOpen()).toBe(true);
    for (let i = 0; i < 100 && sharedExporterOpen(); i++) await new Promise((r) => setTimeout(r, 50));
    expect(sharedExporterOpen()).toBe(false); // closed 0.4 s after the last save
    await saveWithSharedExporter(f, join(dir, 'c.svg'));
    await closeSharedExporter();
    expect(sharedExporterOpen()).toBe(false);
    expect(readFileSync(join(dir, 'c.svg'), 'utf8')).toMatch(/^<svg/);
  }, 60000);

  it('rejects unknown save options and names the replacement for scale', async () => {
    const f = figs[0];
    await expect(saveFigures([{ figure: f, path: 'x.png', scale: 3 } as never])).rejects.toThrow(/"scale": use dpi/);
    await expect(saveFigures([{ figure: f, path: 'x.png', widthMM: 85 } as never])).rejects.toThrow(
      /unknown key "widthMM".*did you mean "widthMm"/,
    );
    await expect(saveFigures([{ figure: f, path: 'x.png', column: 'triple' } as never])).rejects.toThrow(
      /invalid column: "triple"/,
    );
    await expect(saveFigures([{ figure: f, path: 'x.gif' }])).rejects.toThrow(/must end in .svg, .png or .pdf/);
  });
});

/** The document title of a PDF: a literal string or UTF-16BE hex (PDF 1.7, ISO 32000-1, 7.9.2.2). */
function pdfTitle(pdf: string): string | null {
  const lit = /\/Title\s*\(((?:\\.|[^\\)])*)\)/.exec(pdf);
  if (lit) {
    const s = lit[1].replace(/\\(.)/g, '$1');
    if (s.startsWith('\u00fe\u00ff')) return Buffer.from(s.slice(2), 'latin1').swap16().toString('utf16le');
    return s;
  }
  const hex = /\/Title\s*<([0-9A-Fa-f\s]+)>/.exec(pdf);
  if (!hex) return null;
  const buf = Buffer.from(hex[1].replace(/\s/g, ''), 'hex');
  if (buf[0] === 0xfe && buf[1] === 0xff) return Buffer.from(buf.subarray(2)).swap16().toString('utf16le');
  return buf.toString('latin1');
}
