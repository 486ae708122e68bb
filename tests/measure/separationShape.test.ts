/**
 * The shape of each class's velocity bump (issue 14): a class whose fibre diameters are normally distributed (a
 * normal bump in velocity, as for large myelinated fibres; velocity is proportional to diameter) has a heavier slow
 * tail than a log-normal bump of the same centre and SD, and where two classes overlap that tail decides which class
 * the overlapping fibres are given to. fitClassMixture also fits each bump's Box-Cox exponent (log-normal to normal)
 * and keeps that fit when the Bayesian information criterion prefers it. Here both fits place the slow class well
 * (its centre within 0.5%); the checks are that the exponents found are the generating ones and that log-normal
 * data keep log-normal bumps.
 * Data: two classes summed over a fine velocity grid into compound responses at two distances with one single-fibre
 * waveform (invented); the expected values are the generating parameters (analytic reference).
 */
import { describe, it, expect } from 'vitest';
import { fitSharedShape, fitClassMixture, valleyBin, boxCoxZ, type DecomposeGrid } from '../../src/measure/decompose';

const dt = 0.02,
  t0 = -0.5,
  n = Math.round((9 - t0) / dt);
/** single-fiber waveform: a gamma-shaped main phase (peak at 0.16 ms) and a small slow undershoot (invented) */
const s = (tau: number) =>
  tau <= 0 ? 0 : ((tau / 0.08) ** 2 * Math.exp(2 - tau / 0.08)) / 4 - 0.08 * (tau / 0.6) * Math.exp(1 - tau / 0.6);
/** weight per unit of ln v of each class at ln v = lv (each integrates to its size over ln v) */
type Density = (lv: number) => number;
const normalInV =
  (mean: number, sd: number, size: number): Density =>
  (lv) =>
    (size / (sd * Math.sqrt(2 * Math.PI))) * Math.exp(-0.5 * ((Math.exp(lv) - mean) / sd) ** 2) * Math.exp(lv);
const logNormal =
  (median: number, sd: number, size: number): Density =>
  (lv) =>
    (size / (sd * Math.sqrt(2 * Math.PI))) * Math.exp(-0.5 * ((lv - Math.log(median)) / sd) ** 2);

function cap(x: number, classes: Density[]): Float64Array {
  const y = new Float64Array(n);
  const nv = 600;
  for (let k = 0; k < nv; k++) {
    const lv = Math.log(3) + ((Math.log(200) - Math.log(3)) * k) / (nv - 1);
    let w = 0;
    for (const c of classes) w += c(lv);
    if (w < 1e-9) continue;
    const arr = x / Math.exp(lv);
    for (let i = 0; i < n; i++) y[i] += w * s(t0 + i * dt - arr);
  }
  return y;
}
const ranges: [number, number][] = [
  [25, 80],
  [7, 25],
];
const grid: DecomposeGrid = {
  dtMs: dt,
  t0Ms: t0,
  range: () => [Math.round((0.1 - t0) / dt), n - 1],
  uBounds: [1 / 160, 1 / 3.5],
  sSupportMs: [0.1, 3],
};

function gauss(seed: number): () => number {
  let st = seed;
  const u = () => (st = (st * 16807) % 2147483647) / 2147483647;
  return () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
}

/** the slower class's fitted centre (m/s) and share with free bump shapes and with log-normal bumps only */
interface Fitted {
  free: number | null;
  logNormal: number | null;
  shareFree: number | null;
  shareLogNormal: number | null;
  lambdaFast: number | null;
}
function slowCentres(size: number, fast: Density = normalInV(45, 7, 1)): Fitted & { lambdaSlow: number | null } {
  const classes = [fast, logNormal(14, 0.3, size)];
  const g = gauss(11);
  const traces = [15, 25].map((x) => {
    const y = cap(x, classes);
    let mx = 0;
    for (const v of y) mx = Math.max(mx, v);
    return { y: y.map((v) => v + 0.003 * mx * g()), distanceMm: x };
  });
  const shape = fitSharedShape(traces, grid, { iterations: 60 })!;
  const v = valleyBin(shape.W, shape.u, ranges[0], ranges[1])!;
  const bins: [number, number][] = [
    [0, v.bin - 1],
    [v.bin, shape.u.length - 1],
  ];
  const free = fitClassMixture(traces, grid, shape, bins, { zones: ranges });
  const ln = fitClassMixture(traces, grid, shape, bins, { zones: ranges, shapeFree: false });
  return {
    free: free ? Math.exp(free.centre[1]) : null,
    logNormal: ln ? Math.exp(ln.centre[1]) : null,
    shareFree: free ? free.share[1] : null,
    shareLogNormal: ln ? ln.share[1] : null,
    lambdaFast: free ? free.lambda[0] : null,
    lambdaSlow: free ? free.lambda[1] : null,
  };
}

describe('fitClassMixture: bump shapes between log-normal and normal in velocity', () => {
  it('boxCoxZ: lambda 0 is the log-normal distance, lambda 1 a normal one in velocity (SD in log units at the centre)', () => {
    // analytic: for lambda 1, z = (v / v0 - 1) / sd
    expect(boxCoxZ(Math.log(1.2), 0.1, 0)).toBeCloseTo(Math.log(1.2) / 0.1, 12);
    expect(boxCoxZ(Math.log(1.2), 0.1, 1)).toBeCloseTo(0.2 / 0.1, 12);
    expect(boxCoxZ(Math.log(0.8), 0.1, 1)).toBeCloseTo(-0.2 / 0.1, 12);
  });

  it('a normal fast class beside a log-normal slow class 0.3x its size: the fast bump found normal, the slow class centre within 3% and size within 10%', () => {
    // the mixture models the weight per slowness bin, f(ln v) v (see separationMixture.test.ts): for the log-normal
    // slow class (median 14 m/s, SD 0.3) its centre is exp(ln 14 + 0.3^2) = 15.32 m/s (analytic)
    const expected = Math.exp(Math.log(14) + 0.3 ** 2);
    const r = slowCentres(0.3);
    expect(r.free).not.toBeNull();
    expect(r.logNormal).not.toBeNull();
    console.log(
      `slow centre: free shapes ${r.free!.toFixed(2)} m/s, log-normal only ${r.logNormal!.toFixed(2)} m/s, ` +
        `expected ${expected.toFixed(2)} m/s; slow share ${r.shareFree!.toFixed(3)} / ${r.shareLogNormal!.toFixed(3)}, ` +
        `expected 0.3; fast class exponent ${r.lambdaFast!.toFixed(2)}`,
    );
    expect(Math.abs(r.free! / expected - 1)).toBeLessThan(0.03);
    // the share is the ratio of the classes' total weights: the generating sizes, 0.3 (analytic)
    expect(Math.abs(r.shareFree! / 0.3 - 1)).toBeLessThan(0.1);
    // the fast class's bump is found normal in velocity (generating exponent 1), the slow one log-normal (0)
    expect(r.lambdaFast!).toBeGreaterThan(0.7);
    expect(r.lambdaSlow!).toBeLessThan(0.3);
  });

  it('two log-normal classes: the information criterion keeps the log-normal bumps (every exponent 0)', () => {
    const r = slowCentres(0.3, logNormal(45, 0.15, 1));
    expect(r.lambdaFast).toBe(0);
    expect(r.lambdaSlow).toBe(0);
  });
});
