// Flags on the command line: after a run (or a merge) the flags are printed (a summary line,
// one line per rejected and not-measured estimate, capped) and written to tables/flags.csv;
// the exit code is 0 when anything was computed and 4 only when nothing at all could be.
// The behaviour checked is the contract in src/cli/main.ts and the README (exit codes); the
// recordings are forward-model data (self-consistency of the plumbing, not of the measurements).
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync, existsSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { model, writeBinary } from '../../src';
import { flagReport, flagLine, flagCounts, FLAG_LINE_CAP } from '../../src/cli/flags';

const root = join(__dirname, '..', '..');
const cliPath = join(root, 'dist', 'cli', 'main.js');
const run = (args: string[]) => spawnSync(process.execPath, [cliPath, ...args], { encoding: 'utf8' });
const work = mkdtempSync(join(tmpdir(), 'fascicle-flags-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

type Row = Record<string, unknown>;
const readRows = (p: string): Row[] => JSON.parse(readFileSync(p, 'utf8'));

/**
 * A one-file study (forward model, rodent sciatic preset) at two distances, three repeats each,
 * every sweep at one intensity; preparations as named (each its own file).
 */
function study(name: string, distances: number[], intensity: number, preps = ['P1']): string {
  const dir = join(work, name);
  mkdirSync(dir, { recursive: true });
  const sweeps = distances.flatMap((d) =>
    [0, 1, 2].map((k) => ({
      intensity,
      distanceMm: d,
      temperatureC: 37,
      concentration: 0,
      repeat: k,
    })),
  );
  const files = preps.map((p, i) => {
    const s = model.simulateNerve({
      model: model.rodentSciatic(),
      seed: 7 + i,
      grid: { fs: 50000, t0Ms: -2, nSamples: 3000 },
      sweeps,
      nuisance: { noiseUv: 2 },
    });
    const meta = writeBinary(join(dir, `${p}.bin`), s, 'float32');
    writeFileSync(join(dir, `${p}.json`), JSON.stringify({ data: `${p}.bin`, ...meta }));
    return {
      path: `${p}.json`,
      conditions: { preparation: p, series: 'distance', temperatureC: 37, concentration: 0, intensity },
      sweeps: sweeps.map((q) => ({ distanceMm: q.distanceMm, repeat: q.repeat })),
    };
  });
  const m = join(dir, 'manifest.json');
  writeFileSync(m, JSON.stringify({ fascicleManifest: 1, analysis: { averageRepeats: false }, files }, null, 1));
  return m;
}

/** The summary line the command line prints for these counts. */
const summaryOf = (c: { rejected: number; notMeasured: number; warnings: number }) =>
  `flags: ${c.rejected} rejected, ${c.notMeasured} not measured, ${c.warnings} warning${c.warnings === 1 ? '' : 's'} ` +
  '(tables/flags.csv)';

/** The flag lines of a run's stderr (after the summary line). */
const listed = (stderr: string) => stderr.split('\n').filter((l) => /^ {2}(rejected|not measured): /.test(l));

describe('flag report (the printed form of tables/flags.csv)', () => {
  const f = (severity: string, i: number): Row => ({
    preparation: `P${i}`,
    analysis: 'velocity',
    class: 'C',
    where: `two-site, ${i} mm`,
    severity,
    status: 's',
    reason: `reason ${i}`,
    rows: 1,
  });
  it('one summary line; one line per rejected and not-measured flag; warnings only counted', () => {
    const flags = [f('warning', 1), f('rejected', 2), f('not measured', 3), f('warning', 4)];
    const lines = flagReport(flags);
    expect(lines[0]).toBe('flags: 1 rejected, 1 not measured, 2 warnings (tables/flags.csv)');
    expect(lines.slice(1)).toEqual([
      '  rejected: P2 velocity C [two-site, 2 mm]: reason 2',
      '  not measured: P3 velocity C [two-site, 3 mm]: reason 3',
    ]);
    expect(flagCounts([])).toEqual({ rejected: 0, notMeasured: 0, warnings: 0 });
    expect(flagReport([])).toEqual(['flags: 0 rejected, 0 not measured, 0 warnings (tables/flags.csv)']);
    // one warning is one warning (not "1 warnings")
    expect(flagReport([f('warning', 1)])[0]).toBe('flags: 0 rejected, 0 not measured, 1 warning (tables/flags.csv)');
  });
  it('capped at FLAG_LINE_CAP lines, then "... and X more"; rejected are listed before not measured', () => {
    const flags = [
      ...Array.from({ length: 25 }, (_, i) => f('not measured', i)),
      ...Array.from({ length: 20 }, (_, i) => f('rejected', 100 + i)),
    ];
    const lines = flagReport(flags);
    expect(lines.length).toBe(1 + FLAG_LINE_CAP + 1);
    expect(lines[1]).toMatch(/^ {2}rejected: P100 /);
    expect(lines[20]).toMatch(/^ {2}rejected: P119 /);
    expect(lines[21]).toMatch(/^ {2}not measured: P0 /);
    expect(lines[lines.length - 1]).toBe(`  ... and ${45 - FLAG_LINE_CAP} more (tables/flags.csv)`);
  });
  it('empty parts are left out; a merged flag says how many rows it stands for', () => {
    expect(
      flagLine({ preparation: null, analysis: 'dose-response', class: null, where: null, reason: 'failed: x' }),
    ).toBe('dose-response: failed: x');
    expect(flagLine({ preparation: 'R1', analysis: 'velocity', class: 'C', where: '', reason: 'r', rows: 4 })).toBe(
      'R1 velocity C: r (4 rows)',
    );
    expect(flagLine({ analysis: 'temperature', class: 'C', status: 'not detected' })).toBe(
      'temperature C: not detected',
    );
  });
});

describe('fascicle run: flags printed and written, exit code from what was computed', () => {
  let close: string, none: string;
  beforeAll(() => {
    // sites 0.5 mm apart: the A delays (~6-25 us) are under two samples at 50 kHz and cannot be velocities,
    // while C (~0.5 ms) is resolved: rejected flags, and still something computed
    close = study('close', [20, 20.5], 50);
    // a stimulus far below every class's threshold in the forward model: nothing detected anywhere
    none = study('none', [20, 30], 1e-4, ['P1', 'P2']);
  });
  it('rejected estimates are printed and in tables/flags.csv, the good ones kept: exit 0', () => {
    const out = join(work, 'close-out');
    const r = run(['run', close, '--out', out, '--quiet', '--no-figures']);
    expect(r.status, r.stderr).toBe(0);
    expect(existsSync(join(out, 'tables', 'flags.csv'))).toBe(true);
    const flags = readRows(join(out, 'tables', 'flags.json'));
    const csv = readFileSync(join(out, 'tables', 'flags.csv'), 'utf8')
      .trim()
      .split('\n');
    expect(csv[0]).toMatch(/^preparation,analysis,class,where,severity,status,reason/);
    expect(csv.length - 1).toBe(flags.length);
    const c = flagCounts(flags);
    expect(c.rejected).toBeGreaterThan(0);
    expect(r.stderr).toContain(summaryOf(c));
    // every rejected or not-measured flag has its line (fewer than the cap here), no warning has one
    const lines = listed(r.stderr);
    expect(lines.length).toBe(Math.min(c.rejected + c.notMeasured, FLAG_LINE_CAP));
    for (const fl of flags.filter((x) => x.severity === 'rejected'))
      expect(lines).toContain(`  rejected: ${flagLine(fl)}`);
    expect(lines.some((l) => / velocity A-alpha\/beta \[two-site, .*20-20\.5 mm/.test(l))).toBe(true);
    // the slow class's velocity is kept
    const v = readRows(join(out, 'tables', 'velocity.json'));
    const cv = v.filter((q) => q.class === 'C' && q.method === 'two-site' && typeof q.velocity_m_s === 'number');
    expect(cv.length).toBeGreaterThan(0);
    expect(r.stdout).toMatch(/bundle written to/);
    // the flags table is compared by rerun like every other table
    const rr = run(['rerun', out]);
    expect(rr.status, rr.stderr).toBe(0);
    const ed = readFileSync(join(out, 'tables', 'flags.csv'), 'utf8');
    writeFileSync(join(out, 'tables', 'flags.csv'), ed.replace('rejected', 'warning'));
    const bad = run(['rerun', out]);
    expect(bad.status).toBe(5);
    expect(bad.stderr).toMatch(/rerun differs in tables\/flags\.csv/);
  }, 120_000);
  it('nothing computed at all: the bundle is still written with its flags, exit 4 and the message', () => {
    const out = join(work, 'none-out');
    const r = run(['run', none, '--out', out, '--quiet', '--no-figures']);
    expect(r.status, r.stderr).toBe(4);
    expect(r.stderr).toMatch(/fascicle: nothing could be computed: see tables\/flags\.csv/);
    expect(r.stdout).toMatch(/bundle written to/);
    const flags = readRows(join(out, 'tables', 'flags.json'));
    expect(flags.length).toBeGreaterThan(0);
    expect(new Set(flags.map((x) => x.preparation))).toEqual(new Set(['P1', 'P2']));
    expect(readRows(join(out, 'tables', 'velocity.json')).filter((q) => typeof q.velocity_m_s === 'number')).toEqual(
      [],
    );
    expect(existsSync(join(out, 'provenance.json'))).toBe(true);
    const c = flagCounts(flags);
    expect(r.stderr).toContain(summaryOf(c));
    expect(listed(r.stderr).length).toBe(Math.min(c.rejected + c.notMeasured, FLAG_LINE_CAP));
    const more = c.rejected + c.notMeasured - FLAG_LINE_CAP;
    if (more > 0) expect(r.stderr).toContain(`... and ${more} more`);
    // the same with --jobs 2 (flags come back from the worker threads) and through shards and merge
    const j2 = join(work, 'none-j2');
    const rj = run(['run', none, '--out', j2, '--quiet', '--no-figures', '--jobs', '2']);
    expect(rj.status, rj.stderr).toBe(4);
    expect(readFileSync(join(j2, 'tables', 'flags.csv'), 'utf8')).toBe(
      readFileSync(join(out, 'tables', 'flags.csv'), 'utf8'),
    );
    for (const i of [1, 2]) {
      expect(run(['run', none, '--out', join(work, `none-s${i}`), '--shard', `${i}/2`, '--quiet']).status).toBe(0);
    }
    const mr = run(['merge', join(work, 'none-s1'), join(work, 'none-s2'), '--out', join(work, 'none-merged')]);
    expect(mr.status, mr.stderr).toBe(4);
    expect(mr.stderr).toMatch(/nothing could be computed: see tables\/flags\.csv/);
    const flagsCsv = readFileSync(join(out, 'tables', 'flags.csv'), 'utf8');
    expect(readFileSync(join(work, 'none-merged', 'tables', 'flags.csv'), 'utf8')).toBe(flagsCsv);
  }, 180_000);
});
