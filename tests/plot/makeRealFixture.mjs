// Writes tests/plot/fixtures/real-figures.json: what the pipeline's figures are drawn from, for the print test.
// Three studies run as `fascicle run` runs them (computeOutputs + combineStudy): the demo bundle (data-demo), the
// paired-pulse and train demo and the two-group demo (both made by the forward model into a temporary folder).
// Kept: the tables and results the registry's figure makers read (src/registry/*: figures), and, for the
// notebooks' figures that the pipeline does not make, the r50 group comparison (notebook 07) and the fields of
// notebook 06's velocity distribution of R1 (decimated to at most 1500 samples per distance; the figure draws at most
// 3000). Run after `npx tsc -p tsconfig.json`: node tests/plot/makeRealFixture.mjs
import { createRequire } from 'node:module';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';

const require = createRequire(import.meta.url);
const here = dirname(fileURLToPath(import.meta.url));
const root = join(here, '..', '..');
const lib = require(join(root, 'dist/index.js'));
const engine = require(join(root, 'dist/cli/engine.js'));

const TABLES = [
  'recruitment',
  'recruitment_points',
  'dose_response_points',
  'dose_response_summary',
  'temperature',
  'temperature_points',
  'velocity',
  'paired_pulse',
  'paired_pulse_summary',
  'train',
  'train_summary',
  'strength_duration',
  'strength_duration_points',
];
const COMPONENT_KEYS = ['class', 'preparation', 'series', 'detected', 'distance_mm', 'centroid_ms', 'peak_ms'];

async function study(manifest) {
  const options = engine.analysisOptions(manifest);
  const outputs = await engine.computeOutputs({ manifest, out: '' }, options);
  const s = lib.combineStudy(outputs, options);
  const tables = {};
  for (const k of TABLES) if (s.tables[k]?.length) tables[k] = s.tables[k];
  tables.components = s.tables.components
    .filter((r) => r.series === 'distance')
    .map((r) => Object.fromEntries(COMPONENT_KEYS.filter((k) => k in r).map((k) => [k, r[k]])));
  // sweep QC: the columns its figure reads
  const QC = ['sweep', 'preparation', `noise_${s.units}`, 'flagged', 'flags', 'reasons'];
  if (s.tables.sweep_qc?.length)
    tables.sweep_qc = s.tables.sweep_qc.map((r) => Object.fromEntries(QC.filter((k) => k in r).map((k) => [k, r[k]])));
  const results = {};
  const dr = s.results?.['dose-response'];
  if (dr?.fits)
    results['dose-response'] = {
      fits: [...dr.fits].map(([k, f]) => [k, { params: f.params, covariance: f.covariance, df: f.df }]),
    };
  if (s.results?.groups) results.groups = s.results.groups;
  console.log(manifest, Object.keys(tables).join(' '), Object.keys(results).join(' '));
  return { units: s.units, tables, results };
}

const tmp = mkdtempSync(join(tmpdir(), 'fascicle-real-figures-'));
try {
  const demo = await study(join(root, 'data-demo/manifest.json'));
  lib.model.makeRecoveryDemo(join(tmp, 'recovery'));
  const recovery = await study(join(tmp, 'recovery/manifest.json'));
  const g = lib.model.makeGroupDemo(join(tmp, 'group'), join(tmp, 'group-key'), { seed: 20261202 });
  const group = await study(g.manifest);
  // notebook 07: R50 compared between groups, one value per preparation
  const groupOf = Object.fromEntries(lib.readManifest(g.manifest).conditions.map((c) => [c.preparation, c.group]));
  const r50 = lib.compareGroups(
    group.tables.paired_pulse_summary.map((x) => ({ ...x, group: groupOf[x.preparation] })),
    { value: 'r50_ms', group: 'group', animal: 'preparation', by: ['class'] },
  );
  // notebook 06: R1's distance series, as the notebook conditions it (fewer bootstrap draws: only the figure's fields)
  const set = lib
    .readManifest(join(root, 'data-demo/manifest.json'))
    .where({ preparation: 'R1', series: 'distance' })
    .baseline({ window: [-19, -0.2] })
    .removeArtifact({ method: 'blank', window: [0, 0.12], bridge: 'linear' })
    .removeHum({ frequency: 50, harmonics: 3, exclude: [[0, 72]] });
  const vd = lib.velocityDistribution(set, { fitWindow: [0.15, 6], velocityRange: [5, 150], bootstrap: 10 });
  const dec = (a, step) => Array.from(a).filter((_, i) => i % step === 0);
  const vdist = {
    grid: vd.grid,
    fit: { method: vd.fit.method },
    units: vd.units,
    classes: vd.classes,
    reconstruction: vd.reconstruction.map((r) => {
      const step = Math.max(1, Math.ceil(r.t.length / 1500));
      return { distanceMm: r.distanceMm, t: dec(r.t, step), y: dec(r.y, step), fit: dec(r.fit, step) };
    }),
  };
  const round = (k, v) =>
    typeof v === 'number' && Number.isFinite(v) && !Number.isInteger(v) ? Number(v.toPrecision(6)) : v;
  const out = {
    note: 'Inputs of the real figures (tests/plot/makeRealFixture.mjs made this from invented demo data; do not edit).',
    demo,
    recovery,
    group: { ...group, r50 },
    vdist,
  };
  writeFileSync(join(here, 'fixtures/real-figures.json'), JSON.stringify(out, round) + '\n');
} finally {
  rmSync(tmp, { recursive: true, force: true });
}
