/**
 * decomposeTrace (src/measure/decompose.ts): the ridge towards the group's velocity distribution keeps its shape, not
 * its size. Analytic cases on synthetic traces (two fibre groups at 40 and 15 m/s sharing one Gaussian waveform of SD
 * 0.05 ms, recorded at 15 and 25 mm): a sweep with no response gives no component; a sweep at half the group's size
 * gives half of it.
 */
import { describe, it, expect } from 'vitest';
import { decomposeTrace, fitSharedShape } from '../../src/measure/decompose';

const dt = 0.02,
  n = 300;
const wave = (x: number, scale = 1) =>
  Float64Array.from({ length: n }, (_, i) => {
    const t = i * dt;
    const g = (v: number) => Math.exp(-0.5 * ((t - x / v - 0.1) / 0.05) ** 2);
    return scale * (1000 * g(40) + 300 * g(15));
  });
const grid = {
  dtMs: dt,
  t0Ms: 0,
  range: () => [5, n - 1] as [number, number],
  uBounds: [1 / 80, 1 / 8] as [number, number],
  sSupportMs: [0.2, 0.4] as [number, number],
};

describe('decomposeTrace(y, x, shape, grid, bins): the group prior scaled to the trace', () => {
  const shape = fitSharedShape(
    [15, 25].map((x) => ({ y: wave(x), distanceMm: x })),
    grid,
    { iterations: 40 },
  )!;
  let cut = 0;
  while (cut < shape.u.length && shape.u[cut] < 1 / 25) cut++;
  const bins: [number, number][] = [
    [0, cut - 1],
    [cut, shape.u.length - 1],
  ];
  const peak = (c: Float64Array) => Math.max(...Array.from(c, Math.abs));

  it('a sweep with no response (all zeros) gives zero components, not the group mean response', () => {
    const d = decomposeTrace(new Float64Array(n), 15, shape, grid, bins);
    for (const c of d.components) expect(peak(c)).toBeLessThan(1e-9);
  });
  it('a sweep at 0.5 x the group response gives about 0.5 x its components (within 2%)', () => {
    const full = decomposeTrace(wave(15), 15, shape, grid, bins);
    const half = decomposeTrace(wave(15, 0.5), 15, shape, grid, bins);
    full.components.forEach((c, j) => {
      // analytic: the model is linear in W, so half the data gives half the weights when the prior scales with them
      expect(peak(half.components[j]) / peak(c)).toBeGreaterThan(0.49);
      expect(peak(half.components[j]) / peak(c)).toBeLessThan(0.51);
    });
  });
});
