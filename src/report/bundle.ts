/**
 * Analysis bundles: tables as CSV (spreadsheet formulas neutralised) and JSON,
 * methods text, provenance, and figures; written atomically (a temporary folder,
 * then a rename), so an interrupted export leaves the old bundle or none.
 */
import {
  mkdirSync,
  writeFileSync,
  renameSync,
  rmSync,
  rmdirSync,
  existsSync,
  readFileSync,
  readdirSync,
  lstatSync,
  statSync,
  realpathSync,
  unlinkSync,
  openSync,
  readSync,
  closeSync,
} from 'node:fs';
import { dirname, basename, join, resolve, relative, isAbsolute, sep } from 'node:path';
import { createHash, randomBytes } from 'node:crypto';
import type { Step, Source } from '../sweeps/SweepSet';
import { InputError, OutputError, systemReason } from '../errors';
import { VERSION } from '../version';

/** The columns of the flags table (its header when nothing was flagged). */
const FLAG_COLUMNS = ['preparation', 'analysis', 'class', 'where', 'severity', 'status', 'reason', 'rows'];

/** Significant digits of a number in a CSV table by default (the JSON twin keeps full precision). */
export const CSV_DIGITS = 8;

/**
 * A CSV cell: a number rounded to `digits` significant digits (default 8; 0 or Infinity keeps the shortest
 * round-trip text of the full value), written as the shortest text of the rounded value (0.16000000000000014 ->
 * 0.16); a string that starts with = + - @ (or
 * tab / carriage return) gets a leading apostrophe so spreadsheets do not run it as a
 * formula (common practice for spreadsheet safety, no source); a string is quoted when it
 * holds a quote, a line break or the field delimiter of any common locale (, ; tab), so a
 * spreadsheet that splits on any of them keeps the cell whole.
 */
