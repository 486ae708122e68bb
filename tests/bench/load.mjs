// Loading a float32 binary file again and again in one process, as a script or notebook does: CPU time and
// first-touch page faults per load (counts that do not depend on the machine's load), fascicle against NumPy's
// fromfile on the same file (../shared/bench data, 1,000 x 20,000 float32 = 80 MB). Three patterns: the first load
// of a process (fresh memory everywhere), a load while the previous result is still held (`out = load()` in a loop,
// as tests/bench/scipy.mjs times a stage), and a load after a collection (the previous result dropped and
// collected). fascicle reads into the memory of collected samples (src/sweeps/storage.ts), NumPy into fresh memory
// (madvised huge pages). Prints figures, asserts nothing.
// Run: `npx tsc -p tsconfig.json && node --expose-gc tests/bench/load.mjs` (BENCH_LOAD_RUNS=9 loads per pattern).
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';

const here = fileURLToPath(import.meta.url);
const dist = join(here, '..', '..', '..', 'dist', 'index.js');
const dir = join(tmpdir(), 'fascicle-bench-scipy-data'); // made by tests/bench/scipy.mjs
const RUNS = Number(process.env.BENCH_LOAD_RUNS ?? 9);

const child = (threads) => `
const f = require(${JSON.stringify(dist)}); f.setThreads(${threads});
const path = ${JSON.stringify(join(dir, 'fascicle-sweeps.json'))};
const pf = () => process.resourceUsage().minorPageFault;
function one(fn) { const p0 = pf(), c0 = process.cpuUsage(); const out = fn(); const c = process.cpuUsage(c0);
  return { out, cpu: (c.user + c.system) / 1e3, faults: pf() - p0 }; }
const med = (a) => [...a].sort((p, q) => p - q)[a.length >> 1];
const first = one(() => f.readBinary(path));
let out = first.out;
first.out = null; const held = [], after = [];
// only the figures are kept: a kept result would keep its samples (and their memory) in use
for (let k = 0; k < ${RUNS}; k++) { const r = one(() => f.readBinary(path)); out = r.out; held.push({ ...r, out: null }); }
out = null;
for (let k = 0; k < ${RUNS}; k++) { global.gc(); after.push({ ...one(() => f.readBinary(path)), out: null }); }
const fig = (rs) => [med(rs.map((r) => r.cpu)), med(rs.map((r) => r.faults))];
console.log(JSON.stringify({ first: [first.cpu, first.faults], held: fig(held), after: fig(after) })); f.stopThreads();`;
const py = `
import numpy as np, time, statistics, resource, json, gc
path = ${JSON.stringify(join(dir, 'sweeps.f32'))}
def one():
    p0 = resource.getrusage(resource.RUSAGE_SELF).ru_minflt; c0 = time.process_time()
    x = np.fromfile(path, dtype=np.float32)
    return x, (time.process_time() - c0) * 1e3, resource.getrusage(resource.RUSAGE_SELF).ru_minflt - p0
out, c, p = one(); first = [c, p]; held = []; after = []
for k in range(${RUNS}):
    out, c, p = one(); held.append((c, p))
out = None
for k in range(${RUNS}):
    gc.collect(); x, c, p = one(); after.append((c, p)); del x
fig = lambda rs: [statistics.median([r[0] for r in rs]), statistics.median([r[1] for r in rs])]
print(json.dumps(dict(first=first, held=fig(held), after=fig(after))))`;

if (!existsSync(join(dir, 'fascicle-sweeps.json'))) {
  console.log(`skipped: ${dir} has no data (run tests/bench/scipy.mjs first, which makes it)`);
} else {
  const rows = [];
  for (let r = 0; r < 3; r++) {
    const np = spawnSync('python3', ['-c', py], { encoding: 'utf8' });
    if (np.status === 0) rows.push(['NumPy fromfile', JSON.parse(np.stdout.trim().split('\n').pop())]);
    for (const t of [1, 2]) {
      const c = spawnSync(process.execPath, ['--expose-gc', '-e', child(t)], { encoding: 'utf8' });
      if (c.status === 0) rows.push([`fascicle ${t} thread${t > 1 ? 's' : ''}`, JSON.parse(c.stdout.trim())]);
      else console.log(c.stderr);
    }
  }
  console.log(
    `\n== repeated loads of 1,000 x 20,000 float32 (80 MB) in one process: CPU ms / first-touch page faults per load` +
      ` (median of ${RUNS} loads, median of 3 rounds)`,
  );
  console.log(
    `${''.padEnd(20)}${'first load'.padStart(18)}${'previous held'.padStart(18)}${'after a collection'.padStart(22)}`,
  );
  const median = (a) => [...a].sort((p, q) => p - q)[a.length >> 1];
  for (const name of [...new Set(rows.map(([n]) => n))]) {
    const v = rows.filter(([n]) => n === name).map(([, x]) => x);
    const cell = (k) => `${median(v.map((x) => x[k][0])).toFixed(1)} / ${median(v.map((x) => x[k][1])).toFixed(0)}`;
    console.log(
      `${name.padEnd(20)}${cell('first').padStart(18)}${cell('held').padStart(18)}${cell('after').padStart(22)}`,
    );
  }
  console.log('(CPU time counts every thread of the process; NumPy 2 MB pages: some 625 faults per fresh 80 MB)');
}
