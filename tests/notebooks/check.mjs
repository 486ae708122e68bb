// Open exported notebooks in headless Chromium: every figure the notebook made must render
// (plotly roots == fascicle figure divs), and the page must log no errors. Screenshots go to
// .ci-artifacts/ (gitignored); each figure is also saved as <html name>.fig<k>.png beside the HTML,
// in page order (store.py puts them into the stored notebooks).
import { chromium } from 'playwright-core';
import { basename } from 'node:path';
import { pathToFileURL } from 'node:url';

const files = process.argv.slice(2);
const exe = process.env.FASCICLE_BROWSER || '/usr/bin/chromium';
const browser = await chromium.launch({ executablePath: exe, args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'] });
let failed = 0;
let total = 0;
try {
  for (const f of files) {
    const page = await browser.newPage({ viewport: { width: 1200, height: 900 } });
    const errors = [];
    page.on('console', (m) => { if (m.type() === 'error') errors.push(m.text()); });
    page.on('pageerror', (e) => errors.push(String(e)));
    await page.goto(pathToFileURL(f).href, { waitUntil: 'load' });
    const expected = await page.locator('div.fascicle-figure').count();
    let rendered = 0;
    for (let i = 0; i < 60; i++) {
      rendered = await page.locator('div.fascicle-figure.js-plotly-plot svg.main-svg').evaluateAll((els) => new Set(els.map((e) => e.closest('.fascicle-figure'))).size);
      if (rendered >= expected) break;
      await page.waitForTimeout(500);
    }
    await page.waitForTimeout(300);
    const figs = page.locator('div.fascicle-figure');
    // every figure shows data: at least one trace with a finite point (a legend-only entry has x [null])
    const empty = await page.locator('div.fascicle-figure.js-plotly-plot').evaluateAll((els) =>
      els
        .map((gd, k) => {
          const finite = (a) => Array.isArray(a) && a.flat(2).some((v) => typeof v === 'number' && Number.isFinite(v));
          const has = (gd.data || []).some((t) => finite(t.y) || finite(t.x) || finite(t.z));
          return has ? null : `figure ${k + 1} (${(gd.layout?.title?.text || '').slice(0, 60)})`;
        })
        .filter(Boolean),
    );
    for (const e of empty) errors.push(`no data drawn in ${e}`);
    // the exported page's MathJax status line ("Loading [MathJax]/...") sits fixed over the page: keep it out of
    // the figure pictures
    await page.addStyleTag({ content: '#MathJax_Message{display:none !important}' });
    for (let k = 0; k < rendered && rendered === expected; k++) {
      await figs.nth(k).screenshot({ path: f.replace(/\.html$/, `.fig${k}.png`) });
    }
    // errors from blocked network requests of the classic notebook's page (none expected offline) are kept
    await page.screenshot({ path: `.ci-artifacts/${basename(f, '.html')}.png`, fullPage: true });
    const ok = rendered === expected && expected > 0 && errors.length === 0;
    total += rendered;
    console.log(`${basename(f)}: ${rendered}/${expected} figures rendered, ${errors.length} console errors${errors.length ? ': ' + errors.slice(0, 3).join(' | ') : ''} ${ok ? 'ok' : 'FAILED'}`);
    if (!ok) failed++;
    await page.close();
  }
} finally {
  await browser.close();
}
console.log(`${files.length - failed} passed, ${failed} failed`);
console.log(`browser check: ${total} figures rendered in ${files.length} notebooks`);
process.exit(failed ? 1 : 0);
