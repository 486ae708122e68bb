// Drift between the manifest reader (src/io/manifest.ts) and what it configures: every key the
// standard pipeline takes (PIPELINE_OPTION_KEYS, the PipelineOptions interface and the option
// interface of each step it names), every key a verb accepts at run time, every key of each
// step's exported defaults object, the series names the pipeline looks for, and the JSON Schema.
// The references are the other modules' own source and behaviour, read here; nothing is copied.
import { describe, it, expect, afterAll } from 'vitest';
import { readFileSync, writeFileSync, mkdtempSync, rmSync, existsSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve, dirname } from 'node:path';
import {
  ANALYSIS_KEYS,
  ANALYSIS_VALUES,
  REJECT_FLAGS,
  MANIFEST_KEYS,
  FILE_KEYS,
  SERIES,
  readManifest,
  readManifestJson,
} from '../../src/io/manifest';
import { ConfigError } from '../../src/errors';
import { PIPELINE_OPTION_KEYS } from '../../src/report/pipeline';
import { SweepSet } from '../../src';
import { sweepQc, QC_FLAGS } from '../../src/analysis/sweepQc';
import { pairedPulse } from '../../src/analysis/pairedPulse';
import { trains } from '../../src/analysis/trains';
import { velocityDistribution } from '../../src/analysis/velocityDistribution';

const root = join(__dirname, '..', '..');
const pipelinePath = join(root, 'src', 'report', 'pipeline.ts');

/**
 * The body of the object type whose '{' is at `open`, comments removed: a small scanner that knows
 * comments, quoted strings and template literals (enough for type declarations, which hold no regexes).
 */
function typeBody(src: string, open: number): string {
  let depth = 0,
    out = '';
  for (let i = open; i < src.length; i++) {
    const ch = src[i];
    if (ch === '/' && src[i + 1] === '*') {
      i = src.indexOf('*/', i + 2) + 1;
      continue;
    }
    if (ch === '/' && src[i + 1] === '/') {
      i = src.indexOf('\n', i);
      out += '\n';
      continue;
    }
    if (ch === "'" || ch === '"' || ch === '`') {
      let j = i + 1;
      while (j < src.length && src[j] !== ch) j += src[j] === '\\' ? 2 : 1;
      out += src.slice(i, j + 1);
      i = j;
      continue;
    }
    if (ch === '{') depth++;
    else if (ch === '}' && --depth === 0) return out.slice(1);
    out += ch;
  }
  throw new Error(`unbalanced braces from ${open}`);
}

/** The text between the braces that open at index `open` of a comment-free type text. */
function braced(src: string, open: number): string {
  return typeBody(src, open);
}

/** Member name -> type text of an object type body (top level only). */
function members(body: string): Map<string, string> {
  const out = new Map<string, string>();
  let depth = 0,
    start = 0;
  const parts: string[] = [];
  for (let i = 0; i < body.length; i++) {
    const ch = body[i];
    if ('{[(<'.includes(ch)) depth++;
    else if ('}])>'.includes(ch) && body[i - 1] !== '=') depth--;
    else if (ch === ';' && depth === 0) {
      parts.push(body.slice(start, i));
      start = i + 1;
    }
  }
  parts.push(body.slice(start));
  for (const p of parts) {
    const m = /^\s*(?:readonly\s+)?([A-Za-z_$][\w$]*)\??\s*:\s*([\s\S]*)$/.exec(p);
    if (m) out.set(m[1], m[2].trim());
  }
  return out;
}

/** The members of `export interface name` in a source file (own members; an `extends` clause fails the test). */
function interfaceMembers(path: string, name: string): Map<string, string> {
  const src = readFileSync(path, 'utf8');
  const m = new RegExp(`export interface ${name}\\b([^{]*)\\{`).exec(src);
  if (!m) throw new Error(`interface ${name} not found in ${path}`);
  expect(m[1].trim(), `${name} extends another interface: read its members too`).toBe('');
  return members(typeBody(src, m.index + m[0].length - 1));
}