export function csvCell(v: unknown, digits: number = CSV_DIGITS): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) return Number.isNaN(v) ? 'NaN' : v > 0 ? 'Infinity' : '-Infinity';
    return String(digits >= 1 && digits <= 100 && !Number.isInteger(v) ? Number(v.toPrecision(digits)) : v);
  }
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  let s = Array.isArray(v) ? v.join(' ') : typeof v === 'object' ? JSON.stringify(v) : String(v);
  if (/^[=+\-@\t\r]/.test(s)) s = "'" + s;
  return /[",;\t\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/**
 * A table as CSV: one header line (the union of the rows' keys, in first-seen order, or `columns` when given), then
 * one line per row; numbers rounded to `digits` significant digits (default 8).
 */
export function toCsv(
  rows: readonly Record<string, unknown>[],
  options: { digits?: number; columns?: readonly string[] } = {},
): string {
  const digits = options.digits ?? CSV_DIGITS;
  const cols = options.columns ? [...options.columns] : [...new Set(rows.flatMap((r) => Object.keys(r)))];
  const line = (r: Record<string, unknown>) => cols.map((c) => csvCell(r[c], digits)).join(',');
  return [cols.map((c) => csvCell(c)).join(','), ...rows.map(line)].join('\n') + '\n';
}

export interface Provenance {
  package: 'fascicle';
  version: string;
  node: string;
  inputs: Source[];
  steps: readonly Step[];
  rerun?: { manifest: string; options: unknown; shard?: string };
  /** how the paths above are to be read (relative ones) */
  paths?: string;
}

export function makeProvenance(
  steps: readonly Step[],
  inputs: readonly Source[],
  rerun?: Provenance['rerun'],
): Provenance {
  return {
    package: 'fascicle',
    version: VERSION,
    node: process.version,
    inputs: [...inputs],
    steps,
    ...(rerun ? { rerun } : {}),
  };
}

/**
 * Check that every input still has its recorded SHA-256; throws naming the first changed or
 * missing file. Relative input paths are taken relative to `base` (the manifest's folder).
 */
export function verifyInputs(p: Provenance, base = '.'): void {
  if (!Array.isArray(p.inputs)) {
    throw new InputError(
      { file: 'provenance.json', field: 'inputs' },
      'no list of inputs',
      'the inputs array fascicle writes',
    );
  }
  for (const s of p.inputs) {
    const path = resolve(base, s.path);
    if (!existsSync(path)) {
      throw new InputError(
        { file: path },
        'the input file recorded in the provenance is missing',
        `the file with SHA-256 ${s.sha256}`,
      );
    }
    const h = createHash('sha256').update(readFileSync(path)).digest('hex');
    if (h !== s.sha256) {
      const was = String(s.sha256).slice(0, 12);
      throw new InputError(
        { file: path },
        `the input file has changed since the analysis (SHA-256 ${h.slice(0, 12)}... instead of ${was}...)`,
        'the same bytes as when the analysis ran',
      );
    }
  }
}

/**
 * A provenance whose paths are relative, so a study and its bundle can move: input paths
 * relative to the manifest's folder, the rerun manifest relative to the bundle folder.
 */
export function relativeProvenance(p: Provenance, manifestPath: string, bundleDir: string): Provenance {
  const mdir = dirname(resolve(manifestPath));
  const rel = (x: string) => relative(mdir, resolve(x)).split(sep).join('/') || '.';
  const inputs = p.inputs.map((s) => {
    const out = { ...s, path: rel(s.path), sha256: s.sha256 } as Source;
    if (s.partOf !== undefined) out.partOf = rel(s.partOf);
    return out;
  });
  const toManifest = relative(resolve(bundleDir), resolve(manifestPath)).split(sep).join('/');
  const rerun = p.rerun ? { ...p.rerun, manifest: toManifest } : undefined;
  // the readers' steps record the path they read: relative to the manifest's folder too
  const steps = p.steps.map((st) => {
    const o = st.options as Record<string, unknown> | undefined;
    return o && typeof o.path === 'string' && isAbsolute(o.path) ? { ...st, options: { ...o, path: rel(o.path) } } : st;
  });
  const paths = 'inputs relative to the manifest folder; rerun.manifest relative to this bundle';
  return { ...p, inputs, steps, ...(rerun ? { rerun } : {}), paths } as Provenance;
}

export interface BundleContent {
  tables: Record<string, readonly Record<string, unknown>[]>;
  methods: string;
  provenance: Provenance;
  /** extra files: relative path -> content */
  files?: Record<string, string | Uint8Array>;
}

/** Hook for tests: called before each file is written (throw to simulate a failed write). */
export let beforeWrite: ((path: string) => void) | null = null;
export function setBeforeWrite(f: ((path: string) => void) | null): void {
  beforeWrite = f;
}

/** In every bundle fascicle writes: names the files of the bundle (written last, so its presence means complete). */
export const BUNDLE_MARKER = '.fascicle-bundle';
/** In every temporary folder fascicle makes beside a bundle: only folders carrying it are ever cleaned up. */
export const TEMP_MARKER = '.fascicle-temp';

/** Files a bundle of an earlier version (before the marker) may hold, at its top level. */
const LEGACY_TOP = new Set([
  'tables',
  'figures',
  'methods.txt',
  'notes.txt',
  'provenance.json',
  'plotly.min.js',
  'shard.json',
]);

/** A bundle written by a fascicle version without the marker: only bundle files, and a fascicle provenance. */
function isLegacyBundle(dir: string): boolean {
  try {
    const top = readdirSync(dir, { withFileTypes: true });
    if (!top.some((e) => e.name === 'provenance.json')) return false;
    for (const e of top) {
      if (!LEGACY_TOP.has(e.name)) return false;
      if (e.name === 'tables' || e.name === 'figures') {
        if (!e.isDirectory()) return false;
        const ext = e.name === 'tables' ? /\.(csv|json)$/ : /\.(html|svg|png|pdf|json)$/;
        const inner = readdirSync(join(dir, e.name), { withFileTypes: true });
        if (!inner.every((f) => f.isFile() && ext.test(f.name))) return false;
      } else if (!e.isFile()) return false;
    }
    return JSON.parse(readFileSync(join(dir, 'provenance.json'), 'utf8')).package === 'fascicle';
  } catch {
    return false;
  }
}

/** A path with symbolic links resolved as far as it exists (the rest appended). */
function realish(p: string): string {
  const abs = resolve(p);
  let head = abs;
  const tail: string[] = [];
  while (!existsSync(head)) {
    const up = dirname(head);
    if (up === head) return abs;
    tail.unshift(basename(head));
    head = up;
  }
  try {
    return join(realpathSync(head), ...tail);
  } catch {
    return abs;
  }
}

const isFolder = (p: string) => {
  try {
    return statSync(p).isDirectory();
  } catch {
    return false;
  }
};
const isInside = (child: string, parent: string) =>
  child === parent || child.startsWith(parent.endsWith(sep) ? parent : parent + sep);

/**
 * Check that a bundle may be written at `dir`: it does not exist, is an empty folder, or is
 * a bundle fascicle wrote; and it neither is nor contains any of `inputs`.
 * @throws OutputError (refused) saying what is there and what to do.
 */
export function checkOutput(dir: string, inputs: readonly string[] = []): void {
  const target = realish(dir);
  const real = inputs.map((x) => [x, realish(x)] as const);
  for (const [input, ri] of [...real.filter(([, r]) => r === target), ...real]) {
    if (isInside(ri, target)) {
      const what = ri === target ? 'is' : 'contains';
      // the suggestion lies outside the study: beside the outermost input folder that holds the target
      const holders = real.map(([, r]) => r).filter((r) => isInside(target, r) && isFolder(r));
      const outer = holders.sort((a, b) => a.length - b.length)[0] ?? target;
      const e = join(dirname(outer), basename(outer) + '-bundle');
      throw new OutputError(
        dir,
        `refusing to write the bundle to ${dir}: it ${what} an input of this analysis (${input}), ` +
          `which fascicle never replaces; give --out a new folder outside the study, e.g. ${e}`,
        { refused: true },
      );
    }
  }
  let st;
  try {
    st = lstatSync(target);
  } catch {
    return; // nothing there
  }
  const refuse = (why: string) =>
    new OutputError(dir, `refusing to write the bundle to ${dir}: ${why}`, { refused: true });
  if (st.isSymbolicLink()) throw refuse('it is a symbolic link; give the folder it points to, or a new folder');
  if (!st.isDirectory()) {
    throw refuse(
      'it is a file, not a folder, and fascicle never replaces files it did not write; give --out a new folder name',
    );
  }
  const entries = readdirSync(target);
  if (entries.length === 0 || isLegacyBundle(target)) return;
  if (entries.includes(BUNDLE_MARKER)) {
    const foreign = notWrittenByFascicle(target);
    if (!foreign.length) return;
    const shown = foreign.slice(0, 3).join(', ') + (foreign.length > 3 ? ` and ${foreign.length - 3} more` : '');
    throw refuse(
      `the bundle holds files fascicle did not write or that changed since (${shown}), so replacing it would ` +
        'delete them; move them out of the bundle (or give --out a new folder)',
    );
  }
  throw refuse(
    `the folder is not empty and is not a bundle written by fascicle (it has no ${BUNDLE_MARKER} file), ` +
      'so replacing it would delete your files; give --out a new or empty folder, ' +
      "or move that folder's files away yourself",
  );
}

/** Every file under dir (relative paths with "/"), folders left out; a symbolic link counts as a file. */
function filesUnder(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string, rel: string) => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      const r = rel ? `${rel}/${e.name}` : e.name;
      if (e.isDirectory()) walk(join(d, e.name), r);
      else out.push(r);
    }
  };
  walk(dir, '');
  return out;
}

