// The methods text says what the run did and nothing it did not: each statement is checked against the options and
// the data of a run (forward-model sweeps, src/model/nerve.ts). External facts: the Arrhenius (1889) title as
// published ("Über die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch Säuren", Z Phys Chem 4);
// Q10 = exp(10 b) for ln(rate) = a + b T and Ea = -R x slope on 1/T (common practice, no source); the Kiernan table of
// fibre types (REFERENCES.md) behind the mammalian preset.
import { describe, it, expect } from 'vitest';
import { rodentSciatic, simulateNerve } from '../../src/model/nerve';
import { runPreparation, combineStudy } from '../../src/report/study';
import { methodsText, PRESET_CITATIONS } from '../../src/report/methods';
import { PRESETS } from '../../src/measure/classes';
import type { Step } from '../../src/sweeps/SweepSet';
import '../../src/registry/index';

const m0 = rodentSciatic();
const model = { ...m0, populations: [{ ...m0.populations[0], count: 150 }] };
const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
const grid = { fs: 50000, t0Ms: -3, nSamples: 900 };
/** Two distances at each temperature, 2 repeats each, of one preparation. */
function sweepsAt(temps: number[]) {
  const out = [];
  for (const t of temps)
    for (const d of [20, 30])
      for (let r = 0; r < 2; r++)
        out.push({
          intensity: 20,
          distanceMm: d,
          temperatureC: t,
          concentration: 0,
          pulseWidthMs: 0.05,
          pulsesMs: [0],
          conditions: { preparation: 'N1', series: 'distance', repeat: r },
        });
  return simulateNerve({ model, seed: 3, grid, sweeps: out, nuisance: nz });
}
const o = { baseline: { window: [-2.8, -0.2] as [number, number] }, components: { classes: ['A-alpha/beta'] } };
const textOf = (set: ReturnType<typeof sweepsAt>, opts = o) => {
  const study = combineStudy([runPreparation(set, opts)], opts);
  return { study, text: methodsText(study.history, { ...study.recording, preparations: 1, files: 1 }) };
};

// the same sweeps with no temperature given (the condition removed)
const warm = sweepsAt([30, 37]);
const noTemp = warm
  .where({ temperatureC: 37 })
  .create({ conditions: warm.where({ temperatureC: 37 }).conditions.map(({ temperatureC, ...c }) => c) });
const withTemps = textOf(warm);
const without = textOf(noTemp);
const componentsStep = without.study.history.find((h) => h.verb === 'components')!;

describe('methodsText against the run it describes', () => {
  it('no temperature given: no Q10 scaling of the class windows, and no Q10 sentence', () => {
    expect(noTemp.conditions.every((c) => !('temperatureC' in c))).toBe(true);
    expect(without.text).toMatch(/no recording temperature was given, so the ranges were used as tabulated, unscaled/);
    expect(without.text).not.toMatch(/Q10 =/);
    expect(without.text).not.toMatch(/Temperature dependence/);
    expect(without.text).not.toMatch(/bath/);
    expect(without.text).not.toMatch(/Lowitzsch/);
  });

  it('temperatures given: windows scaled with the preset Q10 (cited); the Q10 sentence reads as one regression', () => {
    expect(withTemps.text).toContain(
      'scaled from 37 °C to the recording temperature of each sweep (30 and 37 °C) with Q10 = 1.4 ' +
        '(within the 1.36-1.44',
    );
    expect(withTemps.text).toContain('Lowitzsch K, Hopf HC, Galland J (1977)');
    const q10 = new RegExp(
      'the natural logarithm of conduction velocity \\(from [^)]*\\) at each temperature was regressed on ' +
        'temperature, giving Q10 = exp\\(10 × slope\\)',
    );
    expect(withTemps.text).toMatch(q10);
    // the garbled form of earlier versions
    expect(withTemps.text).not.toMatch(/at each temperature on temperature/);
    // the reference keeps its letters
    expect(withTemps.text).toContain(
      'Arrhenius S (1889) Über die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch Säuren.',
    );
  });

  it('the recording temperature is "bath" only for an in vitro preparation; in vivo (or unknown) is neutral', () => {
    const steps: Step[] = [componentsStep];
    const ctx = { temperaturesC: [32] };
    const vivo = methodsText(steps, { ...ctx, preparationTypes: ['in vivo'] });
    const vitro = methodsText(steps, { ...ctx, preparationTypes: ['in vitro'] });
    const unknown = methodsText(steps, ctx);
    expect(vivo).not.toMatch(/bath/);
    expect(vivo).toMatch(/to the recording temperature of each sweep \(32 °C\)/);
    expect(vitro).toMatch(/to the bath temperature of each sweep \(32 °C\)/);
    expect(unknown).not.toMatch(/bath/);
    // the whole study's preparation types from the sweeps' preparationType condition
    const typed = warm.create({ conditions: warm.conditions.map((c) => ({ ...c, preparationType: 'in vivo' })) });
    expect(textOf(typed).study.recording!.preparationTypes).toEqual(['in vivo']);
    expect(textOf(typed).text).not.toMatch(/bath/);
  });

  it('states the sampling rate, the sweep counts and averaging, and the recording configuration', () => {
    expect(withTemps.text).toMatch(/Responses were sampled at 50 kHz, treated as monopolar recordings/);
    // 8 sweeps: 2 temperatures x 2 distances x 2 repeats, averaged into 4 (one per condition)
    expect(withTemps.study.recording).toMatchObject({ sampleRatesHz: [50000], sweeps: 8, measured: 4 });
    expect(withTemps.text).toMatch(/8 sweeps were analysed \(4 measured after averaging repeats\)/);
    expect(withTemps.text).toMatch(/averaged \(mean\) before measuring \(8 sweeps into 4\)/);
    const bipolar = methodsText([{ verb: 'readManifest', options: { files: 2 }, version: '0' }], {
      sampleRatesHz: [20000, 50000],
      sweeps: 10,
      measured: 10,
      configurations: ['bipolar'],
    });
    expect(bipolar).toMatch(/sampled at 20 kHz and 50 kHz and recorded bipolar \(an active and a reference contact/);
    expect(bipolar).toMatch(/10 sweeps were analysed\./);
    // nothing known: nothing claimed
    expect(methodsText([{ verb: 'readManifest', options: { files: 2 }, version: '0' }])).not.toMatch(
      /sampled|polar|analysed/,
    );
  });

  it('every preset is cited to a published table or said to be common practice', () => {
    for (const name of Object.keys(PRESETS)) {
      const c = PRESET_CITATIONS[name];
      expect(c, name).toBeDefined();
      expect(`${c.ranges} ${c.q10}`, name).toMatch(/tabulated by Kiernan|common in practice/);
      expect(`${c.ranges}`, name).not.toMatch(/memory/);
      const step = { ...componentsStep, options: { ...componentsStep.options, preset: name } };
      expect(methodsText([step], { temperaturesC: [25] }), name).toContain(c.ranges);
    }
  });
});
