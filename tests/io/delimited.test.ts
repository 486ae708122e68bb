import { describe, it, expect } from 'vitest';
import { mkdtempSync, writeFileSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { createHash } from 'node:crypto';
import { join } from 'node:path';
import fc from 'fast-check';
import { readDelimited, parseDelimited, InputError, OptionError, setThreads, stopThreads, threads } from '../../src';
import { plainRow } from '../../src/io/plainRows';
import { parseNumber } from '../../src/io/numbers';
import { PARALLEL_CSV_BYTES, STREAM_CSV_BYTES, STREAM_PART_BYTES, streamWide } from '../../src/io/delimited';

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
    const p = file(
      Buffer.concat([
        Buffer.from([0xef, 0xbb, 0xbf]),
        Buffer.from('time (s);a (uV)\r\n0,000;1,5\r\n0,001;-2,25\r\n0,002;3\r\n'),
      ]),
    );
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
    expect(() => readDelimited(file('sweep,time (ms),signal (mV)\nA,0,1\nA,0.5,2\nB,0,3\n'))).toThrow(
      /sweep 1.*"B" has 1 samples; expected 2 samples/,
    );
  });
});

describe('readDelimited(path) bad input names file, line and column', () => {
  const cases: [string, string, RegExp][] = [
    ['ragged row', 'time (ms),a (mV)\n0,1\n1,2,3\n', /line 3, column 3: the row has more than 2 fields/],
    ['short row', 'time (ms),a (mV),b (mV)\n0,1,2\n1,2\n', /line 3, column 2: the row has 2 fields; expected 3 fields/],
    [
      'non-numeric',
      'time (ms),a (mV)\n0,1\n1,abc\n',
      /line 3, column 2: a non-numeric cell "abc"; expected a finite number/,
    ],
    ['NaN', 'time (ms),a (mV)\n0,NaN\n1,2\n', /line 2, column 2: a non-finite value "NaN"/],
    ['Inf', 'time (ms),a (mV)\n0,1\n1,-Inf\n', /line 3, column 2: a non-finite value "-Inf"/],
    ['empty cell', 'time (ms),a (mV)\n0,\n1,2\n', /line 2, column 2: an empty cell/],
    ['time not increasing', 'time (ms),a (mV)\n0,1\n1,2\n1,3\n', /line 4, column 1: time 1 does not increase/],
    ['uneven sampling', 'time (ms),a (mV)\n0,1\n1,2\n2.5,3\n3,4\n', /line 4, column 1: uneven sampling/],
    [
      'unknown signal unit',
      'time (ms),a (furlong)\n0,1\n1,2\n',
      /line 1, column 2: unknown signal unit "furlong"; expected one of V, mV, uV/,
    ],
    ['unknown time unit', 'time (min),a (mV)\n0,1\n1,2\n', /line 1, column 1: unknown time unit "min"/],
    ['no unit', 'time,a\n0,1\n1,2\n', /gives no unit/],
    ['no rows', 'time (ms),a (mV)\n', /has 0 data rows/],
  ];
  for (const [name, text, re] of cases) {
    it(name, () => {
      const p = file(text);
      let err: unknown;
      try {
        readDelimited(p);
      } catch (e) {
        err = e;
      }
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
    expect(() => readDelimited(p, { timeUnit: 'hours' as never })).toThrow(
      /invalid timeUnit: "hours"; must be one of "s", "ms", "us"/,
    );
    expect(() => readDelimited(p, { units: 'kV' as never })).toThrow(/invalid units: "kV"/);
    expect(() => readDelimited(p, { stimulusAt: '1' as never })).toThrow(
      /invalid stimulusAt: "1"; must be a finite number/,
    );
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
        fc.integer({ min: 1, max: 4 }),
        fc.integer({ min: 2, max: 30 }),
        fc.constantFrom(',', ';', '\t'),
        fc.boolean(),
        fc.boolean(),
        fc.array(finiteDouble, { minLength: 120, maxLength: 120 }),
        (ns, n, delim, crlf, bom, vals) => {
          const eol = crlf ? '\r\n' : '\n';
          const decComma = delim !== ',' && vals[0] > 0;
          const f = (x: number) => (decComma ? String(x).replace('.', ',') : String(x));
          let t = 'time (ms)' + Array.from({ length: ns }, (_, j) => `${delim}s${j} (mV)`).join('') + eol;
          for (let i = 0; i < n; i++)
            t +=
              f(i * 0.02) +
              Array.from({ length: ns }, (_, j) => delim + f(vals[(i * ns + j) % vals.length])).join('') +
              eol;
          const p = file(bom ? '\uFEFF' + t : t);
          const s = readDelimited(p);
          for (let j = 0; j < ns; j++)
            for (let i = 0; i < n; i++) if (s.sweep(j)[i] !== vals[(i * ns + j) % vals.length]) return false;
          return s.nSamples === n && s.nSweeps === ns;
        },
      ),
      { numRuns: 150 },
    );
  });
  it('random corruptions end in an InputError, never a crash or a wrong value', () => {
    const good = 'time (ms),a (mV),b (mV)\n0,1.5,2\n0.1,2.5,3\n0.2,3.5,4\n0.3,4.5,5\n';
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: good.length - 1 }),
        fc.constantFrom('x', ',', '\n', 'NaN', ';', '', '--', '1e999', '"'),
        (at, ins) => {
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
        },
      ),
      { numRuns: 300 },
    );
  });
});

