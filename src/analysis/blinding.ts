/**
 * Blinding: the group labels of a study are codes while it is analysed, and the key that maps each code to its real
 * label is applied only afterwards (ARRIVE 2.0 essential item 5, "Blinding": who was aware of the group allocation
 * at each stage, including the analysis; Percie du Sert et al. 2020, PLoS Biol 18:e3000410).
 *
 * While blinded, the codes simply are the labels: a manifest with `"blinding": { "coded": true }` (io/manifest.ts)
 * loads as any other, every table, test and figure shows the codes, and its history carries a 'blinding' step
 * (state 'blinded', the coded condition and its codes), so the bundle's provenance says the run was blinded.
 * `unblind(x, key)` returns a new object with the real labels: a SweepSet (its conditions), rows, a group comparison
 * or mixed model (recomputed from their rows with the real labels, so level order and comparisons are those of a run
 * with the real labels), a pipeline result (runPipeline) or a combined study (combineStudy), or per-preparation
 * outputs (runPreparation, to be combined afterwards). The input is never changed. The result's history gains an
 * 'unblind' step: when the key was applied (ISO 8601, UTC), the key file's name and SHA-256, the condition and the
 * mapping.
 *
 * The key must fit the study exactly: a code in the key that the study does not use, a code of the study that the
 * key lacks, and two codes with the same real label are InputErrors naming the code (a mismatched key is the wrong
 * key, never partly applied).
 */
import { SweepSet, type ConditionValue, type Step } from '../sweeps/SweepSet';
import { InputError } from '../errors';
import { readBlindingKey, type BlindingKey } from '../io/manifest';
import { GroupComparison, compareGroups, groupFlags } from './groups';
import { MixedModelResult, mixedModel } from './mixed';
import { VERSION } from '../version';
import type { Study } from '../report/study';
import type { StudyResult, Flag } from '../report/pipeline';

export { readBlindingKey, parseBlindingKey, looksLikeBlindingKey, blindingKeysInStudy } from '../io/manifest';
export type { BlindingKey } from '../io/manifest';

type Row = Record<string, ConditionValue>;

/** A key: as read by readBlindingKey, a path to a key file, or a plain object code -> label. */
export type KeyInput = BlindingKey | string | Readonly<Record<string, string>>;

export interface UnblindOptions {
  /** the coded condition (default: the key's, else the 'blinding' step's, else 'group') */
  condition?: string;
  /** when the key was applied, ISO 8601 (default: now) */
  appliedAt?: string;
}

export const blindingDefaults = { condition: 'group' };

/** A key as a BlindingKey (a path is read; a plain object becomes codes without a file). */
export function toBlindingKey(k: KeyInput): BlindingKey {
  if (typeof k === 'string') return readBlindingKey(k);
  if (k && typeof k === 'object' && 'codes' in k && typeof (k as BlindingKey).codes === 'object')
    return k as BlindingKey;
  const codes: Record<string, string> = {};
  for (const [c, l] of Object.entries(k as Record<string, unknown>)) {
    if (typeof l !== 'string' || !l.trim())
      throw new InputError({ file: '(key)', field: c }, `label ${JSON.stringify(l)}`, 'a non-empty label (a string)');
    codes[c] = l;
  }
  return { codes, file: null, sha256: null };
}

/** The 'blinding' step of a history (the last one), if any. */
export function blindingStep(history: readonly Step[] | undefined): Step | null {
  if (!Array.isArray(history)) return null;
  for (let i = history.length - 1; i >= 0; i--) if (history[i]?.verb === 'blinding') return history[i];
  return null;
}

/**
 * Check a key against the codes a study uses and return the mapping code -> label.
 * @throws InputError naming the code: a key code the study does not use, a study code without a label, or two codes
 * with the same label.
 */
export function checkBlindingKey(key: BlindingKey, codes: readonly string[], condition: string): Map<string, string> {
  const file = key.file ?? '(key)';
  const used = new Set(codes);
  const known = [...used].sort().join(', ') || 'none';
  for (const c of Object.keys(key.codes)) {
    if (!used.has(c))
      throw new InputError(
        { file, field: `codes/${c}` },
        `code "${c}" is not a code of this study (its "${condition}" codes: ${known})`,
        'a key with exactly the codes of this study (is it the key of another study?)',
      );
  }
  for (const c of [...used].sort()) {
    if (!Object.hasOwn(key.codes, c))
      throw new InputError(
        { file },
        `has no label for code "${c}", which the study uses as a "${condition}"`,
        `a label for every code (${known})`,
      );
  }
  const byLabel = new Map<string, string>();
  for (const [c, l] of Object.entries(key.codes)) {
    const other = byLabel.get(l);
    if (other !== undefined)
      throw new InputError(
        { file, field: `codes/${c}` },
        `codes "${other}" and "${c}" both have the label "${l}"`,
        'a different real label for each code',
      );
    byLabel.set(l, c);
  }
  return new Map(Object.entries(key.codes));
}

