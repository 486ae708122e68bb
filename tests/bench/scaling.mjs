// Per-sweep cost of the pipeline stages at 250, 1,000 and 4,000 sweeps (20,000 float32 samples
// each, 50 conditions, the steps of tests/bench/scipy.mjs through the public API): wall and
// CPU time per sweep (median of 3 after a warm-up; 2 rounds over the sizes, median), and the spread
// across sizes (target: within 20% from 250 to 4,000 sweeps); then `fascicle run` per preparation at 4, 16 and 64
// preparations (target: flat). Prints figures, asserts nothing.
// Run: `npx tsc -p tsconfig.json && node --expose-gc tests/bench/scaling.mjs`
// (BENCH_SCALING_SIZES="250,1000,4000", BENCH_SAMPLES=20000, BENCH_RUNS=3, BENCH_SCALING_ROUNDS=2,
// BENCH_SCALING_PREPS="4,16,64", BENCH_CLI_RUNS=2 change it; BENCH_SCALING_RUN=0 skips the command-line part).
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createRequire } from 'node:module';
const require = createRequire(import.meta.url);
const f = require('../../dist/index.js');

const SIZES = (process.env.BENCH_SCALING_SIZES ?? '250,1000,4000').split(',').map(Number);
const N = Number(process.env.BENCH_SAMPLES ?? 20000);
const RUNS = Number(process.env.BENCH_RUNS ?? 3);
const ROUNDS = Number(process.env.BENCH_SCALING_ROUNDS ?? 2);
const FS = 50000,
  T0MS = -2,
  CONDITIONS = 50;
const dir = mkdtempSync(join(tmpdir(), 'fascicle-bench-scaling-'));

const median = (a) => {
  const s = [...a].sort((x, y) => x - y);
  return s.length % 2 ? s[(s.length - 1) / 2] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2]);
};
function timed(fn, input) {
  global.gc?.();
  let out = fn(input); // warm-up
  const ts = [],
    cs = [];
  for (let k = 0; k < RUNS; k++) {
    const c0 = process.cpuUsage();
    const t0 = process.hrtime.bigint();
    out = fn(input);
    ts.push(Number(process.hrtime.bigint() - t0) / 1e9);
    const c = process.cpuUsage(c0);
    cs.push((c.user + c.system) / 1e6);
  }
  return { out, t: median(ts), cpu: median(cs) };
}

/** a float32 file of S sweeps: artifact, a response scaled by condition, noise */
function makeFile(S) {
  const x = new Float32Array(S * N);
  for (let s = 0; s < S; s++) {
    const c = s % CONDITIONS,
      a = 1 - c / (2 * CONDITIONS);
    for (let i = 0; i < N; i++) {
      const t = T0MS + (i * 1000) / FS;
      const art = t >= 0 && t < 0.1 ? 500 : t >= 0.1 ? 200 * Math.exp(-(t - 0.1) / 0.08) : 0;
      x[s * N + i] = art + 300 * a * Math.exp(-0.5 * ((t - 1.2) / 0.15) ** 2) + 5 * Math.sin(i * 12.9898 + s * 78.233);
    }
  }
  const name = `scal-${S}`;
  writeFileSync(join(dir, name + '.f32'), new Uint8Array(x.buffer));
  const sweeps = Array.from({ length: S }, (_, s) => ({ condition: s % CONDITIONS }));
  writeFileSync(
    join(dir, name + '.json'),
    JSON.stringify({
      data: name + '.f32',
      dtype: 'float32',
      nSweeps: S,
      nSamples: N,
      fs: FS,
      t0Ms: T0MS,
      units: 'uV',
      sweeps,
    }),
  );
  return join(dir, name + '.json');
}

const stages = [
  ['load binary', (p) => f.readBinary(p)],
  ['baseline', (s) => s.baseline({ window: [s.t0Ms, -1000 / s.fs] })],
  ['blank 0-0.3 ms', (s) => s.removeArtifact({ method: 'blank', window: [0, 0.3], bridge: 'linear' })],
  [
    'zero-phase low-pass',
    (s) => {
      const r = s.lowpass(5000, 4);
      r.data;
      return r;
    },
  ],
  ['average per condition', (s) => s.groupBy('condition').average()],
];

