// Mistakes at the call are errors that name the place and the nearest valid name, and a
// hum fit that cannot determine its sinusoids is refused (issue: it silently added a
// large sinusoid to every sweep). Invented test data; the expected behaviour is the
// project's contract, and the conditioning numbers are checked against a direct
// computation (eigenvalues of a 2 x 2 matrix by hand).
import { describe, it, expect } from 'vitest';
import { SweepSet, OptionError, AnalysisError, humLimits } from '../../src';
import { sineConditioning } from '../../src/signal/sinefit';
import { symmetricEigenvalues, cholesky } from '../../src/signal/linalg';

const fs = 10000;
function humSet(nSamples: number, t0Ms = -2, nSweeps = 3): SweepSet {
  const data = new Float64Array(nSweeps * nSamples);
  for (let s = 0; s < nSweeps; s++) {
    for (let i = 0; i < nSamples; i++) {
      const t = t0Ms + (i * 1000) / fs;
      // 0.05 mV of 50 Hz hum, deterministic scatter, a slow response after the stimulus
      data[s * nSamples + i] =
        0.05 * Math.sin((2 * Math.PI * 50 * t) / 1000 + s) +
        0.02 * Math.sin(i * 12.9898 + s * 78.233) +
        (t > 0 ? Math.exp(-t / 60) : 0);
    }
  }
  const conditions = Array.from({ length: nSweeps }, (_, s) => ({ preparation: 'P', intensity: s + 1, repeat: s }));
  return new SweepSet({ data, nSweeps, nSamples, fs, t0Ms, units: 'mV', conditions });
}

describe('removeHum(set, { exclude }) refuses an ill-conditioned fit', () => {
  const set = humSet(4000); // -2 .. 398 ms
  it('an exclude window over most of the sweep is an OptionError naming exclude (was: a large sinusoid added silently)', () => {
    expect(() => set.removeHum({ frequency: 50, harmonics: 5, exclude: [[0, 390]] })).toThrow(OptionError);
    expect(() => set.removeHum({ frequency: 50, harmonics: 5, exclude: [[0, 390]] })).toThrow(
      /cannot remove hum: exclude \[\[0, 390\]\] leaves 99 of 4000 samples/,
    );
    expect(() => set.removeHum({ frequency: 50, harmonics: 1, exclude: [[-1, 395]] })).toThrow(/cannot remove hum/);
    expect(() => set.removeHum({ harmonics: 3, exclude: [[0, 390]] })).toThrow(/cannot remove hum/);
  });
  it('short sweeps without exclude are an AnalysisError (the data cannot support the fit)', () => {
    const short = humSet(100, -2); // 10 ms: half a period of 50 Hz
    expect(() => short.removeHum({ frequency: 50, harmonics: 5 })).toThrow(AnalysisError);
    expect(() => short.removeHum({ frequency: 50, harmonics: 5 })).toThrow(/cannot be told apart.*condition number/);
  });
  it('a fit over a few mains periods still works and removes the hum', () => {
    const out = set.removeHum({ frequency: 50, harmonics: 3, exclude: [[0, 300]] }); // 98 ms fitted: about 5 periods
    const amp = out.extras.humAmplitude as number[];
    for (const a of amp) expect(Math.abs(a - 0.05)).toBeLessThan(0.01);
  });
  it('sineConditioning: whole periods give condition and gain 1 (analytic: cos and sin are orthogonal over whole periods)', () => {
    const t = Float64Array.from({ length: 400 }, (_, i) => (i * 1000) / fs); // 40 ms = 2 periods
    const mask = new Uint8Array(400).fill(1);
    mask.fill(0, 200); // fit the first period, leave out the second
    const c = sineConditioning(t, 50, 1, mask);
    expect(c.fitted).toBe(200);
    expect(c.condition).toBeCloseTo(1, 9);
    expect(c.extrapolationGain).toBeCloseTo(1, 9);
    const q = sineConditioning(
      t,
      50,
      3,
      Uint8Array.from({ length: 400 }, (_, i) => (i < 40 ? 1 : 0)),
    ); // a fifth of a period
    expect(q.extrapolationGain).toBeGreaterThan(humLimits.maxExtrapolationGain);
  });
  it('symmetricEigenvalues and cholesky on small matrices (hand computation)', () => {
    // [[2, 1], [1, 2]] has eigenvalues 1 and 3; [[4, 2], [2, 3]] = L L^T with L = [[2, 0], [1, sqrt 2]]
    const ev = symmetricEigenvalues([
      [2, 1],
      [1, 2],
    ]);
    expect(ev[0]).toBeCloseTo(1, 12);
    expect(ev[1]).toBeCloseTo(3, 12);
    const L = cholesky([
      [4, 2],
      [2, 3],
    ])!;
    expect(L[0][0]).toBeCloseTo(2, 12);
    expect(L[1][0]).toBeCloseTo(1, 12);
    expect(L[1][1]).toBeCloseTo(Math.SQRT2, 12);
    expect(
      cholesky([
        [1, 1],
        [1, 1],
      ]),
    ).toBeNull();
  });
});

