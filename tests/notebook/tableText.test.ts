import { describe, expect, it } from 'vitest';
import { tableText } from '../../src/notebook/html';

// Terminal tables (show() outside a kernel): rows that differ only in a condition must stay apart
// (found by following the README's "Use from Node" snippet: two single-site rows looked identical).
describe('tableText', () => {
  const rows = [
    { group: 'preparation=R1, temperatureC=37, distanceMm=20', velocity_m_s: 61.2, reason: 'x'.repeat(40) },
    { group: 'preparation=R1, temperatureC=37, distanceMm=40', velocity_m_s: 63.9, reason: '' },
  ];
  it('keeps label columns whole up to 80 characters, so the two rows differ in their text', () => {
    const lines = tableText(rows).split('\n');
    expect(lines[1]).toContain('distanceMm=20');
    expect(lines[2]).toContain('distanceMm=40');
  });
  it('cuts other cells at 24 characters unless widths says otherwise', () => {
    expect(tableText(rows).split('\n')[1]).not.toContain('x'.repeat(25));
    expect(tableText(rows, { widths: { reason: 40 } }).split('\n')[1]).toContain('x'.repeat(40));
  });
});
