import { describe, it, expect } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  SweepSet,
  sweepsFigure,
  doseResponseFigure,
  temperatureFigure,
  summaryFigure,
  velocityFigure,
  tableHtml,
  escapeHtml,
  findBrowser,
  saveFigures,
  Figure,
  baseLayout,
  plotlyText,
} from '../../src';

const snapDir = join(__dirname, '__snapshots__');
/** Compare a figure spec (numbers rounded) with the stored one; write a .changed file when they differ. */
function snapshot(name: string, fig: Figure) {
  const text = JSON.stringify(JSON.parse(fig.specJson(5)), null, 1) + '\n';
  const p = join(snapDir, `${name}.json`);
  if (!existsSync(p)) {
    mkdirSync(snapDir, { recursive: true });
    writeFileSync(p, text);
  }
  const stored = readFileSync(p, 'utf8');
  if (stored !== text) writeFileSync(p + '.changed', text);
  expect(text).toBe(stored);
}

const small = () => {
  const n = 50;
  const data = new Float64Array(2 * n);
  for (let i = 0; i < 2 * n; i++) data[i] = Math.sin(i / 5) * (i < n ? 1 : 2);
  return new SweepSet({
    data,
    nSweeps: 2,
    nSamples: n,
    fs: 10000,
    t0Ms: -1,
    units: 'mV',
    conditions: [
      { intensity: 1, intensityUnit: 'mA' },
      { intensity: 2, intensityUnit: 'mA' },
    ],
  });
};

describe('figure specs against stored snapshots', () => {
  it('sweeps', () => snapshot('sweeps', sweepsFigure(small(), { title: 'two sweeps' })));
  it('dose-response', () =>
    snapshot(
      'dose-response',
      doseResponseFigure(
        [1, 10, 100].flatMap((c) =>
          ['a', 'b'].map((p, k) => ({
            preparation: p,
            class: 'C',
            concentration: c,
            normalized: 1 / (1 + c / 10) + 0.01 * k,
          })),
        ),
        [{ class: 'C', ic50: 10, pooled_ic50: 10, pooled_hill: 1, pooled_bottom: 0, concentrationUnit: 'uM' }],
      ),
    ));
  it('temperature and summary', () => {
    const pts = [25, 30, 35].flatMap((T) =>
      ['a', 'b'].map((p) => ({
        class: 'A',
        preparation: p,
        temperatureC: T,
        value: 10 * 1.4 ** ((T - 35) / 10),
        measure: 'velocity_m_s',
      })),
    );
    snapshot('temperature', temperatureFigure(pts, [{ class: 'A', q10: 1.4, ea_kJ_mol: 25 }], 'arrhenius'));
    snapshot(
      'summary',
      summaryFigure(
        [
          { class: 'A', preparation: 'a', v: 1 },
          { class: 'A', preparation: 'b', v: 2 },
          { class: 'A', preparation: 'c', v: 3 },
        ],
        'v',
        'velocity (m/s)',
      ),
    );
  });
  it('every axis has a title with units', () => {
    const f = velocityFigure([
      { class: 'A', detected: true, distance_mm: 10, centroid_ms: 0.2 },
      { class: 'A', detected: true, distance_mm: 20, centroid_ms: 0.35 },
    ]);
    const l = f.spec.layout as { xaxis: { title: { text: string } }; yaxis: { title: { text: string } } };
    expect(l.xaxis.title.text).toMatch(/\(mm\)/);
    expect(l.yaxis.title.text).toMatch(/\(ms/);
  });
});

describe('HTML escaping of user-provided text', () => {
  it('keeps hostile labels as text in tables and figures', () => {
    const evil = '<img src=x onerror=alert(1)>';
    const html = tableHtml([{ label: evil, [evil]: 1 }], { caption: evil });
    expect(html).not.toContain('<img');
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt;');
    const fig = new Figure(evil, {
      data: [{ type: 'scatter', x: [1], y: [1], name: `</script>${evil}` }],
      layout: baseLayout(plotlyText(evil), 'x (s)', 'y (V)'),
    });
    const out = fig.toHTML('page');
    expect(out).not.toMatch(/<\/script><img/);
    expect(out).not.toContain(`data-name="${evil}"`);
    // plotlyText: plotly gets entities, not markup
    expect((fig.spec.layout.title as { text: string }).text).toBe('&lt;img src=x onerror=alert(1)&gt;');
    expect(escapeHtml(`"'&`)).toBe('&quot;&#39;&amp;');
  });
});

describe('figure.save for print', () => {
  it('writes SVG, PNG and PDF of the requested size in one browser launch, or names what to install', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-fig-'));
    const fig = sweepsFigure(small(), { title: 'print' });
    const jobs = [
      { figure: fig, path: join(dir, 'a.svg'), widthMm: 85, heightMm: 60 },
      { figure: fig, path: join(dir, 'a.png'), widthMm: 85, heightMm: 60, dpi: 192 },
      { figure: fig, path: join(dir, 'a.pdf'), widthMm: 85, heightMm: 60 },
    ];
    if (!findBrowser()) {
      await expect(saveFigures(jobs)).rejects.toThrow(/no Chromium or Chrome found.*apt-get install chromium/);
      return;
    }
    await saveFigures(jobs);
    const svg = readFileSync(join(dir, 'a.svg'), 'utf8');
    expect(svg).toMatch(/^<svg[^>]*width="85mm" height="60mm"/);
    const png = readFileSync(join(dir, 'a.png'));
    expect(png.subarray(1, 4).toString()).toBe('PNG');
    // 85 mm at 192 px/inch = 642.52 -> 643 px; 60 mm -> 453.54 -> 454 px
    expect(png.readUInt32BE(16)).toBe(643);
    expect(png.readUInt32BE(20)).toBe(454);
    const pdf = readFileSync(join(dir, 'a.pdf'), 'latin1');
    expect(pdf.startsWith('%PDF')).toBe(true);
    // MediaBox in points: 85 mm = 240.9 pt, 60 mm = 170.1 pt
    const mb = /MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)/.exec(pdf);
    expect(Math.abs(Number(mb![1]) - 240.94)).toBeLessThan(1.5);
    expect(Math.abs(Number(mb![2]) - 170.08)).toBeLessThan(1.5);
    await expect(saveFigures([{ figure: fig, path: join(dir, 'a.gif') }])).rejects.toThrow(
      /must end in .svg, .png or .pdf/,
    );
  });
});
