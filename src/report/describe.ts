/** provenance(), methods() and exportBundle() for any result that carries a history and its inputs. */
import type { Step, Source } from '../sweeps/SweepSet';
import { makeProvenance, writeBundle, type Provenance } from './bundle';
import { methodsText } from './methods';

export interface Described { history: readonly Step[]; sources: readonly Source[] }

export function provenanceOf(r: Described): Provenance {
  return makeProvenance(r.history, r.sources);
}

export function methodsOf(r: Described): string {
  return methodsText(r.history);
}

/** Write tables, methods text and provenance of a result to `dir` atomically. */
export function exportResult(dir: string, r: Described, tables: Record<string, readonly object[]>): string[] {
  return writeBundle(dir, { tables: tables as Record<string, Record<string, unknown>[]>, methods: methodsOf(r), provenance: provenanceOf(r) });
}
