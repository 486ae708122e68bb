// Property-based fuzzing of every loader (fast-check): delimited text wide and long,
// binary + JSON sidecar, and the study manifest. Seeded and reproducible:
//   FASCICLE_FUZZ_SEED=<n> (default 20261202) and FASCICLE_FUZZ_SCALE=<x> (default 1; 1 = 10,800 files).
// Oracles written here, independent of the loaders' code:
//  - a generated valid file must read back exactly the values written (and its sample rate,
//    start time and units);
//  - a corrupted file must either give a typed error from src/errors.ts that names the file
//    (and, through its place, line/column/sweep/field where it has one), or read exactly what
//    a slow reference reader in this file (the documented format, parsed with split and
//    Number) reads; any other exception, a wrong value, or a file taking over 10 s is a crash.
// Counts by outcome are printed at the end (quoted in reports).
import { describe, it, expect, afterAll } from 'vitest';
import fc from 'fast-check';
import { mkdtempSync, writeFileSync, rmSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { readBinary, readManifest, InputError, type SweepSet } from '../../src';
import { parseDelimited } from '../../src/io/delimited';
import { ConfigError } from '../../src/errors';

const SEED = Number(process.env.FASCICLE_FUZZ_SEED ?? 20261202);
const SCALE = Number(process.env.FASCICLE_FUZZ_SCALE ?? 1);
const runs = (n: number) => Math.max(1, Math.round(n * SCALE));
const base = existsSync('/dev/shm') ? '/dev/shm' : tmpdir(); // tmpfs: the disk is not the test
const dir = mkdtempSync(join(base, 'fascicle-fuzz-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

type Outcome = 'valid-read-correct' | 'corrupt-read-correct' | 'typed-error' | 'crash';
const counts: Record<string, Record<Outcome, number>> = {};
const crashes: string[] = [];
function record(loader: string, o: Outcome, detail?: string): boolean {
  const c = (counts[loader] ??= { 'valid-read-correct': 0, 'corrupt-read-correct': 0, 'typed-error': 0, crash: 0 });
  c[o]++;
  if (o === 'crash' && crashes.length < 20) crashes.push(`${loader}: ${detail}`);
  return o !== 'crash';
}
afterAll(() => {
  const total: Record<Outcome, number> = {
    'valid-read-correct': 0,
    'corrupt-read-correct': 0,
    'typed-error': 0,
    crash: 0,
  };
  const lines = Object.entries(counts).map(([k, c]) => {
    for (const o of Object.keys(total) as Outcome[]) total[o] += c[o];
    return `  ${k.padEnd(16)} ${Object.entries(c)
      .map(([o, n]) => `${o} ${n}`)
      .join(', ')}`;
  });
  const all = Object.values(total).reduce((a, b) => a + b, 0);
  console.log(
    `fuzz (seed ${SEED}, scale ${SCALE}): ${all} files\n${lines.join('\n')}\n  total            ${Object.entries(total)
      .map(([o, n]) => `${o} ${n}`)
      .join(', ')}${crashes.length ? '\n' + crashes.join('\n') : ''}`,
  );
});

/** A typed error that names the file: the only acceptable failure. */
function typedNamingFile(e: unknown, file: string): boolean {
  if (!(e instanceof InputError)) return false;
  return e.place.file !== undefined && e.message.includes(file);
}
const timed = <T>(f: () => T): { value?: T; error?: unknown; ms: number } => {
  const t0 = performance.now();
  try {
    return { value: f(), ms: performance.now() - t0 };
  } catch (error) {
    return { error, ms: performance.now() - t0 };
  }
};
const describeError = (e: unknown) => (e instanceof Error ? `${e.name}: ${e.message.slice(0, 300)}` : String(e));

// ---------------------------------------------------------------------------------------
// Reference reader for delimited text: the documented format, parsed the obvious way.
const MS_PER = { s: 1000, ms: 1, us: 0.001 } as const;
const SWEEP_NAMES = ['sweep', 'trace', 'sweep_id', 'sweepid', 'episode'];
const TIME_NAMES = ['time', 't'];
const VALUE_NAMES = ['value', 'signal', 'voltage', 'amplitude', 'potential', 'v'];
interface RefResult {
  data: number[];
  nSweeps: number;
  nSamples: number;
  units: string;
  dtMs: number;
  t0Ms: number;
}

function refHeader(h: string): { name: string; unit?: string } {
  const m = /^\s*(.*?)\s*[([]\s*([^)\]]*?)\s*[)\]]\s*$/.exec(h);
  return m ? { name: m[1], unit: m[2] } : { name: h.trim() };
}
function refTimeUnit(u: string): keyof typeof MS_PER | null {
  const s = u.trim().replace(/[µμ]/g, 'u').toLowerCase();
  return s === 's' || s === 'sec' ? 's' : s === 'ms' || s === 'msec' ? 'ms' : s === 'us' || s === 'usec' ? 'us' : null;
}
function refSignalUnit(u: string): string | null {
  const s = u.trim().replace(/[µμ]/g, 'u');
  return ['V', 'mV', 'uV'].includes(s) ? s : null;
}
function refNumber(cell: string, dec: string): number | null {
  const t = cell.replace(/^[ \t]+|[ \t]+$/g, '');
  const d = dec === ',' ? ',' : '\\.';
  if (!new RegExp(`^[+-]?(\\d+${d}?\\d*|${d}\\d+)([eE][+-]?\\d+)?$`).test(t)) return null;
  const v = Number(t.replace(',', '.'));
  return Number.isFinite(v) ? v : null;
}
function refEven(t: number[]): boolean {
  const n = t.length,
    dt = (t[n - 1] - t[0]) / (n - 1);
  for (let i = 1; i < n; i++) if (!(t[i] > t[i - 1])) return false;
  for (let i = 0; i < n; i++) if (Math.abs(t[i] - (t[0] + i * dt)) > 0.01 * dt) return false;
  return true;
}

/** What the documented format says the text holds, or null when it is not a valid file. */
function refDelimited(bytes: Uint8Array): RefResult | null {
  let text = new TextDecoder('utf-8').decode(
    bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf ? bytes.subarray(3) : bytes,
  );
  text = text.replace(/^\uFEFF/, ''); // TextDecoder drops a BOM itself; keep both cases the same
  const lines = text.split('\n').map((l) => (l.endsWith('\r') ? l.slice(0, -1) : l));
  const kept = lines.filter((l) => {
    const s = l.replace(/^ +/, '');
    return s !== '' && !s.startsWith('#');
  });
  if (!kept.length) return null;
  const header = kept[0];
  const delim = header.includes('\t') ? '\t' : header.includes(';') ? ';' : ',';
  const names = header.split(delim).map((h) => h.replace(/^"|"$/g, ''));
  if (names.length < 2) return null;
  const heads = names.map(refHeader);
  const lower = heads.map((h) => h.name.toLowerCase());
  const idx = (c: string[]) => lower.findIndex((h) => c.includes(h));
  const long = names.length === 3 && idx(SWEEP_NAMES) >= 0 && idx(TIME_NAMES) >= 0 && idx(VALUE_NAMES) >= 0;
  const rows = kept.slice(1);
  const dec = delim !== ',' && rows.some((r) => r.includes(',')) ? ',' : '.';
  const tc = long ? idx(TIME_NAMES) : 0;
  const tu = heads[tc].unit === undefined ? null : refTimeUnit(heads[tc].unit!);
  if (!tu) return null;
  const vcols = long ? [idx(VALUE_NAMES)] : names.map((_, i) => i).slice(1);
  let units: string | null = null;
  for (const c of vcols) {
    const u = heads[c].unit === undefined ? null : refSignalUnit(heads[c].unit!);
    if (!u || (units && u !== units)) return null;
    units = u;
  }
  const cells = rows.map((r) => r.split(delim));
  if (cells.some((c) => c.length !== names.length)) return null;
  if (!long) {
    const nums = cells.map((c) => c.map((x) => refNumber(x, dec)));
    if (nums.some((r) => r.some((v) => v === null))) return null;
    const n = nums.length;
    if (n < 2) return null;
    const t = nums.map((r) => r[0]!);
    if (!refEven(t)) return null;
    const data: number[] = [];
    for (let s = 1; s < names.length; s++) for (let i = 0; i < n; i++) data.push(nums[i][s]!);
    return {
      data,
      nSweeps: names.length - 1,
      nSamples: n,
      units: units!,
      dtMs: ((t[n - 1] - t[0]) / (n - 1)) * MS_PER[tu],
      t0Ms: t[0] * MS_PER[tu],
    };
  }
  const sc = idx(SWEEP_NAMES),
    vc = idx(VALUE_NAMES);
  const groups = new Map<string, { t: number[]; v: number[] }>();
  for (const c of cells) {
    const id = c[sc].trim();
    if (id === '') return null;
    const tv = refNumber(c[tc], dec),
      vv = refNumber(c[vc], dec);
    if (tv === null || vv === null) return null;
    const g = groups.get(id) ?? groups.set(id, { t: [], v: [] }).get(id)!;
    g.t.push(tv);
    g.v.push(vv);
  }
  const gs = [...groups.values()];
  if (!gs.length || gs[0].t.length < 2 || !refEven(gs[0].t)) return null;
  const t = gs[0].t,
    n = t.length;
  for (const g of gs) {
    if (g.t.length !== n) return null;
    for (let i = 0; i < n; i++) if (Math.abs(g.t[i] - t[i]) > 1e-6 * Math.max(1, Math.abs(t[i]))) return null;
  }
  return {
    data: gs.flatMap((g) => g.v),
    nSweeps: gs.length,
    nSamples: n,
    units: units!,
    dtMs: ((t[n - 1] - t[0]) / (n - 1)) * MS_PER[tu],
    t0Ms: t[0] * MS_PER[tu],
  };
}

const close = (a: number, b: number) => Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b)) + 1e-12;
/** The set read equals what was written (values exactly; rate and start to rounding). */
function sameAs(s: SweepSet, r: RefResult): string | null {
  if (s.nSweeps !== r.nSweeps || s.nSamples !== r.nSamples)
    return `shape ${s.nSweeps}x${s.nSamples} instead of ${r.nSweeps}x${r.nSamples}`;
  if (s.units !== r.units) return `units ${s.units} instead of ${r.units}`;
  const d = s.data;
  for (let i = 0; i < r.data.length; i++) if (d[i] !== r.data[i]) return `value ${i}: ${d[i]} instead of ${r.data[i]}`;
  if (!close(1000 / s.fs, r.dtMs)) return `sample interval ${1000 / s.fs} ms instead of ${r.dtMs}`;
  if (!close(s.t0Ms, r.t0Ms)) return `start ${s.t0Ms} ms instead of ${r.t0Ms}`;
  return null;
}

