/**
 * Study manifest loader: one JSON file lists the recording files of a study and
 * joins each file (and optionally each sweep) with its conditions, so a whole
 * study loads in one call and every sweep knows its conditions. The JSON Schema
 * ships in the package as schema/manifest.schema.json.
 */
import { dirname, join, resolve, isAbsolute, relative, basename } from 'node:path';
import { readdirSync, statSync, readFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { InputError, OptionError, ConfigError } from '../errors';
import { SweepSet, type Conditions } from '../sweeps/SweepSet';
import { readInput } from './files';
import {
  conditionsProblem,
  nearest,
  shown,
  didYouMean,
  KNOWN_CONDITIONS,
  conditionKeyTypo,
  unitTypo,
  DISTANCE_RANGE_MM,
} from '../validate';
/** The message for a unit written in the wrong case ("ma" for "mA"). */
const unitSlip = (v: unknown, unit: string) =>
  `unit ${JSON.stringify(v)} (did you mean "${unit}"?); in SI the case is the meaning (m is milli, M mega or ` +
  'molar), so fascicle does not guess';
/** Re-exported: the condition keys and their typo check live in src/validate.ts (the binary loader uses them too). */
export { KNOWN_CONDITIONS, conditionKeyTypo } from '../validate';
import { PRESETS } from '../measure/classes';
import { COMPONENT_OPTION_KEYS } from '../measure/components';
import { VDIST_OPTION_KEYS } from '../analysis/velocityDistribution';
import { QC_OPTION_KEYS } from '../analysis/sweepQc';
import { readDelimited, type DelimitedOptions } from './delimited';
import { readBinary } from './binary';
import { readNwbSync, type NwbReadOptions } from './nwb';
import { VERSION } from '../version';
import validateManifestSchema from './manifestValidator';

export interface ManifestFile {
  path: string;
  format?: 'delimited' | 'binary' | 'nwb';
  options?: DelimitedOptions;
  conditions?: Conditions;
  sweeps?: Conditions[];
}
export interface Manifest {
  fascicleManifest: 1;
  study?: string;
  description?: string;
  species?: string;
  nerve?: string;
  classPreset?: string;
  required?: string[];
  defaults?: Conditions;
  /** blinded analysis: the values of `condition` (default 'group') are codes; the key stays outside the study */
  blinding?: { coded: boolean; condition?: string };
  analysis?: Record<string, unknown>;
  files: ManifestFile[];
}

/**
 * The keys a manifest may hold, checked before the JSON Schema so a typo gets the nearest
 * valid name. KEEP IN SYNC: MANIFEST_KEYS and FILE_KEYS with schema/manifest.schema.json;
 * ANALYSIS_KEYS with PipelineOptions in src/report/pipeline.ts and the option interfaces of
 * the verbs and analyses it names (BaselineOptions, ArtifactOptions, HumOptions,
 * FilterOptions, ComponentOptions, DoseResponseOptions, StrengthDurationOptions);
 * SERIES with the series names src/report/study.ts and pipeline.ts look for.
 */
export const MANIFEST_KEYS = [
  'fascicleManifest',
  'study',
  'description',
  'species',
  'nerve',
  'classPreset',
  'required',
  'defaults',
  'blinding',
  'analysis',
  'files',
] as const;
export const BLINDING_KEYS = ['coded', 'condition'] as const;
export const FILE_KEYS = ['path', 'format', 'options', 'conditions', 'sweeps'] as const;
/** Reader options a manifest may give a delimited file (DelimitedOptions without conditions, which the manifest gives itself). */
export const FILE_OPTION_KEYS = ['delimiter', 'decimal', 'layout', 'timeUnit', 'units', 'stimulusAt'] as const;
export const ANALYSIS_KEYS: Readonly<Record<string, readonly string[] | 'boolean'>> = {
  baseline: ['window', 'method', 'lateWindow'],
  artifact: [
    'method',
    'window',
    'bridge',
    'maxIntensity',
    'templateSweeps',
    'templateBy',
    'scaling',
    'fitWindow',
    'tailWindow',
    'exponentials',
  ],
  hum: ['frequency', 'harmonics', 'exclude', 'drift'],
  filter: ['btype', 'cutoff', 'order', 'padlen'],
  averageRepeats: 'boolean',
  poolSites: 'boolean',
  components: COMPONENT_OPTION_KEYS,
  doseResponse: [
    'measure',
    'lastN',
    'runDown',
    'fixBottom',
    'bootstrap',
    'seed',
    'classes',
    'poolSites',
    'minConcentrations',
    'maxLatencyShift',
    'belowDetection',
    'freeTop',
  ],
  recruitment: ['measure', 'by', 'supramaximalFactor', 'minLevels', 'belowDetection'],
  strengthDuration: ['measure', 'by', 'fraction'],
  temperature: ['measure'],
  qc: QC_OPTION_KEYS,
  reject: ['flags'],
  pairedPulse: ['by', 'roleKey', 'intervalKey', 'latency', 'measure', 'blankMs', 'extrapolateMs', 'minIntervals'],
  trains: ['by', 'frequencyKey', 'pulsesKey', 'latency', 'blankMs', 'failFraction'],
  groups: ['value', 'group', 'animal', 'condition', 'by', 'unit', 'levels', 'table'],
  mixed: ['value', 'fixed', 'random', 'interaction', 'by', 'levels', 'table'],
  velocityDistribution: VDIST_OPTION_KEYS,
};
/** Steps that may be `false` (turned off). */
const OPTIONAL_STEPS = ['baseline', 'artifact', 'hum', 'filter', 'qc', 'pairedPulse', 'trains'];
/** Steps that may be a list of option objects, applied in order. */
const LIST_STEPS = ['artifact'];
/** Steps that may be `true` or `false` as well as an object of options. */
const BOOLEAN_OR_OBJECT_STEPS = ['reject'];
/** Steps that need these keys when present. */
const REQUIRED_KEYS: Readonly<Record<string, readonly string[]>> = { groups: ['value'], mixed: ['value', 'fixed'] };
/** Values of the `series` condition that the standard pipeline recognises. */
export const SERIES = ['intensity', 'distance', 'dose', 'temperature', 'pulse-width', 'paired-pulse', 'train'] as const;

/**
 * Values of analysis options that the pipeline uses inside analyses it flags instead of stopping
 * (a bad value there would become a flag, not a configuration error), and the per-class polarity:
 * checked here so the mistake names the manifest field. Other values are checked by their verb.
 */
const isInt = (min: number) => (v: unknown) => Number.isInteger(v) && (v as number) >= min;
const isPolarity = (v: unknown) => v === 1 || v === -1 || v === 'auto';
const isStrings = (v: unknown) => Array.isArray(v) && v.every((x) => typeof x === 'string');
/** The sweep-QC flag names (QC_FLAGS of src/analysis/sweepQc.ts; not imported: that module imports the report). */
export const REJECT_FLAGS = ['noisy', 'flat', 'drift', 'saturated', 'artifact', 'outlier'] as const;
export const ANALYSIS_VALUES: Readonly<Record<string, readonly [(v: unknown) => boolean, string]>> = {
  'components/polarity': [
    (v) =>
      isPolarity(v) || (v !== null && typeof v === 'object' && !Array.isArray(v) && Object.values(v).every(isPolarity)),
    '1, -1, "auto", or an object of class name -> 1, -1 or "auto" (e.g. { "C": -1 })',
  ],
  'doseResponse/measure': [(v) => typeof v === 'string', 'a column name of the components table'],
  'doseResponse/lastN': [isInt(1), 'an integer >= 1'],
  'doseResponse/runDown': [(v) => v === 'none' || v === 'washout' || v === 'vehicle', '"none", "washout" or "vehicle"'],
  'doseResponse/fixBottom': [(v) => v === null || (typeof v === 'number' && Number.isFinite(v)), 'a number or null'],
  'doseResponse/bootstrap': [isInt(0), 'an integer >= 0 (resamples)'],
  'doseResponse/seed': [(v) => Number.isInteger(v), 'an integer'],
  'doseResponse/classes': [isStrings, 'a list of class names'],
  'doseResponse/poolSites': [(v) => typeof v === 'boolean', 'true or false'],
  'doseResponse/belowDetection': [(v) => typeof v === 'boolean', 'true or false'],
  'doseResponse/freeTop': [(v) => typeof v === 'boolean', 'true or false'],
  'doseResponse/minConcentrations': [isInt(2), 'an integer >= 2'],
  'doseResponse/maxLatencyShift': [
    (v) => v === null || (typeof v === 'number' && v > 0 && Number.isFinite(v)),
    'a number > 0 (a fraction of the baseline latency) or null',
  ],
  'recruitment/measure': [(v) => typeof v === 'string', 'a column name of the components table'],
  'recruitment/by': [isStrings, 'a list of condition names'],
  'recruitment/supramaximalFactor': [
    (v) => typeof v === 'number' && v >= 1 && Number.isFinite(v),
    'a number >= 1 (supramaximal = this x I95)',
  ],
  'recruitment/minLevels': [isInt(3), 'an integer >= 3 (a sigmoid has 4 parameters)'],
  'recruitment/belowDetection': [(v) => typeof v === 'boolean', 'true or false'],
  'strengthDuration/measure': [(v) => typeof v === 'string', 'a column name of the components table'],
  'strengthDuration/by': [isStrings, 'a list of condition names'],
  'strengthDuration/fraction': [(v) => typeof v === 'number' && v >= 0.05 && v <= 0.95, 'a number from 0.05 to 0.95'],
  'temperature/measure': [(v) => typeof v === 'string', 'a column name of the components table'],
  'reject/flags': [
    (v) => Array.isArray(v) && v.every((x) => (REJECT_FLAGS as readonly unknown[]).includes(x)),
    `a list of QC flags among ${REJECT_FLAGS.join(', ')}`,
  ],
  'groups/value': [(v) => typeof v === 'string', 'a column name'],
  'groups/table': [(v) => v === 'components' || v === 'velocity', '"components" or "velocity"'],
  'mixed/value': [(v) => typeof v === 'string', 'a column name'],
  'mixed/fixed': [(v) => isStrings(v) && (v as string[]).length > 0, 'a list of condition names (the fixed effects)'],
  'mixed/interaction': [(v) => typeof v === 'boolean', 'true or false'],
  'mixed/table': [(v) => v === 'components' || v === 'velocity', '"components" or "velocity"'],
};
/** Deepest nesting a manifest may have (far beyond any real one; guards the writers' recursion). */
export const MANIFEST_MAX_DEPTH = 32;

const HINTS: Record<string, string> = {
  lowpass: '"filter": { "btype": "lowpass", "cutoff": <Hz> }',
  highpass: '"filter": { "btype": "highpass", "cutoff": <Hz> }',
  bandpass: '"filter": { "btype": "bandpass", "cutoff": [<low Hz>, <high Hz>] }',
  notch: '"hum": { "frequency": <Hz> }',
  preset: '"components": { "preset": <name> } or a top-level "classPreset"',
  classPreset: 'a top-level "classPreset"',
  components: 'the class settings once, in "analysis": { "components": { ... } }; every analysis uses them',
};

function unknownKey(file: string, field: string, key: string, allowed: readonly string[]): never {
  const near = nearest(key, allowed);
  const hint = HINTS[key] && !near ? ` (write ${HINTS[key]})` : near ? ` (did you mean "${near}"?)` : '';
  throw new ConfigError(
    { file, field: `${field}/${key}` },
    `unknown key "${key}"${hint}`,
    `one of ${allowed.join(', ')}`,
  );
}

function checkObjectKeys(file: string, field: string, obj: unknown, allowed: readonly string[]): void {
  if (obj === undefined) return;
  if (obj === null || typeof obj !== 'object' || Array.isArray(obj))
    throw new ConfigError({ file, field }, `is ${shown(obj)}`, 'an object');
  for (const k of Object.keys(obj)) if (!allowed.includes(k)) unknownKey(file, field, k, allowed);
}

/** The path (JSON pointer) of the first value nested deeper than max levels, or null. Iterative: no recursion. */
function tooDeep(root: unknown, max: number): string | null {
  const stack: [unknown, number, string][] = [[root, 0, '']];
  while (stack.length) {
    const [v, d, at] = stack.pop()!;
    if (v === null || typeof v !== 'object') continue;
    if (d >= max) return at || '(root)';
    for (const [k, x] of Object.entries(v as object))
      if (x !== null && typeof x === 'object') stack.push([x, d + 1, `${at}/${k}`]);
  }
  return null;
}

/**
 * Check the parts of a manifest the JSON Schema leaves open, naming the field and the
 * nearest valid name: top-level, file and reader-option keys, the "analysis" section
 * and its step options, "classPreset", the "series" condition and the nesting depth.
 * @throws ConfigError (an InputError) naming the manifest and field.
 */
export function checkManifestKeys(m: unknown, file: string): void {
  if (m === null || typeof m !== 'object' || Array.isArray(m)) return; // the schema says what is wrong
  const deep = tooDeep(m, MANIFEST_MAX_DEPTH);
  if (deep)
    throw new ConfigError(
      { file, field: deep },
      `nested more than ${MANIFEST_MAX_DEPTH} levels deep`,
      'the flat structure of schema/manifest.schema.json',
    );
  checkObjectKeys(file, '', m, MANIFEST_KEYS);
  const man = m as Record<string, unknown>;
  checkObjectKeys(file, '/blinding', man.blinding, BLINDING_KEYS);
  if (
    man.classPreset !== undefined &&
    (typeof man.classPreset !== 'string' || !Object.hasOwn(PRESETS, man.classPreset))
  ) {
    const near = typeof man.classPreset === 'string' ? nearest(man.classPreset, Object.keys(PRESETS)) : null;
    throw new ConfigError(
      { file, field: '/classPreset' },
      `unknown class preset ${shown(man.classPreset)}${near ? ` (did you mean "${near}"?)` : ''}`,
      `one of ${Object.keys(PRESETS).join(', ')}`,
    );
  }
  const a = man.analysis as Record<string, unknown> | undefined;
  checkObjectKeys(file, '/analysis', a, Object.keys(ANALYSIS_KEYS));
  for (const [step, v] of Object.entries(a ?? {})) {
    const keys = ANALYSIS_KEYS[step];
    if (v === false && OPTIONAL_STEPS.includes(step)) continue;
    if (BOOLEAN_OR_OBJECT_STEPS.includes(step)) {
      if (typeof v === 'boolean') continue;
      if (v === null || typeof v !== 'object' || Array.isArray(v)) {
        throw new ConfigError(
          { file, field: `/analysis/${step}` },
          `is ${shown(v)}`,
          `true, false or an object with ${(keys as readonly string[]).join(', ')}`,
        );
      }
    }
    if (keys === 'boolean') {
      if (typeof v !== 'boolean')
        throw new ConfigError({ file, field: `/analysis/${step}` }, `is ${shown(v)}`, 'true or false');
    } else if (Array.isArray(v) && LIST_STEPS.includes(step)) {
      v.forEach((x, i) => checkObjectKeys(file, `/analysis/${step}/${i}`, x, keys));
    } else {
      checkObjectKeys(file, `/analysis/${step}`, v, keys);
      for (const k of REQUIRED_KEYS[step] ?? []) {
        if (!Object.hasOwn(v as object, k))
          throw new ConfigError(
            { file, field: `/analysis/${step}` },
            `has no "${k}"`,
            `"${k}" (${step} needs ${REQUIRED_KEYS[step].join(' and ')})`,
          );
      }
      for (const [k, x] of Object.entries(v as object)) {
        const check = ANALYSIS_VALUES[`${step}/${k}`];
        if (check && !check[0](x)) {
          throw new ConfigError({ file, field: `/analysis/${step}/${k}` }, `is ${shown(x)}`, check[1]);
        }
      }
    }
  }
  const comp = a?.components as Record<string, unknown> | undefined;
  if (comp && typeof comp.preset === 'string' && !Object.hasOwn(PRESETS, comp.preset)) {
    const near = nearest(comp.preset, Object.keys(PRESETS));
    throw new ConfigError(
      { file, field: '/analysis/components/preset' },
      `unknown class preset ${shown(comp.preset)}${near ? ` (did you mean "${near}"?)` : ''}`,
      `one of ${Object.keys(PRESETS).join(', ')}`,
    );
  }
  if (
    comp &&
    typeof comp.preset === 'string' &&
    typeof man.classPreset === 'string' &&
    comp.preset !== man.classPreset
  ) {
    throw new ConfigError(
      { file, field: '/analysis/components/preset' },
      `preset "${comp.preset}" differs from the top-level classPreset "${man.classPreset}"`,
      'one of the two, or both the same',
    );
  }
  const series = (c: unknown, field: string) => {
    if (c === null || typeof c !== 'object' || !Object.hasOwn(c, 'series')) return;
    const v = (c as Record<string, unknown>).series;
    if (v === null || (typeof v === 'string' && (SERIES as readonly string[]).includes(v))) return;
    const near = typeof v === 'string' ? nearest(v, SERIES) : null;
    throw new ConfigError(
      { file, field: `${field}/series` },
      `unknown series ${shown(v)}${near ? ` (did you mean "${near}"?)` : ''}`,
      `one of ${SERIES.join(', ')}`,
    );
  };
  series(man.defaults, '/defaults');
  if (!Array.isArray(man.files)) return;
  man.files.forEach((f: unknown, i: number) => {
    const at = `/files/${i}`;
    checkObjectKeys(file, at, f, FILE_KEYS);
    const ff = f as Record<string, unknown>;
    if (ff.options !== undefined) {
      const binary =
        ff.format === 'binary' || (ff.format === undefined && typeof ff.path === 'string' && /\.json$/i.test(ff.path));
      if (binary)
        throw new ConfigError(
          { file, field: `${at}/options` },
          'reader options for a binary file (its sidecar describes it)',
          'no "options" for a binary file; put dtype, gain and the like in the sidecar',
        );
      // other formats (added later) check their own options
      const nwb = ff.format === 'nwb' || (ff.format === undefined && /\.nwb$/i.test(String(ff.path)));
      const delimited = !nwb && (ff.format === 'delimited' || ff.format === undefined);
      if (delimited) checkObjectKeys(file, `${at}/options`, ff.options, FILE_OPTION_KEYS);
    }
    series(ff.conditions, `${at}/conditions`);
    if (Array.isArray(ff.sweeps)) ff.sweeps.forEach((c, j) => series(c, `${at}/sweeps/${j}`));
  });
}

export const MANIFEST_SCHEMA_PATH = join(__dirname, '..', '..', 'schema', 'manifest.schema.json');

/**
 * The schema's validator, compiled ahead of time (./manifestValidator.ts, checked against the schema by
 * tests/io/manifestValidator.test.ts): no schema compiler runs when a manifest is read.
 */
const validator = validateManifestSchema as ((x: unknown) => boolean) & {
  errors?: { instancePath: string; message?: string; params?: unknown }[] | null;
};
function validate(m: unknown, file: string): asserts m is Manifest {
  checkManifestKeys(m, file);
  if (!validator(m)) {
    const e = validator.errors![0];
    const where = e.instancePath || '(root)';
    throw new InputError(
      { file, field: where },
      `does not match the manifest schema: ${where} ${e.message}${e.params ? ' ' + JSON.stringify(e.params) : ''}`,
      'a manifest as described by schema/manifest.schema.json',
    );
  }
  // JSON Schema accepts numbers that overflow to Infinity (1e400): conditions must be finite
  const check = (c: unknown, field: string) => {
    const problem = c === undefined ? null : conditionsProblem(c);
    if (problem) throw new InputError({ file, field }, problem, 'strings, finite numbers, booleans or null');
  };
  const man = m as Manifest;
  // a user column that looks like a known condition is most likely a typo whose value would be ignored
  const typos = (c: unknown, field: string) => {
    if (c === null || typeof c !== 'object') return;
    for (const [k, v] of Object.entries(c)) {
      const near = conditionKeyTypo(k);
      if (near)
        throw new ConfigError(
          { file, field: `${field}/${k}` },
          `unknown condition "${k}" (did you mean "${near}"?); it looks like the known condition "${near}", ` +
            'whose value fascicle would then not see',
          `"${near}", or another name for a column of your own`,
        );
      const unit = unitTypo(k, v);
      if (unit) throw new ConfigError({ file, field: `${field}/${k}` }, unitSlip(v, unit), `"${unit}"`);
    }
  };
  typos(man.defaults, '/defaults');
  man.files.forEach((f, i) => {
    typos(f.conditions, `/files/${i}/conditions`);
    f.sweeps?.forEach((c, j) => typos(c, `/files/${i}/sweeps/${j}`));
  });
  check(man.defaults, '/defaults');
  man.files.forEach((f, i) => {
    check(f.conditions, `/files/${i}/conditions`);
    f.sweeps?.forEach((c, j) => check(c, `/files/${i}/sweeps/${j}`));
  });
  if (man.blinding?.coded && blindingCodes(man).length === 0) {
    const cond = blindingCondition(man);
    throw new ConfigError(
      { file, field: man.blinding.condition === undefined ? '/blinding' : '/blinding/condition' },
      `says the values of "${cond}" are coded, but no file or sweep has a "${cond}" condition`,
      `the coded labels as the "${cond}" condition of the files (or sweeps), or "condition" naming the coded one`,
    );
  }
}

/** The coded condition of a manifest's blinding section (default 'group'). */
export function blindingCondition(m: Manifest): string {
  return m.blinding?.condition ?? 'group';
}

/** The codes a blinded manifest gives (values of the coded condition in defaults, files and sweeps), sorted. */
export function blindingCodes(m: Manifest): string[] {
  const cond = blindingCondition(m);
  const out = new Set<string>();
  const add = (c: Conditions | undefined) => {
    const v = c?.[cond];
    if (v !== undefined && v !== null) out.add(String(v));
  };
  add(m.defaults);
  for (const f of m.files) {
    add(f.conditions);
    f.sweeps?.forEach(add);
  }
  return [...out].sort();
}

/**
 * A blinding key: code -> real label of the coded condition. Files: CSV (a header `code,label`, or `code,<condition>`,
 * then one code and its label per line; comma, semicolon or tab; `#` comment lines) or JSON
 * (`{ "fascicleBlindingKey": 1, "condition": "group", "codes": { "K1": "control", ... } }`, condition optional).
 */
export interface BlindingKey {
  codes: Record<string, string>;
  /** the condition the key is for, when the file names it */
  condition?: string;
  /** the key file's path as given, and its SHA-256 (null for a key given as an object) */
  file: string | null;
  sha256: string | null;
}
const KEY_EXPECTED =
  'a blinding key: CSV with a header "code,label" and one code and label per line, or JSON ' +
  '{ "fascicleBlindingKey": 1, "codes": { "<code>": "<label>", ... } }';
const KEY_HEADER = /^\uFEFF?\s*"?code"?\s*([,;\t])\s*"?([^",;\t]+?)"?\s*$/i;

