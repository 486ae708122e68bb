import { describe, it, expect } from 'vitest';
import { SweepSet, type Conditions } from '../../src';

// Synthetic sweeps with a known response plus a known artifact (invented test data;
// the checks are self-consistency bounds, reported in the output).
const fs = 50000;
const t0 = -2;
const n = Math.round((12 * fs) / 1000);
const tAt = (i: number) => t0 + (i * 1000) / fs;
function response(t: number, amp: number): number {
  // a biphasic component peaking near 1.2 ms (overlaps the artifact tail)
  const g = (m: number, s: number) => Math.exp(-0.5 * ((t - m) / s) ** 2);
  return amp * (g(1.2, 0.15) - 0.4 * g(1.6, 0.25));
}
function artifact(t: number, I: number, tau: number, pol = 1): number {
  if (t < 0) return 0;
  const h = 5 * Math.tanh(I); // saturating with intensity
  return pol * (t < 0.1 ? h : h * 0.6 * Math.exp(-(t - 0.1) / tau));
}
function make(tau: number, intensities: number[], withPolarity = false): { set: SweepSet; truth: Float64Array[] } {
  const rows: Conditions[] = [];
  const data: number[] = [];
  const truth: Float64Array[] = [];
  let k = 0;
  for (const I of intensities)
    for (const pol of withPolarity ? [1, -1] : [1]) {
      const amp = I > 0.5 ? 1 * Math.min(1, (I - 0.5) / 1) : 0;
      const tr = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        const t = tAt(i);
        tr[i] = response(t, amp);
        // deterministic small noise
        const noise = 0.002 * Math.sin(i * 12.9898 + k * 78.233);
        data.push(tr[i] + artifact(t, I, tau, pol) + noise + 0.05);
      }
      truth.push(tr);
      rows.push({ preparation: 'P', intensity: I, polarity: pol, repeat: 0 });
      k++;
    }
  return {
    set: new SweepSet({
      data: Float64Array.from(data),
      nSweeps: rows.length,
      nSamples: n,
      fs,
      t0Ms: t0,
      units: 'mV',
      conditions: rows,
    }),
    truth,
  };
}
function residual(set: SweepSet, truth: Float64Array[], from = 0.35, to = 8): number {
  let worst = 0;
  for (let s = 0; s < set.nSweeps; s++) {
    let se = 0,
      m = 0;
    for (let i = 0; i < set.nSamples; i++) {
      const t = set.timeAt(i);
      if (t < from || t > to) continue;
      se += (set.sweep(s)[i] - truth[s][i]) ** 2;
      m++;
    }
    worst = Math.max(worst, Math.sqrt(se / m));
  }
  return worst;
}

describe('baseline(set, options)', () => {
  it('subtracts the pre-stimulus mean', () => {
    const { set } = make(0.1, [0.2]);
    const b = set.baseline({ window: [-2, -0.1] });
    let s = 0;
    for (let i = 0; i < set.indexAt(-0.1); i++) s += b.sweep(0)[i];
    expect(Math.abs(s / set.indexAt(-0.1))).toBeLessThan(1e-3);
    expect(b.history.at(-1)).toMatchObject({
      verb: 'baseline',
      options: { window: [-2, -0.1], method: 'mean', lateWindow: null },
    });
  });
  it('removes a linear drift with lateWindow', () => {
    const data = new Float64Array(1000);
    for (let i = 0; i < 1000; i++) data[i] = 0.3 + 0.01 * i;
    const s = new SweepSet({ data, nSweeps: 1, nSamples: 1000, fs: 10000, t0Ms: -10, units: 'mV', conditions: [{}] });
    const b = s.baseline({ window: [-10, -5], lateWindow: [80, 89.9] });
    for (let i = 0; i < 1000; i++) expect(Math.abs(b.sweep(0)[i])).toBeLessThan(1e-9);
  });
  it('explains a missing pre-stimulus window', () => {
    const s = new SweepSet({
      data: new Float64Array(10),
      nSweeps: 1,
      nSamples: 10,
      fs: 1000,
      t0Ms: 0,
      units: 'mV',
      conditions: [{}],
    });
    expect(() => s.baseline()).toThrow(/no pre-stimulus baseline; give window/);
  });
});

