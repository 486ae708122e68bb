import { describe, it, expect } from 'vitest';
import {
  strengthDuration,
  strengthDurationFigure,
  weiss,
  lapicque,
  model,
  AnalysisError,
  OptionError,
} from '../../src';

// Rows as a ComponentTable gives them: a Boltzmann recruitment curve in log10
// intensity per pulse width, centred on the criterion intensity given by a law.
function rowsFrom(law: (w: number) => number, widths: number[], cls = 'A') {
  const rows: Record<string, string | number>[] = [];
  for (const w of widths) {
    const i50 = law(w);
    for (let k = -8; k <= 8; k++) {
      const I = i50 * 10 ** (k * 0.08);
      rows.push({
        preparation: 'P',
        class: cls,
        pulseWidthMs: w,
        intensity: I,
        intensityUnit: 'mA',
        amplitude_uV: 100 / (1 + Math.exp((Math.log10(i50) - Math.log10(I)) / 0.1)),
      });
    }
  }
  return rows;
}
const widths = [0.02, 0.05, 0.1, 0.2, 0.5, 1];

describe('strengthDuration(rows)', () => {
  it('recovers rheobase and chronaxie exactly from noise-free Weiss data (self-consistency)', () => {
    const r = strengthDuration(
      rowsFrom((w) => weiss(w, [0.2, 0.3]), widths),
      'uV',
    );
    const row = r.rows[0];
    expect(row.rheobase as number).toBeCloseTo(0.2, 6);
    expect(row.chronaxie_ms as number).toBeCloseTo(0.3, 6);
    // noise-free points fit exactly: an interval would have zero width, which no data support
    expect(row.status).toMatch(/^exact fit: the residuals are at rounding level/);
    expect(row.rheobase_ci95_low).toBeNull();
    expect(row.chronaxie_ci95_low_ms).toBeNull();
    expect(row.chronaxie_ci95_high_ms).toBeNull();
    // chronaxie is the width at which the criterion intensity is twice the rheobase (Lapicque 1909; definition of the trade)
    expect(weiss(row.chronaxie_ms as number, [row.rheobase as number, row.chronaxie_ms as number])).toBeCloseTo(
      2 * (row.rheobase as number),
      10,
    );
  });
  it('recovers Lapicque parameters from Lapicque data; its chronaxie is tau ln 2 (Lapicque 1909, from memory)', () => {
    const tau = 0.4;
    const r = strengthDuration(
      rowsFrom((w) => lapicque(w, [0.5, tau]), widths),
      'uV',
    );
    expect(r.rows[0].lapicque_tau_ms as number).toBeCloseTo(tau, 6);
    expect(r.rows[0].lapicque_chronaxie_ms as number).toBeCloseTo(tau * Math.LN2, 6);
    expect(lapicque(tau * Math.LN2, [0.5, tau])).toBeCloseTo(1.0, 12); // twice the rheobase
  });
  it('recovers the chronaxies of a simulated nerve within 10% (forward model; self-consistency)', () => {
    const nerve = model.rodentSciatic();
    const intens = Array.from({ length: 26 }, (_, k) => 0.01 * 10 ** (k * 0.15));
    const sweeps = widths.flatMap((w) =>
      intens.map((I) => ({
        intensity: I,
        pulseWidthMs: w,
        distanceMm: 20,
        temperatureC: 37,
        concentration: 0,
        conditions: { preparation: 'P1' },
      })),
    );
    const s = model.simulateNerve({
      model: nerve,
      seed: 7,
      grid: { fs: 50000, t0Ms: -2, nSamples: 3000 },
      sweeps,
      nuisance: { noiseUv: 3 },
    });
    const r = s
      .baseline({ window: [-2, -0.1] })
      .components({ preset: 'mammalian', earliestMs: 0.1 })
      .strengthDuration();
    for (const [name, truth] of [
      ['A-alpha/beta', 0.15],
      ['C', 1.5],
    ] as const) {
      const row = r.rows.find((q) => q.class === name)!;
      expect(Math.abs((row.chronaxie_ms as number) / truth - 1)).toBeLessThan(0.1);
      expect(row.chronaxie_ci95_low_ms as number).toBeLessThan(row.chronaxie_ms as number);
    }
    expect(r.methods()).toMatch(/Weiss's law/);
    const fig = strengthDurationFigure(r);
    expect(fig.spec.data.length).toBeGreaterThanOrEqual(3 * 3); // points, Weiss and Lapicque per class (the figure may add more)
  });
  it('flat criterion intensities: an honest status, no chronaxie and no zero-width interval (issue: was "ok")', () => {
    const r = strengthDuration(
      rowsFrom(() => 0.2, widths),
      'uV',
    );
    const row = r.rows[0];
    expect(row.status).toMatch(/flat: the criterion intensity does not fall with pulse width/);
    expect(row.status).not.toBe('ok');
    expect(row.chronaxie_ms).toBeNull();
    expect(row.lapicque_chronaxie_ms).toBeNull();
    for (const k of ['rheobase_ci95_low', 'rheobase_ci95_high', 'chronaxie_ci95_low_ms', 'chronaxie_ci95_high_ms'])
      expect(row[k]).toBeNull();
    // responses that do not depend on intensity at all: recruitment cannot be fitted, no interval either
    const dead = rowsFrom(() => 0.2, widths).map((q) => ({ ...q, amplitude_uV: 100 }));
    const d = strengthDuration(dead, 'uV').rows[0];
    expect(d.status).not.toBe('ok');
    expect(d.rheobase_ci95_low).toBeNull();
    expect(d.rheobase_ci95_high).toBeNull();
  });
  it('noisy Weiss data: status ok and intervals of positive width that contain the truth (self-consistency)', () => {
    // deterministic multiplicative scatter of about 3% on the criterion intensities
    const law = (w: number) => weiss(w, [0.2, 0.3]) * (1 + 0.03 * Math.sin(w * 977));
    const row = strengthDuration(rowsFrom(law, widths), 'uV').rows[0];
    expect(row.status).toBe('ok');
    const lo = row.chronaxie_ci95_low_ms as number,
      hi = row.chronaxie_ci95_high_ms as number;
    expect(hi - lo).toBeGreaterThan(1e-3);
    expect(lo).toBeLessThan(0.3);
    expect(hi).toBeGreaterThan(0.3);
    expect((row.rheobase_ci95_high as number) - (row.rheobase_ci95_low as number)).toBeGreaterThan(1e-4);
  });
  it('a pulse width whose recruitment curve cannot be fitted is counted in the status, never dropped silently', () => {
    // one width (0.02 ms) never recruits (not detected at any intensity): no recruitment fit there
    const rows = rowsFrom((w) => weiss(w, [0.2, 0.3]), widths).map((q) =>
      q.pulseWidthMs === 0.02 ? { ...q, amplitude_uV: 0, detected: false } : q,
    );
    const r = strengthDuration(rows, 'uV');
    expect(r.rows).toHaveLength(1);
    expect(r.rows[0].widths).toBe(widths.length - 1);
    expect(r.rows[0].status).toMatch(/1 pulse width without a recruitment fit left out/);
    expect(r.rows[0].chronaxie_ms as number).toBeCloseTo(0.3, 6); // the other five widths still give the Weiss chronaxie
  });
  it('says what is missing: no pulse widths, too few widths, a criterion out of range', () => {
    expect(() => strengthDuration([{ class: 'A', intensity: 1, amplitude_uV: 1 }], 'uV')).toThrow(AnalysisError);
    expect(() => strengthDuration([{ class: 'A', intensity: 1, amplitude_uV: 1 }], 'uV')).toThrow(/pulseWidthMs/);
    expect(
      strengthDuration(
        rowsFrom((w) => weiss(w, [0.2, 0.3]), [0.1, 0.2]),
        'uV',
      ).rows[0].status,
    ).toMatch(/at least 3 pulse widths/);
    expect(() =>
      strengthDuration(
        rowsFrom((w) => weiss(w, [0.2, 0.3]), widths),
        'uV',
        { fraction: 1.2 },
      ),
    ).toThrow(OptionError);
  });
});
