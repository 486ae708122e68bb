// Mistakes and hostile input in the loaders end in a typed error that names the file and
// the place (and the nearest valid name for a typo), or load correctly; never a silent
// wrong value, an untyped exception or a hang. Expected values are the ones written.
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync, rmSync, openSync, ftruncateSync, closeSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readBinary, readDelimited, readManifest, InputError, OptionError } from '../../src';
import { parseDelimited } from '../../src/io/delimited';
import { ConfigError } from '../../src/errors';
import { ANALYSIS_KEYS } from '../../src/io/manifest';
import { PIPELINE_OPTION_KEYS } from '../../src/report/pipeline';

const dir = mkdtempSync(join(tmpdir(), 'fascicle-hostile-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** The error a call throws (or null). */
function thrown(f: () => unknown): Error | null {
  try {
    f();
  } catch (e) {
    return e as Error;
  }
  return null;
}

const csv = 'time (ms),s1 (uV),s2 (uV)\n0,1,2\n0.02,3,4\n0.04,5,6\n';
const int16 = (vals: number[]) => new Uint8Array(Int16Array.from(vals).buffer);

describe('sidecars: unknown keys and out-of-range gain', () => {
  beforeAll(() => writeFileSync(join(dir, 'r.bin'), int16([1, 2, 3, 4, 32767, -32768])));
  const side = (extra: object) => {
    writeFileSync(
      join(dir, 'r.json'),
      JSON.stringify({ data: 'r.bin', dtype: 'int16', nSweeps: 2, nSamples: 3, fs: 1000, units: 'uV', ...extra }),
    );
    return join(dir, 'r.json');
  };
  it.each([
    ['byteorder', 'big', 'byteOrder'],
    ['Gain', 2, 'gain'],
    ['t0ms', -1, 't0Ms'],
  ])('unknown key %s is refused, naming the sidecar and suggesting %s', (key, value, near) => {
    const e = thrown(() => readBinary(side({ [key]: value })));
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toContain(`r.json, field ${key}: unknown key "${key}" (did you mean "${near}"?)`);
  });
  it('int16 with a gain of 1e305 (full scale Infinity) is refused naming gain; a normal gain loads the values written', () => {
    const e = thrown(() => readBinary(side({ gain: 1e305 })));
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/field gain: gain 1e\+305/);
    const ok = readBinary(side({ gain: 0.5, offset: 1 }));
    expect([...ok.data]).toEqual([1.5, 2, 2.5, 3, 32767 * 0.5 + 1, -32768 * 0.5 + 1]);
  });
});

describe('manifest: unknown keys, values and inherited properties', () => {
  beforeAll(() => writeFileSync(join(dir, 'a.csv'), csv));
  const man = (m: object) => {
    writeFileSync(
      join(dir, 'm.json'),
      JSON.stringify({ fascicleManifest: 1, files: [{ path: 'a.csv', conditions: { preparation: 'P1' } }], ...m }),
    );
    return join(dir, 'm.json');
  };
  const cases: [string, object, RegExp][] = [
    ['top-level typo', { analyis: {} }, /field \/analyis: unknown key "analyis" \(did you mean "analysis"\?\)/],
    [
      'analysis lowpass',
      { analysis: { lowpass: 5000 } },
      /field \/analysis\/lowpass: unknown key "lowpass" \(write "filter": \{ "btype": "lowpass", "cutoff": <Hz> \}\)/,
    ],
    [
      'nested step option',
      { analysis: { baseline: { windw: [0, 1] } } },
      /field \/analysis\/baseline\/windw: unknown key "windw" \(did you mean "window"\?\)/,
    ],
    [
      'filter option',
      { analysis: { filter: { btype: 'lowpass', cutof: 5000 } } },
      /field \/analysis\/filter\/cutof: unknown key "cutof" \(did you mean "cutoff"\?\)/,
    ],
    ['components option', { analysis: { components: { earliestms: 0.1 } } }, /did you mean "earliestMs"/],
    [
      'series typo',
      { defaults: { series: 'distances' } },
      /field \/defaults\/series: unknown series "distances" \(did you mean "distance"\?\)/,
    ],
    [
      'classPreset typo',
      { classPreset: 'mamalian' },
      /field \/classPreset: unknown class preset "mamalian" \(did you mean "mammalian"\?\)/,
    ],
    [
      'preset disagreement',
      { classPreset: 'amphibian', analysis: { components: { preset: 'mammalian' } } },
      /differs from the top-level classPreset/,
    ],
  ];
  it.each(cases)('%s', (_n, m, msg) => {
    const e = thrown(() => readManifest(man(m)));
    expect(e).toBeInstanceOf(ConfigError);
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/m\.json, field /);
    expect(e!.message).toMatch(msg);
  });
  it('the analysis keys the manifest accepts are those of PipelineOptions (PIPELINE_OPTION_KEYS in src/report/pipeline.ts)', () => {
    expect(Object.keys(ANALYSIS_KEYS).sort()).toEqual([...PIPELINE_OPTION_KEYS].sort());
  });
  it('a list of artifact steps is checked step by step; averageRepeats must be a boolean', () => {
    const e = thrown(() =>
      readManifest(man({ analysis: { artifact: [{ method: 'blank' }, { method: 'template', fitWindw: [0, 1] }] } })),
    );
    expect(e!.message).toMatch(
      /field \/analysis\/artifact\/1\/fitWindw: unknown key "fitWindw" \(did you mean "fitWindow"\?\)/,
    );
    expect(thrown(() => readManifest(man({ analysis: { averageRepeats: 'no' } })))!.message).toMatch(
      /field \/analysis\/averageRepeats: is "no"; expected true or false/,
    );
    expect(thrown(() => readManifest(man({ analysis: { averageRepeats: false, artifact: false } })))).toBeNull();
  });
  it("a mistyped series in a file's sweeps and an unknown reader option name the file entry", () => {
    writeFileSync(
      join(dir, 'm2.json'),
      JSON.stringify({
        fascicleManifest: 1,
        files: [{ path: 'a.csv', conditions: { preparation: 'P1' }, sweeps: [{}, { series: 'dos' }] }],
      }),
    );
    expect(thrown(() => readManifest(join(dir, 'm2.json')))!.message).toMatch(
      /field \/files\/0\/sweeps\/1\/series: unknown series "dos" \(did you mean "dose"\?\)/,
    );
    writeFileSync(
      join(dir, 'm3.json'),
      JSON.stringify({
        fascicleManifest: 1,
        files: [{ path: 'a.csv', options: { delimeter: ';' }, conditions: { preparation: 'P1' } }],
      }),
    );
    expect(thrown(() => readManifest(join(dir, 'm3.json')))!.message).toMatch(
      /field \/files\/0\/options\/delimeter: unknown key "delimeter" \(did you mean "delimiter"\?\)/,
    );
    writeFileSync(
      join(dir, 'm4.json'),
      JSON.stringify({
        fascicleManifest: 1,
        files: [{ path: 'r.json', options: { layout: 'wide' }, conditions: { preparation: 'P1' } }],
      }),
    );
    expect(thrown(() => readManifest(join(dir, 'm4.json')))!.message).toMatch(
      /\/files\/0\/options: reader options for a binary file/,
    );
  });
  it('required: ["constructor"] is not satisfied by an inherited property', () => {
    const e = thrown(() => readManifest(man({ required: ['constructor'] })));
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/a\.csv, sweep 0: condition "constructor" is missing/);
  });
  it('a valid manifest with a known series still loads the values written', () => {
    const s = readManifest(man({ defaults: { series: 'distance' } }));
    expect([...s.data]).toEqual([1, 3, 5, 2, 4, 6]);
    expect(s.conditions[0].series).toBe('distance');
  });
  it('an analysis nested 200,000 levels deep is refused naming the field (no stack overflow)', () => {
    const depth = 200000;
    const deep = '{"a":'.repeat(depth) + '1' + '}'.repeat(depth);
    writeFileSync(
      join(dir, 'deep.json'),
      `{"fascicleManifest":1,"analysis":{"components":{"preset":${deep}}},"files":[{"path":"a.csv"}]}`,
    );
    const e = thrown(() => readManifest(join(dir, 'deep.json')));
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(
      /deep\.json, field \/analysis\/components\/preset\/a\/a.*: nested more than 32 levels deep/,
    );
  });
  it('a FIFO (named pipe) listed in a manifest is refused at once instead of waiting for a writer', () => {
    const fifo = join(dir, 'pipe.csv');
    execFileSync('mkfifo', [fifo]);
    writeFileSync(
      join(dir, 'mf.json'),
      JSON.stringify({ fascicleManifest: 1, files: [{ path: 'pipe.csv', conditions: { preparation: 'P1' } }] }),
    );
    const e = thrown(() => readManifest(join(dir, 'mf.json')));
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/pipe\.csv: this is a named pipe \(FIFO\); expected a regular file/);
  }, 10_000);
});