/** Where pipeline.ts imports each type name from (absolute .ts paths). */
function importsOf(path: string): Map<string, string> {
  const out = new Map<string, string>();
  for (const m of readFileSync(path, 'utf8').matchAll(/import\s+(?:type\s+)?\{([^}]*)\}\s+from\s+'([^']+)'/g)) {
    for (const n of m[1].split(',')) {
      const name = n
        .trim()
        .replace(/^type\s+/, '')
        .split(/\s+as\s+/)
        .pop()!
        .trim();
      if (name) out.set(name, resolve(dirname(path), m[2]) + '.ts');
    }
  }
  return out;
}

const pipelineMembers = interfaceMembers(pipelinePath, 'PipelineOptions');
const imports = importsOf(pipelinePath);

/** Split a type at top-level occurrences of a separator (| or &). */
function splitTop(type: string, sep: string): string[] {
  const out: string[] = [];
  let depth = 0,
    start = 0;
  for (let i = 0; i < type.length; i++) {
    const ch = type[i];
    if ('{[(<'.includes(ch)) depth++;
    else if ('}])>'.includes(ch) && type[i - 1] !== '=') depth--;
    else if (ch === sep && depth === 0) {
      out.push(type.slice(start, i).trim());
      start = i + 1;
    }
  }
  out.push(type.slice(start).trim());
  return out.filter((x) => x !== '');
}

interface StepType {
  /** option keys of the object form, or 'boolean' when the step is only a boolean */
  keys: string[] | 'boolean';
  /** the step may also be `false` / `true` and `false` */
  allowsFalse: boolean;
  allowsBoolean: boolean;
  /** keys the pipeline leaves out of the named interface (Omit<...>) */
  omitted: string[];
  /** the module and name of the options interface (for its defaults object) */
  module: string | null;
  typeName: string | null;
}

/** Each pipeline step's type, read from PipelineOptions: unions, arrays, Omit<...> and & { ... } are understood. */
function stepKeys(step: string): StepType {
  const alts = splitTop(pipelineMembers.get(step)!, '|');
  const r: StepType = {
    keys: [],
    allowsFalse: alts.includes('false'),
    allowsBoolean: alts.includes('boolean'),
    omitted: [],
    module: null,
    typeName: null,
  };
  const objects = alts.filter((x) => x !== 'false' && x !== 'boolean' && x !== 'true');
  if (!objects.length) return { ...r, keys: 'boolean' };
  const keys = new Set<string>();
  for (const alt of objects) {
    for (const part0 of splitTop(alt, '&')) {
      const part = part0.replace(/\[\]$/, '');
      if (part.startsWith('{')) {
        for (const k of members(braced(part, 0)).keys()) keys.add(k);
        continue;
      }
      const om = /^Omit<\s*(\w+)\s*,\s*(.+)>$/.exec(part);
      const name = om ? om[1] : part;
      if (!/^\w+$/.test(name)) throw new Error(`PipelineOptions.${step}: cannot read the type ${part}`);
      const module = imports.get(name);
      if (!module) throw new Error(`PipelineOptions.${step}: ${name} is not imported in pipeline.ts`);
      const omitted = om ? [...om[2].matchAll(/'(\w+)'/g)].map((m) => m[1]) : [];
      for (const k of interfaceMembers(module, name).keys()) if (!omitted.includes(k)) keys.add(k);
      r.omitted.push(...omitted);
      r.module ??= module;
      r.typeName ??= name;
    }
  }
  return { ...r, keys: [...keys] };
}

const sorted = (a: readonly string[]) => [...a].sort();
const manifestList = (step: string): readonly string[] => {
  const v = ANALYSIS_KEYS[step];
  return v === 'boolean' ? [] : v;
};

