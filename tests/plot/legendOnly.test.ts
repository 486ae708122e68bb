import { describe, it, expect } from 'vitest';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { legendOnly } from '../../src/plot/figure';

// Review request (this session): one helper for legend-only entries instead of a copy per figure module.
describe('legendOnly: one helper for legend entries with no data', () => {
  it('is a never-hovered null point shown in the legend, with the caller style last', () => {
    const e = legendOnly('Fit', { mode: 'lines', line: { dash: 'dot' }, visible: true });
    expect(e).toEqual({
      type: 'scatter',
      x: [null],
      y: [null],
      name: 'Fit',
      hoverinfo: 'skip',
      showlegend: true,
      mode: 'lines',
      line: { dash: 'dot' },
      visible: true,
    });
    expect(legendOnly('x', { showlegend: false }).showlegend).toBe(false);
  });
  it('no figure module defines its own copy', () => {
    const dir = join(__dirname, '../../src/plot');
    const copies: string[] = [];
    for (const f of readdirSync(dir).filter((n) => n.endsWith('.ts') && n !== 'figure.ts')) {
      const text = readFileSync(join(dir, f), 'utf8');
      if (/(function|const)\s+legendOnly\b/.test(text)) copies.push(f);
      // a hand-built legend entry: a null point with showlegend true
      if (/x: \[null\],\s*y: \[null\],[^}]*showlegend: true/.test(text)) copies.push(f + ' (inline)');
    }
    expect(copies).toEqual([]);
  });
});
