import { describe, it, expect } from 'vitest';
import { rodentSciatic, drawFibers } from '../../src/model/nerve';
import { simulateTrain, trainTruth } from '../../src/model/pulses';
import { trains } from '../../src/analysis/trains';
import { trainFigure } from '../../src/plot/recovery';

// Forward-model trains with truth (src/model/pulses.ts trainTruth: every recruited fibre's direct cable simulation).
const m0 = rodentSciatic();
const model = { ...m0, populations: [{ ...m0.populations[0], count: 200 }] };
const grid = { fs: 50000, t0Ms: -3, nSamples: 900 };
const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0 };
const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
const components = { classes: ['A-alpha/beta'] };

describe('trains(set) on forward-model data', () => {
  const hz = [400, 1000];
  const set = simulateTrain({
    model,
    seed: 11,
    grid,
    base: rc,
    frequenciesHz: hz,
    pulses: 6,
    repeats: 2,
    nuisance: nz,
  }).baseline({ window: [-2.8, -0.2] });
  const fibers = drawFibers(model, 11);
  const r = trains(set, { components });
  it("recovers the model's activity-dependent latency change at every pulse (within 0.012 ms) and at the last pulse (within 20%)", () => {
    for (const f of hz) {
      const t = trainTruth(model, fibers, rc, f, 6)[0];
      const pts = r.points.filter((p) => p.train_hz === f);
      console.log(
        f,
        'Hz latency increase',
        pts.map((p) => (p.latency_increase_ms as number).toFixed(4)).join(' '),
        'truth',
        t.centroidShiftMs.map((x) => x!.toFixed(4)).join(' '),
      );
      pts.forEach((p, k) =>
        expect(Math.abs((p.latency_increase_ms as number) - t.centroidShiftMs[k]!)).toBeLessThan(0.012),
      );
      const s = r.summary.find((q) => q.train_hz === f)!;
      const last = t.centroidShiftMs[5]!;
      if (last > 0.02) expect(Math.abs((s.last_latency_increase_ms as number) - last) / last).toBeLessThan(0.2);
    }
    // slowing grows with frequency
    const at = (f: number) => r.summary.find((q) => q.train_hz === f)!.last_latency_increase_ms as number;
    expect(at(1000)).toBeGreaterThan(at(400));
  });
  it('frequency following: no failure where the truth has none; area fractions track the truth within 0.1', () => {
    for (const f of hz) {
      const t = trainTruth(model, fibers, rc, f, 6)[0];
      const s = r.summary.find((q) => q.train_hz === f)!;
      expect(s.failure_pulse).toBe(t.failurePulse);
      r.points
        .filter((p) => p.train_hz === f)
        .forEach((p, k) => expect(Math.abs((p.area_fraction as number) - t.areaFraction[k])).toBeLessThan(0.1));
    }
  });
  it('a class fails where its fibres stop following (2000 Hz: every other pulse inside the refractory period)', () => {
    const fast = simulateTrain({
      model,
      seed: 11,
      grid,
      base: rc,
      frequenciesHz: [2000],
      pulses: 4,
      nuisance: nz,
    }).baseline({ window: [-2.8, -0.2] });
    const t = trainTruth(model, fibers, rc, 2000, 4)[0];
    const s = trains(fast, { components }).summary[0];
    console.log(
      '2000 Hz truth area',
      t.areaFraction.map((x) => x.toFixed(3)).join(' '),
      'failure',
      t.failurePulse,
      '; measured failure',
      s.failure_pulse,
    );
    expect(t.failurePulse).not.toBeNull();
    expect(s.failure_pulse).toBe(t.failurePulse);
  });
  it('tables, figure and typed errors', () => {
    expect(Object.keys(r.tables())).toEqual(['train', 'train_summary']);
    // four data traces (latency and amplitude per class); the rest are legend-only entries (x [null]) that say
    // what a colour and a line style mean
    const traces = trainFigure(r).spec.data as { x?: unknown[] }[];
    expect(traces.filter((d) => (d.x ?? []).some((v) => v !== null)).length).toBe(4);
    expect(() => trains(set, { failFraction: 2 })).toThrow(/failFraction/);
    expect(() => trains(set.create({ conditions: set.conditions.map((c) => ({ ...c, trainHz: 'x' })) }))).toThrow(
      /trainHz/,
    );
  });
});
