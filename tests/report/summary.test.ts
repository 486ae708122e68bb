import { describe, it, expect } from 'vitest';
import { intervalText, summaryLines, siteText, referenceLookup } from '../../src/report/summary';
import type { Study } from '../../src/report/study';
import { reportHtml } from '../../src/report/reportHtml';

// Wording of the command line's result lines (and report.html's "Main results"); the rows are shaped like the
// study tables (API keys). Numbers are arbitrary: the test is about the words around them.
function study(tables: Record<string, unknown[]>): Study {
  return { tables: { components: [], flags: [], ...tables } } as unknown as Study;
}

describe('intervalText', () => {
  it('names a missing bound instead of printing a placeholder as a number', () => {
    expect(intervalText(1.4, 1.42)).toBe('95% CI 1.4-1.42');
    expect(intervalText(null, null)).toBe('95% CI not available');
    expect(intervalText(NaN, undefined)).toBe('95% CI not available');
    expect(intervalText(1.2, null)).toBe('95% CI from 1.2, not bounded above');
    expect(intervalText(null, 7.7)).toBe('95% CI up to 7.7, not bounded below');
    // a negative bound: "to", never "-1.2--0.5"
    expect(intervalText(-1.2, -0.5)).toBe('95% CI -1.2 to -0.5');
    for (const s of [intervalText(null, null), intervalText(1, null), intervalText(null, 1)])
      expect(s).not.toMatch(/not bounded-|-not bounded/);
  });
});

describe('summaryLines', () => {
  const bipolarComponents = [
    { preparation: 'P1', sweep: 0, class: 'C', distanceMm: 15, referenceDistanceMm: 25 },
    { preparation: 'P1', sweep: 1, class: 'C', distanceMm: 15, referenceDistanceMm: 25 },
  ];
  it('names a bipolar channel by both contacts (manifest referenceDistanceMm), a monopolar one by its distance', () => {
    const rows = {
      components: bipolarComponents,
      temperature: [{ class: 'C', distanceMm: 15, q10: 1.9, q10_ci95_low: null, q10_ci95_high: null }],
      dose_response_summary: [
        {
          class: 'C',
          distanceMm: 15,
          ic50: 7.27,
          ic50_ci95_low: 5.2,
          ic50_ci95_high: 10.2,
          concentrationUnit: 'uM',
          hill: 1.04,
        },
      ],
    };
    const lines = summaryLines(study(rows));
    expect(lines).toContain('IC50 C at bipolar 15-25 mm: 7.27 uM (95% CI 5.2-10.2), Hill slope 1.04');
    expect(lines).toContain('Q10 C at bipolar 15-25 mm: 1.9 (95% CI not available)');
    expect(lines.join('\n')).not.toMatch(/at 15 mm/);
    // the same rows recorded monopolar
    const mono = summaryLines(study({ ...rows, components: [] }));
    expect(mono).toContain('Q10 C at 15 mm: 1.9 (95% CI not available)');
    // the reference given as the components option (no condition on the sweeps)
    const opt = summaryLines(study({ ...rows, components: [] }), { referenceDistanceMm: 25 });
    expect(opt).toContain('Q10 C at bipolar 15-25 mm: 1.9 (95% CI not available)');
  });

  it('a missing Hill slope, rheobase or bound is never printed as "not bounded" or as a number', () => {
    const lines = summaryLines(
      study({
        dose_response_summary: [
          { class: 'A', ic50: 69.4, ic50_ci95_low: 62.6, ic50_ci95_high: null, concentrationUnit: 'uM', hill: null },
        ],
        strength_duration: [
          {
            class: 'A',
            preparation: 'P1',
            distanceMm: 20,
            chronaxie_ms: 0.21,
            chronaxie_ci95_low_ms: null,
            chronaxie_ci95_high_ms: 0.3,
            rheobase: null,
            intensityUnit: 'mA',
          },
        ],
        paired_pulse_summary: [{ class: 'A', preparation: 'P1', r50_ms: 1.5, r50_ci95_low: 1.2, r50_ci95_high: 1.9 }],
        temperature: [{ class: 'A', q10: 1.41, q10_ci95_low: 1.4, q10_ci95_high: 1.42 }],
      }),
    );
    expect(lines).toEqual([
      'IC50 A: 69.4 uM (95% CI from 62.6, not bounded above)',
      'chronaxie A (P1 at 20 mm): 0.21 ms (95% CI up to 0.3, not bounded below)',
      'recovery R50 A (P1): 1.5 ms (95% CI 1.2-1.9)',
      'Q10 A: 1.41 (95% CI 1.4-1.42)',
    ]);
  });

  it('looks the reference up per preparation and site', () => {
    const ref = referenceLookup([
      { preparation: 'P1', distanceMm: 15, referenceDistanceMm: 25 },
      { preparation: 'P2', distanceMm: 15 },
    ]);
    expect(siteText({ preparation: 'P1', distanceMm: 15 }, ref)).toBe(' at bipolar 15-25 mm');
    expect(siteText({ preparation: 'P2', distanceMm: 15 }, ref)).toBe(' at 15 mm');
    expect(siteText({ class: 'C' }, ref)).toBe('');
  });
});

