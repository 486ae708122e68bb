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
import { runSweeps, sharedBytes, sharedSamples, threads } from '../parallel/pool';
import { InputError, OptionError } from '../errors';
import { checkKeys, conditionsProblem, finite, nearest, oneOf } from '../validate';
import { SweepSet, type Conditions } from '../sweeps/SweepSet';
import { parseSignalUnit, parseTimeUnit, splitHeader, timeToMs, type SignalUnit, type TimeUnit } from '../sweeps/units';
import { readSync, closeSync } from 'node:fs';
import { allocSamples, lazySource, openInput, readInput } from './files';
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
export const DELIMITED_KEYS = [
  'delimiter',
  'decimal',
  'layout',
  'timeUnit',
  'units',
  'stimulusAt',
  'conditions',
] as const;
/** A header line longer than this is refused before it is decoded (16 MB: about 800,000 sweep columns). */
export const MAX_HEADER_BYTES = 1 << 24;

const SWEEP_NAMES = ['sweep', 'trace', 'sweep_id', 'sweepid', 'episode'];
const TIME_NAMES = ['time', 't'];
const VALUE_NAMES = ['value', 'signal', 'voltage', 'amplitude', 'potential', 'v'];

/** Wide files of at least this many bytes are read part by part (STREAM_PART_BYTES) into the samples. */
export const STREAM_CSV_BYTES = 1 << 24;
/** The part of a file read at a time when streaming (grown when one line is longer). */
export const STREAM_PART_BYTES = 1 << 24;

/** Load a delimited text file into a SweepSet. @throws InputError naming file, line and column. */
export function readDelimited(path: string, options: DelimitedOptions = {}): SweepSet {
  // a large wide file of plain rows is parsed part by part straight into the samples, so the whole
  // text and the samples are never held together; anything else is read whole and parsed below
  const streamed = streamWide(path, options);
  if (streamed) return streamed;
  // large files go to shared memory so that all threads can parse them
  const { bytes, source } = readInput(path, { shared: (size) => size >= PARALLEL_CSV_BYTES && threads() > 1 });
  return parseDelimited(bytes, path, options, source);
}

/**
 * A large wide file whose data lines are all plain rows (the fast path of ./plainRows),
 * read in parts of STREAM_PART_BYTES: the header (and two rows) by parseDelimited itself, a
 * first pass counting the rows, then each part parsed (on all threads) into the samples.
 * The numbers are those of the fast path, which parseDelimited uses for the same rows,
 * and the set is built as parseDelimited builds it. Returns null, having kept nothing,
 * for any other file (or any doubt): the caller then reads the file whole, which gives
 * the same result or names the error.
 */
