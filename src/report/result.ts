/**
 * Shared behaviour of result objects: display in a notebook or terminal, provenance,
 * methods text and bundle export. A result supplies its history, input files, named
 * tables, and its HTML and text forms.
 */
import { inspect } from 'node:util';
import type { Step, Source } from '../sweeps/SweepSet';
import { displayHtml } from '../notebook/html';
import { makeProvenance, writeBundle, type Provenance } from './bundle';
import { methodsText } from './methods';

export abstract class Result {
  abstract readonly history: readonly Step[];
  abstract readonly sources: readonly Source[];
  /** The result's tables by name (the files of exportBundle). */
  abstract tables(): Record<string, readonly object[]>;
  abstract toHTML(): string;
  abstract toString(): string;

  /** History of every step (verb, full options, version) and the input files' SHA-256, as JSON. */
  provenance(): Provenance {
    return makeProvenance(this.history, this.sources);
  }

  /** A methods paragraph generated from the history. */
  methods(): string {
    return methodsText(this.history);
  }

  /** Write the tables (CSV and JSON), methods text and provenance to `dir` atomically. */
  exportBundle(dir: string): string[] {
    return writeBundle(dir, {
      tables: this.tables() as Record<string, Record<string, unknown>[]>,
      methods: this.methods(),
      provenance: this.provenance(),
    });
  }

  /** Show in a notebook cell (or print the text form). */
  show(): void {
    displayHtml(this.toHTML(), this.toString());
  }

  [inspect.custom](): string {
    return this.toString();
  }
}