/** Whether a file's text is a blinding key (the CSV header or the JSON marker / codes object). */
export function looksLikeBlindingKey(text: string): boolean {
  const t = text.replace(/^\uFEFF/, '').trimStart();
  if (t.startsWith('{')) {
    try {
      const j = JSON.parse(t);
      return !!j && typeof j === 'object' && ('fascicleBlindingKey' in j || (j.codes && typeof j.codes === 'object'));
    } catch {
      return /"fascicleBlindingKey"/.test(t);
    }
  }
  const first = t.split(/\r?\n/).find((l) => l.trim() !== '' && !l.trimStart().startsWith('#'));
  return first !== undefined && KEY_HEADER.test(first);
}

/**
 * Parse a blinding key's text (format: BlindingKey). Codes and labels are trimmed; a repeated code, an empty code
 * or label, or a line without exactly two cells is an InputError naming the file and line.
 */
export function parseBlindingKey(text: string, file: string): BlindingKey {
  const sha256 = createHash('sha256').update(text, 'utf8').digest('hex');
  const t = text.replace(/^\uFEFF/, '');
  const codes: Record<string, string> = {};
  if (t.trimStart().startsWith('{')) {
    let j: unknown;
    try {
      j = JSON.parse(t);
    } catch (e) {
      throw jsonError(file, t, e, KEY_EXPECTED);
    }
    const o = j as Record<string, unknown>;
    if (!o || typeof o !== 'object' || Array.isArray(o) || !o.codes || typeof o.codes !== 'object')
      throw new InputError({ file, field: 'codes' }, 'has no "codes" object', KEY_EXPECTED);
    const extra = Object.keys(o).find((k) => !['fascicleBlindingKey', 'condition', 'codes'].includes(k));
    if (extra !== undefined) {
      const near = nearest(extra, ['fascicleBlindingKey', 'condition', 'codes']);
      throw new InputError(
        { file, field: extra },
        `unknown key "${extra}"${near ? ` (did you mean "${near}"?)` : ''}`,
        'fascicleBlindingKey, condition and codes',
      );
    }
    if (o.condition !== undefined && (typeof o.condition !== 'string' || !o.condition))
      throw new InputError({ file, field: 'condition' }, `is ${shown(o.condition)}`, 'the name of the coded condition');
    for (const [code, label] of Object.entries(o.codes as object)) {
      if (typeof label !== 'string' || !label.trim() || !code.trim())
        throw new InputError({ file, field: `codes/${code}` }, `is ${shown(label)}`, 'a non-empty label (a string)');
      codes[code.trim()] = label.trim();
    }
    return { codes, ...(o.condition ? { condition: o.condition as string } : {}), file, sha256 };
  }
  const lines = t.split(/\r?\n/);
  let header = -1,
    delim = ',',
    second = '';
  for (let i = 0; i < lines.length; i++) {
    const l = lines[i];
    if (l.trim() === '' || l.trimStart().startsWith('#')) continue;
    const m = KEY_HEADER.exec(l);
    if (!m) throw new InputError({ file, line: i + 1 }, `header ${shown(l.trim())}`, KEY_EXPECTED);
    header = i;
    delim = m[1];
    second = m[2].trim();
    break;
  }
  if (header < 0) throw new InputError({ file }, 'the file is empty', KEY_EXPECTED);
  const lineOf: Record<string, number> = {};
  for (let i = header + 1; i < lines.length; i++) {
    const l = lines[i];
    if (l.trim() === '' || l.trimStart().startsWith('#')) continue;
    const cells = l.split(delim).map((c) =>
      c
        .trim()
        .replace(/^"(.*)"$/, '$1')
        .trim(),
    );
    if (cells.length !== 2 || !cells[0] || !cells[1])
      throw new InputError(
        { file, line: i + 1 },
        `${shown(l.trim())} is not a code and a label`,
        `two non-empty cells separated by ${JSON.stringify(delim)}`,
      );
    if (cells[0] in lineOf)
      throw new InputError(
        { file, line: i + 1 },
        `code "${cells[0]}" is given again (first on line ${lineOf[cells[0]]})`,
        'each code once',
      );
    lineOf[cells[0]] = i + 1;
    codes[cells[0]] = cells[1];
  }
  if (!Object.keys(codes).length) throw new InputError({ file }, 'no codes after the header', KEY_EXPECTED);
  const condition = /^label$/i.test(second) ? undefined : second;
  return { codes, ...(condition ? { condition } : {}), file, sha256 };
}

