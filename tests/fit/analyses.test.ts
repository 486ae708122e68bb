import { describe, it, expect } from 'vitest';
import {
  fitCurve,
  logLogistic4,
  activationEnergyFromQ10,
  q10FromActivationEnergy,
  q10FromRates,
  fitTemperature,
  pairedCompare,
  model,
  doseResponse,
  fitHill,
} from '../../src';
import { Rng } from '../../src/model/random';

describe('Hill / four-parameter log-logistic against the ryegrass dataset', () => {
  // Inderjit, Streibig & Olofsdotter 2002, Physiol Plant 114:422 (dataset in R's drc package, V);
  // fit values computed with SciPy and matching drc's published output as remembered (C; M).
  const conc = [
    0, 0, 0, 0, 0, 0, 0.94, 0.94, 0.94, 1.88, 1.88, 1.88, 3.75, 3.75, 3.75, 7.5, 7.5, 7.5, 15, 15, 15, 30, 30, 30,
  ];
  const len = [
    7.58, 8.0, 8.3285714, 7.25, 7.375, 7.9625, 8.3555556, 6.9142857, 7.75, 6.8714286, 6.45, 5.9222222, 1.925, 2.8857143,
    4.2333333, 1.1875, 0.8571429, 1.0571429, 0.6875, 0.525, 0.825, 0.25, 0.22, 0.44,
  ];
  it('ED50 3.058 mM, slope 2.982, lower 0.4814, upper 7.793 (4 significant digits) and the Wald CI 2.670-3.446', () => {
    const f = fitCurve({ model: logLogistic4, x: conc, y: len, p0: [1, 0, 8, Math.log(2)] });
    const [b, c, d, lne] = f.params;
    const e = Math.exp(lne);
    expect(Number(b.toPrecision(4))).toBe(2.982);
    expect(Number(c.toPrecision(4))).toBe(0.4814);
    expect(Number(d.toPrecision(4))).toBe(7.793);
    expect(Number(e.toPrecision(4))).toBe(3.058);
    expect(f.residualSS).toBeCloseTo(5.40021, 4);
    expect(f.sigma).toBeCloseTo(0.51963, 4);
    // SE of e by the delta method from SE(ln e): e x SE(ln e) = 0.1858 (C)
    const seE = e * f.standardErrors[3];
    expect(seE).toBeCloseTo(0.1858, 3);
    expect(f.standardErrors[0]).toBeCloseTo(0.4584, 3);
    expect(f.standardErrors[1]).toBeCloseTo(0.2095, 3);
    expect(f.standardErrors[2]).toBeCloseTo(0.1897, 3);
    const t = 2.0859634472658644; // t(0.975, 20), scipy.stats.t.ppf
    expect(e - t * seE).toBeCloseTo(2.67, 3);
    expect(e + t * seE).toBeCloseTo(3.446, 3);
  });
});

describe('confidence-interval coverage (seeded simulation)', () => {
  it('95% CIs of the Hill IC50 cover the truth in 90-99% of 400 noisy replicates', () => {
    const rng = new Rng(2024);
    const truth = [1.3, 0.05, 1, Math.log(20)];
    const x = [1, 3, 10, 30, 100, 300, 1, 3, 10, 30, 100, 300];
    let cover = 0;
    for (let r = 0; r < 400; r++) {
      const y = x.map((c) => logLogistic4(c, truth) + 0.04 * rng.normal());
      const f = fitCurve({
        model: logLogistic4,
        x,
        y,
        p0: [1, 0, 1, Math.log(30)],
        fixed: [false, false, true, false],
      });
      if (f.ci[3][0] <= truth[3] && truth[3] <= f.ci[3][1]) cover++;
    }
    console.log(`IC50 95% CI coverage: ${cover}/400`);
    expect(cover / 400).toBeGreaterThanOrEqual(0.9);
    expect(cover / 400).toBeLessThanOrEqual(0.99);
  });
});

describe('Q10 and Arrhenius conversions (../shared/REFERENCES.md, C)', () => {
  it('Q10 = 3 over 6.3 -> 16.3 C is Ea = 73.89 kJ/mol; Q10 = 1.4 over 25 -> 35 C is 25.70 kJ/mol', () => {
    expect(activationEnergyFromQ10(3, 6.3, 16.3) / 1000).toBeCloseTo(73.89, 2);
    expect(activationEnergyFromQ10(1.4, 25, 35) / 1000).toBeCloseTo(25.7, 2);
    expect(q10FromActivationEnergy(73890, 6.3, 16.3)).toBeCloseTo(3, 3);
    expect(q10FromRates(10, 20, 30, 30)).toBeCloseTo(3, 12);
  });
  it('fitTemperature recovers a known Q10 from noiseless rates, with preparation-specific levels', () => {
    const pts = [];
    for (const [prep, base] of [
      ['a', 10],
      ['b', 14],
      ['c', 8],
    ] as const)
      for (const T of [25, 29, 33, 37])
        pts.push({
          preparation: prep,
          temperatureC: T,
          value: base * Math.pow(1.45, (T - 37) / 10) * (1 + 0.001 * Math.sin(T)),
        });
    const f = fitTemperature(pts);
    expect(f.q10).toBeCloseTo(1.45, 2);
    expect(f.q10Ci95[0]).toBeLessThan(1.45);
    expect(f.q10Ci95[1]).toBeGreaterThan(1.45);
  });
});