// ---------------------------------------------------------------------------------------
// Generators of valid delimited files (the values written are the oracle).
const value = fc.oneof(
  fc.double({ noNaN: true, noDefaultInfinity: true }),
  fc.integer({ min: -100000, max: 100000 }),
  fc.integer({ min: -99999, max: 99999 }).map((k) => k / 100),
);
const timeStep = fc.constantFrom(0.02, 0.01, 1, 0.5, 20, 0.001, 0.125);
const comment = fc.constantFrom('# recorded 2026, rig 2, gain 1000', '#', '# a;b\tc', '   # indented, with comma', '');

interface TextFile {
  text: string;
  expected: RefResult;
}
const fmt = (v: number, comma: boolean) => (comma ? String(v).replace('.', ',') : String(v));

const wideFile = fc
  .record({
    nSweeps: fc.integer({ min: 1, max: 6 }),
    nSamples: fc.integer({ min: 2, max: 30 }),
    delim: fc.constantFrom(',', ';', '\t'),
    comma: fc.boolean(),
    tUnit: fc.constantFrom('s', 'ms', 'us' as const),
    sUnit: fc.constantFrom('V', 'mV', 'uV'),
    bracket: fc.boolean(),
    crlf: fc.boolean(),
    bom: fc.boolean(),
    comments: fc.array(fc.tuple(fc.nat(40), comment), { maxLength: 3 }),
    dt: timeStep,
    k0: fc.integer({ min: -50, max: 50 }),
  })
  .chain((g) =>
    fc.array(value, { minLength: g.nSweeps * g.nSamples, maxLength: g.nSweeps * g.nSamples }).map((vals): TextFile => {
      const comma = g.comma && g.delim !== ',';
      const u = (x: string) => (g.bracket ? `[${x}]` : `(${x})`);
      const lines = [
        ['time ' + u(g.tUnit), ...Array.from({ length: g.nSweeps }, (_, s) => `s${s + 1} ${u(g.sUnit)}`)].join(g.delim),
      ];
      const t: number[] = [];
      for (let i = 0; i < g.nSamples; i++) {
        t.push((g.k0 + i) * g.dt);
        lines.push(
          [fmt(t[i], comma), ...Array.from({ length: g.nSweeps }, (_, s) => fmt(vals[s * g.nSamples + i], comma))].join(
            g.delim,
          ),
        );
      }
      for (const [at, c] of g.comments) lines.splice(1 + (at % lines.length), 0, c);
      const eol = g.crlf ? '\r\n' : '\n';
      const n = g.nSamples;
      return {
        text: (g.bom ? '\uFEFF' : '') + lines.join(eol) + eol,
        expected: {
          data: vals.map((v) => v),
          nSweeps: g.nSweeps,
          nSamples: n,
          units: g.sUnit,
          dtMs: ((t[n - 1] - t[0]) / (n - 1)) * MS_PER[g.tUnit],
          t0Ms: t[0] * MS_PER[g.tUnit],
        },
      };
    }),
  );

