/**
 * An invented paired-pulse and train study for demonstrations (no real lab or animals): two simulated rat sciatic
 * nerves (P1, P2), each with a paired-pulse series (conditioning and test at 20 mA, 29 interstimulus intervals from
 * 0.45 to 10 ms, two repeats, test-alone and conditioning-alone sweeps) and trains (6 pulses at 100, 400 and 1000 Hz),
 * at 20 mm and 37 C, with the demo's noise, hum, drift and stimulus artifacts (one per pulse), every sweep -20 to 80 ms at 50 kHz. Written as CSV with a
 * manifest (series 'paired-pulse' and 'train'); the ground truth (src/model/pulses.ts) beside it in truth.json, for
 * tests only. Deterministic for a seed. Run: node dist/model/makeRecoveryDemo.js <folder>
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { rodentSciatic, drawFibers, type NerveModel } from './nerve';
import { simulatePairedPulse, simulateTrain, pairedPulseTruth, trainTruth } from './pulses';
import { writeWide } from '../io/write';
import { DEMO_NUISANCE } from './makeDemo';
import { Rng } from './random';

export const RECOVERY_INTERVALS = [
  0.45, 0.5, 0.55, 0.6, 0.65, 0.7, 0.75, 0.8, 0.9, 1, 1.2, 1.4, 1.6, 1.8, 1.9, 1.95, 2, 2.05, 2.1, 2.2, 2.4, 2.7, 3,
  3.5, 4, 5, 6.5, 8, 10,
];
export const RECOVERY_TRAIN_HZ = [100, 400, 1000];

/** Write the study to outDir; returns the manifest's `files` entries. */
export function makeRecoveryDemo(outDir: string, seed = 20261202): unknown[] {
  mkdirSync(outDir, { recursive: true });
  const rng = new Rng(seed);
  const base = rodentSciatic();
  const files: unknown[] = [];
  const truth: Record<string, unknown> = {
    note: 'Ground truth of the invented paired-pulse and train demo; for tests only.',
    seed,
    preparations: {},
  };
  const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, jitterMs: 0.003 };
  for (let p = 0; p < 2; p++) {
    const prep = `P${p + 1}`;
    const vScale = Math.exp(0.04 * rng.normal());
    const model: NerveModel = {
      ...base,
      populations: base.populations.map((c) => ({
        ...c,
        count: Math.round(c.count / 2),
        velocityFactor: c.velocityFactor * vScale,
      })),
    };
    const pseed = seed + 101 * (p + 1);
    const grid = { fs: 50000, t0Ms: -20, nSamples: 5000 };
    const pp = simulatePairedPulse({
      model,
      seed: pseed,
      grid,
      base: rc,
      intervalsMs: RECOVERY_INTERVALS,
      repeats: 2,
      nuisance: DEMO_NUISANCE,
    });
    const pname = `${prep}-paired-pulse.csv`;
    writeWide(join(outDir, pname), pp, { labels: pp.conditions.map((_, k) => `S${k + 1}`) });
    files.push({
      path: pname,
      format: 'delimited',
      conditions: {
        preparation: prep,
        series: 'paired-pulse',
        distanceMm: 20,
        temperatureC: 37,
        concentration: 0,
        intensity: 20,
        intensityUnit: 'mA',
        pulseWidthMs: 0.05,
      },
      sweeps: pp.conditions.map((c) => ({ pulsePair: c.pulsePair, intervalMs: c.intervalMs, repeat: c.repeat })),
    });
    const tr = simulateTrain({
      model,
      seed: pseed,
      grid,
      base: rc,
      frequenciesHz: RECOVERY_TRAIN_HZ,
      pulses: 6,
      repeats: 2,
      nuisance: DEMO_NUISANCE,
    });
    const tname = `${prep}-train.csv`;
    writeWide(join(outDir, tname), tr, { labels: tr.conditions.map((_, k) => `T${k + 1}`) });
    files.push({
      path: tname,
      format: 'delimited',
      conditions: {
        preparation: prep,
        series: 'train',
        distanceMm: 20,
        temperatureC: 37,
        concentration: 0,
        intensity: 20,
        intensityUnit: 'mA',
        pulseWidthMs: 0.05,
      },
      sweeps: tr.conditions.map((c) => ({ trainHz: c.trainHz, trainPulses: c.trainPulses, repeat: c.repeat })),
    });
    const fibers = drawFibers(model, pseed);
    const noJitter = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0 };
    (truth.preparations as Record<string, unknown>)[prep] = {
      pairedPulse: pairedPulseTruth(model, fibers, noJitter, RECOVERY_INTERVALS),
      trains: RECOVERY_TRAIN_HZ.map((hz) => trainTruth(model, fibers, noJitter, hz, 6)),
    };
  }
  const manifest = {
    fascicleManifest: 1,
    study: 'Demo: paired-pulse recovery and stimulus trains on rat sciatic nerve (invented data)',
    description: 'Invented demonstration study made by the fascicle forward model; no real animals or laboratory.',
    species: 'rat (simulated)',
    nerve: 'sciatic (simulated)',
    classPreset: 'mammalian',
    required: ['preparation', 'distanceMm', 'temperatureC', 'intensity'],
    analysis: {
      baseline: { window: [-19, -0.2] },
      hum: { frequency: 50, harmonics: 3, exclude: [[0, 60]] },
      components: { preset: 'mammalian', earliestMs: 0.12 },
    },
    files,
  };
  writeFileSync(join(outDir, 'manifest.json'), JSON.stringify(manifest, null, 1) + '\n');
  writeFileSync(join(outDir, 'truth.json'), JSON.stringify(truth, null, 1) + '\n');
  return files;
}

if (require.main === module) {
  const out = process.argv[2] ?? 'out/recovery-demo';
  const t0 = Date.now();
  makeRecoveryDemo(out);
  console.log(`wrote the paired-pulse and train demo to ${out} in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
}
