// The analysis registry (src/registry): every registered analysis's declared tables are in the bundle when the data
// has its series (and its option, for an opt-in analysis), its methods sentence is in the methods text exactly when
// it ran, and its notebook entry points exist. Data: a small forward-model study (src/model/nerve.ts, one fast fibre
// class) with every series the registry knows; the checks are about the wiring, not the numbers (the numbers are
// tested against their references in tests/analysis, tests/fit and tests/external).
import { describe, it, expect, afterAll } from 'vitest';
import { mkdtempSync, rmSync, readdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { SweepSet } from '../../src/sweeps/SweepSet';
import { rodentSciatic, simulateNerve, type NerveModel } from '../../src/model/nerve';
import { simulatePairedPulse, simulateTrain } from '../../src/model/pulses';
import { runPreparation, combineStudy, byPreparation, type Study } from '../../src/report/study';
import type { PipelineOptions } from '../../src/report/pipeline';
import { methodsText } from '../../src/report/methods';
import { writeBundle, makeProvenance } from '../../src/report/bundle';
import { ANALYSES, tableSpecs, studyFigureList, stageOf } from '../../src/registry/index';
import { sentenceFor } from '../../src/registry/sentences';
import { ComponentTable } from '../../src/measure/table';
import * as api from '../../src';
import { bundleTables } from '../../src/cli/engine';
import { CONDITION_COLUMNS, apiColumns } from '../../src/registry/columns';

const m0 = rodentSciatic();
// the two myelinated classes (the model's own velocities and IC50s; two classes so that the dose-response compares
// them); two preparations of a group slower by 0.85
const model = (f = 1): NerveModel => ({
  ...m0,
  populations: m0.populations.slice(0, 2).map((p) => ({ ...p, count: 150, velocityFactor: p.velocityFactor * f })),
});
const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
const grid = { fs: 50000, t0Ms: -3, nSamples: 900 };
const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, pulseWidthMs: 0.05, pulsesMs: [0] };

/** One preparation with every series: distance, intensity, dose, temperature, pulse width, paired pulse, train. */
function preparation(prep: string, seed: number, f: number): SweepSet {
  const group = f === 1 ? 'control' : 'slow';
  const c = (series: string, extra: Record<string, string | number> = {}) => ({
    conditions: { preparation: prep, group, series, ...extra },
  });
  const sweeps = [];
  for (const d of [20, 30]) for (let r = 0; r < 2; r++) sweeps.push({ ...rc, distanceMm: d, ...c('distance') });
  for (const i of [0.05, 0.1, 0.3, 1, 3, 20]) sweeps.push({ ...rc, intensity: i, ...c('intensity') });
  for (const x of [0, 0.3, 1, 3, 10, 30]) sweeps.push({ ...rc, concentration: x, ...c('dose') });
  for (const t of [27, 32, 37]) sweeps.push({ ...rc, temperatureC: t, ...c('temperature') });
  for (const w of [0.02, 0.05, 0.2])
    for (const i of [0.05, 0.1, 0.3, 1, 3, 20])
      sweeps.push({ ...rc, pulseWidthMs: w, intensity: i, ...c('pulse-width') });
  const main = simulateNerve({ model: model(f), seed, grid, sweeps, nuisance: nz });
  // truth: the first distance sweep of P1 held on an amplifier rail for 0.4 ms (QC flags it, reject removes it)
  if (prep === 'P1') for (let k = 0; k < 20; k++) main.data[main.indexAt(3) + k] = 4000;
  const extra = { preparation: prep, group };
  const pp = simulatePairedPulse({
    model: model(f),
    seed,
    grid,
    base: rc,
    intervalsMs: [0.5, 0.6, 0.8, 1, 1.5, 2, 3, 5],
    repeats: 1,
    nuisance: nz,
    conditions: { ...extra, series: 'paired-pulse' },
  });
  const tr = simulateTrain({
    model: model(f),
    seed,
    grid,
    base: rc,
    frequenciesHz: [400, 1000],
    pulses: 4,
    nuisance: nz,
    conditions: { ...extra, series: 'train' },
  });
  return SweepSet.concat([main, pp, tr]);
}