const sha256 = (data: string | Uint8Array) => createHash('sha256').update(data).digest('hex');

/**
 * The files of a bundle folder that its marker does not vouch for: not listed, or (when the marker records their
 * SHA-256, as bundles from this version on do) changed since they were written. A marker that cannot be read
 * vouches for nothing. The marker itself and a stray temporary marker are fascicle's.
 */
function notWrittenByFascicle(dir: string): string[] {
  let listed: Set<string>;
  let hashes: Record<string, string> | null = null;
  try {
    const m = JSON.parse(readFileSync(join(dir, BUNDLE_MARKER), 'utf8')) as {
      writtenBy?: unknown;
      files?: unknown;
      sha256?: unknown;
    };
    if (m.writtenBy !== 'fascicle' || !Array.isArray(m.files)) throw new Error('not a marker');
    listed = new Set(m.files.filter((f): f is string => typeof f === 'string'));
    if (m.sha256 && typeof m.sha256 === 'object') hashes = m.sha256 as Record<string, string>;
  } catch {
    return [BUNDLE_MARKER + ' (unreadable)'];
  }
  const foreign: string[] = [];
  for (const f of filesUnder(dir)) {
    if (f === BUNDLE_MARKER || f === TEMP_MARKER) continue;
    if (!listed.has(f)) foreign.push(f);
    else if (hashes) {
      let same = false;
      try {
        same = lstatSync(join(dir, f)).isFile() && sha256(readFileSync(join(dir, f))) === hashes[f];
      } catch {
        same = false;
      }
      if (!same) foreign.push(`${f} (changed)`);
    }
  }
  return foreign;
}

