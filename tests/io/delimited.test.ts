import { describe, it, expect } from 'vitest';
import { mkdtempSync, writeFileSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { readDelimited, InputError, OptionError } from '../../src';

const dir = mkdtempSync(join(tmpdir(), 'fascicle-io-'));
let k = 0;
function file(text: string | Buffer, ext = 'csv'): string {
  const p = join(dir, `f${k++}.${ext}`);
  writeFileSync(p, text);
  return p;
}

describe('readDelimited(path) wide layout', () => {
  it('reads a comma CSV with units in headers', () => {
    const p = file('time (ms),s1 (mV),s2 (mV)\n-0.1,1,2\n0,1.5,2.5\n0.1,2,3\n');
    const s = readDelimited(p);
    expect(s.nSweeps).toBe(2);
    expect(s.nSamples).toBe(3);
    expect(s.fs).toBeCloseTo(10000, 6);
    expect(s.t0Ms).toBeCloseTo(-0.1, 12);
    expect(s.units).toBe('mV');
    expect([...s.sweep(1)]).toEqual([2, 2.5, 3]);
    expect(s.conditions[0].label).toBe('s1');
    expect(s.sources[0].sha256).toMatch(/^[0-9a-f]{64}$/);
  });
  it('reads semicolons with decimal comma, BOM and CRLF', () => {
    const p = file(Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from('time (s);a (uV)\r\n0,000;1,5\r\n0,001;-2,25\r\n0,002;3\r\n')]));
    const s = readDelimited(p);
    expect(s.units).toBe('uV');
    expect(s.fs).toBeCloseTo(1000, 9);
    expect([...s.sweep(0)]).toEqual([1.5, -2.25, 3]);
  });
  it('reads tab-separated text', () => {
    const s = readDelimited(file('time [us]\tx [V]\n0\t1e-3\n20\t2E-3\n40\t3e-3\n', 'tsv'));
    expect(s.fs).toBeCloseTo(50000, 6);
    expect(s.units).toBe('V');
    expect(s.sweep(0)[1]).toBe(2e-3);
  });
});

describe('readDelimited(path) long layout', () => {
  it('groups rows by sweep', () => {
    const s = readDelimited(file('sweep,time (ms),signal (mV)\nA,0,1\nA,0.5,2\nB,0,3\nB,0.5,4\n'));
    expect(s.nSweeps).toBe(2);
    expect(s.conditions.map((c) => c.label)).toEqual(['A', 'B']);
    expect([...s.sweep(1)]).toEqual([3, 4]);
  });
  it('rejects sweeps of unequal length, naming the sweep', () => {
    expect(() => readDelimited(file('sweep,time (ms),signal (mV)\nA,0,1\nA,0.5,2\nB,0,3\n'))).toThrow(/sweep 1.*"B" has 1 samples; expected 2 samples/);
  });
});

