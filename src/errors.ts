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
