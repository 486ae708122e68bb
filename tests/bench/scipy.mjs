// Side by side with the NumPy/SciPy pipeline of ../shared/bench (its README): the same
// 1,000 x 20,000 float32 sweeps, the same stages, interleaved in one run (SciPy, fascicle
// on all cores, fascicle on one thread; three rounds), each stage the median of 5 runs
// after a warm-up, as scipy_pipeline.py times its own. Prints figures, asserts nothing.
// Run alone: `node --expose-gc tests/bench/scipy.mjs` after `npx tsc -p tsconfig.json`.
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join, resolve, dirname } from 'node:path';
import { spawnSync } from 'node:child_process';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';
const require = createRequire(import.meta.url);
const here = dirname(fileURLToPath(import.meta.url));
const f = require('../../dist/index.js');

const BENCH = process.env.BENCH_SCIPY_DIR ?? resolve(here, '..', '..', '..', 'shared', 'bench');
const ROUNDS = Number(process.env.BENCH_ROUNDS ?? 3);
const RUNS = 5;
const WINDOWS = [
  ['A', 0.3, 1.0],
  ['B', 1.0, 5.0],
  ['C', 10.0, 45.0],
]; // ms, as scipy_pipeline.py
const STAGES = ['load_binary', 'baseline', 'blank', 'filter', 'average', 'features', 'hill_fit', 'total'];

function python(args) {
  return spawnSync('python3', args, { encoding: 'utf8', maxBuffer: 1 << 26 });
}
/** The data of make_data.py (cached in the temporary folder); null when python3 or NumPy is missing. */
function benchData() {
  if (!existsSync(join(BENCH, 'make_data.py'))) return { dir: null, why: `${BENCH}/make_data.py not found` };
  const dir = join(tmpdir(), 'fascicle-bench-scipy-data');
  if (!existsSync(join(dir, 'sweeps.json')) || !existsSync(join(dir, 'sweeps.f32'))) {
    mkdirSync(dir, { recursive: true });
    const r = python([join(BENCH, 'make_data.py'), '--out-dir', dir, '--no-csv']);
    if (r.status !== 0)
      return {
        dir: null,
        why: `make_data.py failed (python3 with NumPy needed): ${(r.stderr || r.error?.message || '').trim().split('\n').pop()}`,
      };
  }
  return { dir, why: '' };
}
const hasScipy = () => python(['-c', 'import numpy, scipy']).status === 0;

