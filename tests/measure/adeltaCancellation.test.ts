/**
 * componentCancellation (src/measure/decompose.ts): how much a decomposition's class components cancel each other.
 * Expected values: analytic cases, and the clean class-only components of the independent development set FNPG-N07
 * (/work/shared/devset, truth/clean_components_temperature_fast.csv, vendored in tests/fixtures/devset-measure),
 * monopolar at 15 and 25 mm and as one bipolar channel (15 mm minus 25 mm): their true split never cancels.
 */
import { describe, it, expect } from 'vitest';
import { componentCancellation, MAX_CANCELLATION, decomposeTrace, fitSharedShape } from '../../src/measure/decompose';
import { load } from './devsetFixture';

describe('componentCancellation(components, fitted)', () => {
  it('components of one sign only add: 1, however much they overlap', () => {
    const a = Float64Array.from({ length: 50 }, (_, i) => Math.exp(-0.5 * ((i - 20) / 4) ** 2));
    const b = Float64Array.from({ length: 50 }, (_, i) => 0.3 * Math.exp(-0.5 * ((i - 24) / 6) ** 2));
    expect(componentCancellation([a, b])).toBeCloseTo(1, 12);
  });
  it('analytic: (0, 2, 1) and (0, -1, 1): largest sum of magnitudes 3, largest magnitude of the sum 2', () => {
    expect(componentCancellation([Float64Array.of(0, 2, 1), Float64Array.of(0, -1, 1)])).toBeCloseTo(1.5, 12);
  });
  it('two large opposite components whose difference is small: their ratio (10 + 9) / 1 = 19', () => {
    expect(componentCancellation([Float64Array.of(10, 0), Float64Array.of(-9, 0)])).toBeCloseTo(19, 12);
  });
  it('samples left out of the fit (fitted 0) do not count; nothing modelled gives 1', () => {
    const a = Float64Array.of(5, 1),
      b = Float64Array.of(-5, 0);
    expect(componentCancellation([a, b], Uint8Array.of(0, 1))).toBeCloseTo(1, 12);
    expect(componentCancellation([new Float64Array(3)])).toBe(1);
  });
  it('the development set clean class-only components (A-alpha/beta, A-delta, C), monopolar and 15 - 25 mm: 1', () => {
    const { s, clean } = load('temperature_fast');
    const n = s.nSamples;
    const i0 = Math.ceil((0.2 - s.t0Ms) * (s.fs / 1000)); // after the stimulus (no component before it)
    const wave = (T: number, d: number, cls: string) => {
      const k = s.clean.findIndex((c) => c.temperature_C === T && c.distance_mm === d && c.class === cls);
      return Float64Array.from(clean.subarray(k * n + i0, (k + 1) * n));
    };
    const classes = ['A_alpha_beta', 'A_delta', 'C'];
    for (const T of [20, 25, 30, 37]) {
      for (const d of [15, 25]) {
        const r = componentCancellation(classes.map((c) => wave(T, d, c)));
        expect(r, `${T} C ${d} mm`).toBeLessThan(1.001);
      }
      const bip = classes.map((c) => {
        const a = wave(T, 15, c),
          b = wave(T, 25, c);
        return a.map((v, i) => v - b[i]);
      });
      const r = componentCancellation(bip);
      expect(r, `${T} C bipolar`).toBeLessThan(1.001);
      expect(r).toBeLessThan(MAX_CANCELLATION);
    }
  });
  it('decomposeTrace on two monophasic classes at 15 and 25 mm (shape fitted by fitSharedShape): about 1', () => {
    // synthetic, analytic: fibres at 40 and 15 m/s (weights 1 and 0.3) with one waveform, a Gaussian of SD 0.05 ms
    // arriving x / v after the stimulus; the components of the true split add, so the fitted split should too
    const dt = 0.02,
      n = 300;
    const wave = (x: number) =>
      Float64Array.from({ length: n }, (_, i) => {
        const t = i * dt;
        const g = (v: number) => Math.exp(-0.5 * ((t - x / v - 0.1) / 0.05) ** 2);
        return 1000 * g(40) + 300 * g(15);
      });
    const traces = [15, 25].map((x) => ({ y: wave(x), distanceMm: x }));
    const grid = {
      dtMs: dt,
      t0Ms: 0,
      range: () => [5, n - 1] as [number, number],
      uBounds: [1 / 80, 1 / 8] as [number, number],
      sSupportMs: [0.2, 0.4] as [number, number],
    };
    const shape = fitSharedShape(traces, grid, { iterations: 40 })!;
    expect(shape).not.toBeNull();
    // split between the two velocities (25 m/s)
    let cut = 0;
    while (cut < shape.u.length && shape.u[cut] < 1 / 25) cut++;
    for (const t of traces) {
      const d = decomposeTrace(t.y, t.distanceMm, shape, grid, [
        [0, cut - 1],
        [cut, shape.u.length - 1],
      ]);
      expect(d.cancellation, `${t.distanceMm} mm`).toBeLessThan(1.05);
    }
  });
});
