/**
 * The demo's comparison printout (`npm run demo`) reads the bundle's tables by their current column names: every
 * number it prints comes from the bundle, none is "undefined". Demo data (invented scenario, self-consistency).
 */
import { describe, it, expect } from 'vitest';
import { mkdtempSync, mkdirSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { compareDemo } from '../../src/model/compareDemo';

describe('compareDemo', () => {
  it('prints the IC50 and its interval from the unit-suffixed columns of dose_response_summary', () => {
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-compare-'));
    try {
      mkdirSync(join(dir, 'tables'));
      const write = (name: string, rows: unknown[]) => writeFileSync(join(dir, 'tables', name), JSON.stringify(rows));
      write('velocity.json', [
        { method: 'regression', basis: 'centroid', class: 'C', preparation: 'R1', velocity_m_s: 1.234 },
      ]);
      write('dose_response_summary.json', [
        {
          class: 'C',
          concentration_unit: 'uM',
          ic50_uM: 5.55,
          ic50_ci95_low_uM: 4.44,
          ic50_ci95_high_uM: 6.66,
          hill: 0.987,
        },
      ]);
      write('temperature.json', [{ class: 'C', q10: 1.39, q10_ci95_low: 1.3, q10_ci95_high: 1.5 }]);
      const text = compareDemo(dir, 'data-demo');
      expect(text).not.toContain('undefined');
      expect(text).toContain('C: 5.55 [4.44, 6.66]');
      expect(text).toContain('Hill slope 0.987 vs 1');
      expect(text).toContain('C 1.23 vs');
      expect(text).toContain('C: 1.39 [1.3, 1.5]');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
