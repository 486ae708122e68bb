/**
 * Publication export through a headless Chromium driven by playwright-core, using a
 * browser already on the machine (never downloading one): FASCICLE_BROWSER, else
 * /usr/bin/chromium, /usr/bin/chromium-browser, /usr/bin/google-chrome, or the usual
 * Chrome locations on macOS and Windows. Many figures share one browser launch.
 */
import { existsSync, writeFileSync, mkdirSync } from 'node:fs';
import { dirname, extname } from 'node:path';
import type { Figure } from './figure';
import { plotlyJs } from './figure';
import { OptionError } from '../errors';

const CANDIDATES = [
  '/usr/bin/chromium', '/usr/bin/chromium-browser', '/usr/bin/google-chrome', '/usr/bin/google-chrome-stable',
  '/Applications/Google Chrome.app/Contents/MacOS/Google Chrome', '/Applications/Chromium.app/Contents/MacOS/Chromium',
  'C:\\Program Files\\Google\\Chrome\\Application\\chrome.exe', 'C:\\Program Files (x86)\\Google\\Chrome\\Application\\chrome.exe',
];

/** Path of a usable browser, or null. */
export function findBrowser(): string | null {
  const env = process.env.FASCICLE_BROWSER;
  if (env) return existsSync(env) ? env : null;
  return CANDIDATES.find((p) => existsSync(p)) ?? null;
}

export const BROWSER_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'];

export interface SaveJob { figure: Figure; path: string; widthMm?: number; heightMm?: number; scale?: number }

const mmToPx = (mm: number) => (mm / 25.4) * 96;

/** Save figures as .svg, .png or .pdf in one browser launch. */
export async function saveFigures(jobs: SaveJob[]): Promise<void> {
  for (const j of jobs) {
    const ext = extname(j.path).toLowerCase();
    if (!['.svg', '.png', '.pdf'].includes(ext)) throw new OptionError(`invalid path: ${j.path}; the file name must end in .svg, .png or .pdf`);
    for (const k of ['widthMm', 'heightMm'] as const) if (j[k] !== undefined && !(j[k]! > 5 && j[k]! < 2000)) throw new OptionError(`invalid ${k}: ${j[k]}; must be between 5 and 2000 mm`);
    if (j.scale !== undefined && !(j.scale > 0 && j.scale <= 10)) throw new OptionError(`invalid scale: ${j.scale}; must be 0 < scale <= 10`);
  }
  const exe = findBrowser();
  if (!exe) throw new OptionError('no Chromium or Chrome found for figure export: install one (Debian/Ubuntu: apt-get install chromium; macOS/Windows: Google Chrome) or set FASCICLE_BROWSER to its path');
  // eslint-disable-next-line @typescript-eslint/no-var-requires
  const { chromium } = require('playwright-core') as typeof import('playwright-core');
  const browser = await chromium.launch({ executablePath: exe, args: BROWSER_ARGS });
  try {
    const page = await browser.newPage();
    await page.setContent('<!doctype html><html><body style="margin:0"></body></html>');
    await page.addScriptTag({ content: plotlyJs() });
    for (const j of jobs) {
      const layout = j.figure.spec.layout as { width?: number; height?: number };
      const w = Math.round(j.widthMm ? mmToPx(j.widthMm) : layout.width ?? 640);
      const h = Math.round(j.heightMm ? mmToPx(j.heightMm) : layout.height ?? 420);
      const ext = extname(j.path).toLowerCase();
      const spec = JSON.parse(j.figure.specJson());
      const fmt = ext === '.png' ? 'png' : 'svg';
      const url: string = await page.evaluate(async ({ spec, w, h, fmt, scale }) => {
        document.body.innerHTML = '<div id="f"></div>';
        const P = (window as unknown as { Plotly: any }).Plotly; // eslint-disable-line @typescript-eslint/no-explicit-any
        await P.newPlot('f', spec.data, { ...spec.layout, width: w, height: h }, { staticPlot: true });
        return P.toImage('f', { format: fmt, width: w, height: h, scale });
      }, { spec, w, h, fmt, scale: j.scale ?? (fmt === 'png' ? 300 / 96 : 1) });
      mkdirSync(dirname(j.path) || '.', { recursive: true });
      if (ext === '.png') writeFileSync(j.path, Buffer.from(url.split(',')[1], 'base64'));
      else {
        const svg = decodeURIComponent(url.replace(/^data:image\/svg\+xml,/, ''));
        if (ext === '.svg') writeFileSync(j.path, sizeSvg(svg, w, h, j.widthMm ?? (w * 25.4) / 96, j.heightMm ?? (h * 25.4) / 96));
        else {
          const wmm = j.widthMm ?? (w * 25.4) / 96, hmm = j.heightMm ?? (h * 25.4) / 96;
          await page.setContent(`<!doctype html><html><head><style>@page{size:${wmm}mm ${hmm}mm;margin:0}body{margin:0}</style></head><body><img style="width:${wmm}mm;height:${hmm}mm;display:block" src="data:image/svg+xml;base64,${Buffer.from(svg).toString('base64')}"></body></html>`);
          const pdf = await page.pdf({ width: `${wmm}mm`, height: `${hmm}mm`, printBackground: true, pageRanges: '1' });
          writeFileSync(j.path, pdf);
          await page.setContent('<!doctype html><html><body style="margin:0"></body></html>');
          await page.addScriptTag({ content: plotlyJs() });
        }
      }
    }
  } finally {
    await browser.close();
  }
}

/** Give an SVG its physical size in mm, keeping its px coordinates as the viewBox. */
export function sizeSvg(svg: string, wPx: number, hPx: number, wMm: number, hMm: number): string {
  return svg.replace(/<svg([^>]*?)\swidth="[^"]*"\s+height="[^"]*"/, (_m, pre: string) => `<svg${pre} width="${+wMm.toFixed(3)}mm" height="${+hMm.toFixed(3)}mm"${/viewBox/.test(svg.slice(0, 400)) ? '' : ` viewBox="0 0 ${wPx} ${hPx}"`}`);
}
