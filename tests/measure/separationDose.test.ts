/**
 * Dose-response with the projection amplitude (issue 14): a class detected without drug keeps its sweeps below the
 * detection level (their least-squares amplitude is unbiased), and the top of the Hill curve is fitted with the
 * baseline as a point. Expected values: scipy.optimize.curve_fit (SciPy 1.17, python3) of the same points with the
 * same model and bounds (four-parameter log-logistic, Hill slope in [0.2, 6], bottom in [-0.2, 0.9], top in
 * [0.5, 1.5]); the points are a Hill curve (IC50 40 uM, slope 1.6, 50 uV) plus seeded normal noise (numpy
 * default_rng(14), SD 0.8 uV), printed by that script.
 */
import { describe, it, expect } from 'vitest';
import { doseResponse } from '../../src';

const conc = [0, 3, 8.05, 21.6, 57.9, 155, 417, 1120, 3000];
const y = [50.556, 48.4357, 45.1702, 34.0738, 17.5288, 6.1344, 1.174, 0.6497, 0.8689];
/** rows as measureComponents writes them; the last three below the detection level */
function rows(separation: string) {
  return conc.map((c, i) => {
    const below = i >= 6;
    return {
      sweep: i,
      preparation: 'P1',
      class: 'C',
      distanceMm: 25,
      distance_mm: 25,
      concentration: c,
      epoch: c === 0 ? 'baseline' : 'drug',
      separation,
      detected: !below,
      status: below ? 'not detected' : 'measured',
      amplitude_uV: below ? null : y[i] + 0.5,
      amplitude_fit_uV: y[i],
      peak_ms: below ? null : 30,
    };
  });
}

describe('doseResponse: projection amplitudes below detection and a fitted top', () => {
  it('a window class: all 8 concentrations used (3 below detection), IC50 and slope as SciPy fits them', () => {
    const d = doseResponse(rows('window'), 'uV', { lastN: 1 });
    const s = d.summary[0];
    expect(s.points).toBe(8);
    expect(s.below_detection_projected).toBe(3);
    expect(String(s.status)).toMatch(/3 sweep\(s\) below the detection level/);
    // scipy curve_fit: hill 1.413782, bottom 0.005376, top 0.994276, IC50 36.575336 uM
    expect(s.ic50 as number).toBeCloseTo(36.5753, 2);
    expect(s.hill as number).toBeCloseTo(1.41378, 3);
    expect(s.pooled_top as number).toBeCloseTo(0.994276, 3);
  });

  it('top fixed at the baseline (freeTop: false): SciPy gives hill 1.394560, IC50 36.202775', () => {
    const s = doseResponse(rows('window'), 'uV', { lastN: 1, freeTop: false }).summary[0];
    expect(s.ic50 as number).toBeCloseTo(36.2028, 2);
    expect(s.hill as number).toBeCloseTo(1.39456, 3);
  });

  it('sweeps below detection are left out with belowDetection: false, and always for a decomposed class', () => {
    for (const d of [
      doseResponse(rows('window'), 'uV', { lastN: 1, belowDetection: false }),
      doseResponse(rows('velocity-decomposition'), 'uV', { lastN: 1 }),
    ]) {
      const s = d.summary[0];
      expect(s.points).toBe(5);
      expect(s.below_detection_projected).toBe(0);
      expect(s.excluded_not_measured).toBe(3);
    }
  });

  it('a class not measured in its drug-free sweeps gets no curve from projections', () => {
    const r = rows('window').map((q) =>
      q.concentration === 0 ? { ...q, status: 'not detected', detected: false } : q,
    );
    const s = doseResponse(r, 'uV', { lastN: 1 }).summary[0];
    expect(s.ic50).toBeNull();
    expect(s.status).toBe('not detected');
  });

  it('rejects a belowDetection or freeTop that is not a boolean', () => {
    expect(() => doseResponse(rows('window'), 'uV', { belowDetection: 'yes' as never })).toThrow(/belowDetection/);
    expect(() => doseResponse(rows('window'), 'uV', { freeTop: 1 as never })).toThrow(/freeTop/);
  });
});
