// The methods text of a run, read as a reviewer would (issue 16): each sentence checked against what the analysis
// recorded it did. External facts: the Hill equation y = bottom + (top - bottom) / (1 + (c / IC50)^h) (Hill 1910;
// the four-parameter log-logistic of Ritz et al. 2015) generates the dose-response points; the rest are the run's
// own options (what it did), not numbers.
import { describe, it, expect } from 'vitest';
import { rodentSciatic, simulateNerve } from '../../src/model/nerve';
import { runPreparation, combineStudy } from '../../src/report/study';
import { methodsText } from '../../src/report/methods';
import { doseResponse } from '../../src/analysis/doseResponse';
import '../../src/registry/index';

/** Component rows of one preparation and class: a Hill curve (IC50 10 uM, h 1), 3 sweeps per concentration. */
function hillRows() {
  const rows: Record<string, string | number | boolean | null>[] = [];
  let sweep = 0;
  for (const c of [0, 1, 3, 10, 30, 100, 300])
    for (let k = 0; k < 3; k++) {
      const y = 200 / (1 + c / 10); // Hill 1910 with top 200 uV, bottom 0, IC50 10, slope 1
      rows.push({
        preparation: 'P1',
        series: 'dose',
        class: 'A',
        sweep: sweep++,
        distanceMm: 20,
        concentration: c,
        concentrationUnit: 'uM',
        status: 'measured',
        detected: true,
        separation: 'window',
        peak_ms: 0.5,
        amplitude_uV: y,
        amplitude_fit_uV: y,
      });
    }
  return rows;
}

describe('the dose-response sentence says what the fit did', () => {
  const text = (o = {}) => {
    const r = doseResponse(hillRows(), 'uV', o);
    return { r, text: methodsText([r.history[r.history.length - 1]]) };
  };
  it('default: the top fitted (not "fixed at 1"), the least-squares amplitude, below-detection sweeps, latency rule', () => {
    const { r, text: t } = text();
    const step = r.history[r.history.length - 1];
    expect(step.options.model).toMatch(/top fitted/);
    expect(t).not.toMatch(/top fixed at 1/);
    expect(t).toMatch(/with the top asymptote fitted \(between 0\.5 and 1\.5 of the baseline/);
    expect(t).toMatch(/used the least-squares amplitude of each class's component/);
    expect(t).toMatch(/also the sweeps in which it fell below the detection level/);
    expect(t).toMatch(/peak latency differed by more than 50% from the mean drug-free peak latency/);
    expect(t).not.toMatch(/only sweeps in which the class was measured were used/);
  });
  it('freeTop: false, the peak amplitude, no latency rule, no below-detection sweeps: each is said so', () => {
    const { text: t } = text({ freeTop: false, measure: 'amplitude_uV', maxLatencyShift: null });
    expect(t).toMatch(/with the top fixed at 1 and the bottom free/);
    expect(t).toMatch(
      /used the peak amplitude of each class's component in the sweeps in which the class was measured/,
    );
    expect(t).not.toMatch(/peak latency differed/);
    expect(t).not.toMatch(/below the detection level/);
  });
});

describe('the recording, recruitment and thresholds sentences of a simulated intensity series', () => {
  // one preparation, 20 mm, 37 °C, 0.1 ms pulses at 8 intensities (forward model, src/model/nerve.ts)
  const m0 = rodentSciatic();
  const model = { ...m0, populations: [{ ...m0.populations[0], count: 150 }] };
  const sweeps = [0.5, 1, 2, 4, 8, 16, 32, 64].map((intensity) => ({
    intensity,
    distanceMm: 20,
    temperatureC: 37,
    concentration: 0,
    pulseWidthMs: 0.1,
    pulsesMs: [0],
    conditions: { preparation: 'N1', series: 'intensity' },
  }));
  const nz = { noiseUv: 5, artifactUv: 2000, artifactHalfMa: 2, artifactTauMs: 0.05, pulseWidthMs: 0.1 };
  const set = simulateNerve({ model, seed: 5, grid: { fs: 50000, t0Ms: -3, nSamples: 900 }, sweeps, nuisance: nz });
  const o = { baseline: { window: [-2.8, -0.2] as [number, number] }, components: { classes: ['A-alpha/beta'] } };
  const study = combineStudy([runPreparation(set, o)], o);
  const text = methodsText(study.history, { ...study.recording, preparations: 1, files: 1 });

  it('states the conduction distance and the pulse width of the sweeps', () => {
    expect(study.recording).toMatchObject({ distancesMm: [20], pulseWidthsMs: [0.1], removedByQc: 0 });
    expect(text).toMatch(/recorded at a conduction distance of 20 mm from the stimulating electrode/);
    expect(text).toMatch(/evoked by 0\.1 ms stimulus pulses/);
  });
  it('names the recruitment response and defines the lowest detected intensity that the thresholds table holds', () => {
    expect(study.tables.thresholds.length).toBeGreaterThan(0);
    expect(text).toMatch(/Recruitment curves \(the peak amplitude of each class's component against stimulus/);
    expect(text).toMatch(
      /lowest intensity from which a class stayed detected \(in at least half of the sweeps at that intensity and at every higher one\)/,
    );
    expect(text).toMatch(/the fitted threshold was taken where the fit reaches 5% of its range/);
  });
  it('spells fibre one way in the sentences of the components step', () => {
    expect(text).toMatch(/Fibre-class components were identified/);
    expect(text).not.toMatch(/Fiber-class/);
  });
});

describe('the filter sentence', () => {
  it('gives cut-offs from 1 kHz on in kHz (10000 Hz reads 10 kHz), a band in the unit of its upper edge', () => {
    const m0 = rodentSciatic();
    const model = { ...m0, populations: [{ ...m0.populations[0], count: 50 }] };
    const sweeps = [{ intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, pulsesMs: [0] }];
    const set = simulateNerve({ model, seed: 2, grid: { fs: 50000, t0Ms: -3, nSamples: 600 }, sweeps });
    const low = set.filter({ btype: 'lowpass', cutoff: 10000, order: 4 });
    const band = set.filter({ btype: 'bandpass', cutoff: [300, 3000], order: 2 });
    expect(methodsText(low.history)).toMatch(/4th-order Butterworth filter \(cutoff 10 kHz;/);
    expect(methodsText(band.history)).toMatch(/Butterworth filter \(cutoff 0\.3-3 kHz;/);
  });
});

describe('the mains-hum sentence says what removeHum fitted', () => {
  const m0 = rodentSciatic();
  const model = { ...m0, populations: [{ ...m0.populations[0], count: 50 }] };
  const sweeps = [{ intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, pulsesMs: [0] }];
  const set = simulateNerve({ model, seed: 4, grid: { fs: 20000, t0Ms: -5, nSamples: 1200 }, sweeps });
  it('a drift term of the order used (not subtracted), the harmonics fitted; no drift term when none was fitted', () => {
    const withDrift = set.removeHum({ frequency: 50, harmonics: 2, drift: 2 });
    const step = withDrift.history[withDrift.history.length - 1];
    expect(step.options.driftOrder).toBe(2);
    const t = methodsText(withDrift.history);
    expect(t).toMatch(
      /sinusoids at 50 Hz and its harmonics up to the 2nd jointly with a Legendre polynomial of order 2/,
    );
    expect(t).toMatch(/for slow drift \(fitted, not subtracted\) by linear least squares/);
    expect(t).not.toMatch(/Schwarz/); // the order was given, not chosen
    const none = methodsText(set.removeHum({ frequency: 50, harmonics: 2, drift: 0 }).history);
    expect(none).not.toMatch(/Legendre/);
  });
});