const all = SweepSet.concat([
  preparation('P1', 11, 1),
  preparation('P2', 12, 1),
  preparation('P3', 13, 0.85),
  preparation('P4', 14, 0.85),
]);
const base: PipelineOptions = {
  baseline: { window: [-2.8, -0.2] },
  components: { classes: ['A-alpha/beta', 'A-delta'] },
  averageRepeats: false,
};
const full: PipelineOptions = {
  ...base,
  reject: true,
  groups: { value: 'velocity_m_s', table: 'velocity' },
  mixed: { value: 'peak_ms', fixed: ['group'] },
  velocityDistribution: { bootstrap: 0, nVelocities: 20 },
};
const study = (set: SweepSet, o: PipelineOptions): Study =>
  combineStudy(
    byPreparation(set).map((p) => runPreparation(p.set, o)),
    o,
  );
const everything = study(all, full);
// only the distance series, no opt-in analysis, no QC
const plain: PipelineOptions = { ...base, qc: false };
const distances = all.where((c) => c.series === 'distance');
const distanceOnly = study(distances, plain);

/** Whether a study has an analysis's series and (for an opt-in one) its option. */
const fed = (a: (typeof ANALYSES)[number], set: SweepSet, o: PipelineOptions) => {
  const series = new Set(set.conditions.map((c) => c.series));
  const hasSeries = !a.consumes.series || a.consumes.series.some((x) => series.has(x));
  const opt = a.consumes.option;
  const asked = !a.consumes.optIn || (opt !== undefined && o[opt] !== undefined);
  return hasSeries && asked && !(opt && o[opt] === false);
};

