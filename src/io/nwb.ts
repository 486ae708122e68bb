/**
 * Neurodata Without Borders (NWB 2.x, HDF5) reader: evoked recordings into a SweepSet.
 *
 * What is read, and from where in the file:
 * - samples: a TimeSeries or ElectricalSeries (any type whose name ends in "Series" with a numeric
 *   `data`) in /acquisition or a processing module; `data` is 1-D (times) or 2-D (times x channels).
 *   Values are `data * conversion * channel_conversion[channel] + offset` in the series' unit
 *   (volts for ElectricalSeries), converted to `units`.
 * - time: `starting_time` with its `rate`, or `timestamps` (which may have gaps: a recording
 *   already cut into sweeps).
 * - stimulus times and conditions: a TimeIntervals table (`/intervals/trials` by default), one
 *   sweep per row; the stimulus is at the `stimulusColumn` (default: stimulus_time, stim_time,
 *   stimulus_onset, stim_onset or onset_time, else start_time). Columns become conditions by the
 *   mapping in nwbColumns.ts, which `columns` overrides.
 * - electrodes (ElectricalSeries): the row of the chosen channel in the electrodes table gives
 *   `electrode` (its id), `site` (location) and `distanceMm` (a distance column); a value in the
 *   trials table wins. `channel: 'all'` (or a list) reads one sweep per row and channel.
 * - /general and /general/subject: into the history step and `extras.nwb`; `preparation`
 *   defaults to the subject's subject_id.
 * Each sweep covers `window` (ms, relative to its stimulus; default: the span that every row's
 * start_time..stop_time covers), cut at the sample nearest to the stimulus. Only the selected
 * rows are read from the file (one hyperslab per sweep).
 * A file fascicle wrote (its /general/source_script) carries every condition in its trials table
 * and its study settings in /processing/fascicle; those are read instead of the file-level ones.
 */
import { closeSync } from 'node:fs';
import { InputError, OptionError } from '../errors';
import { checkKeys, conditionsProblem, nearest, windowMs, shown, warnOnce } from '../validate';
import { SweepSet, type Conditions, type ConditionValue } from '../sweeps/SweepSet';
import { SIGNAL_UNITS, type SignalUnit } from '../sweeps/units';
import { lazySource, openInput } from './files';
import { sharedSamples } from '../parallel/pool';
import { VERSION } from '../version';
import {
  nwbReady,
  openHdf5,
  HyperslabReader,
  at,
  attr,
  attrNumber,
  attrText,
  typeOf,
  numbers,
  texts,
  elementKind,
  isGroup,
  isDataset,
  type H5File,
  type H5Group,
  type H5Dataset,
} from './nwbLib';
import { NWB_CONDITIONS, findColumn, convertColumn, decodeColumn, type TableColumn } from './nwbColumns';

export { nwbReady, nwbLoaded, NwbNotReadyError } from './nwbLib';

export interface NwbReadOptions {
  /** Series to read: its name in /acquisition or its HDF5 path, or several. Default: the only series in the file
   * (every series, when fascicle wrote the file). */
  series?: string | readonly string[];
  /** Channel (column) of a 2-D series, 0-based; several, or 'all' (each row then gives one sweep per channel,
   * with a `channel` condition). Default 0 when the series has one channel; required otherwise. */
  channel?: number | readonly number[] | 'all';
  /** TimeIntervals table with one row per stimulus: its name under /intervals or its path. Default "trials",
   * else the only TimeIntervals table under /intervals. */
  intervals?: string;
  /** Column of the intervals table with the stimulus times (s). Default: see the module comment. */
  stimulusColumn?: string;
  /** Stimulus times in s on the file's time axis, when the file has no intervals table (then `window` is required). */
  stimulusTimes?: readonly number[];
  /** Sweep window [from, to] in ms relative to each stimulus (both ends included). */
  window?: [number, number];
  /** Condition name -> column name, overriding the default mapping; null: not read from the table. */
  columns?: Readonly<Record<string, string | null>>;
  /** Units of the samples. Default: V, mV or uV when the stored values already are in one of them, else mV. */
  units?: SignalUnit;
  /** Rows (0-based) to read, or a test on each row's conditions. Only these rows' samples are read. */
  trials?: readonly number[] | ((conditions: Conditions, row: number) => boolean);
  /** Conditions for every sweep (the table's columns win over them). */
  conditions?: Conditions;
}

const READ_KEYS = [
  'series',
  'channel',
  'intervals',
  'stimulusColumn',
  'stimulusTimes',
  'window',
  'columns',
  'units',
  'trials',
  'conditions',
];
const STIMULUS_NAMES = ['stimulus_time', 'stim_time', 'stimulus_onset', 'stim_onset', 'onset_time'];
const VOLT_UNITS: Record<string, number> = {
  volts: 1,
  volt: 1,
  v: 1,
  millivolts: 1e-3,
  millivolt: 1e-3,
  mv: 1e-3,
  microvolts: 1e-6,
  microvolt: 1e-6,
  uv: 1e-6,
};
const UNIT_SCALE: Record<SignalUnit, number> = { V: 1, mV: 1e-3, uV: 1e-6 };
/** What fascicle writes in /general/source_script. */
export const FASCICLE_SCRIPT = 'fascicle';

/** Open an NWB file read-only (a regular file: openInput refuses a FIFO without waiting) as HDF5. */
function openNwb(path: string): { f: H5File; stat: import('node:fs').Stats } {
  const { fd, stat } = openInput(path);
  try {
    return { f: openHdf5(path, fd, stat.size), stat };
  } catch (e) {
    try {
      closeSync(fd);
    } catch {
      /* closed already */
    }
    throw e;
  }
}

/** Read an NWB file into a SweepSet (loads the HDF5 library first when needed). */
export async function readNwb(path: string, options: NwbReadOptions = {}): Promise<SweepSet> {
  await nwbReady();
  return readNwbSync(path, options);
}

interface SeriesInfo {
  path: string;
  group: H5Group;
  data: H5Dataset;
  nTimes: number;
  nChannels: number;
  channel: number;
  /** raw -> value in output units: raw * gain + shift */
  gain: number;
  shift: number;
  identity: boolean;
  unit: string;
  conversion: number;
  offset: number;
  resolution: number;
  channelConversion: number;
  rate?: number;
  startingTime?: number;
  timestamps?: H5Dataset;
  tFirst: number;
  tLast: number;
  electrode: Record<string, ConditionValue>;
  /** every step-th timestamp (built on first use) */
  coarse?: { step: number; values: Float64Array };
  reader?: HyperslabReader;
}

