import { describe, it, expect } from 'vitest';
import { absoluteRefractoryMs, timeScaledCable, recoveryTable } from '../../src/model/refractory';
import { rodentSciatic, simulateNerve, classTimeScale } from '../../src/model/nerve';

// Direct simulations of the time-scaled Hodgkin-Huxley cable (src/model/refractory.ts).
describe('timeScaledCable / absoluteRefractoryMs', () => {
  const arp1 = absoluteRefractoryMs({ tolMs: 0.002 });
  it("scaling law: a fibre of time scale 11 has the squid fibre's refractory period / 11 (exact by the equations; direct simulation)", () => {
    const arp11 = absoluteRefractoryMs({ timeScale: 11, tolMs: 0.0002 });
    expect(Math.abs(arp11 * 11 - arp1) / arp1).toBeLessThan(1e-3);
  });
  it('external anchor: the 1952 squid model at 6.3 C has an absolute refractory period of a few ms (HH 1952 J Physiol 117:500, computed refractoriness; from memory, wide tolerance 3-10 ms)', () => {
    console.log('squid fibre (6.3 C, test at 4x threshold) absolute refractory period', arp1.toFixed(3), 'ms');
    expect(arp1).toBeGreaterThan(3);
    expect(arp1).toBeLessThan(10);
    // a stronger test pulse shortens it (relative refractoriness: threshold falls with time)
    expect(absoluteRefractoryMs({ drive: 10, tolMs: 0.01 })).toBeLessThan(arp1);
  });
  it('external anchor: large mammalian myelinated fibres at 37 C, 0.4-1.2 ms (handbook order of 0.5-1 ms, from memory, no exact source)', () => {
    const p = rodentSciatic().populations[0];
    const arp = arp1 / classTimeScale(p, 37);
    console.log('A-alpha/beta class fibre at 37 C: absolute refractory period', arp.toFixed(3), 'ms');
    expect(arp).toBeGreaterThan(0.4);
    expect(arp).toBeLessThan(1.2);
  });
  it('refractory slowing: the second spike conducts slower just above the refractory period, and recovers (ratio -> 1) by 5x it', () => {
    const t = recoveryTable();
    expect(t.conductionRatio[0]).toBeGreaterThan(1.1);
    expect(Math.abs(t.conductionRatio[t.conductionRatio.length - 1] - 1)).toBeLessThan(0.01);
    expect(t.heightRatio[0]).toBeLessThan(1);
  });
  it('activity-dependent slowing in a train: conduction time grows pulse by pulse at 125 Hz (s = 1)', () => {
    const r = timeScaledCable([0, 8, 16, 24]);
    expect(r.every((q) => q.conducted)).toBe(true);
    const c = r.map((q) => q.conductionRatio!);
    expect(c[0]).toBeCloseTo(1, 6);
    for (let k = 1; k < 4; k++) expect(c[k]).toBeGreaterThan(c[k - 1]);
  });
  it('invalid pulse times and drive are typed errors', () => {
    expect(() => timeScaledCable([5, 1])).toThrow(/ascending/);
    expect(() => timeScaledCable([0], { drive: 1 })).toThrow(/drive/);
  });
});

describe('simulateNerve with pulsesMs', () => {
  it('one pulse at 0 gives the same samples, bit for bit, as the single-pulse model (existing outputs unchanged)', () => {
    const m = rodentSciatic();
    const model = { ...m, populations: m.populations.map((p) => ({ ...p, count: 50 })) };
    const grid = { fs: 20000, t0Ms: -2, nSamples: 600 };
    const rc = { intensity: 5, distanceMm: 20, temperatureC: 37, concentration: 0, jitterMs: 0.003 };
    const nz = { noiseUv: 8, humUv: 30, artifactUv: 3000, driftUvPerMs: 0.05 };
    const a = simulateNerve({ model, seed: 3, grid, sweeps: [rc, rc], nuisance: nz });
    const b = simulateNerve({
      model,
      seed: 3,
      grid,
      sweeps: [
        { ...rc, pulsesMs: [0] },
        { ...rc, pulsesMs: [0] },
      ],
      nuisance: nz,
    });
    expect(
      Buffer.from(b.data.buffer, b.data.byteOffset, b.data.byteLength).equals(
        Buffer.from(a.data.buffer, a.data.byteOffset, a.data.byteLength),
      ),
    ).toBe(true);
    expect(() => simulateNerve({ model, seed: 3, grid, sweeps: [{ ...rc, pulsesMs: [1, 2] }] })).toThrow(/pulsesMs/);
  });
});