const dir = mkdtempSync(join(tmpdir(), 'fascicle-registry-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('analysis registry', () => {
  it('ids, table names and methods verbs are unique; tables are snake_case; entries name their stage', () => {
    const ids = ANALYSES.map((a) => a.id);
    expect(new Set(ids).size).toBe(ids.length);
    const names = tableSpecs().map((t) => t.name);
    expect(new Set(names).size).toBe(names.length);
    for (const n of names) expect(n).toMatch(/^[a-z][a-z0-9]*(_[a-z0-9]+)*$/);
    const verbs = ANALYSES.flatMap((a) => Object.keys(a.methods ?? {}));
    expect(new Set(verbs).size).toBe(verbs.length);
    for (const v of verbs) expect(sentenceFor(v)).toBeTypeOf('function');
    for (const a of ANALYSES) {
      expect(a.perPreparation || a.acrossPreparations).toBeTruthy();
      expect(['raw', 'conditioned', 'components']).toContain(stageOf(a));
      expect(a.tables.length).toBeGreaterThan(0);
    }
  });

  it('every notebook entry point an analysis names exists (a ComponentTable method or a package export)', () => {
    for (const a of ANALYSES) {
      expect(a.api.length).toBeGreaterThan(0);
      for (const name of a.api) {
        if (name.startsWith('ComponentTable.'))
          expect(typeof (ComponentTable.prototype as unknown as Record<string, unknown>)[name.slice(15)]).toBe(
            'function',
          );
        else expect(typeof (api as Record<string, unknown>)[name]).toBe('function');
      }
    }
  });

  it('with every series present, every analysis ran and wrote each of its declared tables into the bundle', () => {
    const written = writeBundle(join(dir, 'all'), {
      tables: everything.tables as unknown as Record<string, Record<string, unknown>[]>,
      methods: methodsText(everything.history),
      provenance: makeProvenance(everything.history, everything.sources),
    });
    for (const a of ANALYSES) {
      expect(fed(a, all, full), a.id).toBe(true);
      for (const t of a.tables) {
        expect(written, `${a.id}: ${t.name}`).toContain(`tables/${t.name}.csv`);
        expect(written, `${a.id}: ${t.name}`).toContain(`tables/${t.name}.json`);
        const rows = JSON.parse(readFileSync(join(dir, 'all', 'tables', `${t.name}.json`), 'utf8'));
        expect(rows.length, `${a.id}: ${t.name} has rows`).toBeGreaterThan(0);
      }
    }
    // the bundle holds no table the registry does not declare
    const declared = new Set(tableSpecs().map((t) => `${t.name}.csv`));
    for (const f of readdirSync(join(dir, 'all', 'tables')).filter((x) => x.endsWith('.csv')))
      expect(declared.has(f), f).toBe(true);
    expect(everything.computed).toBeGreaterThan(0);
    expect(studyFigureList(everything).length).toBeGreaterThan(5);
  });

  it('without its series (or its option) an analysis writes no rows and is not in the methods text', () => {
    for (const a of ANALYSES) {
      if (fed(a, distances, plain)) continue;
      for (const t of a.tables) expect(distanceOnly.tables[t.name] ?? [], `${a.id}: ${t.name}`).toEqual([]);
    }
    // velocity is fed (distance series); the rest is not
    expect(distanceOnly.tables.velocity.length).toBeGreaterThan(0);
    expect(ANALYSES.filter((a) => !fed(a, distances, plain)).map((a) => a.id)).toEqual(
      expect.arrayContaining(['recruitment', 'dose-response', 'temperature', 'sweep-qc', 'paired-pulse', 'train']),
    );
  });

  it('the methods text has an analysis sentence exactly when the analysis ran', () => {
    const text = methodsText(everything.history);
    const small = methodsText(distanceOnly.history);
    for (const a of ANALYSES) {
      const verbs = Object.keys(a.methods ?? {});
      const steps = everything.history.filter((h) => verbs.includes(h.verb));
      expect(steps.length, `${a.id} step in the history`).toBeGreaterThan(0);
      for (const h of steps) {
        const said = sentenceFor(h.verb)!(h)!;
        expect(text, a.id).toContain(said.text);
        for (const r of said.refs ?? []) expect(text).toContain(r);
        const ran = fed(a, distances, plain);
        // the sentence's opening words identify it (options change only its numbers)
        expect(small.includes(said.text.slice(0, 40)), `${a.id} in the distance-only methods`).toBe(ran);
      }
    }
  });

  it('a label naming conditions as key=value names them as the bundle columns do (velocity group, sweep QC)', () => {
    // in the API the keys are the manifest's (temperatureC=37); in the bundle every key= in any text cell is the
    // condition's column name (temperature_C=37), the same text the bundle's own condition column has
    const t = bundleTables(everything);
    const apiKey = new RegExp(`(^|, )(${Object.keys(CONDITION_COLUMNS).join('|')})=`);
    const left: string[] = [];
    for (const [name, rows] of Object.entries(t))
      for (const r of rows)
        for (const [c, v] of Object.entries(r)) if (typeof v === 'string' && apiKey.test(v)) left.push(`${name}.${c}`);
    expect([...new Set(left)], 'text cells with API condition keys').toEqual([]);
    const v = t.velocity.find((r) => typeof r.group === 'string' && /temperature_C=/.test(r.group as string))!;
    expect(v, 'a velocity row whose group names the temperature').toBeTruthy();
    // the label's value of each key is that row's own condition column
    for (const part of (v.group as string).split(', ')) {
      const [k, val] = [part.slice(0, part.indexOf('=')), part.slice(part.indexOf('=') + 1)];
      expect([k, val]).toEqual([k, v[k] === null || v[k] === undefined ? '' : String(v[k])]);
    }
    // API rows keep the API keys (a notebook's velocity().show())
    const own = everything.tables.velocity as unknown as Record<string, unknown>[];
    expect(own.some((r) => /(^|, )temperatureC=/.test(String(r.group)))).toBe(true);
  });

  it('bundle columns: one style (snake_case, unit last), a unit on every numeric column that has one', () => {
    const t = bundleTables(everything);
    const unitless = new Set<string>();
    const style: string[] = [];
    for (const [name, rows] of Object.entries(t)) {
      const cols = new Set(rows.flatMap((r) => Object.keys(r)));
      for (const c of cols) {
        if (!/^[a-z0-9]+(_[A-Za-z0-9%]+)*$/.test(c) || c in CONDITION_COLUMNS) style.push(`${name}.${c}`);
        const numeric = rows.some((r) => typeof r[c] === 'number' && !Number.isInteger(r[c]));
        if (numeric && !/_(ms|s|m_s|mm|uV|mV|V|uV_ms|mV_ms|C|kJ_mol|Hz|mA|uA|uM|nM|mM|unit)$/.test(c))
          unitless.add(`${name}.${c}`);
      }
      // the bundle names map back to the analyses' own keys
      const back = apiColumns(name, t[name] as never);
      const own = (everything.tables[name] ?? []) as Record<string, unknown>[];
      back.forEach((r, i) => {
        for (const [k, v] of Object.entries(own[i])) expect(r[k], `${name}[${i}].${k}`).toEqual(v);
      });
    }
    expect(style, 'columns not in snake_case with the unit last').toEqual([]);
    // the thresholds are named for what they are, with the intensity unit
    expect(Object.keys(t.thresholds[0])).toContain('lowest_detected_intensity_mA');
    expect(Object.keys(t.recruitment[0])).toEqual(expect.arrayContaining(['fit_threshold_5pct_mA', 'i50_mA']));
    expect(Object.keys(t.recruitment[0])).toContain('maximum_uV');
    console.log('numeric columns without a unit suffix (dimensionless):', [...unitless].sort().join(', '));
    const left = [...unitless].filter((c) => !DIMENSIONLESS.test(c.split('.')[1]) && !NO_UNIT_YET.has(c));
    expect(left, 'numeric columns without a unit').toEqual([]);
  });
});

