/**
 * Honest intervals for two-site latency velocities (issue 14, A-delta): latencyPrecision (src/measure/response.ts)
 * on analytic waves, its coverage by simulation (seeded normal noise from the project's Rng), and the two-site rows
 * of the independent development set FNPG-N07 (/work/shared/devset, vendored in tests/fixtures/devset-measure):
 * their 95% CI contains the truth (ground_truth.json velocity_by_temperature[T][class].clean_component.two_site), and
 * A-delta's flat-topped peak is flagged "imprecise" instead of reported as a confident number.
 */
import { describe, it, expect } from 'vitest';
import { SweepSet, model, ownLatencies } from '../../src';
import { latencyPrecision } from '../../src/measure/response';
import { load, meta } from './devsetFixture';

describe('latencyPrecision(y, index, kind, sigma, fraction)', () => {
  it('peak of 100 - u^2 with sigma 1: the span within 1.96 sqrt(2) of the maximum, ends interpolated linearly', () => {
    const y = Float64Array.from({ length: 41 }, (_, i) => 100 - (i - 20) ** 2);
    // analytic: level 100 - 1.959964 sqrt(2) = 97.2282; between u = 1 (99) and u = 2 (96): 1 + (99 - 97.2282) / 3
    expect(latencyPrecision(y, 20, 'peak', 1)).toBeCloseTo(1 + (99 - (100 - 1.959964 * Math.SQRT2)) / 3, 10);
  });
  it('rise crossing of a ramp of slope 10 per sample, sigma 1, fraction 0.5: 1.96 sqrt(1 + 0.25) / 10', () => {
    const y = Float64Array.from({ length: 30 }, (_, i) => 10 * i);
    // analytic (delta method): SD(t) = sigma sqrt(1 + f^2) / slope
    expect(latencyPrecision(y, 12.5, 'rise', 1, 0.5)).toBeCloseTo((1.959964 * Math.sqrt(1.25)) / 10, 10);
  });
  it('no bound without a positive sigma, a rising slope or an index inside y', () => {
    const y = Float64Array.from({ length: 30 }, (_, i) => 30 - i);
    expect(latencyPrecision(y, 10, 'rise', 1)).toBeNull();
    expect(latencyPrecision(y, 10, 'peak', 0)).toBeNull();
    expect(latencyPrecision(y, 40, 'peak', 1)).toBeNull();
  });
  it('covers the true peak time and half-rise time of a noisy Gaussian wave in at least 93% of 400 seeded trials', () => {
    // a Gaussian of SD 8 samples and height 20 sigma: the 3-point parabolic peak and the 50% crossing of
    // ownLatencies, each judged against the noise-free wave's own latency (analytic: peak at 50, half-rise at
    // 50 - 8 sqrt(2 ln 2))
    const rng = new model.Rng(14);
    const n = 101,
      sd = 8,
      sigma = 1;
    let peakIn = 0,
      halfIn = 0;
    const trials = 400;
    for (let k = 0; k < trials; k++) {
      const y = Float64Array.from(
        { length: n },
        (_, i) => 20 * Math.exp(-0.5 * ((i - 50) / sd) ** 2) + sigma * rng.normal(),
      );
      const l = ownLatencies(y, 20, 80, 0.1, 0.1, 0, n - 1);
      const hp = latencyPrecision(y, l.peakIndex, 'peak', sigma) as number;
      if (Math.abs(l.peakIndex - 50) <= hp) peakIn++;
      const hh = latencyPrecision(y, l.halfRiseIndex as number, 'rise', sigma, 0.5) as number;
      if (Math.abs((l.halfRiseIndex as number) - (50 - sd * Math.sqrt(2 * Math.LN2))) <= hh) halfIn++;
    }
    expect(peakIn / trials).toBeGreaterThanOrEqual(0.93);
    expect(halfIn / trials).toBeGreaterThanOrEqual(0.93);
  });
});

/** Noise-free class sums (A-alpha/beta + A-delta + C) per condition and electrode of the fast temperature series. */
function cleanSums(): SweepSet {
  const { s, clean } = load('temperature_fast');
  const n = s.nSamples;
  const keys = [...new Set(s.clean.map((c) => `${c.condition_index}|${c.distance_mm}`))];
  const data = new Float64Array(keys.length * n);
  const conditions = keys.map((k, r) => {
    const [ci, d] = k.split('|').map(Number);
    s.clean.forEach((c, i) => {
      if (c.condition_index === ci && c.distance_mm === d)
        for (let j = 0; j < n; j++) data[r * n + j] += clean[i * n + j];
    });
    const T = s.clean.find((c) => c.condition_index === ci)!.temperature_C;
    return { preparation: 'FNPG-N07-TA', distanceMm: d, temperatureC: T };
  });
  return new SweepSet({ data, nSweeps: keys.length, nSamples: n, fs: s.fs, t0Ms: s.t0Ms, units: 'uV', conditions });
}

