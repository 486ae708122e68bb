import { describe, it, expect } from 'vitest';
import { readFileSync, existsSync, writeFileSync, mkdirSync } from 'node:fs';
import { join, dirname } from 'node:path';
import { groupFigure, groupFigures } from '../../src/plot/groups';
import {
  welchTTest,
  mannWhitneyU,
  oneWayAnova,
  repeatedMeasuresAnova,
  holm,
  benjaminiHochberg,
  compareGroups,
  normSf,
  mannWhitneyExactSf,
  groupMethods,
  groupStepMethods,
} from '../../src/analysis/groups';
import {
  mixedModel,
  fitRandomIntercept,
  satterthwaiteDf,
  mixedMethods,
  mixedStepMethods,
} from '../../src/analysis/mixed';
import { pairedCompare, toFrame, summarize, OptionError } from '../../src';
import { Rng } from '../../src/model/random';

// Reference values: tests/reference/make_groups.py (SciPy 1.17, NumPy 2.4) -> groups.json
const ref = JSON.parse(readFileSync(join(__dirname, '..', 'reference', 'groups.json'), 'utf8'));
/** |a - b| / |b| < 1e-6 */
const rel = (a: number | null, b: number) => {
  expect(a).not.toBeNull();
  expect(Math.abs((a as number) - b) / Math.max(Math.abs(b), 1e-300)).toBeLessThan(1e-6);
};

describe('two-sample tests against SciPy', () => {
  it('welchTTest(a, b) = scipy.stats.ttest_ind(a, b, equal_var=False): t, df, p and 95% CI', () => {
    for (const c of ref.welch) {
      const w = welchTTest(c.a, c.b);
      expect(w.status).toBe('ok');
      rel(w.t, c.t);
      rel(w.df, c.df);
      rel(w.p, c.p);
      rel(w.ci95![0], c.ci[0]);
      rel(w.ci95![1], c.ci[1]);
    }
  });
  it('welchTTest with fewer than 2 values in a group is a status, not a number', () => {
    const w = welchTTest([1], [2, 3, 4]);
    expect(w.status).toBe('not computed');
    expect(w.reason).toMatch(/at least 2 values per group \(n = 1, 3\)/);
    expect([w.t, w.p, w.df]).toEqual([null, null, null]);
  });
  it('mannWhitneyU(a, b) = scipy.stats.mannwhitneyu(a, b): U1, two-sided p, exact or normal approximation', () => {
    for (const c of ref.mannwhitney) {
      const m = mannWhitneyU(c.a, c.b);
      expect(m.method).toBe(c.method);
      expect(m.U).toBe(c.U);
      rel(m.p, c.p);
    }
    // hand check: 3 vs 4 completely separated: 2 / C(7, 3) = 2/35
    expect(mannWhitneyU([1, 2, 3], [4, 5, 6, 7]).p).toBeCloseTo(2 / 35, 15);
  });
  it('mannWhitneyExactSf sums to 1 at U >= 0 and is symmetric in the sample sizes', () => {
    expect(mannWhitneyExactSf(0, 5, 7)).toBeCloseTo(1, 14);
    expect(mannWhitneyExactSf(20, 5, 7)).toBeCloseTo(mannWhitneyExactSf(20, 7, 5), 14);
  });
  it('normSf stays accurate far in the tail (scipy.stats.norm.sf(8) = 6.22096057427178e-16)', () => {
    rel(normSf(8), 6.22096057427178e-16);
    rel(normSf(1.96), 0.024997895148220435); // scipy.stats.norm.sf(1.96)
  });
});

