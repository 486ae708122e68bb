// The optional analyses through the command line (dist/cli/main.js, built by `npx tsc -p tsconfig.json`): a small
// forward-model study written as CSV with a manifest that asks for sweep rejection, group statistics, a mixed model
// and has paired-pulse and train series. Truth: the sweep corrupted here, and the fibres' refractory recovery
// (src/model/pulses.ts, direct cable simulation).
import { describe, it, expect, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync, readFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { rodentSciatic, drawFibers, simulateNerve, type NerveModel } from '../../src/model/nerve';
import { simulatePairedPulse, simulateTrain, pairedPulseTruth } from '../../src/model/pulses';
import { writeWide } from '../../src/io/write';

const cli = join(__dirname, '..', '..', 'dist', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'fascicle-integration-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const m0 = rodentSciatic();
const model = (f = 1): NerveModel => ({
  ...m0,
  populations: [{ ...m0.populations[0], count: 200, velocityFactor: m0.populations[0].velocityFactor * f }],
});
const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
const grid = { fs: 50000, t0Ms: -3, nSamples: 900 };
const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, pulseWidthMs: 0.05 };
const isis = [0.45, 0.5, 0.55, 0.6, 0.65, 0.7, 0.8, 0.9, 1, 1.2, 1.4, 1.7, 2, 2.5, 3, 4, 6];
const common = {
  series: 'distance',
  temperatureC: 37,
  concentration: 0,
  intensity: 20,
  intensityUnit: 'mA',
  pulseWidthMs: 0.05,
};
const files: unknown[] = [];
const preps = ['C1', 'C2', 'S1', 'S2'];
preps.forEach((p, i) => {
  const sweeps = [];
  for (const d of [20, 30])
    for (let r = 0; r < 3; r++) sweeps.push({ ...rc, distanceMm: d, pulsesMs: [0], conditions: { repeat: r } });
  const set = simulateNerve({ model: model(p.startsWith('S') ? 0.85 : 1), seed: 30 + i, grid, sweeps, nuisance: nz });
  if (p === 'C1') {
    // truth: sweep 2 of C1 held on an amplifier rail for 0.4 ms
    const at = 2 * set.nSamples + set.indexAt(3);
    for (let k = 0; k < 20; k++) set.data[at + k] = 4000;
  }
  writeWide(join(dir, `${p}-distance.csv`), set);
  files.push({
    path: `${p}-distance.csv`,
    format: 'delimited',
    conditions: { preparation: p, group: p.startsWith('S') ? 'slow' : 'control', ...common },
    sweeps: set.conditions.map((c) => ({ distanceMm: c.distanceMm, repeat: c.repeat })),
  });
});
const pp = simulatePairedPulse({
  model: model(),
  seed: 30,
  grid,
  base: rc,
  intervalsMs: isis,
  repeats: 2,
  nuisance: nz,
});
writeWide(join(dir, 'C1-paired-pulse.csv'), pp);
files.push({
  path: 'C1-paired-pulse.csv',
  format: 'delimited',
  conditions: { preparation: 'C1', group: 'control', ...common, series: 'paired-pulse', distanceMm: 20 },
  sweeps: pp.conditions.map((c) => ({ pulsePair: c.pulsePair, intervalMs: c.intervalMs, repeat: c.repeat })),
});
const tr = simulateTrain({
  model: model(),
  seed: 30,
  grid,
  base: rc,
  frequenciesHz: [400, 1000],
  pulses: 5,
  nuisance: nz,
});
writeWide(join(dir, 'C1-train.csv'), tr);
files.push({
  path: 'C1-train.csv',
  format: 'delimited',
  conditions: { preparation: 'C1', group: 'control', ...common, series: 'train', distanceMm: 20 },
  sweeps: tr.conditions.map((c) => ({ trainHz: c.trainHz, trainPulses: c.trainPulses, repeat: c.repeat })),
});
const manifest = {
  fascicleManifest: 1,
  study: 'integration test (invented forward-model data)',
  classPreset: 'mammalian',
  analysis: {
    baseline: { window: [-2.8, -0.2] },
    components: { classes: ['A-alpha/beta'] },
    reject: true,
    groups: { value: 'velocity_m_s', table: 'velocity' },
    mixed: { value: 'peak_ms', fixed: ['group', 'distanceMm'] },
  },
  files,
};
writeFileSync(join(dir, 'manifest.json'), JSON.stringify(manifest, null, 1));

describe('fascicle run with the optional analyses', () => {
  const out = join(dir, 'bundle');
  const r = spawnSync(process.execPath, [cli, 'run', join(dir, 'manifest.json'), '--out', out, '--quiet'], {
    encoding: 'utf8',
  });
  const table = (name: string) =>
    JSON.parse(readFileSync(join(out, 'tables', `${name}.json`), 'utf8')) as Record<string, unknown>[];
  it('exits 0 and writes every new table, the figures and the methods sentences', () => {
    expect(r.stderr + r.stdout).not.toMatch(/Error|error:/);
    expect(r.status).toBe(0);
    for (const t of [
      'sweep_qc',
      'sweep_qc_summary',
      'sweeps_removed',
      'paired_pulse',
      'paired_pulse_summary',
      'train',
      'train_summary',
      'group_summary',
      'group_tests',
      'group_points',
      'mixed_coefficients',
      'mixed_anova',
      'mixed_variance',
    ]) {
      expect(existsSync(join(out, 'tables', `${t}.csv`)), t).toBe(true);
    }
    for (const f of ['paired-pulse', 'train']) expect(existsSync(join(out, 'figures', `${f}.html`)), f).toBe(true);
    const m = readFileSync(join(out, 'methods.txt'), 'utf8');
    expect(m).toMatch(/of \d+ sweeps were excluded: 1 from C1 \(1 saturated/);
    expect(m).toMatch(/Paired-pulse recovery: the conditioning-alone response was subtracted/);
    expect(m).toMatch(/Trains: each response was measured in its own window/);
    expect(m).toMatch(/averaged within each preparation \(the unit of replication/);
    expect(m).toMatch(/linear mixed-effects model/);
  });
  it('the corrupted sweep is removed and listed; the recovery matches the simulated fibres', () => {
    const removed = table('sweeps_removed');
    expect(removed.map((q) => [q.preparation, q.file, q.file_sweep])).toContainEqual(['C1', 'C1-distance.csv', 2]);
    const truth = pairedPulseTruth(model(), drawFibers(model(), 30), rc, isis).find((t) => t.name === 'A-alpha/beta')!;
    const s = table('paired_pulse_summary').find((q) => q.class === 'A-alpha/beta')!;
    console.log('CLI paired pulse: R50', s.r50_ms, 'vs', truth.r50Ms, '; ARP', s.arp_ms, 'vs', truth.arpMs);
    expect(Math.abs((s.r50_ms as number) - truth.r50Ms!) / truth.r50Ms!).toBeLessThan(0.1);
    expect(table('group_points').length).toBe(4);
    expect(table('train_summary').length).toBe(2);
  });
  it('rerun reproduces every table, the new ones included', () => {
    const again = spawnSync(process.execPath, [cli, 'rerun', out], { encoding: 'utf8' });
    expect(again.stderr).toBe('');
    expect(again.status).toBe(0);
    expect(again.stdout).toMatch(/reproduced \d+ tables/);
  });
});
