/** Helpers on per-sweep conditions that SweepSet and its display share. */
import type { Conditions } from './SweepSet';

/** Every condition key of the sweeps, in first-seen order. */
export function conditionKeys(cs: readonly Conditions[]): string[] {
  const keys = new Set<string>();
  for (const c of cs) for (const k of Object.keys(c)) keys.add(k);
  return [...keys];
}