describe('ANOVA against SciPy and the textbook sums of squares', () => {
  it('oneWayAnova(groups) = scipy.stats.f_oneway', () => {
    for (const c of ref.oneway) {
      const a = oneWayAnova(c.groups);
      rel(a.F, c.F);
      rel(a.p, c.p);
      expect([a.df1, a.df2]).toEqual([c.df1, c.df2]);
    }
    expect(
      oneWayAnova([
        [1, 2, 3],
        [2, 3, 4],
        [5, 6, 7],
      ]).F,
    ).toBeCloseTo(13, 12); // SSB 26 / 2, SSW 6 / 6 (hand)
  });
  it('repeatedMeasuresAnova(y) = NumPy sums of squares and Greenhouse-Geisser epsilon; 2 conditions: paired t^2', () => {
    for (const c of ref.rm) {
      const a = repeatedMeasuresAnova(c.y);
      rel(a.F, c.F);
      rel(a.p, c.p);
      rel(a.epsilonGG, c.eps);
      rel(a.pGG, c.pGG);
      expect([a.df1, a.df2]).toEqual([c.df1, c.df2]);
      if (c.paired_t !== undefined) {
        rel(a.F, c.paired_t ** 2); // scipy.stats.ttest_rel
        const pc = pairedCompare(
          c.y.map((r: number[]) => r[0]),
          c.y.map((r: number[]) => r[1]),
        );
        rel(pc.t, c.paired_t);
        rel(a.p, c.paired_p);
      }
    }
  });
  it('a design that cannot be tested says so', () => {
    expect(repeatedMeasuresAnova([[1, 2, 3]]).status).toBe('not computed');
    expect(oneWayAnova([[1, 2]]).reason).toMatch(/at least 2 groups/);
  });
});

describe('multiplicity corrections', () => {
  it('holm(p) = Holm (1979) step-down; benjaminiHochberg(p) = scipy.stats.false_discovery_control(method="bh")', () => {
    const { p, holm: h, bh } = ref.multiplicity;
    holm(p).forEach((v, i) => rel(v, h[i]));
    benjaminiHochberg(p).forEach((v, i) => rel(v, bh[i]));
    expect(holm([0.01, null, 0.04])).toEqual([0.02, null, 0.04]);
  });
});