/** The reference of the blinding sentences. */
export const BLINDING_REFERENCE =
  'Percie du Sert N, Hurst V, Ahluwalia A, et al. (2020) The ARRIVE guidelines 2.0: updated guidelines for ' +
  'reporting animal research. PLoS Biol 18:e3000410.';

/**
 * The methods sentence of a 'blinding' or 'unblind' history step (null for other steps). Neither names the time or
 * the key (they are in the provenance), so a rerun gives the same text.
 */
export function blindingSentence(step: Step): { text: string; refs: readonly string[] } | null {
  const o = step.options as Record<string, unknown>;
  const cond = String(o.condition ?? blindingDefaults.condition);
  if (step.verb === 'blinding') {
    const n = Array.isArray(o.codes) ? o.codes.length : 0;
    return {
      text:
        `The analysis was blinded (ARRIVE 2.0 item 5; Percie du Sert et al. 2020): the ${cond} of every sweep was ` +
        `given as one of ${n} codes and analysed as such, with the key kept outside the study.`,
      refs: [BLINDING_REFERENCE],
    };
  }
  if (step.verb === 'unblind')
    return {
      text:
        'The blinding key was applied after the analysis (when, the key file and its SHA-256 are in the ' +
        `provenance), and the results were recomputed with the real ${cond} labels.`,
      refs: [BLINDING_REFERENCE],
    };
  return null;
}

/** The history step of an unblinding. */
export function unblindStep(key: BlindingKey, condition: string, map: Map<string, string>, appliedAt?: string): Step {
  const name = key.file === null ? null : (key.file.split(/[\\/]/).pop() ?? key.file);
  return {
    verb: 'unblind',
    options: {
      condition,
      appliedAt: appliedAt ?? new Date().toISOString(),
      keyFile: name,
      keySha256: key.sha256,
      codes: map.size,
      mapping: Object.fromEntries(map),
    },
    version: VERSION,
  };
}

const isPlain = (x: object) => {
  const p = Object.getPrototypeOf(x);
  return p === Object.prototype || p === null;
};

/** Real labels everywhere a row (plain object) has the coded condition; class instances copied with their prototype. */
function relabeler(condition: string, map: Map<string, string>) {
  const seen = new WeakMap<object, unknown>();
  const value = (v: unknown) =>
    (typeof v === 'string' || typeof v === 'number') && map.has(String(v)) ? map.get(String(v))! : v;
  // condition labels written as text ("preparation=N1, group=K1, series=distance", as QC and velocity rows give them)
  const esc = (t: string) => t.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
  const inText = new RegExp(`(^|, )${esc(condition)}=([^,]*)(?=,|$)`, 'g');
  const text = (t: string) =>
    t.includes(`${condition}=`)
      ? t.replace(inText, (all, pre, v) => (map.has(v) ? `${pre}${condition}=${map.get(v)}` : all))
      : t;
  const deep = (x: unknown): unknown => {
    if (typeof x === 'string') return text(x);
    if (x === null || typeof x !== 'object') return x;
    if (ArrayBuffer.isView(x) || x instanceof Map || x instanceof Set || x instanceof Date) return x;
    const hit = seen.get(x);
    if (hit !== undefined) return hit;
    if (x instanceof SweepSet) {
      const out = x.create({ conditions: x.conditions.map((c) => deep(c) as Record<string, ConditionValue>) });
      seen.set(x, out);
      return out;
    }
    if (Array.isArray(x)) {
      const out: unknown[] = [];
      seen.set(x, out);
      for (const v of x) out.push(deep(v));
      return out;
    }
    const out = isPlain(x) ? {} : Object.create(Object.getPrototypeOf(x));
    seen.set(x, out);
    for (const [k, v] of Object.entries(x)) out[k] = k === condition ? value(v) : deep(v);
    return out;
  };
  return deep;
}

/** JSON-safe rows, as the study's tables hold them (non-finite numbers as the bundle writes them). */
const strip = (r: object): Row =>
  JSON.parse(
    JSON.stringify(r, (_k, v) =>
      typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? null : v > 0 ? 'Infinity' : '-Infinity') : v,
    ),
  );

/** Values of the coded condition in rows. */
const valuesIn = (rows: readonly object[], condition: string): string[] => {
  const out = new Set<string>();
  for (const r of rows) {
    const v = (r as Row)[condition];
    if (v !== undefined && v !== null) out.add(String(v));
  }
  return [...out];
};

export type Unblindable =
  | SweepSet
  | GroupComparison
  | MixedModelResult
  | StudyResult
  | Study
  | readonly object[]
  | { readonly history: readonly Step[] };

