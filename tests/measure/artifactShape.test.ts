/**
 * The stimulus artifact in src/measure/components.ts (issue 14): rail detection without bit-equal samples
 * (clipEndMs), the artifact's shape after the rail (fitArtifactShape, one or two exponentials shared by the sweeps of
 * a preparation, each scaled on its own), the polarity decision on the largest responses, and a class seen at one
 * site only. References: the development set's artifact model as its README states it (/work/shared/devset/README.md:
 * +200 mV/mA during the 0.1 ms pulse, then -122 mV/mA exp(-t/40 us), scaled x0.6 at 25 mm, rail +/-10 mV), analytic
 * rail exit times from it, and SciPy 1.17 least_squares on the same model (artifact_shape_scipy.py ->
 * artifact-shape-scipy.json).
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { SweepSet, model } from '../../src';
import { clipEndMs, fitArtifactShape, artifactScale } from '../../src/measure/components';

const RAIL = 10; // mV
/** the development set's artifact (its README), mV, at t ms after the stimulus onset, intensity mA */
const artifact = (t: number, mA: number) =>
  t < 0 ? 0 : t < 0.1 ? 200 * mA : -122 * mA * Math.exp(-(t - 0.1) / 0.04) + 0.05 * mA * Math.exp(-(t - 0.1) / 1.5);
const clip = (v: number) => Math.max(-RAIL, Math.min(RAIL, v));

describe('clipEndMs: rail detection without bit-equal samples', () => {
  // the artifact leaves the -10 mV rail where 122 I exp(-(t - 0.1)/0.04) = 10: t = 0.1 + 0.04 ln(12.2 I) (analytic)
  const exitMs = 0.1 + 0.04 * Math.log(12.2);
  for (const fs of [16000, 40000, 50000, 100000]) {
    it(`finds the end of clipping at ${fs / 1000} kHz with noise and hum added after the amplifier`, () => {
      const dt = 1000 / fs,
        t0 = -2,
        n = Math.round(20 / dt);
      const rng = new model.Rng(11);
      const x = Float64Array.from({ length: n }, (_, i) => {
        const t = t0 + i * dt;
        // 15 uV white noise and a 15 uV 50 Hz hum after clipping (as a filter or an ADC after the rail would add)
        return clip(artifact(t, 1)) + 0.015 * rng.normal() + 0.015 * Math.sin((2 * Math.PI * 50 * t) / 1000 + 1);
      });
      const got = clipEndMs(x, t0, dt, 0, 20);
      // the last sample on the rail is the last at or before the analytic exit (within one sample: noise)
      const lastOnRail = t0 + Math.floor((exitMs - t0) / dt + 1e-9) * dt;
      expect(got).not.toBeNull();
      expect(Math.abs(got! - lastOnRail)).toBeLessThanOrEqual(dt + 1e-9);
    });
  }
  it('finds a bit-equal rail exactly, also with the rails of the whole recording given', () => {
    const x = Float64Array.from({ length: 60 }, (_, i) => (i <= 10 ? -10000 : -7000 * Math.exp(-(i - 11) / 2.5)));
    expect(clipEndMs(x, 0, 1, 0, 60)).toBe(10);
    expect(clipEndMs(x, 0, 1, 0, 60, { rail: [-10000, 10000] })).toBe(10);
    // a sweep whose extreme is far (more than 5%) from the recording's rail does not reach it
    expect(clipEndMs(x, 0, 1, 0, 60, { rail: [-20000, 20000] })).toBeNull();
  });
  it('takes no smooth peak, no floor of a one-signed wave and no plateau shorter than minRunMs for a rail', () => {
    const rng = new model.Rng(4);
    const dt = 0.01;
    // a sharp CAP-like peak (3 mV, sigma 0.05 ms) at 100 kHz with 15 uV noise: the sweep's maximum, not a rail
    const peak = Float64Array.from({ length: 2000 }, (_, i) => 3 * Math.exp(-0.5 * ((i * dt - 5) / 0.05) ** 2));
    expect(
      clipEndMs(
        peak.map((v) => v + 0.015 * rng.normal()),
        0,
        dt,
        0,
        20,
      ),
    ).toBeNull();
    // a slow positive wave: its minimum is the noise floor, not a rail
    const wave = Float64Array.from({ length: 2000 }, (_, i) => 0.04 * Math.exp(-0.5 * ((i * dt - 10) / 2) ** 2));
    expect(
      clipEndMs(
        wave.map((v) => v + 0.001 * rng.normal()),
        0,
        dt,
        0,
        20,
      ),
    ).toBeNull();
    // a flat top of 3 samples (0.03 ms at 100 kHz): clipping only when minRunMs allows 0.03 ms
    const flat = Float64Array.from(
      { length: 200 },
      (_, i) =>
        (i >= 50 && i <= 52 ? 10 : i > 52 ? 5 * Math.exp(-(i - 53) / 5) : 0) +
        (i >= 50 && i <= 52 ? 0 : 0.01 * rng.normal()),
    );
    expect(clipEndMs(flat, 0, dt, 0, 2)).toBeNull();
    expect(clipEndMs(flat, 0, dt, 0, 2, { minRunMs: 0.03 })).toBeCloseTo(0.52, 12);
  });
});

