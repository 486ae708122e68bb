/** danfo DataFrame glue, loaded lazily (requiring danfojs-node takes about 0.8 s). */
import type { DataFrame } from 'danfojs-node';

let dfd: typeof import('danfojs-node') | undefined;

/** danfojs-node, with TensorFlow.js production mode on so it prints no banner. */
export function danfo(): typeof import('danfojs-node') {
  if (!dfd) {
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    dfd = require('danfojs-node') as typeof import('danfojs-node');
    try {
      (dfd as unknown as { tensorflow: { enableProdMode(): void } }).tensorflow.enableProdMode();
    } catch {
      /* older builds have no tensorflow export */
    }
  }
  return dfd;
}

/** Rows (objects with the same keys) to a danfo DataFrame; columns in first-seen key order. */
export function toFrame(rows: readonly Record<string, unknown>[]): DataFrame {
  const d = danfo();
  const cols: string[] = [];
  const seen = new Set<string>();
  for (const r of rows) for (const k of Object.keys(r)) if (!seen.has(k)) { seen.add(k); cols.push(k); }
  if (rows.length === 0) return new d.DataFrame([], { columns: cols });
  const data: Record<string, unknown[]> = {};
  for (const c of cols) data[c] = rows.map((r) => (r[c] === undefined ? null : r[c]));
  return new d.DataFrame(data, { columns: cols });
}
