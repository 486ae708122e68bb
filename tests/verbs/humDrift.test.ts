// removeHum fits the hum jointly with a slow drift (issue 14: a hum fitted outside the response and
// extrapolated over it was biased by the drift). Expected numbers: NumPy 2.4 np.linalg.lstsq on the same
// design (tests/verbs/reference/hum_lstsq.py, printed by `python3 tests/verbs/reference/hum_lstsq.py`);
// the data are invented (a formula, the same in both files); the true hum is known analytically.
import { describe, it, expect } from 'vitest';
import { SweepSet, OptionError, AnalysisError } from '../../src';

const fs = 20000,
  t0 = -10,
  n = 3001;
const hum = (t: number) =>
  12e-6 * Math.sin((2 * Math.PI * 60 * t) / 1000 + 1.1) + 4e-6 * Math.sin((2 * Math.PI * 180 * t) / 1000 + 2.3);
function sweep(
  opts: { drift?: boolean; f?: number; phase?: number; scatter?: number; seed?: number } = {},
): Float64Array {
  const { drift = true, f = 60, phase = 0, scatter = 8e-6, seed = 0 } = opts;
  return Float64Array.from({ length: n }, (_, i) => {
    const t = t0 + (i * 1000) / fs;
    const h =
      12e-6 * Math.sin((2 * Math.PI * f * t) / 1000 + 1.1 + phase) +
      4e-6 * Math.sin((2 * Math.PI * 3 * f * t) / 1000 + 2.3 + phase);
    return (
      (drift ? 40e-6 + 30e-6 * Math.sin((2 * Math.PI * 0.7 * t) / 1000 + 0.4) : 0) +
      h +
      scatter * Math.sin((i + seed * 7919) * 12.9898 + 0.5) * Math.cos((i + seed * 7919) * 4.1414) +
      (t > 0 ? 200e-6 * Math.exp(-t / 20) * Math.sin(t / 6) : 0)
    );
  });
}
function set(sweeps: Float64Array[]): SweepSet {
  const data = new Float64Array(sweeps.length * n);
  sweeps.forEach((s, k) => data.set(s, k * n));
  const conditions = sweeps.map((_, k) => ({ preparation: 'P', repeat: k }));
  return new SweepSet({ data, nSweeps: sweeps.length, nSamples: n, fs, t0Ms: t0, units: 'V', conditions });
}
const exclude: [number, number][] = [[0, 90]];
const rmsOver = (a: Float64Array, f: (i: number) => number, from: number, to: number) => {
  let s = 0,
    c = 0;
  for (let i = 0; i < n; i++) {
    const t = t0 + (i * 1000) / fs;
    if (t >= from && t <= to) {
      s += (a[i] - f(i)) ** 2;
      c++;
    }
  }
  return Math.sqrt(s / c);
};

describe('removeHum({ drift }) fits the hum jointly with a drift polynomial', () => {
  const x = set([sweep()]);
  it('drift order 2: the subtracted hum equals NumPy lstsq on the same design (Legendre P0..P2 + 60/120/180 Hz)', () => {
    const y = x.removeHum({ frequency: 60, harmonics: 3, exclude, drift: 2 });
    const removed = Float64Array.from(x.sweep(0), (v, i) => v - y.sweep(0)[i]);
    // NumPy 2.4 np.linalg.lstsq (tests/verbs/reference/hum_lstsq.py): the fitted hum at these samples, V
    const numpy: [number, number][] = [
      [0, -6.97377333777e-6],
      [200, 1.353194513602e-5],
      [600, 7.390012703092e-6],
      [1800, -5.795411368121e-6],
      [2500, 7.030506350279e-6],
      [3000, -6.97377333777e-6],
    ];
    for (const [k, v] of numpy) expect(removed[k]).toBeCloseTo(v, 14); // within 5e-15 V of 1e-5 V
    expect(y.extras.humDriftOrder).toBe(2);
    expect(y.history.at(-1)!.options).toMatchObject({ drift: 2, driftOrder: 2, fittedHarmonics: [1, 2, 3] });
  });
  it('the drift no longer biases the hum extrapolated over the response (known hum; NumPy gives the same rms)', () => {
    const err = (drift: number | 'auto') => {
      const y = x.removeHum({ frequency: 60, harmonics: 3, exclude, drift });
      const removed = Float64Array.from(x.sweep(0), (v, i) => v - y.sweep(0)[i]);
      return rmsOver(removed, (i) => hum(t0 + (i * 1000) / fs), 5, 80);
    };
    // NumPy (same script): 1.943e-7 V with drift order 2, 1.566e-6 V with a constant only
    expect(err(2)).toBeCloseTo(1.9430838981e-7, 12);
    expect(err(0)).toBeCloseTo(1.5655751341e-6, 12);
    expect(err('auto')).toBeLessThan(0.3e-6); // the BIC's order is as good as order 2 here
  });
  it("drift 'auto' (BIC pooled over sweeps) keeps a constant when there is no drift and fits one when there is", () => {
    const flat = set([0, 1, 2, 3].map((k) => sweep({ drift: false, phase: k, seed: k })));
    expect(flat.removeHum({ frequency: 60, harmonics: 3, exclude }).extras.humDriftOrder).toBe(0);
    const drifting = set([0, 1, 2, 3].map((k) => sweep({ phase: k, seed: k })));
    expect(drifting.removeHum({ frequency: 60, harmonics: 3, exclude }).extras.humDriftOrder).toBeGreaterThanOrEqual(1);
  });
});