export function streamWide(path: string, options: DelimitedOptions): SweepSet | null {
  const { fd, stat } = openInput(path);
  try {
    const size = stat.size;
    if (size < STREAM_CSV_BYTES) return null;
    const readAt = (buf: Uint8Array, len: number, off: number): boolean => {
      for (let got = 0; got < len;) {
        const r = readSync(fd, buf, got, len - got, off + got);
        if (r <= 0) return false;
        got += r;
      }
      return true;
    };
    // the header line as parseDelimited finds it (the first line not empty or blank and not a '#' comment), then two rows
    let head: Uint8Array | null = null;
    let pos = -1,
      headerLine = 0,
      prefixEnd = -1;
    for (let L = Math.min(size, 1 << 20); ; L = Math.min(size, 4 * L)) {
      head = new Uint8Array(L);
      if (!readAt(head, L, 0)) return null;
      let p = head[0] === 0xef && head[1] === 0xbb && head[2] === 0xbf ? 3 : 0;
      let line = 0;
      pos = -1;
      while (p < L) {
        const start = p;
        const end = head.indexOf(10, p);
        if (end < 0) break;
        p = end + 1;
        line++;
        let e = end;
        if (e > start && head[e - 1] === 13) e--;
        let q = start;
        while (q < e && head[q] === 32) q++;
        if (q === e || head[q] === 35) continue;
        pos = p;
        headerLine = line;
        break;
      }
      const k1 = pos < 0 ? -1 : head.indexOf(10, pos);
      const k2 = k1 < 0 ? -1 : head.indexOf(10, k1 + 1);
      if (k2 >= 0) {
        prefixEnd = k2 + 1;
        break;
      }
      if (L === size || L > MAX_HEADER_BYTES) return null;
    }
    let first: SweepSet;
    try {
      first = parseDelimited(head.subarray(0, prefixEnd), path, options);
    } catch {
      return null; // read whole, the file gives the same error with its place
    }
    head = null;
    const how = first.history[0].options as { layout: string; delimiter: string; decimal: string; timeUnit: TimeUnit };
    if (how.layout !== 'wide') return null;
    const dec = how.decimal === ',' ? 44 : 46;
    const dcode = how.delimiter.charCodeAt(0);
    // a ';' or tab file may have a decimal comma further down: any comma at all sends it to the whole reader
    const commaDecides = how.delimiter !== ',' && (options.decimal === undefined || options.decimal === 'auto');
    const ncol = first.nSweeps + 1;
    const nSweeps = first.nSweeps;
    const T = threads();
    let B = STREAM_PART_BYTES;
    let part = T > 1 ? sharedBytes(B) : new Uint8Array(B);
    // pass 1: rows (line starts after the header), as parseDelimited counts them
    let newlines = 0;
    for (let off = pos; off < size; off += B) {
      const len = Math.min(B, size - off);
      if (!readAt(part, len, off)) return null;
      const view = Buffer.from(part.buffer, part.byteOffset, len); // Buffer's indexOf is a fast byte search
      for (let k = view.indexOf(10); k >= 0; k = view.indexOf(10, k + 1)) newlines++;
      if (commaDecides && view.indexOf(44) >= 0) return null;
    }
    if (pos >= size) return null;
    const last = new Uint8Array(1);
    if (!readAt(last, 1, size - 1)) return null;
    const rowsMax = newlines + (last[0] === 10 ? 0 : 1);
    if (rowsMax < 2 || rowsMax > Math.floor((size - pos + 1) / (2 * ncol)) + 1) return null;
    const t = T > 1 ? new Float64Array(new SharedArrayBuffer(rowsMax * 8)) : new Float64Array(rowsMax);
    const out = allocSamples(nSweeps * rowsMax, path, `${nSweeps} sweeps x up to ${rowsMax} rows`);
    const parts = Math.max(1, T);
    const cut = (n: number) => (T > 1 ? new Float64Array(new SharedArrayBuffer(n * 8)) : new Float64Array(n));
    const starts = cut(parts + 1),
      firstRows = cut(parts + 1);
    // one thread: rows gathered in a row-major block of PLAIN_BLOCK rows, written sweep-major when full
    const scratch = new Float64Array(PLAIN_BLOCK * nSweeps);
    const parseHere = (bytes: Uint8Array, view: Buffer, r: number): number => {
      for (let k = 0, len = bytes.length; k < len;) {
        let e = view.indexOf(10, k);
        if (e < 0) e = len;
        let le = e;
        if (le > k && bytes[le - 1] === 13) le--;
        if (le === k || r >= rowsMax || !plainRow(bytes, k, le, ncol, dec, dcode, t, r, scratch, r & (PLAIN_BLOCK - 1)))
          return -1;
        r++;
        if ((r & (PLAIN_BLOCK - 1)) === 0) flushBlock(scratch, nSweeps, out, rowsMax, r - PLAIN_BLOCK, PLAIN_BLOCK);
        k = e + 1;
      }
      return r;
    };
    // pass 2: each part ends at a line end, parsed straight into t and the samples
    let row = 0;
    for (let off = pos; off < size;) {
      let len = Math.min(B, size - off);
      if (!readAt(part, len, off)) return null;
      if (off + len < size) {
        const nl = Buffer.from(part.buffer, part.byteOffset, len).lastIndexOf(10);
        if (nl < 0) {
          B *= 2;
          part = T > 1 ? sharedBytes(B) : new Uint8Array(B);
          continue;
        } // a line longer than the part
        len = nl + 1;
      }
      const bytes = part.subarray(0, len);
      const view = Buffer.from(part.buffer, part.byteOffset, len);
      // the part cut into one piece per thread at line starts, with the first row of each
      starts[0] = 0;
      starts[parts] = len;
      for (let j = 1; j < parts; j++) {
        const e = view.indexOf(10, Math.floor((len * j) / parts));
        starts[j] = e < 0 ? len : e + 1;
      }
      let r = row,
        nextCut = 1;
      firstRows[0] = row;
      for (let k = 0; k < len;) {
        while (nextCut < parts && starts[nextCut] <= k) firstRows[nextCut++] = r;
        const e = view.indexOf(10, k);
        r++;
        if (e < 0) break;
        k = e + 1;
      }
      while (nextCut <= parts) firstRows[nextCut++] = r;
      if (T > 1) {
        const res = runSweeps('csvWide', { bytes, starts, firstRows, ncol, rowsMax, dec, dcode, out, t }, parts, len);
        if (!res.every((x) => x >= 0)) return null; // a line that is not a plain row
      } else if (parseHere(bytes, view, row) !== r) return null;
      row = r;
      off += len;
    }
    if (row !== rowsMax) return null;
    if (T <= 1 && row & (PLAIN_BLOCK - 1))
      flushBlock(scratch, nSweeps, out, rowsMax, row - (row & (PLAIN_BLOCK - 1)), row & (PLAIN_BLOCK - 1));
    const nSamples = rowsMax;
    checkTime(t, path, (i) => headerLine + 1 + i, 1);
    const f = timeToMs(how.timeUnit);
    const dtMs = ((t[nSamples - 1] - t[0]) / (nSamples - 1)) * f;
    const t0Ms = (t[0] - (options.stimulusAt ?? delimitedDefaults.stimulusAt)) * f;
    return new SweepSet({
      data: out,
      nSweeps,
      nSamples,
      fs: 1000 / dtMs,
      t0Ms,
      units: first.units,
      conditions: first.conditions,
      sources: [lazySource(path, stat)],
      history: first.history,
    });
  } finally {
    closeSync(fd);
  }
}