const longFile = fc
  .record({
    nSweeps: fc.integer({ min: 1, max: 4 }),
    nSamples: fc.integer({ min: 2, max: 20 }),
    delim: fc.constantFrom(',', ';', '\t'),
    comma: fc.boolean(),
    tUnit: fc.constantFrom('s', 'ms', 'us' as const),
    sUnit: fc.constantFrom('V', 'mV', 'uV'),
    order: fc.constantFrom([0, 1, 2], [1, 0, 2], [2, 1, 0], [0, 2, 1], [1, 2, 0], [2, 0, 1]),
    names: fc.tuple(
      fc.constantFrom(...SWEEP_NAMES, 'Sweep', 'TRACE'),
      fc.constantFrom('time', 't', 'Time'),
      fc.constantFrom(...VALUE_NAMES, 'Signal'),
    ),
    interleave: fc.boolean(),
    dt: timeStep,
    k0: fc.integer({ min: -20, max: 20 }),
  })
  .chain((g) =>
    fc.array(value, { minLength: g.nSweeps * g.nSamples, maxLength: g.nSweeps * g.nSamples }).map((vals): TextFile => {
      const comma = g.comma && g.delim !== ',';
      const cols = [g.names[0], `${g.names[1]} (${g.tUnit})`, `${g.names[2]} (${g.sUnit})`];
      const t = Array.from({ length: g.nSamples }, (_, i) => (g.k0 + i) * g.dt);
      const rows: string[][] = [];
      const row = (s: number, i: number) => [`sw${s + 1}`, fmt(t[i], comma), fmt(vals[s * g.nSamples + i], comma)];
      if (g.interleave) {
        for (let i = 0; i < g.nSamples; i++) for (let s = 0; s < g.nSweeps; s++) rows.push(row(s, i));
      } else for (let s = 0; s < g.nSweeps; s++) for (let i = 0; i < g.nSamples; i++) rows.push(row(s, i));
      const pick = (r: string[]) => g.order.map((k) => r[k]).join(g.delim);
      const n = g.nSamples;
      return {
        text: [pick(cols), ...rows.map(pick)].join('\n') + '\n',
        expected: {
          data: vals,
          nSweeps: g.nSweeps,
          nSamples: n,
          units: g.sUnit,
          dtMs: ((t[n - 1] - t[0]) / (n - 1)) * MS_PER[g.tUnit],
          t0Ms: t[0] * MS_PER[g.tUnit],
        },
      };
    }),
  );

// Corruptions: byte-level edits with tokens that trouble readers.
const TOKENS = [
  'NaN',
  'Infinity',
  '-inf',
  '1e400',
  '-1e-400',
  '""',
  '"',
  '\r',
  '\n',
  '\n\n',
  ',',
  ';',
  '\t',
  '#',
  '\u0000',
  '-',
  '.',
  'e',
  'ä',
  '\uFEFF',
  '  ',
  '0x1F',
  '1,5',
  'time (ms)',
  '(kV)',
  '[ms]',
  ' ',
  '9'.repeat(40),
  '+',
  '1e5',
  ',,',
  '\n#x,y\n',
  'sweep',
  '(mV)',
];
const edit = fc.oneof(
  fc.record({ kind: fc.constant('flip' as const), at: fc.nat(), byte: fc.integer({ min: 0, max: 255 }) }),
  fc.record({ kind: fc.constant('insert' as const), at: fc.nat(), token: fc.constantFrom(...TOKENS) }),
  fc.record({ kind: fc.constant('delete' as const), at: fc.nat(), len: fc.integer({ min: 1, max: 12 }) }),
  fc.record({ kind: fc.constant('truncate' as const), at: fc.nat() }),
  fc.record({ kind: fc.constant('dupline' as const), at: fc.nat() }),
);
type Edit =
  | { kind: 'flip'; at: number; byte: number }
  | { kind: 'insert'; at: number; token: string }
  | { kind: 'delete'; at: number; len: number }
  | { kind: 'truncate'; at: number }
  | { kind: 'dupline'; at: number };
function corrupt(bytes: Uint8Array, edits: Edit[]): Uint8Array {
  let b = Buffer.from(bytes);
  for (const e of edits) {
    const at = b.length ? e.at % (b.length + 1) : 0;
    if (e.kind === 'flip' && b.length) {
      b = Buffer.from(b);
      b[at % b.length] = e.byte;
    } else if (e.kind === 'insert') b = Buffer.concat([b.subarray(0, at), Buffer.from(e.token), b.subarray(at)]);
    else if (e.kind === 'delete') b = Buffer.concat([b.subarray(0, at), b.subarray(at + e.len)]);
    else if (e.kind === 'truncate') b = b.subarray(0, at);
    else if (e.kind === 'dupline') {
      const s = b.lastIndexOf(10, at - 1) + 1,
        en = b.indexOf(10, at);
      const line = b.subarray(s, en < 0 ? b.length : en + 1);
      b = Buffer.concat([b.subarray(0, s), line, line, b.subarray(s + line.length)]);
    }
  }
  return new Uint8Array(b);
}

