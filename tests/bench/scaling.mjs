// Per-sweep cost of the pipeline stages at 250, 1,000 and 4,000 sweeps (20,000 float32 samples
// each, 50 conditions, the steps of tests/bench/scipy.mjs through the public API): wall and
// CPU time per sweep (median of 3 after a warm-up), and the spread across sizes (target:
// within 20% from 250 to 4,000 sweeps). Prints figures, asserts nothing.
// Run: `npx tsc -p tsconfig.json && node --expose-gc tests/bench/scaling.mjs`
// (BENCH_SCALING_SIZES="250,1000,4000", BENCH_SAMPLES=20000, BENCH_RUNS=3 change it).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createRequire } from 'node:module';
const require = createRequire(import.meta.url);
const f = require('../../dist/index.js');

const SIZES = (process.env.BENCH_SCALING_SIZES ?? '250,1000,4000').split(',').map(Number);
const N = Number(process.env.BENCH_SAMPLES ?? 20000);
const RUNS = Number(process.env.BENCH_RUNS ?? 3);
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

function run(threads) {
  f.setThreads(threads);
  const rows = new Map(stages.map(([name]) => [name, []]));
  rows.set('total (no load)', []);
  for (const S of SIZES) {
    const path = makeFile(S);
    let input = path;
    for (const [name, fn] of stages) {
      const r = timed(fn, input);
      rows.get(name).push({ S, t: r.t, cpu: r.cpu });
      input = r.out;
    }
    const raw = f.readBinary(path);
    const tot = timed((s) => stages.slice(1).reduce((x, [, fn]) => fn(x), s), raw);
    rows.get('total (no load)').push({ S, t: tot.t, cpu: tot.cpu });
    rmSync(path.replace(/\.json$/, '.f32'));
  }
  console.log(
    `\n-- ${threads} thread(s): ms per sweep, wall / CPU (CPU time counts the calling thread and the pool's workers)`,
  );
  console.log(
    `${'stage'.padEnd(24)}${SIZES.map((S) => `${S} sweeps`.padStart(22)).join('')}   spread of wall (CPU), max/min`,
  );
  for (const [name, r] of rows) {
    const w = r.map((x) => (1000 * x.t) / x.S),
      c = r.map((x) => (1000 * x.cpu) / x.S);
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

console.log(
  `== per-sweep cost at ${SIZES.join(', ')} sweeps (${N} float32 samples, ${CONDITIONS} conditions; median of ${RUNS} after a warm-up; load average ${require('node:os').loadavg()[0].toFixed(1)})`,
);
const all = f.threads();
run(all);
if (all > 1) run(1);
f.setThreads(all);
await f.stopThreads();
rmSync(dir, { recursive: true, force: true });