describe('mixedModel: random intercept per animal, REML, Satterthwaite df', () => {
  it('unbalanced design (missing cells, 1-4 sweeps per cell) equals the dense SciPy implementation', () => {
    for (const f of ref.mixed.fits) {
      const levels = { group: ['control', 'treated'], condition: ['pre', 'drug', 'wash'] };
      const fixed = ['group', 'condition'];
      const o = { value: 'value', fixed, random: 'animal', interaction: f.interaction, levels };
      const m = mixedModel(ref.mixed.rows, o);
      const v = m.variance[0];
      expect(v.status).toBe('ok');
      rel(v.animal_variance as number, f.sigma_u2);
      rel(v.residual_variance as number, f.sigma_e2);
      rel(v.reml_deviance as number, f.reml_deviance);
      expect(m.coefficients.map((c) => c.term)).toEqual(f.coefficients.map((c: { term: string }) => c.term));
      m.coefficients.forEach((c, i) => {
        const e = f.coefficients[i];
        for (const k of ['estimate', 'se', 'df', 't', 'p']) rel(c[k] as number, e[k]);
      });
      m.anova.forEach((a, i) => {
        const e = f.anova[i];
        expect(a.term).toBe(e.term);
        rel(a.F as number, e.F);
        rel(a.den_df as number, e.den_df);
        rel(a.p as number, e.p);
        expect(a.num_df).toBe(e.num_df);
      });
    }
  });

  // Closed-form balanced cases (Searle, Casella & McCulloch 1992, Variance Components, ch. 4, from memory):
  // REML = the ANOVA estimators when positive, and the F and t tests equal the classical ANOVA.
  const r = new Rng(42);
  it('animals x conditions, one value each: REML = ANOVA estimators; condition F = repeated-measures ANOVA', () => {
    const s = 6,
      k = 3;
    const y = Array.from({ length: s }, () => {
      const u = 2 * r.normal();
      return Array.from({ length: k }, (_, j) => 10 + u + 0.5 * j + 0.7 * r.normal());
    });
    const rows = y.flatMap((row, i) => row.map((v, j) => ({ animal: `A${i}`, condition: `c${j}`, value: v })));
    const m = mixedModel(rows, { value: 'value', fixed: ['condition'] });
    const a = repeatedMeasuresAnova(y);
    const msErr = a.ssWithin! / a.df2!,
      msSubj = a.ssSubjects! / (s - 1);
    rel(m.variance[0].residual_variance as number, msErr);
    rel(m.variance[0].animal_variance as number, (msSubj - msErr) / k);
    rel(m.anova[0].F as number, a.F!);
    rel(m.anova[0].den_df as number, (k - 1) * (s - 1));
    rel(m.anova[0].p as number, a.p!);
  });
  it('two conditions: the condition coefficient t and df equal the paired t (df = animals - 1)', () => {
    const s = 7;
    const pre = Array.from({ length: s }, () => 5 + r.normal());
    const post = pre.map((v) => v + 0.8 + 0.6 * r.normal());
    const rows = [
      ...pre.map((v, i) => ({ animal: `B${i}`, condition: 'pre', value: v })),
      ...post.map((v, i) => ({ animal: `B${i}`, condition: 'post', value: v })),
    ];
    const m = mixedModel(rows, { value: 'value', fixed: ['condition'], levels: { condition: ['pre', 'post'] } });
    const pc = pairedCompare(pre, post);
    const c = m.coefficients.find((q) => q.term === 'condition: post vs pre')!;
    rel(c.t as number, pc.t);
    rel(c.df as number, s - 1);
    rel(c.p as number, pc.pT);
    rel(c.estimate as number, pc.meanDifference);
  });
  it('groups of animals with repeated sweeps: group F = one-way ANOVA of animal means, df = animals - groups', () => {
    const G = 3,
      A = 4,
      R = 5;
    const rows: { group: string; animal: string; value: number }[] = [];
    const means: number[][] = [];
    const within: number[] = [];
    for (let g = 0; g < G; g++) {
      means.push([]);
      for (let a = 0; a < A; a++) {
        const u = 1.5 * r.normal();
        const vs = Array.from({ length: R }, () => 3 + 0.8 * g + u + r.normal());
        vs.forEach((v) => rows.push({ group: `g${g}`, animal: `g${g}a${a}`, value: v }));
        const mu = vs.reduce((x, y) => x + y, 0) / R;
        means[g].push(mu);
        within.push(vs.reduce((x, y) => x + (y - mu) ** 2, 0));
      }
    }
    const m = mixedModel(rows, { value: 'value', fixed: ['group'] });
    const a = oneWayAnova(means);
    const msWithin = within.reduce((x, y) => x + y, 0) / (G * A * (R - 1));
    const msAnimal = (R * a.ssWithin!) / (G * A - G);
    rel(m.variance[0].residual_variance as number, msWithin);
    rel(m.variance[0].animal_variance as number, (msAnimal - msWithin) / R);
    rel(m.anova[0].F as number, a.F!);
    rel(m.anova[0].den_df as number, G * A - G);
    rel(m.anova[0].p as number, a.p!);
  });
  it('fitRandomIntercept reports the boundary when animals do not differ', () => {
    // animal means identical by construction: sigma_u^2 = 0
    const y = [1, 3, 2, 2, 3, 1],
      X = y.map(() => [1]),
      g = ['a', 'a', 'b', 'b', 'c', 'c'];
    const f = fitRandomIntercept(y, X, g);
    expect(f.sigmaU2).toBe(0);
    expect(f.boundary).toBe(true);
    rel(f.sigmaE2, 0.8); // ordinary sample variance 4/5 (hand)
    // the intercept is a between-animal contrast: v = se/N, g = (sum n_i^2 / N^2, 1/N); with the expected
    // information this gives animals - 1 = 2 (hand computation), not N - 1
    rel(satterthwaiteDf(f, [1]), 2);
  });
  it('one observation per animal: variance components not both identifiable, tests are statuses not numbers', () => {
    const r2 = new Rng(5);
    const rows = Array.from({ length: 10 }, (_, i) => ({
      animal: `a${i}`,
      group: i < 5 ? 'x' : 'y',
      value: r2.normal(),
    }));
    const m = mixedModel(rows, { value: 'value', fixed: ['group'] });
    expect(m.variance[0].status).toBe('not computed');
    expect(m.variance[0].reason).toMatch(/one observation per animal/);
    expect([...m.coefficients, ...m.anova]).toEqual([]);
  });
  it('a cell that cannot be fitted is a row with a status; bad options name the column', () => {
    const rows = [
      { animal: 'a', condition: 'x', value: 1, class: 'C' },
      { animal: 'a', condition: 'y', value: 2, class: 'C' },
    ];
    const m = mixedModel(rows, { value: 'value', fixed: ['condition'] });
    expect(m.variance[0].status).toBe('not computed');
    expect(m.variance[0].reason).toMatch(/at least 2 animals/);
    expect(m.coefficients).toEqual([]);
    expect(() => mixedModel(rows, { value: 'valeu', fixed: ['condition'] })).toThrow(
      /"valeu" is not a column.*did you mean "value"/,
    );
  });
});