describe('delimited text: layouts, comments, huge lines and options', () => {
  it('a forced long layout without a sweep column is an InputError naming the header, not a TypeError', () => {
    const e = thrown(() =>
      parseDelimited(Buffer.from('time (ms),value (uV)\n0,1\n1,2\n'), 'x.csv', { layout: 'long' }),
    );
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/x\.csv, line 1: the long layout needs a sweep column/);
    const near = thrown(() =>
      parseDelimited(Buffer.from('swep,time (ms),value (uV)\n1,0,1\n1,1,2\n'), 'y.csv', { layout: 'long' }),
    );
    expect(near!.message).toMatch(/did you mean "sweep"\?/);
  });
  it('comment lines holding commas do not make a ";" or tab file decimal-comma (the values written are read)', () => {
    for (const d of [';', '\t']) {
      const text = `# recorded 2026-01-05, rig 2, gain 1000\ntime (ms)${d}s1 (uV)\n0${d}1.5\n# note, mid-file\n0.02${d}2.25\n0.04${d}-3.125\n`;
      const s = parseDelimited(Buffer.from(text), 'c.txt');
      expect([...s.data]).toEqual([1.5, 2.25, -3.125]);
    }
    // a real decimal comma is still detected
    expect([...parseDelimited(Buffer.from('# a, b\ntime (ms);s (uV)\n0;1,5\n1;2,5\n'), 'd.txt').data]).toEqual([
      1.5, 2.5,
    ]);
  });
  it('a 500 MB header line is refused before it is decoded', () => {
    const big = Buffer.alloc(500 * 2 ** 20, 'a,');
    const e = thrown(() => parseDelimited(big, 'huge.csv'));
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/huge\.csv, line 1: the header line is 524288000 bytes long/);
  }, 30_000);
  it('a sparse 2 GB file is read (in parts under the 2 GB read limit) and refused with a typed error', () => {
    const p = join(dir, 'sparse.csv');
    const fd = openSync(p, 'w');
    ftruncateSync(fd, 2 ** 31);
    closeSync(fd);
    const e = thrown(() => readDelimited(p));
    rmSync(p);
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/sparse\.csv, line 1: the header line is 2147483648 bytes long/);
  }, 60_000);
  it('many short lines under a wide header do not ask for memory beyond what the bytes allow', () => {
    const header = 'time (ms),' + Array.from({ length: 20000 }, (_, i) => `s${i} (uV)`).join(',');
    const e = thrown(() => parseDelimited(Buffer.from(header + '\n' + '1\n'.repeat(200000)), 'w.csv'));
    expect(e).toBeInstanceOf(InputError);
    expect(e!.message).toMatch(/w\.csv, line 2, column 1: the row has 1 fields/);
  });
  it('an unknown reader option is refused with the nearest name', () => {
    const e = thrown(() => parseDelimited(Buffer.from(csv), 'o.csv', { delimter: ';' } as never));
    expect(e).toBeInstanceOf(OptionError);
    expect(e!.message).toMatch(/unknown key "delimter" in readDelimited options \(did you mean "delimiter"\?\)/);
  });
});
