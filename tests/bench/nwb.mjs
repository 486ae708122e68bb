// NWB benchmark: memory and time of reading some sweeps out of a large NWB file. Prints figures, asserts nothing.
// Run: npm run build && node --expose-gc tests/bench/nwb.mjs
// Sizes: BENCH_NWB_SWEEPS (default 400) sweeps x BENCH_NWB_SAMPLES (default 20000) float64 samples in a file
// written by writeNwb (pre-cut layout), and a continuous int16 recording of the same number of stimuli written
// with h5wasm directly (the layout of an acquisition system), each read with 20% of the rows selected.
// Each read runs in a fresh process; memory is measured after the HDF5 library is loaded and a file was opened.
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';

const require = createRequire(import.meta.url);
const f = require('../../dist/index.js');
const here = fileURLToPath(import.meta.url);
const mb = (b) => (b / 1e6).toFixed(1);
const line = (k, v) => console.log(`${k.padEnd(58)} ${v}`);

if (process.argv[2] === '--child') {
  // one measured read: argv = --child file optionsJSON
  const [, , , file, optsJson] = process.argv;
  const opts = JSON.parse(optsJson);
  if (opts.trialsEvery) {
    const k = opts.trialsEvery;
    delete opts.trialsEvery;
    opts.trials = (_c, row) => row % k === 0;
  }
  await f.nwbReady();
  const h5 = await import('h5wasm/node'); // the same module instance as fascicle's (one URL)
  f.readNwbSync(join(here, '..', '..', 'fixtures', 'nwb', 'precut.nwb'), { columns: { intensity: 'amp' } }); // warm up
  global.gc?.();
  const m0 = process.memoryUsage();
  const heap0 = h5.Module.HEAPU8.length;
  const t0 = process.hrtime.bigint();
  const set = f.readNwbSync(file, opts);
  const t = Number(process.hrtime.bigint() - t0) / 1e9;
  global.gc?.();
  const m1 = process.memoryUsage();
  const heap1 = h5.Module.HEAPU8.length;
  console.log(
    JSON.stringify({
      sweeps: set.nSweeps,
      samples: set.nSamples,
      selectedBytes: set.nSweeps * set.nSamples * 8,
      t,
      dRss: m1.rss - m0.rss,
      dArrayBuffers: m1.arrayBuffers - m0.arrayBuffers,
      dHeapUsed: m1.heapUsed - m0.heapUsed,
      wasmHeapGrowth: heap1 - heap0,
      wasmHeap: heap1,
    }),
  );
  process.exit(0);
}

const S = Number(process.env.BENCH_NWB_SWEEPS ?? 400),
  N = Number(process.env.BENCH_NWB_SAMPLES ?? 20000);
