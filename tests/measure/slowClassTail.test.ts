/**
 * measureComponents (src/measure/components.ts): the artifact's late tail, fitted per preparation on the samples
 * between the faster classes' windows and the slowest class's window, and subtracted before the slow class is
 * measured. Analytic case (invented for this test): two classes (a fast one of 10-30 m/s, a slow one of 0.5-2.5 m/s
 * at 37 C), two sites (15 and 25 mm), four temperatures (20, 25, 30, 37 C: the slow wave's latency moves, the tail
 * does not), 20 kHz from -10 to 140 ms. The slow wave is a Gaussian (sd 1.5 ms, 20 uV) at 15 / v and 25 / v ms with
 * v = 1 m/s x 1.4^((T - 37) / 10); the tail is -1 mV x exp(-t / 3 ms) at 15 mm and x0.6 at 25 mm after a 10 mA
 * stimulus (0.1 mV/mA), white noise of sd 2 uV (the project's seeded Rng). Expected values are analytic: the peak of
 * each Gaussian and the two-site velocity 10 mm / (25 / v - 15 / v) = v.
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
  n = 3000;
const temps = [20, 25, 30, 37];
const vOf = (T: number) => 1.4 ** ((T - 37) / 10);

function study(tailMv: number): SweepSet {
  const rng = new model.Rng(77);
  const conds: Record<string, number | string>[] = [];
  const data = new Float64Array(n * 8);
  let s = 0;
  for (const T of temps)
    for (const L of [15, 25]) {
      const g = L === 25 ? 0.6 : 1;
      for (let i = 0; i < n; i++) {
        const t = t0 + (i * 1000) / fs;
        const wave = 20 * Math.exp(-0.5 * ((t - L / vOf(T)) / 1.5) ** 2);
        const tail = t > 0 ? -1000 * tailMv * g * Math.exp(-t / 3) : 0;
        data[s * n + i] = wave + tail + 2 * rng.normal();
      }
      conds.push({ preparation: 'P', temperatureC: T, distanceMm: L, intensity: 10 });
      s++;
    }
  return new SweepSet({ data, nSweeps: 8, nSamples: n, fs, t0Ms: t0, units: 'uV', conditions: conds });
}

describe('measureComponents: a slow artifact tail under the slowest class', () => {
  const rows = study(1).components({ preset, polarity: 1, earliestMs: 0.4 }).rows;
  const slow = (T: number, L: number) =>
    rows.find((r) => r.class === 'slow' && r.temperatureC === T && r.distanceMm === L)!;
  it('leaves the slow class measured at every temperature and site, its centroid within 0.4 ms of the analytic one', () => {
    for (const T of temps)
      for (const L of [15, 25]) {
        const r = slow(T, L);
        expect(r.status).toBe('measured');
        // a Gaussian's centroid is its peak time (analytic); the noise of the broad top moves the peak more
        expect(Math.abs((r.centroid_ms as number) - L / vOf(T))).toBeLessThan(0.4);
      }
  });
  it('gives the same slow-class peaks, onsets and centroids as the recording without the tail, within 0.1 ms', () => {
    const clean = study(0).components({ preset, polarity: 1, earliestMs: 0.4 }).rows;
    for (const T of temps)
      for (const L of [15, 25]) {
        const c = clean.find((r) => r.class === 'slow' && r.temperatureC === T && r.distanceMm === L)!;
        for (const col of ['peak_ms', 'onset10_ms', 'centroid_ms'])
          expect(Math.abs((slow(T, L)[col] as number) - (c[col] as number))).toBeLessThan(0.1);
      }
  });
});
