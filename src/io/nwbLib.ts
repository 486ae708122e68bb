/**
 * The HDF5 library behind the NWB reader and writer (h5wasm: the HDF5 C library compiled to
 * WebAssembly, reading and writing host files in place), and small helpers on top of it.
 *
 * The library loads asynchronously once (`await nwbReady()`); after that every call is
 * synchronous. readNwb / writeNwb load it themselves; the synchronous forms (readNwbSync, used
 * by the manifest reader) need it loaded first.
 */
import { existsSync, closeSync, readSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import type * as H5 from 'h5wasm';
import { InputError, OptionError } from '../errors';

export type H5Lib = typeof H5;
export type H5File = H5.File;
export type H5Group = H5.Group;
export type H5Dataset = H5.Dataset;

let lib: H5Lib | null = null;
let loading: Promise<H5Lib> | null = null;
/** the module namespace (its `Module` is the compiled library, with get_dataset_data and the heap) */
let ns: Record<string, unknown> | null = null;

/** Where npm put h5wasm's Node build (its package exports only an ESM `import` entry). */
function h5wasmFile(): string {
  const dirs = require.resolve.paths('h5wasm') ?? [];
  for (const d of dirs) {
    const p = join(d, 'h5wasm', 'dist', 'node', 'hdf5_hl.js');
    if (existsSync(p)) return p;
  }
  throw new OptionError(
    'the HDF5 library (npm package h5wasm) is not installed; run `npm install` in the fascicle folder',
  );
}

/**
 * Import an ES module from CommonJS. TypeScript's CommonJS output turns `import()` into
 * `require()`, which cannot load h5wasm (an ES module with top-level await), so the import is
 * made at run time; under a module runner without that hook (vitest) its own `import()` is used.
 */
async function importEsm(url: string): Promise<Record<string, unknown>> {
  try {
    return await (new Function('u', 'return import(u)') as (u: string) => Promise<Record<string, unknown>>)(url);
  } catch (e) {
    if (!/dynamic import callback/i.test(String((e as Error)?.message))) throw e;
    return await import(/* @vite-ignore */ url);
  }
}

/** Load the HDF5 library (once). Resolves when NWB files can be read and written synchronously. */
export async function nwbReady(): Promise<void> {
  if (lib) return;
  loading ??= (async () => {
    const m = await importEsm(pathToFileURL(h5wasmFile()).href);
    const h5 = (m.default ?? m) as H5Lib;
    await h5.ready;
    ns = m;
    lib = h5;
    return h5;
  })();
  try {
    await loading;
  } catch (e) {
    loading = null;
    throw e;
  }
}

/**
 * Run f with HDF5's errors thrown as JavaScript errors (h5wasm's throwing error handler, from 0.7.2) instead of
 * printed to the console and ignored: a write that fails inside the library (disk full, quota, I/O error) would
 * otherwise leave a damaged file behind a call that returned normally. The printing handler is restored after.
 * Without that handler (an older h5wasm) f runs as it is.
 */
export function withHdf5Errors<T>(f: () => T): T {
  const mod = (ns?.Module ?? null) as {
    activate_throwing_error_handler?: () => number;
    deactivate_throwing_error_handler?: () => number;
  } | null;
  if (!mod?.activate_throwing_error_handler || !mod.deactivate_throwing_error_handler) return f();
  mod.activate_throwing_error_handler();
  try {
    return f();
  } finally {
    mod.deactivate_throwing_error_handler();
  }
}

/** Raised when a synchronous NWB function is called before `await nwbReady()` (a mistake in the calling code). */
export class NwbNotReadyError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'NwbNotReadyError';
  }
}

/** True once the HDF5 library is loaded. */
export function nwbLoaded(): boolean {
  return lib !== null;
}

/** The loaded library. @throws NwbNotReadyError when nwbReady() has not finished. */
export function h5(): H5Lib {
  if (!lib) {
    throw new NwbNotReadyError(
      'the HDF5 library is not loaded yet: call `await nwbReady()` once before the synchronous NWB ' +
        'functions (readNwbSync, writeNwbSync, readManifest with NWB files), or use readNwb / writeNwb, which load it',
    );
  }
  return lib;
}

const SIGNATURE = [0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a];

/**
 * Check the HDF5 superblock before the library opens the file: that the file is HDF5 at all
 * and that it is as long as its superblock says (a truncated copy would otherwise fail deep
 * inside the library). This reads the first bytes only; it is not a parser of the format.
 * @throws InputError naming the file.
 */
