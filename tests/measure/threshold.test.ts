/**
 * The lowest detected intensity of a class is the lowest level from which it stays detected: a compound response
 * only grows with stimulus intensity (common practice, no source), so an isolated detection below that level is
 * noise. The table comes from the project's own forward model only to have real rows; the detection pattern is set
 * by the test.
 */
import { describe, it, expect } from 'vitest';
import { model } from '../../src';

describe('ComponentTable.threshold()', () => {
  const levels = [0.05, 0.1, 0.2, 0.5, 1, 2];
  const set = model.simulateNerve({
    model: model.rodentSciatic(),
    seed: 3,
    grid: { fs: 20000, t0Ms: -2, nSamples: 400 },
    sweeps: levels.flatMap((intensity) =>
      [0, 1].map((repeat) => ({ intensity, distanceMm: 20, temperatureC: 37, conditions: { repeat } })),
    ),
    nuisance: { noiseUv: 5 },
  });
  const table = set.baseline().components({ preset: 'mammalian', classes: ['A-alpha/beta'] });
  const withPattern = (pattern: string) => {
    for (const r of table.rows) r.detected = pattern[levels.indexOf(r.intensity as number)] === 'x';
    return table.threshold()[0];
  };
  it('takes the level from which the class stays detected, not an isolated detection below it', () => {
    expect(withPattern('x..xxx').threshold).toBe(0.5);
    expect(withPattern('.x.xxx').threshold).toBe(0.5);
    expect(withPattern('..xxxx').threshold).toBe(0.2);
  });
  it('says when the class is detected at the lowest level, at no level, or not at the highest', () => {
    const low = withPattern('xxxxxx');
    expect(low.threshold).toBe(0.05);
    expect(low.note).toMatch(/lowest intensity/);
    const none = withPattern('......');
    expect(none.threshold).toBeNull();
    expect(none.note).toBe('not detected at any intensity');
    const top = withPattern('xxxxx.');
    expect(top.threshold).toBeNull();
    expect(top.note).toMatch(/not detected at the highest intensity/);
  });
});