/** Read a blinding key file (read-only; format: BlindingKey). @throws InputError naming the file and line. */
export function readBlindingKey(path: string): BlindingKey {
  const { bytes } = readInput(path);
  const key = parseBlindingKey(Buffer.from(bytes).toString('utf8'), path);
  return { ...key, sha256: createHash('sha256').update(bytes).digest('hex') };
}

/** Largest file looked at when searching a study folder for a blinding key (a key is a few lines). */
const KEY_SCAN_BYTES = 1 << 20;

/**
 * Blinding keys inside a study: files (.csv, .tsv, .txt, .json up to 1 MB) in the manifest's folder and in the
 * folders of its listed files that read as a key (looksLikeBlindingKey). The listed files themselves are not keys.
 */
export function blindingKeysInStudy(manifestPath: string, m: Manifest): string[] {
  const dir = dirname(resolve(manifestPath));
  const listed = new Set(m.files.map((f) => resolve(dir, f.path)));
  listed.add(resolve(manifestPath));
  const dirs = [...new Set([dir, ...[...listed].map((p) => dirname(p))])];
  const found: string[] = [];
  for (const d of dirs) {
    let names: string[];
    try {
      names = readdirSync(d);
    } catch {
      continue;
    }
    for (const n of names.sort()) {
      const p = join(d, n);
      if (!/\.(csv|tsv|txt|json)$/i.test(n) || listed.has(p)) continue;
      try {
        const st = statSync(p);
        if (!st.isFile() || st.size > KEY_SCAN_BYTES) continue;
        if (looksLikeBlindingKey(readFileSync(p, 'utf8'))) found.push(p);
      } catch {
        // unreadable: not a key we can see
      }
    }
  }
  return found;
}

