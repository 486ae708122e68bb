/**
 * Delimited text loader (CSV, semicolon-separated, TSV), wide or long layout.
 *
 * Wide: a time column, then one column per sweep: `time (ms),s1 (mV),s2 (mV)`.
 * Long: three columns sweep, time and value in any order: `sweep;time (ms);signal (uV)`.
 * Delimiters comma, semicolon or tab (detected from the header); decimal point or
 * decimal comma (detected: a comma decimal is only possible with ';' or tab);
 * units in headers as `name (unit)` or `name [unit]`; a UTF-8 byte-order mark and
 * CRLF line ends are accepted. Lines starting with '#' are comments.
 */
import { runSweeps, sharedSamples, threads } from '../parallel/pool';
import { InputError, OptionError } from '../errors';
import { checkKeys, conditionsProblem, finite, nearest, oneOf } from '../validate';
import { SweepSet, type Conditions } from '../sweeps/SweepSet';
import { parseSignalUnit, parseTimeUnit, splitHeader, timeToMs, type SignalUnit, type TimeUnit } from '../sweeps/units';
import { allocSamples, readInput } from './files';
import { fieldText, parseNumber } from './numbers';
import { PLAIN_BLOCK, flushBlock, plainRow } from './plainRows';
import { VERSION } from '../version';

/** Wide files with at least this many bytes of data (read into shared memory) are parsed on all threads. */
export const PARALLEL_CSV_BYTES = 1 << 23;

export interface DelimitedOptions {
  /** Field delimiter; 'auto' (default) detects tab, semicolon or comma from the header line. */
  delimiter?: ',' | ';' | '\t' | 'auto';
  /** Decimal separator; 'auto' (default) picks ',' when the delimiter is not ',' and a data field holds a comma. */
  decimal?: '.' | ',' | 'auto';
  /** 'auto' (default) picks long when the header has sweep, time and value columns, else wide. */
  layout?: 'wide' | 'long' | 'auto';
  /** Time unit when the header gives none. No default: a header without a unit and no option is an error. */
  timeUnit?: TimeUnit;
  /** Signal unit when the header gives none. */
  units?: SignalUnit;
  /** Time of the stimulus on the file's time axis, in the file's time unit (default 0). */
  stimulusAt?: number;
  /** Conditions applied to every sweep of the file. */
  conditions?: Conditions;
}

export const delimitedDefaults = { delimiter: 'auto', decimal: 'auto', layout: 'auto', stimulusAt: 0 } as const;

/** The options readDelimited accepts (DelimitedOptions). */
export const DELIMITED_KEYS = ['delimiter', 'decimal', 'layout', 'timeUnit', 'units', 'stimulusAt', 'conditions'] as const;
/** A header line longer than this is refused before it is decoded (16 MB: about 800,000 sweep columns). */
export const MAX_HEADER_BYTES = 1 << 24;

const SWEEP_NAMES = ['sweep', 'trace', 'sweep_id', 'sweepid', 'episode'];
const TIME_NAMES = ['time', 't'];
const VALUE_NAMES = ['value', 'signal', 'voltage', 'amplitude', 'potential', 'v'];

/** Load a delimited text file into a SweepSet. @throws InputError naming file, line and column. */
export function readDelimited(path: string, options: DelimitedOptions = {}): SweepSet {
  // large files go to shared memory so that all threads can parse them
  const { bytes, source } = readInput(path, { shared: (size) => size >= PARALLEL_CSV_BYTES && threads() > 1 });
  return parseDelimited(bytes, path, options, source);
}

interface LineCursor { start: number; end: number; line: number }

