import { describe, it, expect } from 'vitest';
import { rodentSciatic, drawFibers } from '../../src/model/nerve';
import { simulatePairedPulse, pairedPulseTruth } from '../../src/model/pulses';
import { pairedPulse, fitRecovery, recoveryLogistic } from '../../src/analysis/pairedPulse';
import { recoveryFigure } from '../../src/plot/recovery';

describe('fitRecovery (analytic)', () => {
  it('noise-free data from the logistic in log10 interval give back R50, slope and R90 = R50 x 10^(s ln 9)', () => {
    const r50 = 1.37,
      s = 0.08;
    const x = [0.5, 0.7, 0.9, 1, 1.1, 1.2, 1.4, 1.7, 2, 2.5, 3, 4, 6];
    const y = x.map((v) => recoveryLogistic(Math.log10(v), [Math.log10(r50), s]));
    const f = fitRecovery(x, y);
    expect(f.r50Ms).toBeCloseTo(r50, 6);
    expect(f.slope).toBeCloseTo(s, 6);
    expect(f.r90Ms).toBeCloseTo(r50 * 10 ** (s * Math.log(9)), 6);
  });
});

// Forward-model data with truth (src/model/pulses.ts: truth from the drawn fibres and direct cable simulations).
const m0 = rodentSciatic();
const model = { ...m0, populations: m0.populations.map((p, i) => ({ ...p, count: [200, 300, 600][i] })) };
const grid = { fs: 50000, t0Ms: -5, nSamples: 2250 };
const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0 };
const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
// 0.05 ms steps near the refractory periods, log-like spacing above (Bostock et al. 1998 use log-spaced intervals)
const isis = [
  0.45, 0.5, 0.55, 0.6, 0.65, 0.7, 0.75, 0.8, 0.9, 1, 1.2, 1.4, 1.6, 1.8, 1.9, 1.95, 2, 2.05, 2.1, 2.2, 2.4, 2.7, 3,
  3.5, 4, 5, 6.5, 8, 10,
];

describe('pairedPulse(set) on forward-model data', () => {
  const set = simulatePairedPulse({
    model,
    seed: 7,
    grid,
    base: rc,
    intervalsMs: isis,
    repeats: 2,
    nuisance: nz,
  }).baseline({ window: [-4.5, -0.2] });
  const truth = pairedPulseTruth(model, drawFibers(model, 7), rc, isis);
  const r = pairedPulse(set);
  for (const name of ['A-alpha/beta', 'C']) {
    it(`${name}: absolute refractory period within 0.1 ms of the truth, 50% recovery interval within 10%`, () => {
      const t = truth.find((q) => q.name === name)!;
      const s = r.summary.find((q) => q.class === name)!;
      console.log(
        name,
        'ARP',
        s.arp_ms,
        '-',
        s.arp_next_ms,
        'vs',
        t.arpMs,
        '; R50',
        s.r50_ms,
        `[${s.r50_ci95_low}, ${s.r50_ci95_high}]`,
        'vs',
        t.r50Ms,
        '; R90',
        s.r90_ms,
        'vs',
        t.r90Ms,
      );
      expect(Math.abs((s.arp_ms as number) - t.arpMs!)).toBeLessThanOrEqual(0.1);
      expect(t.arpMs!).toBeGreaterThanOrEqual(s.arp_ms as number);
      expect(t.arpMs!).toBeLessThanOrEqual(s.arp_next_ms as number);
      expect(Math.abs((s.r50_ms as number) - t.r50Ms!) / t.r50Ms!).toBeLessThan(0.1);
      expect(s.r50_ci95_low as number).toBeLessThan(s.r50_ms as number);
      expect(s.r50_ci95_high as number).toBeGreaterThan(s.r50_ms as number);
    });
  }
  it("refractory slowing: the centroid-latency increase at the shortest interval with a response is the truth's within 25%", () => {
    const rc2 = pairedPulse(set, { latency: 'centroid_ms' });
    for (const name of ['A-alpha/beta', 'C']) {
      const s = rc2.summary.find((q) => q.class === name)!;
      const t = truth.find((q) => q.name === name)!.curve.find((c) => c.intervalMs === s.latency_increase_interval_ms)!;
      const ratio = (s.latency_increase_ms as number) / t.centroidShiftMs!;
      console.log(
        name,
        'latency increase',
        s.latency_increase_ms,
        'ms at',
        s.latency_increase_interval_ms,
        'ms vs truth centroid shift',
        t.centroidShiftMs,
      );
      expect(Math.abs(ratio - 1)).toBeLessThan(0.25);
    }
  });
  it('tables, text and figure', () => {
    expect(Object.keys(r.tables())).toEqual(['paired_pulse', 'paired_pulse_summary']);
    expect(r.toString()).toContain('arp_ms');
    expect(recoveryFigure(r).spec.data.length).toBeGreaterThan(3);
    expect(r.history[r.history.length - 1].verb).toBe('pairedPulse');
  });
  it('without conditioning-alone sweeps the conditioning response is extrapolated and said so', () => {
    const noCond = set.where((c) => c.pulsePair !== 'conditioning-alone');
    const q = pairedPulse(noCond);
    const s = q.summary.find((x) => x.class === 'A-alpha/beta')!;
    expect(String(s.status)).toMatch(/extrapolated/);
    expect(q.points.every((p) => String(p.conditioning_subtracted).startsWith('extrapolated'))).toBe(true);
    // the noise level is still taken from quiet samples: the shortest intervals have no detected response
    console.log('extrapolated: A-alpha/beta ARP', s.arp_ms, 'C ARP', q.summary.find((x) => x.class === 'C')!.arp_ms);
    // a class's test window overlapping a conditioning response still running at the test pulse is not measured
    const c0 = q.points.find((p) => p.class === 'C' && p.interval_ms === isis[0])!;
    expect(c0.detected).toBe(false);
    expect(c0.status).toBe('not measured');
    expect(String(c0.reason)).toMatch(/conditioning response of C still runs/);
    // A-alpha/beta at the shortest interval: not detected (its conditioning response is over), as with subtraction
    expect(q.points.find((p) => p.class === 'A-alpha/beta' && p.interval_ms === isis[0])!.detected).toBe(false);
  });
  it('bad input is a typed error naming what was expected', () => {
    expect(() => pairedPulse(set.where({ pulsePair: 'paired' }))).toThrow(/test-alone/);
    expect(() => pairedPulse(set, { measur: 'area' } as never)).toThrow(/measure/);
    expect(() => pairedPulse(set, { latency: 'peak' })).toThrow(/latency/);
  });
});
