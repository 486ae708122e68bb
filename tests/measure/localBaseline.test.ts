/**
 * measureComponents (src/measure/components.ts): the local baseline of a class alone in its window. A triphasic
 * monopolar wave's first phase lies on the flank before its main phase; it is part of the wave, not a baseline, and
 * must not be subtracted (it would grow the main phase and move its onset into the first phase). A faster class's
 * slow tail, already there before the flank and decaying, is still taken as the local baseline.
 *
 * Analytic case (invented for this test; the shape is the line-source model, from memory: the extracellular
 * potential of a fibre is proportional to the second derivative of the transmembrane action potential travelling at
 * constant velocity, d2V/dx2 = (1/v^2) d2V/dt2, Clark & Plonsey 1968): V a Gaussian of sd 2 ms, so the recorded wave
 * is 20 uV x (u^2 - 1) exp(-u^2 / 2) with u = (t - L / v) / 2 ms: a main phase of -20 uV at L / v, first and third
 * phases of +20 x 2 exp(-1.5) = +8.9 uV at u = -/+ sqrt(3). v = 1 m/s at 37 C, sites 15 and 25 mm, 20 kHz from -10
 * to 140 ms, white noise of sd 2 uV (the project's seeded Rng; about the noise of a small C wave). Expected values are analytic: the main phase's 10%
 * crossing (onset) is at u = -0.9205 (root of (1 - u^2) exp(-u^2 / 2) = 0.1, SciPy brentq), its peak -20 uV at u = 0.
 */
import { describe, it, expect } from 'vitest';
import { SweepSet, model } from '../../src';

const preset = {
  name: 'two classes',
  refTemperatureC: 37,
  q10: 1.4,
  source: 'invented for this test',
  classes: [
    { name: 'fast', velocity: [10, 30] as [number, number] },
    { name: 'slow', velocity: [0.5, 2.5] as [number, number] },
  ],
};
const fs = 20000,
  t0 = -10,
  n = 3000,
  sd = 2;
const sites = [15, 25];

function study(wave: (u: number) => number, tail: (t: number) => number, noise = 2): SweepSet {
  const rng = new model.Rng(91);
  const data = new Float64Array(n * sites.length);
  sites.forEach((L, s) => {
    for (let i = 0; i < n; i++) {
      const t = t0 + (i * 1000) / fs;
      data[s * n + i] = wave((t - L) / sd) + (t > 0 ? tail(t) : 0) + noise * rng.normal();
    }
  });
  const conditions = sites.map((L) => ({ preparation: 'P', temperatureC: 37, distanceMm: L, intensity: 10 }));
  return new SweepSet({ data, nSweeps: sites.length, nSamples: n, fs, t0Ms: t0, units: 'uV', conditions });
}
const slowRows = (set: SweepSet) =>
  set.components({ preset, polarity: -1, earliestMs: 0.4 }).rows.filter((r) => r.class === 'slow');

describe('measureComponents: the local baseline of a class alone in its window', () => {
  it('does not take a triphasic wave’s first phase for a baseline: onset and amplitude of the main phase', () => {
    const rows = slowRows(
      study(
        (u) => 20 * (u * u - 1) * Math.exp(-0.5 * u * u),
        () => 0,
      ),
    );
    for (const L of sites) {
      const r = rows.find((q) => q.distanceMm === L)!;
      expect(r.status).toBe('measured');
      expect(r.local_baseline_uV).toBeNull();
      // analytic onset L / v - 0.9205 x 2 ms; the first phase's mean (+7 uV) subtracted moved it 0.5 ms earlier
      expect(Math.abs((r.onset10_ms as number) - (L - 0.9205 * sd))).toBeLessThan(0.25);
      // the main phase is 20 uV; its noisy peak (noise sd 2 uV) reads up to ~2 sd more; above the first phase ~29
      expect(Math.abs(r.amplitude_uV as number)).toBeGreaterThan(18);
      expect(Math.abs(r.amplitude_uV as number)).toBeLessThan(26);
    }
  });
  it('still takes an offset of the main phase’s sign before the class as its local baseline', () => {
    // monophasic slow wave (-20 uV Gaussian of sd 2 ms) on a -5 uV x exp(-t / 40 ms) tail of the main phase's sign:
    // what the fitted late artifact tail leaves of it before the class (about -2.5 uV) is the local baseline
    const rows = slowRows(
      study(
        (u) => -20 * Math.exp(-0.5 * u * u),
        (t) => -5 * Math.exp(-t / 40),
      ),
    );
    for (const L of sites) {
      const r = rows.find((q) => q.distanceMm === L)!;
      expect(r.status).toBe('measured');
      expect(r.local_baseline_uV as number).toBeLessThan(-1);
    }
  });
});
