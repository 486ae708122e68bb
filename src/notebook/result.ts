/**
 * Shared behaviour of result objects: display in a notebook or terminal, provenance,
 * methods text and bundle export. A result supplies its history, input files, named
 * tables, and its HTML and text forms.
 *
 * Layer: this module sits below sweeps/ (it imports only src/notebook/html.ts at run time), so
 * measure/ and analysis/ results can extend it without importing the report layer. Provenance,
 * the methods text and bundle writing belong to src/report: src/report/result.ts hands them in
 * with `provideResultServices` when it is loaded, which importing the package (src/index.ts) does.
 */
import { inspect } from 'node:util';
import type { Step, Source } from '../sweeps/SweepSet';
import type { Provenance, BundleContent } from '../report/bundle';
import { displayHtml } from './html';

/** What a result needs from the report layer (given by src/report/result.ts). */
export interface ResultServices {
  makeProvenance(history: readonly Step[], sources: readonly Source[]): Provenance;
  methodsText(history: readonly Step[]): string;
  writeBundle(dir: string, content: BundleContent): string[];
}

let services: ResultServices | null = null;

/** Hand in the report layer's provenance, methods text and bundle writer (src/report/result.ts does). */
export function provideResultServices(s: ResultServices): void {
  services = s;
}

function report(call: string): ResultServices {
  if (!services) {
    throw new Error(
      `${call} needs the report layer, which is not loaded: import the package ('fascicle', src/index.ts) ` +
        `or src/report/result.ts once before calling it`,
    );
  }
  return services;
}

export abstract class Result {
  abstract readonly history: readonly Step[];
  abstract readonly sources: readonly Source[];
  /** The result's tables by name (the files of exportBundle). */
  abstract tables(): Record<string, readonly object[]>;
  abstract toHTML(): string;
  abstract toString(): string;

  /** History of every step (verb, full options, version) and the input files' SHA-256, as JSON. */
  provenance(): Provenance {
    return report('provenance()').makeProvenance(this.history, this.sources);
  }

  /** A methods paragraph generated from the history. */
  methods(): string {
    return report('methods()').methodsText(this.history);
  }

  /** Write the tables (CSV and JSON), methods text and provenance to `dir` atomically. */
  exportBundle(dir: string): string[] {
    return report('exportBundle()').writeBundle(dir, {
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