export function parseDelimited(bytes: Uint8Array, file: string, options: DelimitedOptions = {}, source?: import('../sweeps/SweepSet').Source): SweepSet {
  checkKeys('readDelimited options', options, DELIMITED_KEYS);
  const opts = { ...delimitedDefaults, ...options };
  // options are checked at the call, before the file is read
  oneOf('delimiter', opts.delimiter, [',', ';', '\t', 'auto'] as const);
  oneOf('decimal', opts.decimal, ['.', ',', 'auto'] as const);
  oneOf('layout', opts.layout, ['wide', 'long', 'auto'] as const);
  if (opts.timeUnit !== undefined) oneOf('timeUnit', opts.timeUnit, ['s', 'ms', 'us'] as const);
  if (opts.units !== undefined) oneOf('units', opts.units, ['V', 'mV', 'uV'] as const);
  finite('stimulusAt', opts.stimulusAt);
  let pos = 0;
  if (bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf) pos = 3;
  const n = bytes.length;
  let lineNo = 0;
  // next non-empty, non-comment line
  const next = (): LineCursor | null => {
    while (pos < n) {
      const start = pos;
      let end = bytes.indexOf(10, pos);
      if (end < 0) end = n;
      pos = end + 1;
      lineNo++;
      let e = end;
      if (e > start && bytes[e - 1] === 13) e--;
      let s = start;
      while (s < e && (bytes[s] === 32 || bytes[s] === 9 && false)) s++;
      if (s === e) continue;
      if (bytes[s] === 35) continue; // '#'
      return { start, end: e, line: lineNo };
    }
    return null;
  };
  const header = next();
  if (!header) throw new InputError({ file }, 'the file has no header line', 'a header such as "time (ms),sweep 1 (mV)"');
  if (header.end - header.start > MAX_HEADER_BYTES) {
    throw new InputError({ file, line: header.line },
      `the header line is ${header.end - header.start} bytes long`,
      `a header line under ${MAX_HEADER_BYTES} bytes (is this a delimited text file?)`);
  }
  const headerText = Buffer.from(bytes.buffer, bytes.byteOffset + header.start, header.end - header.start).toString('utf8');
  let delim: string = opts.delimiter;
  if (delim === 'auto') delim = headerText.includes('\t') ? '\t' : headerText.includes(';') ? ';' : ',';
  if (![',', ';', '\t'].includes(delim)) throw new InputError({ file, field: 'delimiter' }, `invalid delimiter ${JSON.stringify(delim)}`, 'one of ",", ";", "\\t"');
  const dcode = delim.charCodeAt(0);
  const names = headerText.split(delim).map((h) => h.replace(/^"|"$/g, ''));
  const heads = names.map(splitHeader);
  if (names.length < 2) throw new InputError({ file, line: header.line }, `the header has ${names.length} column`, 'at least 2 columns (time and one sweep) with the delimiter ' + JSON.stringify(delim));
  const lower = heads.map((h) => h.name.toLowerCase());
  const idxOf = (cands: string[]) => lower.findIndex((h) => cands.includes(h));
  let layout: string = opts.layout;
  if (layout === 'auto') layout = names.length === 3 && idxOf(SWEEP_NAMES) >= 0 && idxOf(TIME_NAMES) >= 0 && idxOf(VALUE_NAMES) >= 0 ? 'long' : 'wide';
  if (layout === 'long') {
    // a long file needs a sweep, a time and a value column, each found by name
    for (const [role, cands] of [['sweep', SWEEP_NAMES], ['time', TIME_NAMES], ['value', VALUE_NAMES]] as const) {
      if (idxOf(cands as unknown as string[]) >= 0) continue;
      const near = lower.map((h) => nearest(h, cands)).find((x) => x !== null);
      throw new InputError({ file, line: header.line },
        `the long layout needs a ${role} column, and the header (${names.map((x) => JSON.stringify(x)).join(', ')}) has none${near ? ` (did you mean "${near}"?)` : ''}`,
        `a column named one of ${cands.join(', ')}`);
    }
    if (names.length !== 3) throw new InputError({ file, line: header.line },
      `the long layout has ${names.length} columns`,
      '3 columns: sweep, time and value');
  }

  // decimal separator
  let dec = 46;
  if (opts.decimal === ',') dec = 44;
  else if (opts.decimal === 'auto' && delim !== ',') {
    // any comma in a data line of a ';' or tab file can only be a decimal comma (comment lines do not count)
    for (let k = bytes.indexOf(44, pos); k >= 0; ) {
      let ls = k;
      while (ls > pos && bytes[ls - 1] !== 10) ls--;
      while (ls < k && bytes[ls] === 32) ls++;
      if (bytes[ls] !== 35) { dec = 44; break; }
      const le = bytes.indexOf(10, k);
      k = le < 0 ? -1 : bytes.indexOf(44, le);
    }
  }
  if (dec === 44 && delim === ',') throw new InputError({ file }, 'decimal comma with comma delimiter', 'a semicolon or tab delimiter when numbers use a decimal comma');

  const unitOf = (col: number, kind: 'time' | 'signal'): string | undefined => heads[col].unit;
  const timeCol = layout === 'long' ? idxOf(TIME_NAMES) : 0;
  const tUnitLabel = unitOf(timeCol, 'time');
  let tUnit: TimeUnit | undefined = opts.timeUnit;
  if (tUnitLabel !== undefined) {
    tUnit = parseTimeUnit(tUnitLabel);
    if (!tUnit) throw new InputError({ file, line: header.line, column: timeCol + 1 }, `unknown time unit "${tUnitLabel}"`, 'one of s, ms, us');
  }
  if (!tUnit) throw new InputError({ file, line: header.line, column: timeCol + 1 }, `the time column "${names[timeCol]}" gives no unit`, 'a unit in the header, e.g. "time (ms)", or the timeUnit option');

  const valueCols = layout === 'long' ? [idxOf(VALUE_NAMES)] : names.map((_, i) => i).slice(1);
  let sUnit: SignalUnit | undefined;
  for (const c of valueCols) {
    const lab = unitOf(c, 'signal');
    const u = lab === undefined ? opts.units : parseSignalUnit(lab);
    if (lab !== undefined && !u) throw new InputError({ file, line: header.line, column: c + 1 }, `unknown signal unit "${lab}"`, 'one of V, mV, uV');
    if (!u) throw new InputError({ file, line: header.line, column: c + 1 }, `column "${names[c]}" gives no signal unit`, 'a unit in the header, e.g. "sweep 1 (mV)", or the units option');
    if (sUnit && u !== sUnit) throw new InputError({ file, line: header.line, column: c + 1 }, `signal unit ${u} differs from ${sUnit} in an earlier column`, 'one signal unit for all sweeps of a file');
    sUnit = u;
  }
  const units = sUnit as SignalUnit;
  const ncol = names.length;

  // count data lines (upper bound) to allocate once; for a large wide file read into
  // shared memory, also cut the data region into one part per thread at line starts
  const parts = layout === 'wide' && bytes.buffer instanceof SharedArrayBuffer && n - pos >= PARALLEL_CSV_BYTES ? threads() : 1;
  const sharedOrNot = (bytesNeeded: number) => (parts > 1 ? new SharedArrayBuffer(bytesNeeded) : new ArrayBuffer(bytesNeeded));
  const starts = new Float64Array(sharedOrNot((parts + 1) * 8));
  const firstRows = new Float64Array(sharedOrNot((parts + 1) * 8));
  starts[0] = pos;
  starts[parts] = n;
  for (let j = 1; j < parts; j++) {
    const e = bytes.indexOf(10, pos + Math.floor(((n - pos) * j) / parts));
    starts[j] = e < 0 ? n : e + 1;
  }
  let rowsMax = 0;
  let nextCut = 1;
  for (let k = pos; k < n; ) {
    while (nextCut < parts && starts[nextCut] <= k) firstRows[nextCut++] = rowsMax;
    const e = bytes.indexOf(10, k);
    rowsMax++;
    if (e < 0) break;
    k = e + 1;
  }
  while (nextCut <= parts) firstRows[nextCut++] = rowsMax;
  // a valid row has at least ncol digits and ncol - 1 delimiters, so the rows that can be
  // valid are bounded by the bytes: allocate for no more (a file of many short lines and
  // a very wide header then cannot ask for more memory than its size justifies)
  const rowsCap = Math.floor((n - pos + 1) / (2 * ncol)) + 1;
  const lineCount = rowsMax;
  if (rowsMax > rowsCap) rowsMax = rowsCap;

  const fieldStarts = new Int32Array(ncol + 1);
  const splitLine = (l: LineCursor): void => {
    let c = 0;
    fieldStarts[0] = l.start;
    for (let k = l.start; k < l.end; k++) {
      if (bytes[k] === dcode) {
        c++;
        if (c >= ncol) {
          throw new InputError({ file, line: l.line, column: c + 1 }, `the row has more than ${ncol} fields`, `${ncol} fields as in the header`);
        }
        fieldStarts[c] = k + 1;
      }
    }
    if (c !== ncol - 1) throw new InputError({ file, line: l.line, column: c + 1 }, `the row has ${c + 1} fields`, `${ncol} fields as in the header`);
    fieldStarts[ncol] = l.end + 1;
  };
  const num = (l: LineCursor, c: number): number => {
    const s = fieldStarts[c];
    const e = fieldStarts[c + 1] - 1;
    const v = parseNumber(bytes, s, e, dec);
    if (Number.isFinite(v)) return v;
    const text = fieldText(bytes, s, e);
    const what = /^[+-]?(nan|inf|infinity)$/i.test(text) ? `a non-finite value "${text}"` : text === '' ? 'an empty cell' : `a non-numeric cell "${text.slice(0, 40)}"`;
    throw new InputError({ file, line: l.line, column: c + 1 }, what, `a finite number${dec === 44 ? ' with a decimal comma' : ''}`);
  };

  let time: Float64Array;
  let data: Float64Array;
  let nSweeps: number;
  let nSamples: number;
  const conds: Conditions[] = [];
  const base = opts.conditions ?? {};
  const cp = conditionsProblem(base);
  if (cp) throw new OptionError(`invalid conditions: ${cp}; must be an object of strings, finite numbers, booleans or null`);
  if (layout === 'wide') {
    nSweeps = ncol - 1;
    const t = new Float64Array(sharedOrNot(rowsMax * 8));
    let buf = allocSamples(nSweeps * rowsMax, file, `${nSweeps} sweeps x up to ${rowsMax} rows`);
    let r = 0;
    const lines: number[] = [];
    // all threads on the plain fast path; any other line sends the whole file to the exact parser below
    let parallelRows = -1;
    if (parts > 1 && lineCount === rowsMax) {
      const res = runSweeps('csvWide', { bytes, starts, firstRows, ncol, rowsMax, dec, dcode, out: buf, t }, parts, n - pos);
      if (res.every((x) => x >= 0)) parallelRows = res.reduce((x, y) => x + y, 0);
    }
    // rows are gathered in a small row-major block and written sweep-major a block at a
    // time, so memory is written in runs instead of one value per sweep per row
    const BLOCK = PLAIN_BLOCK;
    const scratch = new Float64Array(BLOCK * nSweeps);
    const flush = (upTo: number) => {
      const first = upTo - ((upTo - 1) & (BLOCK - 1)) - 1;
      flushBlock(scratch, nSweeps, buf, rowsMax, first, upTo - first);
    };
    const fastRow = (l: LineCursor, row: number): boolean => plainRow(bytes, l.start, l.end, ncol, dec, dcode, t, row, scratch, row & (BLOCK - 1));
    if (parallelRows >= 0) {
      r = parallelRows; // every line after the header was a data row
    } else for (let l = next(); l; l = next()) {
      if (!fastRow(l, r)) {
        // slow path: exact field splitting, errors with line and column, any number syntax
        splitLine(l);
        t[r] = num(l, 0);
        for (let c = 1; c < ncol; c++) scratch[(r & (BLOCK - 1)) * nSweeps + c - 1] = num(l, c);
      }
      lines.push(l.line);
      r++;
      if ((r & (BLOCK - 1)) === 0) flush(r);
    }
    if (parallelRows < 0 && r & (BLOCK - 1)) flush(r);
    nSamples = r;
    if (nSamples < 2) throw new InputError({ file }, `the file has ${nSamples} data row${nSamples === 1 ? '' : 's'}`, 'at least 2 samples per sweep');
    if (nSamples !== rowsMax) {
      const packed = sharedSamples(nSweeps * nSamples);
      for (let s = 0; s < nSweeps; s++) packed.set(buf.subarray(s * rowsMax, s * rowsMax + nSamples), s * nSamples);
      buf = packed;
    }
    data = buf;
    time = t.subarray(0, nSamples);
    checkTime(time, file, parallelRows >= 0 ? (i) => header.line + 1 + i : (i) => lines[i], 1);
    for (let s = 0; s < nSweeps; s++) conds.push({ ...base, label: heads[s + 1].name, fileSweep: s });
  } else {
    const sc = idxOf(SWEEP_NAMES), tc = idxOf(TIME_NAMES), vc = idxOf(VALUE_NAMES);
    const bySweep = new Map<string, { t: number[]; v: number[]; lines: number[] }>();
    for (let l = next(); l; l = next()) {
      splitLine(l);
      const id = fieldText(bytes, fieldStarts[sc], fieldStarts[sc + 1] - 1);
      if (id === '') throw new InputError({ file, line: l.line, column: sc + 1 }, 'an empty sweep id', 'a sweep id');
      let g = bySweep.get(id);
      if (!g) bySweep.set(id, (g = { t: [], v: [], lines: [] }));
      g.t.push(num(l, tc));
      g.v.push(num(l, vc));
      g.lines.push(l.line);
    }
    const groups = [...bySweep.entries()];
    if (groups.length === 0) throw new InputError({ file }, 'the file has no data rows', 'rows of sweep, time, value');
    nSweeps = groups.length;
    nSamples = groups[0][1].t.length;
    if (nSamples < 2) throw new InputError({ file, sweep: 0 }, `sweep "${groups[0][0]}" has ${nSamples} sample`, 'at least 2 samples per sweep');
    time = Float64Array.from(groups[0][1].t);
    checkTime(time, file, (i) => groups[0][1].lines[i], tc + 1);
    data = sharedSamples(nSweeps * nSamples);
    groups.forEach(([id, g], s) => {
      if (g.t.length !== nSamples) {
        throw new InputError({ file, line: g.lines[g.lines.length - 1], sweep: s }, `sweep "${id}" has ${g.t.length} samples`, `${nSamples} samples as in sweep "${groups[0][0]}"`);
      }
      for (let i = 0; i < nSamples; i++) {
        if (Math.abs(g.t[i] - time[i]) > 1e-6 * Math.max(1, Math.abs(time[i]))) {
          throw new InputError({ file, line: g.lines[i], column: tc + 1, sweep: s }, `sweep "${id}" has time ${g.t[i]} at sample ${i}`, `the time axis of sweep "${groups[0][0]}" (${time[i]})`);
        }
        data[s * nSamples + i] = g.v[i];
      }
      conds.push({ ...base, label: id, fileSweep: s });
    });
  }
  const f = timeToMs(tUnit);
  const dtMs = ((time[nSamples - 1] - time[0]) / (nSamples - 1)) * f;
  const fs = 1000 / dtMs;
  const t0Ms = (time[0] - (opts.stimulusAt ?? 0)) * f;
  return new SweepSet({
    data, nSweeps, nSamples, fs, t0Ms, units,
    conditions: conds.map((c) => ({ ...c, file })),
    sources: source ? [source] : [],
    history: [{ verb: 'readDelimited', options: { path: file, ...opts, delimiter: delim, decimal: dec === 44 ? ',' : '.', layout, timeUnit: tUnit, units }, version: VERSION }],
  });
}

/** Time must increase and be evenly sampled (each sample within 1% of a sample interval of the line through the ends). */
function checkTime(t: Float64Array, file: string, lineOf: (i: number) => number, column: number): void {
  const n = t.length;
  const dt = (t[n - 1] - t[0]) / (n - 1);
  for (let i = 1; i < n; i++) {
    if (!(t[i] > t[i - 1])) {
      throw new InputError({ file, line: lineOf(i), column }, `time ${t[i]} does not increase (previous ${t[i - 1]})`, 'strictly increasing time');
    }
  }
  const tol = 0.01 * dt;
  for (let i = 0; i < n; i++) {
    const d = t[i] - (t[0] + i * dt);
    if (Math.abs(d) > tol) {
      throw new InputError({ file, line: lineOf(i), column }, `uneven sampling: time ${t[i]} is ${d.toPrecision(3)} off the regular grid (interval ${dt.toPrecision(6)})`, 'evenly sampled time, within 1% of a sample interval');
    }
  }
}