describe('removeArtifact(set, { method }) residual error of the known response', () => {
  const report: Record<string, number> = {};
  it('template subtraction (least-squares scale) removes an artifact overlapping the response', () => {
    const { set, truth } = make(0.3, [0.2, 0.8, 1.2, 1.6, 2.5]);
    const out = set
      .baseline({ window: [-2, -0.1] })
      .removeArtifact({ method: 'template', window: [0, 0.3], fitWindow: [0, 0.5] });
    const err = residual(out, truth, 0.12);
    report.template = err;
    // the artifact saturates (tanh), so a constant-shape template fits it exactly up to scale
    expect(err).toBeLessThan(0.02); // < 2% of the 1 mV response
  });
  it('template subtraction in proportion to intensity is worse when the artifact saturates', () => {
    const { set, truth } = make(0.3, [0.2, 0.8, 1.2, 1.6, 2.5]);
    const out = set.baseline({ window: [-2, -0.1] }).removeArtifact({ method: 'template', scaling: 'intensity' });
    report.templateIntensity = residual(out, truth, 0.12);
    expect(report.templateIntensity).toBeGreaterThan(report.template);
  });
  it('exponential tail fit then blank', () => {
    const { set, truth } = make(0.15, [0.8, 1.6]);
    const out = set
      .baseline({ window: [-2, -0.1] })
      .removeArtifact({ method: 'exponential', window: [0, 0.12], tailWindow: [0.12, 0.6] });
    report.exponential = residual(out, truth, 0.35);
    expect(report.exponential).toBeLessThan(0.1);
  });
  it('blank and bridge with a short artifact', () => {
    const { set, truth } = make(0.02, [0.8, 1.6]);
    const lin = set
      .baseline({ window: [-2, -0.1] })
      .removeArtifact({ method: 'blank', window: [0, 0.3], bridge: 'linear' });
    const her = set
      .baseline({ window: [-2, -0.1] })
      .removeArtifact({ method: 'blank', window: [0, 0.3], bridge: 'hermite' });
    report.blankLinear = residual(lin, truth, 0);
    report.blankHermite = residual(her, truth, 0);
    expect(report.blankLinear).toBeLessThan(0.05);
    expect(report.blankHermite).toBeLessThan(0.05);
  });
  it('alternating polarity cancels the artifact exactly', () => {
    const { set, truth } = make(0.3, [0.8, 1.6], true);
    const out = set.baseline({ window: [-2, -0.1] }).removeArtifact({ method: 'alternate' });
    expect(out.nSweeps).toBe(2);
    report.alternate = residual(out, [truth[0], truth[2]], 0);
    expect(report.alternate).toBeLessThan(0.003);
    console.log('artifact removal, worst RMS residual of a 1 mV response (mV):', JSON.stringify(report));
  });
  it('finds the stimulus time from the artifact', () => {
    const { set } = make(0.3, [0.8, 1.6]);
    const shifted = set.create({ t0Ms: set.t0Ms + 0.5 });
    const d = shifted.detectStimulus();
    expect(Math.abs(d.timeMs - 0.5)).toBeLessThanOrEqual(1000 / fs);
    expect(shifted.alignStimulus().t0Ms).toBeCloseTo(t0, 6);
  });
  it('checks its options', () => {
    const { set } = make(0.3, [0.8]);
    expect(() => set.removeArtifact({ method: 'magic' as never })).toThrow(
      /invalid method: "magic"; must be one of "blank", "template", "exponential", "alternate"/,
    );
    expect(() => set.removeArtifact({ method: 'blank', window: [1, 0] })).toThrow(/invalid window/);
    expect(() => set.removeArtifact({ method: 'alternate' })).toThrow(/equal numbers|polarity/);
  });
});

