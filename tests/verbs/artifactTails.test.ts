// removeArtifact({ method: 'exponential', exponentials: 2 }): a fast decay and a slow tail after the amplifier
// rail (issue 14: one exponential from the first samples after the rail left a slow tail on the response).
// Expected numbers: the analytic parameters of noise-free data, and SciPy 1.17 curve_fit on the noisy case
// (tests/verbs/reference/exp_tails.py, printed by `python3 tests/verbs/reference/exp_tails.py`). Invented data.
import { describe, it, expect } from 'vitest';
import { SweepSet, OptionError } from '../../src';
import { fitExpTails } from '../../src/verbs/artifact';

const fs = 50000;
const tail = (tMs: number) => -2e-3 * Math.exp(-tMs / 0.3) + 1e-4 * Math.exp(-tMs / 3) + 5e-6; // t from 0.3 ms
const scatter = (i: number) => 1e-5 * Math.sin(i * 12.9898) * Math.cos(i * 4.1414);

describe('fitExpTails: two exponentials and a constant by variable projection', () => {
  const m = Math.round(5.7e-3 * fs) + 1; // 0.3 .. 6 ms
  it('recovers known exponentials from noise-free samples (analytic)', () => {
    const x = Float64Array.from({ length: m }, (_, k) => tail((k * 1000) / fs));
    const f = fitExpTails(x, 0, m - 1, fs);
    expect(f.terms.length).toBe(2);
    expect(f.terms[0].tauMs).toBeCloseTo(0.3, 6);
    expect(f.terms[0].A).toBeCloseTo(-2e-3, 9);
    expect(f.terms[1].tauMs).toBeCloseTo(3, 5);
    expect(f.terms[1].A).toBeCloseTo(1e-4, 9);
    expect(f.c).toBeCloseTo(5e-6, 9);
  });
  it('matches SciPy curve_fit on noisy samples (tests/verbs/reference/exp_tails.py)', () => {
    const x = Float64Array.from({ length: m }, (_, k) => tail((k * 1000) / fs) + scatter(k + 15));
    const f = fitExpTails(x, 0, m - 1, fs);
    // SciPy 1.17 curve_fit: A1 -2.0002736555e-3 tau1 0.2999590804 A2 9.9850115838e-5 tau2 2.9893223942
    // c 5.1787366113e-6 rss 7.1145700340e-9
    expect(f.terms[0].tauMs).toBeCloseTo(0.2999590804, 5);
    expect(f.terms[1].tauMs).toBeCloseTo(2.9893223942, 3);
    expect(f.terms[0].A).toBeCloseTo(-2.0002736555e-3, 8);
    expect(f.terms[1].A).toBeCloseTo(9.9850115838e-5, 8);
    expect(f.rss).toBeLessThanOrEqual(7.114570034e-9 * (1 + 1e-6));
  });
  it('one decay only: falls back to the single exponential (no spurious second term)', () => {
    const x = Float64Array.from({ length: m }, (_, k) => -2e-3 * Math.exp(-(k * 1000) / fs / 0.3));
    const f = fitExpTails(x, 0, m - 1, fs);
    const big = f.terms.filter((q) => Math.abs(q.A) > 1e-9);
    expect(big.length).toBe(1);
    expect(big[0].tauMs).toBeCloseTo(0.3, 4);
  });
});

