/**
 * NWB reading and writing.
 * External references:
 * - the fixtures in tests/fixtures/nwb were written by h5py (Debian python3-h5py) following the NWB 2.7.0
 *   core schema and hdmf-common 1.8.0 (tests/reference/make_nwb.py); expected.json holds the values
 *   NumPy computed from the arrays written there (value = data * conversion * channel_conversion + offset,
 *   NWB 2.7.0 nwb.base.yaml TimeSeries.data and nwb.ecephys.yaml ElectricalSeries.channel_conversion).
 * - files fascicle writes are read back by h5py and validated against the NWB 2.7.0 schema by Debian's
 *   python3-hdmf (tests/reference/validate_nwb.py); those tests are skipped with a message when
 *   /usr/bin/python3 lacks h5py or hdmf.
 */
import { describe, it, expect, beforeAll, afterAll, vi } from 'vitest';
import { spawnSync } from 'node:child_process';
import {
  copyFileSync,
  existsSync,
  mkdtempSync,
  readdirSync,
  readFileSync,
  writeFileSync,
  statSync,
  rmSync,
} from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createHash } from 'node:crypto';
import { readNwb, readNwbSync, readNwbTables, nwbReady, describeNwb } from '../../src/io/nwb';
import { writeNwb, writtenByFascicle } from '../../src/io/nwbWrite';
import { h5, HyperslabReader } from '../../src/io/nwbLib';
// loading the registry installs the result tables' renaming to the bundle's names (the package index does the same)
import { bundleColumns } from '../../src/registry/columns';
import { SweepSet, type Conditions } from '../../src/sweeps/SweepSet';
import { InputError, OptionError, OutputError } from '../../src/errors';
import { readManifest } from '../../src/io/manifest';
import { runPipeline } from '../../src/report/pipeline';

process.env.FASCICLE_QUIET = '1';
const FIX = join(__dirname, '..', 'fixtures', 'nwb');
const fx = (name: string) => join(FIX, name);
const expected = JSON.parse(readFileSync(fx('expected.json'), 'utf8'));
const tmp = mkdtempSync(join(tmpdir(), 'fascicle-nwb-'));
const sha = (p: string) => createHash('sha256').update(readFileSync(p)).digest('hex');

const PY = '/usr/bin/python3';
const pyHas = (mods: string) => existsSync(PY) && spawnSync(PY, ['-c', `import ${mods}`]).status === 0;
const HAVE_H5PY = pyHas('h5py, numpy');
const HAVE_HDMF = HAVE_H5PY && pyHas('hdmf');
if (!HAVE_H5PY)
  console.warn('skipping the h5py read-back tests: /usr/bin/python3 lacks h5py (apt-get install python3-h5py)');
if (HAVE_H5PY && !HAVE_HDMF) {
  console.warn('skipping the hdmf validation: /usr/bin/python3 lacks hdmf (apt-get install python3-hdmf)');
}

/** h5py's view of a file and hdmf's verdict (tests/reference/validate_nwb.py --layout). */
type Independent = { ok: boolean; errors: string[]; types: Record<string, string>; layout: any; unavailable?: string };
function independent(path: string): Independent {
  const r = spawnSync(PY, [join(__dirname, '..', 'reference', 'validate_nwb.py'), '--layout', path], {
    encoding: 'utf8',
  });
  const line = r.stdout.trim().split('\n').pop() ?? '';
  return JSON.parse(line);
}

/** Expect an InputError whose place names the file and an HDF5 path, and whose text matches. */
function expectInputError(fn: () => unknown, file: string, field: string | RegExp | undefined, text: RegExp): void {
  let err: unknown;
  try {
    fn();
  } catch (e) {
    err = e;
  }
  expect(err, 'an error').toBeInstanceOf(InputError);
  const e = err as InputError;
  expect(e.place.file).toBe(file);
  if (field instanceof RegExp) expect(e.place.field).toMatch(field);
  else if (field !== undefined) expect(e.place.field).toBe(field);
  expect(e.message).toMatch(text);
}

