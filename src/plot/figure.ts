/**
 * Figures: plotly.js specs with a house style, shown in notebooks as self-contained
 * HTML and saved for print through a headless Chromium (plot/export.ts).
 *
 * How plotly.js reaches the page: every figure carries a gzip + base64 copy of
 * plotly.js-dist-min and a small loader that uses window.Plotly when it is already
 * there and otherwise decompresses its own copy once per page. So an executed
 * notebook, reopened, exported to HTML or with cells re-run or cleared in any order,
 * shows every figure offline (about 1.4 MB per figure; the price of robustness).
 */
import { readFileSync } from 'node:fs';
import { gzipSync } from 'node:zlib';
import { inspect } from 'node:util';
import { escapeHtml, tslabDisplay } from '../notebook/html';

/** The fascicle palette: colour-blind-safe hues (distinct for deuteranopia and protanopia), our own selection. */
export const PALETTE = ['#1f5fa8', '#e08a1e', '#2b9e8f', '#b23a6e', '#5c5c5c', '#c9b037', '#7a4fb3'];
export const FONT = 'Helvetica, Arial, sans-serif';

export interface PlotlySpec { data: Record<string, unknown>[]; layout: Record<string, unknown>; config?: Record<string, unknown> }

let plotlySource: string | undefined;
let plotlyPacked: string | undefined;
/** plotly.js-dist-min's source. */
export function plotlyJs(): string {
  if (!plotlySource) plotlySource = readFileSync(require.resolve('plotly.js-dist-min'), 'utf8');
  return plotlySource;
}
function packed(): string {
  if (!plotlyPacked) plotlyPacked = gzipSync(Buffer.from(plotlyJs()), { level: 9 }).toString('base64');
  return plotlyPacked;
}

let counter = 0;

/** Base layout of the house style; width and height in px. */
export function baseLayout(title: string, x: string, y: string, extra: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    title: { text: title, font: { size: 14 } },
    font: { family: FONT, size: 12, color: '#222' },
    colorway: PALETTE,
    paper_bgcolor: '#fff', plot_bgcolor: '#fff',
    xaxis: { title: { text: x }, showline: true, linecolor: '#444', ticks: 'outside', zeroline: false, showgrid: false },
    yaxis: { title: { text: y }, showline: true, linecolor: '#444', ticks: 'outside', zeroline: false, showgrid: false },
    legend: { orientation: 'h', y: -0.2 },
    margin: { l: 70, r: 20, t: 50, b: 70 },
    width: 640, height: 420,
    ...extra,
  };
}

export class Figure {
  readonly name: string;
  readonly spec: PlotlySpec;
  constructor(name: string, spec: PlotlySpec) {
    this.name = name;
    this.spec = spec;
  }

  /** The spec as JSON with numbers rounded (for snapshots and small files). */
  specJson(digits = 6): string {
    return JSON.stringify(this.spec, (_k, v) => (typeof v === 'number' && Number.isFinite(v) && !Number.isInteger(v) ? Number(v.toPrecision(digits)) : v));
  }

  /**
   * Self-contained HTML for a notebook output: a div, the spec, and the loader.
   * `library`: 'embedded' (default; works offline anywhere) or 'page' (assumes
   * window.Plotly, for pages that load it once, such as the bundle's HTML files).
   */
  toHTML(library: 'embedded' | 'page' | 'script-tag' = 'embedded', src = '../plotly.min.js'): string {
    const id = `fascicle-fig-${Date.now().toString(36)}-${(counter++).toString(36)}`;
    const spec = this.specJson().replace(/</g, '\\u003c');
    const { width, height } = this.spec.layout as { width?: number; height?: number };
    const div = `<div id="${id}" class="fascicle-figure" data-name="${escapeHtml(this.name)}" style="width:${width ?? 640}px;height:${height ?? 420}px"></div>`;
    const plot = `var s=${spec};window.Plotly.newPlot(${JSON.stringify(id)},s.data,s.layout,Object.assign({displaylogo:false,responsive:false},s.config||{}));`;
    if (library === 'page') return `${div}<script>${plot}</script>`;
    if (library === 'script-tag') return `<script src="${escapeHtml(src)}"></script>${div}<script>${plot}</script>`;
    const loader = `(function(){function go(){${plot}}if(window.Plotly){go();return;}if(!window.__fascicleLoad){window.__fascicleLoad=new Promise(function(res,rej){try{var b=atob(document.getElementById(${JSON.stringify(id + '-lib')}).textContent.trim());var u=new Uint8Array(b.length);for(var i=0;i<b.length;i++)u[i]=b.charCodeAt(i);var st=new Blob([u]).stream().pipeThrough(new DecompressionStream('gzip'));new Response(st).text().then(function(t){var d=window.define;window.define=undefined;try{(0,eval)(t);}finally{window.define=d;}res();},rej);}catch(e){rej(e);}});}window.__fascicleLoad.then(go,function(e){document.getElementById(${JSON.stringify(id)}).textContent='figure could not load plotly.js: '+e;});})();`;
    return `${div}<script type="text/plain" id="${id}-lib">${packed()}</script><script>${loader}</script>`;
  }

  /** Show in a tslab cell (or print a text description outside a notebook). */
  show(): void {
    const t = tslabDisplay();
    if (t) t.html(this.toHTML());
    else console.log(this.toString());
  }

  /** Save as SVG, PNG or PDF with the size in mm (needs a Chromium or Chrome; see plot/export.ts). */
  async save(path: string, options: { widthMm?: number; heightMm?: number; scale?: number } = {}): Promise<void> {
    const { saveFigures } = await import('./export');
    await saveFigures([{ figure: this, path, ...options }]);
  }

  toString(): string {
    const traces = this.spec.data.length;
    const t = (this.spec.layout.title as { text?: string })?.text ?? this.name;
    return `Figure "${t}" (${traces} trace${traces === 1 ? '' : 's'}); call .show() in a notebook or .save("fig.svg")`;
  }

  [inspect.custom](): string {
    return this.toString();
  }
}
