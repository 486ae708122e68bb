import { describe, it, expect } from 'vitest';
import { inspect } from 'node:util';
import { SweepSet } from '../../src';

function make(): SweepSet {
  const n = 5;
  const data = new Float64Array(4 * n);
  for (let s = 0; s < 4; s++) for (let i = 0; i < n; i++) data[s * n + i] = s + i;
  return new SweepSet({
    data,
    nSweeps: 4,
    nSamples: n,
    fs: 10000,
    t0Ms: -0.1,
    units: 'mV',
    conditions: [0, 1, 2, 3].map((s) => ({ preparation: s < 2 ? 'A' : 'B', intensity: s % 2 ? 2 : 1 })),
  });
}

describe('SweepSet', () => {
  it('is immutable and verbs return new sets with history', () => {
    const s = make();
    expect(Object.isFrozen(s)).toBe(true);
    const c = s.crop(0, 0.2);
    expect(c.nSamples).toBe(3);
    expect(c.t0Ms).toBeCloseTo(0, 12);
    expect([...c.sweep(1)]).toEqual([2, 3, 4]);
    expect(c.history.map((h) => h.verb)).toEqual(['crop']);
    expect(s.nSamples).toBe(5);
  });
  it('where() selects by value, list and range', () => {
    const s = make();
    expect(s.where({ preparation: 'B' }).nSweeps).toBe(2);
    expect(s.where({ intensity: [2] }).conditions.map((c) => c.preparation)).toEqual(['A', 'B']);
    expect(s.where({ intensity: { min: 1.5 } }).nSweeps).toBe(2);
    expect(s.where((c) => c.preparation === 'A' && c.intensity === 1).nSweeps).toBe(1);
  });
  it('groupBy().average() gives mean, SD, SEM and count (checked by hand)', () => {
    const avg = make().groupBy('preparation').average();
    expect(avg.nSweeps).toBe(2);
    expect([...avg.sweep(0)]).toEqual([0.5, 1.5, 2.5, 3.5, 4.5]);
    expect(avg.conditions[0]).toEqual({ preparation: 'A', count: 2 });
    const sd = avg.extras.sd as Float64Array;
    expect(sd[0]).toBeCloseTo(Math.SQRT1_2, 12); // SD of {0, 1}
    expect((avg.extras.sem as Float64Array)[0]).toBeCloseTo(0.5, 12);
    const med = make().groupBy('intensity').average({ method: 'median' });
    expect([...med.sweep(0)]).toEqual([1, 2, 3, 4, 5]); // median of {0, 2}
  });
  it('prints a readable summary', () => {
    const t = inspect(make());
    expect(t).toContain('4 sweeps x 5 samples at 10 kHz');
    expect(t).toContain('preparation: 2 levels (A, B)');
  });
  it('conditions as a danfo DataFrame', () => {
    const df = make().conditionsFrame();
    expect(df.shape).toEqual([4, 3]);
    expect(df.columns).toEqual(['sweep', 'preparation', 'intensity']);
  });
  it('rejects inconsistent construction', () => {
    expect(
      () =>
        new SweepSet({
          data: new Float64Array(3),
          nSweeps: 2,
          nSamples: 2,
          fs: 1,
          t0Ms: 0,
          units: 'mV',
          conditions: [{}, {}],
        }),
    ).toThrow(/data length 3/);
    expect(() => make().crop(5, 6)).toThrow(/outside the sweep/);
  });
});

describe('the public constructor refuses what the loaders refuse (src/sweeps/SweepSet.ts)', () => {
  const base = () => ({
    data: new Float64Array(6).fill(1),
    nSweeps: 2,
    nSamples: 3,
    fs: 1000,
    t0Ms: 0,
    units: 'uV' as const,
    conditions: [{ intensity: 1 }, { intensity: 2 }],
  });
  it('a non-finite sample, named by sweep and sample', () => {
    for (const v of [NaN, Infinity, -Infinity]) {
      const init = base();
      init.data[4] = v;
      expect(() => new SweepSet(init)).toThrow(
        new RegExp(`invalid data: sample 1 of sweep 1 is ${String(v)}; every sample must be a finite number`),
      );
    }
    expect(new SweepSet(base()).nSweeps).toBe(2);
  });
  it('units other than V, mV, uV, with the nearest one', () => {
    expect(() => new SweepSet({ ...base(), units: 'uF' as never })).toThrow(
      /invalid units: "uF"; must be one of V, mV, uV \(did you mean "uV"\?\)/,
    );
  });
  it('a groupBy key no sweep has names the nearest condition', () => {
    expect(() => new SweepSet(base()).groupBy('intensty')).toThrow(/did you mean "intensity"\?/);
  });
});