/**
 * Read an NWB file into a SweepSet, synchronously (after `await nwbReady()`).
 * @throws InputError naming the file, the HDF5 path and what is missing or wrong there.
 */
export function readNwbSync(path: string, options: NwbReadOptions = {}): SweepSet {
  checkKeys('readNwb options', options, READ_KEYS);
  const o = options;
  const chOk = (c: unknown) => Number.isInteger(c) && (c as number) >= 0;
  const chList = Array.isArray(o.channel) ? o.channel.length > 0 && o.channel.every(chOk) : false;
  if (o.channel !== undefined && o.channel !== 'all' && !chList && !chOk(o.channel)) {
    throw new OptionError(`invalid channel: ${shown(o.channel)}; must be an integer >= 0, a list of them, or "all"`);
  }
  const win = o.window === undefined ? undefined : windowMs('window', o.window);
  if (o.units !== undefined && !SIGNAL_UNITS.includes(o.units)) {
    throw new OptionError(`invalid units: ${shown(o.units)}; must be one of ${SIGNAL_UNITS.join(', ')}`);
  }
  if (o.conditions !== undefined && conditionsProblem(o.conditions)) {
    throw new OptionError(
      `invalid conditions: ${conditionsProblem(o.conditions)}; must be an object of strings, finite numbers, booleans or null`,
    );
  }
  if (o.columns !== undefined) {
    if (o.columns === null || typeof o.columns !== 'object') {
      throw new OptionError(
        `invalid columns: ${shown(o.columns)}; must be an object of condition -> column name or null`,
      );
    }
    for (const [k, v] of Object.entries(o.columns)) {
      if (v !== null && (typeof v !== 'string' || !v)) {
        throw new OptionError(`invalid columns.${k}: ${shown(v)}; must be a column name or null`);
      }
    }
  }
  if (o.stimulusTimes !== undefined) {
    if (
      !Array.isArray(o.stimulusTimes) ||
      o.stimulusTimes.length === 0 ||
      !o.stimulusTimes.every((t) => typeof t === 'number' && Number.isFinite(t))
    ) {
      throw new OptionError(
        `invalid stimulusTimes: ${shown(o.stimulusTimes)}; must be a non-empty array of finite times in s`,
      );
    }
    if (!win) throw new OptionError('stimulusTimes needs a window ([from, to] in ms around each stimulus)');
  }

  const { f, stat } = openNwb(path);
  try {
    return readOpen(path, f, o, win, stat);
  } finally {
    f.close();
  }
}