/**
 * Manifests already parsed and checked, by resolved path and the SHA-256 of their bytes: a run reads its manifest
 * once per preparation, and the checks (keys, typos, schema) cost more than reading the bytes again. A changed file
 * has another hash and is checked anew; callers get their own copy.
 */
const checked = new Map<string, { sha256: string; manifest: Manifest }>();
const CHECKED_MAX = 16;

/** Parse and check a manifest without loading its files. */
export function readManifestJson(path: string): { manifest: Manifest; source: import('../sweeps/SweepSet').Source } {
  const { bytes, source } = readInput(path);
  const key = resolve(path);
  const sha = Object.getOwnPropertyDescriptor(source, 'sha256')?.value; // small files: hashed at read
  const hit = checked.get(key);
  if (typeof sha === 'string' && hit && hit.sha256 === sha) return { manifest: structuredClone(hit.manifest), source };
  let m: unknown;
  const text = Buffer.from(bytes)
    .toString('utf8')
    .replace(/^\uFEFF/, '');
  try {
    m = JSON.parse(text);
  } catch (e) {
    throw jsonError(path, text, e, 'a JSON manifest');
  }
  validate(m, path);
  if (typeof sha === 'string') {
    if (checked.size >= CHECKED_MAX) checked.delete(checked.keys().next().value as string);
    checked.set(key, { sha256: sha, manifest: structuredClone(m) });
  }
  return { manifest: m, source };
}