function checkText(
  loader: string,
  name: string,
  bytes: Uint8Array,
  expected: RefResult | null,
  valid: boolean,
): boolean {
  const r = timed(() => parseDelimited(bytes, name));
  if (r.ms > 10000) return record(loader, 'crash', `${name}: took ${r.ms} ms`);
  if (r.error !== undefined) {
    if (!typedNamingFile(r.error, name))
      return record(
        loader,
        'crash',
        `${name}: ${describeError(r.error)}\n${Buffer.from(bytes).toString('utf8').slice(0, 400)}`,
      );
    if (valid || expected)
      return record(
        loader,
        'crash',
        `${name}: a valid file was rejected: ${describeError(r.error)}\n${Buffer.from(bytes).toString('utf8').slice(0, 400)}`,
      );
    return record(loader, 'typed-error');
  }
  if (!expected)
    return record(
      loader,
      'crash',
      `${name}: read a file the format does not allow\n${JSON.stringify(Buffer.from(bytes).toString('utf8').slice(0, 400))}`,
    );
  const diff = sameAs(r.value!, expected);
  if (diff)
    return record(
      loader,
      'crash',
      `${name}: wrong reading: ${diff}\n${JSON.stringify(Buffer.from(bytes).toString('utf8').slice(0, 400))}`,
    );
  return record(loader, valid ? 'valid-read-correct' : 'corrupt-read-correct');
}

describe('fuzz: delimited text', () => {
  it('valid wide files read back exactly what was written; the reference reader agrees', () => {
    fc.assert(
      fc.property(wideFile, (f) => {
        const bytes = new TextEncoder().encode(f.text);
        const ref = refDelimited(bytes);
        if (
          !ref ||
          sameAs({ ...ref, fs: 1000 / ref.dtMs, data: Float64Array.from(ref.data) } as unknown as SweepSet, f.expected)
        )
          return record(
            'wide',
            'crash',
            `reference reader disagrees with the generator: ${JSON.stringify(f.text.slice(0, 300))}`,
          );
        return checkText('wide', 'wide.csv', bytes, f.expected, true);
      }),
      { seed: SEED, numRuns: runs(2500) },
    );
  });
  it('valid long files read back exactly what was written', () => {
    fc.assert(
      fc.property(longFile, (f) => checkText('long', 'long.csv', new TextEncoder().encode(f.text), f.expected, true)),
      { seed: SEED + 1, numRuns: runs(900) },
    );
  });
  it('corrupted wide and long files: a typed error naming the file, or exactly what the reference reader reads', () => {
    fc.assert(
      fc.property(fc.oneof(wideFile, longFile), fc.array(edit, { minLength: 1, maxLength: 3 }), (f, edits) => {
        const bytes = corrupt(new TextEncoder().encode(f.text), edits);
        return checkText('text-corrupt', 'bad.csv', bytes, refDelimited(bytes), false);
      }),
      { seed: SEED + 2, numRuns: runs(3200) },
    );
  });
});

// ---------------------------------------------------------------------------------------
// Binary + sidecar: a DataView decoder here is the oracle.
const DT = { int16: 2, float32: 4, float64: 8 } as const;
interface BinCase {
  meta: Record<string, unknown>;
  raw: Uint8Array;
  expected: number[];
}
const binFile = fc
  .record({
    dtype: fc.constantFrom('int16', 'float32', 'float64' as const),
    little: fc.boolean(),
    interleaved: fc.boolean(),
    nSweeps: fc.integer({ min: 1, max: 5 }),
    nSamples: fc.integer({ min: 2, max: 40 }),
    nChannels: fc.integer({ min: 1, max: 3 }),
    channelPick: fc.nat(),
    gain: fc.constantFrom(1, 0.5, 0.001, 2.5e-7, -1),
    offset: fc.constantFrom(0, 1.25, -3),
    fs: fc.constantFrom(1000, 20000, 44100.5),
    t0Ms: fc.constantFrom(0, -1, -2.5),
    units: fc.constantFrom('V', 'mV', 'uV', 'µV'),
    explicit: fc.boolean(),
    seedBytes: fc.uint8Array({ minLength: 16, maxLength: 16 }),
  })
  .chain((g) => {
    const count = g.nSweeps * g.nSamples * g.nChannels;
    const vals =
      g.dtype === 'int16'
        ? fc.array(fc.integer({ min: -32768, max: 32767 }), { minLength: count, maxLength: count })
        : g.dtype === 'float32'
          ? fc.array(
              fc.float({ noNaN: true, noDefaultInfinity: true, min: Math.fround(-1e30), max: Math.fround(1e30) }),
              { minLength: count, maxLength: count },
            )
          : fc.array(fc.double({ noNaN: true, noDefaultInfinity: true, min: -1e300, max: 1e300 }), {
              minLength: count,
              maxLength: count,
            });
    return vals.map((raw): BinCase => {
      const w = DT[g.dtype];
      const buf = new Uint8Array(count * w);
      const dv = new DataView(buf.buffer);
      raw.forEach((v, i) =>
        g.dtype === 'int16'
          ? dv.setInt16(i * w, v, g.little)
          : g.dtype === 'float32'
            ? dv.setFloat32(i * w, v, g.little)
            : dv.setFloat64(i * w, v, g.little),
      );
      const ch = g.channelPick % g.nChannels;
      const expected: number[] = [];
      for (let s = 0; s < g.nSweeps; s++) {
        for (let i = 0; i < g.nSamples; i++) {
          const k = g.interleaved ? (s * g.nSamples + i) * g.nChannels + ch : (s * g.nChannels + ch) * g.nSamples + i;
          const x =
            g.dtype === 'int16'
              ? dv.getInt16(k * w, g.little)
              : g.dtype === 'float32'
                ? dv.getFloat32(k * w, g.little)
                : dv.getFloat64(k * w, g.little);
          expected.push(x * g.gain + g.offset);
        }
      }
      const meta: Record<string, unknown> = {
        data: 'x.bin',
        dtype: g.dtype,
        nSweeps: g.nSweeps,
        nSamples: g.nSamples,
        fs: g.fs,
        units: g.units,
      };
      if (g.explicit || !g.little) meta.byteOrder = g.little ? 'little' : 'big';
      if (g.explicit || g.interleaved) meta.layout = g.interleaved ? 'interleaved' : 'sweep-major';
      if (g.explicit || g.nChannels > 1) {
        meta.nChannels = g.nChannels;
        meta.channel = ch;
      }
      if (g.explicit || g.gain !== 1) meta.gain = g.gain;
      if (g.explicit || g.offset !== 0) meta.offset = g.offset;
      if (g.explicit || g.t0Ms !== 0) meta.t0Ms = g.t0Ms;
      return { meta, raw: buf, expected };
    });
  });

