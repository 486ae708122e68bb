import { createHash } from 'node:crypto';
import { openSync, readSync, fstatSync, closeSync, constants, type Stats } from 'node:fs';
import { InputError } from '../errors';
import { totalmem } from 'node:os';
import { sharedBytes, sharedSamples } from '../parallel/pool';
import type { Source } from '../sweeps/SweepSet';

/** Open a file read-only. @throws InputError naming the file when it cannot be opened. */
export function openInput(path: string): { fd: number; stat: Stats } {
  let fd: number;
  try {
    // O_NONBLOCK: opening a FIFO (named pipe) must not wait for a writer; it is then refused below
    fd = openSync(path, constants.O_RDONLY | constants.O_NONBLOCK);
  } catch (e) {
    throw new InputError(
      { file: path },
      `cannot open file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`,
      'a readable file',
    );
  }
  const stat = fstatSync(fd);
  if (!stat.isFile()) {
    closeSync(fd);
    const kind = stat.isDirectory()
      ? 'a folder'
      : stat.isFIFO()
        ? 'a named pipe (FIFO)'
        : stat.isSocket()
          ? 'a socket'
          : stat.isCharacterDevice() || stat.isBlockDevice()
            ? 'a device'
            : 'not a regular file';
    throw new InputError({ file: path }, `this is ${kind}`, 'a regular file');
  }
  return { fd, stat };
}

/** SHA-256 (hex) of an open file, read in chunks. */
function hashFd(fd: number, size: number): string {
  const h = createHash('sha256');
  const buf = new Uint8Array(Math.min(Math.max(size, 1), 1 << 22));
  for (let off = 0; off < size;) {
    const n = readSync(fd, buf, 0, Math.min(buf.length, size - off), off);
    if (n <= 0) break;
    h.update(n === buf.length ? buf : buf.subarray(0, n));
    off += n;
  }
  return h.digest('hex');
}

/**
 * The provenance record of an input file whose SHA-256 is computed when first
 * needed (provenance, bundles, printing), not while loading: loading stays at the
 * speed of reading. When the hash is computed, the file must still have the size,
 * modification time and inode it had when it was loaded; otherwise an InputError
 * says it changed since loading.
 */
export function lazySource(path: string, stat: Stats): Source {
  const src = { path, bytes: stat.size } as Source;
  Object.defineProperty(src, 'sha256', {
    enumerable: true,
    configurable: true,
    get(): string {
      const { fd, stat: now } = openInput(path);
      try {
        if (now.size !== stat.size || now.mtimeMs !== stat.mtimeMs || now.ino !== stat.ino) {
          throw new InputError(
            { file: path },
            'the file changed after it was loaded (size, modification time or inode differ), so its SHA-256 would not describe the data analysed',
            'the file as it was when loaded; load it again',
          );
        }
        const value = hashFd(fd, stat.size);
        Object.defineProperty(src, 'sha256', { value, enumerable: true, configurable: false, writable: false });
        return value;
      } finally {
        closeSync(fd);
      }
    },
  });
  return src;
}

/**
 * Read a whole file read-only into a fresh (8-byte aligned) buffer. Its source
 * record hashes small files at once and large ones (>= 4 MB) on first use
 * (lazySource).
 * @throws InputError naming the file when it cannot be read.
 */
export function readInput(
  path: string,
  options: { shared?: (size: number) => boolean } = {},
): { bytes: Uint8Array; source: Source } {
  const { fd, stat } = openInput(path);
  try {
    const size = stat.size;
    let bytes: Uint8Array;
    try {
      bytes = options.shared?.(size) ? sharedBytes(size) : new Uint8Array(new ArrayBuffer(size));
    } catch (e) {
      if (e instanceof RangeError)
        throw new InputError(
          { file: path },
          `the file has ${size} bytes, more than can be held in memory (${e.message})`,
          'a smaller file (split the recording)',
        );
      throw e;
    }
    let off = 0;
    while (off < size) {
      // one read returns at most 2 GB - 1 byte: read in parts of 1 GB
      const n = readSync(fd, bytes, off, Math.min(size - off, 1 << 30), off);
      if (n <= 0) break;
      off += n;
    }
    if (off !== size)
      throw new InputError(
        { file: path },
        `read ${off} of ${size} bytes (the file shrank while reading)`,
        'a file that does not change while loading',
      );
    const source =
      size >= 1 << 22
        ? lazySource(path, stat)
        : { path, sha256: createHash('sha256').update(bytes).digest('hex'), bytes: size };
    return { bytes, source };
  } finally {
    closeSync(fd);
  }
}

/** SHA-256 of a file, hex. */
export function sha256File(path: string): string {
  const { fd, stat } = openInput(path);
  try {
    return hashFd(fd, stat.size);
  } finally {
    closeSync(fd);
  }
}

/**
 * A Float64Array for n samples (sharedSamples), refused with an InputError naming the file
 * when it would take more than three quarters of the machine's memory or cannot be allocated.
 */
export function allocSamples(n: number, file: string, what: string): Float64Array {
  const need = n * 8;
  const limit = 0.75 * totalmem();
  const gb = (x: number) => (x / 2 ** 30).toPrecision(3);
  if (!(need <= limit))
    throw new InputError(
      { file },
      `${what} need ${gb(need)} GB of memory as 64-bit samples, more than three quarters of this machine's ${gb(totalmem())} GB`,
      'a recording that fits in memory (load part of it, or split the file)',
    );
  try {
    return sharedSamples(n);
  } catch (e) {
    if (e instanceof RangeError)
      throw new InputError(
        { file },
        `${what} need ${gb(need)} GB of memory as 64-bit samples, which could not be allocated (${e.message})`,
        'a recording that fits in memory (load part of it, or split the file)',
      );
    throw e;
  }
}