describe('removeHum after baseline gives back what the hum put into the baseline levels', () => {
  const raw = set([0, 1, 2].map((k) => sweep({ phase: k, seed: k })));
  it('baseline then removeHum equals removeHum then baseline (mean levels, with a late window; exact algebra)', () => {
    const b = { window: [-10, -0.1] as [number, number], lateWindow: [120, 139] as [number, number] };
    const h = { frequency: 60, harmonics: 3, exclude, drift: 1 };
    const first = raw
      .baseline(b)
      .removeArtifact({ method: 'blank', window: [0, 0.4] })
      .removeHum(h);
    const second = raw.removeHum(h).baseline(b);
    expect(first.history.at(-1)!.options.baselineRefit).toBe(true);
    for (let s = 0; s < 3; s++) {
      const p = first.sweep(s),
        q = second.sweep(s);
      const tt = first.time();
      // the blanked window [0, 0.4] ms (its last sample at 0.4 + 4e-16 ms) holds the bridge, not data
      for (let i = 0; i < n; i++) if (tt[i] < -0.01 || tt[i] > 0.41) expect(Math.abs(p[i] - q[i])).toBeLessThan(1e-15);
    }
    // through the subtracting artifact methods too (same time axis); not through a filter (it changes the hum)
    const tmpl = raw.baseline(b).removeArtifact({ method: 'template', window: [0, 0.4], templateSweeps: [0] });
    expect(tmpl.removeHum(h).history.at(-1)!.options.baselineRefit).toBe(true);
    const expo = raw.baseline(b).removeArtifact({ method: 'exponential', window: [0, 0.4], tailWindow: [0.4, 2] });
    expect(expo.removeHum(h).history.at(-1)!.options.baselineRefit).toBe(true);
    const filtered = raw.baseline(b).lowpass(2000).removeHum(h);
    expect(filtered.history.at(-1)!.options.baselineRefit).toBe(false);
    // without the give-back, the baseline's 10 ms of 60 Hz leave up to several uV of level and slope
    const median = raw.baseline({ ...b, method: 'median' }).removeHum(h);
    expect(median.history.at(-1)!.options.baselineRefit).toBe(false);
  });
});

describe("removeHum({ frequency: 'detect', harmonics: 'auto' }) on 50 and 60 Hz with harmonics and drift", () => {
  for (const f of [50, 60, 49.6, 60.4]) {
    it(`finds ${f} Hz (fundamental 12 uV, third harmonic 4 uV, drift 70 uV) and keeps the harmonics present`, () => {
      const s = set([0, 1, 2, 3].map((k) => sweep({ f, phase: k, seed: k })));
      const y = s.removeHum({ frequency: 'detect', harmonics: 'auto', exclude });
      expect(Math.abs((y.extras.humFrequencyHz as number) - f)).toBeLessThan(0.02);
      // the 3rd is 4 uV beside a standard error of about 0.3 uV: kept; 2nd, 4th..: noise alone, left out
      expect(y.extras.humHarmonics).toEqual([1, 3]);
    });
  }
});

describe('removeHum refusals and option errors (issue 12) with the drift term', () => {
  const x = set([sweep()]);
  it('a drift order the fitted samples cannot tell from the hum is refused, naming the drift', () => {
    const short: [number, number][] = [[-9, 125]]; // fitted: -10..-9 and 125..140 ms
    expect(() => x.removeHum({ frequency: 60, harmonics: 3, exclude: short, drift: 6 })).toThrow(OptionError);
    expect(() => x.removeHum({ frequency: 60, harmonics: 3, exclude: short, drift: 6 })).toThrow(
      /cannot remove hum: .*or a lower drift order/,
    );
  });
  it('drift and harmonics must be an order / count or "auto"', () => {
    expect(() => x.removeHum({ frequency: 60, drift: 1.5 })).toThrow(/invalid drift: 1.5; must be the order/);
    expect(() => x.removeHum({ frequency: 60, drift: 'yes' as never })).toThrow(OptionError);
    expect(() => x.removeHum({ frequency: 60, harmonics: 'some' as never })).toThrow(/integer 1..20 or "auto"/);
    expect(() => x.removeHum({ frequency: 60, drift: 11 })).toThrow(/invalid drift: 11/);
  });
  it('a sweep of a quarter of a mains period without exclude is still an AnalysisError', () => {
    const one = set([sweep()]).crop(-10, -6); // 4 ms: a quarter of a 60 Hz period
    expect(() => one.removeHum({ frequency: 60, harmonics: 5, drift: 3 })).toThrow(AnalysisError);
  });
});
