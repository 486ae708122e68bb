import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { butter, butterNormalized, iirnotch, sosGain, type BType } from '../../src/signal/butter';
import { sosfilt, sosfiltfilt, sosfiltZi } from '../../src/signal/sosfilt';

// Fixtures computed with SciPy 1.17 (scipy.signal.butter/sosfilt/sosfiltfilt/iirnotch)
// by tests/reference/make_filters.py; .ci/run checks they still match SciPy.
const ref = JSON.parse(readFileSync(join(__dirname, '..', 'reference', 'filters.json'), 'utf8'));

function expectRel(actual: ArrayLike<number>, expected: number[], rtol = 1e-9) {
  expect(actual.length).toBe(expected.length);
  const scale = Math.max(...expected.map(Math.abs));
  for (let i = 0; i < expected.length; i++) {
    const err = Math.abs(actual[i] - expected[i]);
    if (!(err <= rtol * Math.max(Math.abs(expected[i]), 1e-3 * scale))) {
      throw new Error(`element ${i}: ${actual[i]} vs ${expected[i]} (rel err ${err / Math.abs(expected[i])})`);
    }
  }
}

describe('butter(order, Wn, btype) against SciPy 1.17', () => {
  for (const c of ref.cases as {
    order: number;
    Wn: number[];
    btype: BType;
    sos: number[][];
    sosfiltfilt: number[];
    sosfilt: number[];
  }[]) {
    it(`butter(${c.order}, ${JSON.stringify(c.Wn)}, ${c.btype}) coefficients and outputs to 1e-9`, () => {
      const sos = butterNormalized(c.order, c.Wn, c.btype);
      expect(sos.length).toBe(c.sos.length);
      expectRel(sos.flat(), c.sos.flat(), 1e-9);
      expectRel(sosfilt(sos, ref.input), c.sosfilt);
      expectRel(sosfiltfilt(sos, ref.input), c.sosfiltfilt);
    });
  }
  it('sosfilt_zi of butter(4, 0.2)', () => {
    expectRel(sosfiltZi(butterNormalized(4, [0.2], 'lowpass')), ref['sosfilt_zi_butter4_0.2'].flat());
  });
  it('iirnotch(50 Hz, Q 30, fs 1000) coefficients and zero-phase output', () => {
    const sos = iirnotch(50, 30, 1000);
    expectRel(sos[0].slice(0, 3), ref.notch.b);
    expectRel(sos[0].slice(3), ref.notch.a);
    expectRel(sosfiltfilt(sos, ref.input), ref.notch.filtfilt);
  });
});

describe('butter fixed values from ../shared/REFERENCES.md (SciPy, checkable by hand)', () => {
  it('butter(2, 0.5): b = [1,2,1]/(2+sqrt 2), a = [1, 0, (2-sqrt 2)/(2+sqrt 2)]', () => {
    const [s] = butterNormalized(2, [0.5], 'lowpass');
    const r2 = Math.SQRT2;
    expectRel(
      s,
      [1 / (2 + r2), 2 / (2 + r2), 1 / (2 + r2), 1, 0, (2 - r2) / (2 + r2)].map((v) => v),
      1e-12,
    );
  });
  it('butter(4, 0.2) transfer function b, a (product of sections)', () => {
    const sos = butterNormalized(4, [0.2], 'lowpass');
    const mulPoly = (p: number[], q: number[]) => {
      const r = new Array(p.length + q.length - 1).fill(0);
      p.forEach((a, i) => q.forEach((b, j) => (r[i + j] += a * b)));
      return r;
    };
    const b = sos.reduce((acc, s) => mulPoly(acc, s.slice(0, 3)), [1]);
    const a = sos.reduce((acc, s) => mulPoly(acc, s.slice(3)), [1]);
    expectRel(
      b,
      [0.00482434335771623, 0.01929737343086491, 0.02894606014629737, 0.01929737343086491, 0.00482434335771623],
      1e-12,
    );
    expectRel(a, [1, -2.369513007182038, 2.313988414415881, -1.054665405878568, 0.18737949236818502], 1e-12);
  });
});

