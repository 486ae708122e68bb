/**
 * danfo DataFrame glue, loaded lazily: requiring danfojs-node takes 1.5-3 s, almost all of it
 * in dependencies that a DataFrame does not use until one of their functions is called:
 * mathjs (median, mode, std, variance), TensorFlow.js (tensors, arithmetic between frames),
 * xlsx (Excel files) and the HTTP clients request and node-fetch (reading from a URL). While
 * danfojs-node loads, the requires of these from its own files return a stand-in that loads
 * the real module on its first use (a property read or a call), so `frame()` returns the same
 * DataFrame, about 0.1 s after the first call instead of 1.5-3 s.
 */
import type { DataFrame } from 'danfojs-node';
import Module = require('node:module');

let dfd: typeof import('danfojs-node') | undefined;

/** The dependencies of danfojs-node loaded on first use, not with it (its TensorFlow.js as it names it). */
export const DEFERRED_DEPENDENCIES = ['mathjs', 'xlsx', 'request', 'node-fetch', '@tensorflow/tfjs-node'] as const;
const TENSORFLOW = '@tensorflow/tfjs-node';

type Loader = (request: string, parent: unknown, isMain: boolean) => unknown;
const loader = Module as unknown as {
  _load: Loader;
  _resolveFilename(request: string, parent: unknown): string;
  _cache: Record<string, unknown>;
};

interface Deferred {
  /** the module, loading it on the first call */
  load(): unknown;
  /** whether it has been evaluated in this process (by the stand-in or by any other require) */
  present(): boolean;
}

/**
 * A stand-in for a module: every operation on it (reading a property, calling it, listing
 * its keys) loads the module and acts on it. `__esModule` is answered without loading (as
 * absent), so TypeScript's import helpers wrap the stand-in instead of reading the module;
 * a call of the wrapper's `default` then calls the module itself, which for request and
 * node-fetch is the function they export. For TensorFlow.js, `Tensor` (which every DataFrame
 * constructor tests its data against with instanceof) is answered without loading while the
 * module is absent: no tensor can exist before the module that makes tensors has run.
 */
function deferredModule(d: Deferred, tensorflow: boolean): unknown {
  const real = () => d.load() as Record<PropertyKey, unknown> & ((...a: unknown[]) => unknown);
  const tensorClass = {
    [Symbol.hasInstance]: (v: unknown) => d.present() && v instanceof (real().Tensor as new () => unknown),
  };
  // an arrow function as target: callable, with no non-configurable own keys to keep
  const target = () => undefined;
  return new Proxy(target, {
    get: (_, k) => {
      if (k === '__esModule') return undefined;
      if (tensorflow && k === 'Tensor' && !d.present()) return tensorClass;
      return real()[k];
    },
    has: (_, k) => k in real(),
    apply: (_, self, args) => Reflect.apply(real() as (...a: unknown[]) => unknown, self, args),
    ownKeys: () => Reflect.ownKeys(real()),
    getOwnPropertyDescriptor: (_, k) => {
      const desc = Reflect.getOwnPropertyDescriptor(real(), k);
      return desc && { ...desc, configurable: true };
    },
  });
}

/** TensorFlow.js in production mode (fewer checks, no debug banner), as danfo() has always set it. */
function prodMode(tf: unknown): void {
  try {
    (tf as { enableProdMode(): void }).enableProdMode();
  } catch {
    /* a build without it */
  }
}

/** require(id) with the deferred dependencies of danfojs-node's own files replaced by stand-ins. */
function requireDeferring(id: string): unknown {
  const original = loader._load;
  const standIns = new Map<string, unknown>();
  loader._load = function (request: string, parent: unknown, isMain: boolean) {
    const from = (parent as { filename?: string } | undefined)?.filename ?? '';
    if ((DEFERRED_DEPENDENCIES as readonly string[]).includes(request) && /[\\/]danfojs-node[\\/]/.test(from)) {
      let s = standIns.get(request);
      if (!s) {
        let mod: unknown;
        let loaded = false;
        let file: string | undefined;
        const d: Deferred = {
          load() {
            if (!loaded) {
              mod = original.call(Module, request, parent, false);
              loaded = true;
              if (request === TENSORFLOW) prodMode(mod);
            }
            return mod;
          },
          present() {
            if (loaded) return true;
            try {
              file ??= loader._resolveFilename(request, parent);
            } catch {
              return false;
            }
            return Object.hasOwn(loader._cache, file);
          },
        };
        s = deferredModule(d, request === TENSORFLOW);
        standIns.set(request, s);
      }
      return s;
    }
    return original.call(this, request, parent, isMain);
  };
  try {
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    return require(id);
  } finally {
    loader._load = original;
  }
}

/** danfojs-node (TensorFlow.js, when it loads, in production mode). */
export function danfo(): typeof import('danfojs-node') {
  if (!dfd) dfd = requireDeferring('danfojs-node') as typeof import('danfojs-node');
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
