import { createHash } from 'node:crypto';
import { openSync, readSync, fstatSync, closeSync, constants } from 'node:fs';
import { InputError } from '../errors';
import type { Source } from '../sweeps/SweepSet';

/**
 * Read a whole file read-only into a fresh (8-byte aligned) buffer and hash it.
 * @throws InputError naming the file when it cannot be read.
 */
export function readInput(path: string): { bytes: Uint8Array; source: Source } {
  let fd: number;
  try {
    fd = openSync(path, constants.O_RDONLY);
  } catch (e) {
    throw new InputError({ file: path }, `cannot open file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, 'a readable file');
  }
  try {
    const size = fstatSync(fd).size;
    const bytes = new Uint8Array(new ArrayBuffer(size));
    let off = 0;
    while (off < size) {
      const n = readSync(fd, bytes, off, size - off, off);
      if (n <= 0) break;
      off += n;
    }
    const sha256 = createHash('sha256').update(bytes).digest('hex');
    return { bytes, source: { path, sha256, bytes: size } };
  } finally {
    closeSync(fd);
  }
}

/** SHA-256 of a file, hex. */
export function sha256File(path: string): string {
  return readInput(path).source.sha256;
}
