// Tables and report of a run, read as a reviewer would (issue 16): every numeric column names its unit, and an
// empty table says why. Data: Hill-equation dose-response points (Hill 1910: y = top / (1 + c / IC50), slope 1) for
// two classes; the words checked are the run's own (no number of this project).
import { describe, it, expect } from 'vitest';
import { ANALYSES } from '../../src/registry/index';
import { bundleColumns } from '../../src/registry/columns';
import { groupWords } from '../../src/registry/velocity';
import { reportHtml } from '../../src/report/reportHtml';
import type { StudyContext } from '../../src/registry/types';
import type { Study } from '../../src/report/study';

function rows() {
  const out: Record<string, string | number | boolean | null>[] = [];
  let sweep = 0;
  for (const [cls, ic50] of [
    ['A', 60],
    ['C', 7],
  ] as const)
    for (const prep of ['P1', 'P2'])
      for (const c of [0, 1, 3, 10, 30, 100, 300])
        for (let k = 0; k < 3; k++) {
          const y = 200 / (1 + c / (ic50 * (prep === 'P1' ? 1 : 1.1)));
          out.push({
            ...{ preparation: prep, series: 'dose', class: cls, sweep: sweep++, distanceMm: 20 },
            ...{ concentration: c, concentrationUnit: 'uM', status: 'measured', detected: true, separation: 'window' },
            ...{ peak_ms: cls === 'A' ? 0.3 : 15, amplitude_uV: y, amplitude_fit_uV: y },
          });
        }
  return out;
}

describe('dose_response_comparisons', () => {
  it('names the IC50 columns with the concentration unit (ic50_a_uM, ic50_b_uM), as every other IC50 column', () => {
    const entry = ANALYSES.find((e) => e.id === 'dose-response')!;
    const components = rows();
    const ctx = {
      mode: 'study',
      options: {},
      units: 'uV',
      components,
      prepTable: () => [],
      perPreparation: () => [],
      prepSteps: () => [],
      history: [],
      sources: [],
      results: {},
      flags: [],
      notes: [],
    } as unknown as StudyContext;
    const out = entry.acrossPreparations!(ctx)!;
    const cmp = out.tables!.dose_response_comparisons as Record<string, unknown>[];
    expect(cmp.length).toBe(1);
    const named = bundleColumns('dose_response_comparisons', cmp as never);
    expect(Object.keys(named[0])).toEqual(expect.arrayContaining(['class_a', 'class_b', 'ic50_a_uM', 'ic50_b_uM']));
    expect(Object.keys(named[0])).not.toContain('ic50_a');
    expect(named[0].concentration_unit).toBe('uM');
  });
});

describe('a unit with a micro sign', () => {
  it('names the columns with u (ic50_uM) as for "uM"; the unit column keeps what the user wrote', () => {
    for (const unit of ['µM', 'μM', 'uM']) {
      const [row] = bundleColumns('dose_response_summary', [{ class: 'C', ic50: 7, concentrationUnit: unit }] as never);
      expect(Object.keys(row)).toContain('ic50_uM');
      expect(row.concentration_unit).toBe(unit);
    }
    const [ml] = bundleColumns('dose_response_summary', [{ class: 'C', ic50: 7, concentrationUnit: 'µg/mL' }] as never);
    expect(Object.keys(ml)).toContain('ic50_ug_mL');
  });
});

describe('report.html on an empty table', () => {
  it('sweeps_removed: says that flagged sweeps were kept, not that the analysis had no data', () => {
    const study = {
      tables: {
        components: [],
        velocity: [],
        recruitment: [],
        dose_response_per_preparation: [],
        dose_response_summary: [],
        temperature: [],
        flags: [],
        sweeps_removed: [],
      },
      history: [],
      sources: [],
      notes: ['R1 sweep QC: 5 of 102 sweeps flagged and kept'],
      units: 'uV',
      computed: 1,
    } as unknown as Study;
    const html = reportHtml({ study, methods: '', provenance: { inputs: [], steps: [] } as never, figures: [] });
    const sec = html.slice(html.indexOf('id="table-sweeps_removed"'));
    expect(sec.slice(0, 400)).toMatch(/No rows: no sweep was removed: flagged sweeps are kept/);
    expect(sec.slice(0, 400)).not.toMatch(/had no data/);
  });
});

describe("a velocity flag's where", () => {
  it('words the group without API keys or empty conditions (the preparation has its own column)', () => {
    expect(groupWords('preparation=R1, temperatureC=37, concentration=0, drug=, epoch=')).toBe(
      '37 °C, concentration 0',
    );
    expect(groupWords('preparation=R1, drug=TTX, epoch=washout')).toBe('drug TTX, epoch washout');
    // the bundle's label (bundle column names) reads the same
    expect(groupWords('preparation=R1, temperature_C=37, distance_mm=20, drug=')).toBe('37 °C, 20 mm');
    expect(groupWords('preparation=R1')).toBeNull();
    expect(groupWords(undefined)).toBeNull();
  });
});
