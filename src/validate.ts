/** Small shared validators. Checks are written as !(x > 0) so NaN fails. */
import { OptionError } from './errors';

export function finite(name: string, x: unknown, unit = ''): number {
  if (typeof x !== 'number' || !Number.isFinite(x)) {
    throw new OptionError(`invalid ${name}: ${typeof x === 'string' ? JSON.stringify(x) : String(x)}${unit ? ' ' + unit : ''}; must be a finite number`);
  }
  return x;
}

export function positive(name: string, x: unknown, unit = ''): number {
  finite(name, x, unit);
  if (!((x as number) > 0)) throw new OptionError(`invalid ${name}: ${x}${unit ? ' ' + unit : ''}; must be > 0`);
  return x as number;
}

export function inRange(name: string, x: unknown, lo: number, hi: number, unit = '', note = ''): number {
  finite(name, x, unit);
  const v = x as number;
  if (!(v >= lo && v <= hi)) {
    throw new OptionError(`invalid ${name}: ${v}${unit ? ' ' + unit : ''}; must be ${lo} <= ${name} <= ${hi}${note ? ' (' + note + ')' : ''}`);
  }
  return v;
}

export function integerIn(name: string, x: unknown, lo: number, hi: number): number {
  if (!Number.isInteger(x) || (x as number) < lo || (x as number) > hi) {
    throw new OptionError(`invalid ${name}: ${String(x)}; must be an integer ${lo}..${hi}`);
  }
  return x as number;
}

export function oneOf<T extends string>(name: string, x: unknown, allowed: readonly T[]): T {
  if (typeof x !== 'string' || !allowed.includes(x as T)) {
    throw new OptionError(`invalid ${name}: ${JSON.stringify(x)}; must be one of ${allowed.map((a) => JSON.stringify(a)).join(', ')}`);
  }
  return x as T;
}

/** A value as a message shows it: numbers as printed (NaN, Infinity), everything else as JSON. */
export function shown(x: unknown): string {
  if (typeof x === 'number') return String(x);
  if (Array.isArray(x)) return `[${x.map(shown).join(', ')}]`;
  return JSON.stringify(x) ?? String(x);
}

/** A [from, to] time window in ms, from < to. */
export function windowMs(name: string, w: unknown): [number, number] {
  if (!Array.isArray(w) || w.length !== 2 || typeof w[0] !== 'number' || typeof w[1] !== 'number' || !Number.isFinite(w[0]) || !Number.isFinite(w[1]) || !(w[1] > w[0])) {
    throw new OptionError(`invalid ${name}: ${shown(w)}; must be [from, to] in ms with from < to`);
  }
  return [w[0], w[1]];
}

const warned = new Set<string>();
/** Print a once-only warning; silence with FASCICLE_QUIET=1. */
export function warnOnce(key: string, message: string): void {
  if (warned.has(key) || process.env.FASCICLE_QUIET === '1') return;
  warned.add(key);
  process.emitWarning(`${message} (set FASCICLE_QUIET=1 to silence)`, 'FascicleWarning');
}

/**
 * The problem with a conditions object, or null when it is a plain object whose
 * values are strings, finite numbers, booleans or null (what a sweep's conditions may hold).
 */
export function conditionsProblem(x: unknown): string | null {
  if (x === null || typeof x !== 'object' || Array.isArray(x)) return `conditions are ${Array.isArray(x) ? 'an array' : JSON.stringify(x)}`;
  for (const [k, v] of Object.entries(x as Record<string, unknown>)) {
    if (v === null || typeof v === 'string' || typeof v === 'boolean') continue;
    if (typeof v === 'number' && Number.isFinite(v)) continue;
    return `condition "${k}" is ${typeof v === 'number' ? String(v) : Array.isArray(v) ? 'an array' : typeof v === 'object' ? 'an object' : typeof v}`;
  }
  return null;
}