/** The keys a verb accepts at run time: the list in its "unknown key" error for a key no verb has. */
function acceptedAtRunTime(
  call: (o: Record<string, unknown>) => unknown,
  base: Record<string, unknown> = {},
): string[] {
  try {
    call({ ...base, zzProbeKey: 1 });
  } catch (e) {
    const m = /unknown key "zzProbeKey" in [^;]*; valid keys: (.*)$/.exec((e as Error).message);
    if (m) return m[1].split(', ').map((s) => s.trim());
    throw new Error(`no key list in the error: ${(e as Error).message}`);
  }
  throw new Error('an unknown key was accepted');
}

const loadDir = mkdtempSync(join(tmpdir(), 'fascicle-drift-'));
afterAll(() => rmSync(loadDir, { recursive: true, force: true }));
writeFileSync(join(loadDir, 'a.csv'), 'time (ms),s1 (uV)\n0,1\n0.05,2\n0.1,3\n');
/** Load a one-file manifest with this analysis section: the error, or null. */
function loadAnalysis(analysis: object): Error | null {
  const p = join(loadDir, 'm.json');
  const files = [{ path: 'a.csv', conditions: { preparation: 'P1' } }];
  writeFileSync(p, JSON.stringify({ fascicleManifest: 1, analysis, files }));
  try {
    readManifest(p);
  } catch (e) {
    return e as Error;
  }
  return null;
}

// a small set the verbs can run on (values do not matter: the key check comes first)
const fs = 20000,
  n = 200;
const set = new SweepSet({
  data: Float64Array.from({ length: 2 * n }, (_, i) => Math.sin(i / 7)),
  nSweeps: 2,
  nSamples: n,
  fs,
  t0Ms: -2,
  units: 'uV',
  conditions: [
    { preparation: 'P', distanceMm: 20 },
    { preparation: 'P', distanceMm: 30 },
  ],
});

