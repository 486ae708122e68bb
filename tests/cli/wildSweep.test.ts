// A glitch in one sweep must not cost the other sweeps their numbers (found by hostile input: one sample of
// 1e12 uV in one sweep of the demo's distance file left the whole preparation unmeasured, exit 4). The data are the
// invented demo files copied to a temporary folder (the copies are changed, never data-demo/); the expectation that
// the other sweeps are measured as before is common practice, no source.
import { describe, it, expect, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const root = join(__dirname, '..', '..');
const cliPath = join(root, 'dist', 'cli', 'main.js');
const work = mkdtempSync(join(tmpdir(), 'fascicle-wild-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

function study(spike: string | null): string {
  const dir = mkdtempSync(join(work, 'study-'));
  const m = JSON.parse(readFileSync(join(root, 'data-demo', 'manifest.json'), 'utf8'));
  m.files = m.files.filter((f: { path: string }) => f.path === 'R1-distance.csv');
  const lines = readFileSync(join(root, 'data-demo', 'R1-distance.csv'), 'utf8').split('\n');
  if (spike !== null) {
    const f = lines[1].split(';');
    f[1] = spike; // the first sweep's first sample (-20 ms, before the stimulus)
    lines[1] = f.join(';');
  }
  writeFileSync(join(dir, 'R1-distance.csv'), lines.join('\n'));
  writeFileSync(join(dir, 'manifest.json'), JSON.stringify(m));
  return dir;
}
const velocityRows = (dir: string) => {
  const r = spawnSync(process.execPath, [cliPath, 'run', join(dir, 'manifest.json'), '--out', join(dir, 'out')], {
    encoding: 'utf8',
  });
  const rows = JSON.parse(readFileSync(join(dir, 'out', 'tables', 'velocity.json'), 'utf8')) as Record<
    string,
    unknown
  >[];
  return { status: r.status, rows };
};

describe('fascicle run: one wild sweep', () => {
  it('a 1e12 uV sample in one sweep leaves the two-site and regression velocities of every class measured', () => {
    const clean = velocityRows(study(null));
    const wild = velocityRows(study('1000000000000'));
    expect(clean.status).toBe(0);
    expect(wild.status).toBe(0);
    const ok = (rows: Record<string, unknown>[]) =>
      rows
        .filter((r) => r.method !== 'single-site' && typeof r.velocity_m_s === 'number')
        .map((r) => `${r.method} ${r.class}`);
    expect(ok(clean.rows).length).toBeGreaterThan(0);
    expect(ok(wild.rows)).toEqual(ok(clean.rows));
  });
});