describe('fitArtifactShape: the decay after the rail, shared by the sweeps of a preparation', () => {
  it('equals SciPy least_squares on four noisy stretches of one two-exponential shape', () => {
    const f = JSON.parse(readFileSync(join(__dirname, 'artifact-shape-scipy.json'), 'utf8')) as {
      ref: number;
      stretches: { from: number; y: number[] }[];
      tau1: number;
      tau2: number;
      rho: number;
      scales: number[];
      rss: number;
    };
    const traces = f.stretches.map((s) => {
      const x = new Float64Array(s.from + s.y.length + 5);
      s.y.forEach((v, k) => (x[s.from + k] = v));
      return { x, from: s.from, to: s.from + s.y.length - 1 };
    });
    const shape = fitArtifactShape(traces)!;
    expect(shape.rho).not.toBe(0); // two exponentials chosen by BIC
    // the reference time differs from SciPy's only in the scales' units: compare shape parameters and fitted values
    expect(shape.tau1).toBeCloseTo(f.tau1, 2);
    expect(Math.abs(shape.tau2 / f.tau2 - 1)).toBeLessThan(0.01);
    expect(Math.abs(shape.rss / f.rss - 1)).toBeLessThan(1e-3);
    traces.forEach((q, k) => {
      const g = artifactScale(q.x, shape, q.from, q.to);
      const at = (i: number) =>
        Math.exp(-(i - shape.ref) / shape.tau1) + shape.rho * Math.exp(-(i - shape.ref) / shape.tau2);
      const sci = (i: number) =>
        f.scales[k] * (Math.exp(-(i - f.ref) / f.tau1) + f.rho * Math.exp(-(i - f.ref) / f.tau2));
      // the fitted artifact, extrapolated 30 samples past the stretch, agrees with SciPy's within 0.2% of its size
      for (const i of [q.from, q.to, q.to + 30])
        expect(Math.abs(g * at(i) - sci(i))).toBeLessThan(2e-3 * Math.abs(sci(q.from)));
    });
  });
  it('keeps one exponential for a single-exponential decay (analytic: tau 2.5 samples)', () => {
    const traces = [-7000, -4000, -9000].map((a, k) => {
      const from = 10 + k;
      const x = Float64Array.from({ length: 40 }, (_, i) => (i < from ? 0 : a * Math.exp(-(i - from) / 2.5)));
      return { x, from, to: from + 6 };
    });
    const shape = fitArtifactShape(traces)!;
    expect(shape.rho).toBe(0);
    expect(shape.tau1).toBeCloseTo(2.5, 4);
  });
  it('returns null with fewer than three artifact-only samples', () => {
    const x = Float64Array.from({ length: 20 }, (_, i) => Math.exp(-i));
    expect(fitArtifactShape([{ x, from: 5, to: 6 }])).toBeNull();
  });
});