const sidecarEdit = fc.oneof(
  fc.record({
    kind: fc.constant('rename' as const),
    key: fc.nat(),
    to: fc.constantFrom('byteorder', 'Gain', 't0ms', 'nsweeps', 'dType', 'chanel', 'unit', 'x'),
  }),
  fc.record({
    kind: fc.constant('set' as const),
    key: fc.constantFrom(
      'dtype',
      'byteOrder',
      'layout',
      'nSweeps',
      'nSamples',
      'nChannels',
      'channel',
      'gain',
      'offset',
      'fs',
      't0Ms',
      'units',
      'data',
      'conditions',
      'sweeps',
    ),
    value: fc.constantFrom<unknown>(
      -1,
      0,
      1,
      2.5,
      1e305,
      -1e305,
      1e20,
      2 ** 53,
      null,
      'x',
      '',
      [],
      {},
      [{}],
      { a: {} },
      true,
      'int8',
      'big',
      'interleaved',
      '../x.bin',
      'kV',
    ),
  }),
  fc.record({ kind: fc.constant('delete' as const), key: fc.nat() }),
  fc.record({
    kind: fc.constant('text' as const),
    at: fc.nat(),
    token: fc.constantFrom('}', '{', ',', '"', 'NaN', '1e400', '\u0000', ']', ':'),
  }),
  fc.record({ kind: fc.constant('data-truncate' as const), at: fc.nat() }),
  fc.record({ kind: fc.constant('data-extend' as const), n: fc.integer({ min: 1, max: 9 }) }),
  fc.record({ kind: fc.constant('data-nan' as const), at: fc.nat() }),
  fc.record({ kind: fc.constant('data-flip' as const), at: fc.nat(), byte: fc.integer({ min: 0, max: 255 }) }),
);

/** The reference decode of a (possibly edited) sidecar and data: the documented fields and defaults, or null. */
function refBinary(metaText: string, raw: Uint8Array): number[] | null {
  let m: Record<string, unknown>;
  try {
    m = JSON.parse(metaText);
  } catch {
    return null;
  }
  if (!m || typeof m !== 'object' || Array.isArray(m)) return null;
  const keys = [
    'data',
    'dtype',
    'byteOrder',
    'layout',
    'nSweeps',
    'nSamples',
    'nChannels',
    'channel',
    'gain',
    'offset',
    'fs',
    't0Ms',
    'units',
    'conditions',
    'sweeps',
  ];
  if (Object.keys(m).some((k) => !keys.includes(k))) return null;
  if (m.data !== 'x.bin') return null; // the only data file this fuzz writes
  const dtype = m.dtype as keyof typeof DT;
  if (typeof dtype !== 'string' || !Object.hasOwn(DT, dtype)) return null;
  const order = m.byteOrder ?? 'little',
    layout = m.layout ?? 'sweep-major';
  if ((order !== 'little' && order !== 'big') || (layout !== 'sweep-major' && layout !== 'interleaved')) return null;
  const int = (v: unknown, lo: number) => (Number.isInteger(v) && (v as number) >= lo ? (v as number) : null);
  const nS = int(m.nSweeps, 1),
    nN = int(m.nSamples, 2),
    nC = int(m.nChannels ?? 1, 1),
    ch = int(m.channel ?? 0, 0);
  if (nS === null || nN === null || nC === null || ch === null || ch >= nC) return null;
  const gain = m.gain ?? 1,
    offset = m.offset ?? 0,
    t0 = m.t0Ms ?? 0;
  const fin = (v: unknown) => typeof v === 'number' && Number.isFinite(v); // JSON's 1e400 parses to Infinity
  if (!fin(gain) || gain === 0 || !fin(offset) || !fin(t0)) return null;
  if (!fin(m.fs) || !((m.fs as number) > 0)) return null;
  if (typeof m.units !== 'string' || !['V', 'mV', 'uV'].includes(m.units.trim().replace(/[µμ]/g, 'u'))) return null;
  const prim = (c: unknown) =>
    c !== null &&
    typeof c === 'object' &&
    !Array.isArray(c) &&
    Object.values(c).every(
      (v) => v === null || ['string', 'boolean'].includes(typeof v) || (typeof v === 'number' && Number.isFinite(v)),
    );
  if (m.conditions !== undefined && !prim(m.conditions)) return null;
  if (m.sweeps !== undefined && (!Array.isArray(m.sweeps) || m.sweeps.length !== nS || !m.sweeps.every(prim)))
    return null;
  const w = DT[dtype];
  if (raw.length !== nS * nN * nC * w) return null;
  const full = dtype === 'int16' ? 32768 : dtype === 'float32' ? 3.4028234663852886e38 : 0;
  if (full && !Number.isFinite((full * Math.abs(gain as number) + Math.abs(offset as number)) * nN)) return null;
  const dv = new DataView(raw.buffer, raw.byteOffset, raw.byteLength);
  const out: number[] = [];
  for (let s = 0; s < nS; s++) {
    for (let i = 0; i < nN; i++) {
      const k = layout === 'interleaved' ? (s * nN + i) * nC + ch : (s * nC + ch) * nN + i;
      const x =
        dtype === 'int16'
          ? dv.getInt16(k * w, order === 'little')
          : dtype === 'float32'
            ? dv.getFloat32(k * w, order === 'little')
            : dv.getFloat64(k * w, order === 'little');
      const v = x * (gain as number) + (offset as number);
      if (!Number.isFinite(v)) return null;
      out.push(v);
    }
  }
  return out;
}

