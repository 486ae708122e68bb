/**
 * Main phase of a slower class in a bipolar recording (contact minus reference): the faster class reaches the
 * reference contact inverted, inside the slower class's window, and its extremes there are far larger than the
 * slower class's own. A synthetic recording (invented for this test): Gaussian waves of an A-alpha/beta and an
 * A-delta population at a 15 mm contact, the same waves later, wider, smaller and inverted from the 25 mm reference,
 * 5 uV white noise. Expected polarity from how the trace was made: +1 (contact minus reference, positive-going
 * waves), -1 with the leads reversed.
 */
import { describe, it, expect } from 'vitest';
import { SweepSet, model } from '../../src';

function bipolarSet(sign: 1 | -1, nSweeps = 3): SweepSet {
  const fs = 50000,
    t0 = -2,
    n = Math.round((8 * fs) / 1000);
  const rng = new model.Rng(5);
  // [peak time ms, width ms, height mV] at the contact (15 mm) and at the reference (25 mm), 37 C
  const waves: [number, number, number][] = [
    [15 / 55, 0.05, 4],
    [15 / 20, 0.15, 0.3],
  ];
  const refWaves: [number, number, number][] = [
    [25 / 55, 0.07, 3.5],
    [25 / 20, 0.22, 0.22],
  ];
  const g = (t: number, [m, w, h]: [number, number, number]) => h * Math.exp(-0.5 * ((t - m) / w) ** 2);
  const data = new Float64Array(nSweeps * n);
  for (let s = 0; s < nSweeps; s++)
    for (let i = 0; i < n; i++) {
      const t = t0 + (i * 1000) / fs;
      let v = 0;
      for (const q of waves) v += g(t, q);
      for (const q of refWaves) v -= g(t, q);
      data[s * n + i] = sign * v + 0.005 * rng.normal();
    }
  const conditions = Array.from({ length: nSweeps }, (_, s) => ({
    preparation: 'P',
    distanceMm: 15,
    referenceDistanceMm: 25,
    temperatureC: 37,
    intensity: 1 + s,
  }));
  return new SweepSet({ data, nSweeps, nSamples: n, fs, t0Ms: t0, units: 'mV', conditions });
}

describe('bipolar recording: a slower class is not given the sign of the faster class at the reference contact', () => {
  for (const sign of [1, -1] as const) {
    it(`A-delta takes the main phase ${sign > 0 ? '+1' : '-1'} (${sign > 0 ? 'contact minus reference' : 'leads reversed'})`, () => {
      const out = bipolarSet(sign).components({
        preset: 'mammalian',
        classes: ['A-alpha/beta', 'A-delta'],
        separation: 'trough',
      });
      expect(out.resolved.polarities['A-alpha/beta']).toBe(sign);
      expect(out.resolved.polarities['A-delta']).toBe(sign);
      expect(out.resolved.polaritySource['A-delta']).toBe('auto');
    });
  }

  it('a polarity given for the class stays', () => {
    const out = bipolarSet(1).components({
      preset: 'mammalian',
      classes: ['A-alpha/beta', 'A-delta'],
      separation: 'trough',
      polarity: { 'A-delta': -1 },
    });
    expect(out.resolved.polarities['A-delta']).toBe(-1);
    expect(out.resolved.polaritySource['A-delta']).toBe('option');
  });
});