beforeAll(async () => {
  await nwbReady();
});
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('readNwb(path, options) on files written by h5py', () => {
  it("cuts a continuous 3-channel int16 ElectricalSeries around the trials' stimulus times, with conversion, offset and channel_conversion", async () => {
    const e = expected.continuous;
    for (const ch of [0, 1, 2]) {
      const set = await readNwb(fx('continuous.nwb'), { channel: ch });
      expect(set.nSweeps).toBe(12);
      expect(set.nSamples).toBe(e.nSamples); // [-5, 30] ms from start_time/stop_time, both ends (make_nwb.py)
      expect(set.fs).toBe(e.fs);
      expect(set.t0Ms).toBe(e.t0Ms);
      expect(set.units).toBe('mV');
      // per-trial sums (NumPy) and full sweeps for some trials, to 1e-9 mV
      set.conditions.forEach((_, k) => {
        let sum = 0;
        for (const v of set.sweep(k)) sum += v;
        expect(sum).toBeCloseTo(e.sums_mV[String(ch)][k], 8);
      });
      const rows: number[][] = e.sweeps_mV[String(ch)];
      const first = ch === 2 ? 10 : 0;
      rows.forEach((row, j) => {
        row.forEach((v, i) => expect(Math.abs(set.sweep(first + j)[i] - v)).toBeLessThan(1e-9));
      });
      // electrodes table: location and distance of the channel's row
      expect(set.conditions[0].site).toBe(e.locations[ch]);
      expect(set.conditions[0].distanceMm).toBe(e.distance_mm[ch]);
      expect(set.conditions[0].electrode).toBe(ch);
    }
  });

  it('maps the trials columns to conditions: intensity_mA, pulse_width in s, temperature in degC, concentration in uM', async () => {
    const e = expected.continuous;
    const set = await readNwb(fx('continuous.nwb'), { channel: 1 });
    expect(set.column('intensity')).toEqual(e.intensity);
    expect(set.levels('intensityUnit')).toEqual(['mA']);
    // pulse_width has no unit: NWB times are in seconds (nwb.file.yaml, general: "time is in seconds")
    set.column('pulseWidthMs').forEach((v, k) => expect(v).toBeCloseTo(e.pulse_width_ms[k], 12));
    expect(set.levels('temperatureC')).toEqual([32.5]);
    expect(set.levels('concentration')).toEqual([0, 30]);
    expect(set.levels('concentrationUnit')).toEqual(['uM']);
    expect(set.levels('drug')).toEqual(['none', 'lidocaine']);
    expect(set.column('operator_note')[11]).toBe('bubble'); // an unmapped column keeps its name
    expect(set.levels('preparation')).toEqual(['R7']); // /general/subject/subject_id
    expect(set.column('acquiredS')).toEqual(e.stimulus_s);
    expect(set.conditions[4].fileSweep).toBe(4);
    expect(set.conditions[4].file).toBe(fx('continuous.nwb'));
    const step = set.history[0];
    expect(step.verb).toBe('readNwb');
    const nwb = step.options.nwb as { general: Record<string, unknown>; subject: Record<string, string> };
    expect(nwb.general.lab).toBe('Example Nerve Lab');
    expect(nwb.subject.species).toBe('Rattus norvegicus');
    // the 4th stimulus is 0.3 samples off the grid (make_nwb.py): the nearest sample, offset recorded
    expect(step.options.maxStimulusOffsetMs as number).toBeCloseTo(0.03, 9);
    expect(set.sources[0].sha256).toBe(sha(fx('continuous.nwb')));
    const info = (step.options.series as { conversion: number; offset: number; resolution: number }[])[0];
    // float32 attributes as stored (make_nwb.py: 5e-7 V, -1e-4 V, 5e-7 V)
    expect(info.conversion).toBe(Math.fround(5e-7));
    expect(info.offset).toBe(Math.fround(-1e-4));
    expect(info.resolution).toBe(Math.fround(5e-7));
  });

  it('channel: "all" gives one sweep per row and channel, each with its electrode\'s distance', async () => {
    const all = await readNwb(fx('continuous.nwb'), { channel: 'all' });
    expect(all.nSweeps).toBe(36);
    expect(all.column('channel').slice(0, 4)).toEqual([0, 1, 2, 0]);
    expect(all.levels('distanceMm')).toEqual(expected.continuous.distance_mm);
    const one = await readNwb(fx('continuous.nwb'), { channel: 2 });
    expect(Array.from(all.sweep(3 * 5 + 2))).toEqual(Array.from(one.sweep(5)));
    const two = await readNwb(fx('continuous.nwb'), { channel: [2, 0], trials: [1] });
    expect(two.column('channel')).toEqual([2, 0]);
  });

  it('reads one hyperslab per selected sweep, each only the window long', async () => {
    const spy = vi.spyOn(HyperslabReader.prototype, 'read');
    try {
      await readNwb(fx('continuous.nwb'), { channel: 1, trials: [3, 9], window: [-1, 4] });
      expect(spy.mock.calls.map((c) => [c[1] - c[0], c[2]])).toEqual([
        [51, 1],
        [51, 1],
      ]);
    } finally {
      spy.mockRestore();
    }
  });

  it('reads only the selected rows (trials: rows or a test on conditions) and a window option', async () => {
    const all = await readNwb(fx('continuous.nwb'), { channel: 0 });
    const some = await readNwb(fx('continuous.nwb'), { channel: 0, trials: [11, 2] });
    expect(some.nSweeps).toBe(2);
    expect(Array.from(some.sweep(0))).toEqual(Array.from(all.sweep(11)));
    expect(Array.from(some.sweep(1))).toEqual(Array.from(all.sweep(2)));
    const drug = await readNwb(fx('continuous.nwb'), { channel: 0, trials: (c) => c.drug === 'lidocaine' });
    expect(drug.column('fileSweep')).toEqual([6, 7, 8, 9, 10, 11]);
    const w = await readNwb(fx('continuous.nwb'), { channel: 0, window: [-2, 10] });
    expect(w.t0Ms).toBe(-2);
    expect(w.nSamples).toBe(121); // -2..10 ms at 10 kHz, both ends
    expect(Array.from(w.sweep(5))).toEqual(Array.from(all.sweep(5).subarray(30, 151)));
  });

  it('reads a TimeSeries already cut into sweeps (timestamps with gaps) from a TimeIntervals table other than trials', async () => {
    const e = expected.precut;
    const set = await readNwb(fx('precut.nwb'), { columns: { intensity: 'amp' } });
    expect(set.nSweeps).toBe(e.nSweeps);
    expect(set.nSamples).toBe(e.nSamples);
    expect(set.fs).toBe(e.fs);
    expect(set.t0Ms).toBeCloseTo(e.t0Ms, 9);
    expect(set.units).toBe('mV'); // conversion 0.001 to volts: the stored values are mV and are copied unchanged
    expect(Array.from(set.sweep(0))).toEqual(e.sweeps_mV[0]);
    expect(Array.from(set.sweep(7))).toEqual(e.sweeps_mV[1]);
    expect(set.column('intensity')).toEqual(e.amp_V);
    expect(set.levels('intensityUnit')).toEqual(['V']); // the column's unit attribute
    set.column('distanceMm').forEach((v) => expect(v).toBeCloseTo(e.distance_mm, 12)); // dist_cm
    expect(set.column('acquiredS')).toEqual(e.acquired_s); // stim_onset
    expect(set.history[0].options.intervals).toBe('/intervals/stimulation');
    expect(set.history[0].options.stimulusColumn).toBe('stim_onset');
  });

  it("uses the rows' TimeSeriesReference (idx_start) instead of searching the timestamps", async () => {
    const spy = vi.spyOn(h5().Dataset.prototype, 'slice');
    try {
      const set = await readNwb(fx('precut.nwb'), { columns: { intensity: 'amp' } });
      expect(set.nSweeps).toBe(8);
      // a search would read a strided coarse index of the timestamps ([0, n, step])
      expect(spy.mock.calls.some((c) => (c[0] as number[][])[0].length === 3)).toBe(false);
    } finally {
      spy.mockRestore();
    }
  });

  it('describeNwb lists the series, TimeIntervals tables and electrodes without reading samples', async () => {
    const c = await describeNwb(fx('continuous.nwb'));
    expect(c.nwbVersion).toBe('2.7.0');
    expect(c.writtenByFascicle).toBe(false);
    expect(c.series).toEqual([
      {
        path: '/acquisition/nerve',
        type: 'ElectricalSeries',
        shape: [15000, 3],
        unit: 'volts',
        time: 'rate',
        rate: 10000,
      },
    ]);
    expect(c.intervals[0].path).toBe('/intervals/trials');
    expect(c.intervals[0].rows).toBe(12);
    expect(c.intervals[0].columns).toContain('intensity_mA');
    expect(c.electrodes).toEqual({ rows: 3, columns: ['location', 'group_name', 'distance_mm', 'imp'] });
    expect(c.subject?.subject_id).toBe('R7');
    const p = await describeNwb(fx('precut.nwb'));
    expect(p.series[0].time).toBe('timestamps');
    expect(p.intervals.map((t) => t.path)).toEqual(['/intervals/stimulation']);
  });

  it('stimulusTimes and window read a file without an intervals table', async () => {
    const set = await readNwb(fx('no_stimulus.nwb'), { stimulusTimes: [0.02, 0.05], window: [-1, 4] });
    expect(set.nSweeps).toBe(2);
    expect(set.nSamples).toBe(26); // -1..4 ms at 5 kHz
    expect(set.fs).toBe(5000);
  });

  it('readNwbSync before nwbReady() throws NwbNotReadyError saying what to call', async () => {
    vi.resetModules();
    const fresh = await import('../../src/io/nwb');
    expect(fresh.nwbLoaded()).toBe(false);
    expect(() => fresh.readNwbSync(fx('precut.nwb'))).toThrow(/call `await nwbReady\(\)` once/);
    expect(() => fresh.readNwbSync(fx('precut.nwb'))).toThrow(fresh.NwbNotReadyError);
  });

  it('readNwbSync reads the same once the library is loaded (nwbReady in beforeAll)', () => {
    expect(readNwbSync(fx('precut.nwb'), { columns: { intensity: 'amp' } }).nSweeps).toBe(8);
  });
});