/** two sites (15 and 25 mm) of one preparation, sweeps in mV; each sweep's samples from f(t ms, site mm, sweep) */
function twoSites(
  fs: number,
  t0: number,
  ms: number,
  conds: Record<string, number | string>[],
  f: (t: number, mm: number, c: Record<string, number | string>) => number,
): SweepSet {
  const n = Math.round((ms * fs) / 1000);
  const conditions = conds.flatMap((c) => [15, 25].map((mm) => ({ preparation: 'P', ...c, distanceMm: mm })));
  const data = new Float64Array(conditions.length * n);
  conditions.forEach((c, s) => {
    for (let i = 0; i < n; i++) data[s * n + i] = f(t0 + (i * 1000) / fs, c.distanceMm, c);
  });
  return new SweepSet({ data, nSweeps: conditions.length, nSamples: n, fs, t0Ms: t0, units: 'mV', conditions });
}

describe('components: the artifact and the polarity', () => {
  it('a tail larger than a small blocked class does not choose its sign (dose series, polarity auto)', () => {
    // a C-like wave (+30 uV at 15 mm, 20 mm/1 m/s) on a negative artifact tail of -0.2 mV exp(-t/3 ms) (invented)
    const rng = new model.Rng(2);
    const concs = [0, 0, 10, 30, 100, 300, 1000, 1000];
    for (const sign of [1, -1]) {
      const set = twoSites(
        20000,
        -10,
        150,
        concs.map((c, k) => ({ concentration: c, intensity: 10, temperatureC: 37, repeat: k })),
        (t, mm, c) => {
          const left = 1 / (1 + (c.concentration as number) / 30);
          const wave = 0.03 * (15 / mm) * left * Math.exp(-0.5 * ((t - mm) / (0.15 * mm)) ** 2);
          const tail = t > 0.5 ? -0.2 * Math.exp(-(t - 0.5) / 3) : 0;
          return sign * (wave + tail) + 0.001 * rng.normal();
        },
      );
      const rows = set.components({ preset: 'mammalian', classes: ['C'], earliestMs: 0.5 }).rows;
      expect(new Set(rows.map((r) => r.polarity))).toEqual(new Set([sign]));
    }
  });
  it('a wave at the far site only is not a class: not detected there, with the reason', () => {
    // a C-like bump at 25 mm only (3.6 x its detection level), nothing at 15 mm where a real wave would be larger
    const rng = new model.Rng(8);
    const set = twoSites(20000, -10, 150, [{ intensity: 10, temperatureC: 37 }], (t, mm) => {
      const bump = mm === 25 ? 0.0045 * Math.exp(-0.5 * ((t - 25) / 2) ** 2) : 0;
      return bump + 0.001 * rng.normal();
    });
    const rows = set.components({ preset: 'mammalian', classes: ['C'], polarity: 1 }).rows;
    const far = rows.find((r) => r.distance_mm === 25)!;
    expect(far.detected).toBe(false);
    expect(String(far.reason)).toMatch(/not confirmed/);
    expect(far.peak_ms).toBeNull();
    // the same wave at both sites (scaled as a class is) is measured at both
    const both = twoSites(20000, -10, 150, [{ intensity: 10, temperatureC: 37 }], (t, mm) => {
      return 0.0045 * Math.exp(-0.5 * ((t - mm) / (0.08 * mm)) ** 2) + 0.001 * rng.normal();
    });
    const r2 = both.components({ preset: 'mammalian', classes: ['C'], polarity: 1 }).rows;
    expect(r2.every((r) => r.status === 'measured')).toBe(true);
  });
});
