/**
 * How columns of an NWB table (trials or another TimeIntervals table, the electrodes table)
 * become fascicle conditions, and how conditions and result rows become table columns.
 *
 * Default mapping (names compared without case; a unit may follow the name after "_", as in
 * `intensity_mA`, `pulse_width_us`, `distance_cm`; a column's `unit` attribute wins over both):
 *
 * | condition     | NWB column names                                                    | unit when none is given |
 * |---------------|---------------------------------------------------------------------|-------------------------|
 * | intensity     | intensity, stimulus_intensity, stim_intensity, stimulus_amplitude,  | none (intensityUnit is  |
 * |               | stim_amplitude, stimulus_current, current                           | set when a unit is)     |
 * | pulseWidthMs  | pulseWidthMs (ms), pulse_width, pulse_duration, stimulus_duration,  | s (NWB's time unit)     |
 * |               | stim_duration                                                       |                         |
 * | distanceMm    | distanceMm (mm), distance, conduction_distance, dist                | m (SI, as NWB)          |
 * | concentration | concentration, drug_concentration, conc                             | none (concentrationUnit |
 * |               |                                                                     | is set when a unit is)  |
 * | temperatureC  | temperatureC (C), temperature, bath_temperature, temp               | degrees C (common use)  |
 * | drug          | drug, compound, agent, drug_name                                    |                         |
 * | preparation   | preparation, preparation_id, nerve_id                               |                         |
 * | site          | site, recording_site                                                |                         |
 * | epoch         | epoch, phase                                                        |                         |
 * | repeat        | repeat, repetition, rep                                             |                         |
 * | polarity      | polarity, stimulus_polarity                                         |                         |
 * | acquiredS     | acquiredS (s), acquired_s, acquisition_time                         | s                       |
 * | sourceFile    | source_file                                                         |                         |
 * | sourceSweep   | source_sweep                                                        |                         |
 *
 * Any other column keeps its NWB name as a condition. Override with `columns: { intensity: 'amp_V',
 * drug: null }` (null: that condition is not read from the table; the column stays a plain one).
 */
import { InputError } from '../errors';
import type { ConditionValue } from '../sweeps/SweepSet';

export type ColumnKind = 'number' | 'time' | 'length' | 'temperature' | 'text' | 'withUnit';

export interface ConditionSpec {
  kind: ColumnKind;
  names: readonly string[];
  /** names that are fascicle's own (their unit is the condition's) */
  own?: string;
  /** condition that receives the unit (withUnit kinds) */
  unitCondition?: string;
  /** a time condition in s (others are in ms) */
  seconds?: boolean;
}

export const NWB_CONDITIONS: Readonly<Record<string, ConditionSpec>> = {
  intensity: {
    kind: 'withUnit',
    unitCondition: 'intensityUnit',
    names: [
      'intensity',
      'stimulus_intensity',
      'stim_intensity',
      'stimulus_amplitude',
      'stim_amplitude',
      'stimulus_current',
      'current',
    ],
  },
  pulseWidthMs: {
    kind: 'time',
    own: 'pulseWidthMs',
    names: ['pulse_width', 'pulse_duration', 'stimulus_duration', 'stim_duration'],
  },
  distanceMm: { kind: 'length', own: 'distanceMm', names: ['distance', 'conduction_distance', 'dist'] },
  concentration: {
    kind: 'withUnit',
    unitCondition: 'concentrationUnit',
    names: ['concentration', 'drug_concentration', 'conc'],
  },
  temperatureC: { kind: 'temperature', own: 'temperatureC', names: ['temperature', 'bath_temperature', 'temp'] },
  drug: { kind: 'text', names: ['drug', 'compound', 'agent', 'drug_name'] },
  preparation: { kind: 'text', names: ['preparation', 'preparation_id', 'nerve_id'] },
  site: { kind: 'text', names: ['site', 'recording_site'] },
  epoch: { kind: 'text', names: ['epoch', 'phase'] },
  repeat: { kind: 'number', names: ['repeat', 'repetition', 'rep'] },
  polarity: { kind: 'number', names: ['polarity', 'stimulus_polarity'] },
  acquiredS: { kind: 'time', own: 'acquiredS', seconds: true, names: ['acquired_s', 'acquisition_time'] },
  sourceFile: { kind: 'text', names: ['source_file'] },
  sourceSweep: { kind: 'number', names: ['source_sweep'] },
};

