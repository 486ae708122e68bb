// Notebook latency: in a fresh Node process (as a new kernel or script), the time to import fascicle,
// to the first result (the quick-start notebook's first cell: read the demo study's manifest and print
// its summary), and the extra time of the first frame() (the DataFrame library loads then) and of a
// second one. Targets: import + first result < 1 s; first frame() < 0.5 s more. Best and median of
// 5 processes. Prints figures, asserts nothing.
// Run: `npx tsc -p tsconfig.json && node tests/bench/latency.mjs` (BENCH_LATENCY_RUNS=5 changes it).
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = fileURLToPath(import.meta.url);
const root = join(here, '..', '..', '..');
const RUNS = Number(process.env.BENCH_LATENCY_RUNS ?? 5);

if (process.argv[2] === '--child') {
  const now = () => Number(process.hrtime.bigint()) / 1e9;
  const t0 = now();
  const f = (await import('node:module')).createRequire(import.meta.url)(join(root, 'dist', 'index.js'));
  const t1 = now();
  const study = f.readManifest(join(root, 'data-demo', 'manifest.json'));
  const summary = study.summary();
  const t2 = now();
  const df = study.conditionsFrame();
  const t3 = now();
  const df2 = study.where({ preparation: study.conditions[0].preparation }).conditionsFrame();
  const t4 = now();
  console.log(
    JSON.stringify({
      import: t1 - t0,
      first: t2 - t1,
      frame: t3 - t2,
      frame2: t4 - t3,
      rows: df.shape[0],
      rows2: df2.shape[0],
      summary: summary.length,
    }),
  );
  process.exit(0);
}

const median = (a) => {
  const s = [...a].sort((x, y) => x - y);
  return s.length % 2 ? s[(s.length - 1) / 2] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2]);
};
const runs = [];
for (let k = 0; k < RUNS; k++) {
  const env = { ...process.env, FASCICLE_PRELOAD: '0' }; // a script: nothing loaded in idle time
  const r = spawnSync(process.execPath, [here, '--child'], { encoding: 'utf8', env, cwd: root });
  if (r.status !== 0) {
    console.log(`latency: child failed: ${(r.stderr || '').trim().split('\n').pop()}`);
    process.exit(0);
  }
  runs.push(JSON.parse(r.stdout.trim().split('\n').pop()));
}
const line = (k, v) => console.log(`${k.padEnd(54)} ${v}`);
const s = (key) =>
  `best ${Math.min(...runs.map((r) => r[key])).toFixed(3)} s, median ${median(runs.map((r) => r[key])).toFixed(3)} s`;
const first = runs.map((r) => r.import + r.first);
console.log(`\n== notebook latency (fresh process each, ${RUNS} processes; FASCICLE_PRELOAD=0 as in a script)`);
line('import fascicle', s('import'));
line('first result (readManifest of data-demo + summary())', s('first'));
line(
  'import + first result',
  `best ${Math.min(...first).toFixed(3)} s, median ${median(first).toFixed(3)} s ` +
    `(target < 1 s: ${median(first) < 1 ? 'meets target' : 'BELOW target'})`,
);
line(
  `first frame() (${runs[0].rows} rows; loads the DataFrame library)`,
  `${s('frame')} (target < 0.5 s: ${median(runs.map((r) => r.frame)) < 0.5 ? 'meets target' : 'BELOW target'})`,
);
line(`second frame() (${runs[0].rows2} rows)`, s('frame2'));
