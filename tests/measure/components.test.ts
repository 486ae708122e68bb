import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import {
  SweepSet,
  PRESETS,
  latencyWindow,
  measureResponse,
  noiseMad,
  model,
  xcorrDelay,
  nnlsGram,
  clipEndMs,
  artifactDecay,
} from '../../src';

describe('fiber-class presets', () => {
  it('reproduce the named table (Kiernan, table of nerve fibre types; V via ../shared/REFERENCES.md)', () => {
    const d = Object.fromEntries(PRESETS['mammalian-detailed'].classes.map((c) => [c.name, c.velocity]));
    expect(d['A-alpha']).toEqual([70, 120]);
    expect(d['A-beta']).toEqual([60, 80]);
    expect(d['A-gamma']).toEqual([15, 40]);
    expect(d['A-delta']).toEqual([10, 30]);
    expect(d.B).toEqual([5, 15]);
    expect(d.C).toEqual([0.5, 2.5]);
  });
  it("Hursh's factor (about 6 m/s per um, Hursh 1939) puts a 12 um fiber at 36 mm inside the A-alpha/beta window", () => {
    const v = 6 * 12; // 72 m/s
    const lat = 36 / v; // 0.5 ms
    const [a, b] = latencyWindow(PRESETS.mammalian.classes[0].velocity, 36);
    expect(a).toBeCloseTo(0.3, 12); // 36 mm / 120 m/s
    expect(b).toBeCloseTo(0.6, 12); // 36 mm / 60 m/s
    expect(lat).toBeGreaterThan(a);
    expect(lat).toBeLessThan(b);
  });
});

describe('sub-sample latency', () => {
  it('locates an analytic pulse shifted by fractions of a sample within 2% of a sample interval', () => {
    for (const shift of [0, 0.1, 0.25, 0.37, 0.5, 0.73, 0.9]) {
      const x = Float64Array.from({ length: 200 }, (_, i) => Math.exp(-0.5 * ((i - 100 - shift) / 6) ** 2));
      const m = measureResponse(x, 50, 150, 0.001, 4, 1);
      expect(Math.abs(m.peakIndex - (100 + shift))).toBeLessThan(0.02);
    }
  });
  it('cross-correlation finds a fractional delay within 2% of a sample', () => {
    const f = (i: number, d: number) => Math.exp(-0.5 * ((i - 60 - d) / 8) ** 2);
    for (const d of [10.2, 17.5, 23.8]) {
      const a = Float64Array.from({ length: 200 }, (_, i) => f(i, 0));
      const b = Float64Array.from({ length: 200 }, (_, i) => f(i, d));
      expect(Math.abs(xcorrDelay(a, b, 0, 40).lag - d)).toBeLessThan(0.05);
    }
  });
  it('long windows (the FFT path) give the same lags as the direct sums of the definition', () => {
    // a slow C-like pulse in 3000-sample windows searched over 4000 lags: the FFT path
    const f = (i: number, d: number) =>
      Math.exp(-0.5 * ((i - 800 - d) / 120) ** 2) - 0.4 * Math.exp(-0.5 * ((i - 1100 - d) / 200) ** 2);
    for (const d of [311.3, 1207.7]) {
      const a = Float64Array.from({ length: 3000 }, (_, i) => f(i, 0));
      const b = Float64Array.from({ length: 3000 }, (_, i) => f(i, d));
      const got = xcorrDelay(a, b, -1000, 3000);
      expect(Math.abs(got.lag - d)).toBeLessThan(0.05);
      // direct sum of c[L] = sum_i a[i] b[i + L] around the peak agrees with the FFT choice
      const c = (L: number) => {
        let s = 0;
        for (let i = Math.max(0, -L); i < Math.min(3000, 3000 - L); i++) s += a[i] * b[i + L];
        return s;
      };
      const L0 = Math.round(got.lag);
      expect(c(L0)).toBeGreaterThanOrEqual(Math.max(c(L0 - 1), c(L0 + 1)) - 1e-9);
    }
  });
  it('the earliest class whose wave starts before its window gets its onset from before the window (analytic Gaussian crossing)', () => {
    // Issue 14 changed the onset definition from the k x noise crossing to 10% of the class's own peak
    // (noise-independent); the Gaussian is centred earlier so that its 10% crossing still precedes the window.
    const fs = 50000,
      n = 2000,
      t0 = -5;
    const rng = new model.Rng(3);
    const data = Float64Array.from({ length: n }, (_, i) => {
      const t = t0 + (i * 1000) / fs;
      return 500 * Math.exp(-0.5 * ((t - 0.25) / 0.05) ** 2) + 2 * rng.normal();
    });
    const set = new SweepSet({
      data,
      nSweeps: 1,
      nSamples: n,
      fs,
      t0Ms: t0,
      units: 'uV',
      conditions: [{ distanceMm: 20, temperatureC: 37 }],
    });
    const row = set.components({ preset: 'mammalian' }).rows.find((r) => r.class === 'A-alpha/beta')!;
    const expected = 0.25 - 0.05 * Math.sqrt(2 * Math.log(10)); // where 500 exp(-u^2/2) = 10% of 500
    const windowStart = latencyWindow(PRESETS.mammalian.classes[0].velocity, 20)[0]; // 20 mm / 120 m/s
    expect(windowStart).toBeGreaterThan(expected);
    expect(Math.abs((row.onset10_ms as number) - expected)).toBeLessThan(0.005);
    expect(row.onset_ms).toBe(row.onset10_ms);
    // half-rise (50%) and peak of the same Gaussian, analytic
    expect(Math.abs((row.halfrise_ms as number) - (0.25 - 0.05 * Math.sqrt(2 * Math.log(2))))).toBeLessThan(0.005);
    expect(Math.abs((row.peak_ms as number) - 0.25)).toBeLessThan(0.005);
  });
  it('noise level by MAD (1.4826 x MAD estimates the SD of Gaussian noise)', () => {
    const rng = new model.Rng(7);
    const x = Float64Array.from({ length: 20000 }, () => 3 * rng.normal());
    expect(noiseMad(x, 0, 19999)).toBeCloseTo(3, 1);
  });
});

