/**
 * Fiber-class presets: conduction-velocity ranges per class.
 *
 * Mammalian preset (about 37 C), from ONE table: J. A. Kiernan, table of nerve fibre
 * types (Erlanger-Gasser letters with Lloyd-Hunt numerals), University of Western
 * Ontario: A-alpha 70-120 m/s, A-beta 60-80 m/s, A-gamma 15-40, A-delta 10-30,
 * B 5-15, C 0.5-2.5 m/s. The compound-response preset merges A-alpha and A-beta
 * (60-120 m/s), the waves that a nerve-trunk recording shows as one "A-alpha/beta"
 * component.
 *
 * Amphibian preset (room temperature, about 20 C): from memory, not checked against a
 * table (frog sciatic: A wave about 20-40 m/s; myelinated about 2.5 m/s per um).
 *
 * Temperature: ranges are scaled by Q10^((T - Tref)/10); the default Q10 of 1.4 for
 * conduction velocity lies in the published range for mammalian nerve (1.36-1.44,
 * Lowitzsch et al. 1977; about 1.3 in rat tail nerve, Leandri et al. 2008).
 */
import { OptionError } from '../errors';

export interface FiberClass {
  /** label, e.g. 'A-alpha/beta' */
  name: string;
  /** velocity range [slowest, fastest], m/s at refTemperatureC */
  velocity: [number, number];
  /** whether the fibers are myelinated (informative) */
  myelinated?: boolean;
}

export interface ClassPreset {
  name: string;
  refTemperatureC: number;
  q10: number;
  source: string;
  classes: FiberClass[];
}

export const PRESETS: Record<string, ClassPreset> = {
  mammalian: {
    name: 'mammalian',
    refTemperatureC: 37,
    q10: 1.4,
    source: 'Kiernan, table of nerve fibre types (Erlanger-Gasser classes), mammalian nerve at about 37 C',
    classes: [
      { name: 'A-alpha/beta', velocity: [60, 120], myelinated: true },
      { name: 'A-delta', velocity: [10, 30], myelinated: true },
      { name: 'C', velocity: [0.5, 2.5], myelinated: false },
    ],
  },
  'mammalian-detailed': {
    name: 'mammalian-detailed',
    refTemperatureC: 37,
    q10: 1.4,
    source: 'Kiernan, table of nerve fibre types (Erlanger-Gasser classes), mammalian nerve at about 37 C',
    classes: [
      { name: 'A-alpha', velocity: [70, 120], myelinated: true },
      { name: 'A-beta', velocity: [60, 80], myelinated: true },
      { name: 'A-gamma', velocity: [15, 40], myelinated: true },
      { name: 'A-delta', velocity: [10, 30], myelinated: true },
      { name: 'B', velocity: [5, 15], myelinated: true },
      { name: 'C', velocity: [0.5, 2.5], myelinated: false },
    ],
  },
  amphibian: {
    name: 'amphibian',
    refTemperatureC: 20,
    q10: 1.8,
    source: 'frog sciatic nerve at room temperature (values from memory, not checked against a table)',
    classes: [
      { name: 'A', velocity: [15, 45], myelinated: true },
      { name: 'B', velocity: [3, 8], myelinated: true },
      { name: 'C', velocity: [0.2, 1], myelinated: false },
    ],
  },
};

/** Resolve a preset name or a custom preset, checking every range. */
export function resolvePreset(p: string | ClassPreset | FiberClass[]): ClassPreset {
  let preset: ClassPreset;
  if (typeof p === 'string') {
    const found = PRESETS[p];
    if (!found)
      throw new OptionError(
        `invalid preset: ${JSON.stringify(p)}; must be one of ${Object.keys(PRESETS)
          .map((k) => JSON.stringify(k))
          .join(', ')} or a list of classes`,
      );
    preset = found;
  } else if (Array.isArray(p)) {
    preset = { name: 'custom', refTemperatureC: 37, q10: 1.4, source: 'user-defined classes', classes: p };
  } else preset = p;
  if (!preset.classes.length) throw new OptionError('invalid preset: no classes');
  for (const c of preset.classes) {
    const [lo, hi] = c.velocity ?? [];
    if (!(lo > 0 && hi > lo && Number.isFinite(hi)))
      throw new OptionError(
        `invalid velocity range for class ${JSON.stringify(c.name)}: ${JSON.stringify(c.velocity)}; must be [slowest, fastest] m/s with 0 < slowest < fastest`,
      );
  }
  return preset;
}

/** A class's velocity range at temperature T (C). */
export function scaledRange(
  c: FiberClass,
  preset: ClassPreset,
  temperatureC: number | undefined,
  q10 = preset.q10,
): [number, number] {
  if (temperatureC === undefined || temperatureC === null || !Number.isFinite(temperatureC)) return [...c.velocity];
  const f = Math.pow(q10, (temperatureC - preset.refTemperatureC) / 10);
  return [c.velocity[0] * f, c.velocity[1] * f];
}

/** Latency window [earliest, latest] in ms for a velocity range (m/s = mm/ms) and distance (mm). */
export function latencyWindow(range: [number, number], distanceMm: number, utilisationMs = 0): [number, number] {
  return [utilisationMs + distanceMm / range[1], utilisationMs + distanceMm / range[0]];
}
