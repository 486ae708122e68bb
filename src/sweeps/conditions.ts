/**
 * The plain types a SweepSet is made of (conditions, history steps, input files) and the helpers on them that
 * SweepSet, the verbs and the display share. This module imports nothing, so each of them can use it without an
 * import cycle; src/sweeps/SweepSet.ts re-exports everything here.
 */

/** A condition value: numbers, strings, booleans or null (not recorded). */
export type ConditionValue = string | number | boolean | null;

/**
 * Conditions of one sweep. Known keys (all optional; any other key is a user column):
 * - `preparation` id of the nerve preparation (animal)
 * - `intensity` stimulus intensity, in `intensityUnit` (e.g. 'mA', 'V')
 * - `pulseWidthMs` stimulus pulse width, ms
 * - `site` recording site label; `distanceMm` conduction distance stimulus-to-recording, mm
 * - `drug`, `concentration`, `concentrationUnit` (e.g. 'uM')
 * - `temperatureC` bath temperature, degrees C
 * - `acquiredS` acquisition time since the start of the experiment, s
 * - `repeat` repeat index; `polarity` stimulus polarity (+1 or -1)
 * - `epoch` a label of the experimental phase ('baseline', 'drug', 'washout', ...)
 * - `file` and `fileSweep` the source file and the sweep index inside it
 */
export type Conditions = Readonly<Record<string, ConditionValue>>;

/** One step of the history: the verb, its full options (defaults included), and the package version. */
export interface Step {
  verb: string;
  options: Record<string, unknown>;
  version: string;
}

/** An input file: its path and SHA-256. */
export interface Source {
  path: string;
  sha256: string;
  bytes: number;
  /** for a file read through another (a binary sidecar's data file): that file's path */
  partOf?: string;
}

/** Every condition key of the sweeps, in first-seen order. */
export function conditionKeys(cs: readonly Conditions[]): string[] {
  const keys = new Set<string>();
  for (const c of cs) for (const k of Object.keys(c)) keys.add(k);
  return [...keys];
}