/**
 * ROUNDS rounds (BENCH_SCALING_ROUNDS, default 2), each taking every size in turn (each stage: a warm-up, then RUNS
 * runs, as one would time it alone); a figure is the median over the rounds of each round's median. A size pays for
 * freeing its own earlier outputs, as a user running that size repeatedly would; the rounds spread a change in the
 * machine's load (other users of a shared machine) over all sizes.
 */
function run(threads, paths) {
  f.setThreads(threads);
  const rows = new Map(stages.map(([name]) => [name, SIZES.map(() => [])]));
  rows.set(
    'total (no load)',
    SIZES.map(() => []),
  );
  for (let r = 0; r < ROUNDS; r++) {
    SIZES.forEach((S, j) => {
      let input = paths[j];
      for (const [name, fn] of stages) {
        const x = timed(fn, input);
        rows.get(name)[j].push({ t: x.t, cpu: x.cpu }); // not the output: it would stay alive
        input = x.out;
      }
      input = null;
      const raw = f.readBinary(paths[j]);
      const tot = timed((s) => stages.slice(1).reduce((x, [, fn]) => fn(x), s), raw);
      rows.get('total (no load)')[j].push({ t: tot.t, cpu: tot.cpu });
    });
  }
  console.log(
    `\n-- ${threads} thread(s): ms per sweep, wall / CPU (CPU time counts the calling thread and the pool's workers)`,
  );
  console.log(
    `${'stage'.padEnd(24)}${SIZES.map((S) => `${S} sweeps`.padStart(22)).join('')}   spread of wall (CPU), max/min`,
  );
  for (const [name, perSize] of rows) {
    const w = perSize.map((xs, j) => (1000 * median(xs.map((x) => x.t))) / SIZES[j]),
      c = perSize.map((xs, j) => (1000 * median(xs.map((x) => x.cpu))) / SIZES[j]);
    const spread = (a) => Math.max(...a) / Math.min(...a);
    const note =
      name === 'total (no load)'
        ? ` target <= 1.20: wall ${spread(w) <= 1.2 ? 'meets' : 'BEYOND'}, CPU ${spread(c) <= 1.2 ? 'meets' : 'BEYOND'}`
        : '';
    const ms = (x) => (x >= 0.01 ? x.toFixed(3) : x.toExponential(1));
    console.log(
      `${name.padEnd(24)}${w.map((x, k) => `${ms(x)} / ${ms(c[k])}`.padStart(22)).join('')}   ${spread(w).toFixed(2)} (${spread(c).toFixed(2)})${note}`,
    );
  }
}