/** Format of a listed file, from its `format` or its extension. */
function formatOf(f: ManifestFile): 'delimited' | 'binary' | 'nwb' {
  if (f.format) return f.format;
  return /\.json$/i.test(f.path) ? 'binary' : /\.nwb$/i.test(f.path) ? 'nwb' : 'delimited';
}

/**
 * Load every file of a study manifest into one SweepSet. Each sweep's conditions are
 * the manifest defaults, then the file's conditions, then its per-sweep entry.
 * @throws InputError when a file is bad, sample rates or sweep lengths disagree, or a sweep lacks a required condition.
 */
export function readManifest(path: string, opts: { only?: (f: ManifestFile, i: number) => boolean } = {}): SweepSet {
  const { manifest, source } = readManifestJson(path);
  if (manifest.blinding?.coded) {
    const keys = blindingKeysInStudy(path, manifest);
    if (keys.length)
      throw new ConfigError(
        { file: path, field: '/blinding' },
        `the study is blinded ("coded": true) but a blinding key lies in the study folder: ` +
          `${relative(dirname(resolve(path)), keys[0]) || basename(keys[0])}`,
        'the key kept outside the study while it is analysed; apply it afterwards ' +
          '(fascicle unblind <bundle> --key <file>, or unblind(result, readBlindingKey(file)))',
      );
  }
  const dir = dirname(resolve(path));
  const required = manifest.required ?? ['preparation'];
  // the same file read the same way twice would count its sweeps twice (repeats that are not repeats)
  const seen = new Map<string, number>();
  manifest.files.forEach((f, fi) => {
    const id = JSON.stringify([resolve(dir, f.path), formatOf(f), f.options ?? null]);
    const before = seen.get(id);
    if (before !== undefined)
      throw new ConfigError(
        { file: path, field: `/files/${fi}/path` },
        `${f.path} is listed twice, as files ${before} and ${fi}, with the same reader options: ` +
          'its sweeps would be counted twice',
        'each file once (give its sweeps their conditions in one entry)',
      );
    seen.set(id, fi);
  });
  const sets: SweepSet[] = [];
  manifest.files.forEach((f, fi) => {
    if (opts.only && !opts.only(f, fi)) return;
    const full = isAbsolute(f.path) ? f.path : join(dir, f.path);
    checkListedPath(path, fi, f.path, full);
    const base = { ...(manifest.defaults ?? {}), ...(f.conditions ?? {}) };
    let set: SweepSet;
    try {
      const fmt = formatOf(f);
      // NWB entries need the HDF5 library loaded first (await nwbReady())
      set =
        fmt === 'binary'
          ? readBinary(full, { conditions: base })
          : fmt === 'nwb'
            ? readNwbSync(full, { ...((f.options ?? {}) as NwbReadOptions), conditions: base })
            : readDelimited(full, { ...(f.options ?? {}), conditions: base });
    } catch (e) {
      // a bad reader option written in the manifest is a fault of the manifest
      if (e instanceof OptionError)
        throw new ConfigError(
          { file: path, field: `/files/${fi}/options` },
          e.message,
          'reader options as in the README (delimiter, decimal, layout, timeUnit, units, stimulusAt)',
        );
      throw e;
    }
    if (f.sweeps) {
      if (f.sweeps.length !== set.nSweeps) {
        throw new InputError(
          { file: path, field: `/files/${fi}/sweeps` },
          `${f.sweeps.length} sweep entries for ${f.path}, which has ${set.nSweeps} sweeps`,
          'one conditions entry per sweep',
        );
      }
      set = set.create({ conditions: set.conditions.map((c, i) => ({ ...c, ...f.sweeps![i] })) });
    }
    // the file as the manifest names it (relative to the manifest), so tables do not
    // depend on the folder the study was copied to
    set = set.create({ conditions: set.conditions.map((c) => ({ ...c, file: f.path })) });
    set.conditions.forEach((c, i) => {
      for (const k of ['intensityUnit', 'concentrationUnit']) {
        const unit = unitTypo(k, c[k]);
        if (unit) throw new InputError({ file: f.path, sweep: i, field: k }, unitSlip(c[k], unit), `"${unit}"`);
      }
      for (const k of ['distanceMm', 'referenceDistanceMm']) {
        const d = c[k];
        if (typeof d !== 'number' || (d >= DISTANCE_RANGE_MM[0] && d <= DISTANCE_RANGE_MM[1])) continue;
        // the manifest field that gave the value, else the file itself (its sidecar or trials table)
        const field =
          f.sweeps?.[i]?.[k] !== undefined
            ? `/files/${fi}/sweeps/${i}/${k}`
            : f.conditions?.[k] !== undefined
              ? `/files/${fi}/conditions/${k}`
              : manifest.defaults?.[k] !== undefined
                ? `/defaults/${k}`
                : null;
        const problem =
          `${k} ${d} mm is implausible for a nerve (${DISTANCE_RANGE_MM[0]}-${DISTANCE_RANGE_MM[1]} mm)` +
          (field ? ` for sweep ${i} of ${f.path}` : '') +
          `; is it in another unit (${d < 1 ? 'm or cm' : 'µm'})?`;
        throw field
          ? new ConfigError({ file: path, field }, problem, 'the distance in mm')
          : new InputError({ file: f.path, sweep: i, field: k }, problem, 'the distance in mm');
      }
      for (const k of required) {
        if (!Object.hasOwn(c, k) || c[k] === null || c[k] === undefined) {
          const other = KNOWN_CONDITIONS.includes(k as never)
            ? ''
            : didYouMean(k, [...KNOWN_CONDITIONS, ...Object.keys(c)]);
          throw new InputError(
            { file: f.path, sweep: i },
            `condition "${k}" is missing${other}`,
            `every sweep to have "${k}" (listed in the manifest's required conditions)`,
          );
        }
      }
    });
    const first = sets[0];
    if (first) {
      if (Math.abs(set.fs - first.fs) > 1e-6 * first.fs) {
        throw new InputError(
          { file: f.path },
          `sample rate ${set.fs} Hz differs from ${first.fs} Hz in ${String(first.conditions[0].file)}`,
          'one sample rate for all files of a study (resample first)',
        );
      }
      if (set.nSamples !== first.nSamples || Math.abs(set.t0Ms - first.t0Ms) > (0.5 / first.fs) * 1000) {
        throw new InputError(
          { file: f.path },
          `sweeps of ${set.nSamples} samples from ${set.t0Ms} ms differ from ${first.nSamples} samples from ${first.t0Ms} ms in ${String(first.conditions[0].file)}`,
          'equal sweep length and start time for all files (crop first)',
        );
      }
      if (set.units !== first.units) set = set.toUnits(first.units);
      if (set.fs !== first.fs || set.t0Ms !== first.t0Ms) set = set.create({ fs: first.fs, t0Ms: first.t0Ms });
    }
    sets.push(set);
  });
  if (sets.length === 0) throw new InputError({ file: path }, 'no files selected', 'at least one file');
  const all = SweepSet.concat(sets);
  const blinded = manifest.blinding?.coded
    ? [
        {
          verb: 'blinding',
          options: { state: 'blinded', condition: blindingCondition(manifest), codes: blindingCodes(manifest) },
          version: VERSION,
        },
      ]
    : [];
  return all.create({
    sources: [source, ...all.sources],
    history: [
      { verb: 'readManifest', options: { path, study: manifest.study ?? null, files: sets.length }, version: VERSION },
      ...blinded,
    ],
    extras: { manifest },
  });
}

