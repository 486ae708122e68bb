import { describe, it, expect } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readNwb, readNwbTables, readManifest } from '../../src';

const root = join(__dirname, '..', '..');
const cli = (args: string[]) =>
  spawnSync(process.execPath, [join(root, 'dist', 'cli', 'main.js'), ...args], { encoding: 'utf8', cwd: root });

// The demo study is the project's own invented data: this checks the plumbing of --nwb (the NWB layout itself is
// checked against h5py-written files and hdmf's validator in tests/io/nwb.test.ts).
describe('fascicle run --nwb <file> [--nwb-raw]', () => {
  const dir = mkdtempSync(join(tmpdir(), 'fascicle-nwbrun-'));
  it('writes every sweep as acquired with its conditions and the result tables; a foreign file is never replaced', async () => {
    const nwb = join(dir, 'study.nwb');
    const r = cli(['run', 'data-demo/manifest.json', '--out', join(dir, 'b'), '--nwb', nwb, '--nwb-raw', '--quiet']);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/NWB: .*study\.nwb \(408 sweeps/);
    const back = await readNwb(nwb);
    const set = readManifest(join(root, 'data-demo/manifest.json'));
    expect(back.nSweeps).toBe(set.nSweeps);
    expect(Array.from(back.sweep(7))).toEqual(Array.from(set.sweep(7)));
    const tables = await readNwbTables(nwb);
    expect(Object.keys(tables)).toEqual(expect.arrayContaining(['components', 'velocity', 'flags']));
    // a collaborator sees the same columns in the NWB file as in the bundle's CSV files (snake_case, unit last)
    for (const [name, rows] of Object.entries(tables)) {
      if (!rows.length) continue;
      const header = readFileSync(join(dir, 'b', 'tables', `${name}.csv`), 'utf8')
        .split('\n')[0]
        .split(',');
      expect(Object.keys(rows[0]), name).toEqual(header);
    }
    expect(Object.keys(tables.thresholds[0])).toContain('lowest_detected_intensity_mA');
    const foreign = join(dir, 'mine.nwb');
    writeFileSync(foreign, 'not fascicle');
    const q = cli(['run', 'data-demo/manifest.json', '--out', join(dir, 'b'), '--nwb', foreign, '--quiet']);
    expect(q.status).not.toBe(0);
    expect(q.stderr).toMatch(/refusing to overwrite/);
    expect(readFileSync(foreign, 'utf8')).toBe('not fascicle');
    expect(cli(['run', 'data-demo/manifest.json', '--out', join(dir, 'b'), '--nwb-raw']).status).toBe(2);
  }, 300_000); // three runs of the demo study: minutes on a loaded machine
});
