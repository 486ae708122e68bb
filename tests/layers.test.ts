/**
 * One-way layers (issue 13): no runtime import cycle in src/, and no runtime import against the layer order of
 * .dependency-cruiser.cjs (lowest first: base, kernels, display, verbs, sweeps, io, model, measure, analysis,
 * table, plot, registry, report, cli, api). Type-only imports are allowed: dependency-cruiser 17 reads the
 * JavaScript the TypeScript compiler makes, where `import type` and imports used only as types are gone, while
 * lazy `require()` and dynamic `import()` count. The rules are common practice (no source).
 */
import { describe, it, expect } from 'vitest';
import { createRequire } from 'node:module';
import { mkdtempSync, mkdirSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { cruise, type IViolation } from 'dependency-cruiser';

const ROOT = resolve(__dirname, '..');
const requireCjs = createRequire(__filename);
const config = requireCjs(join(ROOT, '.dependency-cruiser.cjs'));
const { LAYERS, layerOf, sourceFiles, layerRules, cruiseOptions } = config.layers as {
  LAYERS: { name: string; paths: string[]; what: string }[];
  layerOf(path: string): number;
  sourceFiles(dir: string, root?: string): string[];
  layerRules(files: string[]): object[];
  cruiseOptions: Record<string, unknown>;
};

/**
 * Violations that their owners are removing in their own files this session (each is a one-line import change,
 * see /work/notes/layers.md). The lead empties this list at the end. An entry that no longer occurs fails the test
 * too, so the list cannot go stale.
 */
// runtime imports against the layer order that are allowed: none (an entry here must still occur, or the test fails)
const ALLOWLIST: { rule: string; from: string; to: string; owner: string }[] = [];

interface Found {
  rule: string;
  from: string;
  to: string;
  cycle: string[];
}

/** Cruise `dirs` below `baseDir` with the layer rules for `files`; the violations found. */
async function violations(baseDir: string, dirs: string[], files: string[]): Promise<Found[]> {
  const result = await cruise(dirs, {
    ...cruiseOptions,
    ...(baseDir === ROOT ? {} : { tsConfig: undefined }),
    baseDir,
    validate: true,
    ruleSet: { forbidden: layerRules(files) as never },
  });
  const output = result.output as { summary: { violations: IViolation[] } };
  return output.summary.violations.map((v) => ({
    rule: v.rule.name,
    from: v.from,
    to: v.to,
    cycle: (v.cycle ?? []).map((c) => (typeof c === 'string' ? c : c.name)),
  }));
}

const key = (v: { rule: string; from: string; to: string }) => `${v.rule}: ${v.from} -> ${v.to}`;

/** What a violation means, naming both files, their layers and the rule. */
function explain(v: Found): string {
  if (v.rule === 'no-cycle') {
    return `${[v.from, ...v.cycle].join(' -> ')} is a runtime import cycle (rule no-cycle): break it with import type, or move the shared code into a lower module`;
  }
  const a = layerOf(v.from);
  const b = layerOf(v.to);
  return (
    `${v.from} (layer ${a} ${LAYERS[a]?.name}) imports ${v.to} (layer ${b} ${LAYERS[b]?.name}) at run time ` +
    `(rule ${v.rule}): a module may import only its own layer or lower ones. Use import type, move the code ` +
    `down, or install the method from the higher layer (.dependency-cruiser.cjs)`
  );
}

describe('one-way layers of src/ (.dependency-cruiser.cjs)', () => {
  const files = sourceFiles(join(ROOT, 'src'), ROOT);

  it('puts every source file in a layer', () => {
    const lost = files.filter((f) => layerOf(f) < 0);
    expect(lost, `files in no layer: add them to LAYERS in .dependency-cruiser.cjs: ${lost.join(', ')}`).toEqual([]);
    expect(files.length).toBeGreaterThan(80);
  });

  it('has no runtime import cycle and no runtime import upwards, except the allowlisted ones', async () => {
    const found = await violations(ROOT, ['src'], files);
    const allowed = new Set(ALLOWLIST.map(key));
    const unexpected = found.filter((v) => !allowed.has(key(v))).map(explain);
    const present = new Set(found.map(key));
    const stale = ALLOWLIST.filter((a) => !present.has(key(a))).map(
      (a) => `${key(a)} (owner ${a.owner}) no longer occurs: remove it from ALLOWLIST in tests/layers.test.ts`,
    );
    expect([...unexpected, ...stale]).toEqual([]);
  });
});

describe('the layer rules themselves, on a small tree written for the test', () => {
  it('flag an upward import, a lazy require upwards and a cycle, and let type-only imports pass', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-layers-'));
    const tree: Record<string, string> = {
      // a verb importing SweepSet's layer at run time: against the order
      'src/verbs/a.ts': "import { b } from '../sweeps/b';\nexport const a = () => b;\n",
      // import type, and a named import used only as a type: both gone at run time
      'src/sweeps/b.ts':
        "import type { C } from '../analysis/c';\nimport { F } from '../plot/f';\n" +
        'export const b = 1;\nexport type B = C | F;\n',
      // a runtime cycle inside one layer
      'src/analysis/c.ts': "import { d } from './d';\nexport interface C { x: number }\nexport const c = () => d;\n",
      'src/analysis/d.ts': "import { c } from './c';\nexport const d = () => c;\n",
      // a lazy require of a higher layer inside a function still counts
      'src/analysis/e.ts': "export function e(): unknown {\n  return require('../plot/f');\n}\n",
      'src/plot/f.ts': 'export type F = number;\nexport const f = 1;\n',
    };
    try {
      for (const [p, text] of Object.entries(tree)) {
        mkdirSync(dirname(join(dir, p)), { recursive: true });
        writeFileSync(join(dir, p), text);
      }
      const found = await violations(dir, ['src'], Object.keys(tree).sort());
      expect(found.map(key).sort()).toEqual([
        'layer-analysis: src/analysis/e.ts -> src/plot/f.ts',
        'layer-verbs: src/verbs/a.ts -> src/sweeps/b.ts',
        // dependency-cruiser reports each cycle once, from its first module
        'no-cycle: src/analysis/c.ts -> src/analysis/d.ts',
      ]);
      const messages = found.map(explain).join('\n');
      expect(messages).toContain('src/verbs/a.ts (layer 3 verbs) imports src/sweeps/b.ts (layer 4 sweeps)');
      expect(messages).toContain('src/analysis/c.ts -> src/analysis/d.ts -> src/analysis/c.ts');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