function readOpen(
  path: string,
  f: H5File,
  o: NwbReadOptions,
  win: [number, number] | undefined,
  stat: import('node:fs').Stats,
): SweepSet {
  const bad = (field: string, problem: string, expected: string): never => {
    throw new InputError({ file: path, field }, problem, expected);
  };
  // the NWB root
  const rootType = typeOf(f);
  const version = attrText(f, 'nwb_version');
  if (rootType !== 'NWBFile' || version === undefined) {
    bad(
      '/',
      `HDF5 without the NWB root attributes (neurodata_type ${shown(rootType ?? null)}, nwb_version ${shown(version ?? null)})`,
      'an NWB 2.x file: the root group has neurodata_type "NWBFile" and an nwb_version',
    );
  }
  if (!/^2\./.test(version!))
    bad('/', `nwb_version ${shown(version)}`, 'NWB 2.x (NWB 1.x files must be converted first)');
  const meta = fileMetadata(f);
  const byFascicle = typeof meta.source_script === 'string' && meta.source_script.startsWith(FASCICLE_SCRIPT);

  // the series
  const candidates = findSeries(f);
  let paths: string[];
  if (o.series !== undefined) {
    const want = typeof o.series === 'string' ? [o.series] : [...o.series];
    if (want.length === 0 || !want.every((s) => typeof s === 'string' && s)) {
      throw new OptionError(
        `invalid series: ${shown(o.series)}; must be a series name or HDF5 path, or a list of them`,
      );
    }
    paths = want.map((s) => {
      const p = s.startsWith('/') ? s : (candidates.find((c) => c.endsWith('/' + s)) ?? `/acquisition/${s}`);
      if (!candidates.includes(p)) {
        const near = nearest(
          s,
          candidates.map((c) => c.split('/').pop()!),
        );
        bad(
          p,
          `no TimeSeries at ${p}${near ? ` (did you mean ${JSON.stringify(near)}?)` : ''}`,
          candidates.length
            ? `one of ${candidates.join(', ')}`
            : 'a TimeSeries or ElectricalSeries in /acquisition or /processing',
        );
      }
      return p;
    });
  } else if (candidates.length === 0) {
    paths = bad(
      '/acquisition',
      'no TimeSeries or ElectricalSeries with data in /acquisition or /processing',
      'a series of evoked recordings',
    );
  } else if (candidates.length === 1 || byFascicle) {
    paths = candidates;
  } else {
    paths = bad(
      '/acquisition',
      `${candidates.length} series: ${candidates.join(', ')}`,
      'the series option naming the one to read',
    );
  }
  const outUnits = o.units;
  // one entry per (series, channel) read
  const manyChannels = o.channel === 'all' || Array.isArray(o.channel);
  const series = paths.flatMap((p) =>
    channelsOf(path, f, p, o.channel).map((ch) => seriesInfo(path, f, p, ch, byFascicle)),
  );
  const byPath = [...new Map(series.map((s) => [s.path, s])).values()];
  const units: SignalUnit = outUnits ?? series[0].unitGuess;
  for (const s of series) setGain(s, units);

  // stimulus times and the rows' columns
  let rows: {
    T: number;
    start?: number;
    stop?: number;
    columns: Record<string, ConditionValue>;
    id: number;
    ref?: number;
  }[];
  let tablePath: string | null = null;
  let stimulusColumn: string | null = null;
  const notes: string[] = [];
  let mapping: Record<string, string> = {};
  if (o.stimulusTimes) {
    rows = o.stimulusTimes.map((T, i) => ({ T, columns: {}, id: i }));
  } else {
    tablePath = findIntervals(path, f, o.intervals);
    const table = at(f, tablePath) as H5Group;
    const cols = readTable(path, table, tablePath);
    const n = cols.n;
    const names = cols.columns.map((c) => c.name);
    const col = (name: string) => cols.columns.find((c) => c.name === name);
    if (o.stimulusColumn !== undefined) {
      if (!col(o.stimulusColumn)) {
        bad(
          `${tablePath}/${o.stimulusColumn}`,
          `no column ${JSON.stringify(o.stimulusColumn)}${didYouMean(o.stimulusColumn, names)}`,
          `one of ${names.join(', ')}`,
        );
      }
      stimulusColumn = o.stimulusColumn;
    } else {
      stimulusColumn = STIMULUS_NAMES.find((s) => names.some((k) => k.toLowerCase() === s)) ?? null;
      if (stimulusColumn) stimulusColumn = names.find((k) => k.toLowerCase() === stimulusColumn)!;
      else if (col('start_time')) stimulusColumn = 'start_time';
      else
        bad(
          `${tablePath}/start_time`,
          'the table has no start_time and no stimulus column',
          `a start_time column or one of ${STIMULUS_NAMES.join(', ')}`,
        );
    }
    const times = col(stimulusColumn!)!;
    times.values.forEach((v, i) => {
      if (typeof v !== 'number')
        bad(times.path, `row ${i} has no stimulus time (${shown(v)})`, 'a time in s in every row');
    });
    const start = col('start_time');
    const stop = col('stop_time');
    const used = new Set(['start_time', 'stop_time', stimulusColumn!, 'timeseries', 'id']);
    const mapped = mapColumns(path, cols.columns, o.columns ?? {}, tablePath, notes, used);
    mapping = mapped.mapping;
    rows = [];
    for (let i = 0; i < n; i++) {
      const c: Record<string, ConditionValue> = {};
      for (const column of cols.columns) if (!used.has(column.name)) c[column.name] = column.values[i];
      Object.assign(c, mapped.values[i]);
      rows.push({
        T: times.values[i] as number,
        start: num(start?.values[i]),
        stop: num(stop?.values[i]),
        columns: c,
        id: cols.ids[i],
        ref: cols.refStarts?.[i],
      });
    }
    if (rows.length === 0) bad(tablePath, 'the table has no rows', 'one row per stimulus');
  }

  // file-level conditions
  const fileConds: Record<string, ConditionValue> = {};
  if (!byFascicle && typeof meta.subject?.subject_id === 'string') fileConds.preparation = meta.subject.subject_id;

  // conditions of every row (before selection)
  const conditionsOf = (i: number, s: SeriesInfo | null): Record<string, ConditionValue> => ({
    ...fileConds,
    ...(s && !byFascicle ? s.electrode : {}),
    ...(o.conditions ?? {}),
    ...(!byFascicle ? { acquiredS: rows[i].T } : {}),
    ...rows[i].columns,
  });

  // selection
  let selected: number[];
  if (o.trials === undefined) selected = rows.map((_, i) => i);
  else if (typeof o.trials === 'function') {
    const test = o.trials;
    selected = rows
      .map((_, i) => i)
      .filter((i) => test(Object.freeze(conditionsOf(i, series.length === 1 ? series[0] : null)), i));
  } else {
    if (!Array.isArray(o.trials) || !o.trials.every((i) => Number.isInteger(i) && i >= 0 && i < rows.length)) {
      throw new OptionError(
        `invalid trials: ${shown(o.trials)}; must be row numbers 0..${rows.length - 1} or a function`,
      );
    }
    selected = [...o.trials];
  }
  if (selected.length === 0) throw new OptionError(`no rows selected by trials (the table has ${rows.length})`);

  // which series holds each selected row, and where
  const first = rows[selected[0]];
  const fs0 = series[0].rate ?? estimateRate(path, series[0], first.T, first.ref);
  const place = selected.map((i) => locate(path, byPath, rows[i].T, fs0, i, tablePath, rows[i]));

  // the sampling rate
  let fs = fs0;
  for (const s of series) {
    const r = s.rate ?? fs0;
    if (Math.abs(r - fs) > 1e-9 * fs)
      bad(
        s.path,
        `sample rate ${r} Hz differs from ${fs} Hz in ${series[0].path}`,
        'one sample rate for all series read together',
      );
  }
  fs = snap(fs);

  // the window in samples relative to the stimulus sample. Each stimulus is at its nearest sample; phase is how
  // far that sample lies from the stimulus (the median over rows sets the time axis, the rest is jitter).
  let from: number, to: number;
  if (win) [from, to] = win;
  else {
    if (selected.some((i) => rows[i].start === undefined || rows[i].stop === undefined)) {
      bad(
        tablePath ?? '/intervals',
        'no window option and rows without start_time / stop_time',
        'the window option ([from, to] ms around each stimulus)',
      );
    }
    from = Math.max(...selected.map((i) => (rows[i].start! - rows[i].T) * 1000));
    to = Math.min(...selected.map((i) => (rows[i].stop! - rows[i].T) * 1000));
    if (!(to > from))
      bad(
        tablePath!,
        `the rows' start_time..stop_time spans have no common part around their stimuli (${from} to ${to} ms)`,
        'the window option',
      );
  }
  const phases = selected.map((row, k) => (place[k].time - rows[row].T) * 1000);
  const phase = [...phases].sort((x, y) => x - y)[Math.floor(phases.length / 2)];
  const a = Math.ceil(((from - phase) * fs) / 1000 - 1e-3);
  const b = Math.floor(((to - phase) * fs) / 1000 + 1e-3);
  const nSamples = b - a + 1;
  if (nSamples < 2)
    bad(
      tablePath ?? '/intervals',
      `the window [${from}, ${to}] ms holds ${nSamples} sample at ${fs} Hz`,
      'a window of at least 2 samples',
    );
  const t0Ms = Number(((a * 1000) / fs + phase).toFixed(9));
  const t1Ms = Number(((b * 1000) / fs + phase).toFixed(9));
  const jitter = Math.max(...phases.map((x) => Math.abs(x - phase)));

  // the sweeps: each selected row once per channel read from its series
  const sweeps = selected.flatMap((row, k) =>
    series.filter((s) => s.path === place[k].s.path).map((s) => ({ row, k, s })),
  );

  // read the samples: one hyperslab per sweep
  const out = sharedSamples(sweeps.length * nSamples);
  sweeps.forEach(({ row, k, s }, j) => {
    const { index } = place[k];
    const i0 = index + a;
    const i1 = index + b + 1;
    if (i0 < 0 || i1 > s.nTimes) {
      bad(
        s.path + '/data',
        `the window of row ${row} (stimulus at ${rows[row].T} s) runs from sample ${i0} to ${i1 - 1}, outside the series (0..${s.nTimes - 1})`,
        'a window inside the recording (a smaller window option)',
      );
    }
    if (s.timestamps) checkGrid(path, s, i0, i1, fs, row);
    readInto(path, s, i0, i1, out, j * nSamples, row);
  });
  for (const s of series) s.reader?.close();

  const conditions: Conditions[] = sweeps.map(({ row, s }) => ({
    ...conditionsOf(row, s),
    ...(manyChannels ? { channel: s.channel } : {}),
    file: path,
    fileSweep: row,
  }));
  for (const note of notes) warnOnce(`nwb:${path}:${note}`, `${path}: ${note}`);
  const info = series.map((s) => ({
    path: s.path,
    unit: s.unit,
    conversion: s.conversion,
    offset: s.offset,
    resolution: s.resolution,
    channel: s.channel,
    channelConversion: s.channelConversion,
    time: s.rate !== undefined ? 'starting_time+rate' : 'timestamps',
  }));
  const source = lazySource(path, stat);
  return new SweepSet({
    data: out,
    nSweeps: sweeps.length,
    nSamples,
    fs,
    t0Ms,
    units,
    conditions,
    sources: [source],
    history: [
      {
        verb: 'readNwb',
        options: {
          path,
          series: info,
          intervals: tablePath,
          stimulusColumn,
          window: [t0Ms, t1Ms],
          units,
          columns: mapping,
          rows: selected.length === rows.length ? 'all' : selected,
          maxStimulusOffsetMs: jitter,
          notes,
          nwb: meta,
        },
        version: VERSION,
      },
    ],
    extras: { nwb: meta, ...(byFascicle ? studyOf(f) : {}) },
  });
}