describe('compareGroups(rows, options): animals as the unit', () => {
  const r = new Rng(9);
  const rows: Record<string, string | number | boolean | null>[] = [];
  for (const [g, shift, n] of [
    ['control', 0, 5],
    ['treated', 1.2, 4],
  ] as const) {
    for (let a = 0; a < n; a++) {
      const u = r.normal();
      const at = { class: 'A', group: g, preparation: `${g}-${a}` };
      const level = 10 * (u + shift);
      for (let s = 0; s < 6; s++) rows.push({ ...at, epoch: 'pre', amplitude_uV: 100 + level + 3 * r.normal() });
      for (let s = 0; s < 6; s++) rows.push({ ...at, epoch: 'drug', amplitude_uV: 80 + level + 3 * r.normal() });
    }
  }
  rows.push(
    { class: 'C', group: 'control', preparation: 'control-0', epoch: 'pre', amplitude_uV: 5 },
    { class: 'C', group: 'treated', preparation: 'treated-0', epoch: 'pre', amplitude_uV: 6 },
    { class: 'C', group: 'treated', preparation: 'treated-0', epoch: 'pre', amplitude_uV: null },
  );
  /** the mean of one animal's class-A values at one epoch */
  const animalMean = (prep: string, epoch: string) => {
    const mine = rows.filter((q) => q.preparation === prep && q.epoch === epoch && q.class === 'A');
    const v = mine.map((q) => q.amplitude_uV as number);
    return v.reduce((x, y) => x + y, 0) / v.length;
  };
  const res = compareGroups(rows, { value: 'amplitude_uV', condition: 'epoch' });
  it('summaries count animals, not sweeps, and use their means', () => {
    const s = res.summary.find((q) => q.class === 'A' && q.group === 'treated' && q.condition === 'pre')!;
    expect(s.n_animals).toBe(4);
    expect(s.n_values).toBe(24);
    expect(s.unit).toBe('uV');
    const means = [0, 1, 2, 3].map((a) => animalMean(`treated-${a}`, 'pre'));
    rel(s.mean as number, means.reduce((x, y) => x + y, 0) / 4);
  });
  it('the Welch row equals welchTTest on animal means; paired rows; p adjusted over the table', () => {
    const w = res.tests.find((q) => q.class === 'A' && q.test === 'Welch t' && q.condition === 'pre')!;
    const ref2 = welchTTest(
      [0, 1, 2, 3, 4].map((a) => animalMean(`control-${a}`, 'pre')),
      [0, 1, 2, 3].map((a) => animalMean(`treated-${a}`, 'pre')),
    );
    rel(w.statistic as number, ref2.t!);
    rel(w.p as number, ref2.p!);
    const paired = res.tests.filter((q) => q.test === 'paired t');
    expect(paired.length).toBe(2);
    const ok = res.tests.filter((q) => q.status === 'ok').map((q) => q.p as number);
    const h = holm(ok);
    res.tests.filter((q) => q.status === 'ok').forEach((q, i) => rel(q.p_holm as number, h[i]!));
  });
  it('one animal per group: summary and tests are rows with a status and reason, never a number', () => {
    const c = res.summary.filter((q) => q.class === 'C');
    expect(c.every((q) => q.status === 'not computed' && q.sd === null && q.ci95_low === null)).toBe(true);
    const t = res.tests.filter((q) => q.class === 'C');
    expect(t.length).toBeGreaterThan(0);
    const welch = t.find((q) => q.test === 'Welch t')!;
    expect(welch.status).toBe('not computed');
    expect(welch.p).toBeNull();
    expect(welch.p_holm).toBeNull();
    expect(welch.reason).toMatch(/at least 2 values per group/);
    expect(res.excluded).toBe(1);
    expect(res.tables().group_points.length).toBe(2 * 9 + 2);
  });
  it('bad column names are typed errors with the nearest name', () => {
    expect(() => compareGroups(rows, { value: 'amplitude_uv' })).toThrow(/did you mean "amplitude_uV"/);
    expect(() => compareGroups(rows, { value: 'amplitude_uV', group: 'grup' })).toThrow(/invalid group: "grup"/);
  });
});

