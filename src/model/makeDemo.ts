/**
 * The demo study (invented scenario, for the demo and tests only): a made-up lab
 * tests "blocker demo-blocker-7", a made-up sodium-channel blocker, on sciatic nerves of four
 * rats (R1-R4). Per preparation: a stimulus-intensity series at 20 mm, supramaximal
 * sweeps at 20 and 40 mm, a blocker concentration series (baseline, 1-300 uM,
 * washout) and a temperature series (25-37 C). Written in the loaders' formats with
 * a manifest; the ground truth is written beside it (truth.json) for tests only.
 * Deterministic: the same seed gives the same bytes.
 *
 * Run: node dist/model/makeDemo.js data-demo
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import {
  rodentSciatic,
  simulateNerve,
  drawFibers,
  classTruth,
  type NerveModel,
  type RecordingConditions,
} from './nerve';
import { Rng } from './random';
import { writeWide, writeBinary } from '../io/write';
import type { Conditions } from '../sweeps/SweepSet';

export const DEMO_GRID = { fs: 50000, t0Ms: -20, nSamples: 4750 };
export const DEMO_NUISANCE = {
  noiseUv: 8,
  humUv: 30,
  humHz: 50,
  artifactUv: 3000,
  artifactHalfMa: 2,
  artifactTauMs: 0.06,
  pulseWidthMs: 0.05,
  driftUvPerMs: 0.05,
};
export const DEMO_INTENSITIES = [0.02, 0.04, 0.07, 0.1, 0.15, 0.2, 0.3, 0.5, 0.7, 1, 1.5, 2, 3, 5, 7, 10, 20];
export const DEMO_CONCENTRATIONS = [1, 3, 10, 30, 100, 300];
export const DEMO_TEMPERATURES = [25, 29, 33, 37];

export function makeDemo(outDir: string, seed = 20261201): void {
  mkdirSync(outDir, { recursive: true });
  const rng = new Rng(seed);
  const files: unknown[] = [];
  const truth: Record<string, unknown> = {
    note: 'Ground truth of the invented demo study; for tests only.',
    seed,
    preparations: {},
  };
  const base = rodentSciatic();
  for (let p = 0; p < 4; p++) {
    const prep = `R${p + 1}`;
    // preparation-to-preparation variation: IC50 (log-normal, SD 0.15 in ln) and velocity scale (+/-4%)
    const vScale = Math.exp(0.04 * rng.normal());
    const model: NerveModel = {
      ...base,
      populations: base.populations.map((c) => ({
        ...c,
        velocityFactor: c.velocityFactor * vScale,
        ic50: c.ic50 * Math.exp(0.15 * rng.normal()),
      })),
    };
    const pseed = seed + 101 * (p + 1);
    const fibers = drawFibers(model, pseed);
    truth.preparations = {
      ...(truth.preparations as object),
      [prep]: {
        q10Velocity: model.q10Velocity,
        utilisationMs: model.utilisationMs,
        classes: Object.fromEntries(DEMO_TEMPERATURES.map((T) => [T, classTruth(model, fibers, T)])),
      },
    };
    const sim = (sweeps: (RecordingConditions & { conditions?: Conditions })[], s: number) =>
      simulateNerve({ model, seed: pseed, grid: DEMO_GRID, sweeps, nuisance: DEMO_NUISANCE });
    let t = 0;
    const at = () => (t += 10);
    // 1. intensity series at 20 mm, 37 C, two repeats (CSV, comma)
    const isw = DEMO_INTENSITIES.flatMap((I) =>
      [0, 1].map((r) => ({
        intensity: I,
        distanceMm: 20,
        temperatureC: 37,
        concentration: 0,
        jitterMs: 0.003,
        conditions: { repeat: r },
      })),
    );
    const iset = sim(isw, 1);
    const iname = `${prep}-intensity.csv`;
    writeWide(join(outDir, iname), iset, { labels: isw.map((s, k) => `I${k + 1}`) });
    files.push({
      path: iname,
      format: 'delimited',
      conditions: {
        preparation: prep,
        series: 'intensity',
        distanceMm: 20,
        temperatureC: 37,
        concentration: 0,
        intensityUnit: 'mA',
        pulseWidthMs: 0.05,
        site: 'proximal',
      },
      sweeps: isw.map((s) => ({ intensity: s.intensity, repeat: s.conditions.repeat, acquiredS: at() })),
    });
    // 2. two distances at 20 mA (semicolon, decimal comma)
    const dsw = [20, 40].flatMap((d) =>
      [0, 1, 2, 3, 4, 5].map((r) => ({
        intensity: 20,
        distanceMm: d,
        temperatureC: 37,
        concentration: 0,
        jitterMs: 0.003,
        conditions: { repeat: r },
      })),
    );
    const dset = sim(dsw, 2);
    const dname = `${prep}-distance.csv`;
    writeWide(join(outDir, dname), dset, {
      delimiter: ';',
      decimalComma: true,
      labels: dsw.map((_, k) => `D${k + 1}`),
    });
    files.push({
      path: dname,
      format: 'delimited',
      conditions: {
        preparation: prep,
        series: 'distance',
        temperatureC: 37,
        concentration: 0,
        intensity: 20,
        intensityUnit: 'mA',
        pulseWidthMs: 0.05,
      },
      sweeps: dsw.map((s) => ({
        distanceMm: s.distanceMm,
        site: s.distanceMm === 20 ? 'proximal' : 'distal',
        repeat: s.conditions.repeat,
        acquiredS: at(),
      })),
    });
    // 3. blocker series at 20 mm (int16 binary)
    const epochs: { c: number; epoch: string }[] = [
      { c: 0, epoch: 'baseline' },
      ...DEMO_CONCENTRATIONS.map((c) => ({ c, epoch: 'drug' })),
      { c: 0, epoch: 'washout' },
    ];
    const bsw = epochs.flatMap((e) =>
      [0, 1, 2, 3].map((r) => ({
        intensity: 20,
        distanceMm: 20,
        temperatureC: 37,
        concentration: e.epoch === 'washout' ? 0 : e.c,
        jitterMs: 0.003,
        conditions: { repeat: r, epoch: e.epoch },
      })),
    );
    const bset = sim(bsw, 3);
    const bname = `${prep}-blocker`;
    const meta = writeBinary(join(outDir, bname + '.bin'), bset, 'int16', 0.5);
    writeFileSync(join(outDir, bname + '.json'), JSON.stringify({ data: bname + '.bin', ...meta }, null, 1) + '\n');
    files.push({
      path: bname + '.json',
      format: 'binary',
      conditions: {
        preparation: prep,
        series: 'dose',
        distanceMm: 20,
        temperatureC: 37,
        intensity: 20,
        intensityUnit: 'mA',
        pulseWidthMs: 0.05,
        drug: 'demo-blocker-7',
        concentrationUnit: 'uM',
      },
      sweeps: bsw.map((s) => ({
        concentration: s.concentration,
        epoch: s.conditions.epoch,
        repeat: s.conditions.repeat,
        acquiredS: at() * 6,
      })),
    });
    // 4. temperature series at 20 and 40 mm (float32 binary)
    const tsw = DEMO_TEMPERATURES.flatMap((T) =>
      [20, 40].flatMap((d) =>
        [0, 1, 2].map((r) => ({
          intensity: 20,
          distanceMm: d,
          temperatureC: T,
          concentration: 0,
          jitterMs: 0.003,
          conditions: { repeat: r },
        })),
      ),
    );
    const tset = sim(tsw, 4);
    const tname = `${prep}-temperature`;
    const tmeta = writeBinary(join(outDir, tname + '.bin'), tset, 'float32');
    writeFileSync(join(outDir, tname + '.json'), JSON.stringify({ data: tname + '.bin', ...tmeta }, null, 1) + '\n');
    files.push({
      path: tname + '.json',
      format: 'binary',
      conditions: {
        preparation: prep,
        series: 'temperature',
        intensity: 20,
        intensityUnit: 'mA',
        pulseWidthMs: 0.05,
        concentration: 0,
      },
      sweeps: tsw.map((s) => ({
        temperatureC: s.temperatureC,
        distanceMm: s.distanceMm,
        repeat: s.conditions.repeat,
        acquiredS: at(),
      })),
    });
  }
  truth.model = {
    q10Velocity: base.q10Velocity,
    classIc50: Object.fromEntries(base.populations.map((c) => [c.name, c.ic50])),
    hill: Object.fromEntries(base.populations.map((c) => [c.name, c.hill])),
  };
  const manifest = {
    fascicleManifest: 1,
    study: 'Demo: blocker demo-blocker-7 on rat sciatic nerve (invented data)',
    description: 'Invented demonstration study made by the fascicle forward model; no real animals or laboratory.',
    species: 'rat (simulated)',
    nerve: 'sciatic (simulated)',
    classPreset: 'mammalian',
    required: ['preparation', 'distanceMm', 'temperatureC', 'intensity'],
    analysis: {
      baseline: { window: [-19, -0.2] },
      artifact: { method: 'blank', window: [0, 0.12], bridge: 'linear' },
      hum: { frequency: 50, harmonics: 3, exclude: [[0, 72]] },
      filter: { btype: 'lowpass', cutoff: 10000, order: 4 },
      components: { preset: 'mammalian', earliestMs: 0.12 },
    },
    files,
  };
  writeFileSync(join(outDir, 'manifest.json'), JSON.stringify(manifest, null, 1) + '\n');
  writeFileSync(join(outDir, 'truth.json'), JSON.stringify(truth, null, 1) + '\n');
}

if (require.main === module) {
  const out = process.argv[2] ?? 'data-demo';
  const t0 = Date.now();
  makeDemo(out);
  console.log(`wrote the demo study to ${out} in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
}