export function checkHdf5(path: string, fd: number, size: number): void {
  const head = new Uint8Array(96);
  for (let base = 0; base === 0 || base + 8 <= size; base = base === 0 ? 512 : base * 2) {
    const n = readSync(fd, head, 0, head.length, base);
    if (n < 8) break;
    if (!SIGNATURE.every((b, i) => head[i] === b)) continue;
    const version = head[8];
    const dv = new DataView(head.buffer, 0, n);
    const O = version <= 1 ? head[13] : head[9];
    if (O !== 8 && O !== 4) return; // unusual offset size: let the library judge
    const eofAt = version === 0 ? 24 + 2 * O : version === 1 ? 28 + 2 * O : 12 + 2 * O;
    const baseAt = version === 0 ? 24 : version === 1 ? 28 : 12;
    if (n < eofAt + O) {
      throw new InputError(
        { file: path },
        `the file is truncated: it has ${size} bytes, fewer than its HDF5 superblock`,
        'the complete file (copy it again)',
      );
    }
    const read = (at: number) => (O === 8 ? Number(dv.getBigUint64(at, true)) : dv.getUint32(at, true));
    const baseAddr = read(baseAt);
    const eof = read(eofAt);
    const end = (baseAddr === 0 ? base : baseAddr) + eof;
    if (size < end) {
      throw new InputError(
        { file: path },
        `the file is truncated: it has ${size} bytes but its HDF5 superblock says ${end}`,
        'the complete file (copy it again)',
      );
    }
    return;
  }
  throw new InputError(
    { file: path },
    'this is not an HDF5 file (no HDF5 signature at the start)',
    'an NWB 2.x file, which is HDF5',
  );
}

/** Open an HDF5 file read-only after checkHdf5. @throws InputError when the library cannot open it. */
export function openHdf5(path: string, fd: number, size: number): H5File {
  checkHdf5(path, fd, size);
  closeSync(fd);
  const f = new (h5().File)(path, 'r');
  if (typeof f.file_id === 'bigint' && f.file_id < 0n) {
    throw new InputError(
      { file: path },
      'the HDF5 library could not open the file (see its messages above)',
      'a readable, undamaged HDF5 file',
    );
  }
  return f;
}

/** The object at an absolute path, or null (walks the names, so a missing name is no library error). */
export function at(f: H5File, path: string): H5Group | H5Dataset | null {
  const parts = path.split('/').filter(Boolean);
  let cur: H5Group | H5Dataset = f;
  for (const p of parts) {
    if (!(cur instanceof h5().Group) || !(cur as H5Group).keys().includes(p)) return null;
    const next = (cur as H5Group).get(p);
    if (!next || !(next instanceof h5().Group || next instanceof h5().Dataset)) return null;
    cur = next;
  }
  return cur;
}

export function isGroup(x: unknown): x is H5Group {
  return !!lib && x instanceof lib.Group;
}

export function isDataset(x: unknown): x is H5Dataset {
  return !!lib && x instanceof lib.Dataset;
}

/** An attribute's value (a one-element array becomes its element), or undefined. */
export function attr(obj: H5Group | H5Dataset, name: string): unknown {
  const a = obj.attrs[name];
  if (!a) return undefined;
  const v = a.value as unknown;
  if (Array.isArray(v) && v.length === 1) return v[0];
  if (ArrayBuffer.isView(v) && !(v instanceof DataView) && (v as unknown as ArrayLike<unknown>).length === 1) {
    const x = (v as unknown as ArrayLike<unknown>)[0];
    return typeof x === 'bigint' ? Number(x) : x;
  }
  return typeof v === 'bigint' ? Number(v) : v;
}

/** The attribute as text, or undefined. */
export function attrText(obj: H5Group | H5Dataset, name: string): string | undefined {
  const v = attr(obj, name);
  return typeof v === 'string' ? v : undefined;
}

/** The attribute as a number (float32 attributes as stored), or undefined. */
export function attrNumber(obj: H5Group | H5Dataset, name: string): number | undefined {
  const v = attr(obj, name);
  return typeof v === 'number' ? v : undefined;
}

/** neurodata_type of a group or dataset (NWB core or hdmf-common), or undefined. */
export function typeOf(obj: H5Group | H5Dataset): string | undefined {
  return attrText(obj, 'neurodata_type');
}

/** Numbers of a 1-D dataset (all, [i0, i1) or every step-th of [i0, i1)), int64 as Number. */
type Range = [number, number] | [number, number, number];
export function numbers(d: H5Dataset, range?: Range): Float64Array | Int32Array | Float32Array | number[] {
  const v = (range ? d.slice([range]) : d.value) as unknown;
  if (v instanceof BigInt64Array || v instanceof BigUint64Array) return Array.from(v as ArrayLike<bigint>, Number);
  if (ArrayBuffer.isView(v)) return v as unknown as Float64Array;
  if (typeof v === 'number') return [v];
  if (typeof v === 'bigint') return [Number(v)];
  throw new Error(`not numeric (${typeof v})`);
}

/** Text of a scalar or 1-D string dataset. */
export function texts(d: H5Dataset): string[] {
  const v = d.value as unknown;
  if (typeof v === 'string') return [v];
  if (Array.isArray(v) && v.every((x) => typeof x === 'string')) return v as string[];
  throw new Error('not text');
}