/**
 * A listed file that is missing or is a folder, named by the manifest field, with the nearest file name in its
 * folder for a typo. Other problems (no permission, a FIFO) are left to the reader, which names them.
 */
function checkListedPath(manifestPath: string, fi: number, listed: string, full: string): void {
  let st: ReturnType<typeof statSync>;
  try {
    st = statSync(full, { throwIfNoEntry: false });
  } catch {
    return; // no permission to look: the reader names the problem
  }
  const place = { file: manifestPath, field: `/files/${fi}/path` };
  if (st?.isDirectory())
    throw new InputError(place, `${listed} is a folder`, "a recording file (a folder's files are listed one by one)");
  if (st) return;
  let names: string[] = [];
  try {
    names = readdirSync(dirname(full)).filter((n) => !n.startsWith('.'));
  } catch {
    // the folder itself is missing: no name to suggest
  }
  const near = nearest(basename(full), names);
  const hint = near ? ` (did you mean "${join(dirname(listed), near).replace(/^\.\//, '')}"?)` : '';
  throw new InputError(
    place,
    `${listed}: cannot open file (ENOENT)${hint}`,
    "an existing file (a path relative to the manifest's folder)",
  );
}

/**
 * A JSON syntax error as an InputError naming the line and column (JSON.parse gives only a character position):
 * "line 3, column 20: invalid JSON (Expected double-quoted property name) at: {"path": "a.csv",}"; an empty file
 * says so.
 */
export function jsonError(file: string, text: string, e: unknown, expected: string): InputError {
  if (!text.trim()) return new InputError({ file }, 'the file is empty', expected);
  const msg = (e as Error).message;
  const at = /at position (\d+)/.exec(msg);
  if (!at) return new InputError({ file }, `invalid JSON (${msg})`, expected);
  const pos = Number(at[1]);
  const before = text.slice(0, pos);
  const line = before.split('\n').length;
  const column = pos - before.lastIndexOf('\n');
  const shownLine = text.split('\n')[line - 1].trim().slice(0, 80);
  return new InputError(
    { file, line, column },
    `invalid JSON (${msg.replace(/ in JSON at position \d+.*$/, '')}) at: ${shownLine}`,
    expected,
  );
}
