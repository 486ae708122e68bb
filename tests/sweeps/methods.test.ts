import { describe, it, expect } from 'vitest';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { SweepSet, sweepQc, readNwb } from '../../src';

// An invented set: 6 sweeps of white noise (seeded), one of them flat-lined (amplifier failure).
function noiseSet(): SweepSet {
  const nSweeps = 6,
    nSamples = 400;
  const data = new Float64Array(nSweeps * nSamples);
  let seed = 12345;
  const rnd = () => (seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648 - 0.5;
  for (let s = 0; s < nSweeps; s++)
    for (let i = 0; i < nSamples; i++) data[s * nSamples + i] = s === 3 ? 0 : 10 * rnd();
  const conditions = Array.from({ length: nSweeps }, (_, s) => ({ preparation: 'p1', intensity: 1, fileSweep: s }));
  return new SweepSet({
    data,
    nSweeps,
    nSamples,
    fs: 20000,
    t0Ms: -5,
    units: 'uV',
    conditions,
    history: [],
    sources: [],
  });
}

describe('SweepSet forwarding methods', () => {
  it('set.qc() is sweepQc(set); set.rejectFlagged() removes exactly the flagged sweeps and records them', () => {
    const set = noiseSet();
    const a = set.qc(),
      b = sweepQc(set);
    expect(a.rows.map((r) => r.flagged)).toEqual(b.rows.map((r) => r.flagged));
    const flagged = a.rows.filter((r) => r.flagged).map((r) => r.sweep);
    expect(flagged).toContain(3); // a flat-lined sweep must be flagged (invariant: zero noise is never a recording)
    const kept = set.rejectFlagged(a);
    expect(kept.nSweeps).toBe(set.nSweeps - flagged.length);
    expect(kept.history[kept.history.length - 1].verb).toBe('rejectFlagged');
  });
  it('set.toHTML() summarises; set.toNwb(path) round-trips the samples', async () => {
    const set = noiseSet();
    expect(set.toHTML()).toContain('6 sweeps');
    const p = join(mkdtempSync(join(tmpdir(), 'fascicle-fwd-')), 'set.nwb');
    await set.toNwb(p, { raw: true });
    const back = await readNwb(p);
    expect(Array.from(back.data)).toEqual(Array.from(set.data));
  });
});