const fs = 50000;
const dir = mkdtempSync(join(tmpdir(), 'fascicle-nwb-bench-'));
console.log(`fascicle ${f.VERSION} NWB benchmark, Node ${process.version}: ${S} sweeps x ${N} samples`);
try {
  // 1. a pre-cut file written by writeNwb
  const data = new Float64Array(S * N);
  for (let s = 0; s < S; s++) for (let i = 0; i < N; i++) data[s * N + i] = Math.sin(i * 0.01 + s) * 100 + (s % 7);
  const conditions = Array.from({ length: S }, (_, s) => ({
    preparation: 'B1',
    intensity: 0.1 * ((s % 20) + 1),
    intensityUnit: 'mA',
    distanceMm: 20,
  }));
  const set = new f.SweepSet({ data, nSweeps: S, nSamples: N, fs, t0Ms: -2, units: 'uV', conditions });
  const pre = join(dir, 'precut.nwb');
  let t0 = process.hrtime.bigint();
  await f.writeNwb(set, pre, { raw: true });
  line(
    'writeNwb (pre-cut, float64)',
    `${(Number(process.hrtime.bigint() - t0) / 1e9).toFixed(2)} s, ${mb(statSync(pre).size)} MB file`,
  );

  // 2. a continuous int16 recording with a trials table, written with h5wasm as an acquisition program would
  const h5 = (await import('h5wasm/node')).default;
  await h5.ready;
  const cont = join(dir, 'continuous.nwb');
  const period = 0.5; // s between stimuli
  const total = Math.round(S * period * fs) + N;
  {
    const file = new h5.File(cont, 'w');
    file.create_attribute('neurodata_type', 'NWBFile', null, 'S');
    file.create_attribute('namespace', 'core', null, 'S');
    file.create_attribute('nwb_version', '2.7.0', null, 'S');
    const when = '2026-01-01T00:00:00Z';
    const texts = [
      ['identifier', 'bench'],
      ['session_description', 'bench'],
      ['session_start_time', when],
      ['timestamps_reference_time', when],
    ];
    for (const [k, v] of texts) file.create_dataset({ name: k, data: v, dtype: 'S' });
    for (const g of ['acquisition', 'general', 'intervals', 'processing', 'analysis', 'stimulus']) file.create_group(g);
    const es = file.get('acquisition').create_group('nerve');
    es.create_attribute('neurodata_type', 'TimeSeries', null, 'S');
    es.create_attribute('namespace', 'core', null, 'S');
    const chunk = 65536;
    const d = es.create_dataset({
      name: 'data',
      data: new Int16Array(0),
      shape: [0],
      maxshape: [null],
      chunks: [chunk],
    });
    d.resize([total]);
    const buf = new Int16Array(chunk);
    for (let o = 0; o < total; o += chunk) {
      const n = Math.min(chunk, total - o);
      for (let i = 0; i < n; i++) buf[i] = Math.round(1000 * Math.sin((o + i) * 0.003));
      d.write_slice([[o, o + n]], n === chunk ? buf : buf.subarray(0, n));
    }
    d.create_attribute('unit', 'volts', null, 'S');
    d.create_attribute('conversion', 1e-7, null, '<f');
    const st = es.create_dataset({ name: 'starting_time', data: 0 });
    st.create_attribute('rate', fs, null, '<f');
    st.create_attribute('unit', 'seconds', null, 'S');
    const tr = file.get('intervals').create_group('trials');
    tr.create_attribute('neurodata_type', 'TimeIntervals', null, 'S');
    tr.create_attribute('namespace', 'core', null, 'S');
    tr.create_attribute('colnames', ['start_time', 'stop_time', 'stimulus_time'], null, 'S');
    tr.create_attribute('description', 'stimuli', null, 'S');
    const stim = Float64Array.from({ length: S }, (_, k) => 0.01 + k * period);
    tr.create_dataset({ name: 'id', data: Int32Array.from({ length: S }, (_, k) => k) });
    tr.create_dataset({ name: 'stimulus_time', data: stim });
    tr.create_dataset({ name: 'start_time', data: stim.map((x) => x - 0.002) });
    tr.create_dataset({ name: 'stop_time', data: stim.map((x) => x - 0.002 + (N - 1) / fs) });
    file.close();
  }
  line('continuous int16 file (h5wasm)', `${mb(statSync(cont).size)} MB, ${total} samples`);

  for (const [name, file, opts] of [
    ['pre-cut file, every 5th row', pre, { trialsEvery: 5 }],
    ['continuous file, every 5th row', cont, { trialsEvery: 5 }],
    ['pre-cut file, all rows', pre, {}],
  ]) {
    const r = spawnSync(process.execPath, ['--expose-gc', here, '--child', file, JSON.stringify(opts)], {
      encoding: 'utf8',
    });
    if (r.status !== 0) {
      line(name, `failed: ${r.stderr.slice(0, 300)}`);
      continue;
    }
    const m = JSON.parse(r.stdout.trim().split('\n').pop());
    line(`${name}: sweeps x samples`, `${m.sweeps} x ${m.samples} (${mb(m.selectedBytes)} MB as float64)`);
    line('  read time', `${m.t.toFixed(2)} s (${mb(m.selectedBytes / m.t)} MB/s)`);
    line(
      '  RSS growth / selected samples (target <= 1.2)',
      `${(m.dRss / m.selectedBytes).toFixed(2)} (${mb(m.dRss)} MB)`,
    );
    line(
      '  RSS growth beyond the samples',
      `${mb(m.dRss - m.selectedBytes)} MB (includes pages of the fixed HDF5 heap first touched)`,
    );
    line('  array buffers growth / selected samples', `${(m.dArrayBuffers / m.selectedBytes).toFixed(2)}`);
    line('  HDF5 (wasm) heap growth', `${mb(m.wasmHeapGrowth)} MB (heap ${mb(m.wasmHeap)} MB)`);
  }
} finally {
  rmSync(dir, { recursive: true, force: true });
}
