import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { SweepSet, firwinKaiser, kaiser, rationalRatio, besselI0, OptionError } from '../../src';

// Reference: SciPy 1.17 scipy.signal.resample_poly / firwin / get_window, written by
// tests/reference/make_filters.py (rerun with --check in .ci/run).
const ref = JSON.parse(readFileSync(join(__dirname, '..', 'reference', 'filters.json'), 'utf8'));
const x: number[] = ref.input;
const maxRel = (a: ArrayLike<number>, b: number[]) => {
  const scale = Math.max(...b.map(Math.abs));
  let e = 0;
  for (let i = 0; i < b.length; i++) e = Math.max(e, Math.abs(a[i] - b[i]) / scale);
  return e;
};
const oneSweep = (v: number[], fs: number) =>
  new SweepSet({
    data: Float64Array.from(v),
    nSweeps: 1,
    nSamples: v.length,
    fs,
    t0Ms: -1,
    units: 'uV',
    conditions: [{}],
  });

describe('resample(set, { fs }) against scipy.signal.resample_poly', () => {
  for (const c of ref.resample_poly as {
    up: number;
    down: number;
    padtype: 'constant' | 'mean' | 'median';
    y: number[];
  }[]) {
    it(`up ${c.up}, down ${c.down}, padtype ${c.padtype}: same length and values to 1e-9 relative`, () => {
      const fs = 1000 * c.down; // any rate with the right ratio
      const r = oneSweep(x, fs).resample({ fs: 1000 * c.up, padtype: c.padtype });
      expect(r.nSamples).toBe(c.y.length);
      expect(r.fs).toBe(1000 * c.up);
      expect(r.t0Ms).toBe(-1);
      expect(maxRel(r.data, c.y)).toBeLessThan(1e-9);
    });
  }
  it('firwin(41, 0.3, window=("kaiser", 5.0)) and the Kaiser window', () => {
    expect(maxRel(firwinKaiser(41, 0.3, 5), ref.firwin_kaiser.h)).toBeLessThan(1e-12);
    expect(maxRel(kaiser(15, 8.6), ref.firwin_kaiser['kaiser_15_8.6'])).toBeLessThan(1e-12);
    // I0(1) = 1.2660658777520082 (Abramowitz & Stegun, Table 9.8)
    expect(besselI0(1)).toBeCloseTo(1.2660658777520082, 14);
  });
  it('invariants: a constant stays constant with mean padding; the rate and the record length', () => {
    const c = oneSweep(new Array(1000).fill(7.5), 50000).resample({ fs: 20000, padtype: 'mean' });
    expect(c.nSamples).toBe(400);
    expect(Math.max(...c.data.map((v) => Math.abs(v - 7.5)))).toBeLessThan(1e-12);
    expect(c.history.at(-1)!.verb).toBe('resample');
  });
  it('rejects rates that are not a small rational multiple, and bad options, naming them', () => {
    expect(rationalRatio(44100, 48000)).toEqual({ up: 160, down: 147 });
    const s = oneSweep(x, 50000);
    expect(() => s.resample({ fs: 50000 * Math.SQRT2 })).toThrow(OptionError);
    expect(() => s.resample({ fs: 50000 * Math.SQRT2 })).toThrow(/invalid fs: .*up and down at most 1000/);
    expect(() => s.resample({ fs: -5 })).toThrow(/invalid fs: -5 Hz; must be > 0/);
    expect(() => s.resample({ fs: 20000, padtype: 'edge' as never })).toThrow(/padtype/);
    expect(() => s.resample({ fs: 20000, beta: -1 })).toThrow(/invalid beta/);
    const long = new SweepSet({
      data: new Float64Array(4 * 500000),
      nSweeps: 4,
      nSamples: 500000,
      fs: 1000,
      t0Ms: 0,
      units: 'uV',
      conditions: [{}, {}, {}, {}],
    });
    expect(() => long.resample({ fs: 1e6 })).toThrow(/would make 4 sweeps x 500000000 samples/);
  });
});