describe('readDelimited(path) bad input names file, line and column', () => {
  const cases: [string, string, RegExp][] = [
    ['ragged row', 'time (ms),a (mV)\n0,1\n1,2,3\n', /line 3, column 3: the row has more than 2 fields/],
    ['short row', 'time (ms),a (mV),b (mV)\n0,1,2\n1,2\n', /line 3, column 2: the row has 2 fields; expected 3 fields/],
    ['non-numeric', 'time (ms),a (mV)\n0,1\n1,abc\n', /line 3, column 2: a non-numeric cell "abc"; expected a finite number/],
    ['NaN', 'time (ms),a (mV)\n0,NaN\n1,2\n', /line 2, column 2: a non-finite value "NaN"/],
    ['Inf', 'time (ms),a (mV)\n0,1\n1,-Inf\n', /line 3, column 2: a non-finite value "-Inf"/],
    ['empty cell', 'time (ms),a (mV)\n0,\n1,2\n', /line 2, column 2: an empty cell/],
    ['time not increasing', 'time (ms),a (mV)\n0,1\n1,2\n1,3\n', /line 4, column 1: time 1 does not increase/],
    ['uneven sampling', 'time (ms),a (mV)\n0,1\n1,2\n2.5,3\n3,4\n', /line 4, column 1: uneven sampling/],
    ['unknown signal unit', 'time (ms),a (furlong)\n0,1\n1,2\n', /line 1, column 2: unknown signal unit "furlong"; expected one of V, mV, uV/],
    ['unknown time unit', 'time (min),a (mV)\n0,1\n1,2\n', /line 1, column 1: unknown time unit "min"/],
    ['no unit', 'time,a\n0,1\n1,2\n', /gives no unit/],
    ['no rows', 'time (ms),a (mV)\n', /has 0 data rows/],
  ];
  for (const [name, text, re] of cases) {
    it(name, () => {
      const p = file(text);
      let err: unknown;
      try { readDelimited(p); } catch (e) { err = e; }
      expect(err).toBeInstanceOf(InputError);
      expect((err as Error).message).toContain(p);
      expect((err as Error).message).toMatch(re);
    });
  }
  it('reader options are checked at the call, naming the option and what is allowed', () => {
    const p = file('time (ms),a (mV)\n0,1\n1,2\n');
    expect(() => readDelimited(p, { delimiter: '|' as never })).toThrow(/invalid delimiter: "\|"; must be one of/);
    expect(() => readDelimited(p, { decimal: 'x' as never })).toThrow(OptionError);
    expect(() => readDelimited(p, { layout: 'tall' as never })).toThrow(/invalid layout: "tall"/);
    expect(() => readDelimited(p, { timeUnit: 'hours' as never })).toThrow(/invalid timeUnit: "hours"; must be one of "s", "ms", "us"/);
    expect(() => readDelimited(p, { units: 'kV' as never })).toThrow(/invalid units: "kV"/);
    expect(() => readDelimited(p, { stimulusAt: '1' as never })).toThrow(/invalid stimulusAt: "1"; must be a finite number/);
  });
  it('never modifies the input file', () => {
    const p = file('time (ms),a (mV)\n0,1\n1,2\n');
    const before = readFileSync(p);
    readDelimited(p);
    expect(readFileSync(p).equals(before)).toBe(true);
  });
});

describe('readDelimited property tests (fast-check)', () => {
  const finiteDouble = fc.double({ noNaN: true, noDefaultInfinity: true, min: -1e6, max: 1e6 });
  it('random valid files round-trip exactly', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 4 }), fc.integer({ min: 2, max: 30 }),
        fc.constantFrom(',', ';', '\t'), fc.boolean(), fc.boolean(), fc.array(finiteDouble, { minLength: 120, maxLength: 120 }),
        (ns, n, delim, crlf, bom, vals) => {
          const eol = crlf ? '\r\n' : '\n';
          const decComma = delim !== ',' && vals[0] > 0;
          const f = (x: number) => (decComma ? String(x).replace('.', ',') : String(x));
          let t = 'time (ms)' + Array.from({ length: ns }, (_, j) => `${delim}s${j} (mV)`).join('') + eol;
          for (let i = 0; i < n; i++) t += f(i * 0.02) + Array.from({ length: ns }, (_, j) => delim + f(vals[(i * ns + j) % vals.length])).join('') + eol;
          const p = file(bom ? '\uFEFF' + t : t);
          const s = readDelimited(p);
          for (let j = 0; j < ns; j++) for (let i = 0; i < n; i++) if (s.sweep(j)[i] !== vals[(i * ns + j) % vals.length]) return false;
          return s.nSamples === n && s.nSweeps === ns;
        },
      ),
      { numRuns: 150 },
    );
  });
  it('random corruptions end in an InputError, never a crash or a wrong value', () => {
    const good = 'time (ms),a (mV),b (mV)\n0,1.5,2\n0.1,2.5,3\n0.2,3.5,4\n0.3,4.5,5\n';
    fc.assert(
      fc.property(fc.integer({ min: 0, max: good.length - 1 }), fc.constantFrom('x', ',', '\n', 'NaN', ';', '', '--', '1e999', '"'), (at, ins) => {
        const bad = good.slice(0, at) + ins + good.slice(at + 1);
        const p = file(bad);
        try {
          const s = readDelimited(p);
          // accepted: it must then be a valid reading of the (still well-formed) text
          for (const sw of s) for (const v of sw) if (!Number.isFinite(v)) return false;
          return true;
        } catch (e) {
          return e instanceof InputError || (e as Error).name === 'OptionError';
        }
      }),
      { numRuns: 300 },
    );
  });
});