/** SHA-256 of a file, read in parts (an NWB file can be larger than memory allows in one piece). */
function fileSha256(path: string): string {
  const h = createHash('sha256');
  const fd = openSync(path, 'r');
  try {
    const buf = Buffer.alloc(1 << 20);
    for (let n = readSync(fd, buf, 0, buf.length, null); n > 0; n = readSync(fd, buf, 0, buf.length, null))
      h.update(buf.subarray(0, n));
  } finally {
    closeSync(fd);
  }
  return h.digest('hex');
}

/**
 * Record a file fascicle wrote into a bundle after the bundle itself (the `--nwb` file given inside `--out`) in the
 * bundle's marker, so the next run may replace the bundle with it. Does nothing when `file` is not inside `dir` or
 * `dir` carries no readable marker. The marker is rewritten beside itself and renamed.
 */
export function addToBundle(dir: string, file: string): void {
  const root = realish(dir),
    f = realish(file);
  if (!isInside(f, root) || f === root) return;
  const markerPath = join(root, BUNDLE_MARKER);
  let m: { writtenBy?: unknown; files?: string[]; sha256?: Record<string, string> };
  try {
    m = JSON.parse(readFileSync(markerPath, 'utf8'));
  } catch {
    return;
  }
  if (m.writtenBy !== 'fascicle' || !Array.isArray(m.files)) return;
  const rel = relative(root, f).split(sep).join('/');
  if (!m.files.includes(rel)) m.files.push(rel);
  m.sha256 = { ...(m.sha256 ?? {}), [rel]: fileSha256(f) };
  const tmp = `${markerPath}.tmp-${process.pid}`;
  writeFileSync(tmp, JSON.stringify(m, null, 1) + '\n');
  renameSync(tmp, markerPath);
}

const escapeRe = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
const leftoverName = (base: string) => new RegExp(`^\\.${escapeRe(base)}\\.(tmp|old)-(\\d+)-[0-9a-z-]+$`);

/** Start time of a process (clock ticks since boot, /proc/<pid>/stat field 22); null where /proc is absent. */
function processStart(pid: number): string | null {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    return stat.slice(stat.lastIndexOf(')') + 2).split(' ')[19] ?? null;
  } catch {
    return null;
  }
}

/** The line a temporary marker carries to name its writer: pid and start time (a reused pid is another process). */
const writerLine = () => `writer: ${process.pid} ${processStart(process.pid) ?? '-'}\n`;

function alive(pid: number, markerPath: string): boolean {
  if (pid === process.pid) return false; // our own earlier, interrupted writes (this process is not writing them now)
  try {
    process.kill(pid, 0);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code !== 'EPERM') return false;
  }
  // the pid is in use: it is the writer only if it started when the writer did (pids wrap and are reused)
  try {
    const m = /^writer: (\d+) (\S+)$/m.exec(readFileSync(markerPath, 'utf8'));
    if (m && Number(m[1]) === pid && m[2] !== '-') {
      const now = processStart(pid);
      if (now !== null && now !== m[2]) return false;
    }
  } catch {
    // no marker readable: keep the folder (it may be another writer's, just created)
  }
  return true;
}

/**
 * Remove the hidden temporary folders beside `dir` that an interrupted write left: only
 * folders named like fascicle's temporaries that carry TEMP_MARKER and whose writing
 * process has ended. Returns the paths removed.
 */
export function cleanLeftovers(dir: string): string[] {
  const target = resolve(dir);
  const parent = dirname(target);
  const re = leftoverName(basename(target));
  const removed: string[] = [];
  let names: string[];
  try {
    names = readdirSync(parent);
  } catch {
    return removed;
  }
  for (const name of names) {
    const m = re.exec(name);
    const p = join(parent, name);
    if (!m || alive(Number(m[2]), join(p, TEMP_MARKER))) continue;
    try {
      if (!lstatSync(p).isDirectory() || !existsSync(join(p, TEMP_MARKER))) continue;
      rmSync(p, { recursive: true, force: true });
      removed.push(p);
    } catch {
      // another process removed it first
    }
  }
  // a stray temporary marker in the bundle itself (a run stopped just after the swap)
  try {
    const stray = join(target, TEMP_MARKER);
    if (existsSync(join(target, BUNDLE_MARKER)) && existsSync(stray)) unlinkSync(stray);
  } catch {
    // not ours to worry about
  }
  return removed;
}

