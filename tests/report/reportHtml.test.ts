/**
 * The study report (src/report/reportHtml.ts) from a real run of the demo study
 * (data-demo/manifest.json through runStudy, the command line's engine), opened from
 * file:// in headless Chromium (the system's /usr/bin/chromium through playwright-core):
 * every figure draws a plotly SVG, no console errors, every internal link has its
 * target, every file link of the bundle exists, and page.pdf() prints it.
 * Expected numbers are the run's own tables (the report must show what the bundle holds).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync, existsSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser } from 'playwright-core';
import { runStudy } from '../../src/cli/engine';
import { reportHtml, writeReportHtml, reportFragment, showReport, type ReportInput } from '../../src/report/reportHtml';
import { studyFigureList } from '../../src/registry/index';
import { findBrowser } from '../../src/plot/export';
import type { Study } from '../../src/report/study';
import type { Provenance } from '../../src/report/bundle';

const ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];
const browserPath = findBrowser();

describe.skipIf(!browserPath)('study report (headless Chromium, demo study)', () => {
  let dir: string;
  let study: Study;
  let input: ReportInput;
  let browser: Browser;
  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'fascicle-report-'));
    const out = join(dir, 'bundle');
    const r = await runStudy({ manifest: 'data-demo/manifest.json', out });
    study = r.study!;
    input = {
      study,
      methods: readFileSync(join(out, 'methods.txt'), 'utf8'),
      provenance: JSON.parse(readFileSync(join(out, 'provenance.json'), 'utf8')) as Provenance,
    };
    // the engine writes report.html at the top of the bundle, beside plotly.min.js: the page tested is that one
    if (!existsSync(join(out, 'report.html'))) throw new Error('fascicle run wrote no report.html into the bundle');
    browser = await chromium.launch({ executablePath: browserPath!, args: ARGS });
  }, 90000);
  afterAll(async () => {
    await browser?.close();
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('bundle report: every figure renders, no console errors, links resolve, prints to PDF', async () => {
    const out = join(dir, 'bundle');
    const nFig = studyFigureList(study).length;
    expect(nFig).toBeGreaterThanOrEqual(5); // the demo has recruitment, velocity, dose-response, 2 temperature, summary
    const page = await browser.newPage();
    const errors: string[] = [];
    page.on('console', (m) => {
      if (m.type() === 'error') errors.push(m.text());
    });
    page.on('pageerror', (e) => errors.push(String(e)));
    page.on('requestfailed', (r) => errors.push(`failed ${r.url()}`));
    await page.goto(pathToFileURL(join(out, 'report.html')).href);
    await page.waitForFunction((n) => document.querySelectorAll('.fascicle-figure .main-svg').length >= n, nFig, {
      timeout: 20000,
    });
    const figs = await page.$$eval('.fascicle-figure', (ds) =>
      ds.map((d) => ({
        svg: !!d.querySelector('svg.main-svg'),
        traces: d.querySelectorAll('.trace, .scatterlayer path').length,
      })),
    );
    expect(figs.length).toBe(nFig);
    for (const f of figs) {
      expect(f.svg).toBe(true);
      expect(f.traces).toBeGreaterThan(0);
    }
    // internal links: each #id exists; file links: each file exists in the bundle
    const hrefs = await page.$$eval('a[href]', (as) => as.map((a) => a.getAttribute('href')!));
    const ids = await page.$$eval('[id]', (es) => es.map((e) => e.id));
    const local = hrefs.filter((h) => h.startsWith('#'));
    expect(local.length).toBeGreaterThan(10);
    for (const h of local) expect(ids, h).toContain(decodeURIComponent(h.slice(1)));
    const files = hrefs.filter((h) => !h.startsWith('#'));
    expect(files).toContain('tables/velocity.csv');
    for (const h of files) expect(existsSync(join(out, h)), h).toBe(true);
    // clicking a contents link scrolls to its section
    await page.click('nav a[href="#methods"]');
    await page.waitForFunction(() => Math.abs(document.getElementById('methods')!.getBoundingClientRect().top) < 5);
    // sorting: a click on the velocity table's velocity header orders its rows
    const sorted = await page.evaluate(() => {
      const table = document.querySelector('#table-velocity table') as HTMLTableElement;
      const heads = [...table.tHead!.rows[0].cells];
      const k = heads.findIndex((h) => h.textContent === 'velocity_m_s');
      heads[k].click();
      const v = [...table.tBodies[0].rows]
        .map((r) => r.cells[k].textContent!.trim())
        .filter((x) => x !== '')
        .map(Number);
      return v.every((x, i) => i === 0 || v[i - 1] <= x) && v.length > 1;
    });
    expect(sorted).toBe(true);
    // the study's own numbers appear: each IC50 of the summary table (4 significant digits, as tables show them)
    const text = await page.textContent('#summary');
    expect(text).toContain('signal unit: µV'); // printed units (the data say uV)
    for (const r of study.tables.dose_response_summary) {
      if (typeof r.ic50 === 'number') expect(text).toContain(String(Number(r.ic50.toPrecision(4))));
    }
    expect(await page.textContent('#methods')).toContain(input.methods.trim().slice(0, 80));
    const pdf = await page.pdf({ format: 'A4', printBackground: true });
    expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
    const pages = (pdf.toString('latin1').match(/\/Type\s*\/Page[^s]/g) ?? []).length;
    expect(pages).toBeGreaterThanOrEqual(3);
    if (process.env.FASCICLE_PRINT_DIR) {
      writeFileSync(join(process.env.FASCICLE_PRINT_DIR, 'report.pdf'), pdf);
      await page.evaluate(() => window.scrollTo(0, 0));
      await page.screenshot({ path: join(process.env.FASCICLE_PRINT_DIR, 'report.png') });
      await page.locator('#figures').screenshot({ path: join(process.env.FASCICLE_PRINT_DIR, 'report-figures.png') });
    }
    expect(errors).toEqual([]);
    await page.close();
  }, 60000);

  it('stand-alone report (plotly inlined once) escapes user text and renders without the bundle', async () => {
    const evil = '<img src=x onerror="window.__xss=1">';
    const notes = [...study.notes, `note with ${evil}`];
    const path = writeReportHtml(join(dir, 'alone'), { ...input, study: { ...study, notes }, title: `Study ${evil}` });
    const html = readFileSync(path, 'utf8');
    expect(html).not.toContain('<img src=x');
    expect(html.split('<script src=').length).toBe(1); // nothing loaded from files
    const page = await browser.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(String(e)));
    page.on('console', (m) => {
      if (m.type() === 'error') errors.push(m.text());
    });
    await page.goto(pathToFileURL(path).href);
    const n = studyFigureList(study).length;
    await page.waitForFunction((k) => document.querySelectorAll('.fascicle-figure .main-svg').length >= k, n, {
      timeout: 20000,
    });
    expect(await page.evaluate(() => (window as unknown as { __xss?: number }).__xss)).toBeUndefined();
    expect(await page.title()).toBe(`Study ${evil}`);
    expect(errors).toEqual([]);
    await page.close();
    // a report.html fascicle did not write is never replaced
    const other = join(dir, 'other');
    writeReportHtml(other, { ...input, figures: [] });
    writeFileSync(join(other, 'report.html'), '<p>mine</p>');
    expect(() => writeReportHtml(other, input)).toThrow(/did not write/);
    expect(readFileSync(join(other, 'report.html'), 'utf8')).toBe('<p>mine</p>');
  }, 60000);

  it('notebook form: a fragment without html/head/body, one plotly copy, styles scoped; text outside a kernel', () => {
    const f = reportFragment(input);
    expect(f).not.toMatch(/<\/?(html|head|body)[\s>]/);
    expect(f).not.toMatch(/(^|[}\s])body\{/); // no rule that would restyle the notebook page
    expect(f.split('window.define=undefined').length).toBe(2); // plotly.js inlined once
    expect(f.split('class="fascicle-figure"').length - 1).toBe(studyFigureList(study).length);
    const logged: string[] = [];
    const log = console.log;
    console.log = (x: unknown) => {
      logged.push(String(x));
    };
    try {
      showReport(input);
    } finally {
      console.log = log;
    }
    expect(logged.join('\n')).toMatch(/^Study report: \d+ component rows, \d+ flags, \d+ figures/);
  });

  it('an empty table says why; a misspelt input key names the nearest', () => {
    const empty = {
      ...study,
      tables: { ...study.tables, dose_response_summary: [] },
      notes: [...study.notes, 'dose-response: no sweeps with a drug concentration above 0'],
    };
    const html = reportHtml({ ...input, study: empty, figures: [] });
    expect(html).toMatch(/id="table-dose_response_summary"><h3>[^<]*<\/h3><p>No rows: dose-response: no sweeps/);
    expect(html).not.toContain('__fascicleDefine'); // no figures: plotly.js is not inlined
    expect(html.length).toBeLessThan(3e6);
    expect(() => reportHtml({ ...input, figure: [] } as unknown as ReportInput)).toThrow(/figures/);
  });
});
