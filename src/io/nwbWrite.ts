/**
 * NWB 2.7.0 writer: a SweepSet (and optionally result tables) as an NWB file that any NWB reader
 * opens. Layout (paths inside the file):
 * - /acquisition/sweeps (raw: true) or /processing/fascicle/sweeps (conditioned, the default):
 *   ElectricalSeries, float64 samples in the set's units (`conversion` to volts), one per
 *   recording electrode (`sweeps_e<id>` when there are several), with `timestamps`. The sweeps
 *   lie on a synthetic time axis, one after another with a 1 s gap (the real acquisition
 *   times, when known, are the `acquiredS` column of the trials table).
 * - /intervals/trials: one row per sweep: start_time, stop_time, stimulus_time, every condition
 *   as a column (the source file and sweep as source_file, source_sweep) and `timeseries`
 *   (the sweep's samples as an NWB TimeSeriesReference).
 * - /general/extracellular_ephys/electrodes: one row per (preparation, site, distance), with
 *   location, group, group_name, distance_mm and preparation; one ElectrodeGroup and Device.
 * - /processing/fascicle/history (verb, options as JSON, version per step), .../inputs (path,
 *   sha256, bytes), one DynamicTable per result table, its columns named as in the bundle's CSV files
 *   (snake_case, unit last: `distance_mm`, `ic50_uM`; src/io/nwbColumns.ts resultColumns), tables without rows
 *   listed in the attribute fascicle_empty_tables, and the study's settings (attribute fascicle_study).
 * Samples and timestamps are chunked by whole sweeps; `compression` gzips them.
 * - /general/source_script "fascicle <version>": how fascicle recognises its own files.
 * The file is written to a temporary file in the same folder and renamed into place; an existing
 * file is replaced only with `overwrite: true` and only when fascicle wrote it.
 *
 * Layer: io/ sits above sweeps/, so this module installs `set.toNwb()` on SweepSet's prototype (declared below
 * by declaration merging); src/index.ts loads it.
 */
import { randomUUID } from 'node:crypto';
import {
  existsSync,
  lstatSync,
  renameSync,
  rmSync,
  openSync,
  fstatSync,
  closeSync,
  statSync,
  constants,
} from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { OptionError, OutputError, systemReason } from '../errors';
import { checkKeys, shown } from '../validate';
import { SweepSet, conditionKeys, type ConditionValue } from '../sweeps/SweepSet';
import { VERSION } from '../version';
import { nwbReady, h5, openHdf5, at, isDataset, texts, withHdf5Errors, type H5File, type H5Group } from './nwbLib';
import { encodeColumn, resultColumns } from './nwbColumns';
import { FASCICLE_SCRIPT } from './nwb';

import type { ResultRows as Rows } from './nwbColumns';
/** Result tables to write: a result object (with tables()), a runPipeline result, or name -> rows. */
export type ResultTables =
  { tables(): Record<string, Rows> } | { tables: Record<string, Rows | undefined> } | Record<string, Rows | undefined>;

export interface NwbWriteOptions {
  /** The set holds the samples as acquired (only reading and selection steps): written to /acquisition.
   * Default false: conditioned samples, written to the processing module /processing/fascicle. */
  raw?: boolean;
  /** Replace an existing file at the path, only if fascicle wrote it (default false: an existing path is refused). */
  overwrite?: boolean;
  /** Result tables for /processing/fascicle: a result object (with tables()), a runPipeline result (all its tables),
   * a study ({ tables }), or name -> rows. */
  results?: ResultTables;
  /** /session_description. Default: the study's description or name, else "fascicle export". */
  sessionDescription?: string;
  /** /session_start_time (ISO 8601 with time zone, or a Date). Default: the one of the NWB file the set came
   * from, else the time of writing (then /general/notes says so). */
  sessionStartTime?: string | Date;
  /** /identifier. Default: a random UUID. */
  identifier?: string;
  /** /general/subject fields (subject_id, species, sex, age, description, ...). */
  subject?: Readonly<Record<string, string>>;
  lab?: string;
  institution?: string;
  experimenter?: string | readonly string[];
  /** gzip (deflate) level 0-9 of the samples and timestamps, which every HDF5 reader decodes; 0 stores them
   * uncompressed (the default: reading and writing are then several times faster; gzip 4 makes typical sweeps
   * about 2.5x smaller). */
  compression?: number;
}

