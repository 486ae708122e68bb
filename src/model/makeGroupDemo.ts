/**
 * An invented two-group study for demonstrations and tests (no real lab or animals): six simulated rat sciatic
 * nerves (N1..N6), three per group, allocated at random from the seed. Group "treated" has A-alpha/beta fibres that
 * recover later (time scale of the class's Hodgkin-Huxley fibre x 0.8, so every refractory interval x 1.25) and
 * conduct 10% slower than "control" (invented effects). Only the A-alpha/beta class is simulated, on short sweeps
 * (-3 to 15 ms at 50 kHz), so the study is quick to make and to analyse in a notebook. Per nerve: a distance series
 * (20 and 30 mm, 3 repeats) and a paired-pulse series at 20 mm (17 intervals from 0.45 to 6 ms, test-alone and
 * conditioning-alone sweeps, 2 repeats), all at 20 mA (supramaximal), 37 C, with noise and a stimulus artifact. Sweep
 * 2 of N1's distance file is held on the amplifier rail for 0.4 ms (the quality-control truth).
 *
 * Blinded (the default), the manifest's `group` condition holds codes (K1, K2; which code is which group depends on
 * the seed) and says `"blinding": { "coded": true }`; the key (key.csv) and the ground truth (truth.json, which
 * names the groups) are written to a separate folder, outside the study. `blinded: false` writes the same data
 * files with the real labels and no blinding section (for comparing a blinded analysis with an open one).
 * Run: node dist/model/makeGroupDemo.js <study folder> <key folder>
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { rodentSciatic, drawFibers, simulateNerve, fiberVelocity, type NerveModel } from './nerve';
import { simulatePairedPulse, pairedPulseTruth } from './pulses';
import { writeWide } from '../io/write';
import { Rng } from './random';
import { OptionError } from '../errors';

export const GROUP_DEMO_INTERVALS = [0.45, 0.5, 0.55, 0.6, 0.65, 0.7, 0.8, 0.9, 1, 1.2, 1.4, 1.7, 2, 2.5, 3, 4, 6];
export const GROUP_DEMO_DISTANCES = [20, 30];
/** The invented treatment effects: refractory time scale and velocity factors of the treated group. */
export const GROUP_DEMO_EFFECT = { timeScale: 0.8, velocity: 0.9 };

export interface GroupDemo {
  /** paths written */
  manifest: string;
  key: string;
  truth: string;
  /** code -> group label (the key) */
  codes: Record<string, string>;
  /** preparation -> group label */
  groups: Record<string, string>;
}

export interface GroupDemoOptions {
  seed?: number;
  /** coded labels and a blinding section (default true) */
  blinded?: boolean;
}

