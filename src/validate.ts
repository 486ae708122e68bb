/** Small shared validators. Checks are written as !(x > 0) so NaN fails. */
import { OptionError } from './errors';

export function finite(name: string, x: unknown, unit = ''): number {
  if (typeof x !== 'number' || !Number.isFinite(x)) {
    throw new OptionError(
      `invalid ${name}: ${typeof x === 'string' ? JSON.stringify(x) : String(x)}${unit ? ' ' + unit : ''}; must be a finite number`,
    );
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
    throw new OptionError(
      `invalid ${name}: ${v}${unit ? ' ' + unit : ''}; must be ${lo} <= ${name} <= ${hi}${note ? ' (' + note + ')' : ''}`,
    );
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
    throw new OptionError(
      `invalid ${name}: ${JSON.stringify(x)}; must be one of ${allowed.map((a) => JSON.stringify(a)).join(', ')}`,
    );
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
  if (
    !Array.isArray(w) ||
    w.length !== 2 ||
    typeof w[0] !== 'number' ||
    typeof w[1] !== 'number' ||
    !Number.isFinite(w[0]) ||
    !Number.isFinite(w[1]) ||
    !(w[1] > w[0])
  ) {
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
  if (x === null || typeof x !== 'object' || Array.isArray(x))
    return `conditions are ${Array.isArray(x) ? 'an array' : JSON.stringify(x)}`;
  for (const [k, v] of Object.entries(x as Record<string, unknown>)) {
    if (v === null || typeof v === 'string' || typeof v === 'boolean') continue;
    if (typeof v === 'number' && Number.isFinite(v)) continue;
    return `condition "${k}" is ${typeof v === 'number' ? String(v) : Array.isArray(v) ? 'an array' : typeof v === 'object' ? 'an object' : typeof v}`;
  }
  return null;
}

/** Levenshtein edit distance (insertions, deletions, substitutions each cost 1). O(|a| |b|). */
export function editDistance(a: string, b: string): number {
  const m = a.length,
    n = b.length;
  let prev = new Array<number>(n + 1),
    cur = new Array<number>(n + 1);
  for (let j = 0; j <= n; j++) prev[j] = j;
  for (let i = 1; i <= m; i++) {
    cur[0] = i;
    for (let j = 1; j <= n; j++) {
      const sub = prev[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1);
      cur[j] = Math.min(sub, prev[j] + 1, cur[j - 1] + 1);
    }
    [prev, cur] = [cur, prev];
  }
  return prev[n];
}

/** The allowed name nearest to `name` (case-insensitive edit distance), or null when none is close (more than half its length away). */
export function nearest(name: string, allowed: readonly string[]): string | null {
  let best: string | null = null,
    bestD = Infinity;
  for (const a of allowed) {
    const d = editDistance(name.toLowerCase(), a.toLowerCase());
    if (d < bestD) [best, bestD] = [a, d];
  }
  return best !== null && bestD <= Math.max(2, Math.ceil(name.length / 2)) ? best : null;
}

/** " (did you mean \"x\"?)" or "" */
export function didYouMean(name: string, allowed: readonly string[]): string {
  const n = nearest(name, allowed);
  return n ? ` (did you mean ${JSON.stringify(n)}?)` : '';
}

/**
 * Throw an OptionError for the first own key of `obj` that is not in `allowed`,
 * naming the place ("baseline options", "manifest analysis.filter", ...) and the nearest valid key.
 * Only own enumerable keys count (an inherited "constructor" is not a key).
 * @example checkKeys('baseline options', { windw: [0, 1] }, ['window', 'method'])
 *   // throws: unknown key "windw" in baseline options (did you mean "window"?); valid keys: window, method
 */
export function checkKeys(place: string, obj: unknown, allowed: readonly string[]): void {
  if (obj === null || obj === undefined) return;
  if (typeof obj !== 'object' || Array.isArray(obj))
    throw new OptionError(`invalid ${place}: ${shown(obj)}; must be an object`);
  for (const k of Object.keys(obj)) {
    if (!allowed.includes(k)) {
      throw new OptionError(
        `unknown key ${JSON.stringify(k)} in ${place}${didYouMean(k, allowed)}; valid keys: ${allowed.join(', ')}`,
      );
    }
  }
}

/**
 * Condition keys fascicle reads (README "Known conditions", the schema's condition properties, and the keys the
 * paired-pulse, train and bipolar analyses look for). Any other key is a user column, unless it looks like a typo of
 * one of these (see conditionKeyTypo).
 */
export const KNOWN_CONDITIONS = [
  'preparation',
  'preparationType',
  'intensity',
  'intensityUnit',
  'pulseWidthMs',
  'site',
  'distanceMm',
  'referenceDistanceMm',
  'drug',
  'concentration',
  'concentrationUnit',
  'temperatureC',
  'acquiredS',
  'repeat',
  'polarity',
  'epoch',
  'series',
  'pulsePair',
  'intervalMs',
  'trainHz',
  'trainPulses',
  'pulsesMs',
] as const;

const squash = (k: string) => k.toLowerCase().replace(/[^a-z0-9]/g, '');
/**
 * The known condition a user key is most likely a typo of, or null: the same letters in another case or with
 * separators ("temperature_C", "DistanceMM"), a known key without its unit ("temperature", "distance",
 * "pulseWidth") or within two edits of one ("temperatureCC", "concentraton"; keys of 6 letters or more).
 * A key that is exactly known, or far from every known key, is not a typo.
 */
export function conditionKeyTypo(key: string): string | null {
  if ((KNOWN_CONDITIONS as readonly string[]).includes(key)) return null;
  const k = squash(key);
  for (const known of KNOWN_CONDITIONS) {
    const q = squash(known);
    if (k === q) return known;
    const unit = q.replace(/(mm|ms|hz|c|s)$/, '');
    if (unit !== q && unit.length >= 6 && k === unit) return known;
  }
  if (k.length < 6) return null;
  let best: string | null = null,
    bestD = 3;
  for (const known of KNOWN_CONDITIONS) {
    if (known.length < 6) continue;
    const d = editDistance(k, squash(known));
    if (d < bestD) [best, bestD] = [known, d];
  }
  return best;
}

/**
 * Spellings of the unit conditions fascicle knows (a bundle column takes the unit as its last part: `ic50_uM`,
 * `lowest_detected_intensity_mA`; µ and μ are written u there). Other units are kept as the user wrote them.
 */
export const KNOWN_UNITS: Readonly<Record<'intensityUnit' | 'concentrationUnit', readonly string[]>> = {
  intensityUnit: ['A', 'mA', 'uA', 'µA', 'μA', 'nA', 'V', 'mV', 'uV', 'µV', 'μV'],
  concentrationUnit: ['M', 'mM', 'uM', 'µM', 'μM', 'nM', 'pM', 'mg/ml', 'mg/mL', 'ug/ml', 'ug/mL', 'µg/mL', '%'],
};

/**
 * The known unit a unit condition's value is a case slip of, or null: "ma" or "MA" for "mA", "um" for "uM", "mm"
 * for "mM" (in SI the case is the meaning: m is milli, M mega or molar). Exact known units and units fascicle does
 * not know ("mmol/L", "x threshold") are not slips.
 */
export function unitTypo(key: string, value: unknown): string | null {
  const known = (KNOWN_UNITS as Record<string, readonly string[] | undefined>)[key];
  if (!known || typeof value !== 'string' || known.includes(value)) return null;
  const v = value.trim().toLowerCase();
  return known.find((u) => u.toLowerCase() === v) ?? null;
}

/**
 * Conduction distances fascicle accepts, in mm (the component measurement refuses others): below 0.5 mm or above
 * 1000 mm a distance was most likely written in another unit (m, cm or µm).
 */
export const DISTANCE_RANGE_MM: readonly [number, number] = [0.5, 1000];
