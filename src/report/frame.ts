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

/**
 * Inside a Jupyter kernel (JPY_PARENT_PID is set by Jupyter for its kernels), the
 * DataFrame library is loaded in the idle time after the cell that imported fascicle,
 * so the first frame() in a later cell does not wait about a second for it. Scripts and
 * the command line never load it unless they call frame(). FASCICLE_PRELOAD=0 turns
 * this off; FASCICLE_PRELOAD=1 turns it on anywhere.
 */
export function schedulePreload(env: NodeJS.ProcessEnv = process.env): boolean {
  const want = env.FASCICLE_PRELOAD === '1' || (env.FASCICLE_PRELOAD !== '0' && env.JPY_PARENT_PID !== undefined);
  if (!want || dfd) return false;
  let isMain = true;
  try {
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    isMain = (require('node:worker_threads') as typeof import('node:worker_threads')).isMainThread;
  } catch {
    /* no worker threads */
  }
  if (!isMain) return false;
  const t = setTimeout(() => {
    try {
      danfo();
    } catch {
      /* frame() will report the problem when it is called */
    }
  }, 200);
  t.unref();
  return true;
}
schedulePreload();

/** Rows (objects with the same keys) to a danfo DataFrame; columns in first-seen key order. */
export function toFrame(rows: readonly Record<string, unknown>[]): DataFrame {
  const d = danfo();
  const cols: string[] = [];
  const seen = new Set<string>();
  for (const r of rows)
    for (const k of Object.keys(r))
      if (!seen.has(k)) {
        seen.add(k);
        cols.push(k);
      }
  if (rows.length === 0) return new d.DataFrame([], { columns: cols });
  const data: Record<string, unknown[]> = {};
  for (const c of cols) data[c] = rows.map((r) => (r[c] === undefined ? null : r[c]));
  return new d.DataFrame(data, { columns: cols });
}
