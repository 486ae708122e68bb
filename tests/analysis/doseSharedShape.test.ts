import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { sharedShapeScores } from '../../src/fit/models';
import { Rng } from '../../src/model/random';

// Reference: numpy.linalg.svd of the traces after their offset and slope are projected out
// (tests/analysis/doseSharedShape.make.py, NumPy 2.4).
const ref = JSON.parse(readFileSync(join(__dirname, 'doseSharedShape.fixture.json'), 'utf8')) as {
  traces: number[][];
  u: number[];
  scores: number[];
  explained: number;
};

describe('sharedShapeScores: rank-one amplitudes of traces sharing one waveform', () => {
  it('equals the leading singular pair from NumPy (scores to 1e-9 relative, explained energy)', () => {
    const ones = ref.u.map(() => 1);
    const f = sharedShapeScores(ref.traces, [ones, ref.u], [0])!;
    expect(f.converged).toBe(true);
    f.scores.forEach((s, i) => expect(Math.abs(s - ref.scores[i])).toBeLessThan(1e-9 * Math.abs(ref.scores[0])));
    expect(f.referenceScore).toBeCloseTo(ref.scores[0], 9);
    expect(f.explained).toBeCloseTo(ref.explained, 9);
    // the shape is orthogonal to the nuisance terms and of unit norm
    const dot = (a: ArrayLike<number>, b: ArrayLike<number>) => Array.from(a).reduce((q, v, j) => q + v * b[j], 0);
    expect(Math.abs(dot(f.shape, ones))).toBeLessThan(1e-9);
    expect(Math.abs(dot(f.shape, ref.u))).toBeLessThan(1e-9);
    expect(dot(f.shape, f.shape)).toBeCloseTo(1, 12);
  });

  it('sign follows the reference; refuses empty, unequal or out-of-range input', () => {
    const ones = ref.u.map(() => 1);
    // every trace negated: the same scores (the sign is the reference's)
    const neg = sharedShapeScores(
      ref.traces.map((y) => y.map((v) => -v)),
      [ones, ref.u],
      [0],
    )!;
    neg.scores.forEach((s, i) => expect(s).toBeCloseTo(ref.scores[i], 9));
    // one trace of the other sign scores negative
    const one = sharedShapeScores(
      ref.traces.map((y, i) => (i === 3 ? y.map((v) => -v) : y)),
      [ones, ref.u],
      [0],
    )!;
    expect(one.scores[3]).toBeCloseTo(-ref.scores[3], 9);
    expect(sharedShapeScores([], [], [0])).toBeNull();
    expect(sharedShapeScores([[1, 2], [1]], [], [0])).toBeNull();
    expect(sharedShapeScores(ref.traces, [], [99])).toBeNull();
    expect(sharedShapeScores([[0, 0, 0]], [], [0])).toBeNull();
  });

  it('ratios to the reference are unbiased where a projection on the noisy reference trace shrinks them', () => {
    // simulated: one bump, Hill amplitudes (IC50 40, slope 1.6), white noise with |noise|^2 = 0.25 |signal|^2 in
    // one trace (a small response averaged over few sweeps); 400 replicates
    const m = 200;
    const shape = Float64Array.from({ length: m }, (_, j) => Math.exp(-0.5 * ((j - 90) / 25) ** 2));
    const conc = [0, 3, 8, 21.6, 57.9, 155, 417];
    const amp = conc.map((c) => 1 / (1 + (c / 40) ** 1.6));
    const energy = shape.reduce((q, v) => q + v * v, 0);
    const sigma = Math.sqrt((0.25 * energy) / m);
    const rng = new Rng(7);
    const K = 400;
    const mean1 = conc.map(() => 0),
      meanRef = conc.map(() => 0);
    for (let k = 0; k < K; k++) {
      const Y = amp.map((a) => Float64Array.from(shape, (v) => a * v + sigma * rng.normal()));
      const f = sharedShapeScores(Y, [new Float64Array(m).fill(1)], [0])!;
      f.scores.forEach((s, i) => (mean1[i] += s / f.referenceScore / K));
      // the single-reference projection: <y_c, y_0> / <y_0, y_0> (offset removed)
      const c0 = Y[0].reduce((q, v) => q + v, 0) / m;
      const r0 = Y[0].map((v) => v - c0);
      const n0 = r0.reduce((q, v) => q + v * v, 0);
      Y.forEach((y, i) => (meanRef[i] += r0.reduce((q, v, j) => q + v * y[j], 0) / n0 / K));
    }
    for (let i = 1; i < conc.length; i++) {
      // rank one: within 0.015 of the true ratio (SE of the mean about 0.004)
      expect(Math.abs(mean1[i] - amp[i])).toBeLessThan(0.015);
    }
    // the projection on the reference trace shrinks every ratio by about 1 / 1.25 (errors in the regressor)
    expect(meanRef[1] / amp[1]).toBeLessThan(0.85);
    expect(meanRef[3] / amp[3]).toBeLessThan(0.85);
  });
});
