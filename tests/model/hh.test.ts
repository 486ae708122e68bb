import { describe, it, expect } from 'vitest';
import { hhRest, hhPhi, simulateMembrane, stepCurrent, stepThreshold } from '../../src/model/hh';
import { simulateCable, simulateMyelinated } from '../../src/model/cable';

// Values from ../shared/REFERENCES.md: V = read in Hodgkin & Huxley 1952 (J Physiol 117:500);
// C = computed there with SciPy from the published model.
describe('Hodgkin-Huxley membrane (space clamp)', () => {
  it('resting state V=-64.996 mV, m,h,n = 0.05296, 0.59599, 0.31773 (C)', () => {
    const r = hhRest();
    expect(r.V).toBeCloseTo(-64.996, 2);
    expect(r.m).toBeCloseTo(0.05296, 4);
    expect(r.h).toBeCloseTo(0.59599, 4);
    expect(r.n).toBeCloseTo(0.31773, 4);
  });
  it('temperature factor phi(18.5 C) = 3.8202 (formula V, number C)', () => {
    expect(hhPhi(18.5)).toBeCloseTo(3.8202, 4);
  });
  it('single spike at 6.3 C: peak +39.3 mV, amplitude 104.3 mV, half-width 1.44 ms, AHP -76.2 mV (C)', () => {
    const r = simulateMembrane({ stimulus: stepCurrent(20, 1, 0.5), tMax: 30, dt: 0.01 });
    let pk = 0;
    for (let i = 0; i < r.V.length; i++) if (r.V[i] > r.V[pk]) pk = i;
    let ahp = Infinity;
    for (let i = pk; i < r.V.length; i++) ahp = Math.min(ahp, r.V[i]);
    const half = (r.V[pk] + r.V[0]) / 2;
    let up = NaN,
      down = NaN;
    for (let i = 1; i < r.V.length; i++) {
      if (Number.isNaN(up) && r.V[i - 1] < half && r.V[i] >= half) up = r.t[i];
      if (!Number.isNaN(up) && Number.isNaN(down) && r.V[i - 1] >= half && r.V[i] < half) down = r.t[i];
    }
    expect(r.V[pk]).toBeCloseTo(39.3, 0);
    expect(r.V[pk] - r.V[0]).toBeCloseTo(104.3, 0);
    expect(Math.abs(down - up - 1.44) / 1.44).toBeLessThan(0.03); // 3%: depends on the stimulus used
    expect(ahp).toBeCloseTo(-76.2, 0);
  });
  it('rheobase 2.24 uA/cm2 for a 100 ms step at 6.3 C (C), within 1%', () => {
    const r = stepThreshold({ durationMs: 100, tol: 1e-3 });
    expect(Math.abs(r - 2.24) / 2.24).toBeLessThan(0.01);
  });
  it('sustained firing from about 6.26 uA/cm2 (Rinzel & Miller 1980, M; 6.2575 C), within 1%', () => {
    const r = stepThreshold({ durationMs: 200, minSpikes: 3, after: 100, lo: 3, hi: 12, tol: 1e-3 });
    expect(Math.abs(r - 6.2575) / 6.2575).toBeLessThan(0.01);
  });
});

describe('cable models', () => {
  it('the 1952 squid axon (radius 238 um, 35.4 ohm cm, 18.5 C) conducts at 18.8 m/s (HH 1952, V) within 2%, converging as the grid is refined', () => {
    const v = [0.2, 0.1, 0.05].map(
      (dx) =>
        simulateCable({ diameterUm: 476, resistivity: 35.4, temperatureC: 18.5, lengthMm: 50, dxMm: dx, dtMs: 0.005 })
          .velocity,
    );
    for (const x of v) expect(Math.abs(x - 18.8) / 18.8).toBeLessThan(0.02);
    // successive refinements change the velocity less and less
    expect(Math.abs(v[2] - v[1])).toBeLessThanOrEqual(Math.abs(v[1] - v[0]) + 1e-3);
    const vdt = [0.02, 0.01, 0.005, 0.0025].map(
      (dt) =>
        simulateCable({ diameterUm: 476, resistivity: 35.4, temperatureC: 18.5, lengthMm: 50, dxMm: 0.1, dtMs: dt })
          .velocity,
    );
    for (let i = 2; i < vdt.length; i++)
      expect(Math.abs(vdt[i] - vdt[i - 1])).toBeLessThan(Math.abs(vdt[i - 1] - vdt[i - 2]));
    // the refined value approaches the high-precision travelling-wave speed 18.7319 m/s (preprint, V)
    expect(Math.abs(vdt[3] - 18.7319) / 18.7319).toBeLessThan(0.005);
    console.log(
      'squid axon velocity (m/s) at dx 0.2/0.1/0.05 mm:',
      v.map((x) => x.toFixed(3)).join(' / '),
      '; dt 0.02..0.0025 ms:',
      vdt.map((x) => x.toFixed(3)).join(' / '),
    );
  });
  it('passive cable decays with the length constant lambda = sqrt(Rm d / (4 Ri)) = 1.059 cm (C)', () => {
    const r = simulateCable({
      diameterUm: 476,
      resistivity: 35.4,
      lengthMm: 80,
      dxMm: 0.1,
      dtMs: 0.05,
      tMaxMs: 60,
      passive: true,
      injectUa: 1,
      stimulus: { amplitude: 0 },
    });
    // sealed end at L: V(x) ~ cosh((L - x)/lambda); fit lambda from V at 0 and 20 mm
    const EL = -54.387;
    const v0 = r.Vfinal[0] - EL,
      v1 = r.Vfinal[200] - EL;
    const L = 8,
      x = 2;
    // solve cosh((L-x)/lam)/cosh(L/lam) = v1/v0 for lam by bisection
    let lo = 0.5,
      hi = 2;
    for (let i = 0; i < 60; i++) {
      const mid = (lo + hi) / 2;
      if (Math.cosh((L - x) / mid) / Math.cosh(L / mid) < v1 / v0) lo = mid;
      else hi = mid; // ratio grows with lambda
    }
    expect(Math.abs((lo + hi) / 2 - 1.059) / 1.059).toBeLessThan(0.01);
  });
  it('myelinated fibers conduct at about 6 m/s per um of diameter (Hursh 1939, V secondary), linear in diameter', () => {
    const v = [4, 8, 12].map((d) => simulateMyelinated({ diameterUm: d }).velocity);
    for (let i = 0; i < 3; i++) {
      const perUm = v[i] / [4, 8, 12][i];
      expect(perUm).toBeGreaterThan(4.5);
      expect(perUm).toBeLessThan(7.5);
    }
    expect(v[1] / v[0]).toBeCloseTo(2, 1);
  });
  it('unmyelinated velocity grows as sqrt(diameter) (cable theory)', () => {
    const v = [0.5, 2].map(
      (d) => simulateCable({ diameterUm: d, resistivity: 35.4, temperatureC: 18.5, lengthMm: 10, dxMm: 0.02 }).velocity,
    );
    expect(v[1] / v[0]).toBeCloseTo(2, 1);
  });
});