const isStudyResult = (x: object): x is StudyResult =>
  'conditioned' in x && (x as StudyResult).conditioned instanceof SweepSet && 'components' in x;
const isStudy = (x: object): x is Study => 'tables' in x && 'computed' in x && 'units' in x && !isStudyResult(x);

/** The history an object carries (a study's, a result's, or the first per-preparation output's). */
function historyOf(x: object): readonly Step[] | undefined {
  if (Array.isArray(x)) return (x[0] as { history?: Step[] } | undefined)?.history;
  return (x as { history?: readonly Step[] }).history;
}

/** The codes an object uses: its 'blinding' step's when it has one, else the coded condition's values in it. */
function codesOf(x: object, condition: string): string[] {
  const b = blindingStep(historyOf(x));
  if (b && b.options.condition === condition && Array.isArray(b.options.codes)) return b.options.codes as string[];
  if (x instanceof SweepSet) return valuesIn(x.conditions, condition);
  if (x instanceof GroupComparison || x instanceof MixedModelResult) return valuesIn(x.input ?? [], condition);
  if (isStudyResult(x)) return valuesIn(x.conditioned.conditions, condition);
  if (isStudy(x)) return valuesIn(x.tables.components, condition);
  if (Array.isArray(x)) {
    const outs = x as { components?: Row[] }[];
    if (outs.every((o) => o && Array.isArray(o.components)))
      return valuesIn(
        outs.flatMap((o) => o.components!),
        condition,
      );
    return valuesIn(x as object[], condition);
  }
  throw new InputError(
    { field: 'unblind' },
    'cannot tell which codes this object uses (no blinding step in its history, no rows)',
    'a SweepSet, rows, a group comparison, a mixed model, a pipeline result or a study',
  );
}

/**
 * Replace coded labels by the real ones (module comment). Returns a new object of the same kind; `x` is unchanged.
 * @throws InputError naming the code when the key does not fit the study.
 * @example unblind(result, readBlindingKey('../key.csv')).groups // the group comparison with the real labels
 */
export function unblind<T extends Unblindable>(x: T, keyInput: KeyInput, options: UnblindOptions = {}): T {
  const key = toBlindingKey(keyInput);
  const b = blindingStep(historyOf(x as object));
  const condition =
    options.condition ??
    key.condition ??
    (b && typeof b.options.condition === 'string' ? b.options.condition : blindingDefaults.condition);
  if (key.condition !== undefined && options.condition !== undefined && key.condition !== options.condition)
    throw new InputError(
      { file: key.file ?? '(key)' },
      `the key is for the condition "${key.condition}", not "${options.condition}"`,
      'the key of the coded condition',
    );
  const map = checkBlindingKey(key, codesOf(x as object, condition), condition);
  const step = unblindStep(key, condition, map, options.appliedAt);
  return applyKey(x, condition, map, step) as T;
}

/**
 * Per-preparation outputs (runPreparation) with the real labels, and the 'unblind' step, which is not added to their
 * histories: combine them (combineStudy) and append the step to the study's history, so that it comes last.
 * @throws InputError naming the code when the key does not fit the codes of the outputs' 'blinding' step (or, without
 * one, of their component rows).
 */
export function unblindOutputs<T extends { history: readonly Step[]; components: readonly object[] }>(
  outputs: readonly T[],
  keyInput: KeyInput,
  options: UnblindOptions = {},
): { outputs: T[]; step: Step; mapping: Map<string, string> } {
  const key = toBlindingKey(keyInput);
  const b = blindingStep(outputs[0]?.history);
  const condition =
    options.condition ??
    key.condition ??
    (b && typeof b.options.condition === 'string' ? b.options.condition : blindingDefaults.condition);
  const map = checkBlindingKey(key, codesOf(outputs as unknown as object[], condition), condition);
  const step = unblindStep(key, condition, map, options.appliedAt);
  return { outputs: relabeler(condition, map)(outputs) as T[], step, mapping: map };
}

/** Pipeline options with coded levels replaced (a mixed model's `levels` of the coded condition). */
export function unblindPipelineOptions<T extends { mixed?: { levels?: Record<string, ConditionValue[]> } }>(
  o: T,
  condition: string,
  map: Map<string, string>,
): T {
  const lv = o.mixed?.levels?.[condition];
  if (!lv) return o;
  const mapped = lv.map((q) => (map.has(String(q)) ? map.get(String(q))! : q));
  return { ...o, mixed: { ...o.mixed, levels: { ...o.mixed!.levels, [condition]: mapped } } };
}