/** Kind of a dataset's element type: 'int', 'float', 'string', 'reference', 'compound' or 'other'. */
export function elementKind(d: H5Dataset): 'int' | 'float' | 'string' | 'reference' | 'compound' | 'other' {
  const m = d.metadata as { type: number; compound_type?: unknown };
  // HDF5 type classes: 0 integer, 1 float, 3 string, 6 compound, 7 reference, 8 enum (h5py's booleans)
  const kinds: Record<number, 'int' | 'float' | 'string' | 'reference' | 'compound'> = {
    0: 'int',
    1: 'float',
    3: 'string',
    6: 'compound',
    7: 'reference',
    8: 'int',
  };
  return kinds[m.type] ?? 'other';
}

interface RawModule {
  get_dataset_data(
    fileId: bigint,
    path: string,
    count: bigint[],
    offset: bigint[],
    strides: bigint[],
    ptr: bigint,
  ): number;
  _malloc(n: number): number;
  _free(p: number): void;
  HEAPU8: Uint8Array;
}

/**
 * Reads hyperslabs of one numeric dataset straight into a caller's array: the samples go from the
 * file into one reusable buffer in the library's heap and are converted from there, so no copy is
 * made per read (h5wasm's slice() copies each read into a new array). Falls back to slice() when
 * the library does not offer its low-level read.
 */
export class HyperslabReader {
  private readonly d: H5Dataset;
  private readonly shape: number[];
  private readonly size: number;
  private readonly kind: 'int' | 'float';
  private readonly signed: boolean;
  private readonly little: boolean;
  private ptr = 0;
  private cap = 0;
  private readonly raw: RawModule | null;

  constructor(d: H5Dataset) {
    this.d = d;
    const m = d.metadata as { shape: number[]; size: number; signed: boolean; littleEndian: boolean; type: number };
    this.shape = m.shape;
    this.size = m.size;
    this.kind = m.type === 1 ? 'float' : 'int';
    this.signed = m.signed;
    this.little = m.littleEndian;
    const mod = (ns?.Module ?? null) as RawModule | null;
    const usable = mod && typeof mod.get_dataset_data === 'function' && typeof mod._malloc === 'function';
    this.raw = usable && this.little ? mod : null;
  }

  /** Read rows [i0, i1) (of column `col` for 2-D data) and pass each value to put(k, value). */
  read(i0: number, i1: number, col: number | null, put: (k: number, v: number) => void): void {
    const n = i1 - i0;
    const ranges: [number, number][] =
      col === null
        ? [[i0, i1]]
        : [
            [i0, i1],
            [col, col + 1],
          ];
    if (!this.raw) {
      const v = this.d.slice(ranges) as unknown as ArrayLike<number | bigint>;
      if (!v || v.length !== n) throw new Error(`read ${v?.length ?? 0} of ${n} values`);
      for (let k = 0; k < n; k++) put(k, Number(v[k]));
      return;
    }
    const bytes = n * this.size;
    if (bytes > this.cap) {
      if (this.ptr) this.raw._free(this.ptr);
      this.ptr = this.raw._malloc(bytes);
      if (!this.ptr) throw new Error(`the HDF5 library could not allocate ${bytes} bytes`);
      this.cap = bytes;
    }
    const count = this.shape.map((s, i) => BigInt(i === 0 ? n : col === null ? s : 1));
    const offset = this.shape.map((_, i) => BigInt(i === 0 ? i0 : (col ?? 0)));
    const strides = this.shape.map(() => 1n);
    this.raw.get_dataset_data(this.d.file_id, this.d.path, count, offset, strides, BigInt(this.ptr));
    const buf = this.raw.HEAPU8.buffer; // after the read: the heap may have grown
    const at = this.ptr;
    const view =
      this.kind === 'float'
        ? this.size === 8
          ? new Float64Array(buf, at, n)
          : new Float32Array(buf, at, n)
        : this.size === 1
          ? this.signed
            ? new Int8Array(buf, at, n)
            : new Uint8Array(buf, at, n)
          : this.size === 2
            ? this.signed
              ? new Int16Array(buf, at, n)
              : new Uint16Array(buf, at, n)
            : this.size === 4
              ? this.signed
                ? new Int32Array(buf, at, n)
                : new Uint32Array(buf, at, n)
              : this.signed
                ? new BigInt64Array(buf, at, n)
                : new BigUint64Array(buf, at, n);
    if (view instanceof BigInt64Array || view instanceof BigUint64Array) {
      for (let k = 0; k < n; k++) put(k, Number(view[k]));
    } else for (let k = 0; k < n; k++) put(k, view[k]);
  }

  /** Free the buffer. */
  close(): void {
    if (this.raw && this.ptr) this.raw._free(this.ptr);
    this.ptr = 0;
    this.cap = 0;
  }
}