function checkBinary(
  loader: string,
  metaText: string,
  raw: Uint8Array,
  expected: number[] | null,
  valid: boolean,
): boolean {
  const side = join(dir, 'x.json');
  writeFileSync(side, metaText);
  writeFileSync(join(dir, 'x.bin'), raw);
  const r = timed(() => readBinary(side));
  if (r.ms > 10000) return record(loader, 'crash', `took ${r.ms} ms`);
  if (r.error !== undefined) {
    // the sidecar, or the data file it names (whatever an edit made of that name)
    const e = r.error as InputError;
    const named = e instanceof InputError && e.place.file !== undefined && typedNamingFile(e, e.place.file);
    if (!named) return record(loader, 'crash', `${describeError(r.error)} for ${metaText}`);
    if (valid || expected)
      return record(loader, 'crash', `a valid file was rejected: ${describeError(r.error)} for ${metaText}`);
    return record(loader, 'typed-error');
  }
  if (!expected) return record(loader, 'crash', `read a sidecar the format does not allow: ${metaText}`);
  const d = r.value!.data;
  if (d.length !== expected.length)
    return record(loader, 'crash', `length ${d.length} instead of ${expected.length}: ${metaText}`);
  for (let i = 0; i < d.length; i++)
    if (d[i] !== expected[i])
      return record(loader, 'crash', `value ${i}: ${d[i]} instead of ${expected[i]}: ${metaText}`);
  return record(loader, valid ? 'valid-read-correct' : 'corrupt-read-correct');
}

describe('fuzz: binary + sidecar', () => {
  it('valid recordings read back the values a DataView decodes', () => {
    fc.assert(
      fc.property(binFile, (b) => checkBinary('binary', JSON.stringify(b.meta), b.raw, b.expected, true)),
      { seed: SEED + 3, numRuns: runs(1300) },
    );
  });
  it('corrupted sidecars and data: a typed error naming the file, or exactly the reference decode', () => {
    fc.assert(
      fc.property(binFile, fc.array(sidecarEdit, { minLength: 1, maxLength: 3 }), (b, edits) => {
        const meta: Record<string, unknown> = { ...b.meta };
        let raw = b.raw;
        let text: string | null = null;
        for (const e of edits) {
          const keys = Object.keys(meta);
          if (e.kind === 'rename' && keys.length) {
            const k = keys[e.key % keys.length];
            meta[e.to] = meta[k];
            delete meta[k];
          } else if (e.kind === 'set') meta[e.key] = e.value;
          else if (e.kind === 'delete' && keys.length) delete meta[keys[e.key % keys.length]];
          else if (e.kind === 'text') {
            const t = text ?? JSON.stringify(meta);
            const at = e.at % (t.length + 1);
            text = t.slice(0, at) + e.token + t.slice(at);
          } else if (e.kind === 'data-truncate') raw = raw.subarray(0, e.at % (raw.length + 1));
          else if (e.kind === 'data-extend') raw = Uint8Array.from([...raw, ...new Array(e.n).fill(7)]);
          else if (e.kind === 'data-nan' || e.kind === 'data-flip') {
            raw = Uint8Array.from(raw);
            if (raw.length) {
              const at = e.at % raw.length;
              if (e.kind === 'data-flip') raw[at] = e.byte;
              else for (let k = 0; k < 8 && at + k < raw.length; k++) raw[at + k] = 0xff; // NaN pattern in any float width
            }
          }
        }
        const metaText = text ?? JSON.stringify(meta);
        return checkBinary('binary-corrupt', metaText, raw, refBinary(metaText, raw), false);
      }),
      { seed: SEED + 4, numRuns: runs(1500) },
    );
  });
});