function median(a) {
  const s = [...a].sort((x, y) => x - y);
  return s.length % 2 ? s[(s.length - 1) / 2] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2]);
}
function bench(fn, input) {
  global.gc?.(); // once per stage, before its warm-up (as SciPy's side, no collection between runs)
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

// ---- fascicle's side: the same steps through the public API
function sidecar(dir, meta) {
  const p = join(dir, 'fascicle-sweeps.json');
  if (!existsSync(p)) {
    writeFileSync(
      p,
      JSON.stringify({
        data: meta.file,
        dtype: 'float32',
        nSweeps: meta.n_sweeps,
        nSamples: meta.n_samples,
        fs: meta.fs,
        t0Ms: meta.t0 * 1000,
        units: meta.units,
      }),
    );
  }
  return p;
}
function loadSet(path, meta) {
  const raw = f.readBinary(path);
  return raw.create({ conditions: meta.sweeps.map((s) => ({ condition: s.condition })) });
}
const baselineStep = (s) => s.baseline({ window: [s.t0Ms, -1000 / s.fs] }); // t < 0, as the SciPy pipeline
const blankStep = (s) => s.removeArtifact({ method: 'blank', window: [0, 0.3], bridge: 'linear' });
const filterStep = (s) => s.lowpass(5000, 4);
const averageStep = (s) => s.groupBy('condition').average();
/** per average and window: peak (parabolic), onset (first crossing of 4 x MAD noise, interpolated), trapezoid area */
function featuresStep(avg) {
  const n = avg.nSamples,
    dt = 1 / avg.fs;
  const pre = avg.indexAt(0) - 1; // last sample with t < 0
  const feat = [];
  for (let s = 0; s < avg.nSweeps; s++) {
    const y = avg.sweep(s);
    const thr = 4 * f.noiseMad(y, 0, pre);
    const row = [];
    for (const [, ta, tb] of WINDOWS) {
      const ia = Math.round(((ta - avg.t0Ms) * avg.fs) / 1000),
        ib = Math.min(n - 1, Math.round(((tb - avg.t0Ms) * avg.fs) / 1000));
      let k = ia;
      for (let i = ia; i <= ib; i++) if (y[i] > y[k]) k = i;
      const pk = k > ia && k < ib ? f.parabolicPeak(y, k) : { index: k, value: y[k] };
      let onset = NaN;
      for (let i = ia; i < ib; i++)
        if (!(y[i] >= thr) && y[i + 1] >= thr) {
          onset = avg.timeAt(i) / 1000 + ((thr - y[i]) / (y[i + 1] - y[i])) * dt;
          break;
        }
      let area = 0;
      for (let i = ia; i < ib; i++) area += 0.5 * (y[i] + y[i + 1]) * dt;
      row.push([pk.value, avg.t0Ms / 1000 + pk.index * dt, onset, area, thr]);
    }
    feat.push(row);
  }
  return { feat, conds: avg.conditions.map((c) => c.condition) };
}
const hill4 = (logc, p) => p[1] + (p[0] - p[1]) / (1 + Math.pow(10, (logc - p[2]) * p[3]));
/** its analytic Jacobian row (top, bottom, logIC50, n): fewer model calls than differences */
function hill4Gradient(logc, p) {
  const E = Math.pow(10, (logc - p[2]) * p[3]),
    D = 1 + E,
    g = ((p[0] - p[1]) * E * Math.LN10) / (D * D);
  return [1 / D, 1 - 1 / D, g * p[3], -g * (logc - p[2])];
}
function hillStep(meta) {
  const conds = meta.conditions;
  const imax = Math.max(...conds.map((c) => c.intensity_uA));
  const base = conds.find((c) => c.intensity_uA === imax && c.label === 'baseline').id;
  const drug = conds.filter((c) => c.intensity_uA === imax && c.concentration_uM > 0);
  const logc = drug.map((c) => Math.log10(c.concentration_uM));
  const mid = median(logc);
  return ({ feat, conds: ids }) => {
    const row = new Map(ids.map((id, k) => [id, k]));
    return WINDOWS.map((_, w) => {
      const y = drug.map((c) => feat[row.get(c.id)][w][0] / feat[row.get(base)][w][0]);
      return f.fitCurve({
        model: hill4,
        gradient: hill4Gradient,
        x: logc,
        y,
        p0: [1, 0, mid, 1],
        names: ['top', 'bottom', 'logIC50', 'n'],
        maxIterations: 10000,
      }).params;
    });
  };
}
function fasciclePipeline(path, meta) {
  const hill = hillStep(meta);
  const t = {},
    cpu = {};
  const load = bench(() => loadSet(path, meta));
  t.load_binary = load.t;
  cpu.load_binary = load.cpu;
  const b = bench(baselineStep, load.out);
  t.baseline = b.t;
  cpu.baseline = b.cpu;
  const k = bench(blankStep, b.out);
  t.blank = k.t;
  cpu.blank = k.cpu; // verbs may leave work pending; the next stage pays it
  const y = bench((s) => {
    const r = filterStep(s);
    r.data;
    return r;
  }, k.out);
  t.filter = y.t;
  cpu.filter = y.cpu;
  const a = bench(averageStep, y.out);
  t.average = a.t;
  cpu.average = a.cpu;
  const ft = bench(featuresStep, a.out);
  t.features = ft.t;
  cpu.features = ft.cpu;
  const h = bench(hill, ft.out);
  t.hill_fit = h.t;
  cpu.hill_fit = h.cpu;
  const tot = bench((s) => hill(featuresStep(averageStep(filterStep(blankStep(baselineStep(s)))))), load.out);
  t.total = tot.t;
  cpu.total = tot.cpu;
  return { t, cpu, fits: tot.out, feat: ft.out };
}

function scipyPipeline(dir) {
  const r = python([
    join(BENCH, 'scipy_pipeline.py'),
    '--data-dir',
    dir,
    '--no-variant',
    '--load',
    'binary',
    '--runs',
    String(RUNS),
    '--features-out',
    join(dir, 'scipy_features.json'),
  ]);
  if (r.status !== 0) return null;
  const t = {};
  for (const m of r.stdout.matchAll(/^stage=(\w+) seconds=([\d.eE+-]+)/gm)) t[m[1]] = Number(m[2]);
  return { t, features: JSON.parse(readFileSync(join(dir, 'scipy_features.json'), 'utf8')) };
}

/**
 * SciPy's same stages and formulas on the samples widened to float64 first (scipy_pipeline.py's
 * `process` on x.astype(float64)): its pipeline as written keeps float32 through baseline and
 * blank (x - mean stays float32), fascicle computes in float64 from the baseline on, so this is
 * the reference that tells arithmetic differences from float32 rounding. Features and fits in
 * the format of --features-out; null where it fails.
 */
function scipyFloat64(dir) {
  const code = `
import sys, json
sys.path.insert(0, ${JSON.stringify(BENCH)})
import numpy as np, scipy_pipeline as P
d = ${JSON.stringify(dir)}
meta = P.load_meta(d)
x = P.load_binary(d).astype(np.float64)
cond = np.array([s["condition"] for s in meta["sweeps"]])
_, feat, fits = P.process(x, P.time_axis(meta), cond, meta)
print(json.dumps(dict(features=np.where(np.isnan(feat), None, feat).tolist(), hill=fits.tolist())))
`;
  const r = python(['-c', code]);
  if (r.status !== 0) return null;
  try {
    return JSON.parse(r.stdout.trim().split('\n').pop());
  } catch {
    return null;
  }
}

/**
 * Worst differences of fascicle's features and IC50s from a SciPy run's: per feature relative
 * to the value and relative to the feature's largest magnitude in the window (an area or a
 * blocked peak near zero makes the first large without meaning much); IC50 as a ratio - 1.
 */
function agreement(last, ref) {
  const names = ['peak', 'peak latency', 'onset', 'area'];
  const worstBy = names.map(() => 0),
    worstScaled = names.map(() => 0),
    where = names.map(() => '');
  const row = new Map(last.feat.conds.map((id, k) => [id, k]));
  const scale = WINDOWS.map((_, w) =>
    names.map((_, q) => Math.max(...ref.features.map((perW) => Math.abs(perW[w][q] ?? 0)))),
  );
  ref.features.forEach((perW, id) =>
    perW.forEach((v, w) =>
      v.slice(0, 4).forEach((x, q) => {
        const y = last.feat.feat[row.get(id)][w][q];
        if (x === null || !Number.isFinite(y)) return;
        const rel = Math.abs(y - x) / Math.max(Math.abs(x), 1e-300);
        if (rel > worstBy[q]) [worstBy[q], where[q]] = [rel, `condition ${id}, window ${WINDOWS[w][0]}: ${x}`];
        worstScaled[q] = Math.max(worstScaled[q], Math.abs(y - x) / Math.max(scale[w][q], 1e-300));
      }),
    ),
  );
  const ic = ref.hill.map((h, w) => Math.abs(10 ** (last.fits[w][2] - h[2]) - 1));
  return (
    names.map((n, q) => `${n} ${worstBy[q].toExponential(1)}; ${worstScaled[q].toExponential(1)}`).join(', ') +
    `; IC50 ${ic.map((x) => x.toExponential(1)).join(', ')}\n  (worst peak: ${where[0]})`
  );
}

/**
 * The same SciPy stages timed in CPU time (time.process_time, median of 5 after a warm-up):
 * on a shared, loaded machine CPU time is far steadier than wall time, and both sides run
 * one thread here, so their ratio is the one-thread comparison. Imports scipy_pipeline.py.
 */
function scipyCpu(dir) {
  const code = `
import sys, json, statistics, time
sys.path.insert(0, ${JSON.stringify(BENCH)})
import numpy as np, scipy_pipeline as P
d = ${JSON.stringify(dir)}
meta = P.load_meta(d)
def bench(fn, *a):
    out = fn(*a); ts = []
    for _ in range(${RUNS}):
        c0 = time.process_time(); out = fn(*a); ts.append(time.process_time() - c0)
    return out, statistics.median(ts)
x, tl = bench(P.load_binary, d)
t = P.time_axis(meta); fs = meta["fs"]; cond = np.array([s["condition"] for s in meta["sweeps"]])
r = {"load_binary": tl}
y0, r["baseline"] = bench(P.baseline_subtract, x, t)
y1, r["blank"] = bench(P.blank_artifact, y0, t, fs)
y2, r["filter"] = bench(P.lowpass, y1, fs)
avg, r["average"] = bench(P.average_conditions, y2, cond, meta["n_conditions"])
feat, r["features"] = bench(P.window_features, avg, t, fs)
fits, r["hill_fit"] = bench(P.hill_fits, feat, meta)
_, r["total"] = bench(P.process, x, t, cond, meta)
print(json.dumps(r))
`;
  const r = spawnSync('python3', ['-c', code], {
    encoding: 'utf8',
    maxBuffer: 1 << 24,
    env: { ...process.env, OMP_NUM_THREADS: '1', OPENBLAS_NUM_THREADS: '1' },
  });
  if (r.status !== 0) return null;
  try {
    return JSON.parse(r.stdout.trim().split('\n').pop());
  } catch {
    return null;
  }
}

/**
 * Loading alone in fresh processes, interleaved (3 rounds of 7 loads after a first one, median):
 * NumPy's fromfile and fascicle's readBinary, the latter also with glibc told to ask for
 * transparent huge pages for large buffers (GLIBC_TUNABLES=glibc.malloc.hugetlb=1, glibc >= 2.35).
 * NumPy asks for them itself (madvise MADV_HUGEPAGE on large arrays); Node has no way to, and a
 * fresh 80 MB buffer then takes some 20,000 first-touch page faults instead of 40: the first load
 * of a process pays them, later ones read into the memory of samples already collected
 * (src/sweeps/storage.ts). Wall and CPU time in ms.
 */
export function loadEnvironments(dir, path) {
  const T = f.threads();
  const js = (threads) => `
const f = require(${JSON.stringify(join(here, '..', '..', 'dist', 'index.js'))}); f.setThreads(${threads});
const ts = [], cs = [], pf = [];
for (let k = 0; k < 8; k++) {
  if (k) global.gc(); const p0 = process.resourceUsage().minorPageFault;
  const c0 = process.cpuUsage(); const t0 = process.hrtime.bigint(); f.readBinary(${JSON.stringify(path)});
  ts.push(Number(process.hrtime.bigint() - t0) / 1e6); const c = process.cpuUsage(c0); cs.push((c.user + c.system) / 1e3);
  pf.push(process.resourceUsage().minorPageFault - p0);
}
const med = (a) => [...a].sort((p, q) => p - q)[a.length >> 1];
const rest = (a) => a.slice(1);
console.log(JSON.stringify([med(rest(ts)), med(rest(cs)), med(rest(pf)), ts[0], cs[0], pf[0]])); f.stopThreads();`;
  const py = `
import numpy as np, time, statistics, resource
ts=[];cs=[];pf=[]
for k in range(8):
    p0=resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    t0=time.perf_counter(); c0=time.process_time()
    x=np.fromfile(${JSON.stringify(join(dir, 'sweeps.f32'))}, dtype=np.float32)
    ts.append(time.perf_counter()-t0); cs.append(time.process_time()-c0); del x
    pf.append(resource.getrusage(resource.RUSAGE_SELF).ru_minflt-p0)
print('[%f, %f, %d, %f, %f, %d]' % (statistics.median(ts[1:])*1e3, statistics.median(cs[1:])*1e3,
      statistics.median(pf[1:]), ts[0]*1e3, cs[0]*1e3, pf[0]))`;
  const cases = [
    [`fascicle ${T} threads`, T, ''],
    ['fascicle 1 thread', 1, ''],
    [`fascicle ${T} threads, huge pages`, T, 'glibc.malloc.hugetlb=1'],
    ['fascicle 1 thread, huge pages', 1, 'glibc.malloc.hugetlb=1'],
  ];
  const rec = { numpy: [] };
  for (let r = 0; r < 3; r++) {
    const o = python(['-c', py]);
    if (o.status !== 0) return;
    rec.numpy.push(JSON.parse(o.stdout.trim()));
    for (const [name, threads, tun] of cases) {
      const env = { ...process.env, GLIBC_TUNABLES: tun };
      const c = spawnSync(process.execPath, ['--expose-gc', '-e', js(threads)], { encoding: 'utf8', env });
      if (c.status !== 0) return;
      (rec[name] ??= []).push(JSON.parse(c.stdout.trim().split('\n').pop()));
    }
  }
  const np = rec.numpy;
  const fig = (v, k) => median(v.map((x) => x[k])).toFixed(k % 3 === 2 ? 0 : 1);
  console.log(
    `\nload binary float32 alone, fresh processes (median of 3 interleaved rounds of 7 after a first load; load ` +
      `average ${loadavg()[0].toFixed(1)}): NumPy fromfile ${fig(np, 0)} ms (CPU ${fig(np, 1)} ms, ${fig(np, 2)} ` +
      `page faults); first load ${fig(np, 3)} ms (CPU ${fig(np, 4)} ms, ${fig(np, 5)} page faults)`,
  );
  for (const [name] of cases) {
    const v = rec[name];
    const ratio = (k) => median(v.map((x, r) => np[r][k] / x[k])).toFixed(2);
    console.log(
      `  ${name.padEnd(34)} ${fig(v, 0)} ms (CPU ${fig(v, 1)} ms, ${fig(v, 2)} page faults), ratio ${ratio(0)} ` +
        `(CPU ${ratio(1)}); first load ${fig(v, 3)} ms (CPU ${fig(v, 4)} ms, ${fig(v, 5)} page faults), ` +
        `ratio ${ratio(3)} (CPU ${ratio(4)})`,
    );
  }
  console.log('  (huge pages: GLIBC_TUNABLES=glibc.malloc.hugetlb=1, as NumPy madvises its large arrays;');
  console.log('   page faults: minor faults of the process during one load, median: first touches of fresh memory;');
  console.log('   after the first load fascicle reads into the memory of the collected one, NumPy into fresh memory)');
}

export function runScipyComparison() {
  console.log(
    '\n== side by side with the SciPy pipeline (../shared/bench: 1,000 x 20,000 float32, 50 conditions; ' +
      `median of ${RUNS} per stage, ${ROUNDS} interleaved rounds; load average ${loadavg()[0].toFixed(1)} ` +
      `on ${cpus().length} cores)`,
  );
  const { dir, why } = benchData();
  if (!dir) {
    console.log(`skipped: ${why}`);
    return;
  }
  const meta = JSON.parse(readFileSync(join(dir, 'sweeps.json'), 'utf8'));
  const path = sidecar(dir, meta);
  const scipyOk = hasScipy();
  if (!scipyOk) console.log('SciPy side skipped (python3 with NumPy and SciPy not found); fascicle figures only');
  const T = f.threads();
  const rec = { scipy: [], all: [], one: [], scipyCpu: [], oneCpu: [] };
  let last = null,
    sp = null;
  for (let r = 0; r < ROUNDS; r++) {
    if (scipyOk) {
      sp = scipyPipeline(dir);
      if (sp) rec.scipy.push(sp.t);
    }
    f.setThreads(T);
    last = fasciclePipeline(path, meta);
    rec.all.push(last.t);
    f.setThreads(1);
    const one = fasciclePipeline(path, meta);
    rec.one.push(one.t);
    rec.oneCpu.push(one.cpu);
    f.setThreads(T);
    if (scipyOk) {
      const c = scipyCpu(dir);
      if (c) rec.scipyCpu.push(c);
    }
  }
  // each round pairs SciPy with fascicle run right after it: a stage's ratio is the median of
  // its per-round ratios (the machine's load changes between rounds, less within one)
  const med = (list, k) => (list.length ? median(list.map((t) => t[k])) : NaN);
  const pairRatio = (list, k) => (rec.scipy.length ? median(rec.scipy.map((t, r) => t[k] / list[r][k])) : NaN);
  const fmt = (x) => (Number.isFinite(x) ? (x < 0.01 ? x.toPrecision(2) : x.toFixed(4)) : '-');
  const rf = (x) => (Number.isFinite(x) ? x.toFixed(2) : '-');
  console.log(
    `${'stage'.padEnd(16)}${'SciPy (s)'.padStart(11)}${`fascicle ${T} threads (s)`.padStart(24)}${'ratio'.padStart(8)}${'1 thread (s)'.padStart(14)}${'ratio'.padStart(8)}`,
  );
  for (const k of STAGES) {
    console.log(
      `${(k === 'total' ? 'total (no load)' : k).padEnd(16)}${fmt(med(rec.scipy, k)).padStart(11)}${fmt(med(rec.all, k)).padStart(24)}${rf(pairRatio(rec.all, k)).padStart(8)}${fmt(med(rec.one, k)).padStart(14)}${rf(pairRatio(rec.one, k)).padStart(8)}`,
    );
  }
  console.log('(medians over the rounds; ratio = median over rounds of SciPy time / fascicle time, > 1 is faster;');
  console.log(' targets: every stage >= 1, total >= 2 on all cores and >= 1.2 on one thread)');
  if (rec.scipyCpu.length === rec.oneCpu.length && rec.scipyCpu.length) {
    console.log('\nCPU time, one thread each (steadier than wall time on a loaded machine):');
    console.log(
      `${'stage'.padEnd(16)}${'SciPy CPU (s)'.padStart(15)}${'fascicle CPU (s)'.padStart(18)}${'ratio'.padStart(8)}`,
    );
    for (const k of STAGES) {
      const r = median(rec.scipyCpu.map((t, i) => t[k] / rec.oneCpu[i][k]));
      console.log(
        `${(k === 'total' ? 'total (no load)' : k).padEnd(16)}${fmt(med(rec.scipyCpu, k)).padStart(15)}${fmt(med(rec.oneCpu, k)).padStart(18)}${rf(r).padStart(8)}`,
      );
    }
  }
  if (rec.scipy.length)
    console.log(
      `per round, total: ${rec.scipy.map((t, r) => `SciPy ${t.total.toFixed(3)} / fascicle ${rec.all[r].total.toFixed(3)} (${T}T), ${rec.one[r].total.toFixed(3)} (1T)`).join('; ')}`,
    );
  if (sp) {
    // agreement of the results: features and IC50s relative to SciPy's. SciPy's pipeline as written keeps
    // float32 through baseline and blank, fascicle computes in float64 from the baseline on: their difference is
    // float32 rounding, largest relative to a blocked peak of a few uV. SciPy's same formulas on float64 samples
    // tell whether any arithmetic step (accumulation, parabolic refinement, onset, trapezoid, fit) differs.
    console.log(
      `agreement with SciPy as written (relative to the value; to the window's largest value): ${agreement(last, sp.features)}`,
    );
    const sp64 = scipyFloat64(dir);
    if (sp64) console.log(`agreement with SciPy's formulas on float64 samples: ${agreement(last, sp64)}`);
  }
  if (scipyOk) loadEnvironments(dir, path);
}

if (process.argv[1] && resolve(process.argv[1]) === fileURLToPath(import.meta.url)) runScipyComparison();
