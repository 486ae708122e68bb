/**
 * The verb contract (issue 13): a verb is a function of the samples and the time base that returns new samples or
 * a pending correction plus its step; SweepSet alone builds the new set. Invariants (common practice, no source):
 * the verb works on a plain object that is not a SweepSet, never changes its input, and the SweepSet method, the
 * public function and SweepSet.create of the verb's output give the same numbers bit for bit.
 */
import { describe, it, expect } from 'vitest';
import { SweepSet, baseline, filter, resample, removeArtifact } from '../../src';
import { baselineSamples } from '../../src/verbs/baseline';
import { filterSamples } from '../../src/verbs/filter';
import { resampleSamples } from '../../src/verbs/resample';
import { removeArtifactSamples } from '../../src/verbs/artifact';
import type { VerbInput } from '../../src/verbs/types';

const fs = 20000;
const nSweeps = 3;
const nSamples = 400;
const t0Ms = -5;

/** Sweeps with an offset, a slow drift and a 1 kHz wave (invented test signal). */
function samples(): Float64Array {
  const x = new Float64Array(nSweeps * nSamples);
  for (let s = 0; s < nSweeps; s++)
    for (let i = 0; i < nSamples; i++)
      x[s * nSamples + i] = 3 + s + 0.01 * i + Math.sin((2 * Math.PI * 1000 * i) / fs) * (s + 1);
  return x;
}

/** A verb input that is a plain object, not a SweepSet. */
function plainInput(data: Float64Array): VerbInput {
  const conditions = Array.from({ length: nSweeps }, (_, s) => ({ intensity: s }));
  return {
    nSweeps,
    nSamples,
    fs,
    t0Ms,
    conditions,
    extras: {},
    durationMs: (nSamples * 1000) / fs,
    data,
    pending: null,
    sweep: (i) => data.subarray(i * nSamples, (i + 1) * nSamples),
    timeAt: (i) => t0Ms + (i * 1000) / fs,
    time: () => Float64Array.from({ length: nSamples }, (_, i) => t0Ms + (i * 1000) / fs),
    column: (k) => conditions.map((c) => (k in c ? (c as Record<string, number>)[k] : null)),
  };
}

const setOf = (data: Float64Array) =>
  new SweepSet({
    data,
    nSweeps,
    nSamples,
    fs,
    t0Ms,
    units: 'uV',
    conditions: Array.from({ length: nSweeps }, (_, s) => ({ intensity: s })),
  });

describe('baselineSamples(input, options)', () => {
  it('returns the unchanged samples with a pending line correction and the full step', () => {
    const x = samples();
    const copy = Float64Array.from(x);
    const out = baselineSamples(plainInput(x), { window: [-4, -1] });
    expect(out).not.toBeInstanceOf(SweepSet);
    expect(x).toEqual(copy);
    const data = out.data as { base: Float64Array; correction: { line: boolean; level: Float64Array } };
    expect(data.base).toBe(x);
    expect(data.correction.line).toBe(true);
    expect(out.step).toEqual({ verb: 'baseline', options: { window: [-4, -1], method: 'mean', lateWindow: null } });
    // the level of each sweep is the mean of its window (samples 20..80 at 20 kHz from -5 ms)
    for (let s = 0; s < nSweeps; s++) {
      let m = 0;
      for (let i = 20; i <= 80; i++) m += x[s * nSamples + i];
      expect(data.correction.level[s]).toBeCloseTo(m / 61, 12);
    }
  });

  it('SweepSet.baseline, baseline(set) and set.create(baselineSamples(...)) agree bit for bit', () => {
    const set = setOf(samples());
    const a = set.baseline({ window: [-4, -1] }).data;
    const b = baseline(set, { window: [-4, -1] }).data;
    const c = set.create(baselineSamples(plainInput(samples()), { window: [-4, -1] })).data;
    expect(Array.from(b)).toEqual(Array.from(a));
    expect(Array.from(c)).toEqual(Array.from(a));
  });
});

describe('filterSamples, resampleSamples and removeArtifactSamples on a plain input', () => {
  it('give what the SweepSet methods and the public functions give', () => {
    const set = setOf(samples());
    const f = filterSamples(plainInput(samples()), { btype: 'lowpass', cutoff: 2000 });
    expect(Array.from(f.data as Float64Array)).toEqual(Array.from(set.filter({ btype: 'lowpass', cutoff: 2000 }).data));
    expect(Array.from(filter(set, { btype: 'lowpass', cutoff: 2000 }).data)).toEqual(
      Array.from(f.data as Float64Array),
    );
    const r = resampleSamples(plainInput(samples()), { fs: 10000 });
    expect(r.fs).toBe(10000);
    expect(Array.from(r.data as Float64Array)).toEqual(Array.from(resample(set, { fs: 10000 }).data));
    const blank = removeArtifactSamples(plainInput(samples()), { method: 'blank', window: [0, 0.3] });
    expect(Array.from(set.create(blank).data)).toEqual(
      Array.from(removeArtifact(set, { method: 'blank', window: [0, 0.3] }).data),
    );
  });

  it('resampling to the same rate returns only the step, so the set keeps its samples', () => {
    const out = resampleSamples(plainInput(samples()), { fs });
    expect(out.data).toBeUndefined();
    const set = setOf(samples());
    expect(set.resample({ fs }).data).toBe(set.data);
  });
});