const TIME_UNITS: Record<string, number> = {
  s: 1000,
  sec: 1000,
  seconds: 1000,
  second: 1000,
  ms: 1,
  msec: 1,
  milliseconds: 1,
  us: 1e-3,
  usec: 1e-3,
  microseconds: 1e-3,
};
const LENGTH_UNITS: Record<string, number> = {
  m: 1000,
  meters: 1000,
  metres: 1000,
  cm: 10,
  mm: 1,
  um: 1e-3,
  micrometers: 1e-3,
};
const TEMPERATURE_UNITS: Record<string, 'C' | 'K'> = {
  c: 'C',
  degc: 'C',
  celsius: 'C',
  'deg c': 'C',
  '°c': 'C',
  k: 'K',
  kelvin: 'K',
};
const INTENSITY_UNITS = ['A', 'mA', 'uA', 'nA', 'V', 'mV', 'uV'];
const CONCENTRATION_UNITS = ['M', 'mM', 'uM', 'nM', 'pM', 'mg/ml', 'ug/ml', '%'];

const norm = (u: string) => u.trim().replace(/[µμ]/g, 'u');

/** A column as read: its values (numbers, strings, booleans or null) and its unit attribute. */
export interface TableColumn {
  name: string;
  values: ConditionValue[];
  unit?: string;
  /** HDF5 path, for messages */
  path: string;
}

/** The unit a name suffix gives for a kind, if the suffix is a unit of that kind. */
function suffixUnit(kind: ColumnKind, suffix: string): string | undefined {
  const s = norm(suffix);
  if (kind === 'time') return s.toLowerCase() in TIME_UNITS ? s.toLowerCase() : undefined;
  if (kind === 'length') return s.toLowerCase() in LENGTH_UNITS ? s.toLowerCase() : undefined;
  if (kind === 'temperature') return s.toLowerCase() in TEMPERATURE_UNITS ? s.toLowerCase() : undefined;
  if (kind === 'withUnit') return [...INTENSITY_UNITS, ...CONCENTRATION_UNITS].find((u) => u === s);
  return undefined;
}

/** Find the column of a condition by the default names: exact own name, a listed name, or a listed name + unit. */
export function findColumn(
  condition: string,
  spec: ConditionSpec,
  columns: readonly TableColumn[],
): { column: TableColumn; unit?: string } | null {
  if (spec.own) {
    const own = columns.find((c) => c.name === spec.own);
    const units: Record<string, string> = { time: 'ms', length: 'mm', temperature: 'c' };
    const implied = spec.seconds ? 's' : units[spec.kind];
    if (own) return { column: own, unit: own.unit ?? implied };
  }
  const exact = columns.find((c) => c.name === condition);
  if (exact && !spec.own) return { column: exact, unit: exact.unit };
  for (const name of spec.names) {
    const c = columns.find((k) => k.name.toLowerCase() === name);
    if (c) return { column: c, unit: c.unit };
  }
  for (const name of spec.names) {
    for (const c of columns) {
      const lower = c.name.toLowerCase();
      if (!lower.startsWith(name + '_')) continue;
      const u = suffixUnit(spec.kind, c.name.slice(name.length + 1));
      if (u !== undefined) return { column: c, unit: c.unit ?? u };
    }
  }
  return null;
}

type Converted = { values: ConditionValue[]; unitValue?: string; note?: string };

/**
 * Convert one mapped column to condition values (and a unit condition).
 * @throws InputError naming the file and the column's HDF5 path when values or unit do not fit.
 */
export function convertColumn(
  file: string,
  condition: string,
  spec: ConditionSpec,
  column: TableColumn,
  unit: string | undefined,
): Converted {
  const bad = (problem: string, expected: string): never => {
    throw new InputError({ file, field: column.path }, problem, expected);
  };
  const numeric = () => {
    column.values.forEach((v, i) => {
      if (v !== null && typeof v !== 'number') {
        bad(
          `column "${column.name}" holds ${JSON.stringify(v)} in row ${i}, which is not a number`,
          `numbers for the condition ${condition} (or map it elsewhere: columns: { ${condition}: null })`,
        );
      }
    });
    return column.values as (number | null)[];
  };
  if (spec.kind === 'text') {
    return { values: column.values.map((v) => (typeof v === 'number' || v === null ? v : String(v))) };
  }
  if (spec.kind === 'number') return { values: numeric() };
  if (spec.kind === 'time' || spec.kind === 'length') {
    const table = spec.kind === 'time' ? TIME_UNITS : LENGTH_UNITS;
    const u = unit === undefined ? (spec.kind === 'time' ? 's' : 'm') : norm(unit).toLowerCase();
    const factor = table[u] / (spec.seconds ? 1000 : 1);
    if (!Number.isFinite(factor)) {
      bad(
        `column "${column.name}" has the unit ${JSON.stringify(unit)}`,
        `one of ${Object.keys(table).join(', ')} for ${condition}`,
      );
    }
    const note = unit === undefined ? `${column.name}: no unit given, read as ${u} (NWB's SI convention)` : undefined;
    return { values: numeric().map((v) => (v === null ? null : v * factor)), note };
  }
  if (spec.kind === 'temperature') {
    const u = unit === undefined ? 'C' : TEMPERATURE_UNITS[norm(unit).toLowerCase()];
    if (!u)
      bad(`column "${column.name}" has the unit ${JSON.stringify(unit)}`, 'degC (or C, celsius) or K for temperatureC');
    return { values: numeric().map((v) => (v === null ? null : u === 'K' ? v - 273.15 : v)) };
  }
  // withUnit: the values as they are, the unit into its own condition
  if (unit !== undefined) {
    const allowed = condition === 'intensity' ? INTENSITY_UNITS : CONCENTRATION_UNITS;
    const u = norm(unit);
    if (!allowed.includes(u))
      bad(
        `column "${column.name}" has the unit ${JSON.stringify(unit)}`,
        `one of ${allowed.join(', ')} for ${condition}`,
      );
    return { values: numeric(), unitValue: u };
  }
  return { values: numeric() };
}