describe('components and velocity against the forward model (known fibers)', () => {
  const nerve = model.rodentSciatic();
  const seed = 11;
  const truth = model.classTruth(nerve, model.drawFibers(nerve, seed), 37);
  const sweeps = [];
  for (const d of [20, 30, 40])
    for (let r = 0; r < 6; r++)
      sweeps.push({
        intensity: 50,
        distanceMm: d,
        temperatureC: 37,
        concentration: 0,
        jitterMs: 0.002,
        conditions: { preparation: 'T1', repeat: r },
      });
  // 50 kHz, realistic noise (5 uV SD against an A wave of about 2 mV)
  const set = model
    .simulateNerve({
      model: nerve,
      seed,
      grid: { fs: 50000, t0Ms: -2, nSamples: 5000 },
      sweeps,
      nuisance: { noiseUv: 5 },
    })
    .baseline();
  const table = set.components({ preset: 'mammalian' });
  const v = table.velocity();
  const rel = (a: number, b: number) => Math.abs(a - b) / b;
  // Truth: vCentroid = 1 / (amplitude-weighted mean of 1/v) over the simulated fibers, the
  // slope of the class wave's centre of mass against distance (exact for the summed model).
  it('regression of centroid latency on distance: within 3% for A, 5% for C', () => {
    const report: string[] = [];
    for (const [cls, tol] of [
      ['A-alpha/beta', 0.03],
      ['A-delta', 0.03],
      ['C', 0.05],
    ] as const) {
      const t = truth.find((c) => c.name === cls)!;
      const row = v.get('regression', 'centroid').find((r) => r.class === cls)!;
      const peak = v.get('regression', 'peak').find((r) => r.class === cls)!;
      report.push(
        `${cls}: ${row.velocity_m_s.toFixed(3)} m/s [${row.ci95_low_m_s.toFixed(2)}, ${row.ci95_high_m_s.toFixed(2)}] vs true ${t.vCentroid.toFixed(3)}; peak-based ${peak.velocity_m_s.toFixed(3)} vs modal ${t.vMode.toFixed(3)}`,
      );
      expect(rel(row.velocity_m_s, t.vCentroid)).toBeLessThan(tol);
      expect(row.ci95_low_m_s).toBeLessThan(row.velocity_m_s);
      expect(row.ci95_high_m_s).toBeGreaterThan(row.velocity_m_s);
    }
    console.log('regression on distance:', report.join('; '));
  });
  it('two-site velocity (centroid delay) within 3% (A) and 5% (C); cross-correlation within 10%', () => {
    for (const [cls, tol] of [
      ['A-alpha/beta', 0.03],
      ['A-delta', 0.03],
      ['C', 0.05],
    ] as const) {
      const t = truth.find((c) => c.name === cls)!;
      const rows = v.get('two-site', 'centroid').filter((r) => r.class === cls);
      // three distances: the two neighbouring pairs and the outermost pair (src/analysis/velocity.ts, cca765d)
      expect(rows.length).toBe(3);
      for (const r of rows) expect(rel(r.velocity_m_s, t.vCentroid)).toBeLessThan(tol);
      for (const r of v.get('two-site', 'xcorr').filter((q) => q.class === cls))
        expect(rel(r.velocity_m_s, t.vCentroid)).toBeLessThan(0.1);
    }
  });
  it('onset velocities lie between the modal and the fastest fibers', () => {
    for (const cls of ['A-alpha/beta', 'A-delta', 'C']) {
      const t = truth.find((c) => c.name === cls)!;
      const row = v.get('regression', 'onset').find((r) => r.class === cls)!;
      expect(row.velocity_m_s).toBeGreaterThan(t.vMode * 0.97);
      expect(row.velocity_m_s).toBeLessThan(t.vMax * 1.03);
    }
  });
  it('the utilisation time (intercept) is recovered from the regression', () => {
    // peak intercept = utilisation + the waveform's peak offset; onset intercept near the utilisation (0.05 ms)
    const row = v.get('regression', 'onset').find((r) => r.class === 'A-alpha/beta')!;
    expect(Math.abs((row.utilisation_ms as number) - 0.05)).toBeLessThan(0.1);
  });
  it('impossible geometry is an error that says what is wrong', () => {
    const swapped = set.create({
      conditions: set.conditions.map((c) => ({ ...c, distanceMm: 60 - (c.distanceMm as number) })),
    });
    // velocity now flags an impossible estimate in its row instead of throwing (issue 14, item 5; src/analysis/velocity.ts)
    let flagged: string[] = [];
    try {
      flagged = swapped
        .components()
        .velocity()
        .rows.filter((r) => r.method !== 'single-site' && r.status !== 'ok')
        .map((r) => String(r.reason));
    } catch (e) {
      flagged = [String(e)];
    }
    expect(flagged.join(' ')).toMatch(
      /arrive later at the farther site|does not increase with distance|outside any nerve fib(er|re)'s range|negative|later/,
    );
    const metres = set.create({
      conditions: set.conditions.map((c) => ({ ...c, distanceMm: (c.distanceMm as number) / 1000 })),
    });
    expect(() => metres.components()).toThrow(/implausible.*another unit/);
  });
  it('the table has units in column names and the conditions joined on', () => {
    const r = table.rows[0];
    expect(Object.keys(r)).toEqual(
      expect.arrayContaining([
        'amplitude_uV',
        'onset_ms',
        'peak_ms',
        'area_uV_ms',
        'half_width_ms',
        'preparation',
        'distance_mm',
      ]),
    );
    expect(table.frame().shape[0]).toBe(set.nSweeps * 3);
  });
});

