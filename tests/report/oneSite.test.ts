/**
 * One recording distance: the two-site and regression velocities cannot be made, so the single-site peak velocity
 * (distance / peak latency) is the recommended one, with a note and a 'single site' warning in the flags. Checked on
 * the development set FNPG-N07 (independent simulation, tests/fixtures/devset; truth: ground_truth.json's peak
 * latency of the clean A-alpha/beta component at 15 mm) with only the 15 mm channel kept.
 */
import { describe, it, expect } from 'vitest';
import { runPipeline } from '../../src';
import { SINGLE_SITE_NOTE } from '../../src/analysis/velocity';
import { loadStudy, truth, TEMPS } from '../external/devset';

describe('a study recorded at one distance (devset, 15 mm channel only)', () => {
  const { set, analysis } = loadStudy('fast');
  const one = set.where({ series: 'temperature', distanceMm: 15 });
  const r = runPipeline(one, analysis);
  const rows = r.velocity!.rows;
  it('marks the single-site peak velocity recommended, with the note, for each class and temperature', () => {
    const rec = rows.filter((q) => q.recommended === true);
    expect(rec.length).toBeGreaterThan(0);
    for (const q of rec) {
      expect(q.method).toBe('single-site');
      expect(q.basis).toBe('peak');
      expect(q.recommended_note).toBe(SINGLE_SITE_NOTE);
    }
    const flags = r.flags.filter((f) => f.status === 'single site');
    expect(flags.length).toBeGreaterThan(0);
    expect(flags.every((f) => f.severity === 'warning')).toBe(true);
  });
  const errAt = (T: number) => {
    const q = rows.find((x) => x.recommended === true && x.class === 'A-alpha/beta' && x.temperatureC === T)!;
    const want = 15 / truth.velocity[String(T)]['A-alpha/beta']['15mm'].peak_latency_ms;
    console.log(`A-alpha/beta ${T} C single-site peak ${q.velocity_m_s} vs ${want.toFixed(2)} m/s`);
    return ((q.velocity_m_s as number) - want) / want;
  };
  it('A-alpha/beta: the recommended value is 15 mm / the clean peak latency within 3% at 20, 25 and 30 C', () => {
    for (const T of TEMPS.filter((t) => t < 37)) expect(Math.abs(errAt(T))).toBeLessThan(0.03);
  });
  // at 37 C the 15 mm wave peaks 0.1 ms after the amplifier leaves its rail: met since the artifact shape is fitted
  // on every sweep's artifact-only stretch (it was -6.9%, one sample late, with the decay estimated at this site)
  it('A-alpha/beta at 37 C within 3%', () => {
    expect(Math.abs(errAt(37))).toBeLessThan(0.03);
  });
});