/**
 * Numeric columns whose unit is not yet in the name (listed in DEVELOPERS.md, "Tables of a bundle"): the unit is
 * that of a column beside them (intensity_unit, concentration_unit, the analysed value or measure) or of the user's
 * value (group statistics, mixed model). A new unit-less column fails the test above.
 */
const NO_UNIT_YET = new Set([
  'components.concentration',
  'components.intensity',
  'recruitment_points.intensity',
  'recruitment_points.response',
  'dose_response_points.concentration',
  'dose_response_points.response',
  'dose_response_points.baseline',
  'strength_duration.rheobase',
  'strength_duration.rheobase_ci95_low',
  'strength_duration.rheobase_ci95_high',
  'strength_duration.lapicque_rheobase',
  'strength_duration.weiss_rss',
  'strength_duration.lapicque_rss',
  'strength_duration_points.criterion',
  'strength_duration_points.criterion_ci95_low',
  'strength_duration_points.criterion_ci95_high',
  'temperature_points.value',
  'group_summary.mean',
  'group_summary.sd',
  'group_summary.sem',
  'group_summary.ci95_low',
  'group_summary.ci95_high',
  'group_tests.estimate',
  'group_tests.ci95_low',
  'group_tests.ci95_high',
  'mixed_coefficients.estimate',
  'mixed_coefficients.se',
  'mixed_coefficients.ci95_low',
  'mixed_coefficients.ci95_high',
  'mixed_variance.residual_variance',
  'mixed_variance.animal_variance',
  'velocity_distribution.amplitude',
  'velocity_distribution_residuals.noise_sd',
  'velocity_distribution_residuals.rms_data',
  'velocity_distribution_residuals.rms_residual',
]);

/** Dimensionless quantities: ratios, fractions, slopes, scores, p values, fit statistics, normalised values. */
const DIMENSIONLESS = new RegExp(
  '^(log10_.*|.*ratio.*|.*fraction.*|.*_pct|hill.*|pooled_hill|q10.*|p|p_.*|r2|f|t|df|den_df|statistic|' +
    '.*score.*|normalized|bottom|pooled_bottom|top|pooled_top|slope_log10|chi2_per_sample|relative_residual|reml_deviance|icc)$',
);