const WRITE_KEYS = [
  'raw',
  'overwrite',
  'results',
  'sessionDescription',
  'sessionStartTime',
  'identifier',
  'subject',
  'lab',
  'institution',
  'experimenter',
  'compression',
];
/** Steps that leave samples as acquired (reading, choosing sweeps or samples, units, the time axis). */
const RAW_VERBS = new Set([
  'readBinary',
  'readDelimited',
  'readManifest',
  'readNwb',
  'simulateNerve',
  'select',
  'where',
  'crop',
  'toUnits',
  'concat',
  'rejectFlagged',
  'alignStimulus',
]);
const UNIT_TO_VOLTS = { V: 1, mV: 1e-3, uV: 1e-6 } as const;
const OWN_UNITS: Record<string, string> = {
  pulseWidthMs: 'ms',
  distanceMm: 'mm',
  temperatureC: 'degC',
  acquiredS: 's',
};
const GAP_S = 1;

export interface NwbWriteResult {
  path: string;
  /** HDF5 paths of the series written */
  series: string[];
  trials: number;
  electrodes: number;
  /** names of the result tables written under /processing/fascicle */
  tables: string[];
}

/** Write a SweepSet as NWB (loads the HDF5 library first when needed). */
export async function writeNwb(set: SweepSet, path: string, options: NwbWriteOptions = {}): Promise<NwbWriteResult> {
  await nwbReady();
  return writeNwbSync(set, path, options);
}

/** True when the file at path is an NWB file that fascicle wrote (its /general/source_script). */
export function writtenByFascicle(path: string): boolean {
  let fd: number;
  try {
    fd = openSync(path, constants.O_RDONLY);
  } catch {
    return false;
  }
  let f: H5File;
  try {
    f = openHdf5(path, fd, fstatSync(fd).size);
  } catch {
    try {
      closeSync(fd);
    } catch {
      /* closed */
    }
    return false;
  }
  try {
    const d = at(f, '/general/source_script');
    return f.attrs.neurodata_type?.value === 'NWBFile' && isDataset(d) && texts(d)[0].startsWith(FASCICLE_SCRIPT);
  } catch {
    return false;
  } finally {
    f.close();
  }
}

