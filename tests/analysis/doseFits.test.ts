import { describe, it, expect } from 'vitest';
import { doseResponse } from '../../src';
import { Rng } from '../../src/model/random';

// Synthetic rows from the Hill equation (Hill 1910) with known IC50 and slope: self-consistency of the statistics
// (interval coverage, refusals); the accuracy on data the project did not make is tests/external/devset.test.ts.
const hill = (c: number, ic: number, n: number) => 1 / (1 + Math.pow(c / ic, n));
const CONCS = [0, 3, 8.05, 21.6, 57.9, 155, 417, 1120, 3000];
const rowsOf = (amp: (c: number) => number, concs = CONCS, prep = 'P1') =>
  concs.map((c) => ({
    preparation: prep,
    class: 'C',
    distanceMm: 25,
    concentration: c,
    amplitude_uV: amp(c),
    detected: true,
    status: 'measured',
  }));

describe('dose-response: numbers only where the data determine them', () => {
  it('an IC50 beyond the measured concentrations is "not identifiable" with its reason, not an extrapolation', () => {
    // half block at 5000 uM, the highest concentration measured 417 uM (the curve has fallen to 0.92)
    const dr = doseResponse(
      rowsOf((c) => 100 * hill(c, 5000, 1), CONCS.slice(0, 7)),
      'uV',
    );
    const p = dr.perPreparation[0];
    expect(p.status).toBe('not identifiable');
    expect(p.ic50).toBeNull();
    expect(p.hill).toBeNull();
    expect(String(p.reason)).toMatch(/outside the measured concentrations 3-417/);
    const s = dr.summary[0];
    expect(s.status).toBe('not identifiable');
    expect(s.ic50).toBeNull();
    expect(s.hill).toBeNull();
    expect(String(s.reason)).toMatch(/P1: the fitted IC50/);
  });

  it('a step between two concentrations leaves the Hill slope empty (at its bound), the IC50 bracketed', () => {
    // every fibre blocked between 21.6 and 57.9 uM: the slope runs to its upper bound
    const dr = doseResponse(
      rowsOf((c) => (c < 30 ? 100 : 0.5)),
      'uV',
    );
    const p = dr.perPreparation[0];
    expect(p.hill).toBeNull();
    expect(String(p.status)).toMatch(/Hill slope not identifiable: at its bound 6/);
    expect(p.ic50 as number).toBeGreaterThan(21.6);
    expect(p.ic50 as number).toBeLessThan(57.9);
    const s = dr.summary[0];
    expect(s.hill).toBeNull();
    expect(s.pooled_hill).toBeNull();
    expect(s.hill_pooled_profile_low).toBeNull();
    expect(String(s.status)).toMatch(/pooled fit: Hill slope at its bound 6/);
  });

  it('profile-likelihood intervals of the pooled IC50 and Hill slope cover the truth about 95% of the time', () => {
    // one preparation (no across-preparation interval), noise 2% of the drug-free amplitude on every point including
    // the baseline; 160 replicates: coverage 0.95 +- 0.017 (binomial SD), accepted 0.88-0.995
    const rng = new Rng(20261202);
    const K = 160;
    let icIn = 0,
      hIn = 0,
      both = 0;
    for (let k = 0; k < K; k++) {
      const dr = doseResponse(
        rowsOf((c) => 100 * hill(c, 40, 1.6) + 2 * rng.normal()),
        'uV',
      );
      const s = dr.summary[0];
      const a = (s.pooled_ic50_profile_low as number) <= 40 && 40 <= (s.pooled_ic50_profile_high as number);
      const b = (s.hill_pooled_profile_low as number) <= 1.6 && 1.6 <= (s.hill_pooled_profile_high as number);
      icIn += a ? 1 : 0;
      hIn += b ? 1 : 0;
      both += s.pooled_ic50 !== null && s.pooled_hill !== null ? 1 : 0;
    }
    console.log(`coverage: IC50 ${icIn / K}, Hill slope ${hIn / K} (${K} replicates)`);
    expect(both).toBe(K);
    expect(icIn / K).toBeGreaterThan(0.88);
    expect(icIn / K).toBeLessThan(0.995);
    expect(hIn / K).toBeGreaterThan(0.88);
    expect(hIn / K).toBeLessThan(0.995);
  });
});