describe('manifest analysis keys follow the pipeline (drift test)', () => {
  it('top-level keys: ANALYSIS_KEYS = PIPELINE_OPTION_KEYS = the members of PipelineOptions', () => {
    expect(sorted(Object.keys(ANALYSIS_KEYS))).toEqual(sorted(PIPELINE_OPTION_KEYS));
    expect(sorted([...pipelineMembers.keys()])).toEqual(sorted(PIPELINE_OPTION_KEYS));
  });
  it.each([...PIPELINE_OPTION_KEYS])(
    '%s: exactly the keys of its option type; false / true where the type allows',
    (step) => {
      const { keys, allowsFalse, allowsBoolean } = stepKeys(step);
      if (keys === 'boolean') expect(ANALYSIS_KEYS[step]).toBe('boolean');
      else {
        expect(ANALYSIS_KEYS[step]).not.toBe('boolean');
        expect(sorted(manifestList(step)), `${step}: manifest list vs its option type`).toEqual(sorted(keys));
      }
      const off = loadAnalysis({ [step]: false });
      if (allowsFalse || allowsBoolean || keys === 'boolean') expect(off, `${step}: false`).toBeNull();
      else expect(off, `${step}: false`).toBeInstanceOf(ConfigError);
      if (allowsBoolean || keys === 'boolean') expect(loadAnalysis({ [step]: true }), `${step}: true`).toBeNull();
      else expect(loadAnalysis({ [step]: true }), `${step}: true`).toBeInstanceOf(ConfigError);
    },
  );
  it('verbs that check keys at run time accept exactly what the manifest accepts', () => {
    const runTime: Record<string, string[]> = {
      baseline: acceptedAtRunTime((o) => set.baseline(o as never)),
      artifact: acceptedAtRunTime((o) => set.removeArtifact(o as never), { method: 'blank' }),
      hum: acceptedAtRunTime((o) => set.removeHum(o as never)),
      filter: acceptedAtRunTime((o) => set.filter(o as never)),
      components: acceptedAtRunTime((o) => set.components(o as never)),
      qc: acceptedAtRunTime((o) => sweepQc(set, o as never)),
      pairedPulse: acceptedAtRunTime((o) => pairedPulse(set, o as never)),
      trains: acceptedAtRunTime((o) => trains(set, o as never)),
      velocityDistribution: acceptedAtRunTime((o) => velocityDistribution(set, o as never)),
    };
    for (const [step, keys] of Object.entries(runTime)) {
      const { omitted } = stepKeys(step);
      expect(sorted(manifestList(step)), step).toEqual(sorted(keys.filter((k) => !omitted.includes(k))));
    }
  });
  it("every key of a step's exported defaults object is accepted, unless it is no option of the step", async () => {
    // defaults keys that are constants of the method, not options (checked below to be no option)
    const internal: Record<string, string[]> = {
      baseline: ['stopBeforeStimulusMs'],
      recruitment: ['thresholdFraction'],
      strengthDuration: ['minWidths'],
      qc: ['quietStopMs', 'endFraction', 'perSweepKeys', 'peerKeys'],
      groups: ['animalKeys'],
      mixed: ['randomKeys'],
      velocityDistribution: [
        'fitWindowStart',
        'fitWindowStartMs',
        'sfpWindowFraction',
        'twoDistanceLambda',
        'percentiles',
      ],
    };
    let seen = 0;
    for (const step of PIPELINE_OPTION_KEYS) {
      const { keys, module, typeName, omitted } = stepKeys(step);
      if (!module || !typeName || keys === 'boolean') continue;
      const mod = (await import(module)) as Record<string, unknown>;
      // BaselineOptions -> baselineDefaults, SweepQcOptions -> sweepQcDefaults, TrainOptions -> trainDefaults
      const base = typeName.replace(/Options$/, '');
      const name = `${base[0].toLowerCase()}${base.slice(1)}Defaults`;
      if (!(name in mod)) continue;
      seen++;
      for (const k of Object.keys(mod[name] as object)) {
        if (omitted.includes(k)) continue;
        if ((internal[step] ?? []).includes(k)) {
          expect(
            keys,
            `${name}.${k}: listed as internal here but an option of ${step}; add it to the manifest`,
          ).not.toContain(k);
          continue;
        }
        expect(manifestList(step), `${name}.${k}`).toContain(k);
      }
    }
    expect(seen).toBeGreaterThanOrEqual(8); // baseline, artifact, hum, filter, component, doseResponse, recruitment, ...
    // the internal ones are refused by a verb that checks keys
    expect(() => set.baseline({ stopBeforeStimulusMs: 0.1 } as never)).toThrow(/unknown key "stopBeforeStimulusMs"/);
  });
  it('SERIES holds exactly the series names the pipeline and study look for, and the schema the same', () => {
    const found = new Set<string>();
    // the pipeline, the study, and (when present) the registry of analyses they run
    const reg = join(root, 'src', 'registry');
    const files = [
      join(root, 'src', 'report', 'pipeline.ts'),
      join(root, 'src', 'report', 'study.ts'),
      ...(existsSync(reg)
        ? readdirSync(reg)
            .filter((f) => f.endsWith('.ts'))
            .map((f) => join(reg, f))
        : []),
    ];
    for (const f of files) {
      const src = readFileSync(f, 'utf8');
      const patterns = [
        /\bhas\('([\w-]+)'\)/g,
        /(?:hasSeries|seriesOf)\([^,()]+,\s*'([\w-]+)'\)/g,
        /series\s*[!=]==\s*'([\w-]+)'/g,
        /series:\s*'([\w-]+)'/g,
      ];
      for (const re of patterns) {
        for (const m of src.matchAll(re)) found.add(m[1]);
      }
    }
    expect(sorted([...found])).toEqual(sorted(SERIES));
    const schema = JSON.parse(readFileSync(join(root, 'schema', 'manifest.schema.json'), 'utf8'));
    const text = JSON.stringify(schema);
    const enums = [...text.matchAll(/"series":\{"enum":(\[[^\]]*\])/g)].map(
      (m) => JSON.parse(m[1]) as (string | null)[],
    );
    expect(enums.length).toBeGreaterThan(0);
    for (const e of enums) expect(sorted(e.filter((x): x is string => x !== null))).toEqual(sorted(SERIES));
  });
  it("top-level and file keys equal the JSON Schema's properties", () => {
    const schema = JSON.parse(readFileSync(join(root, 'schema', 'manifest.schema.json'), 'utf8'));
    expect(sorted(Object.keys(schema.properties))).toEqual(sorted(MANIFEST_KEYS));
    expect(sorted(Object.keys(schema.properties.files.items.properties))).toEqual(sorted(FILE_KEYS));
    // the formats a file entry may name are those of ManifestFile.format
    const fileType = interfaceMembers(join(root, 'src', 'io', 'manifest.ts'), 'ManifestFile').get('format')!;
    const formats = [...fileType.matchAll(/'([\w-]+)'/g)].map((m) => m[1]);
    expect(formats.length).toBeGreaterThan(1);
    expect(sorted(schema.properties.files.items.properties.format.enum)).toEqual(sorted(formats));
    for (const format of formats) {
      const p = join(loadDir, `f-${format}.json`);
      writeFileSync(
        p,
        JSON.stringify({ fascicleManifest: 1, files: [{ path: 'x.dat', format, conditions: { preparation: 'P1' } }] }),
      );
      expect(() => readManifestJson(p), format).not.toThrow(); // the schema (files are not opened here)
    }
    // the analysis section's keys (for editors' completion) are those the reader accepts
    const an = schema.properties.analysis.properties as Record<string, { type?: string; properties?: object }>;
    expect(sorted(Object.keys(an))).toEqual(sorted(Object.keys(ANALYSIS_KEYS)));
    for (const [step, v] of Object.entries(ANALYSIS_KEYS)) {
      if (v === 'boolean') expect(an[step].type, step).toBe('boolean');
      else expect(sorted(Object.keys(an[step].properties ?? {})), step).toEqual(sorted(v));
    }
  });
});

