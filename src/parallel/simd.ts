/**
 * WebAssembly SIMD kernels: whether float32 or float64 values are all finite. A value is NaN
 * or infinite exactly when its exponent bits are all set (IEEE 754-2019, 3.4); the kernel
 * masks four float32 (two float64) values at a time with 0x7f800000 (0x7ff0000000000000) and
 * compares (v128.and, i32x4.eq or i64x2.eq), about ten times the speed of the JavaScript
 * checks (finiteSum32 and finiteSum of ./kernels.ts, kept as the fallback and as the
 * reference in tests/parallel/kernels.test.ts). WebAssembly works on its own
 * memory only, so each block of values is copied into a 256 kB scratch memory first (a copy
 * from the cache: the loaders check each block right after reading it).
 *
 * The module is assembled here byte by byte (WebAssembly core specification 2.0, binary
 * format, section 5; SIMD opcodes 0xfd xx): no build step and no file to load.
 */

/** Unsigned LEB128 encoding of n (WebAssembly's integer format). */
function leb(n: number): number[] {
  const out: number[] = [];
  do {
    let b = n & 0x7f;
    n >>>= 7;
    if (n) b |= 0x80;
    out.push(b);
  } while (n);
  return out;
}
/** One WebAssembly module section: its id, its byte length, its bytes. */
const section = (id: number, bytes: number[]) => [id, ...leb(bytes.length), ...bytes];

/**
 * The module: f(n) for float32, g(n) for float64 values in bytes [0, n) of its memory m (n a
 * multiple of 64): 1 when any value has all its exponent bits set, else 0.
 */
function moduleBytes(): Uint8Array {
  const MASK32 = [0x00, 0x00, 0x80, 0x7f, 0x00, 0x00, 0x80, 0x7f, 0x00, 0x00, 0x80, 0x7f, 0x00, 0x00, 0x80, 0x7f];
  const MASK64 = [0x00, 0x00, 0x00, 0x00, 0x00, 0x00, 0xf0, 0x7f, 0x00, 0x00, 0x00, 0x00, 0x00, 0x00, 0xf0, 0x7f];
  const EQ32 = [0xfd, 0x37], // i32x4.eq
    EQ64 = [0xfd, 0xd6, 0x01]; // i64x2.eq
  // acc |= (v128.load(i + off) & MASK) == MASK, lane by lane
  const lane = (off: number, mask: number[], eq: number[]) => [
    ...[0x20, 0x02, 0x20, 0x01], // local.get acc, local.get i
    ...[0xfd, 0x00, 0x04, off], // v128.load align 16, offset off
    ...[0xfd, 0x0c, ...mask, 0xfd, 0x4e], // v128.const mask, v128.and
    ...[0xfd, 0x0c, ...mask, ...eq], // v128.const mask, eq
    ...[0xfd, 0x50, 0x21, 0x02], // v128.or, local.set acc
  ];
  const body = (mask: number[], eq: number[]) => [
    ...[0x02, 0x01, 0x7f, 0x01, 0x7b], // locals: i (i32), acc (v128)
    ...[0x02, 0x40, 0x03, 0x40], // block, loop
    ...[0x20, 0x01, 0x20, 0x00, 0x4f, 0x0d, 0x01], // br_if 1 (i >= n, unsigned)
    ...lane(0, mask, eq),
    ...lane(16, mask, eq),
    ...lane(32, mask, eq),
    ...lane(48, mask, eq),
    ...[0x20, 0x01, 0x41, 0xc0, 0x00, 0x6a, 0x21, 0x01], // i += 64
    ...[0x0c, 0x00, 0x0b, 0x0b], // br 0, end loop, end block
    ...[0x20, 0x02, 0xfd, 0x53, 0x0b], // v128.any_true acc, end
  ];
  const f = body(MASK32, EQ32),
    g = body(MASK64, EQ64);
  return new Uint8Array([
    ...[0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00], // magic, version 1
    ...section(1, [0x01, 0x60, 0x01, 0x7f, 0x01, 0x7f]), // type: (i32) -> i32
    ...section(3, [0x02, 0x00, 0x00]), // two functions of that type
    ...section(5, [0x01, 0x00, SCRATCH_PAGES]), // memory: SCRATCH_PAGES pages of 64 kB
    // exports "f" (function 0), "g" (function 1), "m" (the memory)
    ...section(7, [0x03, 0x01, 0x66, 0x00, 0x00, 0x01, 0x67, 0x00, 0x01, 0x01, 0x6d, 0x02, 0x00]),
    ...section(10, [0x02, ...leb(f.length), ...f, ...leb(g.length), ...g]),
  ]);
}