describe('removeArtifact exponential with two exponentials after a rail on either side', () => {
  // -1..8 ms; on the rail (+-10 mV) until 0.3 ms, then the tail; a small response at 7 ms, after the tail window
  const n = Math.round(9e-3 * fs) + 1;
  const t0 = -1;
  const response = (t: number) => 50e-6 * Math.exp(-(((t - 7) / 0.2) ** 2));
  function sweepOf(sign: number): SweepSet {
    const data = Float64Array.from({ length: n }, (_, i) => {
      const t = t0 + (i * 1000) / fs;
      if (t < 0) return scatter(i) * 0.1;
      if (t < 0.3) return sign * 10e-3;
      return sign * tail(t - 0.3) + response(t) + scatter(i) * 0.1;
    });
    return new SweepSet({
      data,
      nSweeps: 1,
      nSamples: n,
      fs,
      t0Ms: t0,
      units: 'V',
      conditions: [{ preparation: 'P' }],
    });
  }
  for (const sign of [1, -1]) {
    it(`rail ${sign > 0 ? 'positive' : 'negative'}: the slow tail is removed (one exponential leaves it)`, () => {
      const set = sweepOf(sign);
      const opts = {
        method: 'exponential' as const,
        window: [0, 0.3] as [number, number],
        tailWindow: [0.3, 6] as [number, number],
      };
      const two = set.removeArtifact({ ...opts, exponentials: 2 });
      const one = set.removeArtifact(opts);
      const err = (y: SweepSet) => {
        let worst = 0;
        const tt = y.time();
        for (let i = 0; i < n; i++) {
          const t = tt[i];
          // what is left beside the response, the constant and the scatter, 0.5..8 ms
          if (t >= 0.5) worst = Math.max(worst, Math.abs(y.sweep(0)[i] - response(t) - sign * 5e-6 - scatter(i) * 0.1));
        }
        return worst;
      };
      console.log(
        `rail ${sign}: largest residual 0.5-8 ms, two exponentials ${(err(two) * 1e6).toFixed(3)} uV, ` +
          `one ${(err(one) * 1e6).toFixed(3)} uV`,
      );
      expect(err(two)).toBeLessThan(2e-6); // under 2 uV beside a 100 uV slow tail
      expect(err(one)).toBeGreaterThan(10e-6); // one exponential cannot take both decays
      expect(two.history.at(-1)!.options).toMatchObject({ exponentials: 2 });
      expect((two.extras.artifactTauMs as number[][])[0].length).toBe(2);
    });
  }
  for (const sign of [1, -1]) {
    it(`a rail (${sign > 0 ? '+' : '-'}10 mV, stored with a gain) outlasting the window: fitted after it, blanked to its end`, () => {
      const set = sweepOf(sign);
      // the rail as a gain-scaled recording stores it: equal to within a few parts in 1e9, not bit for bit
      const data = Float64Array.from(set.data, (v) => (Math.abs(v) === 10e-3 ? v * (1 + 3e-9 * Math.sin(v * 1e7)) : v));
      const jittered = new SweepSet({
        data,
        nSweeps: 1,
        nSamples: n,
        fs,
        t0Ms: t0,
        units: 'V',
        conditions: [{ preparation: 'P' }],
      });
      const y = jittered.removeArtifact({
        method: 'exponential',
        window: [0, 0.1],
        tailWindow: [0.1, 6],
        exponentials: 2,
      });
      const railEnd = (y.extras.artifactRailEndMs as number[])[0];
      expect(railEnd).toBeCloseTo(0.28, 9); // the last sample before 0.3 ms at 50 kHz
      const tt = y.time();
      let worst = 0;
      for (let i = 0; i < n; i++)
        if (tt[i] >= 0.5)
          worst = Math.max(worst, Math.abs(y.sweep(0)[i] - response(tt[i]) - sign * 5e-6 - scatter(i) * 0.1));
      expect(worst).toBeLessThan(2e-6);
      // the railed samples are bridged, not left at 10 mV minus an extrapolated decay
      for (let i = 0; i < n; i++) if (tt[i] > 0.1 && tt[i] < 0.28) expect(Math.abs(y.sweep(0)[i])).toBeLessThan(3e-3);
    });
  }
  it('a rail through the whole tail window is refused, naming the sweep and the rail', () => {
    const set = sweepOf(1);
    expect(() => set.removeArtifact({ method: 'exponential', window: [0, 0.05], tailWindow: [0.05, 0.25] })).toThrow(
      /sweep 0: the amplifier rail lasts until 0.2[45]0 ms/,
    );
  });
  it('exponentials must be 1 or 2, and only with method "exponential"', () => {
    const set = sweepOf(1);
    expect(() => set.removeArtifact({ method: 'exponential', exponentials: 3 as never })).toThrow(
      /invalid exponentials: 3; must be 1 or 2/,
    );
    expect(() => set.removeArtifact({ method: 'blank', exponentials: 2 } as never)).toThrow(OptionError);
  });
});
