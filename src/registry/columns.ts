/**
 * Column names of a bundle's tables: one style (snake_case, the unit as the last part: `distance_mm`,
 * `velocity_m_s`, `amplitude_uV`) and a unit in the name of every numeric column that has one. The analyses keep
 * their own row keys (the notebook API: `row.distanceMm`, `row.i50`); the bundle's CSV and JSON files and the report's
 * tables use these names. `bundleColumns` maps rows to them, `apiColumns` maps bundle rows back.
 *
 * The mapping (documented in DEVELOPERS.md, "Tables of a bundle"):
 * - conditions: `CONDITION_COLUMNS` (distanceMm -> distance_mm, temperatureC -> temperature_C, ...); where a table
 *   already has the measured column of that name with the same value (components: distance_mm, temperature_C), the
 *   condition column is left out; with a different value it is kept as `<name>_condition`.
 * - per table (its TableSpec's `columns`): unit-less numeric columns get their unit, from the row: `{I}` the row's
 *   intensityUnit, `{C}` its concentrationUnit, `{R}` the unit of the response measured (amplitude: the signal
 *   unit; area: unit_ms); a micro sign is written u ("µM" -> ic50_uM; the unit column keeps "µM"). A row without
 *   the unit keeps the plain name with `_unit` to say so.
 * - label columns (its TableSpec's `labels`: sweep_qc's and sweeps_removed's `condition`, velocity's `group`;
 *   "temperatureC=37, distanceMm=20" in the API): each `key=` of a renamed condition takes the column name
 *   ("temperature_C=37, distance_mm=20"), so a label names a condition as its own column does, with the unit last.
 *   The text stays "key=value, key=value" (split at ", " and the first "="; an empty value is an empty condition),
 *   so a spreadsheet or script can take it apart (values as in the JSON table, not rounded as CSV numbers are).
 *   Flags word the same groups for reading ("37 °C, concentration 0": registry/velocity.ts `groupWords`).
 * Dimensionless numeric columns (counts, ratios, fractions, Hill slopes, Q10, p values, R2) carry no unit.
 */
import type { Row } from './types';
import { tableSpec } from './index';
import { setResultColumnNames } from '../io/nwbColumns';

/** Condition keys (camelCase, the manifest's) -> bundle column names. */
export const CONDITION_COLUMNS: Readonly<Record<string, string>> = {
  distanceMm: 'distance_mm',
  temperatureC: 'temperature_C',
  pulseWidthMs: 'pulse_width_ms',
  intensityUnit: 'intensity_unit',
  concentrationUnit: 'concentration_unit',
  acquiredS: 'acquired_s',
  fileSweep: 'file_sweep',
  intervalMs: 'interval_ms',
  trainHz: 'train_hz',
  trainPulses: 'train_pulses',
  referenceDistanceMm: 'reference_distance_mm',
  pulsePair: 'pulse_pair',
  pulsesMs: 'pulses_ms',
  preparationType: 'preparation_type',
};

/** A table's own renames (its TableSpec's `columns`, declared with the analysis). */
const tableColumns = (table: string): Readonly<Record<string, string>> => tableSpec(table)?.spec.columns ?? {};

/** Units of the placeholders of one row. */
export interface ColumnUnits {
  /** unit of the response measure ({R}); default: the signal unit (amplitude) */
  response?: string;
}

/** A unit as a column name's last part: "uM" as it is, "µM" and "μM" as "uM", "mg/mL" as "mg_mL"; null if not a unit. */
const unitOf = (v: unknown) => {
  if (typeof v !== 'string') return null;
  const u = v.replace(/^[µμ]/, 'u');
  return /^[A-Za-z%][\w%/]*$/.test(u) ? u.replace('/', '_') : null;
};

function fill(name: string, r: Row, u: ColumnUnits): string {
  return name.replace(/_\{([ICR])\}$/, (_m, k: string) => {
    const unit =
      k === 'I' ? unitOf(r.intensityUnit) : k === 'C' ? unitOf(r.concentrationUnit) : unitOf(u.response ?? null);
    return `_${unit ?? 'unit'}`;
  });
}

