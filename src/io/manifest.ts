/**
 * Study manifest loader: one JSON file lists the recording files of a study and
 * joins each file (and optionally each sweep) with its conditions, so a whole
 * study loads in one call and every sweep knows its conditions. The JSON Schema
 * ships in the package as schema/manifest.schema.json.
 */
import { dirname, join, resolve, isAbsolute } from 'node:path';
import { InputError, OptionError } from '../errors';
import { SweepSet, type Conditions } from '../sweeps/SweepSet';
import { readInput } from './files';
import { conditionsProblem } from '../validate';
import { readDelimited, type DelimitedOptions } from './delimited';
import { readBinary } from './binary';
import { VERSION } from '../version';

export interface ManifestFile {
  path: string;
  format?: 'delimited' | 'binary';
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
  analysis?: Record<string, unknown>;
  files: ManifestFile[];
}

export const MANIFEST_SCHEMA_PATH = join(__dirname, '..', '..', 'schema', 'manifest.schema.json');

let validator: ((x: unknown) => boolean) & { errors?: { instancePath: string; message?: string; params?: unknown }[] | null };
function validate(m: unknown, file: string): asserts m is Manifest {
  if (!validator) {
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    const Ajv = require('ajv').default ?? require('ajv');
    const ajv = new Ajv({ allErrors: false, strict: false });
    const { bytes } = readInput(MANIFEST_SCHEMA_PATH);
    validator = ajv.compile(JSON.parse(Buffer.from(bytes).toString('utf8')));
  }
  if (!validator(m)) {
    const e = validator.errors![0];
    const where = e.instancePath || '(root)';
    throw new InputError({ file, field: where }, `does not match the manifest schema: ${where} ${e.message}${e.params ? ' ' + JSON.stringify(e.params) : ''}`, 'a manifest as described by schema/manifest.schema.json');
  }
  // JSON Schema accepts numbers that overflow to Infinity (1e400): conditions must be finite
  const check = (c: unknown, field: string) => {
    const problem = c === undefined ? null : conditionsProblem(c);
    if (problem) throw new InputError({ file, field }, problem, 'strings, finite numbers, booleans or null');
  };
  const man = m as Manifest;
  check(man.defaults, '/defaults');
  man.files.forEach((f, i) => {
    check(f.conditions, `/files/${i}/conditions`);
    f.sweeps?.forEach((c, j) => check(c, `/files/${i}/sweeps/${j}`));
  });
}

/** Parse and check a manifest without loading its files. */
export function readManifestJson(path: string): { manifest: Manifest; source: import('../sweeps/SweepSet').Source } {
  const { bytes, source } = readInput(path);
  let m: unknown;
  try {
    m = JSON.parse(Buffer.from(bytes).toString('utf8').replace(/^\uFEFF/, ''));
  } catch (e) {
    throw new InputError({ file: path }, `invalid JSON (${(e as Error).message})`, 'a JSON manifest');
  }
  validate(m, path);
  return { manifest: m, source };
}

/** Format of a listed file, from its `format` or its extension. */
function formatOf(f: ManifestFile): 'delimited' | 'binary' {
  if (f.format) return f.format;
  return /\.json$/i.test(f.path) ? 'binary' : 'delimited';
}

/**
 * Load every file of a study manifest into one SweepSet. Each sweep's conditions are
 * the manifest defaults, then the file's conditions, then its per-sweep entry.
 * @throws InputError when a file is bad, sample rates or sweep lengths disagree, or a sweep lacks a required condition.
 */
export function readManifest(path: string, opts: { only?: (f: ManifestFile, i: number) => boolean } = {}): SweepSet {
  const { manifest, source } = readManifestJson(path);
  const dir = dirname(resolve(path));
  const required = manifest.required ?? ['preparation'];
  const sets: SweepSet[] = [];
  manifest.files.forEach((f, fi) => {
    if (opts.only && !opts.only(f, fi)) return;
    const full = isAbsolute(f.path) ? f.path : join(dir, f.path);
    const base = { ...(manifest.defaults ?? {}), ...(f.conditions ?? {}) };
    let set: SweepSet;
    try {
      set = formatOf(f) === 'binary' ? readBinary(full, { conditions: base }) : readDelimited(full, { ...(f.options ?? {}), conditions: base });
    } catch (e) {
      // a bad reader option written in the manifest is a fault of the manifest
      if (e instanceof OptionError) throw new InputError({ file: path, field: `/files/${fi}/options` }, e.message, 'reader options as in the README (delimiter, decimal, layout, timeUnit, units, stimulusAt)');
      throw e;
    }
    if (f.sweeps) {
      if (f.sweeps.length !== set.nSweeps) {
        throw new InputError({ file: path, field: `/files/${fi}/sweeps` }, `${f.sweeps.length} sweep entries for ${f.path}, which has ${set.nSweeps} sweeps`, 'one conditions entry per sweep');
      }
      set = set.create({ conditions: set.conditions.map((c, i) => ({ ...c, ...f.sweeps![i] })) });
    }
    // the file as the manifest names it (relative to the manifest), so tables do not
    // depend on the folder the study was copied to
    set = set.create({ conditions: set.conditions.map((c) => ({ ...c, file: f.path })) });
    set.conditions.forEach((c, i) => {
      for (const k of required) {
        if (!(k in c) || c[k] === null || c[k] === undefined) {
          throw new InputError({ file: f.path, sweep: i }, `condition "${k}" is missing`, `every sweep to have "${k}" (listed in the manifest's required conditions)`);
        }
      }
    });
    const first = sets[0];
    if (first) {
      if (Math.abs(set.fs - first.fs) > 1e-6 * first.fs) {
        throw new InputError({ file: f.path }, `sample rate ${set.fs} Hz differs from ${first.fs} Hz in ${String(first.conditions[0].file)}`, 'one sample rate for all files of a study (resample first)');
      }
      if (set.nSamples !== first.nSamples || Math.abs(set.t0Ms - first.t0Ms) > 0.5 / first.fs * 1000) {
        throw new InputError({ file: f.path }, `sweeps of ${set.nSamples} samples from ${set.t0Ms} ms differ from ${first.nSamples} samples from ${first.t0Ms} ms in ${String(first.conditions[0].file)}`, 'equal sweep length and start time for all files (crop first)');
      }
      if (set.units !== first.units) set = set.toUnits(first.units);
      if (set.fs !== first.fs || set.t0Ms !== first.t0Ms) set = set.create({ fs: first.fs, t0Ms: first.t0Ms });
    }
    sets.push(set);
  });
  if (sets.length === 0) throw new InputError({ file: path }, 'no files selected', 'at least one file');
  const all = SweepSet.concat(sets);
  return all.create({
    sources: [source, ...all.sources],
    history: [{ verb: 'readManifest', options: { path, study: manifest.study ?? null, files: sets.length }, version: VERSION }],
    extras: { manifest },
  });
}
