/**
 * Publication export through a headless Chromium driven by playwright-core, using a
 * browser already on the machine (never downloading one): FASCICLE_BROWSER, else
 * /usr/bin/chromium, /usr/bin/chromium-browser, /usr/bin/google-chrome, or the usual
 * Chrome locations on macOS and Windows.
 *
 * Print style: sizes in mm, text in points (tick labels and legend 7 pt, axis titles
 * 8 pt, title 9 pt at print size), lines and markers thinner than on screen, margins
 * measured in the browser so no text overlaps (figure.ts LAYOUT_FIT_JS). One browser
 * serves a whole batch: `saveFigures(jobs)` or `openExporter()` for several calls.
 */
import { existsSync, writeFileSync, mkdirSync } from 'node:fs';
import { dirname, extname } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { Figure, plotlyJs, LAYOUT_FIT_JS, drawnSpec, type PlotlySpec } from './figure';
import { OptionError } from '../errors';
import { checkKeys } from '../validate';
import { escapeHtml, tslabDisplay } from '../notebook/html';
import { plainText } from './labels';

const CANDIDATES = [
  '/usr/bin/chromium',
  '/usr/bin/chromium-browser',
  '/usr/bin/google-chrome',
  '/usr/bin/google-chrome-stable',
  '/Applications/Google Chrome.app/Contents/MacOS/Google Chrome',
  '/Applications/Chromium.app/Contents/MacOS/Chromium',
  'C:\\Program Files\\Google\\Chrome\\Application\\chrome.exe',
  'C:\\Program Files (x86)\\Google\\Chrome\\Application\\chrome.exe',
];

/** Path of a usable browser, or null. */
export function findBrowser(): string | null {
  const env = process.env.FASCICLE_BROWSER;
  if (env) return existsSync(env) ? env : null;
  return CANDIDATES.find((p) => existsSync(p)) ?? null;
}

export const BROWSER_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
  '--disable-quic',
];

/**
 * Journal column widths in mm (common practice, no single source: single column
 * 85-90 mm, one-and-a-half 114-140 mm, double 170-180 mm).
 */
export const COLUMN_WIDTHS_MM = { single: 85, 'one-and-a-half': 120, double: 175 } as const;
export type Column = keyof typeof COLUMN_WIDTHS_MM;

/** Print text sizes in points. */
export const PRINT_PT = { tick: 7, base: 8, title: 9 };

export interface SizeOptions {
  /** width in mm (default: `column`'s width, else 85 mm) */
  widthMm?: number;
  /** height in mm (default 0.7 x width) */
  heightMm?: number;
  /** a journal column width instead of widthMm: 'single' (85 mm), 'one-and-a-half' (120 mm), 'double' (175 mm) */
  column?: Column;
  /** keep the figure's title (default true; journals often want the caption only) */
  title?: boolean;
}
export interface SaveOptions extends SizeOptions {
  /** pixels per inch of a PNG (default 300); the PNG is round(widthMm / 25.4 * dpi) pixels wide */
  dpi?: number;
}
export interface SaveJob extends SaveOptions {
  figure: Figure;
  path: string;
}

const SAVE_KEYS = ['widthMm', 'heightMm', 'column', 'title', 'dpi'];
const PX_PER_MM = 96 / 25.4;
const PX_PER_PT = 96 / 72;

/** Width and height in mm from the options, checked. */
export function printSize(o: SizeOptions): { widthMm: number; heightMm: number } {
  if (o.column !== undefined && !(o.column in COLUMN_WIDTHS_MM)) {
    throw new OptionError(
      `invalid column: ${JSON.stringify(o.column)}; must be one of ${Object.keys(COLUMN_WIDTHS_MM)
        .map((k) => JSON.stringify(k))
        .join(', ')}`,
    );
  }
  if (o.column !== undefined && o.widthMm !== undefined)
    throw new OptionError('give either column or widthMm, not both');
  const widthMm = o.widthMm ?? (o.column ? COLUMN_WIDTHS_MM[o.column] : 85);
  const heightMm = o.heightMm ?? Math.round(widthMm * 7) / 10;
  for (const [k, v] of [
    ['widthMm', widthMm],
    ['heightMm', heightMm],
  ] as const) {
    if (!(v >= 20 && v <= 1000)) throw new OptionError(`invalid ${k}: ${v}; must be between 20 and 1000 mm`);
  }
  return { widthMm, heightMm };
}