// ---- `fascicle run` per preparation at 4, 16 and 64 preparations (a distance series each: 6 sweeps of
// 3,000 samples from the forward model, as the 100-preparation study of tests/bench/run.mjs), figures on and
// off; wall time of the whole command (start-up included) divided by the number of preparations
const PREPS = (process.env.BENCH_SCALING_PREPS ?? '4,16,64').split(',').map(Number);
const CLI_RUNS = Number(process.env.BENCH_CLI_RUNS ?? 2);
const cli = join(process.cwd(), 'dist', 'cli', 'main.js');
function makeStudy(P) {
  const sdir = join(dir, `study-${P}`);
  mkdirSync(sdir);
  const nerve = f.model.rodentSciatic();
  const files = [];
  for (let p = 0; p < P; p++) {
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
  return join(sdir, 'manifest.json');
}
function runCli(manifest, out, jobs, figures) {
  const t0 = process.hrtime.bigint();
  const args = [cli, 'run', manifest, '--out', out, '--jobs', String(jobs), '--quiet'];
  if (!figures) args.push('--no-figures');
  const r = spawnSync(process.execPath, args, { encoding: 'utf8', maxBuffer: 1 << 26 });
  const t = Number(process.hrtime.bigint() - t0) / 1e9;
  rmSync(out, { recursive: true, force: true });
  return r.status === 0 || r.status === 4 ? t : NaN;
}
function runScaling() {
  console.log(
    `\n-- fascicle run: seconds per preparation (whole command, start-up included; best of ${CLI_RUNS}; ` +
      'distance series of 6 sweeps x 3,000 samples each)',
  );
  const t00 = process.hrtime.bigint();
  const studies = PREPS.map((P) => [P, makeStudy(P)]);
  console.log(`(studies synthesized in ${(Number(process.hrtime.bigint() - t00) / 1e9).toFixed(1)} s, not timed)`);
  const cases = [
    ['--jobs 1 --no-figures', 1, false],
    ['--jobs 2 --no-figures', 2, false],
    ['--jobs 1, figures', 1, true],
  ];
  console.log(`${'command'.padEnd(24)}${PREPS.map((P) => `${P} preparations`.padStart(18)).join('')}   spread max/min`);
  for (const [name, jobs, figures] of cases) {
    const per = studies.map(([P, m]) => {
      let best = Infinity;
      for (let k = 0; k < CLI_RUNS; k++) best = Math.min(best, runCli(m, join(dir, `out-${P}`), jobs, figures));
      return best / P;
    });
    const spread = Math.max(...per) / Math.min(...per);
    // the whole command as a line over the number of preparations (least squares): start-up + marginal x P
    const P = PREPS,
      T = per.map((x, k) => x * P[k]);
    const mp = P.reduce((u, v) => u + v, 0) / P.length,
      mt = T.reduce((u, v) => u + v, 0) / T.length;
    const slope =
      P.reduce((u, v, k) => u + (v - mp) * (T[k] - mt), 0) /
      Math.max(
        1e-12,
        P.reduce((u, v) => u + (v - mp) ** 2, 0),
      );
    console.log(
      `${name.padEnd(24)}${per.map((x) => `${x.toFixed(3)} s`.padStart(18)).join('')}   ${spread.toFixed(2)}` +
        ` (target flat: <= 1.20 ${spread <= 1.2 ? 'meets' : 'BEYOND'}); as a line: ` +
        `${(mt - slope * mp).toFixed(2)} s + ${(1000 * slope).toFixed(0)} ms per preparation`,
    );
  }
  // the fixed cost itself: the command on a study of one preparation, and node starting fascicle
  const one = makeStudy(1);
  let tOne = Infinity,
    tImport = Infinity;
  for (let k = 0; k < CLI_RUNS; k++) {
    tOne = Math.min(tOne, runCli(one, join(dir, 'out-1'), 1, false));
    const t0 = process.hrtime.bigint();
    spawnSync(process.execPath, ['-e', `require(${JSON.stringify(join(process.cwd(), 'dist', 'index.js'))})`]);
    tImport = Math.min(tImport, Number(process.hrtime.bigint() - t0) / 1e9);
  }
  console.log(
    `fixed cost: one preparation ${tOne.toFixed(2)} s (--jobs 1 --no-figures); node + require fascicle ${tImport.toFixed(2)} s`,
  );
}

console.log(
  `== per-sweep cost at ${SIZES.join(', ')} sweeps (${N} float32 samples, ${CONDITIONS} conditions; median of ${RUNS} after a warm-up, median of ${ROUNDS} rounds over the sizes; load average ${require('node:os').loadavg()[0].toFixed(1)})`,
);
const all = f.threads();
const paths = SIZES.map(makeFile);
run(all, paths);
if (all > 1) run(1, paths);
f.setThreads(all);
for (const p of paths) rmSync(p.replace(/\.json$/, '.f32'));
if (process.env.BENCH_SCALING_RUN !== '0') runScaling(); // BENCH_SCALING_RUN=0 skips the command-line part
await f.stopThreads();
rmSync(dir, { recursive: true, force: true });
