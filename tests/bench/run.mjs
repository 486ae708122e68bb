// Benchmarks: printed figures, never asserted. Run with `npm run bench` (builds first).
// Sizes follow the issues: 1,000 sweeps x 20,000 samples for loading and conditioning.
import { writeFileSync, mkdtempSync, rmSync, statSync, openSync, writeSync, closeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync, execFileSync } from 'node:child_process';
import { createRequire } from 'node:module';
const require = createRequire(import.meta.url);
const f = require('../../dist/index.js');
import { runScipyComparison } from './scipy.mjs';

const dir = mkdtempSync(join(tmpdir(), 'fascicle-bench-'));
const S = Number(process.env.BENCH_SWEEPS ?? 1000),
  N = Number(process.env.BENCH_SAMPLES ?? 20000);
const fs = 50000;
const mb = (b) => (b / 1e6).toFixed(1);
const line = (k, v) => console.log(`${k.padEnd(54)} ${v}`);
const targetNote = (ok) => (ok ? 'meets target' : 'BELOW target');
console.log(`fascicle ${f.VERSION} benchmarks on ${require('node:os').cpus().length} cores, Node ${process.version}`);
if (process.env.BENCH_SCIPY !== '0') runScipyComparison(); // BENCH_SCIPY=0 skips the side-by-side table

// --- synthetic data: a deterministic sweep pattern with a fake artifact
function sample(s, i) {
  const t = -2 + (i * 1000) / fs;
  const art =
    t >= 0 && t < 0.1
      ? 800 * Math.tanh(0.2 * ((s % 20) + 1))
      : t >= 0.1
        ? 400 * Math.tanh(0.2 * ((s % 20) + 1)) * Math.exp(-(t - 0.1) / 0.08)
        : 0;
  const resp = s % 20 > 3 ? 300 * Math.exp(-0.5 * ((t - 1.2) / 0.15) ** 2) : 0;
  return (
    Math.round(
      (art + resp + 5 * Math.sin(i * 12.9898 + s * 78.233) + 2 * Math.sin((2 * Math.PI * 50 * t) / 1000)) * 100,
    ) / 100
  );
}