/** Write a SweepSet as NWB, synchronously (after `await nwbReady()`). @throws OutputError when the path is refused or the write fails. */
export function writeNwbSync(set: SweepSet, path: string, options: NwbWriteOptions = {}): NwbWriteResult {
  checkKeys('writeNwb options', options, WRITE_KEYS);
  if (typeof path !== 'string' || !path) throw new OptionError(`invalid path: ${shown(path)}; must be a file path`);
  const raw = options.raw ?? false;
  if (typeof raw !== 'boolean') throw new OptionError(`invalid raw: ${shown(raw)}; must be true or false`);
  if (raw) {
    const steps = set.history.filter((s) => !RAW_VERBS.has(s.verb)).map((s) => s.verb);
    if (steps.length) {
      throw new OptionError(
        `invalid raw: true for samples changed by ${[...new Set(steps)].join(', ')}; write them as conditioned samples (raw: false) or write the set before those steps`,
      );
    }
  }
  if (set.nSweeps === 0) throw new OptionError('the set has no sweeps to write');
  const level = options.compression ?? 0;
  if (!Number.isInteger(level) || level < 0 || level > 9) {
    throw new OptionError(`invalid compression: ${shown(level)}; must be a gzip level 0..9 (0: none)`);
  }
  const start =
    options.sessionStartTime ?? (set.extras.nwb as { session_start_time?: string } | undefined)?.session_start_time;
  const startIso = start instanceof Date ? start.toISOString() : start;
  if (
    startIso !== undefined &&
    (typeof startIso !== 'string' || Number.isNaN(Date.parse(startIso)) || !/T.*(Z|[+-]\d\d:?\d\d)$/.test(startIso))
  ) {
    throw new OptionError(
      `invalid sessionStartTime: ${shown(start)}; must be an ISO 8601 time with a time zone (2026-03-14T09:30:00+01:00) or a Date`,
    );
  }

  const target = resolve(path);
  const inputs = set.sources.map((s) => resolve(s.path));
  if (inputs.includes(target)) {
    throw new OutputError(path, `refusing to write ${path}: it is an input of this set`, { refused: true });
  }
  if (existsSync(target)) {
    if (!lstatSync(target).isFile()) {
      throw new OutputError(path, `refusing to write ${path}: it exists and is not a file`, { refused: true });
    }
    if (!options.overwrite) {
      throw new OutputError(
        path,
        `refusing to write ${path}: the file exists (pass overwrite: true to replace an NWB file that fascicle wrote)`,
        { refused: true },
      );
    }
    if (!writtenByFascicle(target)) {
      throw new OutputError(
        path,
        `refusing to overwrite ${path}: it is not an NWB file written by fascicle (no /general/source_script "${FASCICLE_SCRIPT} ...")`,
        { refused: true },
      );
    }
  }
  const dir = dirname(target);
  try {
    if (!statSync(dir).isDirectory()) throw Object.assign(new Error('not a folder'), { code: 'ENOTDIR' });
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new OutputError(path, `cannot write ${path}: ${systemReason(e)}`, { refused: false, code });
  }
  const tmp = join(dir, `.${basename(target)}.tmp-${process.pid}-${randomUUID().slice(0, 8)}`);
  let f: H5File | null = null;
  let result: Omit<NwbWriteResult, 'path'>;
  try {
    const created = withHdf5Errors(() => new (h5().File)(tmp, 'w'));
    if (typeof created.file_id === 'bigint' && created.file_id < 0n) {
      throw new OutputError(path, `cannot create a temporary file in ${dir}`, { refused: false });
    }
    f = created;
    // HDF5 errors (a write the disk refused) are thrown, not printed and ignored: no damaged file is kept
    const file = f;
    result = withHdf5Errors(() => {
      const r = writeContent(file, set, options, raw, startIso, level);
      file.close();
      return r;
    });
    f = null;
    renameSync(tmp, target);
  } catch (e) {
    const open = f;
    if (open)
      try {
        withHdf5Errors(() => open.close()); // a close that fails again throws here instead of printing
      } catch {
        /* already failed */
      }
    rmSync(tmp, { force: true });
    if (e instanceof OutputError || e instanceof OptionError) throw e;
    const hdf5 = hdf5Failure(e);
    if (hdf5) throw new OutputError(path, `writing ${path} failed: ${hdf5.reason}; nothing was written`, hdf5);
    const code = (e as NodeJS.ErrnoException).code;
    throw new OutputError(path, `writing ${path} failed: ${systemReason(e)}`, { refused: false, code });
  }
  return { ...result, path };
}

/** The system error inside an HDF5 error message (its "errno = N, error message = '...'" line), or null. */
export function hdf5Failure(e: unknown): { reason: string; refused: false; code?: string } | null {
  const m = e instanceof Error ? e.message : '';
  if (!/HDF5|H5[A-Z]/.test(m)) return null;
  const sys = /error message = '([^']+)'/.exec(m)?.[1];
  const codes: Record<string, string> = {
    'No space left on device': 'ENOSPC',
    'Disk quota exceeded': 'EDQUOT',
    'File too large': 'EFBIG',
    'Read-only file system': 'EROFS',
    'Input/output error': 'EIO',
  };
  const code = sys ? codes[sys] : undefined;
  const reason =
    code === 'ENOSPC'
      ? 'the disk is full (ENOSPC)'
      : sys
        ? `${sys}${code ? ` (${code})` : ''}`
        : `the HDF5 library reported an error (${m.split('\n').find((l) => l.trim()) ?? 'no message'})`;
  return { reason, refused: false, ...(code ? { code } : {}) };
}

const S = 'S'; // variable-length UTF-8 text

function typed(obj: H5Group | import('h5wasm').Dataset, type: string, ns = 'core'): void {
  obj.create_attribute('namespace', ns, null, S);
  obj.create_attribute('neurodata_type', type, null, S);
  obj.create_attribute('object_id', randomUUID(), null, S);
}

function text(g: H5Group, name: string, value: string | readonly string[]) {
  return g.create_dataset({ name, data: typeof value === 'string' ? value : [...value], dtype: S });
}

