/**
 * The figures a user gets, with their real names, legends and data: every figure the pipeline writes into a bundle
 * (the registry's figure makers, src/registry, over the tables of three studies run as `fascicle run` runs them:
 * the demo bundle, the paired-pulse and train demo, the two-group demo; tests/plot/makeRealFixture.mjs stored what they
 * read in fixtures/real-figures.json), and the notebooks' own figures (traces of demo preparation R1 conditioned as
 * notebook 01 does, class views, the sweep viewer, the R50 group comparison of notebook 07, the velocity
 * distribution of R1 from notebook 06, the sweep QC of the demo and two-group studies).
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import {
  readManifest,
  sweepsFigure,
  classViews,
  sweepViewer,
  groupFigure,
  velocityFigure,
  velocityDistributionFigure,
  velocityReconstructionFigure,
  sweepQcFigure,
  Figure,
} from '../../src';
import { studyFigureList } from '../../src/registry/index';
import type { Study } from '../../src/report/study';

const ROOT = join(__dirname, '..', '..');
type Part = { units: string; tables: Record<string, Record<string, unknown>[]>; results: Record<string, unknown> };
interface Fixture {
  demo: Part;
  recovery: Part;
  group: Part & { r50: unknown };
  vdist: unknown;
}

export function realFixture(): Fixture {
  return JSON.parse(readFileSync(join(__dirname, 'fixtures', 'real-figures.json'), 'utf8')) as Fixture;
}

/** A study as the registry's figure makers read it: its tables (absent ones empty) and results. */
function asStudy(p: Part): Study {
  const results: Record<string, unknown> = { ...p.results };
  const dr = p.results['dose-response'] as { fits: [string, unknown][] } | undefined;
  if (dr) results['dose-response'] = { fits: new Map(dr.fits) };
  const tables = new Proxy(p.tables, { get: (t, k: string) => t[k] ?? [] });
  return {
    tables,
    results,
    groups: (p.results.groups ?? null) as never,
    doseResponse: null,
    history: [],
    sources: [],
    notes: [],
    units: p.units,
    computed: 1,
  } as unknown as Study;
}

/** Every figure of the three bundles, named `<study>/<figure>`. */
export function bundleFigures(fx = realFixture()): Figure[] {
  return (['demo', 'recovery', 'group'] as const).flatMap((k) =>
    studyFigureList(asStudy(fx[k])).map((f) => new Figure(`${k}/${f.name}`, f.spec)),
  );
}

/** The notebooks' figures on the demo data (as notebooks 01, 02, 06 and 07 draw them). */
export function notebookFigures(fx = realFixture()): Figure[] {
  const raw = readManifest(join(ROOT, 'data-demo/manifest.json')).where({ preparation: 'R1', series: 'intensity' });
  const clean = raw
    .baseline({ window: [-19, -0.2] })
    .removeArtifact({ method: 'blank', window: [0, 0.12], bridge: 'linear' })
    .removeHum({ frequency: 50, harmonics: 3, exclude: [[0, 72]] })
    .lowpass(10000);
  const table = clean.components({ preset: 'mammalian', earliestMs: 0.12 });
  const last = clean.nSweeps - 1;
  const named = (n: string, f: Figure) => new Figure(`notebook/${n}`, f.spec);
  return [
    named(
      'raw-traces',
      sweepsFigure(raw.where({ intensity: { min: 5 } }).crop(-1, 3), { title: 'Raw: artifact, hum and noise' }),
    ),
    named('intensity-series', sweepsFigure(clean, { title: 'Intensity series' })),
    named('traces-marks', sweepsFigure(clean, { sweeps: [last], table, title: 'Class windows, onset and peak marks' })),
    ...classViews(clean, table, { sweeps: [last] }).map((f) => named(f.name, f)),
    named('sweep-viewer', sweepViewer(clean, { table })),
    named('r1-20mA', sweepsFigure(clean.where({ intensity: 20 }).crop(-0.5, 4), { title: 'R1, 20 mA' })),
    named(
      'velocity-R1',
      velocityFigure(
        fx.demo.tables.components.filter((r) => r.preparation === 'R1'),
        'centroid',
      ),
    ),
    named('groups-r50', groupFigure(fx.group.r50 as never)),
    named('velocity-distribution', velocityDistributionFigure(fx.vdist as never)),
    named('velocity-reconstruction', velocityReconstructionFigure(fx.vdist as never)),
    // sweep QC of the demo study and of the two-group study (whose sweeps carry several kinds of flag)
    ...(['demo', 'group'] as const)
      .filter((k) => fx[k].tables.sweep_qc?.length)
      .map((k) => named(`sweep-qc-${k}`, sweepQcFigure(fx[k].tables.sweep_qc as never, fx[k].units))),
  ];
}
