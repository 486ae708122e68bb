// The optional analyses wired into the standard pipeline (runPipeline, runPreparation + combineStudy, the methods
// text and the bundle's figures), each on a small forward-model study (src/model) whose truth is known: the sweep the
// test corrupts, the drawn fibres' refractory recovery (direct cable simulation, src/model/pulses.ts), and the
// velocity factor the model gives one group of preparations.
import { describe, it, expect } from 'vitest';
import { SweepSet } from '../../src/sweeps/SweepSet';
import { rodentSciatic, drawFibers, simulateNerve, type NerveModel } from '../../src/model/nerve';
import { simulatePairedPulse, simulateTrain, pairedPulseTruth } from '../../src/model/pulses';
import { runPipeline, type PipelineOptions } from '../../src/report/pipeline';
import { runPreparation, combineStudy, byPreparation } from '../../src/report/study';
import { methodsText } from '../../src/report/methods';
import { studyFigureList } from '../../src/registry/index';

const m0 = rodentSciatic();
/** one fast class only (keeps the study small); the model's own fibre counts for it */
const fastOnly = (velocityFactor = 1): NerveModel => ({
  ...m0,
  populations: [
    { ...m0.populations[0], count: 200, velocityFactor: m0.populations[0].velocityFactor * velocityFactor },
  ],
});
const nz = { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 };
const components = { classes: ['A-alpha/beta'] };
const base: PipelineOptions = { baseline: { window: [-2.8, -0.2] }, components };

/** Supramaximal sweeps at two distances, `repeats` each, of one preparation. */
function distanceSet(
  prep: string,
  seed: number,
  model: NerveModel,
  extra: Record<string, string> = {},
  repeats = 3,
): SweepSet {
  const sweeps = [];
  for (const d of [20, 30])
    for (let r = 0; r < repeats; r++) {
      sweeps.push({
        intensity: 20,
        distanceMm: d,
        temperatureC: 37,
        concentration: 0,
        pulseWidthMs: 0.05,
        pulsesMs: [0],
        conditions: { preparation: prep, series: 'distance', repeat: r, ...extra },
      });
    }
  return simulateNerve({ model, seed, grid: { fs: 50000, t0Ms: -3, nSamples: 900 }, sweeps, nuisance: nz });
}