const SCRATCH_PAGES = 4;
/** float32 values per scratch block (256 kB; half as many float64 values) */
const BLOCK = (SCRATCH_PAGES * 65536) / 4;

interface Kernel {
  anyBad32: (bytes: number) => number;
  anyBad64: (bytes: number) => number;
  scratch32: Float32Array;
  scratch64: Float64Array;
}
let kernel: Kernel | null | undefined;
/** The instantiated kernel of this thread, or null where WebAssembly SIMD is not available. */
function simd(): Kernel | null {
  if (kernel === undefined) {
    try {
      const { exports } = new WebAssembly.Instance(new WebAssembly.Module(moduleBytes()));
      const m = exports.m as WebAssembly.Memory;
      kernel = {
        anyBad32: exports.f as (bytes: number) => number,
        anyBad64: exports.g as (bytes: number) => number,
        scratch32: new Float32Array(m.buffer, 0, BLOCK),
        scratch64: new Float64Array(m.buffer, 0, BLOCK / 2),
      };
    } catch {
      kernel = null;
    }
  }
  return kernel;
}

/** Test hook: whether this thread has the SIMD kernel. */
export const hasSimd = (): boolean => simd() !== null;

/**
 * Whether x[from..to) are all finite, by the SIMD kernel (null where it is not available:
 * the caller then uses its JavaScript check).
 */
export function allFinite32(x: Float32Array, from: number, to: number): boolean | null {
  const k = simd();
  if (!k) return null;
  for (let i = from; i < to; i += BLOCK) {
    const e = Math.min(to, i + BLOCK);
    const e64 = i + ((e - i) & ~15); // whole 64-byte steps in the kernel, the rest here
    if (e64 > i) {
      k.scratch32.set(x.subarray(i, e64));
      if (k.anyBad32((e64 - i) * 4) !== 0) return false;
    }
    for (let j = e64; j < e; j++) if (x[j] - x[j] !== 0) return false;
  }
  return true;
}

/** allFinite32 for float64 values (exponent bits 0x7ff0000000000000). */
export function allFinite64(x: Float64Array, from: number, to: number): boolean | null {
  const k = simd();
  if (!k) return null;
  const block = BLOCK / 2;
  for (let i = from; i < to; i += block) {
    const e = Math.min(to, i + block);
    const e64 = i + ((e - i) & ~7);
    if (e64 > i) {
      k.scratch64.set(x.subarray(i, e64));
      if (k.anyBad64((e64 - i) * 8) !== 0) return false;
    }
    for (let j = e64; j < e; j++) if (x[j] - x[j] !== 0) return false;
  }
  return true;
}

/**
 * The module of the in-place check: f(end, start) for float32 values in bytes [start, end) of an
 * imported memory "e"."m" (end - start a multiple of 64), shared or not as the memory it is given.
 * The same loop as moduleBytes()'s f, with the start as a parameter.
 */
function inPlaceBytes(shared: boolean): Uint8Array {
  const MASK32 = [0x00, 0x00, 0x80, 0x7f, 0x00, 0x00, 0x80, 0x7f, 0x00, 0x00, 0x80, 0x7f, 0x00, 0x00, 0x80, 0x7f];
  const lane = (off: number) => [
    ...[0x20, 0x02, 0x20, 0x01], // local.get acc, local.get i
    ...[0xfd, 0x00, 0x04, off], // v128.load align 16, offset off
    ...[0xfd, 0x0c, ...MASK32, 0xfd, 0x4e], // v128.const mask, v128.and
    ...[0xfd, 0x0c, ...MASK32, 0xfd, 0x37], // v128.const mask, i32x4.eq
    ...[0xfd, 0x50, 0x21, 0x02], // v128.or, local.set acc
  ];
  const body = [
    ...[0x01, 0x01, 0x7b], // locals: acc (v128); i is parameter 1, end parameter 0
    ...[0x02, 0x40, 0x03, 0x40], // block, loop
    ...[0x20, 0x01, 0x20, 0x00, 0x4f, 0x0d, 0x01], // br_if 1 (i >= end, unsigned)
    ...lane(0),
    ...lane(16),
    ...lane(32),
    ...lane(48),
    ...[0x20, 0x01, 0x41, 0xc0, 0x00, 0x6a, 0x21, 0x01], // i += 64
    ...[0x0c, 0x00, 0x0b, 0x0b], // br 0, end loop, end block
    ...[0x20, 0x02, 0xfd, 0x53, 0x0b], // v128.any_true acc, end
  ];
  // memory limits: shared memories must declare a maximum (here the largest, 65,536 pages = 4 GB)
  const limits = shared ? [0x03, 0x01, ...leb(65536)] : [0x00, 0x01];
  return new Uint8Array([
    ...[0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00], // magic, version 1
    ...section(1, [0x01, 0x60, 0x02, 0x7f, 0x7f, 0x01, 0x7f]), // type: (i32, i32) -> i32
    ...section(2, [0x01, 0x01, 0x65, 0x01, 0x6d, 0x02, ...limits]), // import "e" "m": memory
    ...section(3, [0x01, 0x00]), // one function of that type
    ...section(7, [0x01, 0x01, 0x66, 0x00, 0x00]), // export "f" (function 0)
    ...section(10, [0x01, ...leb(body.length), ...body]),
  ]);
}