/** Levels of `condition` given as codes, replaced by their real labels (other factors' levels kept). */
function realLevels<V>(levels: Record<string, V[]>, condition: string, map: Map<string, string>) {
  return Object.fromEntries(
    Object.entries(levels).map(([f, v]) => [
      f,
      f === condition ? v.map((q) => (map.has(String(q)) ? map.get(String(q))! : q)) : v,
    ]),
  );
}

/** The mixed model's options with coded levels replaced. */
function mixedOptions(m: MixedModelResult, condition: string, map: Map<string, string>) {
  const { value, fixed, random, interaction, by, levels } = m.options;
  return { value, fixed, random, interaction, by, ...(levels ? { levels: realLevels(levels, condition, map) } : {}) };
}

function regroup(g: GroupComparison, deep: (x: unknown) => unknown, step: Step, c: string, map: Map<string, string>) {
  if (!g.input) return deep(g) as GroupComparison; // made without its rows: labels replaced in place
  const o = g.options;
  // a comparison ordered by coded levels keeps that order under the real labels
  const given = Object.keys(o.levels ?? {}).length > 0;
  const opts = {
    value: o.value,
    ...(o.group ? { group: o.group } : {}),
    animal: o.animal,
    ...(o.condition ? { condition: o.condition } : {}),
    by: [...o.by],
    unit: o.unit,
    ...(given ? { levels: realLevels(o.levels, c, map) } : {}),
  };
  return compareGroups(deep(g.input) as Row[], opts, [...g.history.slice(0, -1), step], g.sources);
}

function refit(m: MixedModelResult, deep: (x: unknown) => unknown, step: Step, c: string, map: Map<string, string>) {
  if (!m.input) return deep(m) as MixedModelResult;
  return mixedModel(deep(m.input) as Row[], mixedOptions(m, c, map), [...m.history.slice(0, -1), step], m.sources);
}

function applyKey(x: Unblindable, condition: string, map: Map<string, string>, step: Step): unknown {
  const deep = relabeler(condition, map);
  if (x instanceof SweepSet) {
    const s = deep(x) as SweepSet;
    return s.create({ history: [...x.history, step] });
  }
  if (x instanceof GroupComparison) return regroup(x, deep, step, condition, map);
  if (x instanceof MixedModelResult) return refit(x, deep, step, condition, map);
  if (Array.isArray(x)) {
    const out = deep(x) as object[];
    // per-preparation outputs: each history gains the step
    return out.map((o) =>
      o && Array.isArray((o as { history?: unknown }).history)
        ? { ...o, history: [...(o as { history: Step[] }).history, step] }
        : o,
    );
  }
  if (isStudyResult(x)) {
    const groups = x.groups ? regroup(x.groups, deep, step, condition, map) : null;
    const mixed = x.mixed ? refit(x.mixed, deep, step, condition, map) : null;
    const rest = deep({ ...x, groups: null, mixed: null }) as StudyResult;
    const flags = (rest.flags as Flag[]).filter((f) => f.analysis !== 'groups' && f.analysis !== 'mixed');
    if (groups) flags.push(...groupFlags('groups', groups.tests, groups.options.by));
    if (mixed) flags.push(...groupFlags('mixed', mixed.variance, mixed.options.by));
    return { ...rest, groups, mixed, flags, history: [...x.history, step] };
  }
  if (isStudy(x)) {
    const groups = x.groups ? regroup(x.groups, deep, step, condition, map) : null;
    const mixed = x.mixed ? refit(x.mixed, deep, step, condition, map) : null;
    const rest = deep({ ...x, groups: null, mixed: null }) as Study;
    const tables = { ...rest.tables } as Record<string, Row[]>;
    for (const r of [groups, mixed])
      if (r) for (const [k, rows] of Object.entries(r.tables())) tables[k] = (rows as object[]).map(strip);
    const flags = (tables.flags ?? []).filter((f) => f.analysis !== 'groups' && f.analysis !== 'mixed');
    if (groups) flags.push(...groupFlags('groups', groups.tests, groups.options.by).map(strip));
    if (mixed) flags.push(...groupFlags('mixed', mixed.variance, mixed.options.by).map(strip));
    tables.flags = flags;
    const history = x.history.map((h) =>
      h.verb === 'compareGroups' && groups
        ? groups.history[groups.history.length - 1]
        : h.verb === 'mixedModel' && mixed
          ? mixed.history[mixed.history.length - 1]
          : h,
    );
    return {
      ...rest,
      tables: tables as unknown as Study['tables'],
      groups: groups ?? (x.groups === undefined ? undefined : null),
      mixed: mixed ?? (x.mixed === undefined ? undefined : null),
      history: [...history, step],
    };
  }
  // any other result: labels replaced in its rows, the step appended to its history
  const out = deep(x) as { history?: readonly Step[] };
  if (Array.isArray(out.history)) (out as { history: Step[] }).history = [...(x as { history: Step[] }).history, step];
  return out;
}
