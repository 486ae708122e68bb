/**
 * Analysis bundles: tables as CSV (spreadsheet formulas neutralised) and JSON,
 * methods text, provenance, and figures; written atomically (a temporary folder,
 * then a rename), so an interrupted export leaves the old bundle or none.
 */
import { mkdirSync, writeFileSync, renameSync, rmSync, existsSync, readFileSync } from 'node:fs';
import { dirname, basename, join, resolve } from 'node:path';
import { createHash } from 'node:crypto';
import type { Step, Source } from '../sweeps/SweepSet';
import { InputError } from '../errors';
import { VERSION } from '../version';

/** A CSV cell: numbers as shortest round-trip text; strings quoted when needed and neutralised when they start with = + - @ (or tab / carriage return). */
export function csvCell(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : Number.isNaN(v) ? 'NaN' : v > 0 ? 'Infinity' : '-Infinity';
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  let s = Array.isArray(v) ? v.join(' ') : typeof v === 'object' ? JSON.stringify(v) : String(v);
  if (/^[=+\-@\t\r]/.test(s)) s = "'" + s;
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export function toCsv(rows: readonly Record<string, unknown>[]): string {
  const cols = [...new Set(rows.flatMap((r) => Object.keys(r)))];
  return [cols.map(csvCell).join(','), ...rows.map((r) => cols.map((c) => csvCell(r[c])).join(','))].join('\n') + '\n';
}

export interface Provenance {
  package: 'fascicle';
  version: string;
  node: string;
  inputs: Source[];
  steps: readonly Step[];
  rerun?: { manifest: string; options: unknown; shard?: string };
}

export function makeProvenance(steps: readonly Step[], inputs: readonly Source[], rerun?: Provenance['rerun']): Provenance {
  return { package: 'fascicle', version: VERSION, node: process.version, inputs: [...inputs], steps, ...(rerun ? { rerun } : {}) };
}

/** Check that every input still has its recorded SHA-256; throws naming the first changed or missing file. */
export function verifyInputs(p: Provenance): void {
  for (const s of p.inputs) {
    if (!existsSync(s.path)) throw new InputError({ file: s.path }, 'the input file recorded in the provenance is missing', `the file with SHA-256 ${s.sha256}`);
    const h = createHash('sha256').update(readFileSync(s.path)).digest('hex');
    if (h !== s.sha256) throw new InputError({ file: s.path }, `the input file has changed since the analysis (SHA-256 ${h.slice(0, 12)}... instead of ${s.sha256.slice(0, 12)}...)`, 'the same bytes as when the analysis ran');
  }
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

/** Write a bundle to `dir` atomically. Returns the list of files written (relative). */
export function writeBundle(dir: string, c: BundleContent): string[] {
  const target = resolve(dir);
  const parent = dirname(target);
  mkdirSync(parent, { recursive: true });
  const tmp = join(parent, `.${basename(target)}.tmp-${process.pid}-${Date.now()}`);
  const written: string[] = [];
  const put = (rel: string, data: string | Uint8Array) => {
    const p = join(tmp, rel);
    mkdirSync(dirname(p), { recursive: true });
    if (beforeWrite) beforeWrite(p);
    writeFileSync(p, data);
    written.push(rel);
  };
  try {
    mkdirSync(tmp, { recursive: true });
    for (const [name, rows] of Object.entries(c.tables)) {
      put(`tables/${name}.csv`, toCsv(rows));
      put(`tables/${name}.json`, JSON.stringify(rows, null, 1) + '\n');
    }
    put('methods.txt', c.methods);
    put('provenance.json', JSON.stringify(c.provenance, null, 1) + '\n');
    for (const [rel, data] of Object.entries(c.files ?? {})) put(rel, data);
  } catch (e) {
    rmSync(tmp, { recursive: true, force: true });
    throw e;
  }
  // swap: old bundle aside, new in place, old removed
  const old = existsSync(target) ? join(parent, `.${basename(target)}.old-${process.pid}-${Date.now()}`) : null;
  if (old) renameSync(target, old);
  try {
    renameSync(tmp, target);
  } catch (e) {
    if (old) renameSync(old, target);
    rmSync(tmp, { recursive: true, force: true });
    throw e;
  }
  if (old) rmSync(old, { recursive: true, force: true });
  return written;
}
