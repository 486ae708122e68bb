import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { readManifest } from '../../src';
import { runPipeline } from '../../src/report/pipeline';

// The committed demo study analysed by fascicle gives back its ground truth (truth.json,
// written by the generator; invented data, a self-consistency check, not an external one).
const dir = join(__dirname, '..', '..', 'data-demo');
const truth = JSON.parse(readFileSync(join(dir, 'truth.json'), 'utf8'));
const set = readManifest(join(dir, 'manifest.json'));
const r = runPipeline(set, (set.extras.manifest as { analysis: object }).analysis);

describe('demo study round trip', () => {
  it('loads every file with its conditions', () => {
    expect(set.nSweeps).toBe(4 * (34 + 12 + 32 + 24));
    expect(set.levels('preparation')).toEqual(['R1', 'R2', 'R3', 'R4']);
  });
  it('velocity per class and preparation within 6% (A-alpha/beta, A-delta) and 5% (C) of the true centroid velocity', () => {
    for (const prep of ['R1', 'R2', 'R3', 'R4']) {
      for (const t of truth.preparations[prep].classes['37']) {
        const row = r.velocity!.get('regression', 'centroid').find((q) => q.class === t.name && q.preparation === prep);
        expect(row, `${prep} ${t.name}`).toBeTruthy();
        const tol = t.name === 'C' ? 0.05 : 0.06;
        expect(
          Math.abs(row!.velocity_m_s - t.vCentroid) / t.vCentroid,
          `${prep} ${t.name}: ${row!.velocity_m_s} vs ${t.vCentroid}`,
        ).toBeLessThan(tol);
      }
    }
  });
  it("IC50 per class within a factor of 1.35 of the preparations' true geometric mean, C more sensitive than A", () => {
    for (const s of r.doseResponse!.summary) {
      const ic = ['R1', 'R2', 'R3', 'R4'].map(
        (p) => truth.preparations[p].classes['37'].find((c: { name: string }) => c.name === s.class).ic50,
      );
      const geo = Math.exp(ic.reduce((a: number, b: number) => a + Math.log(b), 0) / ic.length);
      expect((s.ic50 as number) / geo, String(s.class)).toBeGreaterThan(1 / 1.35);
      expect((s.ic50 as number) / geo, String(s.class)).toBeLessThan(1.35);
    }
    expect(
      r.doseResponse!.comparisons.find((c) => c.classA === 'A-alpha/beta' && c.classB === 'C')!.p as number,
    ).toBeLessThan(0.001);
  });
  it('Q10 of conduction velocity: C within 5%, A within 10% of the true 1.4', () => {
    const q = (c: string) => r.temperature!.rows.find((x) => x.class === c)!.q10 as number;
    expect(Math.abs(q('C') - truth.model.q10Velocity) / truth.model.q10Velocity).toBeLessThan(0.05);
    expect(Math.abs(q('A-alpha/beta') - truth.model.q10Velocity) / truth.model.q10Velocity).toBeLessThan(0.1);
  });
  it('recruitment: A fibers recruited at lower intensity than C', () => {
    // A 'not identifiable' row has no I50 (i50 null); compare the fitted ones, and require some on each side.
    const th = (c: string) =>
      r.recruitment!.rows.filter((x) => x.class === c && typeof x.i50 === 'number').map((x) => x.i50 as number);
    expect(th('A-alpha/beta').length).toBeGreaterThan(0);
    expect(th('C').length).toBeGreaterThan(0);
    expect(Math.max(...th('A-alpha/beta'))).toBeLessThan(Math.min(...th('C')));
  });
});