/** The study settings fascicle stored with its own files (/processing/fascicle attribute fascicle_study). */
function studyOf(f: H5File): { manifest?: unknown } {
  const m = at(f, '/processing/fascicle');
  const text = isGroup(m) ? attrText(m, 'fascicle_study') : undefined;
  if (text === undefined) return {};
  try {
    return { manifest: JSON.parse(text) };
  } catch {
    return {};
  }
}

const num = (v: ConditionValue | undefined) => (typeof v === 'number' ? v : undefined);
const didYouMean = (name: string, names: readonly string[]) => {
  const n = nearest(name, names);
  return n ? ` (did you mean ${JSON.stringify(n)}?)` : '';
};

/** Rates within 1e-9 of a 10-digit number are that number (timestamps give the rate with rounding). */
function snap(fs: number): number {
  const r = Number(fs.toPrecision(10));
  return Math.abs(r - fs) <= 1e-9 * fs ? r : fs;
}

interface FileMeta {
  identifier?: string;
  session_description?: string;
  session_start_time?: string;
  nwb_version?: string;
  source_script?: string;
  general: Record<string, string | string[]>;
  subject?: Record<string, string>;
}

function fileMetadata(f: H5File): FileMeta {
  const text = (p: string) => {
    const d = at(f, p);
    if (!isDataset(d) || elementKind(d) !== 'string') return undefined;
    try {
      const t = texts(d);
      return t.length === 1 ? t[0] : t;
    } catch {
      return undefined;
    }
  };
  const one = (p: string) => {
    const v = text(p);
    return Array.isArray(v) ? v.join('; ') : v;
  };
  const general: Record<string, string | string[]> = {};
  const g = at(f, '/general');
  if (isGroup(g)) {
    for (const k of g.keys()) {
      const v = text(`/general/${k}`);
      if (v !== undefined) general[k] = v;
    }
  }
  let subject: Record<string, string> | undefined;
  const s = at(f, '/general/subject');
  if (isGroup(s)) {
    subject = {};
    for (const k of s.keys()) {
      const v = one(`/general/subject/${k}`);
      if (v !== undefined) subject[k] = v;
    }
  }
  return {
    nwb_version: attrText(f, 'nwb_version'),
    identifier: one('/identifier'),
    session_description: one('/session_description'),
    session_start_time: one('/session_start_time'),
    source_script: typeof general.source_script === 'string' ? general.source_script : undefined,
    general,
    subject,
  };
}

/** Paths of the series with numeric data in /acquisition and in the processing modules. */
function findSeries(f: H5File): string[] {
  const out: string[] = [];
  const scan = (p: string, depth: number) => {
    const g = at(f, p);
    if (!isGroup(g)) return;
    for (const k of g.keys()) {
      const c = g.get(k);
      if (!isGroup(c)) continue;
      const t = typeOf(c) ?? '';
      if (/Series$/.test(t) && c.keys().includes('data')) {
        const d = c.get('data');
        if (isDataset(d) && ['int', 'float'].includes(elementKind(d))) out.push(`${p}/${k}`);
      } else if (depth > 0) scan(`${p}/${k}`, depth - 1);
    }
  };
  scan('/acquisition', 0);
  const proc = at(f, '/processing');
  if (isGroup(proc)) for (const m of proc.keys()) scan(`/processing/${m}`, 1);
  return out;
}

type SeriesWithGuess = SeriesInfo & { unitGuess: SignalUnit; valueScale: number };

/** The channels to read from a series (checked against its data's shape). */
function channelsOf(file: string, f: H5File, p: string, channel: NwbReadOptions['channel']): (number | undefined)[] {
  const d = (at(f, p) as H5Group).get('data') as H5Dataset;
  const shape = d.shape ?? [];
  const n = shape.length === 2 ? shape[1] : 1;
  if (channel === 'all') return Array.from({ length: n }, (_, i) => i);
  if (Array.isArray(channel)) {
    for (const c of channel) {
      if (c >= n)
        throw new InputError({ file, field: `${p}/data` }, `channel ${c} with ${n} channels`, `channels 0..${n - 1}`);
    }
    return [...new Set(channel as number[])];
  }
  return [channel as number | undefined];
}