function writeFailed(target: string, where: string, e: unknown): OutputError {
  const code = (e as NodeJS.ErrnoException).code;
  // what to do depends on the reason: space for a full disk or quota, another place for the rest
  const todo =
    code === 'ENOSPC' || code === 'EDQUOT' || code === 'EFBIG'
      ? 'free some space, or choose another folder with --out'
      : 'choose a folder you can write to with --out';
  return new OutputError(
    target,
    `cannot write the bundle ${target}: ${systemReason(e)} while writing ${where}; ` +
      `the destination is unchanged (${todo})`,
    { refused: false, code },
  );
}

/**
 * Write a bundle to `dir` atomically: into a hidden temporary sibling (marked with
 * TEMP_MARKER), then swapped in. Only a missing path, an empty folder or a bundle
 * fascicle wrote is replaced (checkOutput); leftovers of interrupted runs beside it are
 * removed first. Returns the list of files written (relative).
 * @throws OutputError when the destination is refused or a write fails (nothing changed then).
 */
export function writeBundle(dir: string, c: BundleContent, opts: { inputs?: readonly string[] } = {}): string[] {
  const target = resolve(dir);
  const parent = dirname(target);
  checkOutput(dir, opts.inputs);
  try {
    mkdirSync(parent, { recursive: true });
  } catch (e) {
    throw writeFailed(target, `the folder ${parent}`, e);
  }
  cleanLeftovers(target);
  const stamp = `${process.pid}-${Date.now().toString(36)}-${randomBytes(3).toString('hex')}`;
  const tmp = join(parent, `.${basename(target)}.tmp-${stamp}`);
  const written: string[] = [];
  const hashes: Record<string, string> = {};
  const put = (rel: string, data: string | Uint8Array) => {
    const p = join(tmp, rel);
    mkdirSync(dirname(p), { recursive: true });
    if (beforeWrite) beforeWrite(p);
    writeFileSync(p, data);
    written.push(rel);
    hashes[rel] = sha256(data);
  };
  let current = 'the temporary folder';
  try {
    mkdirSync(tmp);
    writeFileSync(
      join(tmp, TEMP_MARKER),
      `temporary folder of a fascicle bundle being written to ${target}; safe to delete\n` + writerLine(),
    );
    for (const [name, rows] of Object.entries(c.tables)) {
      current = `tables/${name}.csv`;
      put(current, toCsv(rows, name === 'flags' && !rows.length ? { columns: FLAG_COLUMNS } : {}));
      current = `tables/${name}.json`;
      put(current, JSON.stringify(rows, null, 1) + '\n');
    }
    current = 'methods.txt';
    put(current, c.methods);
    current = 'provenance.json';
    put(current, JSON.stringify(c.provenance, null, 1) + '\n');
    for (const [rel, data] of Object.entries(c.files ?? {})) {
      current = rel;
      put(rel, data);
    }
    current = BUNDLE_MARKER;
    put(
      BUNDLE_MARKER,
      JSON.stringify({ writtenBy: 'fascicle', version: VERSION, files: [...written], sha256: hashes }, null, 1) + '\n',
    );
    written.pop();
  } catch (e) {
    rmSync(tmp, { recursive: true, force: true });
    if (e instanceof OutputError || (e instanceof Error && !(e as NodeJS.ErrnoException).code)) throw e;
    throw writeFailed(target, current, e);
  }
  // swap: the old bundle (marked temporary) aside, the new one in place, the old one removed
  let old: string | null = null;
  try {
    if (existsSync(target)) {
      if (readdirSync(target).length === 0) rmdirSync(target);
      else {
        writeFileSync(
          join(target, TEMP_MARKER),
          'previous fascicle bundle being replaced; safe to delete\n' + writerLine(),
        );
        old = join(parent, `.${basename(target)}.old-${stamp}`);
        renameSync(target, old);
      }
    }
    renameSync(tmp, target);
  } catch (e) {
    if (old && !existsSync(target)) renameSync(old, target);
    try {
      unlinkSync(join(target, TEMP_MARKER));
    } catch {
      /* already gone */
    }
    rmSync(tmp, { recursive: true, force: true });
    throw writeFailed(target, 'the final rename', e);
  }
  try {
    unlinkSync(join(target, TEMP_MARKER));
  } catch {
    /* already gone */
  }
  if (old) rmSync(old, { recursive: true, force: true });
  return written;
}
