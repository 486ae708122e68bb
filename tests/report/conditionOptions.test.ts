// A bad conditioning option in a manifest's analysis section is named by its key there ("analysis.filter: invalid
// cutoff ..."), so the user knows which of baseline, artifact, hum and filter to fix. The allowed ranges are the
// verbs' own (Nyquist: a cutoff must be under fs/2, sampling theorem); no numeric reference is involved otherwise.
import { describe, it, expect } from 'vitest';
import { SweepSet } from '../../src/sweeps/SweepSet';
import { condition } from '../../src/report/pipeline';
import { OptionError } from '../../src/errors';
import { Rng } from '../../src/model/random';

const r = new Rng(11);
const n = 500;
const set = new SweepSet({
  data: Float64Array.from({ length: 2 * n }, () => 5 * r.normal()),
  nSweeps: 2,
  nSamples: n,
  fs: 50000,
  t0Ms: -5,
  units: 'uV',
  conditions: [{ preparation: 'P' }, { preparation: 'P' }],
});
const thrown = (f: () => unknown): Error => {
  try {
    f();
  } catch (e) {
    return e as Error;
  }
  throw new Error('no error');
};

describe('condition(set, options) names the analysis key of a bad value', () => {
  it('baseline, artifact (one or a list), hum and filter', () => {
    const cases: [object, RegExp][] = [
      [{ baseline: { window: [-0.2, -4] } }, /^analysis\.baseline: invalid window: \[-0\.2, -4\]/],
      [{ filter: { btype: 'lowpass', cutoff: 100000, order: 4 } }, /^analysis\.filter: invalid cutoff: 100000 Hz/],
      [{ hum: { frequency: '50' } }, /^analysis\.hum: invalid frequency: "50"/],
      [{ artifact: { method: 'blank', window: [1, 0] } }, /^analysis\.artifact: /],
      [
        {
          artifact: [
            { method: 'blank', window: [0, 0.1] },
            { method: 'blank', window: [1, 0] },
          ],
        },
        /^analysis\.artifact\[1\]: /,
      ],
    ];
    for (const [o, want] of cases) {
      const e = thrown(() => condition(set, { baseline: { window: [-4, -0.2] }, ...o }));
      expect(e, JSON.stringify(o)).toBeInstanceOf(OptionError);
      expect(e.message, JSON.stringify(o)).toMatch(want);
    }
    // good options condition the set, and name nothing
    const ok = condition(set, {
      baseline: { window: [-4, -0.2] },
      filter: { btype: 'lowpass', cutoff: 5000, order: 4 },
    });
    expect(ok.history.map((h) => h.verb)).toEqual(['baseline', 'filter']);
  });
});