describe('removeHum(set) versus notch(set)', () => {
  // 40 ms sweeps: two mains cycles are needed to tell 50 from 60 Hz
  function humSet(f: number) {
    const m = 2000;
    const data = new Float64Array(m);
    const tr = new Float64Array(m);
    for (let i = 0; i < m; i++) {
      const tm = -2 + (i * 1000) / fs;
      tr[i] = response(tm, 1);
      const t = tm / 1000;
      data[i] = tr[i] + 0.3 * Math.sin(2 * Math.PI * f * t + 0.7) + 0.1 * Math.sin(2 * Math.PI * 3 * f * t + 0.2);
    }
    return {
      set: new SweepSet({ data, nSweeps: 1, nSamples: m, fs, t0Ms: -2, units: 'mV', conditions: [{}] }),
      truth: [tr],
    };
  }
  it('detects 50 Hz vs 60 Hz and keeps the response shape better than a notch', () => {
    for (const f of [50, 60, 50.3]) {
      const { set, truth } = humSet(f);
      const h = set.removeHum({ harmonics: 3, exclude: [[0, 3]] }); // leave the response out of the fit
      expect(Math.abs((h.extras.humFrequencyHz as number) - f)).toBeLessThan(0.05);
      const errHum = residual(h, truth, -2, 38);
      expect(errHum).toBeLessThan(0.02);
      if (f === 50) {
        const errNotch = residual(set.notch({ frequency: 50 }), truth, -2, 38);
        console.log(`hum 50 Hz: RMS residual hum subtraction ${errHum.toFixed(4)} mV, notch ${errNotch.toFixed(4)} mV`);
        expect(errHum).toBeLessThan(errNotch);
      }
    }
  });
  it('names the option when harmonics reach fs/2', () => {
    const { set } = humSet(50);
    expect(() => set.removeHum({ frequency: 50, harmonics: 600 })).toThrow(
      /invalid harmonics: 600; must be an integer 1..20/,
    );
    expect(() => set.crop(-2, 10).removeHum()).toThrow(/needs sweeps of at least 35 ms/);
    expect(() => set.decimate({ factor: 1 })).toThrow(/invalid factor: 1/);
  });
});

describe('filter and decimate verbs', () => {
  it('low-pass keeps DC, records its options, and decimate halves fs', () => {
    const { set } = make(0.3, [1.6]);
    const f = set.lowpass(5000);
    expect(f.history.at(-1)).toMatchObject({
      verb: 'filter',
      options: { btype: 'lowpass', cutoff: 5000, order: 4, zeroPhase: true },
    });
    expect(() => set.lowpass(30000)).toThrow('invalid cutoff: 30000 Hz; must be 0 < cutoff < fs/2 (fs=50000 Hz)');
    const d = set.decimate({ factor: 2 });
    expect(d.fs).toBe(25000);
    expect(d.nSamples).toBe(Math.ceil(n / 2));
  });
});

describe('every conditioning option is checked at the call (message names the option, the value and what is allowed)', () => {
  const { set } = make(0.08, [0.1, 0.2, 1, 2]);
  const cases: [string, () => unknown, RegExp][] = [
    [
      'window with NaN',
      () => set.removeArtifact({ method: 'blank', window: [NaN, 1] }),
      /invalid window: \[NaN, 1\]; must be \[from, to\] in ms/,
    ],
    [
      'templateSweeps out of range',
      () => set.removeArtifact({ method: 'template', window: [0, 0.1], templateSweeps: [99] }),
      /invalid templateSweeps: \[99\]; must be an array of sweep indices 0\.\.3/,
    ],
    [
      'templateSweeps not an array',
      () => set.removeArtifact({ method: 'template', window: [0, 0.1], templateSweeps: '0' as never }),
      /invalid templateSweeps/,
    ],
    [
      'maxIntensity NaN',
      () => set.removeArtifact({ method: 'template', window: [0, 0.1], maxIntensity: NaN }),
      /invalid maxIntensity: NaN; must be a finite number/,
    ],
    [
      'cutoff given as text',
      () => set.filter({ btype: 'lowpass', cutoff: '1000' as never }),
      /invalid cutoff: "1000"; must be a number in Hz/,
    ],
    [
      'cutoff at fs/2',
      () => set.lowpass(25000),
      /invalid cutoff: 25000 Hz; must be 0 < cutoff < fs\/2 \(fs=50000 Hz\)/,
    ],
    [
      'negative padlen',
      () => set.filter({ btype: 'lowpass', cutoff: 1000, padlen: -3 }),
      /invalid padlen: -3; must be an integer 0\.\./,
    ],
    [
      'hum frequency as text',
      () => set.removeHum({ frequency: '50' as never }),
      /invalid frequency: "50"; must be a mains frequency in Hz/,
    ],
    [
      'groupBy an absent condition',
      () => set.groupBy('nonexistent').average(),
      /no sweep has the condition "nonexistent"; conditions are .*intensity/,
    ],
  ];
  for (const [name, call, re] of cases) {
    it(name, () => {
      expect(call).toThrow(re);
    });
  }
});