describe('groupFigure(result): points per animal, mean and 95% CI per group', () => {
  const rows = [
    ...['a1', 'a2', 'a3'].flatMap((a, i) =>
      ['pre', 'post'].map((e, j) => ({
        class: 'A',
        group: 'control',
        animal: a,
        epoch: e,
        velocity_m_s: 40 + i + 2 * j,
      })),
    ),
    ...['b1', 'b2', 'b3'].flatMap((a, i) =>
      ['pre', 'post'].map((e, j) => ({
        class: 'A',
        group: '<img src=x onerror=alert(1)>',
        animal: a,
        epoch: e,
        velocity_m_s: 35 + i - 3 * j,
      })),
    ),
  ];
  const res = compareGroups(rows, { value: 'velocity_m_s', condition: 'epoch' });
  const fig = groupFigure(res);
  it('matches the stored spec (numbers rounded; tests/analysis/__snapshots__/group-figure.json)', () => {
    // traces and axes of this figure only: the house style (palette, fonts) belongs to plot/figure.ts
    const spec = JSON.parse(fig.specJson(5), (k, v) => (k === 'color' ? undefined : v));
    type Axis = { title?: { text?: string }; tickvals?: unknown; ticktext?: unknown; range?: unknown };
    const ax = (a: Axis) => ({ title: a.title?.text, tickvals: a.tickvals, ticktext: a.ticktext, range: a.range });
    const layout = { title: spec.layout.title?.text, xaxis: ax(spec.layout.xaxis), yaxis: ax(spec.layout.yaxis) };
    const mine = { data: spec.data, layout };
    const text = JSON.stringify(mine, null, 1) + '\n';
    const p = join(__dirname, '__snapshots__', 'group-figure.json');
    if (!existsSync(p)) {
      mkdirSync(dirname(p), { recursive: true });
      writeFileSync(p, text);
    }
    const stored = readFileSync(p, 'utf8');
    if (stored !== text) writeFileSync(p + '.changed', text);
    expect(text).toBe(stored);
  });
  it('labels carry units, user strings are escaped, and the CI is the t interval of animal means', () => {
    type Titled = { title: { text: string } };
    const l = fig.spec.layout as { xaxis: Titled & { ticktext: string[] }; yaxis: Titled };
    // (the house layout capitalises axis titles)
    expect(l.yaxis.title.text).toMatch(/^conduction velocity \(m\/s\)$/i); // plot/labels.ts measureLabel
    expect(l.xaxis.title.text).toMatch(/^epoch$/i);
    expect(l.xaxis.ticktext).toEqual(['pre', 'post']);
    const json = JSON.stringify(fig.spec);
    expect(json).not.toContain('<img');
    expect(json).toContain('&lt;img src=x onerror=alert(1)&gt;');
    type Trace = { y: number[]; error_y: { array: number[] } };
    const meanTrace = fig.spec.data.find((d) => d.name === 'control mean, 95% CI') as Trace;
    // control pre: animal values 40, 41, 42 -> mean 41, SD 1, CI half-width t(0.975, 2) / sqrt 3 = 4.302653 / 1.732051
    expect(meanTrace.y[0]).toBeCloseTo(41, 12);
    expect(meanTrace.error_y.array[0]).toBeCloseTo(4.302652729749464 / Math.sqrt(3), 9); // scipy.stats.t.ppf(0.975, 2)
    const animalTraces = fig.spec.data.filter((d) => d.mode === 'markers' && String(d.name).endsWith('(preparations)'));
    expect(animalTraces.map((d) => (d.y as number[]).length)).toEqual([6, 6]);
  });
  it('groupFigures gives one figure per class; an unknown cell is a typed error', () => {
    expect(groupFigures(res).length).toBe(1);
    expect(() => groupFigure(res, { cell: { class: 'Z' } })).toThrow(/no cell/);
  });
});

