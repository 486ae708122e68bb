// Manifest mistakes a user makes and fascicle used to accept silently (found by trying them on the demo study):
// a mistyped condition key (its value never reached the analysis), the same file listed twice (its sweeps counted
// twice as repeats), and a mistyped required condition (an error without the nearest name). Each must be a typed
// error naming the manifest, the field and the nearest valid name; the command line exits 2 (configuration) and
// writes nothing. The expected names are the README's "Known conditions"; no numeric reference is involved.
import { describe, it, expect, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, existsSync, rmSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readManifest, conditionKeyTypo } from '../../src/io/manifest';
import { ConfigError, InputError } from '../../src/errors';
import * as validate from '../../src/validate';

const root = join(__dirname, '..', '..');
const cliPath = join(root, 'dist', 'cli', 'main.js');
const work = mkdtempSync(join(tmpdir(), 'fascicle-hostile-manifest-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

const csv = 'time (ms),s1 (uV),s2 (uV)\n0,1,2\n0.02,3,4\n0.04,5,6\n';
writeFileSync(join(work, 'a.csv'), csv);
writeFileSync(join(work, 'b.csv'), csv);
let n = 0;
const manifest = (m: Record<string, unknown>) => {
  const p = join(work, `m${n++}.json`);
  writeFileSync(p, JSON.stringify({ fascicleManifest: 1, ...m }));
  return p;
};
const file = (conditions: Record<string, unknown>, extra: Record<string, unknown> = {}) => ({
  path: 'a.csv',
  conditions: { preparation: 'P1', ...conditions },
  ...extra,
});
const thrown = (f: () => unknown): Error => {
  try {
    f();
  } catch (e) {
    return e as Error;
  }
  throw new Error('no error');
};

describe('a condition key that looks like a known one is a typo, not a user column', () => {
  it('the same letters in another case or with separators, the key without its unit, two edits away', () => {
    const cases: [string, string][] = [
      ['temperatureCC', 'temperatureC'],
      ['temperature', 'temperatureC'],
      ['temperature_C', 'temperatureC'],
      ['Temperaturec', 'temperatureC'],
      ['distance_mm', 'distanceMm'],
      ['distance', 'distanceMm'],
      ['distancMm', 'distanceMm'],
      ['pulseWidth', 'pulseWidthMs'],
      ['concentraton', 'concentration'],
      ['Preparation', 'preparation'],
      ['interval', 'intervalMs'],
    ];
    for (const [typo, known] of cases) expect([typo, conditionKeyTypo(typo)]).toEqual([typo, known]);
  });
  it('user columns far from every known key, and the known keys themselves, are kept', () => {
    for (const k of ['group', 'animal', 'label', 'condition', 'sex', 'cohort', 'genotype', 'rig', 'side', 'note'])
      expect([k, conditionKeyTypo(k)]).toEqual([k, null]);
    for (const k of ['temperatureC', 'distanceMm', 'series', 'epoch', 'site']) expect(conditionKeyTypo(k)).toBeNull();
  });
  it('lives in src/validate.ts (other loaders check their keys with it); the manifest module re-exports it', () => {
    expect(conditionKeyTypo).toBe(validate.conditionKeyTypo);
    expect(validate.conditionKeyTypo('temprature')).toBe('temperatureC');
    expect(validate.KNOWN_CONDITIONS).toContain('distanceMm');
  });
  it('in file conditions, per-sweep entries and defaults: a ConfigError naming the field and the nearest key', () => {
    const a = thrown(() => readManifest(manifest({ files: [file({ temperatureCC: 37 })] })));
    expect(a).toBeInstanceOf(ConfigError);
    expect(a.message).toMatch(/m\d+\.json, field \/files\/0\/conditions\/temperatureCC: unknown condition/);
    expect(a.message).toMatch(/did you mean "temperatureC"/);
    const b = thrown(() => readManifest(manifest({ files: [file({}, { sweeps: [{}, { distance_mm: 20 }] })] })));
    expect(b.message).toMatch(/field \/files\/0\/sweeps\/1\/distance_mm: .*did you mean "distanceMm"/);
    const c = thrown(() => readManifest(manifest({ defaults: { Epoch: 'drug' }, files: [file({})] })));
    expect(c.message).toMatch(/field \/defaults\/Epoch: .*did you mean "epoch"/);
    // a user column of its own name loads, with its value on every sweep
    const ok = readManifest(manifest({ files: [file({ cohort: 'K1', temperatureC: 37 })] }));
    expect(ok.conditions.map((q) => [q.cohort, q.temperatureC])).toEqual([
      ['K1', 37],
      ['K1', 37],
    ]);
  });
});

describe('the same file listed twice', () => {
  it('with the same reader options is an error naming both entries; other files, or other options, load', () => {
    const e = thrown(() => readManifest(manifest({ files: [file({}), file({ site: 'x' }), { path: 'b.csv' }] })));
    expect(e).toBeInstanceOf(ConfigError);
    expect(e.message).toMatch(/field \/files\/1\/path: a\.csv is listed twice, as files 0 and 1/);
    // "./a.csv" is the same file
    const dot = thrown(() => readManifest(manifest({ files: [file({}), { ...file({}), path: './a.csv' }] })));
    expect(dot.message).toMatch(/listed twice/);
    const two = readManifest(manifest({ files: [file({}), { ...file({}), path: 'b.csv' }] }));
    expect(two.nSweeps).toBe(4);
    const opts = readManifest(manifest({ files: [file({}), file({}, { options: { timeUnit: 'ms' } })] }));
    expect(opts.nSweeps).toBe(4);
  });
});

describe('a mistyped required condition', () => {
  it('names the missing condition and the nearest known one', () => {
    const e = thrown(() => readManifest(manifest({ required: ['preparation', 'temprature'], files: [file({})] })));
    expect(e).toBeInstanceOf(InputError);
    expect(e.message).toMatch(/condition "temprature" is missing \(did you mean "temperatureC"\?\)/);
  });
});

describe('a unit written in the wrong case (in SI the case is the meaning: m milli, M mega or molar)', () => {
  it("is a ConfigError naming the field and the unit meant; known units and units of the user's own load", () => {
    const a = thrown(() => readManifest(manifest({ files: [file({ intensity: 1, intensityUnit: 'ma' })] })));
    expect(a).toBeInstanceOf(ConfigError);
    expect(a.message).toMatch(/field \/files\/0\/conditions\/intensityUnit: unit "ma" \(did you mean "mA"\?\)/);
    const b = thrown(() => readManifest(manifest({ defaults: { concentrationUnit: 'um' }, files: [file({})] })));
    expect(b.message).toMatch(/field \/defaults\/concentrationUnit: unit "um" \(did you mean "uM"\?\)/);
    const c = thrown(() =>
      readManifest(manifest({ files: [file({}, { sweeps: [{}, { concentrationUnit: 'MM' }] })] })),
    );
    expect(c.message).toMatch(/sweeps\/1\/concentrationUnit: unit "MM" \(did you mean "mM"\?\)/);
    for (const u of ['uM', 'µM', 'μM', 'nM', 'mg/mL', 'mmol/L'])
      expect(readManifest(manifest({ files: [file({ concentrationUnit: u })] })).conditions[0].concentrationUnit).toBe(
        u,
      );
    expect(readManifest(manifest({ files: [file({ intensityUnit: 'V' })] })).conditions[0].intensityUnit).toBe('V');
  });
  it("in a binary sidecar's conditions: an InputError naming the file, sweep and condition", () => {
    writeFileSync(join(work, 'u.bin'), new Uint8Array(8 * 2));
    writeFileSync(
      join(work, 'u.json'),
      JSON.stringify({
        ...{ data: 'u.bin', dtype: 'float32', nSweeps: 2, nSamples: 2, fs: 1000, units: 'uV' },
        conditions: { intensityUnit: 'UA' },
      }),
    );
    const e = thrown(() => readManifest(manifest({ files: [{ path: 'u.json', conditions: { preparation: 'P1' } }] })));
    expect(e).toBeInstanceOf(InputError);
    expect(e.message).toMatch(/u\.json, sweep 0, field intensityUnit: unit "UA" \(did you mean "uA"\?\)/);
  });
});

describe('a listed path that is missing or a folder', () => {
  it('names the manifest field, and the nearest file of that folder for a typo', () => {
    const a = thrown(() => readManifest(manifest({ files: [{ ...file({}), path: 'a.cvs' }] })));
    expect(a).toBeInstanceOf(InputError);
    expect(a.message).toMatch(
      /m\d+\.json, field \/files\/0\/path: a\.cvs: cannot open file \(ENOENT\) \(did you mean "a\.csv"\?\)/,
    );
    const far = thrown(() => readManifest(manifest({ files: [{ ...file({}), path: 'recordings/zzzzzzzzzzzz.csv' }] })));
    expect(far.message).toMatch(/field \/files\/0\/path: recordings\/zzzzzzzzzzzz\.csv: cannot open file \(ENOENT\);/);
    const dir = thrown(() => readManifest(manifest({ files: [{ ...file({}), path: '.' }] })));
    expect(dir.message).toMatch(/field \/files\/0\/path: \. is a folder/);
  });
});

describe('a distance in another unit (m or µm written as mm)', () => {
  it('is refused at reading, naming the manifest field (or the file and sweep) and the likely unit', () => {
    // 0.5-1000 mm: the range the component measurement accepts (src/validate.ts DISTANCE_RANGE_MM)
    const a = thrown(() =>
      readManifest(manifest({ files: [file({}, { sweeps: [{ distanceMm: 20 }, { distanceMm: 0.04 }] })] })),
    );
    expect(a).toBeInstanceOf(ConfigError);
    expect(a.message).toMatch(
      /field \/files\/0\/sweeps\/1\/distanceMm: distanceMm 0\.04 mm is implausible for a nerve \(0\.5-1000 mm\) for sweep 1 of a\.csv; is it in another unit \(m or cm\)\?/,
    );
    const b = thrown(() => readManifest(manifest({ defaults: { distanceMm: 20000 }, files: [file({})] })));
    expect(b.message).toMatch(/field \/defaults\/distanceMm: distanceMm 20000 mm .*another unit \(µm\)/);
    const c = thrown(() => readManifest(manifest({ files: [file({ referenceDistanceMm: 0.1 })] })));
    expect(c.message).toMatch(/field \/files\/0\/conditions\/referenceDistanceMm: referenceDistanceMm 0\.1 mm/);
    // the edges of the range load
    const ok = readManifest(manifest({ files: [file({}, { sweeps: [{ distanceMm: 0.5 }, { distanceMm: 1000 }] })] }));
    expect(ok.column('distanceMm')).toEqual([0.5, 1000]);
  });
});

describe('a manifest that is not JSON', () => {
  it('names the line and column of the syntax error and shows that line; an empty file says it is empty', () => {
    const p = join(work, 'broken.json');
    writeFileSync(p, '{"fascicleManifest": 1,\n "files": [\n  {"path": "a.csv",}\n ]}\n');
    const e = thrown(() => readManifest(p));
    expect(e).toBeInstanceOf(InputError);
    // the trailing comma: line 3, column 20 is the "}" after it (counted by hand)
    expect(e.message).toMatch(
      /broken\.json, line 3, column 20: invalid JSON \(.*\) at: \{"path": "a\.csv",\}; expected/,
    );
    const empty = join(work, 'empty.json');
    writeFileSync(empty, '\n');
    expect(thrown(() => readManifest(empty)).message).toMatch(
      /empty\.json: the file is empty; expected a JSON manifest/,
    );
  });
});

describe('on the command line', () => {
  it('a mistyped condition and a file listed twice exit 2 with the message, and write no bundle', () => {
    for (const m of [{ files: [file({ temperatureCC: 37 })] }, { files: [file({}), file({})] }]) {
      const out = join(work, `out${n}`);
      const r = spawnSync(process.execPath, [cliPath, 'run', manifest(m), '--out', out, '--quiet'], {
        encoding: 'utf8',
      });
      expect(r.status).toBe(2);
      expect(r.stderr).toMatch(
        /configuration error: .*m\d+\.json, field \/files\/\d\/(conditions\/temperatureCC|path)/,
      );
      expect(existsSync(out)).toBe(false);
    }
  });
});

describe('an --nwb place the writer refuses', () => {
  it('is refused before the analysis (exit 2, no bundle): a folder, an input, a file fascicle did not write', () => {
    const foreign = join(work, 'theirs.nwb');
    writeFileSync(foreign, 'not an NWB file');
    const m = manifest({ files: [file({})] });
    const cases: [string, RegExp][] = [
      [work, /refusing to write .*: it is a folder; give --nwb a file name/],
      [join(work, 'a.csv'), /refusing to write .*a\.csv: it is an input of this analysis/],
      [foreign, /refusing to overwrite .*theirs\.nwb: it is not an NWB file written by fascicle/],
    ];
    for (const [nwb, msg] of cases) {
      const out = join(work, `nwb-out${n++}`);
      const r = spawnSync(process.execPath, [cliPath, 'run', m, '--out', out, '--nwb', nwb, '--quiet'], {
        encoding: 'utf8',
      });
      expect(r.status, r.stderr).toBe(2);
      expect(r.stderr).toMatch(msg);
      expect(existsSync(out), 'no bundle written').toBe(false);
    }
    expect(readFileSync(foreign, 'utf8')).toBe('not an NWB file');
    expect(readFileSync(join(work, 'a.csv'), 'utf8')).toBe(csv);
  });
});

describe('a manifest read again (once per preparation in a run) is checked once per content', () => {
  it('a changed manifest is checked anew, and every caller gets its own copy', async () => {
    const { readManifestJson } = await import('../../src/io/manifest');
    const p = manifest({ files: [file({ temperatureC: 37 })] });
    const a = readManifestJson(p).manifest;
    (a.files[0].conditions as Record<string, unknown>).temperatureC = 20; // a caller changing its copy
    expect(readManifestJson(p).manifest.files[0].conditions!.temperatureC).toBe(37);
    // the same path with a typo written into it: the check runs again
    writeFileSync(p, JSON.stringify({ fascicleManifest: 1, files: [file({ temperatureCC: 37 })] }));
    expect(() => readManifestJson(p)).toThrow(/did you mean "temperatureC"/);
    writeFileSync(p, JSON.stringify({ fascicleManifest: 1, files: [file({ temperatureC: 30 })] }));
    expect(readManifestJson(p).manifest.files[0].conditions!.temperatureC).toBe(30);
  });
});
