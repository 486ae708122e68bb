/** Rich display of a SweepSet in a notebook: the HTML summary. */
import { describe, it, expect } from 'vitest';
import { SweepSet, sweepSetHtml } from '../../src';

describe('sweepSetHtml', () => {
  const evil = '<img src=x onerror=alert(1)>';
  const n = 100;
  const set = new SweepSet({
    data: new Float64Array(3 * n), nSweeps: 3, nSamples: n, fs: 20000, t0Ms: -1, units: 'uV',
    conditions: [{ preparation: evil, intensity: 1 }, { preparation: 'N2', intensity: 2 }, { preparation: 'N2', intensity: 4 }],
  }).baseline({ window: [-1, -0.2] });
  const html = sweepSetHtml(set);
  it('names sweeps, samples, the sampling rate, the time span and the units', () => {
    // 100 samples at 20 kHz from -1 ms: the last at -1 + 99 / 20 = 3.95 ms
    expect(html).toContain('3 sweeps × 100 samples at 20 kHz (-1 to 3.95 ms), µV'); // units as printed (unitText)
  });
  it('lists each condition with its levels and the history with its options', () => {
    expect(html).toMatch(/<th[^>]*>intensity<\/th><td[^>]*>3 levels<\/td><td[^>]*>1, 2, 4<\/td>/);
    expect(html).toMatch(/<th[^>]*>preparation<\/th><td[^>]*>2 levels/);
    expect(html).toContain('history: baseline');
    expect(html).toMatch(/<code>baseline<\/code> [^<]*window=\[-1,-0\.2\]/);
  });
  it('escapes user strings', () => {
    expect(html).not.toContain('<img');
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt;');
  });
});
