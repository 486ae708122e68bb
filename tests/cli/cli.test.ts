import { describe, it, expect, beforeAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { cpSync, mkdirSync, mkdtempSync, readFileSync, writeFileSync, existsSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeBundle, setBeforeWrite, csvCell, toCsv } from '../../src/report/bundle';
import { model, writeBinary } from '../../src';

const root = join(__dirname, '..', '..');
const cliPath = join(root, 'dist', 'cli', 'main.js');
const run = (args: string[]) => spawnSync(process.execPath, [cliPath, ...args], { encoding: 'utf8' });
const work = mkdtempSync(join(tmpdir(), 'fascicle-cli-'));

describe('fascicle command line', () => {
  beforeAll(() => {
    // a private copy of the demo study (tests edit inputs)
    cpSync(join(root, 'data-demo'), join(work, 'study'), { recursive: true });
  });
  it('--help for every command, usage errors exit 2', () => {
    for (const c of [['--help'], ['run', '--help'], ['merge', '--help'], ['rerun', '--help']]) {
      const r = run(c);
      expect(r.status).toBe(0);
      expect(r.stdout).toMatch(/fascicle/);
    }
    expect(run(['frobnicate']).status).toBe(2);
    expect(run(['run', 'x.json']).stderr).toMatch(/needs --out/);
    expect(run(['run', 'x.json', '--out', 'o', '--jobs', 'zero']).status).toBe(2);
    expect(run(['run', 'x.json', '--out', 'o', '--shard', '3/2']).status).toBe(2);
  });
  it('a missing manifest exits 3 and names the file', () => {
    const r = run(['run', join(work, 'nope.json'), '--out', join(work, 'o')]);
    expect(r.status).toBe(3);
    expect(r.stderr).toMatch(/nope\.json: cannot open file/);
  });
  it('runs the study, shards merge to the unsharded bundle, and a rerun reproduces every table', () => {
    const m = join(work, 'study', 'manifest.json');
    const full = join(work, 'full');
    const r = run(['run', m, '--out', full, '--quiet', '--no-figures']);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/bundle written to/);
    for (const i of [1, 2, 3])
      expect(run(['run', m, '--out', join(work, `s${i}`), '--shard', `${i}/3`, '--quiet']).status).toBe(0);
    const mr = run(['merge', join(work, 's1'), join(work, 's2'), join(work, 's3'), '--out', join(work, 'merged')]);
    expect(mr.status, mr.stderr).toBe(0);
    for (const f of readdirSync(join(full, 'tables')))
      expect(readFileSync(join(work, 'merged', 'tables', f), 'utf8'), f).toBe(
        readFileSync(join(full, 'tables', f), 'utf8'),
      );
    const j2 = join(work, 'jobs2');
    expect(run(['run', m, '--out', j2, '--quiet', '--jobs', '2', '--no-figures']).status).toBe(0);
    for (const f of readdirSync(join(full, 'tables')))
      expect(readFileSync(join(j2, 'tables', f), 'utf8'), f).toBe(readFileSync(join(full, 'tables', f), 'utf8'));
    const rr = run(['rerun', full]);
    expect(rr.status, rr.stderr).toBe(0);
    // tables counted once (each is a CSV and a JSON file)
    const said = /reproduced (\d+) tables \((\d+) files, CSV and JSON\) and the methods text exactly/.exec(rr.stdout);
    expect(said, rr.stdout).not.toBeNull();
    expect(Number(said![2])).toBe(2 * Number(said![1]));
    expect(Number(said![1])).toBe(readdirSync(join(full, 'tables')).filter((f) => f.endsWith('.csv')).length);
    // edit one byte of one input: the rerun names that file
    const victim = join(work, 'study', 'R2-distance.csv');
    const b = readFileSync(victim);
    b[b.length - 3] = b[b.length - 3] === 0x31 ? 0x32 : 0x31;
    writeFileSync(victim, b);
    const bad = run(['rerun', full]);
    expect(bad.status).toBe(3);
    expect(bad.stderr).toMatch(/R2-distance\.csv: the input file has changed/);
    const prov = JSON.parse(readFileSync(join(full, 'provenance.json'), 'utf8'));
    expect(prov.inputs.length).toBe(25);
    expect(prov.steps.map((s: { verb: string }) => s.verb)).toEqual(
      expect.arrayContaining(['readManifest', 'baseline', 'removeArtifact', 'removeHum', 'filter', 'components']),
    );
    const methods = readFileSync(join(full, 'methods.txt'), 'utf8');
    expect(methods).toMatch(/4th-order Butterworth filter \(cutoff 10 kHz/);
    expect(methods).toMatch(/zero phase/);
    expect(methods).toMatch(/Hill 1910/);
  }, 300_000);
});

describe('pulse-width series on the command line', () => {
  it('a manifest with a pulse-width series gives strength-duration tables and methods (forward-model data; self-consistency)', () => {
    const dir = join(work, 'sd');
    mkdirSync(dir, { recursive: true });
    const widths = [0.02, 0.05, 0.1, 0.2, 0.5];
    const intens = Array.from({ length: 22 }, (_, k) => 0.01 * 10 ** (k * 0.15));
    const sweeps = widths.flatMap((w) =>
      intens.map((I) => ({ intensity: I, pulseWidthMs: w, distanceMm: 20, temperatureC: 37, concentration: 0 })),
    );
    const s = model.simulateNerve({
      model: model.rodentSciatic(),
      seed: 11,
      grid: { fs: 50000, t0Ms: -2, nSamples: 1500 },
      sweeps,
      nuisance: { noiseUv: 3 },
    });
    const meta = writeBinary(join(dir, 'pw.bin'), s, 'float32');
    writeFileSync(join(dir, 'pw.json'), JSON.stringify({ data: 'pw.bin', ...meta }));
    writeFileSync(
      join(dir, 'manifest.json'),
      JSON.stringify({
        fascicleManifest: 1,
        analysis: { baseline: { window: [-2, -0.1] }, components: { earliestMs: 0.1 } },
        files: [
          {
            path: 'pw.json',
            conditions: {
              preparation: 'S1',
              series: 'pulse-width',
              distanceMm: 20,
              temperatureC: 37,
              concentration: 0,
            },
            sweeps: sweeps.map((q) => ({ intensity: q.intensity, pulseWidthMs: q.pulseWidthMs })),
          },
        ],
      }),
    );
    const out = join(work, 'sd-out');
    const r = run(['run', join(dir, 'manifest.json'), '--out', out, '--quiet', '--no-figures']);
    expect(r.status, r.stderr).toBe(0);
    const rows = JSON.parse(readFileSync(join(out, 'tables', 'strength_duration.json'), 'utf8')) as Record<
      string,
      number | string
    >[];
    const a = rows.find((q) => q.class === 'A-alpha/beta')!;
    expect(Math.abs((a.chronaxie_ms as number) / 0.15 - 1)).toBeLessThan(0.1); // simulated chronaxie 0.15 ms
    expect(readFileSync(join(out, 'methods.txt'), 'utf8')).toMatch(/Weiss's law/);
    // recruitment is fitted per pulse width, not across widths
    const rec = JSON.parse(readFileSync(join(out, 'tables', 'recruitment.json'), 'utf8')) as Record<string, unknown>[];
    expect(new Set(rec.map((q) => q.pulse_width_ms)).size).toBe(widths.length);
  });
});

describe('bundle safety', () => {
  it('neutralises spreadsheet formulas and keeps hostile labels inert', () => {
    expect(csvCell('=HYPERLINK("x")')).toBe(`"'=HYPERLINK(""x"")"`);
    expect(csvCell('+1+1')).toBe("'+1+1");
    expect(csvCell('-cmd')).toBe("'-cmd");
    expect(csvCell('@SUM(A1)')).toBe("'@SUM(A1)");
    expect(csvCell(-1.5)).toBe('-1.5');
    expect(toCsv([{ label: '<img src=x onerror=alert(1)>', v: 1 }])).toBe('label,v\n<img src=x onerror=alert(1)>,1\n');
  });
  it('an export that fails midway leaves the old bundle untouched, or none', () => {
    const dir = join(work, 'atomic');
    writeBundle(dir, {
      tables: { a: [{ x: 1 }] },
      methods: 'old',
      provenance: { package: 'fascicle', version: '0', node: '', inputs: [], steps: [] },
    });
    let n = 0;
    setBeforeWrite(() => {
      if (++n === 3) throw new Error('disk full (simulated)');
    });
    expect(() =>
      writeBundle(dir, {
        tables: { a: [{ x: 2 }], b: [{ y: 1 }] },
        methods: 'new',
        provenance: { package: 'fascicle', version: '0', node: '', inputs: [], steps: [] },
      }),
    ).toThrow(/disk full/);
    setBeforeWrite(null);
    expect(readFileSync(join(dir, 'methods.txt'), 'utf8')).toBe('old');
    expect(existsSync(join(dir, 'tables', 'b.csv'))).toBe(false);
    expect(readdirSync(work).filter((f) => f.includes('.tmp-'))).toEqual([]);
    const fresh = join(work, 'fresh');
    setBeforeWrite(() => {
      throw new Error('fail');
    });
    expect(() =>
      writeBundle(fresh, {
        tables: {},
        methods: 'x',
        provenance: { package: 'fascicle', version: '0', node: '', inputs: [], steps: [] },
      }),
    ).toThrow();
    setBeforeWrite(null);
    expect(existsSync(fresh)).toBe(false);
  });
});

describe('results describe themselves', () => {
  it('provenance() lists every step with its options and the inputs with SHA-256; methods() is plain English', async () => {
    const { readManifest } = await import('../../src');
    const t = readManifest(join(root, 'data-demo', 'manifest.json'))
      .where({ preparation: 'R1', series: 'distance' })
      .baseline({ window: [-19, -0.2] })
      .lowpass(8000)
      .components({ earliestMs: 0.12 });
    const v = t.velocity();
    const p = v.provenance();
    expect(p.inputs.every((s) => /^[0-9a-f]{64}$/.test(s.sha256))).toBe(true);
    expect(p.steps.map((s) => s.verb)).toEqual([
      'readManifest',
      'where',
      'baseline',
      'filter',
      'components',
      'velocity',
    ]);
    expect(p.steps[3].options).toMatchObject({ btype: 'lowpass', cutoff: 8000, order: 4, padlen: 15 });
    const m = v.methods();
    expect(m).toMatch(/4th-order Butterworth filter \(cutoff 8 kHz/);
    expect(m).not.toMatch(/removeArtifact|lowpass\(/);
    const dir = join(work, 'table-bundle');
    t.exportBundle(dir);
    expect(readFileSync(join(dir, 'tables', 'components.csv'), 'utf8').split('\n')[0]).toMatch(/amplitude_uV/);
  });
});