// --- CSV (wide) and binary files
const csvPath = join(dir, 'big.csv');
{
  const fd = openSync(csvPath, 'w');
  writeSync(fd, ['time (ms)', ...Array.from({ length: S }, (_, s) => `s${s} (uV)`)].join(',') + '\n');
  const row = new Array(S + 1);
  let chunk = '';
  for (let i = 0; i < N; i++) {
    row[0] = (-2 + (i * 1000) / fs).toFixed(2);
    for (let s = 0; s < S; s++) row[s + 1] = sample(s, i);
    chunk += row.join(',') + '\n';
    if (chunk.length > 1 << 22) {
      writeSync(fd, chunk);
      chunk = '';
    }
  }
  writeSync(fd, chunk);
  closeSync(fd);
}
const binPath = join(dir, 'big.bin');
{
  const a = new Float32Array(S * N);
  for (let s = 0; s < S; s++) for (let i = 0; i < N; i++) a[s * N + i] = sample(s, i);
  writeFileSync(binPath, new Uint8Array(a.buffer));
  writeFileSync(
    join(dir, 'big.json'),
    JSON.stringify({ data: 'big.bin', dtype: 'float32', nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV' }),
  );
}
function timed(fn) {
  global.gc?.();
  const m0 = process.memoryUsage();
  const t0 = process.hrtime.bigint();
  const r = fn();
  const t = Number(process.hrtime.bigint() - t0) / 1e9;
  const m1 = process.memoryUsage();
  return { r, t, dArray: m1.arrayBuffers - m0.arrayBuffers, rss: m1.rss };
}

console.log('\n== loading (issue: CSV >= 150 MB/s, binary >= 1 GB/s, set <= 1.2 x sample bytes)');
const csvBytes = statSync(csvPath).size;
let best = Infinity,
  set;
for (let k = 0; k < 3; k++) {
  const x = timed(() => f.readDelimited(csvPath));
  if (x.t < best) {
    best = x.t;
    set = x.r;
  }
}
const sampleBytes = S * N * 8;
line(
  `CSV ${mb(csvBytes)} MB, ${S} x ${N}`,
  `${(csvBytes / 1e6 / best).toFixed(0)} MB/s, ${((S * N) / best / 1e6).toFixed(1)} M samples/s (${targetNote(csvBytes / 1e6 / best >= 150)})`,
);
line(
  'loaded set: data bytes / sample bytes (float64)',
  `${(set.data.byteLength / sampleBytes).toFixed(3)} (${targetNote(set.data.byteLength / sampleBytes <= 1.2)})`,
);
set = null;
const binBytes = statSync(binPath).size;
best = Infinity;
let bset;
for (let k = 0; k < 5; k++) {
  const x = timed(() => f.readBinary(join(dir, 'big.json')));
  if (x.t < best) {
    best = x.t;
    bset = x.r;
  }
}
line(
  `binary float32 ${mb(binBytes)} MB`,
  `${(binBytes / 1e6 / best).toFixed(0)} MB/s, ${((S * N) / best / 1e6).toFixed(0)} M samples/s (${targetNote(binBytes / 1e9 / best >= 1)})`,
);
{
  const a = new Float64Array(S * N);
  for (let s = 0; s < S; s++) for (let i = 0; i < N; i++) a[s * N + i] = sample(s, i);
  writeFileSync(join(dir, 'big64.bin'), new Uint8Array(a.buffer));
  writeFileSync(
    join(dir, 'big64.json'),
    JSON.stringify({ data: 'big64.bin', dtype: 'float64', nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV' }),
  );
  let b64 = Infinity;
  for (let k = 0; k < 5; k++) {
    const x = timed(() => f.readBinary(join(dir, 'big64.json')));
    b64 = Math.min(b64, x.t);
  }
  line(
    `binary float64 ${mb(S * N * 8)} MB`,
    `${((S * N * 8) / 1e6 / b64).toFixed(0)} MB/s, ${((S * N) / b64 / 1e6).toFixed(0)} M samples/s (${targetNote((S * N * 8) / 1e9 / b64 >= 1)})`,
  );
}
{
  // int16 with a gain, the usual acquisition format: a quarter of the bytes of the float64 samples it becomes
  const a = new Int16Array(S * N);
  for (let s = 0; s < S; s++) for (let i = 0; i < N; i++) a[s * N + i] = Math.round(sample(s, i) * 10);
  writeFileSync(join(dir, 'big16.bin'), new Uint8Array(a.buffer));
  writeFileSync(
    join(dir, 'big16.json'),
    JSON.stringify({
      data: 'big16.bin',
      dtype: 'int16',
      gain: 0.1,
      nSweeps: S,
      nSamples: N,
      fs,
      t0Ms: -2,
      units: 'uV',
    }),
  );
  let b16 = Infinity;
  for (let k = 0; k < 5; k++) {
    const x = timed(() => f.readBinary(join(dir, 'big16.json')));
    b16 = Math.min(b16, x.t);
  }
  line(
    `binary int16 ${mb(S * N * 2)} MB (with gain)`,
    `${((S * N * 2) / 1e6 / b16).toFixed(0)} MB/s, ${((S * N) / b16 / 1e6).toFixed(0)} M samples/s (${targetNote((S * N * 2) / 1e9 / b16 >= 1)})`,
  );
}
{
  // the floor under every widening load: the first write to each page of a fresh float64 result
  let tf = Infinity;
  for (let k = 0; k < 5; k++)
    tf = Math.min(
      tf,
      timed(() => {
        const a = new Float64Array(S * N);
        for (let i = 0; i < a.length; i += 512) a[i] = 1;
        return a.length;
      }).t,
    );
  line(
    `first touch of a fresh ${mb(S * N * 8)} MB array (1 thread)`,
    `${(tf * 1000).toFixed(0)} ms (page faults: the floor of widening loads)`,
  );
}
line('peak RSS after loading', `${mb(process.memoryUsage().rss)} MB`);

console.log('\n== conditioning: 4th-order zero-phase low-pass + baseline + template artifact subtraction');
const withI = bset.create({
  conditions: bset.conditions.map((c, s) => ({ ...c, preparation: 'P', intensity: (s % 20) + 1 })),
});
const chain = () =>
  withI
    .baseline({ window: [-2, -0.1] })
    .removeArtifact({ method: 'template', window: [0, 0.3], maxIntensity: 3 })
    .lowpass(5000, 4).data;
const T = f.threads();
best = Infinity;
for (let k = 0; k < 5; k++) best = Math.min(best, timed(chain).t);
line(
  `fascicle ${S} x ${N} (${T} thread${T > 1 ? 's' : ''})`,
  `${best.toFixed(2)} s, ${((S * N) / best / 1e6).toFixed(1)} M samples/s`,
);
f.setThreads(1);
let best1 = Infinity;
for (let k = 0; k < 5; k++) best1 = Math.min(best1, timed(chain).t);
f.setThreads(T);
line(`fascicle ${S} x ${N} (1 thread)`, `${best1.toFixed(2)} s, ${((S * N) / best1 / 1e6).toFixed(1)} M samples/s`);
const py = spawnSync(
  'python3',
  [
    '-c',
    `
import numpy as np, time
from scipy import signal
x = np.fromfile(${JSON.stringify(binPath)}, dtype=np.float32).astype(np.float64).reshape(${S}, ${N})
fs=${fs}; t=-2+np.arange(${N})*1000/fs
I=(np.arange(${S})%20)+1
best=1e9
for k in range(5):
    t0=time.perf_counter()
    y = x - x[:, t<=-0.1].mean(axis=1, keepdims=True)
    T = y[I<=3].mean(axis=0)
    w=(t>=0)&(t<=0.3)
    a=(y[:, w]@T[w])/(T[w]@T[w])
    y = y - a[:,None]*T[None,:]
    sos=signal.butter(4, 5000, fs=fs, output='sos')
    y = signal.sosfiltfilt(sos, y, axis=1)
    best=min(best, time.perf_counter()-t0)
print(best)
`,
  ],
  { encoding: 'utf8' },
);
if (py.status === 0) {
  const tp = Number(py.stdout.trim());
  line(
    'SciPy (sosfiltfilt, NumPy) same work, same data',
    `${tp.toFixed(2)} s, ${((S * N) / tp / 1e6).toFixed(1)} M samples/s`,
  );
  line(
    'ratio SciPy time / fascicle time',
    `${(tp / best).toFixed(2)} (${targetNote(tp / best >= 1)}: target >= 1); 1 thread: ${(tp / best1).toFixed(2)}`,
  );
} else line('SciPy comparison', 'skipped (python3 with SciPy not found)');
{
  // other conditioning steps on the same 1000 x 20000 set (fascicle only)
  const tHum = timed(() => withI.removeHum({ frequency: 50, harmonics: 5 }).data).t;
  const tDet = timed(() => withI.removeHum({ harmonics: 5 }).data).t;
  const tRes = timed(() => withI.resample({ fs: 20000 }).data).t;
  line(
    `hum removal, 50 Hz + 4 harmonics, ${S} x ${N}`,
    `${tHum.toFixed(2)} s (frequency detected: ${tDet.toFixed(2)} s)`,
  );
  line(`resample 50 -> 20 kHz (polyphase FIR), ${S} x ${N}`, `${tRes.toFixed(2)} s`);
}
bset = null;

{
  // measuring: 300 simulated sweeps at 20, 30 and 40 mm (the simulation is not timed)
  const sw = Array.from({ length: 300 }, (_, k) => ({
    intensity: 20,
    distanceMm: [20, 30, 40][k % 3],
    temperatureC: 37,
    concentration: 0,
    conditions: { preparation: `P${k % 4}` },
  }));
  const sim = f.model.simulateNerve({
    model: f.model.rodentSciatic(),
    seed: 2,
    grid: { fs, t0Ms: -2, nSamples: N },
    sweeps: sw,
    nuisance: { noiseUv: 5 },
  });
  const c = sim.baseline({ window: [-2, -0.1] }).lowpass(10000);
  const tc = timed(() => c.components({ preset: 'mammalian' }));
  const tv = timed(() => tc.r.velocity());
  console.log('\n== measuring (300 simulated sweeps x 20000 samples, 3 distances)');
  line('components (3 classes)', `${tc.t.toFixed(2)} s`);
  line('velocity (single-site, two-site with cross-correlation, regression)', `${tv.t.toFixed(2)} s`);
}

console.log('\n== forward model');
let x = timed(() => f.makeDemo(join(dir, 'demo')));
line('synthesize the whole demo study (4 preparations)', `${x.t.toFixed(1)} s (target < 60 s)`);
x = timed(() => f.model.simulateCable({ diameterUm: 476, lengthMm: 50, dxMm: 0.1, dtMs: 0.005, temperatureC: 18.5 }));
line(
  'one 50 mm HH cable (squid axon, dx 0.1 mm, dt 0.005 ms)',
  `${x.t.toFixed(2)} s, velocity ${x.r.velocity.toFixed(2)} m/s`,
);

console.log('\n== whole study on the command line');
const cli = join(process.cwd(), 'dist', 'cli', 'main.js');
for (const jobs of [1, 2]) {
  const t0 = Date.now();
  execFileSync(process.execPath, [
    cli,
    'run',
    'data-demo/manifest.json',
    '--out',
    join(dir, `bundle${jobs}`),
    '--jobs',
    String(jobs),
    '--quiet',
  ]);
  line(`fascicle run data-demo --jobs ${jobs}`, `${((Date.now() - t0) / 1000).toFixed(1)} s`);
}
// a 100-preparation synthetic study from the forward model (distance series only)
{
  const sdir = join(dir, 'big-study');
  require('node:fs').mkdirSync(sdir);
  const nerve = f.model.rodentSciatic();
  const files = [];
  const t0 = Date.now();
  for (let p = 0; p < 100; p++) {
    const sweeps = [20, 40].flatMap((d) =>
      [0, 1, 2].map((r) => ({
        intensity: 20,
        distanceMm: d,
        temperatureC: 37,
        concentration: 0,
        conditions: { repeat: r },
      })),
    );
    const s = f.model.simulateNerve({
      model: nerve,
      seed: 1000 + p,
      grid: { fs: 50000, t0Ms: -5, nSamples: 3000 },
      sweeps,
      nuisance: { noiseUv: 5 },
    });
    const meta = f.writeBinary(join(sdir, `p${p}.bin`), s, 'float32');
    writeFileSync(join(sdir, `p${p}.json`), JSON.stringify({ data: `p${p}.bin`, ...meta }));
    files.push({
      path: `p${p}.json`,
      conditions: {
        preparation: `P${String(p).padStart(3, '0')}`,
        series: 'distance',
        temperatureC: 37,
        concentration: 0,
        intensity: 20,
      },
      sweeps: sweeps.map((q) => ({ distanceMm: q.distanceMm })),
    });
  }
  writeFileSync(
    join(sdir, 'manifest.json'),
    JSON.stringify({
      fascicleManifest: 1,
      files,
      analysis: { baseline: { window: [-5, -0.2] }, components: { earliestMs: 0.12 } },
    }),
  );
  line('synthesize a 100-preparation study', `${((Date.now() - t0) / 1000).toFixed(1)} s`);
  for (const jobs of [1, 2]) {
    const t1 = Date.now();
    execFileSync(process.execPath, [
      cli,
      'run',
      join(sdir, 'manifest.json'),
      '--out',
      join(dir, `big${jobs}`),
      '--jobs',
      String(jobs),
      '--quiet',
      '--no-figures',
    ]);
    line(`fascicle run (100 preparations) --jobs ${jobs}`, `${((Date.now() - t1) / 1000).toFixed(1)} s`);
  }
}
rmSync(dir, { recursive: true, force: true });