describe('filter invariants', () => {
  it('DC gain of a low-pass is 1 and gain at the cutoff is 1/sqrt(2) (-3 dB)', () => {
    for (const order of [1, 2, 4, 7, 10]) {
      const sos = butter({ order, cutoff: 1000, btype: 'lowpass', fs: 20000 });
      expect(sosGain(sos, 0, 20000)).toBeCloseTo(1, 12);
      expect(sosGain(sos, 1000, 20000)).toBeCloseTo(Math.SQRT1_2, 10);
    }
  });
  it('zero-phase filtering keeps an impulse symmetric', () => {
    const x = new Float64Array(401);
    x[200] = 1;
    const y = sosfiltfilt(butter({ order: 4, cutoff: 2000, btype: 'lowpass', fs: 50000 }), x);
    for (let k = 1; k < 150; k++) expect(Math.abs(y[200 - k] - y[200 + k])).toBeLessThan(1e-12);
    let peak = 0;
    for (let i = 1; i < 401; i++) if (y[i] > y[peak]) peak = i;
    expect(peak).toBe(200);
  });
  it('does not change its input', () => {
    const x = Object.freeze(Array.from({ length: 100 }, (_, i) => Math.sin(i)));
    const copy = [...x];
    sosfiltfilt(butter({ order: 2, cutoff: 100, btype: 'highpass', fs: 1000 }), x);
    expect([...x]).toEqual(copy);
  });
});

describe('butter option checks', () => {
  it('names the option, value and allowed range', () => {
    expect(() => butter({ order: 4, cutoff: 2500, btype: 'lowpass', fs: 4000 })).toThrow(
      'invalid cutoff: 2500 Hz; must be 0 < cutoff < fs/2 (fs=4000 Hz)',
    );
    expect(() => butter({ order: 11, cutoff: 100, btype: 'lowpass', fs: 4000 })).toThrow(/invalid order: 11/);
    expect(() => butter({ order: 2, cutoff: [300, 100], btype: 'bandpass', fs: 4000 })).toThrow(/low must be < high/);
    expect(() => butter({ order: 2, cutoff: 100, btype: 'bandpass', fs: 4000 })).toThrow(/needs \[low, high\]/);
    expect(() => sosfiltfilt(butter({ order: 4, cutoff: 100, btype: 'lowpass', fs: 4000 }), [1, 2, 3])).toThrow(
      /too short/,
    );
  });
});

describe('sosfiltfiltPair (two sweeps interleaved)', () => {
  it('gives exactly the result of two sosfiltfilt calls', async () => {
    const { sosfiltfiltPair, filtfiltWork } = await import('../../src/signal/sosfilt');
    const sos = butter({ order: 4, cutoff: 700, btype: 'lowpass', fs: 10000 });
    const a = Float64Array.from({ length: 300 }, (_, i) => Math.sin(i / 7) + (i % 5));
    const b = Float64Array.from({ length: 300 }, (_, i) => Math.cos(i / 3) - (i % 3));
    const oa = new Float64Array(300),
      ob = new Float64Array(300);
    sosfiltfiltPair(sos, a, b, oa, ob, filtfiltWork(sos, 300), filtfiltWork(sos, 300));
    expect([...oa]).toEqual([...sosfiltfilt(sos, a)]);
    expect([...ob]).toEqual([...sosfiltfilt(sos, b)]);
  });
});

describe('sosfiltfiltPairExt (signals placed in the work buffers)', () => {
  it('equals two sosfiltfilt calls bit for bit, down to the shortest signal and padlen 0', async () => {
    const { sosfiltfiltPairExt, filtfiltWork, defaultPadlen } = await import('../../src/signal/sosfilt');
    for (const [btype, cutoff] of [
      ['lowpass', 700],
      ['highpass', 50],
    ] as const) {
      const sos = butter({ order: 4, cutoff, btype, fs: 10000 });
      for (const padlen of [0, 3, defaultPadlen(sos)]) {
        for (const n of [padlen + 1, padlen + 2, 257]) {
          const a = Float64Array.from({ length: n }, (_, i) => Math.sin(i / 7) + (i % 5) - 2);
          const b = Float64Array.from({ length: n }, (_, i) => Math.cos(i / 3) * 1e-3 - (i % 3));
          const wa = filtfiltWork(sos, n, padlen),
            wb = filtfiltWork(sos, n, padlen);
          wa.ext.set(a, padlen);
          wb.ext.set(b, padlen);
          const oa = new Float64Array(n),
            ob = new Float64Array(n);
          sosfiltfiltPairExt(sos, oa, ob, wa, wb, n, padlen);
          const ra = sosfiltfilt(sos, a, { padlen }),
            rb = sosfiltfilt(sos, b, { padlen });
          expect(oa.every((v, i) => Object.is(v, ra[i]))).toBe(true);
          expect(ob.every((v, i) => Object.is(v, rb[i]))).toBe(true);
        }
      }
    }
  });
});