const inPlaceModules: Partial<Record<'shared' | 'own', WebAssembly.Module | null>> = {};
function inPlaceModule(shared: boolean): WebAssembly.Module | null {
  const key = shared ? 'shared' : 'own';
  if (inPlaceModules[key] === undefined) {
    try {
      inPlaceModules[key] = new WebAssembly.Module(inPlaceBytes(shared));
    } catch {
      inPlaceModules[key] = null;
    }
  }
  return inPlaceModules[key]!;
}

/** The WebAssembly memory that samples32() made for a buffer (this thread's record). */
const memories = new WeakMap<ArrayBufferLike, WebAssembly.Memory>();

/**
 * n float32 samples on a WebAssembly memory of their own (shared between threads when
 * `shared`), or null where that is not possible (no WebAssembly SIMD, more than 4 GB, or
 * the memory cannot be reserved). A file read into such samples is checked where it lies
 * (allFiniteInPlace32), without the copy into the scratch memory that allFinite32 makes.
 */
export function samples32(n: number, shared: boolean): Float32Array | null {
  const pages = Math.ceil((n * 4) / 65536);
  if (!(pages >= 1 && pages <= 65536) || !inPlaceModule(shared)) return null;
  try {
    const memory = new WebAssembly.Memory({ initial: pages, maximum: pages, shared });
    memories.set(memory.buffer, memory);
    return new Float32Array(memory.buffer, 0, n);
  } catch {
    return null;
  }
}

/**
 * n float32 samples on a memory that samples32() made before and that nothing uses any more (its samples
 * were collected): the memory's old values stay until the caller overwrites them. null when it is too small.
 */
export function samples32On(memory: WebAssembly.Memory, n: number): Float32Array | null {
  if (memory.buffer.byteLength < n * 4) return null;
  memories.set(memory.buffer, memory);
  return new Float32Array(memory.buffer, 0, n);
}

/** The memory under samples made by samples32() in this thread, or null. */
export function memoryOf(x: Float32Array): WebAssembly.Memory | null {
  return memories.get(x.buffer) ?? null;
}

/**
 * A check of whether x[from..to) are all finite, made in place in memory, the WebAssembly
 * memory that holds x (from samples32(), or that memory passed to a worker thread); null where
 * the kernel is not available (the caller then uses allFinite32). One instance per call of a
 * loader, not per block.
 */
export function inPlaceCheck32(
  memory: WebAssembly.Memory,
): ((x: Float32Array, from: number, to: number) => boolean) | null {
  const shared = typeof SharedArrayBuffer !== 'undefined' && memory.buffer instanceof SharedArrayBuffer;
  const mod = inPlaceModule(shared);
  if (!mod) return null;
  let f: (end: number, start: number) => number;
  try {
    f = new WebAssembly.Instance(mod, { e: { m: memory } }).exports.f as (end: number, start: number) => number;
  } catch {
    return null;
  }
  return (x, from, to) => {
    if (to <= from) return true;
    const b0 = x.byteOffset + from * 4,
      b1 = x.byteOffset + to * 4;
    const e64 = b0 + ((b1 - b0) & ~63); // whole 64-byte steps in the kernel, the rest here
    if (e64 > b0 && f(e64 | 0, b0 | 0) !== 0) return false;
    for (let j = from + (e64 - b0) / 4; j < to; j++) if (x[j] - x[j] !== 0) return false;
    return true;
  };
}