describe('the CSV fast path reads exponent notation exactly (%e and %g as C printf writes them)', () => {
  /** C's %.{p}e: exponent of at least `pad` digits (2 in C99; 3 from some older runtimes) */
  const cExp = (x: number, p: number, upper: boolean, pad: number): string => {
    const [mant, ex] = x.toExponential(p).split('e');
    return `${mant}${upper ? 'E' : 'e'}${ex[0]}${ex.slice(1).padStart(pad, '0')}`;
  };
  /** C's %.{P}g: %e or %f by the decimal exponent, trailing zeros removed */
  const cG = (x: number, P: number, upper: boolean, pad: number): string => {
    const X = Number(x.toExponential(P - 1).split('e')[1]);
    const trim = (m: string) => (m.includes('.') ? m.replace(/0+$/, '').replace(/\.$/, '') : m);
    if (X < -4 || X >= P) {
      const [m, e] = cExp(x, P - 1, upper, pad).split(/(?=[eE])/);
      return trim(m) + e;
    }
    return trim(x.toFixed(P - 1 - X));
  };
  // the independent rule of the fast path: at most 15 digits and |exponent - fraction digits| <= 22
  const shape = /^-?(\d*)(?:[.,](\d*))?[eE]([+-]?\d{1,3})$/;
  const fastEligible = (s: string) => {
    const m = shape.exec(s);
    if (!m) return /^-?\d*([.,]\d*)?$/.test(s) && s.replace(/[-.,]/g, '').length <= 15 && /\d/.test(s);
    const digits = m[1].length + (m[2] ?? '').length;
    return digits >= 1 && digits <= 15 && Math.abs(Number(m[3]) - (m[2] ?? '').length) <= 22;
  };

  it('1.2 million fuzzed %e/%g values: every value the fast path takes equals Number() bit for bit', () => {
    let seed = 12345;
    const rnd = () => (seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32;
    const texts: string[] = [];
    for (let i = 0; i < 1_200_000; i++) {
      const kind = i % 4;
      // volt-like float32 values, wide decades, integers and exact decimals
      let x =
        kind === 0
          ? Math.fround((rnd() - 0.5) * 2e-3)
          : kind === 1
            ? (rnd() - 0.5) * 10 ** (Math.floor(rnd() * 60) - 30)
            : kind === 2
              ? Math.floor(rnd() * 1e6) - 5e5
              : (Math.floor(rnd() * 2e5) - 1e5) / 10 ** Math.floor(rnd() * 8);
      if (i % 97 === 0) x = -0;
      const P = 1 + Math.floor(rnd() * 17),
        upper = rnd() < 0.2,
        pad = rnd() < 0.1 ? 3 : 2;
      texts.push(i % 3 === 0 ? cExp(x, P - 1, upper, pad) : cG(x, P, upper, pad));
    }
    const t = new Float64Array(1),
      block = new Float64Array(1);
    let taken = 0,
      eligible = 0;
    const wrong: string[] = [];
    for (const [dec, dcode] of [
      [46, 44],
      [44, 59],
    ] as const) {
      const all = Buffer.from(texts.join('\n'), 'latin1');
      if (dec === 44) for (let k = 0; k < all.length; k++) if (all[k] === 46) all[k] = 44;
      let k = 0;
      for (const s of texts) {
        const end = k + s.length;
        const ok = plainRow(all, k, end, 1, dec, dcode, t, 0, block, 0);
        const want = Number(s);
        if (fastEligible(s) !== ok && wrong.length < 5) wrong.push(`${s}: fast path ${ok ? 'took' : 'refused'} it`);
        if (ok) {
          taken++;
          if (!Object.is(t[0], want) && wrong.length < 5) wrong.push(`${s}: ${t[0]} instead of ${want}`);
        }
        if (fastEligible(s)) eligible++;
        // the exact parser, used for whatever the fast path refuses, also equals Number()
        if (!ok && !Object.is(parseNumber(all, k, end, dec), want) && wrong.length < 5)
          wrong.push(`${s}: exact parser differs`);
        k = end + 1;
      }
    }
    expect(wrong).toEqual([]);
    expect(taken).toBe(eligible);
    expect(taken).toBeGreaterThan(0.7 * 2 * texts.length); // most printf output takes the fast path
  }, 120_000);

  it('exponent edge cases: taken, or left to the exact parser', () => {
    const t = new Float64Array(1),
      block = new Float64Array(1);
    const fast = (s: string) => {
      const b = Buffer.from(s, 'latin1');
      return plainRow(b, 0, b.length, 1, 46, 44, t, 0, block, 0) ? t[0] : null;
    };
    for (const s of [
      '1e5',
      '1E5',
      '1e+05',
      '-2.5e-03',
      '1.e3',
      '.5e1',
      '7.000000e-01',
      '1.5e-005',
      '-0e0',
      '123456789012345e7',
      '1e22',
      '1e-22',
      '9.99999999999999e22',
      '123456789012345e-22',
    ]) {
      expect(fast(s), s).not.toBeNull();
      expect(Object.is(fast(s), Number(s)), s).toBe(true);
    }
    // empty or 4-digit exponents, |exponent| beyond 22, 16 digits, a second exponent, signs where they do not belong
    for (const s of [
      '1e',
      '1e+',
      '1e-',
      'e5',
      '-e5',
      '1e0001',
      '1e23',
      '1e-23',
      '1.5e-22',
      '1234567890123456e0',
      '1e5e5',
      '1e5.0',
      '+1e5',
      '1e--5',
      '1e 5',
    ]) {
      expect(fast(s), s).toBeNull();
    }
  });

  it('a large %g CSV (parsed on all threads) gives the same samples as a slow reference reader, on 1 and 2 threads', async () => {
    const ns = 200,
      n = 4000;
    let seed = 7;
    const rnd = () => (seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32;
    const rows = ['time (s),' + Array.from({ length: ns }, (_, j) => `s${j} (V)`).join(',')];
    for (let i = 0; i < n; i++) {
      const v = Array.from({ length: ns }, () => cG(Math.fround((rnd() - 0.5) * 1e-3), 6, false, 2));
      rows.push(`${cG(i * 2e-5, 6, false, 2)},${v.join(',')}`);
    }
    const text = rows.join('\n') + '\n';
    expect(text.length).toBeGreaterThan(PARALLEL_CSV_BYTES);
    const p = file(text);
    // reference: split on commas, Number() per cell
    const ref = new Float64Array(ns * n);
    rows.slice(1).forEach((r, i) =>
      r
        .split(',')
        .slice(1)
        .forEach((c, j) => {
          ref[j * n + i] = Number(c);
        }),
    );
    const before = threads();
    for (const th of [1, 2]) {
      setThreads(th);
      const s = readDelimited(p);
      expect(s.nSweeps).toBe(ns);
      expect(s.nSamples).toBe(n);
      let same = true;
      for (let i = 0; i < ref.length; i++)
        if (!Object.is(s.data[i], ref[i])) {
          same = false;
          break;
        }
      expect(same, `${th} thread(s)`).toBe(true);
    }
    await stopThreads();
    setThreads(before);
  }, 120_000);
});

describe('a large wide file is read part by part, with the result of reading it whole', () => {
  // over STREAM_CSV_BYTES, so that readDelimited streams it in two parts of STREAM_PART_BYTES
  const ns = 500,
    n = 4200;
  let seed = 99;
  const rnd = () => (seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32;
  const rows = [
    '# recorded by an invented rig',
    'time (ms);' + Array.from({ length: ns }, (_, j) => `s${j} [uV]`).join(';'),
  ];
  for (let i = 0; i < n; i++) {
    rows.push(
      `${(i * 0.02 - 1).toFixed(2)};${Array.from({ length: ns }, () => String(Math.round((rnd() - 0.5) * 2e6) / 1000)).join(';')}`,
    );
  }
  const text = rows.join('\r\n') + '\r\n';
  const sameSet = (a: ReturnType<typeof readDelimited>, b: ReturnType<typeof readDelimited>) => {
    expect([a.nSweeps, a.nSamples, a.fs, a.t0Ms, a.units]).toEqual([b.nSweeps, b.nSamples, b.fs, b.t0Ms, b.units]);
    expect(a.conditions).toEqual(b.conditions);
    expect(a.history).toEqual(b.history);
    expect(a.sources.map((s) => [s.path, s.bytes, s.sha256])).toEqual(
      b.sources.map((s) => [s.path, s.bytes, s.sha256]),
    );
    let same = a.data.length === b.data.length;
    for (let i = 0; same && i < a.data.length; i++) same = Object.is(a.data[i], b.data[i]);
    expect(same).toBe(true);
  };
  it('the same set as parseDelimited of the whole text (samples bit for bit, time, units, conditions, history), on 1 and 2 threads', async () => {
    expect(text.length).toBeGreaterThan(STREAM_CSV_BYTES);
    expect(text.length).toBeLessThan(2 * STREAM_PART_BYTES);
    const p = file(text);
    const whole = readFileSync(p);
    const before = threads();
    for (const th of [1, 2]) {
      setThreads(th);
      expect(streamWide(p, {})).not.toBe(null); // this file is streamed
      const s = readDelimited(p, { conditions: { preparation: 'X1' } });
      sameSet(
        s,
        parseDelimited(
          new Uint8Array(whole),
          p,
          { conditions: { preparation: 'X1' } },
          { path: p, bytes: whole.length, sha256: s.sources[0].sha256 },
        ),
      );
      // a value in the second part, against Number() of its text
      expect(s.sweep(123)[n - 7]).toBe(Number(rows[2 + n - 7].split(';')[124]));
    }
    await stopThreads();
    setThreads(before);
  }, 120_000);
  it('a line late in the file that is not a plain row (comment, exact-parser number, bad cell, uneven time) gives what reading it whole gives', () => {
    const late = 2 + n - 100;
    const variants: [string, (r: string) => string][] = [
      ['a comment line', (r) => `# note\r\n${r}`],
      ['a quoted-free number with a plus sign', (r) => r.replace(';', ';+')],
      ['a bad cell', (r) => r.replace(/;[^;]*$/, ';x1')],
      ['an uneven time', (r) => r.replace(/^[^;]*/, (v) => String(Number(v) + 0.005))],
    ];
    for (const [what, edit] of variants) {
      const r2 = [...rows];
      r2[late] = edit(r2[late]);
      const p = file(r2.join('\r\n') + '\r\n');
      let whole: unknown, streamed: unknown;
      const bytes = readFileSync(p);
      const source = { path: p, bytes: bytes.length, sha256: createHash('sha256').update(bytes).digest('hex') };
      try {
        whole = parseDelimited(new Uint8Array(bytes), p, {}, source);
      } catch (e) {
        whole = e;
      }
      try {
        streamed = readDelimited(p);
      } catch (e) {
        streamed = e;
      }
      if (what !== 'an uneven time') expect(streamWide(p, {}), what).toBe(null); // left to the whole reader
      if (whole instanceof Error) {
        expect(streamed, what).toBeInstanceOf(InputError);
        expect((streamed as Error).message, what).toBe(whole.message);
      } else {
        sameSet(streamed as ReturnType<typeof readDelimited>, whole as ReturnType<typeof readDelimited>);
      }
    }
  }, 120_000);
});
