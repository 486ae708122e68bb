// CI artifacts (.ci/run): screenshots of a bundle's report.html and one figure at single-column print width.
//   node tests/notebooks/artifacts.mjs <bundle folder> <output folder>
// Opens <bundle>/report.html in headless Chromium (Debian's /usr/bin/chromium through playwright-core; no browser
// is downloaded), waits until every figure has drawn, fails on console errors, and writes
//   report.png          the first screen of the report
//   report-full.png     the whole page
//   figure-85mm.png     the bundle's dose-response figure (else its first figure) saved by the library at 85 x 60 mm, 300 dpi
import { chromium } from 'playwright-core';
import { existsSync, mkdirSync, readdirSync, readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { createRequire } from 'node:module';

const [bundle, out] = process.argv.slice(2);
if (!bundle || !out) {
  console.error('usage: node tests/notebooks/artifacts.mjs <bundle folder> <output folder>');
  process.exit(2);
}
const report = join(bundle, 'report.html');
if (!existsSync(report)) {
  console.error(`no report.html in ${bundle}`);
  process.exit(1);
}
mkdirSync(out, { recursive: true });
const exe = process.env.FASCICLE_BROWSER || '/usr/bin/chromium';
const args = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking'];
const browser = await chromium.launch({ executablePath: exe, args: [...args, '--disable-component-update'] });
let failed = false;
try {
  const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
  const errors = [];
  page.on('console', (m) => {
    if (m.type() === 'error') errors.push(m.text());
  });
  page.on('pageerror', (e) => errors.push(String(e)));
  await page.goto(pathToFileURL(resolve(report)).href, { waitUntil: 'load' });
  const expected = await page.locator('div.fascicle-figure').count();
  let rendered = 0;
  for (let i = 0; i < 60 && rendered < expected; i++) {
    rendered = await page.locator('div.fascicle-figure.js-plotly-plot').count();
    if (rendered < expected) await page.waitForTimeout(500);
  }
  await page.screenshot({ path: join(out, 'report.png') });
  await page.screenshot({ path: join(out, 'report-full.png'), fullPage: true });
  failed = rendered !== expected || expected === 0 || errors.length > 0;
  const note = errors.length ? ': ' + errors.slice(0, 3).join(' | ') : '';
  console.log(`report.html: ${rendered}/${expected} figures rendered, ${errors.length} console errors${note}`);
} finally {
  await browser.close();
}
// one figure of the bundle at 85 mm through the library's own print export
const require = createRequire(import.meta.url);
const { Figure, saveFigures } = require(resolve('dist/index.js'));
const specs = readdirSync(join(bundle, 'figures')).filter((f) => f.endsWith('.json'));
const pick = specs.find((f) => f.startsWith('dose-response')) ?? specs[0];
if (!pick) {
  console.log('no figure specs in the bundle');
  process.exit(1);
}
const spec = JSON.parse(readFileSync(join(bundle, 'figures', pick), 'utf8'));
const name = pick.replace(/\.json$/, '');
await saveFigures([
  { figure: new Figure(name, spec), path: join(out, 'figure-85mm.png'), widthMm: 85, heightMm: 60, dpi: 300 },
]);
console.log(`figure-85mm.png: ${name} at 85 x 60 mm, 300 dpi`);
process.exit(failed ? 1 : 0);
