/**
 * One wild sweep (a loose lead, a glitch spread by the filter: noise a hundred times the others') must not decide
 * what the sweeps share (polarity, the decomposition's waveform, the shared amplitude shape) for the other sweeps.
 * Data: the recorded sweeps of the independent development set FNPG-N07 (tests/fixtures/devset-measure, 30 C,
 * 15 and 25 mm); the expectation (the other sweeps measured as without the wild one) is common practice, no source.
 */
import { describe, it, expect } from 'vitest';
import { SweepSet } from '../../src';
import { Rng } from '../../src/model/random';
import { load } from './devsetFixture';
import type { ComponentRow } from '../../src/measure/components';

function recorded30(wildNoiseUv: number): SweepSet {
  const { s, data } = load('temperature_fast');
  const n = s.nSamples;
  const keep = s.traces.map((t, i) => (t.temperature_C === 30 ? i : -1)).filter((i) => i >= 0);
  const out = new Float64Array(keep.length * n);
  const rng = new Rng(12345);
  keep.forEach((i, r) => {
    for (let j = 0; j < n; j++) out[r * n + j] = data[i * n + j] + (r === 0 ? wildNoiseUv * rng.normal() : 0);
  });
  return new SweepSet({
    data: out,
    nSweeps: keep.length,
    nSamples: n,
    fs: s.fs,
    t0Ms: s.t0Ms,
    units: 'uV',
    conditions: keep.map((i) => ({
      preparation: 'FNPG-N07-TA',
      distanceMm: s.traces[i].distance_mm,
      temperatureC: 30,
      repeat: s.traces[i].repeat,
      intensity: s.traces[i].stimulus_mA,
    })),
  });
}

describe('a wild sweep does not decide the shared estimates of the others', () => {
  const rowsOf = (x: SweepSet) => x.baseline().components({ preset: 'mammalian' }).rows as ComponentRow[];
  const clean = rowsOf(recorded30(0));
  const wild = rowsOf(recorded30(2000));
  it('the other sweeps keep their status, polarity and peak latency (within 2 us)', () => {
    const others = (rows: ComponentRow[]) => rows.filter((r) => r.sweep !== 0);
    const a = others(clean),
      b = others(wild);
    expect(b.length).toBe(a.length);
    for (let k = 0; k < a.length; k++) {
      expect(b[k].status, `${a[k].class} sweep ${a[k].sweep}: ${b[k].reason}`).toBe(a[k].status);
      expect(b[k].polarity).toBe(a[k].polarity);
      if (typeof a[k].peak_ms === 'number')
        expect(Math.abs((b[k].peak_ms as number) - a[k].peak_ms)).toBeLessThan(0.002);
    }
    expect(a.some((r) => r.status === 'measured' && r.class === 'A-delta')).toBe(true);
  });
  it('the wild sweep itself gets no shared-shape amplitude', () => {
    for (const r of wild.filter((q) => q.sweep === 0)) expect(r.amplitude_fit_uV ?? null).toBeNull();
  });
});