describe('paired comparison', () => {
  it('paired t test and Wilcoxon signed rank against scipy.stats', () => {
    // scipy.stats.ttest_rel(after, before) -> t = 3.7962830118264823, p = 0.012676602478014503 (SciPy 1.17, run here)
    // scipy.stats.wilcoxon(after - before) -> statistic 0 (smaller rank sum), p = 0.03125 (exact)
    const r = pairedCompare([1, 2, 3, 4, 5, 6], [1.5, 2.9, 3.2, 4.8, 5.1, 7.0]);
    expect(r.t).toBeCloseTo(3.7962830118264823, 10);
    expect(r.pT).toBeCloseTo(0.012676602478014503, 9);
    expect(r.pWilcoxon).toBeCloseTo(0.03125, 6);
  });
});

describe('dose-response on the forward model (known IC50 per class)', () => {
  it('recovers each class IC50 within a factor of 1.5 and ranks C as more sensitive than A', () => {
    const nerve = model.rodentSciatic();
    const concs = [0, 1, 3, 10, 30, 100, 300];
    const rows: Record<string, string | number | boolean | null>[] = [];
    const preps = ['P1', 'P2', 'P3', 'P4'];
    preps.forEach((prep, pi) => {
      const sweeps = concs.flatMap((c) =>
        [0, 1, 2].map((r) => ({
          intensity: 50,
          distanceMm: 25,
          temperatureC: 37,
          concentration: c,
          conditions: { preparation: prep, repeat: r, concentrationUnit: 'uM' },
        })),
      );
      const set = model
        .simulateNerve({
          model: nerve,
          seed: 100 + pi,
          grid: { fs: 50000, t0Ms: -2, nSamples: 3000 },
          sweeps,
          nuisance: { noiseUv: 4 },
        })
        .baseline();
      rows.push(...(set.components().rows as never[]));
    });
    const dr = doseResponse(rows, 'uV');
    for (const cls of ['A-alpha/beta', 'A-delta', 'C']) {
      const s = dr.summary.find((r) => r.class === cls)!;
      const truth = nerve.populations.find((p) => p.name === cls)!.ic50;
      expect((s.ic50 as number) / truth).toBeGreaterThan(1 / 1.5);
      expect((s.ic50 as number) / truth).toBeLessThan(1.5);
      expect(s.ic50_ci95_low as number).toBeLessThan(s.ic50 as number);
    }
    const cmp = dr.comparisons.find((r) => r.classA === 'A-alpha/beta' && r.classB === 'C')!;
    expect(cmp.p as number).toBeLessThan(0.05);
    console.log(String(dr));
  });
  it('flags an IC50 outside the tested range', () => {
    const x = [1, 3, 10, 30];
    const f = fitHill(
      x,
      x.map((c) => 1 / (1 + c / 1000)),
      null,
    );
    expect(Math.exp(f.params[3])).toBeGreaterThan(30);
  });
});