function writeContent(
  f: H5File,
  set: SweepSet,
  o: NwbWriteOptions,
  raw: boolean,
  startIso: string | undefined,
  level: number,
): Omit<NwbWriteResult, 'path'> {
  const now = new Date().toISOString();
  const manifest = set.extras.manifest as
    { study?: string; description?: string; species?: string; nerve?: string } | undefined;
  type FromNwb = { general?: Record<string, string | string[]>; subject?: Record<string, string> };
  const fromNwb = set.extras.nwb as FromNwb | undefined;
  f.create_attribute('namespace', 'core', null, S);
  f.create_attribute('neurodata_type', 'NWBFile', null, S);
  f.create_attribute('nwb_version', '2.7.0', null, S);
  f.create_attribute('object_id', randomUUID(), null, S);
  text(f, 'file_create_date', [now]);
  text(f, 'identifier', o.identifier ?? randomUUID());
  text(f, 'session_description', o.sessionDescription ?? manifest?.description ?? manifest?.study ?? 'fascicle export');
  text(f, 'session_start_time', startIso ?? now);
  text(f, 'timestamps_reference_time', startIso ?? now);
  for (const g of ['acquisition', 'analysis', 'processing', 'stimulus', 'general', 'intervals']) f.create_group(g);
  f.get('stimulus')!;
  (f.get('stimulus') as H5Group).create_group('presentation');
  (f.get('stimulus') as H5Group).create_group('templates');

  // /general
  const general = f.get('general') as H5Group;
  const script = text(general, 'source_script', `${FASCICLE_SCRIPT} ${VERSION}`);
  script.create_attribute('file_name', 'fascicle', null, S);
  const notes = [
    `Written by fascicle ${VERSION} on ${now}.`,
    'Sweeps lie on a synthetic time axis (one after another, 1 s apart); acquiredS in the trials table holds acquisition times where known.',
    startIso ? '' : 'session_start_time is the time of writing: the acquisition time was not in the input.',
    raw
      ? 'The samples are as acquired (/acquisition).'
      : 'The samples are conditioned (/processing/fascicle); the steps are in /processing/fascicle/history.',
  ]
    .filter(Boolean)
    .join(' ');
  text(general, 'notes', notes);
  const meta = fromNwb?.general ?? {};
  const lab = o.lab ?? (typeof meta.lab === 'string' ? meta.lab : undefined);
  const institution = o.institution ?? (typeof meta.institution === 'string' ? meta.institution : undefined);
  const experimenter = o.experimenter ?? meta.experimenter;
  if (lab) text(general, 'lab', lab);
  if (institution) text(general, 'institution', institution);
  if (experimenter !== undefined) {
    text(general, 'experimenter', typeof experimenter === 'string' ? [experimenter] : [...experimenter]);
  }
  const given = typeof meta.experiment_description === 'string' ? meta.experiment_description : undefined;
  const description = manifest?.description ?? given;
  if (description) text(general, 'experiment_description', description);
  const preps = [
    ...new Set(
      set
        .column('preparation')
        .filter((v) => v !== null)
        .map(String),
    ),
  ];
  const subject: Record<string, string> = { ...(fromNwb?.subject ?? {}), ...(o.subject ?? {}) };
  if (!subject.subject_id && preps.length === 1) subject.subject_id = preps[0];
  if (!subject.species && manifest?.species) subject.species = manifest.species;
  if (!subject.subject_id && preps.length > 1) {
    subject.description = `${preps.length} preparations: see the preparation column of /intervals/trials`;
  }
  if (Object.keys(subject).length) {
    const sg = general.create_group('subject');
    typed(sg, 'Subject');
    for (const [k, v] of Object.entries(subject)) {
      if (typeof v !== 'string' || !/^[A-Za-z0-9_]+$/.test(k)) {
        throw new OptionError(`invalid subject.${k}: ${shown(v)}; must be text under a plain field name`);
      }
      text(sg, k, v);
    }
  }

  // devices, electrode group, electrodes
  const devices = general.create_group('devices');
  const dev = devices.create_group('recording_system');
  typed(dev, 'Device');
  dev.create_attribute('description', 'amplifier and digitiser of the recording (not described in the input)', null, S);
  const ee = general.create_group('extracellular_ephys');
  const eg = ee.create_group('recording');
  typed(eg, 'ElectrodeGroup');
  eg.create_attribute('description', 'the recording electrodes of the sweeps', null, S);
  eg.create_attribute('location', manifest?.nerve ?? 'peripheral nerve', null, S);
  eg.create_soft_link('/general/devices/recording_system', 'device');
  const keyOf = (i: number) => {
    const c = set.conditions[i];
    return JSON.stringify([c.preparation ?? null, c.site ?? null, c.distanceMm ?? null]);
  };
  const electrodeKeys: string[] = [];
  const electrodeOf = new Int32Array(set.nSweeps);
  for (let i = 0; i < set.nSweeps; i++) {
    const k = keyOf(i);
    let e = electrodeKeys.indexOf(k);
    if (e < 0) e = electrodeKeys.push(k) - 1;
    electrodeOf[i] = e;
  }
  const eRows = electrodeKeys.map((k) => JSON.parse(k) as [ConditionValue, ConditionValue, ConditionValue]);
  const elTable = ee.create_group('electrodes');
  const groupRef = eg.create_reference();
  writeTable(
    elTable,
    'DynamicTable',
    'hdmf-common',
    'recording electrodes: one per preparation, site and conduction distance',
    eRows.length,
    [
      {
        name: 'location',
        values: eRows.map((r) => (r[1] === null ? 'not recorded' : String(r[1]))),
        description: 'recording site',
      },
      { name: 'group', refs: eRows.map(() => groupRef), description: 'electrode group' },
      { name: 'group_name', values: eRows.map(() => 'recording'), description: 'electrode group name' },
      {
        name: 'distance_mm',
        values: eRows.map((r) => (typeof r[2] === 'number' ? r[2] : null)),
        description:
          'conduction distance from the stimulating cathode to the recording electrode, mm (NaN: not recorded)',
        unit: 'mm',
      },
      {
        name: 'preparation',
        values: eRows.map((r) => (r[0] === null ? '' : String(r[0]))),
        description: 'preparation (nerve) the electrode recorded from',
      },
    ],
  );
  const elRef = elTable.create_reference();

  // the series: one per electrode
  const home = raw
    ? (f.get('acquisition') as H5Group)
    : (() => {
        const m = (f.get('processing') as H5Group).create_group('fascicle');
        typed(m, 'ProcessingModule');
        m.create_attribute('description', 'fascicle: conditioned sweeps, processing history and results', null, S);
        return m;
      })();
  const n = set.nSamples;
  const period = Math.ceil(n / set.fs + GAP_S);
  const stimAt = (i: number) => i * period - set.t0Ms / 1000;
  const data = set.data;
  const seriesPaths: string[] = [];
  const seriesRefs: import('h5wasm').Reference[] = [];
  const idxStart = new Int32Array(set.nSweeps);
  const seriesOf = new Int32Array(set.nSweeps);
  const filtering = raw
    ? 'none (as acquired)'
    : set.history
        .filter((s) => !RAW_VERBS.has(s.verb))
        .map((s) => s.verb)
        .join(', ') || 'none';
  for (let e = 0; e < eRows.length; e++) {
    const members: number[] = [];
    for (let i = 0; i < set.nSweeps; i++) if (electrodeOf[i] === e) members.push(i);
    const name = eRows.length === 1 ? 'sweeps' : `sweeps_e${e}`;
    const g = home.create_group(name);
    typed(g, 'ElectricalSeries');
    g.create_attribute(
      'description',
      `${members.length} sweeps of ${n} samples at ${set.fs} Hz, stored in ${set.units}`,
      null,
      S,
    );
    g.create_attribute('comments', 'sweeps on a synthetic time axis: see /general/notes', null, S);
    g.create_attribute('filtering', filtering, null, S);
    const total = members.length * n;
    // chunks of whole sweeps (about 256 KB), each written once, so a reader decodes only the sweeps it reads
    const perChunk = Math.max(1, Math.min(members.length, Math.floor(32768 / n)));
    const chunk = perChunk * n;
    const gz = level > 0 ? { compression: 'gzip' as const, compression_opts: level } : {};
    const d = g.create_dataset({
      name: 'data',
      data: new Float64Array(0),
      shape: [0, 1],
      maxshape: [null, 1],
      chunks: [chunk, 1],
      ...gz,
    });
    d.resize([total, 1]);
    const ts = g.create_dataset({
      name: 'timestamps',
      data: new Float64Array(0),
      shape: [0],
      maxshape: [null],
      chunks: [chunk],
      ...gz,
    });
    ts.resize([total]);
    const xb = new Float64Array(chunk);
    const tb = new Float64Array(chunk);
    for (let k0 = 0; k0 < members.length; k0 += perChunk) {
      const k1 = Math.min(members.length, k0 + perChunk);
      for (let k = k0; k < k1; k++) {
        const i = members[k];
        const o = (k - k0) * n;
        xb.set(data.subarray(i * n, (i + 1) * n), o);
        const T = stimAt(i);
        for (let j = 0; j < n; j++) tb[o + j] = T + (set.t0Ms + (j * 1000) / set.fs) / 1000;
        idxStart[i] = k * n;
        seriesOf[i] = seriesPaths.length;
      }
      const m = (k1 - k0) * n;
      d.write_slice(
        [
          [k0 * n, k1 * n],
          [0, 1],
        ],
        m === chunk ? xb : xb.subarray(0, m),
      );
      ts.write_slice([[k0 * n, k1 * n]], m === chunk ? tb : tb.subarray(0, m));
    }
    d.create_attribute('unit', 'volts', null, S);
    d.create_attribute('conversion', UNIT_TO_VOLTS[set.units], null, '<f');
    d.create_attribute('offset', 0, null, '<f');
    d.create_attribute('resolution', -1, null, '<f');
    d.create_attribute('continuity', 'step', null, S);
    ts.create_attribute('interval', 1, null, '<i');
    ts.create_attribute('unit', 'seconds', null, S);
    const reg = g.create_dataset({ name: 'electrodes', data: new Int32Array([e]) });
    typed(reg, 'DynamicTableRegion', 'hdmf-common');
    reg.create_attribute('description', 'the electrode of these sweeps', null, S);
    reg.create_attribute('table', elRef);
    seriesPaths.push(g.path);
    seriesRefs.push(g.create_reference());
  }

  // trials
  const trials = (f.get('intervals') as H5Group).create_group('trials');
  const keys = conditionKeys(set.conditions);
  const cols: ColumnSpec[] = [
    {
      name: 'start_time',
      values: set.conditions.map((_, i) => stimAt(i) + set.t0Ms / 1000),
      description: 'first sample of the sweep, s (synthetic time axis)',
    },
    {
      name: 'stop_time',
      values: set.conditions.map((_, i) => stimAt(i) + set.timeAt(n - 1) / 1000),
      description: 'last sample of the sweep, s',
    },
    { name: 'stimulus_time', values: set.conditions.map((_, i) => stimAt(i)), description: 'stimulus of the sweep, s' },
  ];
  for (const k of keys) {
    const name = k === 'file' ? 'source_file' : k === 'fileSweep' ? 'source_sweep' : k;
    if (cols.some((c) => c.name === name)) continue;
    const values = set.column(k);
    const units =
      k === 'intensity' || k === 'concentration' ? [...new Set(set.column(`${k}Unit`).filter((v) => v !== null))] : [];
    const unit = OWN_UNITS[k] ?? (units.length === 1 && typeof units[0] === 'string' ? units[0] : undefined);
    cols.push({ name, values, description: `condition ${k}${unit ? ` (${unit})` : ''}`, unit });
  }
  writeTable(
    trials,
    'TimeIntervals',
    'core',
    'one row per sweep: stimulus time, sample range and conditions',
    set.nSweeps,
    cols,
    {
      name: 'timeseries',
      description: 'the samples of each sweep',
      starts: idxStart,
      count: n,
      refs: Array.from(seriesOf, (s) => seriesRefs[s]),
    },
  );

  // history, inputs, study settings, results
  const proc = raw
    ? (() => {
        const m = (f.get('processing') as H5Group).create_group('fascicle');
        typed(m, 'ProcessingModule');
        m.create_attribute('description', 'fascicle: processing history and results', null, S);
        return m;
      })()
    : home;
  // the study's settings (class preset, analysis options, required conditions) travel with the data
  if (manifest) proc.create_attribute('fascicle_study', JSON.stringify({ ...manifest, files: [] }), null, S);
  const hist = proc.create_group('history');
  writeTable(hist, 'DynamicTable', 'hdmf-common', 'the steps that made the sweeps, in order', set.history.length, [
    { name: 'verb', values: set.history.map((s) => s.verb), description: 'step' },
    {
      name: 'options',
      values: set.history.map((s) => JSON.stringify(s.options)),
      description: 'every option of the step (defaults included), JSON',
    },
    { name: 'version', values: set.history.map((s) => s.version), description: 'fascicle version' },
  ]);
  const inp = proc.create_group('inputs');
  writeTable(inp, 'DynamicTable', 'hdmf-common', 'the input files', set.sources.length, [
    { name: 'path', values: set.sources.map((s) => s.path), description: 'file path as given' },
    { name: 'sha256', values: set.sources.map((s) => s.sha256), description: 'SHA-256 of the file, hex' },
    { name: 'bytes', values: set.sources.map((s) => s.bytes), description: 'size, bytes' },
  ]);
  const tables: string[] = [];
  const empty: string[] = [];
  for (const [name, given] of Object.entries(resultTables(o.results))) {
    if (!given) continue;
    // the bundle's column names (snake_case, unit last), as in the bundle's CSV files
    const rows = resultColumns(name, given, set.units) as Rows;
    let safe = name.replace(/[^A-Za-z0-9_.-]/g, '_');
    if (['history', 'inputs'].includes(safe) || safe.startsWith('sweeps')) safe = `results_${safe}`;
    if (tables.includes(safe) || empty.includes(safe)) {
      throw new OptionError(`invalid results: two tables are both named ${JSON.stringify(safe)} in the file`);
    }
    if (rows.length === 0) {
      // a table without rows has no columns either: it is listed instead (h5wasm cannot write an empty colnames)
      empty.push(safe);
      continue;
    }
    const g = proc.create_group(safe);
    const names = [...new Set(rows.flatMap((r) => Object.keys(r)))];
    writeTable(
      g,
      'DynamicTable',
      'hdmf-common',
      `fascicle result table ${name}`,
      rows.length,
      names.map((c) => ({ name: c, values: rows.map((r) => (r[c] === undefined ? null : r[c])), description: c })),
    );
    tables.push(safe);
  }
  if (empty.length) proc.create_attribute('fascicle_empty_tables', empty, null, S);
  return { series: seriesPaths, trials: set.nSweeps, electrodes: eRows.length, tables: [...tables, ...empty] };
}