// ---------------------------------------------------------------------------------------
// Manifests: conditions joined as documented (defaults, then file, then sweep).
describe('fuzz: manifest', () => {
  const files = ['a.csv', 'b.csv'];
  writeFileSync(join(dir, 'a.csv'), 'time (ms),s1 (uV),s2 (uV)\n0,1,2\n0.02,3,4\n0.04,5,6\n');
  writeFileSync(join(dir, 'b.csv'), 'time (ms);s1 (uV);s2 (uV)\n0;1,5;7\n0,02;8;9\n0,04;10;11\n');
  const cval = fc.oneof(fc.string({ maxLength: 6 }), fc.integer({ min: -5, max: 40 }), fc.boolean(), fc.constant(null));
  const ckey = fc.constantFrom('rig', 'animal', 'note', 'side', 'batch'); // free-form conditions (the schema types the known ones)
  const conds = fc.dictionary(ckey, cval, { maxKeys: 3 });
  const manifest = fc.record({
    defaults: fc.option(conds, { nil: undefined }),
    study: fc.option(fc.string({ maxLength: 8 }), { nil: undefined }),
    series: fc.option(fc.constantFrom('intensity', 'distance', 'dose', 'temperature', 'pulse-width'), {
      nil: undefined,
    }),
    // each file once: a file listed twice with the same reader options is an error (its sweeps would count twice)
    entries: fc.uniqueArray(
      fc.record({
        file: fc.constantFrom(...files),
        conditions: fc.option(conds, { nil: undefined }),
        perSweep: fc.option(fc.tuple(conds, conds), { nil: undefined }),
      }),
      { minLength: 1, maxLength: 2, selector: (e) => e.file },
    ),
    prep: fc.constantFrom('P1', 'P2'),
  });
  type G = {
    defaults?: Record<string, unknown>;
    study?: string;
    series?: string;
    entries: {
      file: string;
      conditions?: Record<string, unknown>;
      perSweep?: [Record<string, unknown>, Record<string, unknown>];
    }[];
    prep: string;
  };
  const toJson = (g: G) => ({
    fascicleManifest: 1,
    ...(g.study !== undefined ? { study: g.study } : {}),
    defaults: { ...(g.defaults ?? {}), preparation: g.prep, ...(g.series ? { series: g.series } : {}) },
    files: g.entries.map((e) => ({
      path: e.file,
      ...(e.conditions ? { conditions: e.conditions } : {}),
      ...(e.perSweep ? { sweeps: e.perSweep } : {}),
    })),
  });
  const values: Record<string, number[]> = { 'a.csv': [1, 3, 5, 2, 4, 6], 'b.csv': [1.5, 8, 10, 7, 9, 11] };
  const expectedConditions = (m: ReturnType<typeof toJson>) =>
    m.files.flatMap((f) => [0, 1].map((s) => ({ ...m.defaults, ...(f.conditions ?? {}), ...(f.sweeps?.[s] ?? {}) })));

  function checkManifest(
    loader: string,
    text: string,
    expected: { data: number[]; conditions: Record<string, unknown>[] } | null,
    valid: boolean,
  ): boolean {
    const p = join(dir, 'm.json');
    writeFileSync(p, text);
    const r = timed(() => readManifest(p));
    if (r.ms > 10000) return record(loader, 'crash', `took ${r.ms} ms`);
    if (r.error !== undefined) {
      if (!(r.error instanceof InputError) || r.error.place.file === undefined)
        return record(loader, 'crash', `${describeError(r.error)} for ${text.slice(0, 300)}`);
      if (valid)
        return record(
          loader,
          'crash',
          `a valid manifest was rejected: ${describeError(r.error)} for ${text.slice(0, 300)}`,
        );
      return record(loader, 'typed-error');
    }
    if (!expected) return record(loader, valid ? 'valid-read-correct' : 'corrupt-read-correct'); // checked by the caller
    const s = r.value!;
    if ([...s.data].some((v, i) => v !== expected.data[i]) || s.data.length !== expected.data.length)
      return record(loader, 'crash', `wrong samples for ${text.slice(0, 300)}`);
    for (let i = 0; i < s.nSweeps; i++) {
      for (const [k, v] of Object.entries(expected.conditions[i]))
        if (s.conditions[i][k] !== v)
          return record(
            loader,
            'crash',
            `sweep ${i} condition ${k}: ${String(s.conditions[i][k])} instead of ${String(v)} for ${text.slice(0, 300)}`,
          );
    }
    return record(loader, valid ? 'valid-read-correct' : 'corrupt-read-correct');
  }

  it('valid manifests join every sweep with its conditions and samples', () => {
    fc.assert(
      fc.property(manifest, (g) => {
        const m = toJson(g as G);
        return checkManifest(
          'manifest',
          JSON.stringify(m),
          { data: m.files.flatMap((f) => values[f.path]), conditions: expectedConditions(m) },
          true,
        );
      }),
      { seed: SEED + 5, numRuns: runs(400) },
    );
  });

  const mEdit = fc.oneof(
    fc.record({
      kind: fc.constant('key' as const),
      where: fc.constantFrom('top', 'file', 'analysis', 'step', 'options'),
      key: fc.constantFrom(
        'analyis',
        'lowpass',
        'windw',
        'Gain',
        'byteorder',
        'classpreset',
        'required',
        'sweep',
        'paths',
        'constructor',
        '__proto__',
        'prototype',
      ),
    }),
    fc.record({
      kind: fc.constant('value' as const),
      field: fc.constantFrom(
        'fascicleManifest',
        'files',
        'required',
        'classPreset',
        'defaults',
        'series',
        'path',
        'format',
        'sweeps',
        'analysis',
      ),
      value: fc.constantFrom<unknown>(
        2,
        0,
        null,
        'x',
        '',
        [],
        {},
        ['constructor'],
        ['toString'],
        'distances',
        'amfibian',
        [[]],
        { a: 1 },
        1e308,
        '../../../etc/passwd',
        'nope.csv',
        '/dev/zero',
      ),
    }),
    fc.record({
      kind: fc.constant('text' as const),
      at: fc.nat(),
      token: fc.constantFrom('}', '{', ',', '"', '[', ']', 'NaN', '1e400', '\u0000', ':', '\\'),
    }),
    fc.record({ kind: fc.constant('deep' as const), depth: fc.constantFrom(40, 1000, 100000) }),
  );

  // the documented manifest (README, schema/manifest.schema.json, PipelineOptions), checked the plain way
  const TOP = [
    'fascicleManifest',
    'study',
    'description',
    'species',
    'nerve',
    'classPreset',
    'required',
    'defaults',
    'analysis',
    'files',
  ];
  const FILE = ['path', 'format', 'options', 'conditions', 'sweeps'];
  const OPTIONS = ['delimiter', 'decimal', 'layout', 'timeUnit', 'units', 'stimulusAt'];
  const STEPS = [
    'baseline',
    'artifact',
    'hum',
    'filter',
    'averageRepeats',
    'poolSites',
    'components',
    'doseResponse',
    'recruitment',
    'strengthDuration',
    'temperature',
  ];
  const BASELINE = ['window', 'method', 'lateWindow'];
  const SERIES = ['intensity', 'distance', 'dose', 'temperature', 'pulse-width'];
  const plain = (x: unknown): x is Record<string, unknown> => x !== null && typeof x === 'object' && !Array.isArray(x);
  const primitive = (c: unknown) =>
    plain(c) &&
    Object.values(c).every(
      (v) =>
        v === null || typeof v === 'string' || typeof v === 'boolean' || (typeof v === 'number' && Number.isFinite(v)),
    );
  // README "Known conditions" (and the paired-pulse, train and bipolar keys): a key that differs from one of them only
  // in case or punctuation ("series{", "distance_mm") is a typo, refused with the nearest name
  const KNOWN = [
    'preparation',
    'preparationType',
    'intensity',
    'intensityUnit',
    'pulseWidthMs',
    'site',
    'distanceMm',
    'referenceDistanceMm',
    'drug',
    'concentration',
    'concentrationUnit',
    'temperatureC',
    'acquiredS',
    'repeat',
    'polarity',
    'epoch',
    'series',
    'pulsePair',
    'intervalMs',
    'trainHz',
    'trainPulses',
    'pulsesMs',
  ];
  const letters = (k: string) => k.toLowerCase().replace(/[^a-z0-9]/g, '');
  const typoKey = (k: string) => !KNOWN.includes(k) && KNOWN.some((q) => letters(q) === letters(k));
  const condOk = (c: unknown) =>
    c === undefined ||
    (primitive(c) &&
      !Object.keys(c as object).some(typoKey) &&
      (!Object.hasOwn(c as object, 'series') ||
        (c as Record<string, unknown>).series === null ||
        SERIES.includes((c as Record<string, string>).series)) &&
      (!Object.hasOwn(c as object, 'preparation') || typeof (c as Record<string, unknown>).preparation === 'string'));
  function refManifestOk(m: unknown): boolean {
    if (!plain(m) || Object.keys(m).some((k) => !TOP.includes(k)) || m.fascicleManifest !== 1) return false;
    for (const k of ['study', 'description', 'species', 'nerve'])
      if (m[k] !== undefined && typeof m[k] !== 'string') return false;
    if (
      m.classPreset !== undefined &&
      !['mammalian', 'mammalian-detailed', 'amphibian'].includes(m.classPreset as string)
    )
      return false;
    if (m.required !== undefined && (!Array.isArray(m.required) || !m.required.every((r) => typeof r === 'string')))
      return false;
    if (!condOk(m.defaults)) return false;
    if (m.analysis !== undefined) {
      if (!plain(m.analysis) || Object.keys(m.analysis).some((k) => !STEPS.includes(k))) return false;
      const b = m.analysis.baseline;
      if (b !== undefined && b !== false && (!plain(b) || Object.keys(b).some((k) => !BASELINE.includes(k))))
        return false;
      if (Object.keys(m.analysis).some((k) => k !== 'baseline')) return false; // the fuzz writes no other step
    }
    if (!Array.isArray(m.files) || !m.files.length) return false;
    for (const f of m.files) {
      if (
        !plain(f) ||
        Object.keys(f).some((k) => !FILE.includes(k)) ||
        typeof f.path !== 'string' ||
        !(f.path in values)
      )
        return false;
      if (f.format !== undefined && f.format !== 'delimited') return false;
      if (f.options !== undefined && (!plain(f.options) || Object.keys(f.options).some((k) => !OPTIONS.includes(k))))
        return false;
      if (!condOk(f.conditions)) return false;
      if (f.sweeps !== undefined && (!Array.isArray(f.sweeps) || f.sweeps.length !== 2 || !f.sweeps.every(condOk)))
        return false;
    }
    // the same file twice with the same reader options (README: each file once)
    const ids = m.files.map((f) => JSON.stringify([(f as Record<string, unknown>).path, f.options ?? null]));
    if (new Set(ids).size !== ids.length) return false;
    const required = (m.required as string[] | undefined) ?? ['preparation'];
    for (const c of expectedConditions(m as ReturnType<typeof toJson>)) {
      for (const k of required) if (!Object.hasOwn(c, k) || (c as Record<string, unknown>)[k] === null) return false;
    }
    return true;
  }

  it('corrupted manifests: a typed error naming the file, or the documented join', () => {
    fc.assert(
      fc.property(manifest, fc.array(mEdit, { minLength: 1, maxLength: 2 }), (g, edits) => {
        const m = toJson(g as G) as Record<string, unknown> & {
          files: Record<string, unknown>[];
          defaults: Record<string, unknown>;
        };
        let text: string | null = null;
        for (const e of edits) {
          if (e.kind === 'key') {
            // an object to add the key to (a value an earlier edit made a non-object is left alone)
            const obj = (x: unknown) => (x !== null && typeof x === 'object' ? (x as Record<string, unknown>) : {});
            const sub = (o: Record<string, unknown>, k: string) => obj(o[k] === undefined ? (o[k] = {}) : o[k]);
            const f0 = obj(Array.isArray(m.files) ? m.files[0] : undefined);
            const target =
              e.where === 'top'
                ? m
                : e.where === 'file'
                  ? f0
                  : e.where === 'analysis'
                    ? sub(m, 'analysis')
                    : e.where === 'step'
                      ? sub(sub(m, 'analysis'), 'baseline')
                      : sub(f0, 'options');
            Object.defineProperty(target, e.key, { value: 1, enumerable: true, configurable: true, writable: true });
          } else if (e.kind === 'value') {
            if (e.field === 'series') {
              if (m.defaults !== null && typeof m.defaults === 'object') m.defaults.series = e.value;
            } else if (e.field === 'path' || e.field === 'format' || e.field === 'sweeps') {
              const f0 = Array.isArray(m.files) ? (m.files[0] as unknown) : undefined;
              if (f0 !== null && typeof f0 === 'object') (f0 as Record<string, unknown>)[e.field] = e.value;
            } else m[e.field] = e.value;
          } else if (e.kind === 'text') {
            const t = text ?? JSON.stringify(m);
            const at = e.at % (t.length + 1);
            text = t.slice(0, at) + e.token + t.slice(at);
          } else if (e.kind === 'deep') {
            const t = text ?? JSON.stringify(m);
            text = t.replace(
              '"fascicleManifest":1',
              `"fascicleManifest":1,"analysis":{"components":{"preset":${'['.repeat(e.depth)}${']'.repeat(e.depth)}}}`,
            );
          }
        }
        const finalText = text ?? JSON.stringify(m);
        // the oracle for a manifest that loads: the documented join of what the JSON says
        let parsed: unknown;
        try {
          parsed = JSON.parse(finalText);
        } catch {
          parsed = undefined;
        }
        const p = parsed as ReturnType<typeof toJson> | undefined;
        const r = timed(() => readManifest((writeFileSync(join(dir, 'm.json'), finalText), join(dir, 'm.json'))));
        if (r.error === undefined) {
          // it loaded: the JSON must be a manifest as documented, of the files written here, joined as documented
          if (!refManifestOk(p))
            return record(
              'manifest-corrupt',
              'crash',
              `loaded a manifest the documentation does not allow: ${finalText.slice(0, 300)}`,
            );
          return checkManifest(
            'manifest-corrupt',
            finalText,
            { data: p.files.flatMap((f) => values[f.path]), conditions: expectedConditions(p) },
            false,
          );
        }
        if (r.ms > 10000) return record('manifest-corrupt', 'crash', `took ${r.ms} ms`);
        if (!(r.error instanceof InputError) || r.error.place.file === undefined)
          return record('manifest-corrupt', 'crash', `${describeError(r.error)} for ${finalText.slice(0, 300)}`);
        if (refManifestOk(p))
          return record(
            'manifest-corrupt',
            'crash',
            `a valid manifest was rejected: ${describeError(r.error)} for ${finalText.slice(0, 300)}`,
          );
        return record('manifest-corrupt', 'typed-error');
      }),
      { seed: SEED + 6, numRuns: runs(1000) },
    );
  });
});

describe('fuzz: totals', () => {
  it('no crash in any loader, at least 10,000 files at scale 1', () => {
    const all = Object.values(counts)
      .flatMap((c) => Object.values(c))
      .reduce((a, b) => a + b, 0);
    const crash = Object.values(counts).reduce((a, c) => a + c.crash, 0);
    expect(crash, crashes.join('\n')).toBe(0);
    if (SCALE >= 1) expect(all).toBeGreaterThanOrEqual(10000);
    expect(ConfigError.prototype).toBeInstanceOf(InputError); // configuration errors are typed input errors too
  });
});
