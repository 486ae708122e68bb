// The bundle's tables: CSV numbers rounded to 8 significant digits (JSON keeps every bit), no table file for an
// analysis that had no data (the report says why), and the flags table always there with its header. Data: one
// forward-model preparation recorded at two distances (src/model/nerve.ts); expected values are IEEE-754 facts
// (0.1 + 0.2 = 0.30000000000000004; toPrecision as ECMA-262 defines it), not numbers of this project.
import { describe, it, expect, afterAll } from 'vitest';
import { mkdtempSync, rmSync, readFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { rodentSciatic, simulateNerve } from '../../src/model/nerve';
import { runPreparation, combineStudy } from '../../src/report/study';
import { methodsText } from '../../src/report/methods';
import { writeBundle, makeProvenance, csvCell, toCsv, CSV_DIGITS } from '../../src/report/bundle';
import { bundleTables } from '../../src/cli/engine';
import { reportHtml } from '../../src/report/reportHtml';

/** The cells of one CSV line (quoted cells may hold commas; "" is a quote). */
const cells = (line: string) => [...line.matchAll(/("(?:[^"]|"")*"|[^,]*)(,|$)/g)].map((m) => m[1]).slice(0, -1);

const dir = mkdtempSync(join(tmpdir(), 'fascicle-tables-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('CSV numbers', () => {
  it('are rounded to 8 significant digits by default; integers, text and non-finite values are kept', () => {
    expect(CSV_DIGITS).toBe(8);
    expect(csvCell(0.1 + 0.2)).toBe('0.3'); // 0.30000000000000004 in full
    expect(csvCell(0.16000000000000014)).toBe('0.16');
    expect(csvCell(1 / 3)).toBe('0.33333333');
    expect(csvCell(123456.789012)).toBe('123456.79');
    expect(csvCell(-2.5e-9 / 3)).toBe('-8.3333333e-10');
    expect(csvCell(123456789012)).toBe('123456789012'); // an integer (a count, an index) is never rounded
    expect(csvCell(NaN)).toBe('NaN');
    expect(csvCell(-Infinity)).toBe('-Infinity');
    expect(csvCell(1 / 3, 3)).toBe('0.333');
    expect(csvCell(1 / 3, Infinity)).toBe(String(1 / 3)); // no rounding
    expect(toCsv([{ a: 0.1 + 0.2, b: 'x' }])).toBe('a,b\n0.3,x\n');
    expect(toCsv([], { columns: ['a', 'b'] })).toBe('a,b\n');
  });
});

describe('bundle tables of a study with one series', () => {
  const m0 = rodentSciatic();
  const model = { ...m0, populations: [{ ...m0.populations[0], count: 150 }] };
  const sweeps = [20, 30].map((d) => ({
    intensity: 20,
    distanceMm: d,
    temperatureC: 37,
    concentration: 0,
    pulseWidthMs: 0.05,
    pulsesMs: [0],
    conditions: { preparation: 'N1', series: 'distance' },
  }));
  const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
  const set = simulateNerve({ model, seed: 5, grid: { fs: 50000, t0Ms: -3, nSamples: 900 }, sweeps, nuisance: nz });
  const o = { baseline: { window: [-2.8, -0.2] as [number, number] }, components: { classes: ['A-alpha/beta'] } };
  const study = combineStudy([runPreparation(set, o)], o);
  const out = join(dir, 'b');
  writeBundle(out, {
    tables: bundleTables(study),
    methods: methodsText(study.history),
    provenance: makeProvenance(study.history, study.sources),
  });
  const read = (f: string) => readFileSync(join(out, 'tables', f), 'utf8');

  it('an analysis without data writes no table file (no header-only CSV); flags is written with its header', () => {
    expect(study.tables.dose_response_summary).toEqual([]);
    for (const t of ['dose_response_summary', 'dose_response_points', 'recruitment', 'temperature', 'sweeps_removed']) {
      expect(existsSync(join(out, 'tables', `${t}.csv`)), t).toBe(false);
      expect(existsSync(join(out, 'tables', `${t}.json`)), t).toBe(false);
    }
    expect(existsSync(join(out, 'tables', 'velocity.csv'))).toBe(true);
    // every CSV written has a header and at least one row
    for (const [name, rows] of Object.entries(bundleTables(study)))
      if (name !== 'flags') expect(read(`${name}.csv`).trim().split('\n').length, name).toBe(rows.length + 1);
    expect(read('flags.csv').split('\n')[0]).toBe('preparation,analysis,class,where,severity,status,reason,rows');
  });

  it('CSV holds each number to 8 significant digits, JSON the same number to the last bit', () => {
    const json = JSON.parse(read('velocity.json')) as Record<string, unknown>[];
    const csv = read('velocity.csv').trim().split('\n');
    const head = cells(csv[0]);
    const col = head.indexOf('velocity_m_s');
    const i = json.findIndex((r) => typeof r.velocity_m_s === 'number' && !Number.isInteger(r.velocity_m_s));
    expect(i).toBeGreaterThanOrEqual(0);
    const v = json[i].velocity_m_s as number;
    // the JSON value is the computed one (equal to the in-memory table), the CSV its 8-digit rounding
    expect(v).toBe(study.tables.velocity[i].velocity_m_s);
    const cell = cells(csv[i + 1])[col];
    expect(Number(cell)).toBe(Number(v.toPrecision(8)));
    expect(cell.replace(/^-/, '').replace('.', '').replace(/^0+/, '').replace(/e.*$/, '').length).toBeLessThanOrEqual(
      8,
    );
  });

  it('the report lists an empty table with the reason and no file link', () => {
    const html = reportHtml({
      study,
      methods: methodsText(study.history),
      provenance: makeProvenance(study.history, study.sources),
      bundle: true,
      figures: [],
    });
    expect(html).toMatch(
      /id="table-dose_response_summary"><h3>[^<]*<\/h3><p>No rows \(no file in tables\/\): dose-response: no sweeps/,
    );
    expect(html).not.toContain('href="tables/dose_response_summary.csv"');
    expect(html).toContain('href="tables/velocity.csv"');
  });
});
