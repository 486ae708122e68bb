// The command line as the README documents it: the forms that reach fascicle through npm's
// runners, the environment settings it checks, and the exit-code table (README = help = code).
import { describe, it, expect } from 'vitest';
import { spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync, mkdtempSync, mkdirSync, cpSync, existsSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const root = join(__dirname, '..', '..');
const cliPath = join(root, 'dist', 'cli', 'main.js');
const run = (args: string[], env: Record<string, string> = {}) =>
  spawnSync(process.execPath, [cliPath, ...args], { encoding: 'utf8', env: { ...process.env, ...env } });
const version = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')).version;

/** The README's command-line section. */
const section = (() => {
  const t = readFileSync(join(root, 'README.md'), 'utf8');
  const a = t.indexOf('## Command line\n');
  return t.slice(a, t.indexOf('\n## ', a + 5));
})();

describe('command line usage as documented', () => {
  it('an option given twice with different values is a usage error (exit 2) before anything is read or written', () => {
    const out1 = join(tmpdir(), `fascicle-twice-${process.pid}-a`),
      out2 = join(tmpdir(), `fascicle-twice-${process.pid}-b`);
    const r = run(['run', 'no-such-manifest.json', '--out', out1, '--out', out2]);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/option --out is given twice \(.*-a and .*-b\); give it once/);
    expect(existsSync(out1) || existsSync(out2)).toBe(false);
    expect(run(['run', 'x.json', '--jobs', '2', '--jobs=3', '--out', out1]).stderr).toMatch(/--jobs is given twice/);
  });
  it('a leading "--" (passed along by some npm runners) is skipped: "-- --help", "-- --version", "-- help"', () => {
    const v = run(['--', '--version']);
    expect(v.status, v.stderr).toBe(0);
    expect(v.stdout.trim()).toBe(version);
    expect(run(['--', '--help']).stdout).toMatch(/^fascicle .*: compound action potential analysis/);
    expect(run(['--', 'help', 'run']).stdout).toMatch(/--out <dir>/);
    expect(run(['--', 'version']).stdout.trim()).toBe(version);
  });
  it('help unblind documents the key formats and the refusals; unblind needs --key and --out', () => {
    const h = run(['help', 'unblind']).stdout;
    expect(h).toMatch(/--key <file>/);
    expect(h).toMatch(/"code,label"/);
    expect(run(['help']).stdout).toMatch(/fascicle unblind <bundle-dir> --key <key> --out <dir>/);
    const noKey = run(['unblind', 'somewhere', '--out', 'x']);
    expect(noKey.status).toBe(2);
    expect(noKey.stderr).toMatch(/unblind needs --key <key file>/);
    expect(run(['unblind', 'somewhere', '--kye', 'k']).stderr).toMatch(/did you mean --key\?/);
  });
  it('the README names every form of the usage block and the npx note', () => {
    const forms = [
      'npx fascicle help',
      'npx fascicle version',
      'npx fascicle rerun <bundle-dir> [--manifest <path>]',
      'npx fascicle run <manifest.json> --out <dir>',
      'npx fascicle merge <shard-dir>... --out <dir>',
      'FASCICLE_WORKER_HEAP_MB',
    ];
    for (const form of forms) {
      expect(section, form).toContain(form);
    }
    expect(section).toMatch(/`npx fascicle --help` and `--version` can be taken by npx/);
  });
  it('exit codes: the README table, the help text and the header of src/cli/main.ts list the same codes', () => {
    const readme = [...section.matchAll(/^\| (\d) \| (.+) \|$/gm)].map((m) => Number(m[1]));
    expect(readme.sort()).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
    const help = run(['help']).stdout.replace(/\s+/g, ' ');
    const helpCodes = [...(/Exit codes: (.*?)\./.exec(help)?.[1] ?? '').matchAll(/\b(\d) [a-z]/g)].map((m) =>
      Number(m[1]),
    );
    expect(helpCodes.sort()).toEqual(readme);
    const header = readFileSync(join(root, 'src', 'cli', 'main.ts'), 'utf8')
      .split('*/')[0]
      .replace(/\s*\*\s*/g, ' ');
    const headerCodes = [...(/Exit codes: (.*?)\./.exec(header)?.[1] ?? '').matchAll(/\b(\d) [a-z]/g)].map((m) =>
      Number(m[1]),
    );
    expect(headerCodes.sort()).toEqual(readme);
  });
  // (trains through the command line: tests/cli/study.test.ts; the recovery demo with trains takes minutes to make)
  it('a paired-pulse study (the invented two-group demo) runs: its series, blinding and steps are accepted', async () => {
    const { makeGroupDemo } = await import('../../src/model/makeGroupDemo');
    const work = mkdtempSync(join(tmpdir(), 'fascicle-usage-'));
    try {
      makeGroupDemo(join(work, 'study'), join(work, 'key'));
      const out = join(work, 'out');
      const r = run(['run', join(work, 'study', 'manifest.json'), '--out', out, '--quiet', '--no-figures']);
      expect(r.status, r.stderr).toBe(0);
      for (const t of ['paired_pulse_summary', 'group_tests', 'mixed_anova', 'sweep_qc', 'flags']) {
        expect(existsSync(join(out, 'tables', `${t}.csv`)), t).toBe(true);
      }
      expect(r.stderr).toMatch(/^flags: \d+ rejected, \d+ not measured, \d+ warnings? \(tables\/flags\.csv\)$/m);
      // one result line per recovery fit, with the numbers of its table row
      const rows = JSON.parse(readFileSync(join(out, 'tables', 'paired_pulse_summary.json'), 'utf8')) as Record<
        string,
        unknown
      >[];
      const fitted = rows.filter((q) => typeof q.r50_ms === 'number');
      expect(fitted.length).toBeGreaterThan(0);
      for (const q of fitted) {
        const v = Number((q.r50_ms as number).toPrecision(3));
        expect(r.stdout).toContain(`  recovery R50 ${q.class} (${q.preparation} at ${q.distance_mm} mm): ${v} ms`);
      }
    } finally {
      rmSync(work, { recursive: true, force: true });
    }
  }, 60_000);
  it('a manifest listing NWB files runs (the HDF5 library is loaded in the main and the --jobs threads), reruns', () => {
    // tests/fixtures/nwb/continuous.nwb: written by h5py (versions in tests/fixtures/nwb/expected.json), 3 channels
    const work = mkdtempSync(join(tmpdir(), 'fascicle-usage-'));
    try {
      mkdirSync(join(work, 'study'));
      cpSync(join(root, 'tests', 'fixtures', 'nwb', 'continuous.nwb'), join(work, 'study', 'continuous.nwb'));
      const entry = (channel: number, preparation: string, distanceMm: number) => ({
        path: 'continuous.nwb',
        options: { channel },
        conditions: { preparation, distanceMm, temperatureC: 37 },
      });
      const m = join(work, 'study', 'manifest.json');
      writeFileSync(
        m,
        JSON.stringify({
          fascicleManifest: 1,
          analysis: { baseline: { window: [-4, -0.2] } },
          files: [entry(0, 'N1', 12), entry(1, 'N2', 24.5)],
        }),
      );
      const env = { FASCICLE_QUIET: '1' };
      const a = run(['run', m, '--out', join(work, 'one'), '--quiet', '--no-figures'], env);
      expect(a.status, a.stderr).toBe(0);
      const b = run(['run', m, '--out', join(work, 'two'), '--quiet', '--no-figures', '--jobs', '2'], env);
      expect(b.status, b.stderr).toBe(0);
      const rows = JSON.parse(readFileSync(join(work, 'one', 'tables', 'components.json'), 'utf8')) as Record<
        string,
        unknown
      >[];
      expect(new Set(rows.map((q) => q.preparation))).toEqual(new Set(['N1', 'N2']));
      expect(readFileSync(join(work, 'two', 'tables', 'components.csv'), 'utf8')).toBe(
        readFileSync(join(work, 'one', 'tables', 'components.csv'), 'utf8'),
      );
      const rr = run(['rerun', join(work, 'one')], env);
      expect(rr.status, rr.stderr).toBe(0);
    } finally {
      rmSync(work, { recursive: true, force: true });
    }
  }, 60_000);
  it('a bad FASCICLE_WORKER_HEAP_MB is a configuration error (exit 2) also with --jobs 1, before anything is written', () => {
    const work = mkdtempSync(join(tmpdir(), 'fascicle-usage-'));
    try {
      const out = join(work, 'o');
      for (const bad of ['abc', '4', '12.5']) {
        const env = { FASCICLE_WORKER_HEAP_MB: bad };
        const r = run(['run', join(root, 'data-demo', 'manifest.json'), '--out', out, '--quiet'], env);
        expect(r.status, r.stderr).toBe(2);
        expect(r.stderr).toContain(
          `invalid FASCICLE_WORKER_HEAP_MB: ${JSON.stringify(bad)}; must be an integer >= 8 (MB)`,
        );
        expect(existsSync(out)).toBe(false);
      }
    } finally {
      rmSync(work, { recursive: true, force: true });
    }
  });
});