describe('threshold for an intensity series', () => {
  it('is the lowest intensity where a class is detected, larger fibers first (forward model)', () => {
    const nerve = model.rodentSciatic();
    const I = [0.02, 0.05, 0.1, 0.2, 0.5, 1, 2, 5, 10];
    const sweeps = I.flatMap((i) =>
      [0, 1].map((r) => ({
        intensity: i,
        distanceMm: 30,
        temperatureC: 37,
        concentration: 0,
        conditions: { preparation: 'T', repeat: r },
      })),
    );
    const set = model.simulateNerve({
      model: nerve,
      seed: 5,
      grid: { fs: 50000, t0Ms: -2, nSamples: 4000 },
      sweeps,
      nuisance: { noiseUv: 3 },
    });
    const th = set.baseline().components().threshold();
    const get = (c: string) => th.find((r) => r.class === c)!.threshold as number;
    const truth = model.classTruth(nerve, model.drawFibers(nerve, 5), 37);
    expect(get('A-alpha/beta')).toBeLessThan(get('A-delta'));
    expect(get('A-delta')).toBeLessThan(get('C'));
    // the detected threshold is the first tested level at or above the lowest fiber threshold
    for (const t of truth) expect(th.find((r) => r.class === t.name)!.threshold).toBeGreaterThanOrEqual(t.minThreshold);
  });
});