function seriesInfo(
  file: string,
  f: H5File,
  p: string,
  channel: number | undefined,
  byFascicle: boolean,
): SeriesWithGuess {
  const bad = (field: string, problem: string, expected: string): never => {
    throw new InputError({ file, field }, problem, expected);
  };
  const g = at(f, p) as H5Group;
  const data = g.get('data') as H5Dataset;
  const shape = data.shape ?? [];
  if (shape.length < 1 || shape.length > 2)
    bad(`${p}/data`, `data has ${shape.length} dimensions (${shape.join(' x ')})`, 'times, or times x channels');
  const nTimes = shape[0];
  const nChannels = shape.length === 2 ? shape[1] : 1;
  let ch = channel ?? 0;
  if (channel === undefined && nChannels > 1)
    bad(`${p}/data`, `data has ${nChannels} channels`, `the channel option (0..${nChannels - 1}, a list, or "all")`);
  if (ch >= nChannels) bad(`${p}/data`, `channel ${ch} with ${nChannels} channels`, `a channel 0..${nChannels - 1}`);
  const unit = attrText(data, 'unit');
  if (unit === undefined) bad(`${p}/data`, 'data has no unit attribute', 'unit "volts" (or another voltage unit)');
  const valueScale = VOLT_UNITS[unit!.trim().replace(/[µμ]/g, 'u').toLowerCase()];
  if (valueScale === undefined)
    bad(`${p}/data`, `data has the unit ${JSON.stringify(unit)}, not a voltage`, 'volts, millivolts or microvolts');
  const conversion = attrNumber(data, 'conversion') ?? 1;
  const offset = attrNumber(data, 'offset') ?? 0;
  const resolution = attrNumber(data, 'resolution') ?? -1;
  if (!Number.isFinite(conversion) || conversion === 0)
    bad(`${p}/data`, `conversion is ${conversion}`, 'a finite non-zero factor');
  if (!Number.isFinite(offset)) bad(`${p}/data`, `offset is ${offset}`, 'a finite offset');
  let channelConversion = 1;
  const cc = g.keys().includes('channel_conversion') ? g.get('channel_conversion') : null;
  if (isDataset(cc)) {
    const v = numbers(cc);
    if (v.length !== nChannels || !Number.isFinite(v[ch]) || v[ch] === 0)
      bad(
        `${p}/channel_conversion`,
        `${v.length} factors for ${nChannels} channels`,
        'one finite non-zero factor per channel',
      );
    channelConversion = v[ch];
  }
  let rate: number | undefined, startingTime: number | undefined, timestamps: H5Dataset | undefined;
  let tFirst: number, tLast: number;
  const st = g.keys().includes('starting_time') ? g.get('starting_time') : null;
  const ts = g.keys().includes('timestamps') ? g.get('timestamps') : null;
  if (isDataset(st)) {
    startingTime = numbers(st)[0];
    rate = attrNumber(st, 'rate');
    if (!(rate! > 0) || !Number.isFinite(rate))
      bad(`${p}/starting_time`, `rate is ${shown(rate ?? null)}`, 'a rate attribute in Hz > 0');
    rate = snap(rate!);
    tFirst = startingTime;
    tLast = startingTime + (nTimes - 1) / rate;
  } else if (isDataset(ts)) {
    const tshape = ts.shape ?? [];
    if (tshape.length !== 1 || tshape[0] !== nTimes)
      bad(`${p}/timestamps`, `${tshape.join(' x ')} timestamps for ${nTimes} samples`, 'one timestamp per sample');
    if (nTimes < 2) bad(`${p}/data`, `${nTimes} sample`, 'at least 2 samples');
    timestamps = ts;
    tFirst = numbers(ts, [0, 1])[0];
    tLast = numbers(ts, [nTimes - 1, nTimes])[0];
  } else {
    return bad(
      p,
      'the series has neither starting_time (with rate) nor timestamps',
      'starting_time and its rate, or timestamps',
    );
  }
  // electrodes of an ElectricalSeries
  const electrode: Record<string, ConditionValue> = {};
  const reg = g.keys().includes('electrodes') ? g.get('electrodes') : null;
  if (isDataset(reg) && !byFascicle) Object.assign(electrode, electrodeConditions(file, f, p, reg, ch));
  // the unit the stored values already have (then they are copied unchanged)
  const inVolts = conversion * channelConversion * valueScale;
  let unitGuess: SignalUnit = 'mV';
  if (offset === 0) {
    for (const u of ['V', 'mV', 'uV'] as SignalUnit[]) {
      if (Math.fround(inVolts) === Math.fround(UNIT_SCALE[u])) unitGuess = u;
    }
  }
  return {
    path: p,
    group: g,
    data,
    nTimes,
    nChannels,
    channel: ch,
    gain: 1,
    shift: 0,
    identity: false,
    unit: unit!,
    conversion,
    offset,
    resolution,
    channelConversion,
    rate,
    startingTime,
    timestamps,
    tFirst: tFirst!,
    tLast: tLast!,
    electrode,
    unitGuess,
    valueScale,
  };
}

/** raw -> output units. A factor that equals 1 to float32 precision (conversion is float32) is exactly 1. */
function setGain(s: SeriesInfo & { valueScale?: number }, units: SignalUnit): void {
  const inVolts = s.conversion * s.channelConversion * (s.valueScale ?? 1);
  const target = UNIT_SCALE[units];
  if (s.offset === 0 && Math.fround(inVolts) === Math.fround(target)) {
    s.gain = 1;
    s.shift = 0;
    s.identity = true;
    return;
  }
  s.gain = inVolts / target;
  s.shift = (s.offset * (s.valueScale ?? 1)) / target;
  s.identity = false;
}

function electrodeConditions(
  file: string,
  f: H5File,
  p: string,
  reg: H5Dataset,
  ch: number,
): Record<string, ConditionValue> {
  const rows = numbers(reg);
  const tableRef = attr(reg, 'table');
  let table: unknown = null;
  try {
    table = tableRef ? f.dereference(tableRef as never) : null;
  } catch {
    table = null;
  }
  if (!isGroup(table)) table = at(f, '/general/extracellular_ephys/electrodes');
  if (!isGroup(table)) {
    throw new InputError(
      { file, field: `${p}/electrodes` },
      'the electrodes region points at no table',
      'the electrodes table at /general/extracellular_ephys/electrodes',
    );
  }
  const tpath = (table as H5Group).path;
  const t = readTable(file, table as H5Group, tpath);
  const row = rows[ch];
  if (!(row >= 0 && row < t.n))
    throw new InputError(
      { file, field: `${p}/electrodes` },
      `channel ${ch} points at row ${row} of ${t.n}`,
      'a row of the electrodes table',
    );
  const out: Record<string, ConditionValue> = { electrode: t.ids[row] };
  const loc = t.columns.find((c) => c.name === 'location');
  if (loc && loc.values[row] !== null && loc.values[row] !== '') out.site = loc.values[row];
  const d = findColumn('distanceMm', NWB_CONDITIONS.distanceMm, t.columns);
  if (d) {
    const v = convertColumn(file, 'distanceMm', NWB_CONDITIONS.distanceMm, d.column, d.unit);
    if (v.values[row] !== null) out.distanceMm = v.values[row];
  }
  return out;
}

