/**
 * amplitude_fit_<units> (measureComponents): the least-squares amplitude of a class against its unblocked
 * reference waveform. Invariant checked here (no external number: a property of linear least squares): with
 * white noise it recovers the true scale of a small response on average, where a picked peak is inflated by the
 * largest noise excursion near the top (common practice, no source: the matched-filter estimate is unbiased).
 */
import { describe, it, expect } from 'vitest';
import { SweepSet, model } from '../../src';

describe('components: amplitude_fit_<units> against the unblocked reference waveform', () => {
  it('a C-like wave at 25% of its baseline size, 1 uV noise: mean amplitude_fit ratio 0.25 +- 0.01', () => {
    const fs = 20000,
      n = 3000,
      t0 = -10,
      reps = 40;
    const rng = new model.Rng(5);
    const data = new Float64Array(2 * reps * n);
    const conditions = [];
    for (let s = 0; s < 2 * reps; s++) {
      const scale = s < reps ? 1 : 0.25;
      for (let i = 0; i < n; i++) {
        const t = t0 + (i * 1000) / fs;
        data[s * n + i] = 40 * scale * Math.exp(-0.5 * ((t - 15) / 2) ** 2) + 1 * rng.normal();
      }
      conditions.push({
        preparation: 'P',
        distanceMm: 20,
        temperatureC: 37,
        concentration: s < reps ? 0 : 10,
        sweep: s,
      });
    }
    const set = new SweepSet({ data, nSweeps: 2 * reps, nSamples: n, fs, t0Ms: t0, units: 'uV', conditions });
    const rows = set.components({ preset: 'mammalian', classes: ['C'] }).rows;
    const mean = (conc: number, col: string) => {
      const v = rows.filter((r) => r.concentration === conc && typeof r[col] === 'number').map((r) => r[col] as number);
      expect(v.length).toBe(reps);
      return v.reduce((a, b) => a + b, 0) / v.length;
    };
    const fit = mean(10, 'amplitude_fit_uV') / mean(0, 'amplitude_fit_uV');
    const peak = mean(10, 'amplitude_uV') / mean(0, 'amplitude_uV');
    console.log(`amplitude ratio (truth 0.25): least squares ${fit.toFixed(4)}, picked peak ${peak.toFixed(4)}`);
    expect(Math.abs(fit - 0.25)).toBeLessThan(0.01);
    // the picked peak of the small wave carries the noise maximum near its top
    expect(peak).toBeGreaterThan(fit);
  });
});