describe('manifest values of options the pipeline uses inside flagged analyses', () => {
  // a bad value there would otherwise become a "rejected" flag and exit 0; here it is a configuration error
  const load = loadAnalysis;
  it('every checked value belongs to a key the manifest accepts', () => {
    for (const k of Object.keys(ANALYSIS_VALUES)) {
      const [step, key] = k.split('/');
      expect(manifestList(step), k).toContain(key);
    }
  });
  it.each([
    [
      { doseResponse: { minConcentrations: 1 } },
      '/analysis/doseResponse/minConcentrations: is 1; expected an integer >= 2',
    ],
    [{ doseResponse: { maxLatencyShift: 0 } }, '/analysis/doseResponse/maxLatencyShift: is 0; expected a number > 0'],
    [{ doseResponse: { poolSites: 'yes' } }, '/analysis/doseResponse/poolSites: is "yes"; expected true or false'],
    [{ recruitment: { minLevels: 2.5 } }, '/analysis/recruitment/minLevels: is 2.5; expected an integer >= 3'],
    [{ components: { polarity: 2 } }, '/analysis/components/polarity: is 2; expected 1, -1, "auto"'],
    [{ components: { polarity: { C: 'down' } } }, '/analysis/components/polarity: is {"C":"down"}'],
    [{ poolSites: 1 }, '/analysis/poolSites: is 1; expected true or false'],
  ])('%j is refused naming the field', (analysis, msg) => {
    const e = load(analysis);
    expect(e).toBeInstanceOf(ConfigError);
    expect(e!.message).toContain(`m.json, field ${msg}`);
  });
  it('the documented forms load: polarity 1, -1, "auto" or per class; null latency shift; lists of artifact steps', () => {
    for (const a of [
      { components: { polarity: -1 } },
      { components: { polarity: 'auto' } },
      { components: { polarity: { 'A-alpha/beta': -1, C: 'auto' } } },
      { doseResponse: { maxLatencyShift: null, minConcentrations: 3, poolSites: true }, recruitment: { minLevels: 5 } },
      { poolSites: false },
      { averageRepeats: false, artifact: [{ method: 'blank', window: [0, 0.1] }, { method: 'exponential' }] },
    ])
      expect(load(a), JSON.stringify(a)).toBeNull();
  });
});