function resultTables(r: NwbWriteOptions['results']): Record<string, Rows | undefined> {
  if (r === undefined) return {};
  if (r === null || typeof r !== 'object') {
    throw new OptionError(`invalid results: ${shown(r)}; must be a result object or name -> rows`);
  }
  const t = (r as { tables?: unknown }).tables;
  const out =
    typeof t === 'function'
      ? (t as () => Record<string, Rows>).call(r)
      : t && typeof t === 'object' && !Array.isArray(t)
        ? t
        : isPipelineResult(r)
          ? pipelineTables(r)
          : r;
  for (const [k, v] of Object.entries(out as Record<string, unknown>)) {
    if (v !== undefined && (!Array.isArray(v) || !v.every((x) => x && typeof x === 'object' && !Array.isArray(x)))) {
      throw new OptionError(`invalid results.${k}: must be an array of row objects`);
    }
  }
  return out as Record<string, Rows | undefined>;
}

type HasTables = { tables(): Record<string, Rows> } | null | undefined;
interface PipelineLike {
  conditioned: unknown;
  components: HasTables;
  velocity?: HasTables;
  recruitment?: HasTables;
  doseResponse?: HasTables;
  temperature?: HasTables;
  strengthDuration?: HasTables;
  thresholds?: Rows;
  flags?: Rows;
}