describe('sweep QC in the pipeline', () => {
  // truth: sweep 4 is corrupted here, held on an amplifier rail for 0.4 ms in the response window
  const raw = distanceSet('N1', 3, fastOnly());
  const data = Float64Array.from(raw.data);
  const s = 4,
    at = raw.indexAt(3);
  for (let i = 0; i < 20; i++) data[s * raw.nSamples + at + i] = 4000;
  const set = raw.create({ data });
  it('by default flags the corrupted sweep and keeps every sweep (listed, nothing removed)', () => {
    const r = runPipeline(set, base);
    expect(r.qc).not.toBeNull();
    const flagged = r.qc!.flagged();
    expect(flagged.map((q) => q.sweep)).toContain(s);
    expect(String(flagged.find((q) => q.sweep === s)!.flags)).toMatch(/saturated/);
    expect(r.sweepsRemoved).toEqual([]);
    expect(r.history.some((h) => h.verb === 'sweepQc')).toBe(true);
    expect(r.notes.join('\n')).toMatch(/flagged and kept/);
    const m = methodsText(r.history);
    expect(m).toMatch(/Flagged sweeps were kept/);
    expect(m).toMatch(/Leys C, Ley C/);
  });
  it('reject: true removes it, lists it (sweeps_removed, notes, methods) and measures the rest', () => {
    const r = runPipeline(set, { ...base, reject: true, averageRepeats: false });
    expect(r.sweepsRemoved.length).toBeGreaterThanOrEqual(1);
    const row = r.sweepsRemoved.find((q) => q.sweep === s)!;
    expect(row.flags).toMatch(/saturated/);
    expect(r.conditioned.nSweeps).toBe(set.nSweeps - r.sweepsRemoved.length);
    expect(r.notes.join('\n')).toMatch(/sweeps removed \(tables\/sweeps_removed.csv\)/);
    expect(methodsText(r.history)).toMatch(
      new RegExp(`${r.sweepsRemoved.length} of ${set.nSweeps} sweeps were excluded`),
    );
    expect(r.velocity!.rows.some((v) => typeof v.velocity_m_s === 'number')).toBe(true);
  });
  it('reject { flags } removes only those flags; qc: false skips QC; a bad reject value is an OptionError', () => {
    const r = runPipeline(set, { ...base, reject: { flags: ['flat'] } });
    expect(r.sweepsRemoved.every((q) => q.flags === 'flat')).toBe(true);
    expect(runPipeline(set, { ...base, qc: false }).qc).toBeNull();
    expect(() => runPipeline(set, { ...base, reject: { flag: ['flat'] } } as never)).toThrow(/flags/);
    expect(() => runPipeline(set, { ...base, reject: 'yes' } as never)).toThrow(/reject/);
    expect(() => runPipeline(set, { ...base, qc: false, reject: true })).toThrow(/qc: false/);
  });
  it('QC that cannot be computed (no pre-stimulus samples) is a flag; the sweeps are still measured', () => {
    const late = set.crop(0.05, 15);
    const r = runPipeline(late, {
      components: { ...components, noiseWindow: [12, 15] },
      baseline: false,
      reject: true,
    });
    const f = r.flags.find((x) => x.analysis === 'sweep-qc')!;
    expect(f.status).toBe('failed');
    expect(r.notes.join('\n')).toMatch(/no sweeps removed \(the QC could not be computed\)/);
    expect(r.components.rows.length).toBeGreaterThan(0);
  });
  it('runPreparation + combineStudy: tables sweep_qc (file-level identity), sweep_qc_summary, sweeps_removed; the study history lists every removal', () => {
    const two = SweepSet.concat([set, distanceSet('N2', 5, fastOnly())]);
    const o = { ...base, reject: true };
    const study = combineStudy(
      byPreparation(two).map((p) => runPreparation(p.set, o)),
      o,
    );
    expect(study.tables.sweep_qc!.length).toBe(two.nSweeps);
    expect(study.tables.sweep_qc_summary!.map((r) => r.preparation)).toEqual(['N1', 'N2']);
    const removed = study.tables.sweeps_removed!;
    expect(removed.some((r) => r.preparation === 'N1' && r.sweep === s)).toBe(true);
    const step = study.history.find((h) => h.verb === 'rejectFlagged')!;
    expect((step.options.removed as unknown[]).length).toBe(removed.length);
    expect(methodsText(study.history)).toMatch(new RegExp(`${removed.length} of ${two.nSweeps} sweeps were excluded`));
  });
});

describe('paired-pulse recovery and trains in the pipeline', () => {
  const model = fastOnly();
  const grid = { fs: 50000, t0Ms: -3, nSamples: 900 };
  const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, pulseWidthMs: 0.05 };
  const isis = [0.45, 0.5, 0.55, 0.6, 0.65, 0.7, 0.8, 0.9, 1, 1.2, 1.4, 1.7, 2, 2.5, 3, 4, 6];
  const pp = simulatePairedPulse({
    model,
    seed: 7,
    grid,
    base: rc,
    intervalsMs: isis,
    repeats: 2,
    nuisance: nz,
    conditions: { preparation: 'N1', series: 'paired-pulse' },
  });
  const tr = simulateTrain({
    model,
    seed: 7,
    grid,
    base: rc,
    frequenciesHz: [400, 1000],
    pulses: 5,
    nuisance: nz,
    conditions: { preparation: 'N1', series: 'train' },
  });
  const set = SweepSet.concat([pp, tr]);
  const truth = pairedPulseTruth(model, drawFibers(model, 7), rc, isis).find((t) => t.name === 'A-alpha/beta')!;
  const r = runPipeline(set, base);
  it("paired-pulse: ARP within 0.1 ms and R50 within 10% of the simulated fibres' recovery (direct cable simulation)", () => {
    const s = r.pairedPulse!.summary.find((q) => q.class === 'A-alpha/beta')!;
    console.log('pipeline paired pulse: ARP', s.arp_ms, 'vs', truth.arpMs, '; R50', s.r50_ms, 'vs', truth.r50Ms);
    expect(Math.abs((s.arp_ms as number) - truth.arpMs!)).toBeLessThanOrEqual(0.1);
    expect(Math.abs((s.r50_ms as number) - truth.r50Ms!) / truth.r50Ms!).toBeLessThan(0.1);
  });
  it('trains: one summary row per frequency; the standard table holds only single-response sweeps', () => {
    expect(r.trains!.summary.map((q) => q.train_hz).sort()).toEqual([1000, 400]);
    const used = new Set(r.components.rows.map((q) => `${q.series}:${q.pulsePair ?? ''}`));
    expect([...used]).toEqual(['paired-pulse:test-alone']);
  });
  it('bundle tables, figures, methods sentences; per-preparation outputs combine to the same tables', () => {
    const study = combineStudy([runPreparation(set, base)], base);
    expect(study.tables.paired_pulse_summary).toEqual(JSON.parse(JSON.stringify(r.pairedPulse!.summary)));
    expect(study.tables.train!.length).toBe(r.trains!.points.length);
    expect(study.computed).toBeGreaterThan(0);
    const names = studyFigureList(study).map((f) => f.name);
    expect(names).toEqual(expect.arrayContaining(['paired-pulse', 'train']));
    const m = methodsText(study.history);
    expect(m).toMatch(/Paired-pulse recovery: the conditioning-alone response was subtracted/);
    expect(m).toMatch(/area below 50% of pulse 1's/);
    expect(m).toMatch(/Bostock H, Cikurel K, Burke D \(1998\)/);
  });
  it('a failing analysis is a flag, not the loss of the others', () => {
    // paired sweeps without their test-alone sweeps: the paired-pulse analysis cannot run; trains still do
    const noTest = set.where((c) => c.pulsePair !== 'test-alone');
    const q = runPipeline(noTest, base);
    expect(q.pairedPulse).toBeNull();
    const f = q.flags.find((x) => x.analysis === 'paired-pulse')!;
    expect(f.severity).toBe('rejected');
    expect(f.reason).toMatch(/test-alone/);
    expect(q.trains!.summary.length).toBe(2);
    expect(runPipeline(set, { ...base, pairedPulse: false, trains: false }).pairedPulse).toBeNull();
  });
});