describe('readNwb errors name the file, the place inside it and the problem', () => {
  it('a truncated file', () => {
    const p = join(tmp, 'truncated.nwb');
    writeFileSync(p, readFileSync(fx('continuous.nwb')).subarray(0, 30000));
    expectInputError(
      () => readNwbSync(p),
      p,
      undefined,
      /truncated: it has 30000 bytes but its HDF5 superblock says \d+/,
    );
    const tiny = join(tmp, 'tiny.nwb');
    writeFileSync(tiny, readFileSync(fx('continuous.nwb')).subarray(0, 40));
    expectInputError(
      () => readNwbSync(tiny),
      tiny,
      undefined,
      /truncated: it has 40 bytes, fewer than its HDF5 superblock/,
    );
  });

  it('a file that is not HDF5, and HDF5 that is not NWB', () => {
    const pj = join(__dirname, '..', '..', 'package.json');
    expectInputError(() => readNwbSync(pj), pj, undefined, /not an HDF5 file/);
    expectInputError(
      () => readNwbSync(fx('not_nwb.h5')),
      fx('not_nwb.h5'),
      '/',
      /without the NWB root attributes.*NWBFile/,
    );
    expectInputError(
      () => readNwbSync(join(tmp, 'missing.nwb')),
      join(tmp, 'missing.nwb'),
      undefined,
      /cannot open file \(ENOENT\)/,
    );
  });

  it('a series with no stimulus times', () => {
    expectInputError(
      () => readNwbSync(fx('no_stimulus.nwb')),
      fx('no_stimulus.nwb'),
      '/intervals/trials',
      /no trials table.*no stimulus times/,
    );
  });

  it('a NaN or infinite sample: an InputError naming the file, the dataset and the sample, before any SweepSet', () => {
    // a copy of the h5py fixture with one stored sample replaced through h5wasm (float32 1-D, 8 sweeps of 200)
    for (const [name, value] of [
      ['nan-sample.nwb', NaN],
      ['inf-sample.nwb', -Infinity],
    ] as const) {
      const p = join(tmp, name);
      copyFileSync(fx('precut.nwb'), p);
      const f = new (h5().File)(p, 'a');
      try {
        (f.get('acquisition/cap_sweeps/data') as import('h5wasm').Dataset).write_slice(
          [[1010, 1011]],
          new Float32Array([value]),
        );
      } finally {
        f.close();
      }
      let err: unknown;
      try {
        readNwbSync(p, { columns: { intensity: 'amp' } });
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(InputError); // not the SweepSet constructor's OptionError
      expect(err).not.toBeInstanceOf(OptionError);
      expectInputError(
        () => readNwbSync(p, { columns: { intensity: 'amp' } }),
        p,
        '/acquisition/cap_sweeps/data',
        new RegExp(`nan-sample|inf-sample`),
      );
      const msg = (err as Error).message;
      expect(msg).toContain(p);
      expect(msg).toContain('/acquisition/cap_sweeps/data');
      expect(msg).toMatch(new RegExp(`a non-finite sample \\(${String(value)}\\) at sample 1010`));
      expect((err as InputError).place.sweep).toBe(5); // the row whose window holds sample 1010 (200 per sweep)
      // through a manifest the same error, exit 3 on the command line
      const dir = mkdtempSync(join(tmp, 'nan-manifest-'));
      copyFileSync(p, join(dir, 'rec.nwb'));
      const mp = join(dir, 'manifest.json');
      writeFileSync(
        mp,
        JSON.stringify({
          fascicleManifest: 1,
          files: [{ path: 'rec.nwb', options: { columns: { intensity: 'amp' } }, conditions: { preparation: 'M1' } }],
        }),
      );
      expect(() => readManifest(mp)).toThrow(/rec\.nwb, sweep 5, field \/acquisition\/cap_sweeps\/data: a non-finite/);
    }
  });

  it('trials columns that do not map: a unit it does not know, words for a temperature, a mapping to a missing column', () => {
    const p = fx('bad_trials.nwb');
    expectInputError(() => readNwbSync(p), p, '/intervals/trials/pulse_width', /unit "fortnights"/);
    expectInputError(
      () => readNwbSync(p, { columns: { pulseWidthMs: null } }),
      p,
      '/intervals/trials/temperature',
      /"warm" in row 0, which is not a number/,
    );
    expectInputError(
      () => readNwbSync(fx('precut.nwb'), { columns: { intensity: 'ampp' } }),
      fx('precut.nwb'),
      '/intervals/stimulation/ampp',
      /does not have \(did you mean "amp"\?\)/,
    );
  });

  it('several channels without the channel option; a series name with a typo; a window outside the recording or across a gap', () => {
    expectInputError(
      () => readNwbSync(fx('continuous.nwb')),
      fx('continuous.nwb'),
      '/acquisition/nerve/data',
      /3 channels/,
    );
    expectInputError(
      () => readNwbSync(fx('continuous.nwb'), { channel: 0, series: 'nerv' }),
      fx('continuous.nwb'),
      '/acquisition/nerv',
      /did you mean "nerve"/,
    );
    expectInputError(
      () => readNwbSync(fx('continuous.nwb'), { channel: 0, window: [-5, 500] }),
      fx('continuous.nwb'),
      '/acquisition/nerve/data',
      /outside the series/,
    );
    expectInputError(
      () => readNwbSync(fx('precut.nwb'), { columns: { intensity: 'amp' }, window: [-0.8, 9] }),
      fx('precut.nwb'),
      /\/acquisition\/cap_sweeps\/(timestamps|data)/,
      /gap|outside the series/,
    );
  });

  it('a series whose unit is not a voltage, or that has no time base', () => {
    const lib = h5();
    const make = (name: string, build: (g: import('h5wasm').Group) => void) => {
      const p = join(tmp, name);
      const f = new lib.File(p, 'w');
      f.create_attribute('neurodata_type', 'NWBFile', null, 'S');
      f.create_attribute('nwb_version', '2.7.0', null, 'S');
      const g = f.create_group('acquisition').create_group('trace');
      g.create_attribute('neurodata_type', 'TimeSeries', null, 'S');
      build(g);
      f.close();
      return p;
    };
    const lux = make('lux.nwb', (g) => {
      g.create_dataset({ name: 'data', data: new Float32Array(10) }).create_attribute('unit', 'lux', null, 'S');
      g.create_dataset({ name: 'starting_time', data: 0 }).create_attribute('rate', 1000, null, '<f');
    });
    expectInputError(
      () => readNwbSync(lux, { stimulusTimes: [0.002], window: [0, 1] }),
      lux,
      '/acquisition/trace/data',
      /unit "lux", not a voltage/,
    );
    const timeless = make('timeless.nwb', (g) => {
      g.create_dataset({ name: 'data', data: new Float32Array(10) }).create_attribute('unit', 'volts', null, 'S');
    });
    expectInputError(
      () => readNwbSync(timeless, { stimulusTimes: [0.002], window: [0, 1] }),
      timeless,
      '/acquisition/trace',
      /neither starting_time \(with rate\) nor timestamps/,
    );
  });

  it('options are checked at the call', () => {
    expect(() => readNwbSync(fx('precut.nwb'), { windw: [0, 1] } as never)).toThrow(
      /unknown key "windw" in readNwb options \(did you mean "window"\?\)/,
    );
    expect(() => readNwbSync(fx('precut.nwb'), { window: [3, 1] })).toThrow(OptionError);
    expect(() => readNwbSync(fx('precut.nwb'), { channel: -1 })).toThrow(/invalid channel/);
  });
});

/** A small set with several sites and distances, and conditions of every kind (nulls, booleans, empty text). */
function sampleSet(): SweepSet {
  const nSweeps = 6,
    nSamples = 300,
    fs = 20000;
  const data = new Float64Array(nSweeps * nSamples);
  for (let s = 0; s < nSweeps; s++)
    for (let i = 0; i < nSamples; i++) data[s * nSamples + i] = (Math.sin(i / (7 + s)) * (s + 1)) / 3 + 1e-3 * i;
  const conditions: Conditions[] = Array.from({ length: nSweeps }, (_, s) => ({
    preparation: 'N1',
    site: s < 3 ? 'proximal' : 'distal',
    distanceMm: s < 3 ? 20 : 32.5,
    intensity: 0.5 * (s + 1),
    intensityUnit: 'mA',
    pulseWidthMs: 0.05,
    temperatureC: 36.6,
    repeat: s % 2,
    flagged: s === 4,
    note: s === 2 ? null : `n${s}`,
    empty: s === 1 ? '' : 'x',
    maybe: s === 3 ? null : 1.25,
    acquiredS: 10 + s * 2.5,
    file: 'demo.csv',
    fileSweep: s,
  }));
  return new SweepSet({
    data,
    nSweeps,
    nSamples,
    fs,
    t0Ms: -1.99,
    units: 'uV',
    conditions,
    history: [{ verb: 'readDelimited', options: { path: 'demo.csv' }, version: 'test' }],
    sources: [],
  });
}

describe('writeNwb(set, path, options) and reading back', () => {
  it('round trip: identical samples, time base and conditions; several electrodes become several series', async () => {
    const set = sampleSet();
    const p = join(tmp, 'round.nwb');
    const res = await writeNwb(set, p, { raw: true });
    expect(res.series).toEqual(['/acquisition/sweeps_e0', '/acquisition/sweeps_e1']);
    expect(res.electrodes).toBe(2);
    const back = await readNwb(p);
    expect(back.nSweeps).toBe(set.nSweeps);
    expect(back.fs).toBe(set.fs);
    expect(back.t0Ms).toBe(set.t0Ms);
    expect(back.units).toBe(set.units);
    expect(Array.from(back.data)).toEqual(Array.from(set.data));
    back.conditions.forEach((c, i) => {
      const { file, fileSweep, ...orig } = set.conditions[i];
      const { file: f2, fileSweep: s2, sourceFile, sourceSweep, ...rest } = c;
      expect(rest).toEqual(orig);
      expect([sourceFile, sourceSweep]).toEqual([file, fileSweep]);
      expect([f2, s2]).toEqual([p, i]);
    });
    expect(writtenByFascicle(p)).toBe(true);
    expect(writtenByFascicle(fx('continuous.nwb'))).toBe(false);
  });

  it('compression: gzip-compressed samples and timestamps read back identical', async () => {
    const set = sampleSet();
    const p = join(tmp, 'gzip.nwb');
    await writeNwb(set, p, { raw: true, compression: 6 });
    const back = await readNwb(p);
    expect(Array.from(back.data)).toEqual(Array.from(set.data));
    expect(back.t0Ms).toBe(set.t0Ms);
    await expect(writeNwb(set, join(tmp, 'gz2.nwb'), { compression: 11 })).rejects.toThrow(/invalid compression: 11/);
  });

  it('HyperslabReader gives what h5wasm slice() gives (int16 2-D with gzip, float32 1-D)', () => {
    const lib = h5();
    for (const [file, path, col] of [
      [fx('continuous.nwb'), 'acquisition/nerve/data', 2],
      [fx('precut.nwb'), 'acquisition/cap_sweeps/data', null],
    ] as const) {
      const f = new lib.File(file, 'r');
      try {
        const d = f.get(path) as import('h5wasm').Dataset;
        const r = new HyperslabReader(d);
        const got: number[] = [];
        r.read(777, 1234, col, (k, v) => {
          got[k] = v;
        });
        r.close();
        const ranges: [number, number][] =
          col === null
            ? [[777, 1234]]
            : [
                [777, 1234],
                [col, col + 1],
              ];
        expect(got).toEqual(Array.from(d.slice(ranges) as ArrayLike<number>));
      } finally {
        f.close();
      }
    }
  });

  it('conditioned samples go to a processing module with the history; raw: true refuses conditioned samples', async () => {
    const raw = await readNwb(fx('continuous.nwb'), { channel: 2 });
    const cond = raw.baseline({ window: [-4, -0.5] }).lowpass(2000);
    await expect(writeNwb(cond, join(tmp, 'x.nwb'), { raw: true })).rejects.toThrow(
      /raw: true for samples changed by baseline, filter/,
    );
    const p = join(tmp, 'conditioned.nwb');
    const components = [
      { sweep: 0, class: 'A', latency_ms: 1.25, detected: true, reason: null, 'v/d': 2 },
      { sweep: 1, class: 'A', latency_ms: null, detected: false, reason: 'below noise', 'v/d': 3 },
    ];
    const res = await writeNwb(cond, p, { results: { components, flags: [] } });
    expect(res.series).toEqual(['/processing/fascicle/sweeps']);
    expect(res.tables).toEqual(['components', 'flags']);
    const back = await readNwb(p);
    expect(Array.from(back.data)).toEqual(Array.from(cond.data));
    expect(back.column('site')).toEqual(cond.column('site'));
    expect(back.column('acquiredS')).toEqual(cond.column('acquiredS'));
    const tables = await readNwbTables(p);
    expect(tables.components).toEqual(components);
    expect(tables.flags).toEqual([]);
  });

  it('never overwrites a file fascicle did not write; replaces its own only with overwrite; leaves no temporary file', async () => {
    const set = sampleSet();
    const foreign = join(tmp, 'foreign.nwb');
    copyFileSync(fx('continuous.nwb'), foreign);
    const before = sha(foreign);
    await expect(writeNwb(set, foreign, { raw: true })).rejects.toThrow(OutputError);
    await expect(writeNwb(set, foreign, { raw: true, overwrite: true })).rejects.toThrow(
      /not an NWB file written by fascicle/,
    );
    expect(sha(foreign)).toBe(before);
    const text = join(tmp, 'notes.nwb');
    writeFileSync(text, 'my notes');
    await expect(writeNwb(set, text, { raw: true, overwrite: true })).rejects.toThrow(
      /not an NWB file written by fascicle/,
    );
    expect(readFileSync(text, 'utf8')).toBe('my notes');
    const own = join(tmp, 'own.nwb');
    await writeNwb(set, own, { raw: true });
    await expect(writeNwb(set, own, { raw: true })).rejects.toThrow(/the file exists/);
    const t1 = statSync(own).mtimeMs;
    await writeNwb(set.select([0, 1]), own, { raw: true, overwrite: true });
    expect((await readNwb(own)).nSweeps).toBe(2);
    expect(statSync(own).mtimeMs).toBeGreaterThanOrEqual(t1);
    const input = await readNwb(fx('precut.nwb'), { columns: { intensity: 'amp' } });
    await expect(writeNwb(input, fx('precut.nwb'), { raw: true, overwrite: true })).rejects.toThrow(
      /it is an input of this set/,
    );
    const err = await writeNwb(set, join(tmp, 'no-such-folder', 'x.nwb'), { raw: true }).catch((e) => e);
    expect(err).toBeInstanceOf(OutputError);
    expect(readdirSync(tmp).filter((f) => f.includes('.tmp-'))).toEqual([]);
  });
});

describe('readManifest with an NWB entry', () => {
  it('a .nwb path is read by readNwb; defaults < file conditions < trial columns < sweeps entries, as for other formats', () => {
    const dir = mkdtempSync(join(tmp, 'manifest-'));
    copyFileSync(fx('continuous.nwb'), join(dir, 'rec.nwb'));
    const manifest = {
      fascicleManifest: 1,
      study: 'nwb entry',
      required: ['preparation'],
      defaults: { temperatureC: 30, series: 'intensity' },
      files: [
        {
          path: 'rec.nwb',
          options: { channel: 1, trials: [0, 1, 2] },
          conditions: { preparation: 'M1' },
          sweeps: [{ repeat: 0 }, { repeat: 1 }, { repeat: 2 }],
        },
      ],
    };
    const mp = join(dir, 'manifest.json');
    writeFileSync(mp, JSON.stringify(manifest));
    const set = readManifest(mp);
    expect(set.nSweeps).toBe(3);
    expect(set.column('preparation')).toEqual(['M1', 'M1', 'M1']); // the manifest's over /general/subject
    expect(set.column('temperatureC')).toEqual([32.5, 32.5, 32.5]); // the trials table's over the defaults
    expect(set.column('series')).toEqual(['intensity', 'intensity', 'intensity']);
    expect(set.column('repeat')).toEqual([0, 1, 2]);
    expect(set.column('file')).toEqual(['rec.nwb', 'rec.nwb', 'rec.nwb']);
    expect(set.column('distanceMm')).toEqual([24.5, 24.5, 24.5]);
    const direct = readNwbSync(join(dir, 'rec.nwb'), { channel: 1, trials: [0, 1, 2] });
    expect(Array.from(set.data)).toEqual(Array.from(direct.data));
  });

  it('a bad NWB option in a manifest names the manifest field', () => {
    const dir = mkdtempSync(join(tmp, 'manifest-'));
    copyFileSync(fx('continuous.nwb'), join(dir, 'rec.nwb'));
    const mp = join(dir, 'manifest.json');
    writeFileSync(
      mp,
      JSON.stringify({
        fascicleManifest: 1,
        files: [{ path: 'rec.nwb', options: { channel: 1, windw: [0, 1] }, conditions: { preparation: 'M1' } }],
      }),
    );
    expect(() => readManifest(mp)).toThrow(/files\/0\/options.*unknown key "windw".*did you mean "window"/);
  });
});

describe('the demo study through an NWB copy', () => {
  it('a preparation of data-demo written to NWB and read back gives the same component, velocity and recruitment tables', async () => {
    const manifestPath = join(__dirname, '..', '..', 'data-demo', 'manifest.json');
    const manifest = JSON.parse(readFileSync(manifestPath, 'utf8'));
    const set = readManifest(manifestPath, {
      only: (f) => f.conditions?.preparation === 'R1' && /intensity|distance/.test(f.path),
    });
    const p = join(tmp, 'demo-R1.nwb');
    await writeNwb(set, p, { raw: true });
    const copy = await readNwb(p);
    expect(copy.extras.manifest).toMatchObject({ classPreset: manifest.classPreset, analysis: manifest.analysis });
    const a = runPipeline(set, manifest.analysis);
    const b = runPipeline(copy, manifest.analysis);
    const strip = (rows: readonly object[]) =>
      rows.map((r) => {
        const { file, fileSweep, sourceFile, sourceSweep, ...rest } = r as Record<string, unknown>;
        return rest;
      });
    const ta = a.components.tables(),
      tb = b.components.tables();
    expect(Object.keys(tb)).toEqual(Object.keys(ta));
    expect(Object.values(ta).reduce((n, rows) => n + rows.length, 0)).toBeGreaterThan(10);
    expect(a.velocity!.rows.length).toBeGreaterThan(0);
    expect(Array.from(copy.data)).toEqual(Array.from(set.data));
    for (const k of Object.keys(ta)) expect(strip(tb[k]), k).toEqual(strip(ta[k]));
    expect(a.velocity && strip(b.velocity!.rows)).toEqual(a.velocity && strip(a.velocity.rows));
    expect(b.recruitment?.tables()).toEqual(a.recruitment?.tables());
    // the results travel in the file too
    const withResults = join(tmp, 'demo-R1-results.nwb');
    const w = await writeNwb(a.conditioned, withResults, { results: a });
    const tables = await readNwbTables(withResults);
    expect([...w.tables].sort()).toEqual(Object.keys(tables).sort());
    const velocityName = Object.keys(a.velocity!.tables())[0];
    expect(tables[velocityName].length).toBe(a.velocity!.rows.length);
    // with the bundle's column names (lowest_detected_intensity_mA, distance_mm: DEVELOPERS.md "Tables of a bundle")
    const named = bundleColumns('thresholds', a.thresholds as never, { response: a.conditioned.units });
    expect(tables.thresholds).toEqual(JSON.parse(JSON.stringify(named)));
    expect(Object.keys(tables.thresholds[0])).toContain('lowest_detected_intensity_mA');
  });
});

describe('an independent reader (h5py) and validator (hdmf) on the files', () => {
  it.skipIf(!HAVE_HDMF)('hdmf validates the h5py fixtures against the NWB 2.7.0 schema', () => {
    for (const f of ['continuous.nwb', 'precut.nwb', 'no_stimulus.nwb', 'bad_trials.nwb']) {
      const r = independent(fx(f));
      expect(r.errors, f).toEqual([]);
    }
  });

  it.skipIf(!HAVE_H5PY)(
    'h5py finds the NWB layout, data, timestamps and conversion in what fascicle wrote; hdmf validates it',
    async () => {
      const set = sampleSet();
      const p = join(tmp, 'independent.nwb');
      await writeNwb(set, p, {
        raw: true,
        sessionStartTime: '2026-03-14T09:30:00+01:00',
        results: { velocity: [{ class: 'A', v: 41.5 }] },
      });
      const r = independent(p);
      if (HAVE_HDMF) expect(r.errors).toEqual([]);
      const L = r.layout;
      expect(L.root.neurodata_type).toBe('NWBFile');
      expect(L.root.namespace).toBe('core');
      expect(L.root.nwb_version).toBe('2.7.0');
      expect(L.root.session_start_time).toBe('2026-03-14T09:30:00+01:00');
      expect(r.types['/acquisition/sweeps_e0']).toBe('ElectricalSeries');
      expect(r.types['/intervals/trials']).toBe('TimeIntervals');
      expect(r.types['/general/extracellular_ephys/electrodes']).toBe('DynamicTable');
      expect(r.types['/processing/fascicle']).toBe('ProcessingModule');
      const s0 = L.series['/acquisition/sweeps_e0'];
      expect(s0.shape).toEqual([3 * set.nSamples, 1]);
      expect(s0.dtype).toBe('float64');
      expect(s0.unit).toBe('volts');
      expect(Math.fround(s0.conversion)).toBe(Math.fround(1e-6)); // stored in uV, float32 per the schema
      expect(s0.first).toEqual(Array.from(set.sweep(0).subarray(0, 5)));
      expect(s0.timestamps.shape).toEqual([3 * set.nSamples]);
      expect(s0.timestamps.unit).toBe('seconds');
      expect(s0.electrodes.table).toBe('/general/extracellular_ephys/electrodes');
      let sumV = 0;
      for (let i = 0; i < 3 * set.nSamples; i++) sumV += set.data[i];
      expect(s0.sum_volts).toBeCloseTo(sumV * s0.conversion, 12);
      const trials = L.tables['/intervals/trials'];
      expect(trials.rows).toBe(6);
      expect(trials.values.intensity).toEqual(set.column('intensity'));
      expect(trials.values.site).toEqual(set.column('site'));
      expect(trials.values.timeseries[4]).toEqual([300, 300, '/acquisition/sweeps_e1']);
      const st = trials.values.stimulus_time as number[];
      trials.values.start_time.forEach((t: number, i: number) => expect((t - st[i]) * 1000).toBeCloseTo(set.t0Ms, 9));
      const el = L.tables['/general/extracellular_ephys/electrodes'];
      expect(el.values.distance_mm).toEqual([20, 32.5]);
      expect(el.values.location).toEqual(['proximal', 'distal']);
      expect(L.tables['/processing/fascicle/velocity'].values.v).toEqual([41.5]);
    },
  );
});

describe('result tables in the processing module carry the bundle column names', () => {
  it.skipIf(!HAVE_H5PY)(
    'h5py reads snake_case unit-last columns (distance_mm, fit_threshold_5pct_mA, ic50_uM): those of the bundle',
    async () => {
      const set = sampleSet();
      const p = join(tmp, 'named.nwb');
      // rows with the analyses' own keys (the notebook API), as recruitment and dose-response results hold them
      const recruitment = [
        { preparation: 'P1', class: 'A', distanceMm: 20, temperatureC: 37, intensityUnit: 'mA', threshold: 0.061 },
      ];
      const summary = [{ class: 'A', distanceMm: 20, concentrationUnit: 'uM', ic50: 69.4, ic50_ci95_low: 62.6 }];
      await writeNwb(set, p, { raw: true, results: { recruitment, dose_response_summary: summary } });
      const L = independent(p).layout;
      const rec = L.tables['/processing/fascicle/recruitment'];
      const dr = L.tables['/processing/fascicle/dose_response_summary'];
      // the names DEVELOPERS.md "Tables of a bundle" gives (the bundle's CSV header)
      expect(rec.colnames).toEqual([
        'preparation',
        'class',
        'distance_mm',
        'temperature_C',
        'intensity_unit',
        'fit_threshold_5pct_mA',
      ]);
      expect(dr.colnames).toEqual(['class', 'distance_mm', 'concentration_unit', 'ic50_uM', 'ic50_ci95_low_uM']);
      expect(rec.colnames).toEqual(Object.keys(bundleColumns('recruitment', recruitment)[0]));
      expect(rec.values.fit_threshold_5pct_mA).toEqual([0.061]);
      expect(dr.values.ic50_uM).toEqual([69.4]);
      // and fascicle reads the same names back
      const back = await readNwbTables(p);
      expect(Object.keys(back.recruitment[0])).toEqual(rec.colnames);
    },
  );
});

describe('a write the disk refuses (HDF5 errors are thrown, not printed and ignored)', () => {
  // found by writing --nwb to a full 600 kB tmpfs: the HDF5 library printed thousands of HDF5-DIAG lines, the call
  // returned normally and a damaged 3.7 MB sparse file was renamed into place. The errno names are POSIX's.
  const script = (target: string) =>
    [
      `const { nwbReady } = require(${JSON.stringify(join(__dirname, '../../dist/io/nwbLib.js'))});`,
      `const { writeNwbSync } = require(${JSON.stringify(join(__dirname, '../../dist/io/nwbWrite.js'))});`,
      `const { SweepSet } = require(${JSON.stringify(join(__dirname, '../../dist/sweeps/SweepSet.js'))});`,
      '(async () => {',
      '  await nwbReady();',
      '  const n = 4000, N = 100;',
      '  const data = Float64Array.from({ length: n * N }, (_, i) => Math.sin(i / 7));',
      "  const set = new SweepSet({ data, nSweeps: N, nSamples: n, fs: 50000, t0Ms: -1, units: 'uV',",
      "    conditions: Array.from({ length: N }, (_, i) => ({ preparation: 'P', intensity: i })) });",
      '  try {',
      `    writeNwbSync(set, ${JSON.stringify(target)});`,
      '    console.log(JSON.stringify({ ok: true }));',
      '  } catch (e) {',
      '    console.log(JSON.stringify({ ok: false, name: e.name, message: e.message, code: e.code ?? null }));',
      '  }',
      '})();',
    ].join('\n');
  const runLimited = (prefix: string, target: string) =>
    spawnSync('bash', ['-c', `trap '' XFSZ; ${prefix} exec "${process.execPath}" -e "$0"`, script(target)], {
      encoding: 'utf8',
    });
  const built = existsSync(join(__dirname, '../../dist/io/nwbWrite.js'));
  it.skipIf(!built)('a file-size limit (EFBIG): an OutputError naming the file and the reason, no file left', () => {
    const dir = mkdtempSync(join(tmp, 'efbig-'));
    const target = join(dir, 'big.nwb');
    const r = runLimited('ulimit -f 200;', target);
    const out = JSON.parse(r.stdout.trim().split('\n').pop() ?? '{}');
    expect(out.ok, r.stderr.slice(0, 500)).toBe(false);
    expect(out.name).toBe('OutputError');
    expect(out.message).toMatch(/writing .*big\.nwb failed: File too large \(EFBIG\); nothing was written/);
    expect(readdirSync(dir)).toEqual([]);
    // no flood of library diagnostics on stderr
    expect(r.stderr.split('\n').filter((l) => l.includes('HDF5-DIAG')).length).toBe(0);
  });
  it.skipIf(!built)('a full disk (a 300 kB tmpfs, where it can be mounted): ENOSPC named, no file left', () => {
    const mnt = mkdtempSync(join(tmp, 'full-'));
    if (spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=300k', 'tmpfs', mnt]).status !== 0) return; // not root
    try {
      const r = runLimited('', join(mnt, 'x.nwb'));
      const out = JSON.parse(r.stdout.trim().split('\n').pop() ?? '{}');
      expect(out.ok, r.stderr.slice(0, 500)).toBe(false);
      expect(out.message).toMatch(/x\.nwb failed: the disk is full \(ENOSPC\); nothing was written/);
      expect(readdirSync(mnt)).toEqual([]);
    } finally {
      spawnSync('umount', [mnt]);
    }
  });
  it.skipIf(!built)('a read-only file system (a read-only tmpfs, where it can be mounted): EROFS named', () => {
    const mnt = mkdtempSync(join(tmp, 'ro-'));
    if (spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=300k,ro', 'tmpfs', mnt]).status !== 0) return; // not root
    try {
      const r = runLimited('', join(mnt, 'x.nwb'));
      const out = JSON.parse(r.stdout.trim().split('\n').pop() ?? '{}');
      expect(out.message).toMatch(/x\.nwb failed: Read-only file system \(EROFS\); nothing was written/);
      expect(r.stderr).not.toMatch(/HDF5-DIAG/);
    } finally {
      spawnSync('umount', [mnt]);
    }
  });
});