function checkJob(j: SaveJob): void {
  if (!j || typeof j !== 'object')
    throw new OptionError(`invalid save job: ${String(j)}; must be { figure, path, ... }`);
  const rest = { ...j } as Record<string, unknown>;
  delete rest.figure;
  delete rest.path;
  if ('scale' in rest)
    throw new OptionError('unknown save option "scale": use dpi (pixels per inch of a PNG, default 300)');
  checkKeys(`save options for ${j.path}`, rest, SAVE_KEYS);
  if (typeof j.path !== 'string' || !['.svg', '.png', '.pdf'].includes(extname(j.path).toLowerCase())) {
    throw new OptionError(`invalid path: ${String(j.path)}; the file name must end in .svg, .png or .pdf`);
  }
  if (j.dpi !== undefined && !(j.dpi >= 72 && j.dpi <= 2400))
    throw new OptionError(`invalid dpi: ${j.dpi}; must be between 72 and 2400`);
  if (j.title !== undefined && typeof j.title !== 'boolean')
    throw new OptionError(`invalid title: ${String(j.title)}; must be true or false`);
  printSize(j);
}

type Obj = Record<string, unknown>;
const isObj = (x: unknown): x is Obj => !!x && typeof x === 'object' && !Array.isArray(x);
const scaled = (x: unknown, f: number, min = 0) => (typeof x === 'number' ? (x > 0 ? Math.max(min, x * f) : x) : x);

/**
 * The spec restyled for print at wPx x hPx CSS pixels (96 per inch): text in points,
 * lines and markers at 0.75 of their screen size (at least 0.5 pt), thinner axes.
 */
export function printSpec(spec: PlotlySpec, wPx: number, hPx: number, options: { title?: boolean } = {}): PlotlySpec {
  const s = JSON.parse(JSON.stringify(spec)) as PlotlySpec;
  const f = 0.75,
    minLine = 0.5 * PX_PER_PT;
  const tick = PRINT_PT.tick * PX_PER_PT,
    base = PRINT_PT.base * PX_PER_PT,
    title = PRINT_PT.title * PX_PER_PT;
  const L = s.layout;
  L.width = wPx;
  L.height = hPx;
  L.margin = { l: 45, r: 8, t: options.title === false ? 8 : 24, b: 32 };
  // print shows the state the figure opens in: no slider or buttons
  delete L.sliders;
  delete L.updatemenus;
  L.font = { ...(isObj(L.font) ? L.font : {}), size: base };
  if (isObj(L.title)) {
    if (options.title === false) L.title = { text: '' };
    else L.title = { ...L.title, font: { ...(isObj(L.title.font) ? L.title.font : {}), size: title } };
  }
  if (isObj(L.legend)) L.legend = { ...L.legend, font: { size: tick }, itemwidth: 30 };
  for (const k of Object.keys(L)) {
    if (!/^[xy]axis\d*$/.test(k) || !isObj(L[k])) continue;
    const a = L[k] as Obj;
    a.tickfont = { ...(isObj(a.tickfont) ? a.tickfont : {}), size: tick };
    if (isObj(a.title)) a.title = { ...a.title, font: { size: base }, standoff: 4 };
    a.linewidth = 0.75;
    a.tickwidth = 0.75;
    a.ticklen = 3;
    if (isObj(a.minor)) a.minor = { ...a.minor, ticklen: 2, tickwidth: 0.6 };
  }
  if (Array.isArray(L.shapes))
    for (const sh of L.shapes as Obj[]) if (isObj(sh.line)) sh.line.width = scaled(sh.line.width, f, minLine);
  if (Array.isArray(L.annotations))
    for (const an of L.annotations as Obj[]) an.font = { ...(isObj(an.font) ? an.font : {}), size: tick };
  for (const t of s.data) {
    if (isObj(t.line)) t.line.width = scaled(t.line.width ?? 2, f, minLine);
    else if (t.mode === undefined || String(t.mode).includes('lines')) t.line = { width: 2 * f };
    if (isObj(t.marker)) {
      const m = t.marker;
      m.size = Array.isArray(m.size) ? m.size.map((x) => scaled(x, f)) : scaled(m.size ?? 6, f);
      if (isObj(m.line)) m.line.width = scaled(m.line.width, f, minLine);
      if (isObj(m.colorbar))
        m.colorbar = {
          ...m.colorbar,
          thickness: 7,
          tickfont: { size: tick },
          title: { ...(isObj(m.colorbar.title) ? m.colorbar.title : {}), font: { size: base } },
          outlinewidth: 0.5,
        };
    }
    for (const e of ['error_x', 'error_y']) {
      const eb = t[e];
      if (isObj(eb)) {
        eb.thickness = scaled(eb.thickness ?? 2, f, minLine);
        eb.width = scaled(eb.width ?? 4, f);
      }
    }
  }
  return s;
}

