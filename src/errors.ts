/**
 * Typed errors. Every error that comes from bad input names the place
 * (file, line, column or sweep) and what was expected there.
 */

/** Where in an input a problem was found. */
export interface InputPlace {
  /** Path of the file, as given by the caller. */
  file?: string;
  /** 1-based line number in a text file. */
  line?: number;
  /** 1-based column (field) number in a delimited text file. */
  column?: number;
  /** 0-based sweep index. */
  sweep?: number;
  /** JSON pointer or option name. */
  field?: string;
}

/** Raised for malformed or inconsistent input files. */
export class InputError extends Error {
  readonly place: InputPlace;
  readonly problem: string;
  readonly expected: string;
  constructor(place: InputPlace, problem: string, expected: string) {
    super(`${formatPlace(place)}: ${problem}; expected ${expected}`);
    this.name = 'InputError';
    this.place = place;
    this.problem = problem;
    this.expected = expected;
  }
}

/** Raised for an option outside its allowed range at the call. */
export class OptionError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'OptionError';
  }
}

/** Raised for impossible geometry or data that cannot support the analysis. */
export class AnalysisError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'AnalysisError';
  }
}

export function formatPlace(p: InputPlace): string {
  const parts: string[] = [];
  if (p.file !== undefined) parts.push(p.file);
  if (p.line !== undefined) parts.push(`line ${p.line}`);
  if (p.column !== undefined) parts.push(`column ${p.column}`);
  if (p.sweep !== undefined) parts.push(`sweep ${p.sweep}`);
  if (p.field !== undefined) parts.push(`field ${p.field}`);
  return parts.length ? parts.join(', ') : '(input)';
}

/**
 * Raised for a configuration mistake in a manifest or in the options of a call that
 * reads one (unknown key, mistyped value). It is an InputError (it names the file and
 * field); the command line exits with its usage code for it.
 */
export class ConfigError extends InputError {
  constructor(place: InputPlace, problem: string, expected: string) {
    super(place, problem, expected);
    this.name = 'ConfigError';
  }
}

/**
 * Raised when the output cannot go where asked: `refused` when writing there could
 * delete or overwrite files fascicle did not write (a user folder, a file, an input);
 * otherwise the system refused a write (disk full, read-only, no permission), with
 * its error code. Nothing at the destination has been changed in either case.
 */
export class OutputError extends Error {
  readonly path: string;
  readonly refused: boolean;
  readonly code: string | undefined;
  constructor(path: string, message: string, opts: { refused: boolean; code?: string }) {
    super(message);
    this.name = 'OutputError';
    this.path = path;
    this.refused = opts.refused;
    this.code = opts.code;
  }
}

/** Raised when a worker thread stops (out of memory, exit, crash) before it finished its job. */
export class ThreadError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ThreadError';
  }
}

const SYSTEM_REASONS: Record<string, string> = {
  ENOSPC: 'the disk is full',
  EDQUOT: 'the disk quota is used up',
  EROFS: 'the file system is read-only',
  EACCES: 'permission denied',
  EPERM: 'operation not permitted',
  EFBIG: 'the file is larger than the system allows (file size limit)',
  EIO: 'an input/output error of the device',
  ENOENT: 'a folder on the way does not exist (or was removed while writing)',
  ENOTDIR: 'a part of the path is a file, not a folder',
  EMFILE: 'too many open files',
  ENAMETOOLONG: 'the path is too long',
};

/** A system error (errno code) in words: "the disk is full (ENOSPC)". */
export function systemReason(e: unknown): string {
  const code = (e as NodeJS.ErrnoException | null)?.code;
  if (code && SYSTEM_REASONS[code]) return `${SYSTEM_REASONS[code]} (${code})`;
  return code ? `${(e as Error).message}` : String((e as Error)?.message ?? e);
}
