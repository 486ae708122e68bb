/**
 * The report layer's part of result objects. The `Result` base class lives in src/notebook/result.ts (below
 * measure/ and analysis/, so their results need not import the report layer); this module hands it the
 * provenance, methods text and bundle writer of src/report when it is loaded (src/index.ts loads it), and
 * re-exports it for existing imports. New code imports `Result` from '../notebook/result'.
 */
import { provideResultServices } from '../notebook/result';
import { makeProvenance, writeBundle } from './bundle';
import { methodsText } from './methods';

provideResultServices({
  makeProvenance: (history, sources) => makeProvenance(history, sources),
  methodsText: (history) => methodsText(history),
  writeBundle: (dir, content) => writeBundle(dir, content),
});

export { Result, provideResultServices } from '../notebook/result';
export type { ResultServices } from '../notebook/result';