/** Figure title as plain text (for a PDF's and an SVG's title). */
export function plainTitle(figure: Figure): string {
  const t = (figure.spec.layout.title as { text?: string } | undefined)?.text;
  return plainText(t ?? '') || figure.name;
}

const BLANK = '<!doctype html><html><head><meta charset="utf-8"></head><body style="margin:0"></body></html>';

/**
 * One browser for many figures: `svg()` renders a figure for print, `save()` writes a
 * file. Close it when done (saveFigures does both).
 * @example const ex = await openExporter(); await ex.save(fig, 'a.pdf', { column: 'single' }); await ex.close();
 */
export class FigureExporter {
  private pdfPage: Page | null = null;
  private constructor(
    readonly browser: Browser,
    readonly page: Page,
  ) {}

  static async open(): Promise<FigureExporter> {
    const exe = findBrowser();
    if (!exe)
      throw new OptionError(
        'no Chromium or Chrome found for figure export: install one (Debian/Ubuntu: apt-get install chromium; macOS/Windows: Google Chrome) or set FASCICLE_BROWSER to its path',
      );
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    const { chromium } = require('playwright-core') as typeof import('playwright-core');
    const browser = await chromium.launch({ executablePath: exe, args: BROWSER_ARGS });
    try {
      const page = await browser.newPage();
      await page.setContent(BLANK);
      await page.addScriptTag({ content: plotlyJs() });
      await page.addScriptTag({ content: LAYOUT_FIT_JS });
      return new FigureExporter(browser, page);
    } catch (e) {
      await browser.close();
      throw e;
    }
  }

  /** The figure as print SVG text (px coordinates; sizeSvg gives it mm), with its size in px and mm. */
  async svg(
    figure: Figure,
    options: SizeOptions = {},
  ): Promise<{ svg: string; wPx: number; hPx: number; widthMm: number; heightMm: number }> {
    checkKeys('figure size options', options, ['widthMm', 'heightMm', 'column', 'title']);
    const { widthMm, heightMm } = printSize(options);
    const wPx = Math.round(widthMm * PX_PER_MM),
      hPx = Math.round(heightMm * PX_PER_MM);
    const spec = printSpec(drawnSpec(JSON.parse(figure.specJson(8)) as PlotlySpec), wPx, hPx, options);
    const pad = 1.2 * PX_PER_MM,
      gap = 1 * PX_PER_MM;
    const url: string = await this.page.evaluate(
      async ({ spec, w, h, pad, gap }) => {
        document.body.innerHTML = '<div id="f"></div>';
        const win = window as unknown as { Plotly: any; __fascicleFit: (gd: unknown, o: object) => Promise<number> }; // eslint-disable-line @typescript-eslint/no-explicit-any
        const gd = await win.Plotly.newPlot('f', spec.data, spec.layout, { staticPlot: true });
        await win.__fascicleFit(gd, { pad, gap });
        return win.Plotly.toImage(gd, { format: 'svg', width: w, height: h, scale: 1 });
      },
      { spec, w: wPx, h: hPx, pad, gap },
    );
    const svg = decodeURIComponent(url.replace(/^data:image\/svg\+xml,/, ''));
    return { svg, wPx, hPx, widthMm, heightMm };
  }