describe('inputs and methods text', () => {
  const rows = ['x1', 'x2', 'x3', 'y1', 'y2', 'y3'].flatMap((a, i) =>
    [0, 1].map((k) => ({
      group: a[0],
      preparation: a,
      onset_ms: 1 + 0.1 * i + 0.01 * k,
    })),
  );
  it('plain rows, a table with .rows (as a ComponentTable) and a DataFrame give the same tests', () => {
    const a = compareGroups(rows, { value: 'onset_ms' });
    const table = { rows, history: [{ verb: 'components', options: {}, version: '0' }] };
    const b = compareGroups(table as never, { value: 'onset_ms' });
    const c = compareGroups(toFrame(rows) as never, { value: 'onset_ms' });
    expect(b.tests).toEqual(a.tests);
    expect(c.tests).toEqual(a.tests);
    expect(b.history.map((h) => h.verb)).toEqual(['components', 'compareGroups']);
    expect(a.summary[0].unit).toBe('ms');
    expect(() => compareGroups(42 as never, { value: 'onset_ms' })).toThrow(/need rows/);
  });
  it('methods sentences name the unit of replication, the tests, the correction and the model', () => {
    const a = compareGroups(rows, { value: 'onset_ms' });
    expect(groupMethods(a)).toMatch(/averaged within each preparation \(the unit of replication/);
    expect(groupMethods(a)).toMatch(/Welch t, Mann-Whitney U \(Mann-Whitney U exact/);
    expect(groupMethods(a)).toMatch(/Holm's step-down method/);
    const m = mixedModel(rows, { value: 'onset_ms', fixed: ['group'] });
    expect(mixedMethods(m)).toMatch(
      /random intercept per preparation .* restricted maximum likelihood .* Satterthwaite/,
    );
    // from the history steps alone
    expect(groupStepMethods(a.history[a.history.length - 1])).toMatch(/Welch's t test and the Mann-Whitney U test/);
    expect(groupStepMethods(a.history[a.history.length - 1])).not.toMatch(/paired/);
    expect(mixedStepMethods(m.history[m.history.length - 1])).toBe(mixedMethods(m));
  });
});

describe('within-animal designs and pseudo-replication', () => {
  it('without a group column, three time points in the same animals get a repeated-measures ANOVA', () => {
    const r = new Rng(21);
    const y = Array.from({ length: 6 }, () => {
      const u = r.normal();
      return [0, 1, 2].map((t) => 10 + u + 0.4 * t + 0.3 * r.normal());
    });
    const rows = y.flatMap((row, i) => row.map((v, t) => ({ preparation: `P${i}`, time: `t${t}`, latency_ms: v })));
    const res = compareGroups(rows, { value: 'latency_ms', condition: 'time' });
    expect(res.tests.map((t) => t.test)).toEqual(['repeated-measures ANOVA']);
    rel(res.tests[0].statistic as number, repeatedMeasuresAnova(y).F!);
    expect(res.summary.map((s) => s.group)).toEqual(['all', 'all', 'all']);
  });
  it('with the animal as a random effect the null rejection rate is near 5%; sweeps as replicates inflate it', () => {
    // 300 simulated two-group studies, no true effect: 5 animals per group, 6 sweeps each, ICC 0.5.
    // Expected: the mixed model's group test rejects at about the nominal 5% (binomial SD 1.3%);
    // a t test over sweeps (pseudo-replication, Lazic 2010) rejects far more often.
    const r = new Rng(2024);
    let mixedRejects = 0,
      naiveRejects = 0;
    const S = 300;
    for (let k = 0; k < S; k++) {
      const rows: { group: string; animal: string; v: number }[] = [];
      for (const g of ['a', 'b']) {
        for (let a = 0; a < 5; a++) {
          const u = r.normal();
          for (let s = 0; s < 6; s++) rows.push({ group: g, animal: `${g}${a}`, v: u + r.normal() });
        }
      }
      const m = mixedModel(rows, { value: 'v', fixed: ['group'], random: 'animal' });
      if ((m.anova[0].p as number) < 0.05) mixedRejects++;
      const of = (g: string) => rows.filter((q) => q.group === g).map((q) => q.v);
      const w = welchTTest(of('a'), of('b'));
      if (w.p! < 0.05) naiveRejects++;
    }
    const pct = (k: number) => `${((100 * k) / S).toFixed(1)}%`;
    console.log(`null rejection rate: mixed model ${pct(mixedRejects)}, sweeps as replicates ${pct(naiveRejects)}`);
    expect(mixedRejects / S).toBeGreaterThan(0.02);
    expect(mixedRejects / S).toBeLessThan(0.08);
    expect(naiveRejects / S).toBeGreaterThan(0.15);
  });
});

describe('mixedModel level order: documented, not the order of the input rows', () => {
  // two classes, three groups of 4 animals with 3 sweeps each (seeded); the test is an invariant (the same model
  // of the same observations), so no external value is needed
  const r = new Rng(77);
  const base: { class: string; group: string; animal: string; value: number }[] = [];
  for (const cls of ['C', 'A-delta'])
    for (const [g, shift] of [
      ['treated', 1.2],
      ['control', 0],
      ['vehicle', 0.3],
    ] as const)
      for (let a = 0; a < 4; a++) {
        const u = r.normal();
        for (let k = 0; k < 3; k++)
          base.push({ class: cls, group: g, animal: `${g}-${a}`, value: 5 + shift + u + r.normal() });
      }
  const shuffled = (seed: number) => {
    const rr = new Rng(seed),
      xs = [...base];
    for (let i = xs.length - 1; i > 0; i--) {
      const j = Math.floor(rr.uniform() * (i + 1));
      [xs[i], xs[j]] = [xs[j], xs[i]];
    }
    return xs;
  };
  it('default: levels sorted (control first here), cells sorted; a shuffled input gives identical tables', () => {
    const m = mixedModel(base, { value: 'value', fixed: ['group'] });
    expect(m.coefficients.filter((c) => c.class === 'A-delta').map((c) => c.term)).toEqual([
      '(Intercept)',
      'group: treated vs control',
      'group: vehicle vs control',
    ]);
    // cells in sorted order of `by` (A-delta before C), not first-seen (C first in the rows)
    expect(m.variance.map((v) => v.class)).toEqual(['A-delta', 'C']);
    for (const seed of [1, 2, 3]) {
      const s = mixedModel(shuffled(seed), { value: 'value', fixed: ['group'] });
      expect(s.coefficients).toEqual(m.coefficients);
      expect(s.anova).toEqual(m.anova);
      expect(s.variance).toEqual(m.variance);
    }
    const step = m.history[m.history.length - 1];
    expect(step.options.levels).toEqual({ group: ['control', 'treated', 'vehicle'] });
    expect(m.methods()).toMatch(/levels of each factor were sorted \(group: control, treated, vehicle\)/);
  });
  it('a named reference level comes first, the others sorted after it; a level not in the rows is an error', () => {
    const m = mixedModel(shuffled(4), { value: 'value', fixed: ['group'], levels: { group: ['vehicle'] } });
    expect(m.coefficients.filter((c) => c.class === 'C').map((c) => c.term)).toEqual([
      '(Intercept)',
      'group: control vs vehicle',
      'group: treated vs vehicle',
    ]);
    expect(m.methods()).toMatch(/ordered as given, the others sorted after them \(group: vehicle, control, treated\)/);
    expect(() => mixedModel(base, { value: 'value', fixed: ['group'], levels: { group: ['contrl'] } })).toThrow(
      /invalid levels\.group: "contrl" is not a level of group in the rows.*did you mean "control"/,
    );
  });
});

describe('compareGroups group and condition order: first appearance in the data unless given', () => {
  // an invariant of the design (the same animals, the labels swapped), so no external value: the Welch difference
  // is mean(first) - mean(second) (welchTTest above, checked against SciPy)
  const r = new Rng(31);
  const rows: Record<string, string | number>[] = [];
  // class C's first row is a treated animal, class A's a control: one order must hold for both classes
  for (const cls of ['C', 'A'])
    for (const g of cls === 'C' ? ['treated', 'control'] : ['control', 'treated'])
      for (let a = 0; a < 4; a++)
        for (const epoch of ['pre', 'drug'])
          rows.push({
            class: cls,
            group: g,
            preparation: `${g}-${a}`,
            epoch,
            amplitude_uV: 10 + (g === 'treated' ? 3 : 0) + (epoch === 'drug' ? -2 : 0) + r.normal(),
          });
  const welch = (res: ReturnType<typeof compareGroups>, cls: string) =>
    res.tests.find((q) => q.class === cls && q.test === 'Welch t' && q.condition === 'pre')!;
  it('default: the groups by their first appearance over all rows (treated first here), the same in every class', () => {
    const res = compareGroups(rows, { value: 'amplitude_uV', condition: 'epoch' });
    for (const cls of ['A', 'C']) {
      const w = welch(res, cls);
      expect(w.comparison).toBe('treated vs control');
      expect(w.estimate as number).toBeGreaterThan(0);
      expect(w.order).toBe('groups by first appearance in the data; conditions by first appearance in the data');
    }
    const paired = res.tests.filter((q) => q.test === 'paired t');
    expect(paired.map((q) => q.comparison)).toContain('drug - pre within treated');
    expect(res.summary.filter((q) => q.class === 'A').map((q) => q.group)).toEqual([
      'treated',
      'control',
      'treated',
      'control',
    ]);
  });
  it('levels give the order (the others follow by first appearance); the table says so', () => {
    const res = compareGroups(rows, {
      value: 'amplitude_uV',
      condition: 'epoch',
      levels: { group: ['control'], epoch: ['drug', 'pre'] },
    });
    const w = welch(res, 'C');
    expect(w.comparison).toBe('control vs treated');
    const plain = welch(compareGroups(rows, { value: 'amplitude_uV', condition: 'epoch' }), 'C');
    rel(w.estimate as number, -(plain.estimate as number));
    rel(w.p as number, plain.p as number);
    expect(w.order).toBe('groups as given (levels); conditions as given (levels)');
    expect(res.tests.filter((q) => q.test === 'paired t').map((q) => q.comparison)).toContain(
      'pre - drug within control',
    );
    expect(res.history[res.history.length - 1].options.levels).toEqual({ group: ['control'], epoch: ['drug', 'pre'] });
    // the figure follows the same order: control's points left of treated's at each condition
    const fig = groupFigure(res, { cell: { class: 'C' } });
    const firstX = (name: string) =>
      Math.min(
        ...(fig.spec.data as { name?: string; x?: unknown[] }[])
          .filter((t) => t.name === `${name} mean, 95% CI` && Array.isArray(t.x))
          .flatMap((t) => t.x!.filter((v): v is number => typeof v === 'number')),
      );
    expect(firstX('control')).toBeLessThan(firstX('treated'));
  });
  it('a level not in the rows, a level given twice or a key that is no factor is an error naming it', () => {
    const go = (levels: unknown) => () =>
      compareGroups(rows, { value: 'amplitude_uV', condition: 'epoch', levels } as never);
    expect(go({ group: ['contrl'] })).toThrow(/invalid levels\.group: "contrl" is not a level.*did you mean "control"/);
    expect(go({ group: ['control', 'control'] })).toThrow(/"control" is given twice/);
    expect(go({ grup: ['control'] })).toThrow(/invalid levels key: "grup".*did you mean "group"/);
    expect(go({ group: 'control' })).toThrow(/invalid levels\.group: "control"; must be a non-empty list/);
    expect(go(['control'])).toThrow(/invalid levels/);
  });
});

describe('statistics inputs that cannot be used are said, not silently dropped', () => {
  it('summarize counts the values it left out; pairedCompare refuses unequal or non-finite pairs', () => {
    const s = summarize([1, NaN, 3, Infinity]);
    expect([s.n, s.excluded, s.mean]).toEqual([2, 2, 2]);
    expect(summarize([]).excluded).toBe(0);
    expect(() => pairedCompare([1, 2, 3], [1, 2])).toThrow(OptionError);
    expect(() => pairedCompare([1, 2, 3], [1, 2])).toThrow(/3 before and 2 after values/);
    // a NaN pair used to enter the t test's df while the mean left it out (df 2 for 2 differences)
    expect(() => pairedCompare([1, 2, 3], [1.5, NaN, 3.5])).toThrow(/invalid after\[1\]: NaN/);
  });
  it('compareGroups on a column without numbers is an AnalysisError naming the column', () => {
    const rows = [
      { x: 'a', group: 'g', preparation: 'p1' },
      { x: 'b', group: 'h', preparation: 'p2' },
    ];
    expect(() => compareGroups(rows, { value: 'x' })).toThrow(
      /none of the 2 rows has a finite number in x and a preparation and a group/,
    );
  });
});
