// Peak resident memory of loading: a wide CSV and a float32 binary file of the same sweeps,
// each loaded in a fresh Node process, the peak (getrusage maxRSS) less the resident memory
// just before the load, against the float64 sample bytes (nSweeps x nSamples x 8). Targets:
// CSV <= 1.5x, binary <= 1.1x. Prints figures with wall and CPU time, asserts nothing.
// Run: `npx tsc -p tsconfig.json && node tests/bench/memory.mjs` (BENCH_SWEEPS, BENCH_SAMPLES
// change the size; default 1,000 x 20,000 as the loading benchmarks).
import { closeSync, mkdtempSync, openSync, rmSync, statSync, writeFileSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';

const here = fileURLToPath(import.meta.url);
const dist = join(here, '..', '..', '..', 'dist', 'index.js');

if (process.argv[2] === '--child') {
  // one load in this process: resident memory before, peak after
  const [, , , kind, path] = process.argv;
  const f = (await import('node:module')).createRequire(import.meta.url)(dist);
  if (process.env.FASCICLE_THREADS !== '1') f.setThreads(f.threads()); // the pool's threads start with the first parallel call
  const rss0 = process.memoryUsage().rss;
  const max0 = process.resourceUsage().maxRSS * 1024;
  const c0 = process.cpuUsage();
  const t0 = process.hrtime.bigint();
  const set = kind === 'csv' ? f.readDelimited(path) : f.readBinary(path);
  const wall = Number(process.hrtime.bigint() - t0) / 1e9;
  const c = process.cpuUsage(c0);
  const peak = process.resourceUsage().maxRSS * 1024;
  console.log(
    JSON.stringify({
      rss0,
      max0,
      peak,
      wall,
      cpu: (c.user + c.system) / 1e6,
      nSweeps: set.nSweeps,
      nSamples: set.nSamples,
      threads: f.threads(),
    }),
  );
  process.exit(0);
}

const S = Number(process.env.BENCH_SWEEPS ?? 1000),
  N = Number(process.env.BENCH_SAMPLES ?? 20000);
const fs = 50000;
const dir = mkdtempSync(join(tmpdir(), 'fascicle-bench-mem-'));
const mb = (b) => (b / 1e6).toFixed(1);
const line = (k, v) => console.log(`${k.padEnd(54)} ${v}`);
// a deterministic pattern with a response and noise, values of 6 significant digits as a recorder would print
const sample = (s, i) =>
  Number(
    (
      300 * Math.exp(-0.5 * ((i - 3000) / 150) ** 2) * ((s % 20) / 20) +
      5 * Math.sin(i * 12.9898 + s * 78.233)
    ).toPrecision(6),
  );

const csvPath = join(dir, 'mem.csv');
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
const binPath = join(dir, 'mem.f32');
{
  const x = new Float32Array(S * N);
  for (let s = 0; s < S; s++) for (let i = 0; i < N; i++) x[s * N + i] = sample(s, i);
  writeFileSync(binPath, new Uint8Array(x.buffer));
  writeFileSync(
    join(dir, 'mem.json'),
    JSON.stringify({ data: 'mem.f32', dtype: 'float32', nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV' }),
  );
}
const f64 = S * N * 8;
console.log(
  `\n== peak resident memory of a load (${S} sweeps x ${N} samples: float64 samples ${mb(f64)} MB; fresh process each)`,
);
for (const threads of [undefined, '1']) {
  for (const [kind, path, target] of [
    ['csv', csvPath, 1.5],
    ['binary', join(dir, 'mem.json'), 1.1],
  ]) {
    const env = { ...process.env };
    if (threads) env.FASCICLE_THREADS = threads;
    else delete env.FASCICLE_THREADS;
    const r = spawnSync(process.execPath, [here, '--child', kind, path], { encoding: 'utf8', env, maxBuffer: 1 << 20 });
    if (r.status !== 0) {
      line(`${kind} load`, `failed: ${(r.stderr || '').trim().split('\n').pop()}`);
      continue;
    }
    const m = JSON.parse(r.stdout.trim().split('\n').pop());
    const grown = m.peak - m.rss0;
    const size = kind === 'csv' ? ` (${mb(statSync(path).size)} MB of text)` : ` (${mb(S * N * 4)} MB float32 file)`;
    line(
      `${kind} load${size}, ${m.threads} thread(s)`,
      `peak ${mb(m.peak)} MB, +${mb(grown)} MB over the ${mb(m.rss0)} MB before = ${(grown / f64).toFixed(2)}x float64 bytes` +
        ` (target <= ${target}x: ${grown / f64 <= target ? 'meets target' : 'ABOVE target'}); wall ${m.wall.toFixed(2)} s, CPU ${m.cpu.toFixed(2)} s`,
    );
  }
}
rmSync(dir, { recursive: true, force: true });