/** How a column of condition or result values is stored. */
export type ColumnEncoding =
  | { kind: 'number'; data: Float64Array }
  | { kind: 'boolean'; data: Int8Array }
  | { kind: 'string'; data: string[] }
  | { kind: 'json'; data: string[] };

/**
 * Encode one column for an NWB table: numbers (null as NaN) as float64; booleans as int8
 * (1, 0, -1 for null); strings as text (null as "", only when no value is ""); anything else
 * as JSON text per cell. The encoding is kept in the attribute `fascicle_dtype` so that
 * fascicle reads back the same values.
 */
export function encodeColumn(values: readonly unknown[]): ColumnEncoding {
  const present = values.filter((v) => v !== null && v !== undefined);
  if (present.every((v) => typeof v === 'number' && Number.isFinite(v))) {
    return { kind: 'number', data: Float64Array.from(values, (v) => (typeof v === 'number' ? v : NaN)) };
  }
  if (present.every((v) => typeof v === 'boolean')) {
    return { kind: 'boolean', data: Int8Array.from(values, (v) => (v === true ? 1 : v === false ? 0 : -1)) };
  }
  if (present.every((v) => typeof v === 'string' && v !== '')) {
    return { kind: 'string', data: values.map((v) => (typeof v === 'string' ? v : '')) };
  }
  return { kind: 'json', data: values.map((v) => JSON.stringify(v === undefined ? null : v) ?? 'null') };
}

/** Decode a column read from a table (numbers or strings), by its `fascicle_dtype` attribute when present. */
export function decodeColumn(
  raw: ArrayLike<number> | readonly string[],
  encoding: string | undefined,
): ConditionValue[] {
  const out: ConditionValue[] = new Array(raw.length);
  for (let i = 0; i < raw.length; i++) {
    const v = raw[i] as number | string;
    if (typeof v === 'number') {
      if (encoding === 'boolean') out[i] = v === 1 ? true : v === 0 ? false : null;
      else out[i] = Number.isFinite(v) ? v : null;
    } else if (encoding === 'json') {
      try {
        const p = JSON.parse(v) as unknown;
        out[i] = p === null || ['string', 'number', 'boolean'].includes(typeof p) ? (p as ConditionValue) : v;
      } catch {
        out[i] = v;
      }
    } else if (encoding === 'string' && v === '') out[i] = null;
    else out[i] = v;
  }
  return out;
}

/** Rows of a result table, as plain objects. */
export type ResultRows = readonly Record<string, unknown>[];

/**
 * How a result table's columns are named in the NWB file's processing module: the bundle's names (snake_case, the
 * unit as the last part), so a collaborator sees the same columns in the bundle's CSV files and in the NWB file.
 * The registry installs the renaming when it loads (src/registry/columns.ts `bundleColumns`; the package index
 * loads it), since the io layer cannot import it; without it the rows keep their own keys.
 */
let resultColumnNames: (table: string, rows: ResultRows, signalUnit: string) => ResultRows = (_t, rows) => rows;

/** Install the renaming of result-table columns (the registry does, at load). */
export function setResultColumnNames(fn: (table: string, rows: ResultRows, signalUnit: string) => ResultRows): void {
  resultColumnNames = fn;
}

/** A result table's rows with the column names the NWB file uses (see setResultColumnNames). */
export function resultColumns(table: string, rows: ResultRows, signalUnit: string): ResultRows {
  return resultColumnNames(table, rows, signalUnit);
}