/** The TimeIntervals table to use. */
function findIntervals(file: string, f: H5File, want: string | undefined): string {
  const iv = at(f, '/intervals');
  const tables = isGroup(iv)
    ? iv.keys().filter((k) => {
        const g = iv.get(k);
        return isGroup(g) && typeOf(g) === 'TimeIntervals';
      })
    : [];
  if (want !== undefined) {
    if (typeof want !== 'string' || !want) {
      throw new OptionError(`invalid intervals: ${shown(want)}; must be a table name or HDF5 path`);
    }
    const p = want.startsWith('/') ? want : `/intervals/${want}`;
    const g = at(f, p);
    if (!isGroup(g) || !['TimeIntervals', 'DynamicTable'].includes(typeOf(g) ?? '')) {
      throw new InputError(
        { file, field: p },
        `no TimeIntervals table at ${p}${didYouMean(want, tables)}`,
        tables.length ? `one of ${tables.map((t) => '/intervals/' + t).join(', ')}` : 'a TimeIntervals table',
      );
    }
    return p;
  }
  if (tables.includes('trials')) return '/intervals/trials';
  if (tables.length === 1) return `/intervals/${tables[0]}`;
  if (tables.length === 0) {
    throw new InputError(
      { file, field: '/intervals/trials' },
      'no trials table and no other TimeIntervals table under /intervals: the file gives no stimulus times',
      'a TimeIntervals table with one row per stimulus, or the stimulusTimes and window options',
    );
  }
  throw new InputError(
    { file, field: '/intervals' },
    `${tables.length} TimeIntervals tables and none is "trials": ${tables.join(', ')}`,
    'the intervals option naming one',
  );
}

/** Every column of a DynamicTable: 1-D numbers or text; ragged columns (with an _index) joined by ", ". */
export function readTable(
  file: string,
  g: H5Group,
  p: string,
): { n: number; ids: number[]; columns: TableColumn[]; refStarts?: number[] } {
  const keys = g.keys();
  const bad = (field: string, problem: string, expected: string): never => {
    throw new InputError({ file, field }, problem, expected);
  };
  const idD = keys.includes('id') ? g.get('id') : null;
  if (!isDataset(idD)) bad(`${p}/id`, 'the table has no id dataset', 'a DynamicTable with id');
  const ids = Array.from(numbers(idD as H5Dataset));
  const n = ids.length;
  let colnames = attr(g, 'colnames') as unknown;
  if (typeof colnames === 'string') colnames = [colnames];
  const listed = Array.isArray(colnames)
    ? (colnames as string[])
    : keys.filter((k) => k !== 'id' && !k.endsWith('_index'));
  const columns: TableColumn[] = [];
  let refStarts: number[] | undefined;
  for (const name of listed) {
    const d = keys.includes(name) ? g.get(name) : null;
    if (!isDataset(d))
      bad(`${p}/${name}`, `column ${JSON.stringify(name)} is listed in colnames but missing`, 'every listed column');
    const ds = d as H5Dataset;
    const kind = elementKind(ds);
    if (kind === 'compound' && typeOf(ds) === 'TimeSeriesReferenceVectorData')
      refStarts = referenceStarts(ds, g, name, n);
    if (kind === 'reference' || kind === 'compound' || kind === 'other') continue; // references to other objects
    const shape = ds.shape ?? [];
    if (shape.length !== 1) continue; // multi-dimensional cells are not conditions
    const raw = kind === 'string' ? texts(ds) : numbers(ds);
    let values = decodeColumn(raw as ArrayLike<number> | string[], attrText(ds, 'fascicle_dtype'));
    const idx = keys.includes(`${name}_index`) ? g.get(`${name}_index`) : null;
    if (isDataset(idx)) {
      const ends = Array.from(numbers(idx));
      if (ends.length !== n)
        bad(`${p}/${name}_index`, `${ends.length} index entries for ${n} rows`, 'one entry per row');
      const flat = values;
      values = ends.map((e, i) =>
        flat
          .slice(i ? ends[i - 1] : 0, e)
          .map(String)
          .join(', '),
      );
    } else if (values.length !== n) {
      bad(`${p}/${name}`, `${values.length} values for ${n} rows`, 'one value per row');
    }
    const unit = attrText(ds, 'unit');
    // fascicle writes "/" in a name as "_" and keeps the name in fascicle_name
    columns.push({ name: attrText(ds, 'fascicle_name') ?? name, values, unit, path: `${p}/${name}` });
  }
  return { n, ids, columns, refStarts };
}

/**
 * The first sample of each row's TimeSeriesReference (idx_start), when every row has exactly one.
 * (h5wasm does not read the object reference inside the compound; the series is matched by time.)
 */
function referenceStarts(d: H5Dataset, g: H5Group, name: string, n: number): number[] | undefined {
  const idx = g.keys().includes(`${name}_index`) ? g.get(`${name}_index`) : null;
  if (isDataset(idx)) {
    const ends = Array.from(numbers(idx));
    if (ends.length !== n || ends.some((e, i) => e !== i + 1)) return undefined;
  }
  let v: unknown;
  try {
    v = d.value;
  } catch {
    return undefined;
  }
  if (!Array.isArray(v) || v.length !== n) return undefined;
  const starts = v.map((r) => (Array.isArray(r) ? Number(r[0]) : NaN));
  return starts.every((x) => Number.isInteger(x) && x >= 0) ? starts : undefined;
}