describe('a peak on the boundary between two class windows (issue 14)', () => {
  // two classes whose velocity ranges touch at 10 m/s: at 10 mm their windows meet at 1.0 ms (no tails)
  const preset = [
    { name: 'fast', velocity: [10, 20] as [number, number] },
    { name: 'slow', velocity: [5, 10] as [number, number] },
  ];
  const make = (centre: number, sign: number) => {
    const fs = 50000,
      n = 1000,
      t0 = -2;
    const rng = new model.Rng(9);
    const data = Float64Array.from(
      { length: n },
      (_, i) => sign * 300 * Math.exp(-0.5 * ((t0 + (i * 1000) / fs - centre) / 0.08) ** 2) + 2 * rng.normal(),
    );
    return new SweepSet({ data, nSweeps: 1, nSamples: n, fs, t0Ms: t0, units: 'uV', conditions: [{ distanceMm: 10 }] });
  };
  it('belongs to exactly one class, negative-going or positive-going, measured at the boundary', () => {
    for (const sign of [1, -1]) {
      const rows = make(1.0, sign).components({ preset, tailFraction: 0, tailMs: 0, polarity: sign as 1 | -1 });
      const measured = rows.rows.filter((r) => r.status === 'measured');
      expect(measured.length).toBe(1);
      expect(Math.abs((measured[0].peak_ms as number) - 1.0)).toBeLessThan(0.01);
      const other = rows.rows.find((r) => r !== measured[0])!;
      expect(other.status).toBe('not resolved');
      expect(other.peak_ms).toBeNull();
    }
  });
});

describe('decomposition kernels', () => {
  it('nnlsGram (Lawson-Hanson on the normal equations) equals scipy.optimize.nnls (SciPy 1.17) on a random 12 x 6 problem', () => {
    // fixture nnls-scipy.json (its `source` says how it was made)
    const f = JSON.parse(readFileSync(join(__dirname, 'nnls-scipy.json'), 'utf8')) as {
      A: number[][];
      b: number[];
      x: number[];
    };
    const n = 6;
    const G = new Float64Array(n * n),
      c = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) for (let r = 0; r < 12; r++) G[i * n + j] += f.A[r][i] * f.A[r][j];
      for (let r = 0; r < 12; r++) c[i] += f.A[r][i] * f.b[r];
    }
    const x = nnlsGram(G, c, n, 0, new Float64Array(n));
    for (let i = 0; i < n; i++) expect(x[i]).toBeCloseTo(f.x[i], 9);
    expect(f.x.some((v) => v === 0)).toBe(true); // the constraint is active somewhere
  });
  it('artifactDecay recovers the time constant and amplitude of an exponential leaving the rail (analytic)', () => {
    const x = Float64Array.from({ length: 60 }, (_, i) => (i <= 10 ? -10000 : -7000 * Math.exp(-(i - 11) / 2.5)));
    const clip = clipEndMs(x, 0, 1, 0, 60);
    expect(clip).toBe(10);
    const d = artifactDecay(x, 10)!;
    expect(d.tauSamples).toBeCloseTo(2.5, 9);
    expect(d.a).toBeCloseTo(-7000, 6);
    expect(d.from).toBe(11);
  });
});