/** Write the two-group study to studyDir and its key and truth to keyDir (module comment). */
export function makeGroupDemo(studyDir: string, keyDir: string, options: GroupDemoOptions = {}): GroupDemo {
  const seed = options.seed ?? 20261202;
  const blinded = options.blinded ?? true;
  if (resolve(studyDir) === resolve(keyDir))
    throw new OptionError('invalid keyDir: must differ from studyDir (the key is kept outside the study)');
  mkdirSync(studyDir, { recursive: true });
  mkdirSync(keyDir, { recursive: true });
  const rng = new Rng(seed);
  const labels = ['control', 'control', 'control', 'treated', 'treated', 'treated'];
  for (let i = labels.length - 1; i > 0; i--) {
    const j = Math.floor(rng.uniform() * (i + 1));
    [labels[i], labels[j]] = [labels[j], labels[i]];
  }
  const swap = rng.uniform() < 0.5;
  const codes: Record<string, string> = swap ? { K1: 'treated', K2: 'control' } : { K1: 'control', K2: 'treated' };
  const codeOf = (label: string) => Object.keys(codes).find((c) => codes[c] === label)!;
  const base = rodentSciatic();
  const a = base.populations[0];
  const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
  const grid = { fs: 50000, t0Ms: -3, nSamples: 900 };
  const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, pulseWidthMs: 0.05 };
  const common = { temperatureC: 37, concentration: 0, intensity: 20, intensityUnit: 'mA', pulseWidthMs: 0.05 };
  const files: unknown[] = [];
  const truth: Record<string, unknown> = {
    note: 'Ground truth of the invented two-group demo; for tests only. Keep it away from the blinded analyst.',
    seed,
    effect: GROUP_DEMO_EFFECT,
    codes,
    preparations: {},
  };
  const groups: Record<string, string> = {};
  labels.forEach((label, i) => {
    const prep = `N${i + 1}`;
    groups[prep] = label;
    const treated = label === 'treated';
    const vScale = Math.exp(0.04 * rng.normal()) * (treated ? GROUP_DEMO_EFFECT.velocity : 1);
    const ts = (a.refractory?.timeScale37 ?? 11) * (treated ? GROUP_DEMO_EFFECT.timeScale : 1);
    const model: NerveModel = {
      ...base,
      populations: [
        {
          ...a,
          count: 200,
          velocityFactor: a.velocityFactor * vScale,
          refractory: { ...a.refractory, timeScale37: ts },
        },
      ],
    };
    const pseed = seed + 101 * (i + 1);
    const group = blinded ? codeOf(label) : label;
    const sweeps = [];
    for (const d of GROUP_DEMO_DISTANCES)
      for (let r = 0; r < 3; r++) sweeps.push({ ...rc, distanceMm: d, pulsesMs: [0], conditions: { repeat: r } });
    const dist = simulateNerve({ model, seed: pseed, grid, sweeps, nuisance: nz });
    if (i === 0) {
      // QC truth: sweep 2 of N1 on the amplifier rail for 0.4 ms from 3 ms (after the responses)
      const at = 2 * dist.nSamples + dist.indexAt(3);
      for (let k = 0; k < 20; k++) dist.data[at + k] = 4000;
    }
    writeWide(join(studyDir, `${prep}-distance.csv`), dist);
    files.push({
      path: `${prep}-distance.csv`,
      format: 'delimited',
      conditions: { preparation: prep, group, series: 'distance', ...common },
      sweeps: dist.conditions.map((c) => ({ distanceMm: c.distanceMm, repeat: c.repeat })),
    });
    const pp = simulatePairedPulse({
      model,
      seed: pseed,
      grid,
      base: rc,
      intervalsMs: GROUP_DEMO_INTERVALS,
      repeats: 2,
      nuisance: nz,
    });
    writeWide(join(studyDir, `${prep}-paired-pulse.csv`), pp);
    files.push({
      path: `${prep}-paired-pulse.csv`,
      format: 'delimited',
      conditions: { preparation: prep, group, series: 'paired-pulse', distanceMm: 20, ...common },
      sweeps: pp.conditions.map((c) => ({ pulsePair: c.pulsePair, intervalMs: c.intervalMs, repeat: c.repeat })),
    });
    const fibers = drawFibers(model, pseed);
    const t = pairedPulseTruth(model, fibers, { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0 })[0];
    const v = fibers.map((f) => fiberVelocity(model, f, 37));
    (truth.preparations as Record<string, unknown>)[prep] = {
      group: label,
      code: codeOf(label),
      arpMs: t.arpMs,
      r50Ms: t.r50Ms,
      r90Ms: t.r90Ms,
      velocityMaxMs: Math.max(...v),
      corruptedSweeps: i === 0 ? [{ file: `${prep}-distance.csv`, fileSweep: 2, why: 'saturated (rail)' }] : [],
    };
  });
  const manifest = {
    fascicleManifest: 1,
    study: 'Demo: a two-group refractory study on rat sciatic nerve (invented data)',
    description: 'Invented demonstration study made by the fascicle forward model; no real animals or laboratory.',
    species: 'rat (simulated)',
    nerve: 'sciatic (simulated)',
    classPreset: 'mammalian',
    required: ['preparation', 'group', 'distanceMm', 'temperatureC'],
    ...(blinded ? { blinding: { coded: true, condition: 'group' } } : {}),
    analysis: {
      baseline: { window: [-2.8, -0.2] },
      components: { classes: ['A-alpha/beta'] },
      reject: true,
      groups: { value: 'velocity_m_s', table: 'velocity' },
      mixed: { value: 'peak_ms', fixed: ['group', 'distanceMm'], by: ['class', 'series'] },
    },
    files,
  };
  const paths = {
    manifest: join(studyDir, 'manifest.json'),
    key: join(keyDir, 'key.csv'),
    truth: join(keyDir, 'truth.json'),
  };
  writeFileSync(paths.manifest, JSON.stringify(manifest, null, 1) + '\n');
  writeFileSync(
    paths.key,
    'code,label\n' +
      Object.keys(codes)
        .sort()
        .map((c) => `${c},${codes[c]}\n`)
        .join(''),
  );
  writeFileSync(paths.truth, JSON.stringify(truth, null, 1) + '\n');
  return { ...paths, codes, groups };
}

if (require.main === module) {
  const [study = 'out/group-study', key = 'out/group-study-key'] = process.argv.slice(2);
  const t0 = Date.now();
  makeGroupDemo(study, key);
  console.log(`wrote the two-group demo to ${study} (key and truth in ${key}) in ${(Date.now() - t0) / 1000} s`);
}