/** Apply the condition mapping to a table's columns. */
function mapColumns(
  file: string,
  columns: TableColumn[],
  override: Readonly<Record<string, string | null>>,
  tablePath: string,
  notes: string[],
  used: Set<string>,
): { values: Record<string, ConditionValue>[]; mapping: Record<string, string> } {
  const n = columns[0]?.values.length ?? 0;
  const values: Record<string, ConditionValue>[] = Array.from({ length: n }, () => ({}));
  const mapping: Record<string, string> = {};
  const names = columns.map((c) => c.name);
  const conds = [...new Set([...Object.keys(NWB_CONDITIONS), ...Object.keys(override)])];
  for (const cond of conds) {
    const spec = NWB_CONDITIONS[cond] ?? { kind: 'text' as const, names: [] };
    let found: { column: TableColumn; unit?: string } | null;
    if (Object.hasOwn(override, cond)) {
      const want = override[cond];
      if (want === null) continue;
      const c = columns.find((k) => k.name === want);
      if (!c) {
        throw new InputError(
          { file, field: `${tablePath}/${want}` },
          `columns.${cond} names the column ${JSON.stringify(want)}, which the table does not have${didYouMean(want, names)}`,
          `one of ${names.join(', ')}`,
        );
      }
      let unit = c.unit;
      if (unit === undefined && spec.kind !== 'text' && spec.kind !== 'number') {
        const m = /_([^_]+)$/.exec(want);
        const base = m ? want.slice(0, -m[0].length).toLowerCase() : '';
        const u = m ? findColumn(cond, { ...spec, names: [base] }, [c])?.unit : undefined;
        unit = u;
      }
      found = { column: c, unit };
    } else {
      found = findColumn(
        cond,
        spec,
        columns.filter((c) => !used.has(c.name)),
      );
    }
    if (!found || (used.has(found.column.name) && !Object.hasOwn(override, cond))) continue;
    const conv = convertColumn(file, cond, spec, found.column, found.unit);
    if (conv.note) notes.push(conv.note);
    used.add(found.column.name);
    mapping[cond] = found.column.name;
    for (let i = 0; i < n; i++) {
      values[i][cond] = conv.values[i];
      if (conv.unitValue !== undefined && spec.unitCondition) values[i][spec.unitCondition] = conv.unitValue;
    }
  }
  return { values, mapping };
}

/** The sample rate of a timestamped series near time T: from up to 1000 timestamps there. */
function estimateRate(file: string, s: SeriesInfo, T: number, hint?: number): number {
  const ts = s.timestamps!;
  const i = hint !== undefined && hint < s.nTimes - 1 ? hint : nearestIndex(s, T);
  const i0 = Math.max(0, Math.min(i, s.nTimes - 2));
  const i1 = Math.min(s.nTimes, i0 + 1000);
  const t = numbers(ts, [i0, i1]);
  const d: number[] = [];
  for (let k = 1; k < t.length; k++) d.push(t[k] - t[k - 1]);
  d.sort((x, y) => x - y);
  const med = d[Math.floor(d.length / 2)];
  if (!(med > 0))
    throw new InputError(
      { file, field: `${s.path}/timestamps` },
      'timestamps do not increase',
      'increasing timestamps in s',
    );
  // the rate from the span of the run of regular steps around the stimulus
  let k1 = 1;
  while (k1 < t.length && Math.abs(t[k1] - t[k1 - 1] - med) < 0.25 * med) k1++;
  return k1 > 2 ? (k1 - 1) / (t[k1 - 1] - t[0]) : 1 / med;
}

/**
 * Index of the timestamp nearest to T. A coarse index (every step-th timestamp, read once per series
 * with a strided hyperslab) narrows the search to one block, which is then read: memory stays at
 * n / step + step values, and each lookup reads one block.
 */
function nearestIndex(s: SeriesInfo, T: number): number {
  const ts = s.timestamps!,
    n = s.nTimes;
  if (!s.coarse) {
    const step = Math.max(256, Math.ceil(n / 65536));
    const values = Float64Array.from(numbers(ts, [0, n, step]));
    s.coarse = { step, values };
  }
  const { step, values } = s.coarse;
  // last coarse entry <= T
  let lo = 0,
    hi = values.length - 1;
  if (T <= values[0]) return 0;
  if (T >= values[hi]) lo = hi;
  else {
    while (hi - lo > 1) {
      const mid = (lo + hi) >> 1;
      if (values[mid] <= T) lo = mid;
      else hi = mid;
    }
  }
  const i0 = lo * step;
  const i1 = Math.min(n, i0 + step + 1);
  const block = numbers(ts, [i0, i1]);
  let best = 0;
  for (let k = 1; k < block.length; k++) if (Math.abs(block[k] - T) < Math.abs(block[best] - T)) best = k;
  return i0 + best;
}

/** The series and sample index of a stimulus at T. */
function locate(
  file: string,
  series: SeriesInfo[],
  T: number,
  fs: number,
  row: number,
  table: string | null,
  hint?: { ref?: number; start?: number },
): { s: SeriesInfo; index: number; time: number } {
  // the row's TimeSeriesReference: its first sample is at start_time in the series it points into
  if (hint?.ref !== undefined && hint.start !== undefined) {
    for (const s of series) {
      if (!s.timestamps || hint.ref >= s.nTimes) continue;
      const t0 = numbers(s.timestamps, [hint.ref, hint.ref + 1])[0];
      if (!(Math.abs(t0 - hint.start) <= 1.01 / fs)) continue;
      const index = hint.ref + Math.round((T - t0) * fs);
      if (index < 0 || index >= s.nTimes) continue;
      const time = numbers(s.timestamps, [index, index + 1])[0];
      if (Math.abs(time - T) <= 0.5001 / fs) return { s, index, time };
    }
  }
  const hits: { s: SeriesInfo; index: number; time: number }[] = [];
  for (const s of series) {
    if (T < s.tFirst - 0.5 / fs || T > s.tLast + 0.5 / fs) continue;
    if (s.rate !== undefined) {
      const index = Math.round((T - s.startingTime!) * s.rate);
      hits.push({ s, index, time: s.startingTime! + index / s.rate });
    } else {
      const index = nearestIndex(s, T);
      const time = numbers(s.timestamps!, [index, index + 1])[0];
      if (Math.abs(time - T) <= 0.5001 / fs) hits.push({ s, index, time });
    }
  }
  if (hits.length === 1) return hits[0];
  const where = table ? `${table} row ${row}` : `stimulusTimes[${row}]`;
  if (hits.length === 0) {
    throw new InputError(
      { file, field: where },
      `the stimulus at ${T} s falls outside the recorded samples of ${series.map((s) => s.path).join(', ')}`,
      'stimulus times inside a series (on the same time axis)',
    );
  }
  throw new InputError(
    { file, field: where },
    `the stimulus at ${T} s lies in ${hits.length} series (${hits.map((h) => h.s.path).join(', ')})`,
    'the series option naming one',
  );
}