describe('group statistics and the mixed model across preparations', () => {
  // truth: the model gives the "slow" group's fibres 0.85 times the velocity of the "control" group's
  const preps = ['C1', 'C2', 'C3', 'S1', 'S2', 'S3'];
  const parts = preps.map((p, i) =>
    distanceSet(
      p,
      20 + i,
      fastOnly(p.startsWith('S') ? 0.85 : 1),
      { group: p.startsWith('S') ? 'slow' : 'control' },
      2,
    ),
  );
  const set = SweepSet.concat(parts);
  const o: PipelineOptions = {
    ...base,
    qc: false,
    groups: { value: 'velocity_m_s', table: 'velocity' },
    mixed: { value: 'peak_ms', fixed: ['group', 'distanceMm'] },
  };
  const study = combineStudy(
    byPreparation(set).map((p) => runPreparation(p.set, o)),
    o,
  );
  it("one point per preparation (its recommended velocity), the group ratio near the model's 0.85, a Welch test", () => {
    const pts = study.tables.group_points!;
    expect(pts.map((q) => q.animal).sort()).toEqual(preps);
    const mean = (g: string) => {
      const v = pts.filter((q) => q.group === g).map((q) => q.velocity_m_s as number);
      return v.reduce((a, b) => a + b, 0) / v.length;
    };
    console.log('group means', mean('control'), mean('slow'));
    expect(Math.abs(mean('slow') / mean('control') - 0.85)).toBeLessThan(0.05);
    const welch = study.tables.group_tests!.find((t) => t.test === 'Welch t')!;
    expect(welch.status).toBe('ok');
    expect(welch.p as number).toBeLessThan(0.05);
    expect(study.groups!.points.length).toBe(6);
    // runPipeline on the whole set gives the same tests
    const whole = runPipeline(set, o);
    expect(JSON.parse(JSON.stringify(whole.groups!.tests))).toEqual(study.tables.group_tests);
  });
  it('mixed model of peak latency on group and distance, random intercept per preparation: slower group, later peak', () => {
    const a = study.tables.mixed_anova!.filter((q) => q.term === 'group');
    expect(a.length).toBe(1);
    expect(a[0].p as number).toBeLessThan(0.05);
    const c = study.tables.mixed_coefficients!.filter((q) => String(q.term).startsWith('group:'));
    expect(c.length).toBe(1);
    expect(c[0].estimate as number).toBeGreaterThan(0);
    expect(study.tables.mixed_variance!.every((q) => q.status === 'ok')).toBe(true);
  });
  it('methods sentences with their references, a figure per cell, and bad options as flags', () => {
    const m = methodsText(study.history);
    expect(m).toMatch(/averaged within each preparation \(the unit of replication/);
    expect(m).toMatch(/linear mixed-effects model with group and distanceMm as fixed effects/);
    expect(m).toMatch(/Satterthwaite FE \(1946\)/);
    expect(studyFigureList(study).some((f) => f.name.startsWith('groups-velocity_m_s'))).toBe(true);
    const bad = { ...o, groups: { value: 'velocity_ms', table: 'velocity' as const } };
    const s2 = combineStudy(
      byPreparation(set)
        .slice(0, 2)
        .map((p) => runPreparation(p.set, { ...bad, mixed: undefined })),
      { ...bad, mixed: undefined },
    );
    const f = s2.tables.flags.find((x) => x.analysis === 'groups')!;
    expect(f.reason).toMatch(/velocity_m_s/);
    expect(s2.tables.velocity.length).toBeGreaterThan(0);
  });
});

describe('velocity distributions (opt-in) in the pipeline', () => {
  // three distances of one preparation, and a second preparation recorded at one distance only
  const three = (() => {
    const sweeps = [];
    for (const d of [20, 30, 40])
      for (let r = 0; r < 3; r++) {
        sweeps.push({
          intensity: 20,
          distanceMm: d,
          temperatureC: 37,
          concentration: 0,
          pulseWidthMs: 0.05,
          pulsesMs: [0],
          conditions: { preparation: 'N1', series: 'distance', repeat: r },
        });
      }
    return simulateNerve({
      model: fastOnly(),
      seed: 9,
      grid: { fs: 50000, t0Ms: -3, nSamples: 900 },
      sweeps,
      nuisance: nz,
    });
  })();
  const one = distanceSet('N2', 4, fastOnly()).where({ distanceMm: 20 });
  const set = SweepSet.concat([three, one]);
  const vd = { bootstrap: 0, nVelocities: 30 };
  const o: PipelineOptions = { ...base, qc: false, velocityDistribution: vd };
  const study = combineStudy(
    byPreparation(set).map((p) => runPreparation(p.set, o)),
    o,
  );
  it('one distribution for the preparation with three distances (its tables carry the conditions), none without two', () => {
    const pct = study.tables.velocity_distribution_percentiles!;
    expect(new Set(pct.map((r) => r.preparation))).toEqual(new Set(['N1']));
    expect(pct.every((r) => r.temperatureC === 37 && r.intensity === 20)).toBe(true);
    expect(study.tables.velocity_distribution_residuals!.map((r) => r.distance_mm)).toEqual([20, 30, 40]);
    expect(study.tables.velocity_distribution!.length).toBe(30);
    expect(study.tables.velocity_distribution_classes!.length).toBeGreaterThan(0);
    expect(study.notes.join('\n')).toMatch(
      /N2 velocity-distribution: no preparation, temperature and concentration with two or more distances/,
    );
    const m = methodsText(study.history);
    expect(m).toMatch(/\(1 distribution: one per preparation, temperature and concentration/);
    expect(m).toMatch(/Cummins KL, Perkel DH, Dorfman LJ \(1979\)/);
  });
  it('a fit status other than ok is a warning flag; without the option nothing is run', () => {
    const res = runPipeline(three, o).velocityDistributions[0].result;
    const f = study.tables.flags.filter((x) => x.analysis === 'velocity-distribution');
    expect(f.length).toBe(res.fit.status === 'ok' ? 0 : 1);
    const plain = combineStudy([runPreparation(three, { ...base, qc: false })], { ...base, qc: false });
    expect(plain.tables.velocity_distribution).toBeUndefined();
  });
  it("a distribution that cannot be computed is a rejected flag; the preparation's other results stay", () => {
    const bad = { ...o, velocityDistribution: { ...vd, fitWindow: [40, 60] as [number, number] } };
    const r = runPreparation(three, bad);
    const f = r.flags.find((x) => x.analysis === 'velocity-distribution')!;
    expect(f.severity).toBe('rejected');
    expect(String(f.reason).length).toBeGreaterThan(10);
    expect(r.tables.velocity.some((v) => typeof v.velocity_m_s === 'number')).toBe(true);
    expect(() => runPipeline(three, { ...base, velocityDistribution: true } as never)).toThrow(/velocityDistribution/);
  });
});