/** A result of runPipeline (conditioned sweeps, component table, analyses). */
function isPipelineResult(r: object): r is PipelineLike {
  return 'conditioned' in r && 'components' in r && typeof (r as PipelineLike).components?.tables === 'function';
}

/** Every table of a pipeline result: the component table's, each analysis's, thresholds and flags. */
function pipelineTables(r: PipelineLike): Record<string, Rows> {
  const out: Record<string, Rows> = {};
  const add = (prefix: string, x: HasTables) => {
    if (!x) return;
    for (const [k, rows] of Object.entries(x.tables())) out[k in out ? `${prefix}_${k}` : k] = rows;
  };
  add('components', r.components);
  add('velocity', r.velocity);
  add('recruitment', r.recruitment);
  add('dose_response', r.doseResponse);
  add('temperature', r.temperature);
  add('strength_duration', r.strengthDuration);
  if (r.thresholds) out.thresholds = r.thresholds;
  if (r.flags) out.flags = r.flags;
  return out;
}

interface ColumnSpec {
  name: string;
  description: string;
  values?: readonly unknown[];
  refs?: import('h5wasm').Reference[];
  unit?: string;
}

/** A DynamicTable (or TimeIntervals): id, columns, colnames; optionally a TimeSeriesReference column. */
function writeTable(
  g: H5Group,
  type: string,
  ns: string,
  description: string,
  n: number,
  cols: ColumnSpec[],
  tsref?: { name: string; description: string; starts: Int32Array; count: number; refs: import('h5wasm').Reference[] },
): void {
  typed(g, type, ns);
  g.create_attribute('description', description, null, S);
  const names = cols.map((c) => c.name.replace(/\//g, '_'));
  if (new Set(names).size !== names.length)
    throw new OptionError(`two columns of ${g.path} have the same name after "/" became "_"`);
  const colnames = tsref ? [...names, tsref.name] : names;
  if (colnames.length) g.create_attribute('colnames', colnames, null, S);
  else g.create_attribute('colnames', [], [0], S);
  const id = g.create_dataset({ name: 'id', data: Int32Array.from({ length: n }, (_, i) => i) });
  typed(id, 'ElementIdentifiers', 'hdmf-common');
  cols.forEach((c, k) => {
    let d;
    if (c.refs) d = g.create_dataset({ name: names[k], data: c.refs });
    else {
      const enc = encodeColumn(c.values ?? []);
      d =
        enc.kind === 'string' || enc.kind === 'json'
          ? g.create_dataset({ name: names[k], data: enc.data, dtype: S, ...(enc.data.length ? {} : { shape: [0] }) })
          : g.create_dataset({ name: names[k], data: enc.data });
      const missing = (c.values ?? []).some((v) => v === null || v === undefined);
      if (enc.kind !== 'number' || missing) d.create_attribute('fascicle_dtype', enc.kind, null, S);
    }
    typed(d, 'VectorData', 'hdmf-common');
    d.create_attribute('description', c.description, null, S);
    if (c.unit) d.create_attribute('unit', c.unit, null, S);
    if (names[k] !== c.name) d.create_attribute('fascicle_name', c.name, null, S);
  });
  if (tsref) {
    const d = g.create_dataset({
      name: tsref.name,
      data: new Map<string, unknown>([
        ['idx_start', tsref.starts],
        ['count', new Int32Array(n).fill(tsref.count)],
        ['timeseries', tsref.refs],
      ]) as never,
    });
    typed(d, 'TimeSeriesReferenceVectorData', 'core');
    d.create_attribute('description', tsref.description, null, S);
    const ends = Uint32Array.from({ length: n }, (_, i) => i + 1);
    const idx = g.create_dataset({ name: `${tsref.name}_index`, data: ends });
    typed(idx, 'VectorIndex', 'hdmf-common');
    idx.create_attribute('description', `index into ${tsref.name}`, null, S);
    idx.create_attribute('target', d.create_reference());
  }
}

declare module '../sweeps/SweepSet' {
  interface SweepSet {
    /**
     * Write the sweeps, their conditions (trials table), electrodes and history to an NWB 2.x file (atomic).
     * @example await set.toNwb('out/prep1.nwb')
     */
    toNwb(path: string, options?: NwbWriteOptions): Promise<NwbWriteResult>;
  }
}

SweepSet.prototype.toNwb = function toNwb(
  this: SweepSet,
  path: string,
  options: NwbWriteOptions = {},
): Promise<NwbWriteResult> {
  return writeNwb(this, path, options);
};