/**
 * Timestamps of a sweep on a regular grid: its first, middle and last timestamps lie within a quarter
 * sample of the grid from the first (a gap or a missing stretch inside the window moves the later ones).
 */
function checkGrid(file: string, s: SeriesInfo, i0: number, i1: number, fs: number, row: number): void {
  const dt = 1 / fs;
  const ts = s.timestamps!;
  // compressed timestamps: the window in one read (one chunk decoded); otherwise three single values
  const whole = ts.filters.length > 0 ? numbers(ts, [i0, i1]) : null;
  const value = (i: number) => (whole ? whole[i - i0] : numbers(ts, [i, i + 1])[0]);
  const t0 = value(i0);
  for (const i of [i0 + ((i1 - i0) >> 1), i1 - 1]) {
    const t = value(i);
    const want = t0 + (i - i0) * dt;
    if (Math.abs(t - want) > 0.25 * dt) {
      throw new InputError(
        { file, field: `${s.path}/timestamps` },
        `the window of row ${row} crosses a gap or an irregular step (sample ${i} at t = ${t} s, expected ${want} s on the sample grid)`,
        'evenly spaced samples across each sweep window (a smaller window option)',
      );
    }
  }
}

/** One hyperslab into out[o..o+n), converted. */
function readInto(
  file: string,
  s: SeriesInfo,
  i0: number,
  i1: number,
  out: Float64Array,
  o: number,
  row: number,
): void {
  s.reader ??= new HyperslabReader(s.data);
  const twoD = (s.data.shape ?? []).length === 2;
  const { gain, shift, identity } = s;
  let bad = -1;
  try {
    s.reader.read(i0, i1, twoD ? s.channel : null, (k, r) => {
      const v = identity ? r : r * gain + shift;
      out[o + k] = v;
      if (bad < 0 && !Number.isFinite(v)) bad = k;
    });
  } catch (e) {
    throw new InputError(
      { file, field: `${s.path}/data` },
      `reading samples ${i0}..${i1 - 1} failed (${String((e as Error).message).slice(0, 200)})`,
      'readable data',
    );
  }
  if (bad >= 0) {
    throw new InputError(
      { file, field: `${s.path}/data`, sweep: row },
      `a non-finite sample (${out[o + bad]}) at sample ${i0 + bad}`,
      'finite samples',
    );
  }
}

/** Result tables that fascicle wrote to /processing/fascicle (name -> rows). */
export async function readNwbTables(path: string): Promise<Record<string, Record<string, ConditionValue>[]>> {
  await nwbReady();
  const { f } = openNwb(path);
  try {
    const out: Record<string, Record<string, ConditionValue>[]> = {};
    const mod = at(f, '/processing/fascicle');
    if (!isGroup(mod))
      throw new InputError(
        { file: path, field: '/processing/fascicle' },
        'no fascicle processing module',
        'a file written by fascicle (writeNwb)',
      );
    for (const k of mod.keys()) {
      const g = mod.get(k);
      if (!isGroup(g) || typeOf(g) !== 'DynamicTable' || k === 'history' || k === 'inputs') continue;
      const t = readTable(path, g, `/processing/fascicle/${k}`);
      out[k] = Array.from({ length: t.n }, (_, i) => Object.fromEntries(t.columns.map((c) => [c.name, c.values[i]])));
    }
    let empty = attr(mod, 'fascicle_empty_tables');
    if (typeof empty === 'string') empty = [empty];
    if (Array.isArray(empty)) for (const k of empty) if (typeof k === 'string') out[k] = [];
    return out;
  } finally {
    f.close();
  }
}

/** What an NWB file holds that readNwb can use (to choose its options). */
export interface NwbContents {
  nwbVersion: string | undefined;
  writtenByFascicle: boolean;
  session: { identifier?: string; description?: string; startTime?: string };
  subject?: Record<string, string>;
  general: Record<string, string | string[]>;
  series: {
    path: string;
    type: string;
    shape: number[];
    unit?: string;
    time: 'rate' | 'timestamps' | 'none';
    rate?: number;
  }[];
  intervals: { path: string; rows: number; columns: string[] }[];
  electrodes?: { rows: number; columns: string[] };
}

/** List the series, TimeIntervals tables and electrodes of an NWB file (reads no samples). */
export async function describeNwb(path: string): Promise<NwbContents> {
  await nwbReady();
  const { f } = openNwb(path);
  try {
    if (typeOf(f) !== 'NWBFile') {
      throw new InputError({ file: path, field: '/' }, 'HDF5 without the NWB root attributes', 'an NWB 2.x file');
    }
    const meta = fileMetadata(f);
    const series = findSeries(f).map((p) => {
      const g = at(f, p) as H5Group;
      const d = g.get('data') as H5Dataset;
      const keys = g.keys();
      const st = keys.includes('starting_time') ? g.get('starting_time') : null;
      return {
        path: p,
        type: typeOf(g) ?? '',
        shape: d.shape ?? [],
        unit: attrText(d, 'unit'),
        time: isDataset(st)
          ? ('rate' as const)
          : keys.includes('timestamps')
            ? ('timestamps' as const)
            : ('none' as const),
        ...(isDataset(st) ? { rate: attrNumber(st, 'rate') } : {}),
      };
    });
    const intervals: NwbContents['intervals'] = [];
    const iv = at(f, '/intervals');
    if (isGroup(iv)) {
      for (const k of iv.keys()) {
        const g = iv.get(k);
        if (!isGroup(g) || typeOf(g) !== 'TimeIntervals') continue;
        const t = readTable(path, g, `/intervals/${k}`);
        intervals.push({ path: `/intervals/${k}`, rows: t.n, columns: t.columns.map((c) => c.name) });
      }
    }
    const el = at(f, '/general/extracellular_ephys/electrodes');
    let electrodes: NwbContents['electrodes'];
    if (isGroup(el)) {
      const t = readTable(path, el, '/general/extracellular_ephys/electrodes');
      electrodes = { rows: t.n, columns: t.columns.map((c) => c.name) };
    }
    return {
      nwbVersion: meta.nwb_version,
      writtenByFascicle: typeof meta.source_script === 'string' && meta.source_script.startsWith(FASCICLE_SCRIPT),
      session: {
        identifier: meta.identifier,
        description: meta.session_description,
        startTime: meta.session_start_time,
      },
      subject: meta.subject,
      general: meta.general,
      series,
      intervals,
      electrodes,
    };
  } finally {
    f.close();
  }
}