  /** Write one figure as .svg, .png or .pdf (by the path's extension). */
  async save(figure: Figure, path: string, options: SaveOptions = {}): Promise<void> {
    checkJob({ figure, path, ...options });
    const ext = extname(path).toLowerCase();
    const r = await this.svg(figure, {
      widthMm: options.widthMm,
      heightMm: options.heightMm,
      column: options.column,
      title: options.title,
    });
    const title = plainTitle(figure);
    const sized = sizeSvg(r.svg, r.wPx, r.hPx, r.widthMm, r.heightMm, title);
    mkdirSync(dirname(path) || '.', { recursive: true });
    if (ext === '.svg') writeFileSync(path, sized);
    else if (ext === '.png') {
      const dpi = options.dpi ?? 300;
      const W = Math.round((r.widthMm / 25.4) * dpi),
        H = Math.round((r.heightMm / 25.4) * dpi);
      const b64: string = await this.page.evaluate(
        async ({ svg, W, H }) => {
          const img = new Image();
          img.src = 'data:image/svg+xml;charset=utf-8,' + encodeURIComponent(svg);
          await img.decode();
          const c = document.createElement('canvas');
          c.width = W;
          c.height = H;
          const ctx = c.getContext('2d')!;
          ctx.fillStyle = '#fff';
          ctx.fillRect(0, 0, W, H);
          ctx.drawImage(img, 0, 0, W, H);
          return c.toDataURL('image/png').split(',')[1];
        },
        { svg: r.svg, W, H },
      );
      writeFileSync(path, withDpi(Buffer.from(b64, 'base64'), dpi));
    } else {
      if (!this.pdfPage) this.pdfPage = await this.browser.newPage();
      const p = this.pdfPage;
      await p.setContent(
        `<!doctype html><html><head><meta charset="utf-8"><title>${escapeHtml(title)}</title><style>@page{size:${r.widthMm}mm ${r.heightMm}mm;margin:0}html,body{margin:0;padding:0}svg{display:block}</style></head><body>${sized.replace(/^<\?xml[^>]*>/, '')}</body></html>`,
      );
      const pdf = await p.pdf({
        width: `${r.widthMm}mm`,
        height: `${r.heightMm}mm`,
        printBackground: true,
        pageRanges: '1',
      });
      writeFileSync(path, pdf);
    }
  }

  async close(): Promise<void> {
    await this.browser.close();
  }
}

/** Start a browser for several saves (one launch); close it with `.close()`. */
export function openExporter(): Promise<FigureExporter> {
  return FigureExporter.open();
}

let shared: { exporter: Promise<FigureExporter>; timer: ReturnType<typeof setTimeout> | null; busy: number } | null =
  null;

/**
 * Save with a browser kept open between calls, closed `idleMs` after the last save
 * (default 60 s). For notebooks, where fig.save is called cell after cell; a script
 * should use saveFigures or openExporter (an open browser keeps the process running).
 */
export async function saveWithSharedExporter(
  figure: Figure,
  path: string,
  options: SaveOptions = {},
  idleMs = 60000,
): Promise<void> {
  checkJob({ figure, path, ...options });
  if (!shared) {
    const exporter = FigureExporter.open();
    shared = { exporter, timer: null, busy: 0 };
    exporter.catch(() => {
      shared = null;
    });
  }
  const s = shared;
  if (s.timer) {
    clearTimeout(s.timer);
    s.timer = null;
  }
  s.busy++;
  try {
    await (await s.exporter).save(figure, path, options);
  } finally {
    s.busy--;
    if (!s.busy && shared === s) {
      s.timer = setTimeout(() => {
        if (shared === s && !s.busy) {
          shared = null;
          void s.exporter.then((e) => e.close()).catch(() => undefined);
        }
      }, idleMs);
      s.timer.unref?.();
    }
  }
}