describe('report.html main results', () => {
  const row = (prep: string, cls: string, v: number, method: string, basis: string) => ({
    preparation: prep,
    class: cls,
    recommended: true,
    method,
    basis,
    temperatureC: 37,
    velocity_m_s: v,
    status: 'ok',
  });
  // velocity rows in another order than the classes (A-delta first, as the velocity table lists them)
  const tables = {
    components: [
      { preparation: 'R1', sweep: 0, class: 'A-alpha/beta', distanceMm: 20 },
      { preparation: 'R1', sweep: 0, class: 'A-delta', distanceMm: 20 },
      { preparation: 'R1', sweep: 0, class: 'C', distanceMm: 20 },
    ],
    velocity: [
      row('R1', 'A-delta', 19.07, 'two-site', 'xcorr'),
      row('R2', 'A-delta', 21.87, 'two-site', 'xcorr'),
      row('R1', 'A-alpha/beta', 76.9, 'regression', 'peak'),
      row('R2', 'A-alpha/beta', 85.25, 'regression', 'peak'),
    ],
    dose_response_summary: [
      { class: 'C', distanceMm: 20, ic50: 7.5, ic50_ci95_low: 5.6, ic50_ci95_high: null, concentrationUnit: 'uM' },
    ],
    temperature: [],
    recruitment: [],
    dose_response_per_preparation: [],
    flags: [],
  };
  const study = {
    tables,
    history: [{ verb: 'readManifest', options: { study: 'S' }, version: '0' }],
    sources: [
      { path: 'manifest.json' },
      { path: 'R1.csv' },
      { path: 'R1-blocker.json' },
      { path: 'R1-blocker.bin', partOf: 'R1-blocker.json' },
    ],
    notes: [],
    units: 'uV',
    computed: 5,
  } as unknown as Study;
  const html = reportHtml({ study, methods: 'm', provenance: { inputs: [], steps: [] } as never, figures: [] });
  const main = html.slice(html.indexOf('<h3>Main results</h3>'), html.indexOf('</ul>', html.indexOf('Main results')));
  it('velocities in the classes order, with their estimator, temperature and number of preparations', () => {
    const a = main.indexOf('conduction velocity A-alpha/beta'),
      d = main.indexOf('conduction velocity A-delta');
    expect(a).toBeGreaterThan(-1);
    expect(d).toBeGreaterThan(a);
    expect(main).toContain(
      'conduction velocity A-alpha/beta at 37 °C: 76.9-85.25 m/s (range over 2 preparations, 2 estimates; ' +
        'regression peak)',
    );
  });
  it('an IC50 names its site and a missing bound in words', () => {
    expect(main).toContain('IC<sub>50</sub> C at 20 mm: 7.5 µM (95% CI from 5.6, not bounded above)');
  });
  it('counts the data files as the methods text does (not the manifest and binary parts)', () => {
    expect(html).toContain('2 data files (4 input files with the manifest and the binary parts)');
  });
});

describe('summaryLines after a merge or unblinding (no options)', () => {
  it("takes the reference contact from the study's recording (the components option the run recorded)", () => {
    const s = {
      tables: { components: [], flags: [], temperature: [{ class: 'C', distanceMm: 15, q10: 1.9 }] },
      recording: { referenceDistanceMm: 25 },
    } as unknown as Study;
    expect(summaryLines(s)).toEqual(['Q10 C at bipolar 15-25 mm: 1.9 (95% CI not available)']);
  });
});

describe('summaryLines: conduction velocities', () => {
  it('prints the recommended velocity per class, fastest class first, with its estimator', () => {
    const s = {
      tables: {
        components: [{ class: 'A' }, { class: 'C' }],
        flags: [],
        velocity: [
          {
            preparation: 'P1',
            class: 'C',
            recommended: true,
            method: 'regression',
            basis: 'centroid',
            velocity_m_s: 1.2,
            status: 'ok',
            temperatureC: 37,
          },
          {
            preparation: 'P1',
            class: 'A',
            recommended: true,
            method: 'regression',
            basis: 'peak',
            velocity_m_s: 76.9,
            status: 'ok',
            temperatureC: 37,
          },
          {
            preparation: 'P2',
            class: 'A',
            recommended: true,
            method: 'regression',
            basis: 'peak',
            velocity_m_s: 85.25,
            status: 'ok',
            temperatureC: 37,
          },
          {
            preparation: 'P2',
            class: 'C',
            recommended: false,
            method: 'single-site',
            basis: 'onset',
            velocity_m_s: 9,
            status: 'ok',
          },
        ],
      },
    } as unknown as Study;
    expect(summaryLines(s)).toEqual([
      'conduction velocity A at 37 °C: 76.9-85.3 m/s (range over 2 preparations, 2 estimates; regression peak)',
      'conduction velocity C at 37 °C: 1.2 m/s (over 1 preparation, 1 estimate; regression centroid)',
    ]);
  });
});