describe('development set FNPG-N07: two-site velocity intervals of A-alpha/beta and A-delta', () => {
  const KEY: Record<string, string> = { 'A-alpha/beta': 'A_alpha_beta', 'A-delta': 'A_delta' };
  const TRUTH: Record<string, string> = { peak: 'v_peak', halfrise: 'v_halfrise', onset: 'v_onset10' };
  // the clean sum plus white noise of 7.5 uV rms (the set's 15 uV white noise averaged over its 4 repeats)
  const c = cleanSums();
  const rng = new model.Rng(7);
  const noisy = new SweepSet({
    data: Float64Array.from(c.data, (v) => v + 7.5 * rng.normal()),
    nSweeps: c.nSweeps,
    nSamples: c.nSamples,
    fs: c.fs,
    t0Ms: c.t0Ms,
    units: 'uV',
    conditions: c.conditions,
  });
  const tables = [
    ['clean sum', c.components({ preset: 'mammalian' }).velocity().rows],
    ['clean + 7.5 uV', noisy.components({ preset: 'mammalian' }).velocity().rows],
  ] as const;

  it('one pair of sweeps per temperature (two-site) or two distances (regression) still get a 95% CI containing the truth', () => {
    const lines: string[] = [];
    let checked = 0,
      covered = 0;
    for (const [label, rows] of tables)
      for (const r of rows) {
        if ((r.method !== 'two-site' && r.method !== 'regression') || !KEY[r.class] || !TRUTH[r.basis]) continue;
        const tv = meta.truth_clean_component[String(r.temperatureC)][KEY[r.class]].two_site[TRUTH[r.basis]];
        expect(r.n, `${label} ${r.class} ${r.basis}`).toBe(r.method === 'two-site' ? 1 : 2);
        expect(typeof r.ci95_low_m_s, `${label} ${r.class} ${r.basis} ${r.temperatureC} C`).toBe('number');
        const inside = (r.ci95_low_m_s as number) <= tv && tv <= (r.ci95_high_m_s as number);
        checked++;
        if (inside) covered++;
        lines.push(
          `${label} ${r.method} ${r.temperatureC} C ${r.class} ${r.basis}: ${(r.velocity_m_s as number).toFixed(2)} ` +
            `[${(r.ci95_low_m_s as number).toFixed(2)}, ${(r.ci95_high_m_s as number).toFixed(2)}] vs ${tv.toFixed(2)}` +
            ` m/s ${inside ? '' : 'MISSED '}(${r.status})`,
        );
      }
    console.log(lines.join('\n'));
    expect(checked).toBe(2 * 2 * 4 * 2 * 3);
    // nominal 95%: at most 4 of the 96 intervals miss (A-delta's half-rise at 20 C is biased +5%, see notes)
    expect(checked - covered).toBeLessThanOrEqual(4);
  });

  it('A-alpha/beta half-rise stays precise (CI within +/-3%); A-delta peak is "imprecise" where its top is flat', () => {
    for (const [label, rows] of tables) {
      const ab = rows.filter((r) => r.method === 'two-site' && r.class === 'A-alpha/beta' && r.basis === 'halfrise');
      expect(ab.length).toBe(4);
      for (const r of ab) {
        const v = r.velocity_m_s as number;
        expect((r.ci95_high_m_s as number) - v, label).toBeLessThan(0.03 * v);
        expect(v - (r.ci95_low_m_s as number), label).toBeLessThan(0.03 * v);
      }
      const ad = rows.filter((r) => r.method !== 'single-site' && r.class === 'A-delta' && r.basis === 'peak');
      expect(ad.length).toBe(8);
      const flagged = ad.filter((r) => r.status === 'imprecise');
      // the 30 C clean A-delta top: 357.5 / 360.2 / 360.6 / 350.6 uV at 0.86-0.98 ms (within 3 uV over 80 us,
      // truth/clean_components_temperature_fast.csv): its peak time is not determined
      expect(flagged.length, label).toBeGreaterThanOrEqual(4);
      for (const r of flagged) {
        expect(String(r.reason)).toMatch(/95% CI .* reaches outside the A-delta range/);
        expect(typeof r.velocity_m_s).toBe('number');
      }
    }
  });
});
