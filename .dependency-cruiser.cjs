/**
 * One-way layers (issue 13). Lowest first: a module may import at run time only from its own layer or a lower
 * one, and no runtime import may close a cycle. Type-only imports are free: the cruise reads the JavaScript the
 * TypeScript compiler makes (tsPreCompilationDeps: false), where `import type` and imports used only as types
 * are gone, while lazy `require()` and dynamic `import()` inside functions count.
 *
 * A file belongs to the layer of the longest path below that matches it (a file named exactly wins over its
 * folder). tests/layers.test.ts runs these rules and fails on any violation that is not in its allowlist.
 * By hand: `npx depcruise src` (prints each violation with the rule's name).
 */
const { readdirSync, statSync } = require('node:fs');
const { join, relative } = require('node:path');

/** @type {{ name: string; paths: string[]; what: string }[]} */
const LAYERS = [
  { name: 'base', paths: ['src/errors.ts', 'src/validate.ts', 'src/version.ts'], what: 'typed errors, validators' },
  {
    name: 'kernels',
    paths: ['src/signal/', 'src/fit/', 'src/parallel/', 'src/model/random.ts', 'src/io/plainRows.ts'],
    what: 'pure numeric code: filters, fits, the thread pool and its kernels, the seeded generator, the row parser',
  },
  {
    name: 'display',
    paths: [
      'src/notebook/html.ts',
      'src/notebook/show.ts',
      'src/notebook/progress.ts',
      'src/notebook/result.ts',
      'src/report/frame.ts',
      'src/plot/labels.ts',
    ],
    what: 'HTML tables, tslab display, Result base class, DataFrame glue, unit text (no project type at run time)',
  },
  { name: 'verbs', paths: ['src/verbs/'], what: 'functions of samples and time base -> samples or corrections' },
  { name: 'sweeps', paths: ['src/sweeps/', 'src/notebook/sweepSet.ts'], what: 'SweepSet and its display' },
  { name: 'io', paths: ['src/io/'], what: 'readers and writers of files (they build SweepSets)' },
  { name: 'model', paths: ['src/model/'], what: 'the simulator: nerve populations -> SweepSets, demo files' },
  { name: 'measure', paths: ['src/measure/'], what: 'fibre-class components of each sweep' },
  {
    name: 'analysis',
    paths: ['src/analysis/', 'src/io/manifest.ts'],
    what: 'velocity, recruitment, dose-response, statistics, ...; the study manifest (names presets and analyses)',
  },
  { name: 'table', paths: ['src/measure/table.ts'], what: 'ComponentTable: the notebook entry to every analysis' },
  { name: 'plot', paths: ['src/plot/'], what: 'figure builders and export' },
  { name: 'registry', paths: ['src/registry/'], what: 'one entry per analysis' },
  { name: 'report', paths: ['src/report/'], what: 'pipeline, study, methods, bundle' },
  { name: 'cli', paths: ['src/cli/'], what: 'the command line' },
  { name: 'api', paths: ['src/index.ts'], what: 'the public surface (loads every layer)' },
];

/** The layer index of a path relative to the repository (e.g. 'src/io/nwb.ts'), or -1. */
function layerOf(path) {
  let best = -1;
  let bestLength = -1;
  LAYERS.forEach((l, i) =>
    l.paths.forEach((p) => {
      const hit = p.endsWith('/') ? path.startsWith(p) : path === p;
      if (hit && p.length > bestLength) {
        best = i;
        bestLength = p.length;
      }
    }),
  );
  return best;
}

/** Every .ts file under dir, as paths relative to root. */
function sourceFiles(dir, root = __dirname) {
  const out = [];
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) out.push(...sourceFiles(p, root));
    else if (name.endsWith('.ts')) out.push(relative(root, p).split('\\').join('/'));
  }
  return out.sort();
}

const escape = (s) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
const anyOf = (files) => (files.length ? `^(${files.map(escape).join('|')})$` : '^$');

/** The forbidden rules for the given files: one per layer (no import upwards) and one for cycles. */
function layerRules(files) {
  const byLayer = LAYERS.map((_, i) => files.filter((f) => layerOf(f) === i));
  const rules = [];
  LAYERS.forEach((l, i) => {
    const above = byLayer.slice(i + 1).flat();
    if (!byLayer[i].length || !above.length) return;
    rules.push({
      name: `layer-${l.name}`,
      comment: `${l.name} (layer ${i}) may import only its own layer or lower ones at run time`,
      severity: 'error',
      from: { path: anyOf(byLayer[i]) },
      to: { path: anyOf(above) },
    });
  });
  rules.push({
    name: 'no-cycle',
    comment: 'no runtime import cycle (type-only imports are not followed)',
    severity: 'error',
    from: { path: '^src/' },
    to: { circular: true },
  });
  return rules;
}

const cruiseOptions = {
  tsPreCompilationDeps: false,
  tsConfig: { fileName: 'tsconfig.json' },
  doNotFollow: { path: 'node_modules' },
  exclude: { path: 'node_modules' },
  includeOnly: '^src/',
};

module.exports = {
  forbidden: layerRules(sourceFiles(join(__dirname, 'src'))),
  options: cruiseOptions,
};

// for tests/layers.test.ts (dependency-cruiser reads only forbidden and options)
Object.defineProperty(module.exports, 'layers', {
  enumerable: false,
  value: { LAYERS, layerOf, sourceFiles, layerRules, cruiseOptions },
});