/**
 * The unit of a recruitment response measure: the signal unit for the default amplitude, else the unit part of the
 * measure's column name ('area_uV_ms' -> 'uV_ms'); undefined when the name has none.
 */
export function responseUnit(signalUnit: string, measure?: string): string | undefined {
  if (!measure) return signalUnit;
  const at = measure.indexOf(`_${signalUnit}`);
  return at >= 0 ? measure.slice(at + 1) : undefined;
}

/** The placeholder units of a combined study: the response unit from its recruitment step (else the signal unit). */
export function studyColumnUnits(study: {
  units: string;
  history: readonly { verb: string; options: Record<string, unknown> }[];
}): ColumnUnits {
  const m = study.history.find((h) => h.verb === 'recruitment')?.options.measure;
  return { response: responseUnit(study.units, typeof m === 'string' ? m : undefined) };
}

/**
 * A "key=value, key=value" label with its condition keys renamed by `names` (a key is a name at the start of the
 * text or after ", ", followed by "="; values are left alone).
 */
export function renameLabelKeys(label: string, names: ReadonlyMap<string, string>): string {
  return label.replace(/(^|, )([A-Za-z_][\w]*)=/g, (m, lead: string, key: string) =>
    names.has(key) ? `${lead}${names.get(key)}=` : m,
  );
}
const TO_BUNDLE = new Map(Object.entries(CONDITION_COLUMNS));
const TO_API = new Map(Object.entries(CONDITION_COLUMNS).map(([a, b]) => [b, a]));
const labelColumns = (table: string) => new Set(tableSpec(table)?.spec.labels ?? []);

/** A table's rows with the bundle's column names (same values, same order of columns). */
export function bundleColumns(table: string, rows: readonly Row[], u: ColumnUnits = {}): Row[] {
  const own = tableColumns(table);
  const labels = labelColumns(table);
  return rows.map((r) => {
    const out: Row = {};
    const keys = Object.keys(r);
    for (const k of keys) {
      const v = labels.has(k) && typeof r[k] === 'string' ? renameLabelKeys(r[k] as string, TO_BUNDLE) : r[k];
      if (k in own) out[fill(own[k], r, u)] = v;
      else if (k in CONDITION_COLUMNS) {
        const to = CONDITION_COLUMNS[k];
        if (to in r) {
          if (JSON.stringify(r[to]) !== JSON.stringify(v)) out[`${to}_condition`] = v;
        } else out[to] = v;
      } else out[k] = v;
    }
    return out;
  });
}

/** Bundle rows with the analyses' own keys again (for code written against those, e.g. tests reading a bundle). */
export function apiColumns(table: string, rows: readonly Row[]): Row[] {
  // longest names first, so that i50_ci95_low_{I} is tried before i50_{I}
  const back = new Map<RegExp, string>();
  const own = Object.entries(tableColumns(table)).sort((x, y) => y[1].length - x[1].length);
  for (const [from, to] of own) back.set(new RegExp(`^${to.replace(/_\{[ICR]\}$/, '_[A-Za-z%][\\w%]*')}$`), from);
  const cond = TO_API;
  const labels = labelColumns(table);
  return rows.map((r) => {
    const out: Row = {};
    for (const [k, raw] of Object.entries(r)) {
      const v = labels.has(k) && typeof raw === 'string' ? renameLabelKeys(raw, TO_API) : raw;
      const hit = [...back].find(([re]) => re.test(k));
      if (hit) out[hit[1]] = v;
      else if (k.endsWith('_condition') && cond.has(k.slice(0, -10))) out[cond.get(k.slice(0, -10))!] = v;
      else {
        out[k] = v;
        // a measured column that stood for its condition (the condition was left out as equal)
        if (cond.has(k) && !(cond.get(k)! in r)) out[cond.get(k)!] = v;
      }
    }
    return out;
  });
}

// the NWB writer's result tables take the bundle's names too (the io layer cannot import this module)
setResultColumnNames((table, rows, signalUnit) => bundleColumns(table, rows as Row[], { response: signalUnit }));
