import { describe, it, expect } from 'vitest';
import { recruitment } from '../../src';
import { Rng } from '../../src/model/random';

// Synthetic rows (self-consistency of the statistics; the accuracy on data the project did not make is
// tests/external/devset.test.ts): a steep recruitment curve, lognormal in intensity, whose rise falls between two
// tested intensities (a C class at spacing x1.52, as a 12-step series over 0.1-10 mA gives).
const I = [0.1, 0.152, 0.231, 0.351, 0.534, 0.811, 1.233, 1.874, 2.848, 4.329, 6.579, 10];
const I50 = 1.175;
// Boltzmann in log10 intensity (slope 0.045 decades): 3% of the maximum at 0.81, 64% at 1.23, 99.9% at 1.87
const frac = (i: number) => 1 / (1 + Math.exp(-(Math.log10(i) - Math.log10(I50)) / 0.045));
const rowsOf = (separation: string, seed = 3) => {
  const rng = new Rng(seed);
  return I.map((i) => {
    const a = 46 * frac(i);
    const detected = a > 11; // a k x noise test at about 4 x 2.7 uV
    return {
      preparation: 'P',
      distanceMm: 15,
      class: 'C',
      intensity: i,
      separation,
      detected,
      status: detected ? 'measured' : 'not detected',
      amplitude_uV: detected ? a + 0.5 * rng.normal() : null,
      amplitude_fit_uV: a + 0.5 * rng.normal(),
    };
  });
};

describe('recruitment: the foot of the curve from the least-squares amplitude below detection', () => {
  it('one point on the rise and the floor unknown: the projected sweeps below detection determine the I50', () => {
    const r = recruitment(rowsOf('window'), 'uV').rows[0];
    expect(r.below_detection_projected).toBe(6);
    expect(r.status).toBe('ok');
    expect(String(r.reason)).toMatch(/6 sweep\(s\) below the detection level entered with their least-squares/);
    expect(Math.abs((r.i50 as number) / I50 - 1)).toBeLessThan(0.03);
    // its interval covers the generating value
    expect(r.i50_ci95_low as number).toBeLessThan(I50);
    expect(r.i50_ci95_high as number).toBeGreaterThan(I50);
  });

  it('a curve the data do not determine is "not identifiable", the bracket in the reason, no number', () => {
    // one sweep on the rise at exactly half the plateau, nothing measured below: any step between 0.811 and 1.874
    // through that point fits, so the slope runs to its bound and the information matrix is singular
    const rows = I.map((i) => ({
      preparation: 'P',
      distanceMm: 15,
      class: 'C',
      intensity: i,
      detected: i > 1,
      status: i > 1 ? 'measured' : 'not detected',
      amplitude_uV: i > 1.5 ? 46 : i > 1 ? 23 : null,
    }));
    const r = recruitment(rows, 'uV').rows[0];
    expect(r.status).toBe('not identifiable');
    expect(r.i50).toBeNull();
    expect(r.maximum).toBeNull();
    expect(String(r.reason)).toMatch(/singular information matrix\): the half-maximum lies between 0.811 and 1.233/);
  });

  it('a class separated by the velocity decomposition keeps only its measured sweeps', () => {
    const r = recruitment(rowsOf('velocity-decomposition'), 'uV').rows[0];
    expect(r.below_detection_projected).toBe(0);
    expect(r.excluded_not_measured).toBe(6);
    expect(String(r.reason)).not.toMatch(/least-squares/);
    expect(recruitment(rowsOf('window'), 'uV', { belowDetection: false }).rows[0].below_detection_projected).toBe(0);
  });

  it('a class never measured stays "not detected": its projected sweeps are not a curve', () => {
    const never = rowsOf('window').map((q) => ({ ...q, detected: false, status: 'not detected', amplitude_uV: null }));
    const r = recruitment(never, 'uV').rows[0];
    expect(r.status).toBe('not detected');
    expect(r.below_detection_projected).toBe(0);
    expect(r.i50).toBeNull();
  });

  it('refuses a belowDetection that is not a boolean', () => {
    expect(() => recruitment(rowsOf('window'), 'uV', { belowDetection: 'yes' as never })).toThrow(
      /invalid belowDetection: "yes"; expected true or false/,
    );
  });
});
