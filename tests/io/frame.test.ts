// toFrame (src/report/frame.ts): the DataFrame library is loaded with some of its dependencies
// deferred to their first use (mathjs, TensorFlow.js, xlsx, the HTTP clients); the DataFrame must
// be the one danfojs-node makes itself, and the functions that need a deferred module must work.
// (Here rather than in tests/report: frame.ts belongs to the loading layer's owner.)
import { describe, it, expect } from 'vitest';
import { createRequire } from 'node:module';
import { DEFERRED_DEPENDENCIES, danfo, toFrame } from '../../src/report/frame';

const require = createRequire(import.meta.url);
const loaded = (name: string) =>
  Object.keys(require.cache).some((k) => k.includes(`${'/'}node_modules/${name}/`) && !k.includes('danfojs-node/'));

describe('toFrame with the DataFrame library loaded lazily', () => {
  const rows = [
    { sweep: 0, peak: 1, label: 'a' },
    { sweep: 1, peak: 2, label: null },
    { sweep: 2, peak: 4, label: 'c' },
  ];

  it('loads danfojs-node without mathjs or xlsx, and returns the DataFrame danfojs-node builds itself', () => {
    const df = toFrame(rows);
    // nothing else in this file has loaded them, so a deferred module is absent until used
    expect(loaded('mathjs')).toBe(false);
    expect(loaded('xlsx')).toBe(false);
    expect(loaded('@tensorflow/tfjs-core')).toBe(false);
    const d = danfo();
    const ref = new d.DataFrame(
      { sweep: [0, 1, 2], peak: [1, 2, 4], label: ['a', null, 'c'] },
      { columns: ['sweep', 'peak', 'label'] },
    );
    expect(df).toBeInstanceOf(d.DataFrame);
    expect(df.columns).toEqual(ref.columns);
    expect(df.shape).toEqual([3, 3]);
    expect(df.values).toEqual(ref.values);
    expect(df.toString()).toBe(ref.toString());
    expect([...DEFERRED_DEPENDENCIES].sort()).toEqual([
      '@tensorflow/tfjs-node',
      'mathjs',
      'node-fetch',
      'request',
      'xlsx',
    ]);
  });

  it('loads mathjs at the first statistic that needs it: std and median as their definitions give', () => {
    const df = toFrame(rows);
    // sample standard deviation (n - 1) of 1, 2, 4: sqrt((16/9 + 1/9 + 25/9) / 2) = sqrt(7/3)
    // (definition, common practice, no source); median of 1, 2, 4 is 2
    expect(df['peak'].std()).toBeCloseTo(Math.sqrt(7 / 3), 14);
    expect(df['peak'].median()).toBe(2);
    expect(loaded('mathjs')).toBe(true);
    const { std } = require('mathjs') as { std: (x: number[]) => number };
    expect(df['peak'].std()).toBe(std([1, 2, 4]));
  });

  it('a tensor made by TensorFlow.js loaded elsewhere is still recognised as one, and tensors of a frame work', () => {
    // TensorFlow.js as danfojs-node names it (an alias of @tensorflow/tfjs in this project's overrides)
    const tf = require('@tensorflow/tfjs-node') as {
      tensor2d(v: number[][]): unknown;
    };
    const d = danfo();
    const df = new d.DataFrame(
      tf.tensor2d([
        [1, 2],
        [3, 4],
      ]) as never,
    );
    expect(df.shape).toEqual([2, 2]);
    expect(df.values).toEqual([
      [1, 2],
      [3, 4],
    ]);
    expect((df.add(1) as InstanceType<typeof d.DataFrame>).values).toEqual([
      [2, 3],
      [4, 5],
    ]);
    expect((toFrame(rows)['peak'].tensor as { arraySync(): number[] }).arraySync()).toEqual([1, 2, 4]);
  });

  it('an empty table keeps its columns', () => {
    const df = toFrame([]);
    expect(df.shape[0]).toBe(0);
  });
});