describe('dose-response with run-down corrected by time-matched vehicle controls', () => {
  // Synthetic rows (self-consistency; the correction method is common practice, no source):
  // the response declines by 0.3% per minute in every preparation; drug preparations also
  // follow a Hill law with IC50 10 and slope 1.
  const k = -0.003 / 60; // per s
  const concs = [0, 1, 3, 10, 30, 100];
  const rows: Record<string, string | number>[] = [];
  for (const prep of ['D1', 'D2', 'D3', 'V1', 'V2']) {
    const vehicle = prep.startsWith('V');
    concs.forEach((c, step) => {
      for (let j = 0; j < 5; j++) {
        const t = step * 600 + j * 60;
        const drift = 1 + k * (t - 180);
        const hill = vehicle || c === 0 ? 1 : 1 / (1 + c / 10);
        rows.push({
          preparation: prep,
          class: 'C',
          concentration: vehicle ? 0 : c,
          epoch: vehicle ? (step === 0 ? 'baseline' : 'vehicle') : step === 0 ? 'baseline' : 'drug',
          acquiredS: t,
          sweep: step * 5 + j,
          amplitude_uV: 100 * hill * drift,
        });
      }
    });
  }
  it('recovers the IC50 with the vehicle correction; without it the IC50 is biased low', () => {
    const corrected = doseResponse(rows, 'uV', { runDown: 'vehicle' });
    const plain = doseResponse(
      rows.filter((r) => !String(r.preparation).startsWith('V')),
      'uV',
    );
    const c = corrected.summary[0];
    expect(Math.abs((c.ic50 as number) / 10 - 1)).toBeLessThan(0.01);
    expect(c.rundown_per_min as number).toBeCloseTo(-0.003, 6);
    expect(c.rundown_controls).toBe(2);
    expect(plain.summary[0].ic50 as number).toBeLessThan(9.5);
    expect(corrected.methods()).toMatch(/time-matched vehicle controls/);
  });
  it('says what is missing: no vehicle sweeps, no acquisition times', () => {
    expect(() =>
      doseResponse(
        rows.filter((r) => !String(r.preparation).startsWith('V')),
        'uV',
        { runDown: 'vehicle' },
      ),
    ).toThrow(/needs time-matched vehicle sweeps \(epoch "vehicle"/);
    expect(() =>
      doseResponse(
        rows.map(({ acquiredS, ...r }) => (r.preparation === 'V1' ? r : { ...r, acquiredS })),
        'uV',
        { runDown: 'vehicle' },
      ),
    ).toThrow(/preparation V1, class C: runDown "vehicle" needs the condition "acquiredS"/);
  });
});

// ---- fits use only what was measured; no interval the data cannot support (issue 12, issue 14) ----
// Synthetic rows with values chosen here (self-consistency and invariants; common practice, no source).
import {
  recruitment,
  temperatureAnalysis,
  singleSiteVelocity,
  regressionVelocity,
  twoSiteVelocity,
  SweepSet,
  PRESETS,
  AnalysisError,
  averageRepeats,
  condition,
  runPipeline,
  computedCount,
  markRecommended,
  methodsText,
} from '../../src';

describe('fitTemperature: a status, and no interval the data cannot support', () => {
  const T = [20, 25, 30, 37];
  it('flat data: Q10 1 with no interval, and the status says why', () => {
    const f = fitTemperature(T.map((t) => ({ temperatureC: t, value: 5 })));
    expect(f.q10).toBeCloseTo(1, 12);
    expect(f.q10Ci95).toBeNull();
    expect(f.activationEnergyCi95KJ).toBeNull();
    expect(f.status).toMatch(/no temperature dependence/);
  });
  it('noise-free data: the exact Q10 with no (zero-width) interval', () => {
    const f = fitTemperature(T.map((t) => ({ temperatureC: t, value: 2 * Math.pow(1.4, t / 10) })));
    expect(f.q10).toBeCloseTo(1.4, 10);
    expect(f.q10Ci95).toBeNull();
    expect(f.status).toMatch(/exactly on the fitted line/);
  });
  it('noisy data: an interval of positive width around the estimate, status ok', () => {
    const noise = [0.02, -0.015, 0.01, -0.02];
    const f = fitTemperature(
      T.map((t, i) => ({ temperatureC: t, value: 2 * Math.pow(1.4, t / 10) * Math.exp(noise[i]) })),
    );
    expect(f.status).toBe('ok');
    expect(f.q10Ci95![0]).toBeLessThan(f.q10);
    expect(f.q10Ci95![1]).toBeGreaterThan(f.q10);
  });
  it('two temperatures: a point estimate, no interval (no residual degree of freedom); non-positive values left out and counted', () => {
    const f = fitTemperature([
      { temperatureC: 20, value: 1 },
      { temperatureC: 30, value: 1.4 },
      { temperatureC: 25, value: 0 },
    ]);
    expect(f.q10).toBeCloseTo(1.4, 12);
    expect(f.q10Ci95).toBeNull();
    expect(f.excluded).toBe(1);
    expect(f.status).toMatch(/no residual degree of freedom.*1 point\(s\) left out/);
  });
  it('temperatureAnalysis leaves undetected rows out and refuses with "not detected" when fewer than two temperatures remain', () => {
    const rows = T.flatMap((t) =>
      [0, 1].map((k) => ({
        class: 'X',
        preparation: 'P',
        temperatureC: t,
        v: 10 * Math.pow(1.4, t / 10) * (1 + 0.01 * k),
        detected: true,
      })),
    );
    rows.push(...T.map((t) => ({ class: 'Y', preparation: 'P', temperatureC: t, v: 3, detected: t === 20 })));
    const res = temperatureAnalysis(rows, { measure: 'v' });
    const x = res.rows.find((r) => r.class === 'X')!,
      y = res.rows.find((r) => r.class === 'Y')!;
    expect(x.q10 as number).toBeCloseTo(1.4, 2);
    expect(y.status).toBe('not detected');
    expect(y.q10).toBeNull();
    expect(y.excluded_not_measured).toBe(3);
  });
  it("temperatureAnalysis keeps a velocity whose status is 'imprecise' (a wide interval, not a wrong value)", () => {
    // Q10 1.4 by construction (analytic): v = 10 x 1.4^(T/10); two of the temperatures are flagged imprecise
    const rows = T.map((t, i) => ({
      class: 'X',
      preparation: 'P',
      temperatureC: t,
      v: 10 * Math.pow(1.4, t / 10),
      detected: true,
      status: i < 2 ? 'imprecise' : 'ok',
    }));
    const x = temperatureAnalysis(rows, { measure: 'v' }).rows[0];
    expect(x.q10 as number).toBeCloseTo(1.4, 6);
    expect(x.excluded_not_measured).toBe(0);
    const implausible = rows.map((r, i) => ({ ...r, status: i < 2 ? 'implausible' : 'ok' }));
    expect(temperatureAnalysis(implausible, { measure: 'v' }).rows[0].excluded_not_measured).toBe(2);
  });
});

describe('dose-response uses only what was measured, per site', () => {
  const concs = [0, 1, 3, 10, 30, 100, 300, 1000];
  const hill = (c: number, ic: number, n: number) => 1 / (1 + Math.pow(c / ic, n));
  const rowsFor = (cls: string, mm: number, ic: number, detect: (c: number) => boolean) =>
    concs.flatMap((c) =>
      [0, 1].map((k) => ({
        preparation: 'P1',
        class: cls,
        distanceMm: mm,
        concentration: c,
        repeat: k,
        amplitude_uV: 100 * hill(c, ic, 1) * (1 + 0.01 * (k ? 1 : -1)),
        detected: detect(c),
      })),
    );
  it('one curve per site unless sites are pooled', () => {
    const rows = [...rowsFor('A', 15, 30, () => true), ...rowsFor('A', 25, 60, () => true)];
    const dr = doseResponse(rows, 'uV');
    const s15 = dr.summary.find((r) => r.distanceMm === 15)!,
      s25 = dr.summary.find((r) => r.distanceMm === 25)!;
    expect(s15.ic50 as number).toBeCloseTo(30, 0);
    expect(s25.ic50 as number).toBeCloseTo(60, 0);
    const pooled = doseResponse(rows, 'uV', { poolSites: true });
    expect(pooled.summary.length).toBe(1);
    expect(pooled.summary[0].distanceMm).toBeUndefined();
  });
  it('undetected sweeps are left out and counted; the bottom is fixed at 0 when the top concentrations were not measured', () => {
    const dr = doseResponse(
      rowsFor('A', 15, 30, (c) => c < 300),
      'uV',
    );
    const s = dr.summary[0];
    expect(s.excluded_not_measured).toBe(4);
    expect(s.points).toBe(5);
    expect(String(s.status)).toMatch(/4 sweep\(s\) not measured.*bottom fixed at 0/);
    expect(s.ic50 as number).toBeCloseTo(30, 0);
  });
  it('a class not detected gives a row "not detected" with no numbers, not a fit of noise', () => {
    const dr = doseResponse([...rowsFor('A', 15, 30, () => true), ...rowsFor('B', 15, 30, () => false)], 'uV');
    const b = dr.summary.find((r) => r.class === 'B')!;
    expect(b.status).toBe('not detected');
    expect(b.ic50).toBeNull();
    expect(String(b.reason)).toMatch(/baseline was not measured/);
    expect(dr.summary.find((r) => r.class === 'A')!.ic50 as number).toBeCloseTo(30, 0);
  });
  it('only zero or negative concentrations: an error that says why', () => {
    const zero = rowsFor('A', 15, 30, () => true).map((r) => ({ ...r, concentration: 0 }));
    expect(() => doseResponse(zero, 'uV')).toThrow(AnalysisError);
    expect(() => doseResponse(zero, 'uV')).toThrow(/all 16 rows have concentration 0/);
    const neg = rowsFor('A', 15, 30, () => true).map((r) => ({ ...r, concentration: -r.concentration }));
    expect(() => doseResponse(neg, 'uV')).toThrow(/negative concentration/);
  });
});

describe('recruitment uses only what was measured', () => {
  const I = [0, 0.05, 0.1, 0.2, 0.4, 0.8, 1.6, 3.2];
  const boltz = (i: number) => 100 / (1 + Math.exp(-(Math.log10(i) - Math.log10(0.4)) / 0.1));
  const rows = (cls: string, detect: (i: number) => boolean) =>
    I.flatMap((i) =>
      [0, 1].map((k) => ({
        preparation: 'P',
        distanceMm: 15,
        class: cls,
        intensity: i,
        amplitude_uV: i > 0 ? boltz(i) * (1 + 0.01 * (k ? 1 : -1)) : 0.5,
        detected: detect(i),
      })),
    );
  it('intensities <= 0 and undetected sweeps are left out and counted, not dropped silently', () => {
    const r = recruitment(
      rows('A', (i) => i >= 0.1),
      'uV',
    ).rows[0];
    expect(r.excluded_nonpositive_intensity).toBe(2);
    expect(r.excluded_not_measured).toBe(2);
    // informational notes are the row's reason; the row itself is ok (common practice, no source)
    expect(r.status).toBe('ok');
    expect(String(r.reason)).toMatch(/2 sweep\(s\) with intensity <= 0 left out/);
    expect(String(r.reason)).toMatch(/floor fixed at 0/);
    expect(r.i50 as number).toBeCloseTo(0.4, 2);
  });
  it('a class never detected is "not detected" (as the thresholds say), with no numbers', () => {
    const r = recruitment([...rows('A', () => true), ...rows('B', () => false)], 'uV').rows.find(
      (q) => q.class === 'B',
    )!;
    expect(r.status).toBe('not detected');
    expect(r.i50).toBeNull();
    expect(r.threshold).toBeNull();
  });
  it('a half-maximum outside the tested intensities is a flagged row, not an extrapolated number', () => {
    // the foot of a Boltzmann curve whose I50 (20 mA) is far above the highest tested 3.2 mA (analytic case):
    // the data only rise, so the fit's I50 is an extrapolation and must not be printed as a measurement
    const foot = (i: number) => 100 / (1 + Math.exp(-(Math.log10(i) - Math.log10(20)) / 0.3));
    const rs = I.filter((i) => i > 0).flatMap((i) =>
      [0, 1].map((k) => ({
        preparation: 'P',
        distanceMm: 15,
        class: 'A',
        intensity: i,
        amplitude_uV: foot(i) * (1 + 0.01 * (k ? 1 : -1)),
        detected: true,
      })),
    );
    const r = recruitment(rs, 'uV').rows[0];
    expect(r.status).toBe('not identifiable');
    expect(r.i50).toBeNull();
    expect(r.maximum).toBeNull();
    expect(String(r.reason)).toMatch(/outside the tested intensities 0.05-3.2/);
  });
});

describe('one bad velocity never discards good ones', () => {
  const resolved = {
    preset: PRESETS.mammalian,
    classes: PRESETS.mammalian.classes,
    q10: 1.4,
    utilisationMs: 0,
  } as never;
  // two sites 20 and 30 mm at 37 C; A-alpha/beta at 80 m/s, C at 1 m/s (latency = u + d / v)
  const row = (cls: string, mm: number, k: number, lat: number) => ({
    sweep: (mm === 20 ? 0 : 4) + k,
    class: cls,
    detected: true,
    polarity: 1,
    preparation: 'P',
    temperatureC: 37,
    temperature_C: 37,
    distanceMm: mm,
    distance_mm: mm,
    repeat: k,
    peak_ms: lat + 0.001 * k,
  });
  const good = (u: number) =>
    [20, 30].flatMap((mm) =>
      [0, 1, 2, 3].flatMap((k) => [row('A-alpha/beta', mm, k, u + mm / 80), row('C', mm, k, u + mm / 1)]),
    );
  it('a velocity outside every fibre range is a rejected row; the other class keeps its number', () => {
    const rows = good(0.2).map((r) => (r.class === 'A-alpha/beta' ? { ...r, peak_ms: 1 + r.distance_mm / 2000 } : r));
    const v = regressionVelocity(rows as never, ['preparation', 'temperatureC'], resolved);
    const a = v.find((r) => r.class === 'A-alpha/beta' && r.basis === 'peak')!,
      c = v.find((r) => r.class === 'C' && r.basis === 'peak')!;
    expect(a.status).toBe('implausible');
    expect(a.velocity_m_s).toBeNull();
    expect(a.rejected_velocity_m_s as number).toBeCloseTo(2000, -1);
    expect(a.reason).toMatch(/outside any nerve fibre's range/);
    expect(c.status).toBe('ok');
    expect(c.velocity_m_s as number).toBeCloseTo(1, 2);
  });
  it('a utilisation time far below zero is rejected; a velocity outside its class range is kept and flagged', () => {
    const rows = good(0.2).map((r) => (r.class === 'C' ? { ...r, peak_ms: r.peak_ms - 12 } : r));
    const v = regressionVelocity(rows as never, ['preparation'], resolved);
    const c = v.find((r) => r.class === 'C')!;
    expect(c.status).toBe('implausible');
    expect(c.reason).toMatch(/utilisation time\) is -11\.\d+ ms/);
    const slow = good(0.2).map((r) =>
      r.class === 'A-alpha/beta' ? { ...r, peak_ms: 0.2 + r.distance_mm / 38 + 0.001 * (r.repeat as number) } : r,
    );
    const a = regressionVelocity(slow as never, ['preparation'], resolved).find((r) => r.class === 'A-alpha/beta')!;
    expect(a.status).toBe('outside class range');
    expect(a.velocity_m_s as number).toBeCloseTo(38, 0);
    expect(a.reason).toMatch(/outside the A-alpha\/beta range/);
  });
  it('two-site: a delay of one sample is not a velocity (left out, counted); pairs follow the conditions, not the order', () => {
    const fs = 50000;
    const rows = good(0.2).map((r) =>
      r.class === 'A-alpha/beta' && r.distance_mm === 30
        ? { ...r, peak_ms: 0.2 + 20 / 80 + 0.001 * (r.repeat as number) + 1000 / fs }
        : r,
    );
    const conditions = [20, 30].flatMap((mm) =>
      [0, 1, 2, 3].map((k) => ({ preparation: 'P', temperatureC: 37, distanceMm: mm, repeat: k, file: `site${mm}` })),
    );
    const set = new SweepSet({
      data: new Float64Array(8 * 10),
      nSweeps: 8,
      nSamples: 10,
      fs,
      t0Ms: 0,
      units: 'uV',
      conditions,
    });
    // the far site's rows in reverse order: pairing by the repeat condition must still match them
    const v = twoSiteVelocity(
      set,
      [...rows.filter((r) => r.distance_mm === 20), ...rows.filter((r) => r.distance_mm === 30).reverse()] as never,
      [],
      resolved,
      ['preparation', 'temperatureC'],
    );
    const a = v.find((r) => r.class === 'A-alpha/beta' && r.basis === 'peak')!,
      c = v.find((r) => r.class === 'C' && r.basis === 'peak')!;
    expect(a.status).toBe('implausible');
    expect(a.velocity_m_s).toBeNull();
    expect(a.excluded_pairs).toBe(4);
    expect(a.reason).toMatch(/shorter than 2 sample intervals/);
    expect(c.status).toBe('ok');
    expect(c.velocity_m_s as number).toBeCloseTo(1, 6);
    expect(c.n).toBe(4);
  });
  it('two-site xcorr of a decomposed class correlates its modelled component, not the residual of its neighbour', () => {
    // C at 1 m/s (delay 10 ms between 20 and 30 mm) as a Gaussian wave; the recording-minus-neighbours component also
    // holds a neighbour's misfit that does not move between sites (a wave 5x larger at the same time in both
    // windows), which pulls the correlation of the residual windows towards zero delay; the model alone has the
    // class's delay (analytic: 10 mm / 10 ms = 1 m/s)
    const fs = 1000,
      n = 80;
    const conditions = [20, 30].flatMap((mm) =>
      [0, 1, 2, 3].map((k) => ({ preparation: 'P', temperatureC: 37, distanceMm: mm, repeat: k })),
    );
    const set = new SweepSet({
      data: new Float64Array(8 * n),
      nSweeps: 8,
      nSamples: n,
      fs,
      t0Ms: 0,
      units: 'uV',
      conditions,
    });
    const wave = (c: number) => Float64Array.from({ length: n }, (_, i) => Math.exp(-0.5 * ((i - c) / 3) ** 2));
    const rows = good(0).filter((r) => r.class === 'C');
    const measures: unknown[][] = [];
    for (const r of rows) {
      const model = wave(r.distance_mm === 20 ? 30 : 40);
      const misfit = wave(20);
      const component = model.map((v, i) => v + 5 * misfit[i]);
      const m = { window: [0, n - 1], component, model };
      measures[r.sweep] = [undefined, undefined, m];
    }
    const pick = (ms: unknown[][]) =>
      twoSiteVelocity(set, rows as never, ms as never, resolved, ['preparation']).find((q) => q.basis === 'xcorr')!;
    expect(pick(measures).velocity_m_s as number).toBeCloseTo(1, 6);
    // without the model (a class measured in its window) the recorded component is correlated, as before
    const plain = measures.map((q) => [undefined, undefined, { ...(q[2] as object), model: undefined }]);
    expect(Math.abs((pick(plain).velocity_m_s as number) - 1)).toBeGreaterThan(0.05);
  });
  it('single site: every row names its latency definition', () => {
    const v = singleSiteVelocity(good(0) as never, ['preparation'], resolved);
    expect(v.every((r) => r.definition === 'peak (parabolic sub-sample)' && r.latency_column === 'peak_ms')).toBe(true);
    expect(v.find((r) => r.class === 'C')!.velocity_m_s as number).toBeCloseTo(1, 2);
  });
});

describe('pipeline: averaging of repeats and several artifact steps', () => {
  // invariants of averaging and step order (common practice, no source)
  const mk = (conds: Record<string, string | number>[]) => {
    const n = 200;
    const data = new Float64Array(conds.length * n);
    conds.forEach((c, s) => {
      for (let i = 0; i < n; i++) data[s * n + i] = (c.repeat as number) * 2 + (i === 150 ? 10 : 0);
    });
    return new SweepSet({
      data,
      nSweeps: conds.length,
      nSamples: n,
      fs: 10000,
      t0Ms: -5,
      units: 'uV',
      conditions: conds,
    });
  };
  it('averages the repeats of each condition, keeps the shared conditions, and leaves sets without repeats alone', () => {
    const set = mk(
      [0, 1, 2, 3].flatMap((k) => [
        { preparation: 'P', intensity: 1, repeat: k, fileSweep: k },
        { preparation: 'P', intensity: 2, repeat: k, fileSweep: 4 + k },
      ]),
    );
    const a = averageRepeats(set);
    expect(a.nSweeps).toBe(2);
    expect(a.conditions.map((c) => c.intensity)).toEqual([1, 2]);
    expect(a.conditions[0].count).toBe(4);
    expect(a.sweep(0)[0]).toBeCloseTo(3, 12); // mean of 0, 2, 4, 6
    expect(a.history[a.history.length - 1].verb).toBe('averageRepeats');
    const once = mk([
      { preparation: 'P', intensity: 1, repeat: 0 },
      { preparation: 'P', intensity: 2, repeat: 0 },
    ]);
    expect(averageRepeats(once)).toBe(once);
  });
  it('applies several artifact steps in order, and names a bad one', () => {
    const set = mk([{ preparation: 'P', repeat: 0 }]);
    const c = condition(set, {
      baseline: false,
      artifact: [
        { method: 'blank', window: [0, 0.5] },
        { method: 'blank', window: [9, 10] },
      ],
    });
    expect(c.history.filter((h) => h.verb === 'removeArtifact').length).toBe(2);
    expect(c.sweep(0)[150]).toBe(0); // 10 ms -> index 150, blanked by the second step
    expect(() => condition(set, { artifact: [{ method: 'blank' }, 3 as never] })).toThrow(/invalid artifact\[1\]/);
  });
});

describe('dose-response: a wave far from the baseline latency is not the class', () => {
  it('a sweep whose peak moved by more than half the baseline latency is left out and counted', () => {
    const concs = [0, 1, 3, 10, 30, 100, 300, 1000];
    const rows = concs.map((c) => ({
      preparation: 'P',
      class: 'C',
      distanceMm: 15,
      concentration: c,
      detected: true,
      amplitude_uV: c === 1000 ? 30 : 100 / (1 + c / 30),
      peak_ms: c === 1000 ? 8 : 19.3,
    }));
    const s = doseResponse(rows, 'uV').summary[0];
    expect(s.excluded_latency_shift).toBe(1);
    expect(s.ic50 as number).toBeCloseTo(30, 0);
    const kept = doseResponse(rows, 'uV', { maxLatencyShift: null }).summary[0];
    expect(kept.excluded_latency_shift).toBe(0);
    expect(Math.abs((kept.ic50 as number) - 30)).toBeGreaterThan(1);
  });
});

describe('runPipeline: one bad estimate never discards good ones (forward model, invariants)', () => {
  // two sites only 0.5 mm apart: the A-alpha/beta delay (~6 us) is under one sample at 50 kHz and
  // cannot be a velocity, while C (~0.5 ms) is well resolved; the pipeline must keep C and flag A
  it('flags the unresolved fast class with a reason, keeps the slow class, and counts what was computed', () => {
    const nerve = model.rodentSciatic();
    const sweeps = [20, 20.5].flatMap((d) =>
      [0, 1, 2].map((k) => ({
        intensity: 50,
        distanceMm: d,
        temperatureC: 37,
        concentration: 0,
        conditions: { preparation: 'P1', repeat: k },
      })),
    );
    const set = model.simulateNerve({
      model: nerve,
      seed: 7,
      grid: { fs: 50000, t0Ms: -2, nSamples: 3000 },
      sweeps,
      nuisance: { noiseUv: 2 },
    });
    const r = runPipeline(set, { averageRepeats: false });
    const two = r.velocity!.rows.filter((q) => q.method === 'two-site' && q.basis === 'peak');
    const a = two.find((q) => q.class === 'A-alpha/beta')!,
      c = two.find((q) => q.class === 'C')!;
    expect(a.velocity_m_s).toBeNull();
    expect(a.status).toBe('implausible');
    expect(String(a.reason)).toMatch(/shorter than 2 sample intervals|delay not positive/);
    expect(c.velocity_m_s as number).toBeGreaterThan(0.3);
    expect(c.velocity_m_s as number).toBeLessThan(3);
    expect(
      r.flags.some((f) => f.analysis === 'velocity' && f.class === 'A-alpha/beta' && f.severity === 'rejected'),
    ).toBe(true);
    expect(computedCount({ velocity: r.velocity!.rows as never })).toBeGreaterThan(0);
  });
});

describe('three recording sites', () => {
  it('two-site rows for neighbouring sites and the outermost pair; only the outermost is recommended', () => {
    const resolved = {
      preset: PRESETS.mammalian,
      classes: PRESETS.mammalian.classes,
      q10: 1.4,
      utilisationMs: 0,
    } as never;
    const dists = [10, 20, 30];
    const rows = dists.flatMap((mm, i) =>
      [0, 1].map((k) => ({
        sweep: 2 * i + k,
        class: 'C',
        detected: true,
        polarity: 1,
        preparation: 'P',
        temperatureC: 37,
        temperature_C: 37,
        distanceMm: mm,
        distance_mm: mm,
        repeat: k,
        centroid_ms: 0.3 + mm / 1.2 + 0.01 * k,
      })),
    );
    const conditions = rows.map((r) => ({
      preparation: 'P',
      temperatureC: 37,
      distanceMm: r.distance_mm,
      repeat: r.repeat,
    }));
    const set = new SweepSet({
      data: new Float64Array(6 * 10),
      nSweeps: 6,
      nSamples: 10,
      fs: 20000,
      t0Ms: 0,
      units: 'uV',
      conditions,
    });
    const v = markRecommended(
      twoSiteVelocity(set, rows as never, [], resolved, ['preparation']).filter((r) => r.basis === 'centroid'),
      PRESETS.mammalian.classes,
    );
    expect(v.map((r) => `${r.near_mm}-${r.far_mm}`).sort()).toEqual(['10-20', '10-30', '20-30']);
    for (const r of v) expect(r.velocity_m_s as number).toBeCloseTo(1.2, 6);
    expect(v.filter((r) => r.recommended).length).toBe(0); // C's recommended estimator is the regression of centroid latency
    const reg = markRecommended(
      regressionVelocity(rows as never, ['preparation'], resolved),
      PRESETS.mammalian.classes,
    ).find((r) => r.basis === 'centroid')!;
    expect(reg.recommended).toBe(true);
    expect(reg.velocity_m_s as number).toBeCloseTo(1.2, 6);
    const xa = markRecommended(
      v.map((r) => ({ ...r, class: 'A-delta', basis: 'xcorr' as const })),
      PRESETS.mammalian.classes,
    );
    expect(xa.filter((r) => r.recommended).map((r) => `${r.near_mm}-${r.far_mm}`)).toEqual(['10-30']);
  });
});

describe('methods text', () => {
  it('names each latency definition, the main phase per class, the recommended estimators and the flags policy', () => {
    const t = methodsText([
      {
        verb: 'components',
        version: '',
        options: {
          classes: [{ name: 'A', velocity: [10, 20] }],
          presetSource: 's',
          q10: 1.4,
          refTemperatureC: 37,
          utilisationMs: 0,
          tailFraction: 0.5,
          tailMs: 0.5,
          noiseWindow: [-2, -0.1],
          k: 4,
          onsetFraction: 0.1,
          centroidFraction: 0.1,
          separation: 'auto',
          polarities: { A: -1 },
          polaritySource: { A: 'option' },
        },
      },
      { verb: 'averageRepeats', version: '', options: { method: 'mean', sweeps: 8, groups: 2 } },
      {
        verb: 'velocity',
        version: '',
        options: {
          recommended: {
            fastest: { method: 'regression', basis: 'peak' },
            unmyelinated: { method: 'regression', basis: 'centroid' },
            other: { method: 'two-site', basis: 'xcorr' },
          },
        },
      },
    ]);
    for (const re of [
      /10% of its own peak/,
      /half-rise/,
      /peak latency/,
      /centroid latency/,
      /A negative \(set by the user\)/,
      /averaged \(mean\) before measuring \(8 sweeps into 2\)/,
      /fastest class, the regression of peak latency on distance/,
      /unmyelinated classes, the regression of centroid latency/,
      /cross-correlation of its own component/,
      /not reported as velocities but flagged with a reason/,
      /shorter than 2 sample intervals/,
    ])
      expect(t).toMatch(re);
  });
});
