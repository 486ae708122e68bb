import { describe, it, expect } from 'vitest';
import { model, compareGroups, mixedModel } from '../../src';

// Forward-model sweeps (the project's own model) only to have a real ComponentTable; the statistics themselves are
// checked against SciPy in tests/analysis/groups.test.ts. Here: the table methods give what the functions give.
describe('ComponentTable.compareGroups(options) and .mixedModel(options)', () => {
  const nerve = model.rodentSciatic();
  const sweeps = [];
  for (const [prep, group] of [
    ['a1', 'ctl'],
    ['a2', 'ctl'],
    ['a3', 'ctl'],
    ['b1', 'trt'],
    ['b2', 'trt'],
    ['b3', 'trt'],
  ]) {
    for (let r = 0; r < 2; r++) {
      sweeps.push({
        intensity: 50,
        distanceMm: 20,
        temperatureC: 37,
        concentration: 0,
        conditions: { preparation: prep, group, repeat: r },
      });
    }
  }
  const set = model.simulateNerve({
    model: nerve,
    seed: 5,
    grid: { fs: 20000, t0Ms: -2, nSamples: 600 },
    sweeps,
    nuisance: { noiseUv: 5 },
  });
  const table = set.baseline().components({ preset: 'mammalian', classes: ['A-alpha/beta'] });
  it('match the functions on the same rows, preparation as the unit', () => {
    const value = Object.keys(table.rows[0]).find((k) => /^amplitude_/.test(k))!;
    const a = table.compareGroups({ value, group: 'group' });
    const b = compareGroups(table.rows as never, { value, group: 'group' });
    expect(a.tests).toEqual(b.tests);
    expect(a.summary.map((s) => s.n_animals ?? s.n)).toEqual(b.summary.map((s) => s.n_animals ?? s.n));
    const m = table.mixedModel({ value, fixed: ['group'] });
    expect(m.coefficients).toEqual(mixedModel(table.rows as never, { value, fixed: ['group'] }).coefficients);
  });
});

describe('VelocityResult.toString()', () => {
  // the project's forward model only to have sweeps at two distances; what is checked is the text layout
  const set = model.simulateNerve({
    model: model.rodentSciatic(),
    seed: 7,
    grid: { fs: 20000, t0Ms: -2, nSamples: 600 },
    sweeps: [20, 40].map((d) => ({
      intensity: 50,
      distanceMm: d,
      temperatureC: 37,
      conditions: { preparation: 'p1' },
    })),
    nuisance: { noiseUv: 5 },
  });
  const v = set
    .baseline()
    .components({ preset: 'mammalian', classes: ['A-alpha/beta'] })
    .velocity();
  it('shows the distance of single-site rows and every row status, so rows of two sites do not look the same', () => {
    const text = v.toString();
    const header = text.split('\n').find((l) => /method/.test(l)) as string;
    expect(header).toMatch(/distance_mm/);
    expect(header).toMatch(/status/);
    const single = text.split('\n').filter((l) => /single-site\s+peak/.test(l));
    expect(single.length).toBe(2);
    expect(single[0]).not.toBe(single[1]);
    expect(single.some((l) => /\b20\b/.test(l)) && single.some((l) => /\b40\b/.test(l))).toBe(true);
  });
});
