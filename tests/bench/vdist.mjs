// Speed of the velocity-distribution analysis and its NNLS kernels. Prints figures; asserts nothing.
// Run: npx tsc -p tsconfig.json && node tests/bench/vdist.mjs
import { createRequire } from 'node:module';
import { readFileSync } from 'node:fs';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
const require = createRequire(import.meta.url);
const here = dirname(fileURLToPath(import.meta.url));
const f = require('../../dist/index.js');

const time = (label, fn, reps = 1) => {
  fn();
  const t0 = process.hrtime.bigint();
  let out;
  for (let i = 0; i < reps; i++) out = fn();
  const ms = Number(process.hrtime.bigint() - t0) / 1e6 / reps;
  console.log(`${label.padEnd(64)} ${ms.toFixed(1).padStart(9)} ms`);
  return out;
};

// NNLS kernels on random problems (seeded)
const rng = new f.model.Rng(3);
for (const [m, n] of [
  [200, 30],
  [2000, 60],
  [2000, 120],
]) {
  const A = Float64Array.from({ length: m * n }, () => rng.normal()),
    b = Float64Array.from({ length: m }, () => rng.normal());
  time(`nnls (Householder QR), ${m} x ${n}`, () => f.nnls(A, m, n, b), 3);
  const G = new Float64Array(n * n),
    c = new Float64Array(n);
  for (let i = 0; i < m; i++)
    for (let j = 0; j < n; j++) {
      c[j] += A[i * n + j] * b[i];
      for (let k = 0; k < n; k++) G[j * n + k] += A[i * n + j] * A[i * n + k];
    }
  time(`nnlsNormalEquations (Cholesky on G), n ${n}`, () => f.nnlsNormalEquations(G, c, n), 10);
}

// the development-set fixture (independent NEURON-based development set, FNPG-N07), fast window, 8 sweeps x 2 distances
const FIX = join(here, '../fixtures/devset-vdist');
const truth = JSON.parse(readFileSync(join(FIX, 'truth_30C.json'), 'utf8'));
const load = (name) => {
  const lines = readFileSync(join(FIX, `${name}.csv`), 'utf8')
    .trim()
    .split(/\r?\n/);
  const cols = lines[0].split(',').slice(1),
    rows = lines.slice(1).map((l) => l.split(',').map(Number)),
    n = rows.length;
  const data = new Float64Array(cols.length * n);
  cols.forEach((_, c) => {
    for (let i = 0; i < n; i++) data[c * n + i] = rows[i][c + 1];
  });
  const meta = truth.recordings[name];
  return new f.SweepSet({
    data,
    nSweeps: cols.length,
    nSamples: n,
    fs: meta.sampling_rate_hz,
    t0Ms: meta.time_of_first_sample_s * 1000,
    units: 'V',
    conditions: cols.map((c) => ({ distanceMm: Number(/_(\d+)mm$/.exec(c)[1]), temperatureC: 30 })),
  });
};
const fast = f.SweepSet.concat([load('temperature_fast_30C'), load('dose_response_fast_30C')]);
const base = {}; // the defaults, as in the devset test (fit start detected, two-phase potential, hum detected)
for (const bootstrap of [0, 200]) {
  const r = time(`velocityDistribution fast window, estimated potential, bootstrap ${bootstrap}`, () =>
    f.velocityDistribution(fast, { ...base, bootstrap }),
  );
  console.log(`  iterations ${r.fit.iterations}, status ${r.fit.status}`);
}
for (const nVelocities of [30, 60, 120])
  time(`velocityDistribution fast window, ${nVelocities} velocities, bootstrap 0`, () =>
    f.velocityDistribution(fast, { ...base, nVelocities, bootstrap: 0 }),
  );
time('velocityDistribution fast window, free potential (alternating least squares), bootstrap 0', () =>
  f.velocityDistribution(fast, { ...base, sfpModel: 'free', bootstrap: 0 }),
);
time('velocityDistribution fast window, two-distance method, bootstrap 0', () =>
  f.velocityDistribution(fast, { ...base, method: 'two-distance', bootstrap: 0 }),
);
