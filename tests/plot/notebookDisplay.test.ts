/** Rich display of a SweepSet in a notebook: the HTML summary. */
import { describe, it, expect } from 'vitest';
import { SweepSet, sweepSetHtml, tableHtml, findBrowser } from '../../src';
import { BROWSER_ARGS } from '../../src/plot/export';

describe('sweepSetHtml', () => {
  const evil = '<img src=x onerror=alert(1)>';
  const n = 100;
  const set = new SweepSet({
    data: new Float64Array(3 * n),
    nSweeps: 3,
    nSamples: n,
    fs: 20000,
    t0Ms: -1,
    units: 'uV',
    conditions: [
      { preparation: evil, intensity: 1 },
      { preparation: 'N2', intensity: 2 },
      { preparation: 'N2', intensity: 4 },
    ],
  }).baseline({ window: [-1, -0.2] });
  const html = sweepSetHtml(set);
  it('names sweeps, samples, the sampling rate, the time span and the units', () => {
    // 100 samples at 20 kHz from -1 ms: the last at -1 + 99 / 20 = 3.95 ms
    expect(html).toContain('3 sweeps × 100 samples at 20 kHz (-1 to 3.95 ms), µV'); // units as printed (unitText)
  });
  it('lists each condition with its levels and the history with its options', () => {
    expect(html).toMatch(/<th[^>]*>intensity<\/th><td[^>]*>3 levels<\/td><td[^>]*>1, 2, 4<\/td>/);
    expect(html).toMatch(/<th[^>]*>preparation<\/th><td[^>]*>2 levels/);
    expect(html).toContain('history: baseline');
    expect(html).toMatch(/<code>baseline<\/code> [^<]*window=\[-1,-0\.2\]/);
  });
  it('escapes user strings', () => {
    expect(html).not.toContain('<img');
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt;');
  });
});

describe.skipIf(!findBrowser())('tableHtml({ sortable: true }) in Chromium', () => {
  it('a header click sorts numbers by value (not as text), empty cells last; a second click reverses', async () => {
    const { chromium } = await import('playwright-core');
    const browser = await chromium.launch({ executablePath: findBrowser()!, args: BROWSER_ARGS });
    try {
      const page = await browser.newPage();
      const rows = [
        { p: 'N2', v: 10 },
        { p: 'N10', v: 9 },
        { p: 'n1', v: null },
        { p: 'N3', v: 100 },
        { p: 'N4', v: 0.002 },
      ];
      // two tables on one page: the sorter installs once and each table sorts on its own
      await page.setContent(
        `<!doctype html><body>${tableHtml(rows, { sortable: true })}${tableHtml(rows, { sortable: true })}</body>`,
      );
      const col = (t: number, c: number) =>
        page.evaluate(
          ([t, c]) => [...document.querySelectorAll('table')[t].tBodies[0].rows].map((r) => r.cells[c].textContent),
          [t, c],
        );
      await page.locator('table').nth(0).locator('th').nth(1).click();
      expect(await col(0, 1)).toEqual(['0.002', '9', '10', '100', '']); // numeric order: 0.002 < 9 < 10 < 100
      await page.locator('table').nth(0).locator('th').nth(1).click();
      expect(await col(0, 1)).toEqual(['100', '10', '9', '0.002', '']);
      await page.locator('table').nth(0).locator('th').nth(0).click();
      expect(await col(0, 0)).toEqual(['n1', 'N10', 'N2', 'N3', 'N4']); // text, case-insensitive
      expect(await col(1, 0)).toEqual(['N2', 'N10', 'n1', 'N3', 'N4']); // the other table is untouched
    } finally {
      await browser.close();
    }
  }, 30000);
});