interface LineCursor {
  start: number;
  end: number;
  line: number;
}

export function parseDelimited(
  bytes: Uint8Array,
  file: string,
  options: DelimitedOptions = {},
  source?: import('../sweeps/SweepSet').Source,
): SweepSet {
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
      while (s < e && (bytes[s] === 32 || (bytes[s] === 9 && false))) s++;
      if (s === e) continue;
      if (bytes[s] === 35) continue; // '#'
      return { start, end: e, line: lineNo };
    }
    return null;
  };
  const header = next();
  if (!header)
    throw new InputError({ file }, 'the file has no header line', 'a header such as "time (ms),sweep 1 (mV)"');
  if (header.end - header.start > MAX_HEADER_BYTES) {
    throw new InputError(
      { file, line: header.line },
      `the header line is ${header.end - header.start} bytes long`,
      `a header line under ${MAX_HEADER_BYTES} bytes (is this a delimited text file?)`,
    );
  }
  const headerText = Buffer.from(bytes.buffer, bytes.byteOffset + header.start, header.end - header.start).toString(
    'utf8',
  );
  let delim: string = opts.delimiter;
  if (delim === 'auto') delim = headerText.includes('\t') ? '\t' : headerText.includes(';') ? ';' : ',';
  if (![',', ';', '\t'].includes(delim))
    throw new InputError(
      { file, field: 'delimiter' },
      `invalid delimiter ${JSON.stringify(delim)}`,
      'one of ",", ";", "\\t"',
    );
  const dcode = delim.charCodeAt(0);
  const names = headerText.split(delim).map((h) => h.replace(/^"|"$/g, ''));
  const heads = names.map(splitHeader);
  if (names.length < 2)
    throw new InputError(
      { file, line: header.line },
      `the header has ${names.length} column`,
      'at least 2 columns (time and one sweep) with the delimiter ' + JSON.stringify(delim),
    );
  const lower = heads.map((h) => h.name.toLowerCase());
  const idxOf = (cands: string[]) => lower.findIndex((h) => cands.includes(h));
  let layout: string = opts.layout;
  if (layout === 'auto')
    layout =
      names.length === 3 && idxOf(SWEEP_NAMES) >= 0 && idxOf(TIME_NAMES) >= 0 && idxOf(VALUE_NAMES) >= 0
        ? 'long'
        : 'wide';
  if (layout === 'long') {
    // a long file needs a sweep, a time and a value column, each found by name
    for (const [role, cands] of [
      ['sweep', SWEEP_NAMES],
      ['time', TIME_NAMES],
      ['value', VALUE_NAMES],
    ] as const) {
      if (idxOf(cands as unknown as string[]) >= 0) continue;
      const near = lower.map((h) => nearest(h, cands)).find((x) => x !== null);
      throw new InputError(
        { file, line: header.line },
        `the long layout needs a ${role} column, and the header (${names.map((x) => JSON.stringify(x)).join(', ')}) has none${near ? ` (did you mean "${near}"?)` : ''}`,
        `a column named one of ${cands.join(', ')}`,
      );
    }
    if (names.length !== 3)
      throw new InputError(
        { file, line: header.line },
        `the long layout has ${names.length} columns`,
        '3 columns: sweep, time and value',
      );
  }

  // decimal separator
  let dec = 46;
  if (opts.decimal === ',') dec = 44;
  else if (opts.decimal === 'auto' && delim !== ',') {
    // any comma in a data line of a ';' or tab file can only be a decimal comma (comment lines do not count)
    for (let k = bytes.indexOf(44, pos); k >= 0;) {
      let ls = k;
      while (ls > pos && bytes[ls - 1] !== 10) ls--;
      while (ls < k && bytes[ls] === 32) ls++;
      if (bytes[ls] !== 35) {
        dec = 44;
        break;
      }
      const le = bytes.indexOf(10, k);
      k = le < 0 ? -1 : bytes.indexOf(44, le);
    }
  }
  if (dec === 44 && delim === ',')
    throw new InputError(
      { file },
      'decimal comma with comma delimiter',
      'a semicolon or tab delimiter when numbers use a decimal comma',
    );

  const unitOf = (col: number, kind: 'time' | 'signal'): string | undefined => heads[col].unit;
  const timeCol = layout === 'long' ? idxOf(TIME_NAMES) : 0;
  const tUnitLabel = unitOf(timeCol, 'time');
  let tUnit: TimeUnit | undefined = opts.timeUnit;
  if (tUnitLabel !== undefined) {
    tUnit = parseTimeUnit(tUnitLabel);
    if (!tUnit)
      throw new InputError(
        { file, line: header.line, column: timeCol + 1 },
        `unknown time unit "${tUnitLabel}"`,
        'one of s, ms, us',
      );
  }
  if (!tUnit)
    throw new InputError(
      { file, line: header.line, column: timeCol + 1 },
      `the time column "${names[timeCol]}" gives no unit`,
      'a unit in the header, e.g. "time (ms)", or the timeUnit option',
    );

  const valueCols = layout === 'long' ? [idxOf(VALUE_NAMES)] : names.map((_, i) => i).slice(1);
  let sUnit: SignalUnit | undefined;
  for (const c of valueCols) {
    const lab = unitOf(c, 'signal');
    const u = lab === undefined ? opts.units : parseSignalUnit(lab);
    if (lab !== undefined && !u)
      throw new InputError(
        { file, line: header.line, column: c + 1 },
        `unknown signal unit "${lab}"`,
        'one of V, mV, uV',
      );
    if (!u)
      throw new InputError(
        { file, line: header.line, column: c + 1 },
        `column "${names[c]}" gives no signal unit`,
        'a unit in the header, e.g. "sweep 1 (mV)", or the units option',
      );
    if (sUnit && u !== sUnit)
      throw new InputError(
        { file, line: header.line, column: c + 1 },
        `signal unit ${u} differs from ${sUnit} in an earlier column`,
        'one signal unit for all sweeps of a file',
      );
    sUnit = u;
  }
  const units = sUnit as SignalUnit;
  const ncol = names.length;

  // count data lines (upper bound) to allocate once; for a large wide file read into
  // shared memory, also cut the data region into one part per thread at line starts
  const parts =
    layout === 'wide' && bytes.buffer instanceof SharedArrayBuffer && n - pos >= PARALLEL_CSV_BYTES ? threads() : 1;
  const sharedOrNot = (bytesNeeded: number) =>
    parts > 1 ? new SharedArrayBuffer(bytesNeeded) : new ArrayBuffer(bytesNeeded);
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
  for (let k = pos; k < n;) {
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
          throw new InputError(
            { file, line: l.line, column: c + 1 },
            `the row has more than ${ncol} fields`,
            `${ncol} fields as in the header`,
          );
        }
        fieldStarts[c] = k + 1;
      }
    }
    if (c !== ncol - 1)
      throw new InputError(
        { file, line: l.line, column: c + 1 },
        `the row has ${c + 1} fields`,
        `${ncol} fields as in the header`,
      );
    fieldStarts[ncol] = l.end + 1;
  };
  const num = (l: LineCursor, c: number): number => {
    const s = fieldStarts[c];
    const e = fieldStarts[c + 1] - 1;
    const v = parseNumber(bytes, s, e, dec);
    if (Number.isFinite(v)) return v;
    const text = fieldText(bytes, s, e);
    const what = /^[+-]?(nan|inf|infinity)$/i.test(text)
      ? `a non-finite value "${text}"`
      : text === ''
        ? 'an empty cell'
        : `a non-numeric cell "${text.slice(0, 40)}"`;
    throw new InputError(
      { file, line: l.line, column: c + 1 },
      what,
      `a finite number${dec === 44 ? ' with a decimal comma' : ''}`,
    );
  };

  let time: Float64Array;
  let data: Float64Array;
  let nSweeps: number;
  let nSamples: number;
  const conds: Conditions[] = [];
  const base = opts.conditions ?? {};
  const cp = conditionsProblem(base);
  if (cp)
    throw new OptionError(`invalid conditions: ${cp}; must be an object of strings, finite numbers, booleans or null`);
  if (layout === 'wide') {
    nSweeps = ncol - 1;
    const t = new Float64Array(sharedOrNot(rowsMax * 8));
    let buf = allocSamples(nSweeps * rowsMax, file, `${nSweeps} sweeps x up to ${rowsMax} rows`);
    let r = 0;
    const lines: number[] = [];
    // all threads on the plain fast path; any other line sends the whole file to the exact parser below
    let parallelRows = -1;
    if (parts > 1 && lineCount === rowsMax) {
      const res = runSweeps(
        'csvWide',
        { bytes, starts, firstRows, ncol, rowsMax, dec, dcode, out: buf, t },
        parts,
        n - pos,
      );
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
    const fastRow = (l: LineCursor, row: number): boolean =>
      plainRow(bytes, l.start, l.end, ncol, dec, dcode, t, row, scratch, row & (BLOCK - 1));
    if (parallelRows >= 0) {
      r = parallelRows; // every line after the header was a data row
    } else
      for (let l = next(); l; l = next()) {
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
    if (nSamples < 2)
      throw new InputError(
        { file },
        `the file has ${nSamples} data row${nSamples === 1 ? '' : 's'}`,
        'at least 2 samples per sweep',
      );
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
    const sc = idxOf(SWEEP_NAMES),
      tc = idxOf(TIME_NAMES),
      vc = idxOf(VALUE_NAMES);
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
    if (nSamples < 2)
      throw new InputError(
        { file, sweep: 0 },
        `sweep "${groups[0][0]}" has ${nSamples} sample`,
        'at least 2 samples per sweep',
      );
    time = Float64Array.from(groups[0][1].t);
    checkTime(time, file, (i) => groups[0][1].lines[i], tc + 1);
    data = sharedSamples(nSweeps * nSamples);
    groups.forEach(([id, g], s) => {
      if (g.t.length !== nSamples) {
        throw new InputError(
          { file, line: g.lines[g.lines.length - 1], sweep: s },
          `sweep "${id}" has ${g.t.length} samples`,
          `${nSamples} samples as in sweep "${groups[0][0]}"`,
        );
      }
      for (let i = 0; i < nSamples; i++) {
        if (Math.abs(g.t[i] - time[i]) > 1e-6 * Math.max(1, Math.abs(time[i]))) {
          throw new InputError(
            { file, line: g.lines[i], column: tc + 1, sweep: s },
            `sweep "${id}" has time ${g.t[i]} at sample ${i}`,
            `the time axis of sweep "${groups[0][0]}" (${time[i]})`,
          );
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
    data,
    nSweeps,
    nSamples,
    fs,
    t0Ms,
    units,
    conditions: conds.map((c) => ({ ...c, file })),
    sources: source ? [source] : [],
    history: [
      {
        verb: 'readDelimited',
        options: {
          path: file,
          ...opts,
          delimiter: delim,
          decimal: dec === 44 ? ',' : '.',
          layout,
          timeUnit: tUnit,
          units,
        },
        version: VERSION,
      },
    ],
  });
}

/** Time must increase and be evenly sampled (each sample within 1% of a sample interval of the line through the ends). */
function checkTime(t: Float64Array, file: string, lineOf: (i: number) => number, column: number): void {
  const n = t.length;
  const dt = (t[n - 1] - t[0]) / (n - 1);
  for (let i = 1; i < n; i++) {
    if (!(t[i] > t[i - 1])) {
      throw new InputError(
        { file, line: lineOf(i), column },
        `time ${t[i]} does not increase (previous ${t[i - 1]})`,
        'strictly increasing time',
      );
    }
  }
  const tol = 0.01 * dt;
  for (let i = 0; i < n; i++) {
    const d = t[i] - (t[0] + i * dt);
    if (Math.abs(d) > tol) {
      throw new InputError(
        { file, line: lineOf(i), column },
        `uneven sampling: time ${t[i]} is ${d.toPrecision(3)} off the regular grid (interval ${dt.toPrecision(6)})`,
        'evenly sampled time, within 1% of a sample interval',
      );
    }
  }
}