describe('unknown option keys name the verb and the nearest valid key', () => {
  const set = humSet(2000);
  const cases: [string, () => unknown, RegExp][] = [
    [
      'baseline({ windw })',
      () => set.baseline({ windw: [-2, -0.1] } as never),
      /unknown key "windw" in baseline options \(did you mean "window"\?\)/,
    ],
    [
      'removeArtifact({ widow })',
      () => set.removeArtifact({ method: 'blank', widow: [0, 0.3] } as never),
      /unknown key "widow" in removeArtifact options \(did you mean "window"\?\)/,
    ],
    [
      'removeArtifact blank with tailWindow',
      () => set.removeArtifact({ method: 'blank', tailWindow: [0.3, 0.6] }),
      /"tailWindow" in removeArtifact options is not used by method "blank" \(only by "exponential"\)/,
    ],
    [
      'removeArtifact template with bridge',
      () => set.removeArtifact({ method: 'template', bridge: 'linear' }),
      /not used by method "template"/,
    ],
    [
      'filter({ cutof })',
      () => set.filter({ btype: 'lowpass', cutof: 1000 } as never),
      /unknown key "cutof" in filter options \(did you mean "cutoff"\?\)/,
    ],
    ['notch({ q })', () => set.notch({ q: 30 } as never), /unknown key "q" in notch options \(did you mean "Q"\?\)/],
    [
      'removeHum({ harmonic })',
      () => set.removeHum({ frequency: 50, harmonic: 3 } as never),
      /unknown key "harmonic" in removeHum options \(did you mean "harmonics"\?\)/,
    ],
    [
      'decimate({ factr })',
      () => set.decimate({ factor: 2, odrer: 4 } as never),
      /unknown key "odrer" in decimate options \(did you mean "order"\?\)/,
    ],
    [
      'resample({ padding })',
      () => set.resample({ fs: 5000, padtyp: 'mean' } as never),
      /unknown key "padtyp" in resample options \(did you mean "padtype"\?\)/,
    ],
    [
      'detectStimulus({ serch })',
      () => set.detectStimulus({ serch: [0, 1] } as never),
      /unknown key "serch" in detectStimulus options \(did you mean "search"\?\)/,
    ],
    [
      'alignStimulus({ serch })',
      () => set.alignStimulus({ serch: [0, 1] } as never),
      /unknown key "serch" in detectStimulus options/,
    ],
    [
      'groupBy().average({ methd })',
      () => set.groupBy('preparation').average({ methd: 'median' } as never),
      /unknown key "methd" in average options \(did you mean "method"\?\)/,
    ],
    [
      'where({ preperation })',
      () => set.where({ preperation: 'P' }),
      /unknown condition "preperation" in where\(\) \(did you mean "preparation"\?\)/,
    ],
    [
      'where range with a typo',
      () => set.where({ intensity: { mn: 1 } as never }),
      /unknown key "mn" in where\(\) range for "intensity" \(did you mean "min"\?\)/,
    ],
    [
      'where range bound as text',
      () => set.where({ intensity: { min: '1' } as never }),
      /invalid where\(\) range for "intensity": min is "1"; must be a number/,
    ],
    ['select out of range', () => set.select([0, 7]), /invalid sweep index in select: 7; must be an integer 0\.\.2/],
  ];
  for (const [name, call, re] of cases) {
    it(name, () => {
      expect(call).toThrow(OptionError);
      expect(call).toThrow(re);
    });
  }
  it('where() on a valid condition that matches no sweep warns once', () => {
    const seen: string[] = [];
    const onWarn = (w: Error) => seen.push(w.message);
    process.on('warning', onWarn);
    const prev = process.env.FASCICLE_QUIET;
    delete process.env.FASCICLE_QUIET;
    try {
      expect(set.where({ preparation: 'nobody' }).nSweeps).toBe(0);
      expect(set.where({ preparation: 'nobody' }).nSweeps).toBe(0);
    } finally {
      if (prev !== undefined) process.env.FASCICLE_QUIET = prev;
    }
    return new Promise<void>((resolve, reject) =>
      setTimeout(() => {
        process.off('warning', onWarn);
        try {
          expect(seen.filter((m) => /matches none of the 3 sweeps/.test(m)).length).toBe(1);
          resolve();
        } catch (e) {
          reject(e);
        }
      }, 20),
    );
  });
});
