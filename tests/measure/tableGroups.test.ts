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
