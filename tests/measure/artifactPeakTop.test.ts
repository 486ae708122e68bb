/**
 * Peak time of a broad, flat-topped wave read on an unsmoothed component (topVertex in src/measure/components.ts):
 * the vertex of the least-squares parabola through the wave's top must not depend on the sampling rate, and must
 * scatter less with noise than the three-point parabola through the single largest sample. Reference: the analytic
 * maximum of the invented test waves (a Gaussian at mu; a gamma-shaped wave t^k e^(-t/theta), whose maximum is at
 * k theta), common mathematics, no source.
 */
import { describe, it, expect } from 'vitest';
import { model } from '../../src';
import { topVertex, PEAK_TOP_FRACTION } from '../../src/measure/components';
import { parabolicPeak } from '../../src/measure/response';

const argmax = (y: ArrayLike<number>) => {
  let p = 0;
  for (let i = 1; i < y.length; i++) if (y[i] > y[p]) p = i;
  return p;
};

describe('topVertex: the peak time of a wave from the parabola through its top', () => {
  it('is exact for a sampled parabola and falls back to the three-point parabola on a sharp top', () => {
    // y = 5 - 0.01 (i - 40.3)^2: vertex at 40.3 exactly
    const y = Float64Array.from({ length: 81 }, (_, i) => 5 - 0.01 * (i - 40.3) ** 2);
    expect(topVertex(y, argmax(y), 0, 80, 0)).toBeCloseTo(40.3, 9);
    // a sharp top (the neighbours far below 2% of the peak): the same as the three-point parabola
    const z = Float64Array.from({ length: 21 }, (_, i) => Math.exp(-0.5 * ((i - 10.2) / 0.8) ** 2));
    const ip = argmax(z);
    expect(topVertex(z, ip, 0, 20, 0)).toBeCloseTo(parabolicPeak(z, ip).index, 9);
    expect(PEAK_TOP_FRACTION).toBeGreaterThan(0);
  });

  it('refuses a top at the edge of the searched span and a wave that is not positive', () => {
    const y = Float64Array.from({ length: 20 }, (_, i) => i);
    expect(topVertex(y, 19, 0, 19, 0)).toBeNull();
    expect(topVertex(new Float64Array(9).fill(-1), 4, 0, 8, 0)).toBeNull();
  });

  it('gives the analytic maximum of a gamma-shaped wave at 50 and 100 kHz within 2 us (noise free)', () => {
    // a broad asymmetric wave, 4.2 mV, maximum at k theta = 0.975 ms (k = 6, theta = 0.1625 ms)
    const k = 6,
      theta = 0.1625,
      tMax = k * theta;
    const peak = tMax ** k * Math.exp(-k);
    for (const fs of [50, 100]) {
      const dt = 1 / fs; // ms
      const y = Float64Array.from({ length: Math.round(3 / dt) }, (_, i) => {
        const t = i * dt;
        return (4.2 * t ** k * Math.exp(-t / theta)) / peak;
      });
      const v = topVertex(y, argmax(y), 0, y.length - 1, 0)!;
      expect(Math.abs(v * dt - tMax)).toBeLessThan(0.002);
    }
  });

  it('scatters less with white noise than the three-point parabola, alike at 50 and 100 kHz', () => {
    // the wave above with 4 uV white noise (band-limited noise is no kinder to the largest sample), 200 draws
    const k = 6,
      theta = 0.1625,
      tMax = k * theta;
    const peak = tMax ** k * Math.exp(-k);
    const rms: Record<string, number> = {};
    for (const fs of [50, 100]) {
      const dt = 1 / fs;
      const clean = Float64Array.from({ length: Math.round(3 / dt) }, (_, i) => {
        const t = i * dt;
        return (4.2 * t ** k * Math.exp(-t / theta)) / peak;
      });
      const rng = new model.Rng(11 + fs);
      let eTop = 0,
        e3 = 0;
      const draws = 200;
      for (let d = 0; d < draws; d++) {
        const y = Float64Array.from(clean, (v) => v + 0.004 * rng.normal());
        const ip = argmax(y);
        eTop += (topVertex(y, ip, 0, y.length - 1, 0.004)! * dt - tMax) ** 2 / draws;
        e3 += (parabolicPeak(y, ip).index * dt - tMax) ** 2 / draws;
      }
      rms[`top${fs}`] = Math.sqrt(eTop) * 1000;
      rms[`three${fs}`] = Math.sqrt(e3) * 1000;
    }
    // in us: the top parabola within 3 us rms at both rates, at most half the three-point parabola's scatter
    for (const fs of [50, 100]) {
      expect(rms[`top${fs}`]).toBeLessThan(3);
      expect(rms[`top${fs}`]).toBeLessThan(0.5 * rms[`three${fs}`]);
    }
  });
});
