/**
 * measureComponents (src/measure/components.ts) on a slow, wide wave with a one-sample glitch: the Gaussian kernel
 * that smooths a class alone in its window is set from the span of the wave, and that span must not be the glitch's.
 * Analytic case (invented for this test): one class of 0.5-2.5 m/s at 20 mm; a Gaussian wave (sd 2 ms, peak 4 uV at
 * 20 ms) plus one sample of +7 uV at 17 ms, white noise of sd 1 uV (the project's seeded Rng), 20 kHz, -10 to
 * 140 ms. The wave's peak is at 20 ms (analytic); the glitch is one sample wide (a kernel of a few samples takes it
 * down to a fraction of the wave), so it must not be read as the class's peak.
 */
import { describe, it, expect } from 'vitest';
import { SweepSet, model } from '../../src';

const preset = {
  name: 'one slow class',
  refTemperatureC: 37,
  q10: 1.4,
  source: 'invented for this test',
  classes: [{ name: 'slow', velocity: [0.5, 2.5] as [number, number] }],
};
const fs = 20000,
  t0 = -10,
  n = 3000;
function sweep(seed: number, glitch: number): SweepSet {
  const rng = new model.Rng(seed);
  const data = Float64Array.from({ length: n }, (_, i) => {
    const t = t0 + (i * 1000) / fs;
    return 4 * Math.exp(-0.5 * ((t - 20) / 2) ** 2) + rng.normal() + (i === 540 ? glitch : 0);
  });
  return new SweepSet({ data, nSweeps: 1, nSamples: n, fs, t0Ms: t0, units: 'uV', conditions: [{ distanceMm: 20 }] });
}

describe('measureComponents: the smoothing span of a wide wave', () => {
  it('comes from the wave, not from a one-sample glitch larger than it (peak within 0.6 ms of 20 ms, analytic; the glitch is 3 ms away)', () => {
    for (const seed of [1, 2, 3, 4, 5]) {
      const x = sweep(seed, 7);
      expect(x.timeAt(540)).toBeCloseTo(17, 10);
      const r = x.components({ preset, polarity: 1 }).rows[0];
      expect(r.status).toBe('measured');
      expect(Math.abs((r.peak_ms as number) - 20)).toBeLessThan(0.6);
    }
  });
  it('gives the same peak as without the glitch within 0.1 ms', () => {
    for (const seed of [1, 2, 3]) {
      const a = sweep(seed, 7).components({ preset, polarity: 1 }).rows[0];
      const b = sweep(seed, 0).components({ preset, polarity: 1 }).rows[0];
      expect(Math.abs((a.peak_ms as number) - (b.peak_ms as number))).toBeLessThan(0.1);
    }
  });
});