/** Close the browser kept by saveWithSharedExporter now (if any). */
export async function closeSharedExporter(): Promise<void> {
  const s = shared;
  shared = null;
  if (!s) return;
  if (s.timer) clearTimeout(s.timer);
  await (await s.exporter.catch(() => null))?.close();
}

/** Whether a shared browser is open (for tests). */
export function sharedExporterOpen(): boolean {
  return shared !== null;
}

/** Save figures as .svg, .png or .pdf in one browser launch. Every job is checked before the browser starts. */
export async function saveFigures(jobs: SaveJob[]): Promise<void> {
  if (!Array.isArray(jobs))
    throw new OptionError(
      'invalid jobs: must be an array of { figure, path, widthMm?, heightMm?, column?, dpi?, title? }',
    );
  for (const j of jobs) checkJob(j);
  const ex = await FigureExporter.open();
  try {
    for (const j of jobs) {
      const { figure, path, ...o } = j;
      await ex.save(figure, path, o);
    }
  } finally {
    await ex.close();
  }
}

/** Give an SVG its physical size in mm, keeping its px coordinates as the viewBox, and a title element. */
export function sizeSvg(svg: string, wPx: number, hPx: number, wMm: number, hMm: number, title?: string): string {
  const out = svg.replace(
    /<svg([^>]*?)\swidth="[^"]*"\s+height="[^"]*"/,
    (_m, pre: string) =>
      `<svg${pre} width="${+wMm.toFixed(3)}mm" height="${+hMm.toFixed(3)}mm"${/viewBox/.test(svg.slice(0, 400)) ? '' : ` viewBox="0 0 ${wPx} ${hPx}"`}`,
  );
  if (!title) return out;
  return out.replace(/(<svg[^>]*>)/, `$1<title>${escapeHtml(title)}</title>`);
}

/** CRC-32 (ISO 3309, as PNG chunks use it: polynomial 0xEDB88320, reflected). */
function crc32(buf: Uint8Array): number {
  let c = 0xffffffff;
  for (let i = 0; i < buf.length; i++) {
    c ^= buf[i];
    for (let k = 0; k < 8; k++) c = c & 1 ? (c >>> 1) ^ 0xedb88320 : c >>> 1;
  }
  return (c ^ 0xffffffff) >>> 0;
}

/** A PNG with a pHYs chunk giving its resolution (pixels per metre from dpi), inserted after IHDR. */
export function withDpi(png: Buffer, dpi: number): Buffer {
  const ppm = Math.round(dpi / 0.0254);
  const body = Buffer.alloc(13);
  body.write('pHYs', 0, 'latin1');
  body.writeUInt32BE(ppm, 4);
  body.writeUInt32BE(ppm, 8);
  body.writeUInt8(1, 12);
  const chunk = Buffer.alloc(4 + 13 + 4);
  chunk.writeUInt32BE(9, 0);
  body.copy(chunk, 4);
  chunk.writeUInt32BE(crc32(body) >>> 0, 17);
  const ihdrEnd = 8 + 4 + 4 + 13 + 4;
  return Buffer.concat([png.subarray(0, ihdrEnd), chunk, png.subarray(ihdrEnd)]);
}

// Figure.save lives here, not in figure.ts, so that figure.ts need not import this module (no import cycle);
// src/index.ts loads this module.
declare module './figure' {
  interface Figure {
    /**
     * Save as SVG, PNG or PDF for print: size in mm (default 85 x 59.5 mm, or a journal
     * `column`), text in points, PNG at `dpi` (default 300). In a notebook kernel the
     * browser stays open for 60 s after a save, so saves in a row start it once; in a
     * script each call starts one: use saveFigures([...]) or openExporter() for several.
     * @example await fig.save('fig1.pdf', { column: 'single', heightMm: 60 })
     */
    save(path: string, options?: SaveOptions): Promise<void>;
  }
}

Figure.prototype.save = async function save(this: Figure, path: string, options: SaveOptions = {}): Promise<void> {
  if (tslabDisplay()) await saveWithSharedExporter(this, path, options);
  else await saveFigures([{ figure: this, path, ...options }]);
};
