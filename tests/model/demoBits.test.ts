import { describe, it, expect } from 'vitest';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { makeDemo } from '../../src/model/makeDemo';

// The committed demo study (data-demo/, made before paired pulses and trains were added to the model) is what the
// generator still writes, byte for byte: single-pulse sweeps are unchanged by the new model options.
describe('makeDemo(dir)', () => {
  it('writes the committed data-demo files byte for byte', () => {
    const dir = mkdtempSync(join(tmpdir(), 'fascicle-demo-'));
    try {
      makeDemo(dir);
      const ref = join(__dirname, '..', '..', 'data-demo');
      const names = readdirSync(ref).sort();
      expect(readdirSync(dir).sort()).toEqual(names);
      for (const n of names) expect(readFileSync(join(dir, n)).equals(readFileSync(join(ref, n))), n).toBe(true);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 60000);
});
