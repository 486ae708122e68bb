import { describe, it, expect, afterAll } from 'vitest';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { makeGroupDemo, GROUP_DEMO_EFFECT } from '../../src/model/makeGroupDemo';
import { looksLikeBlindingKey } from '../../src/io/manifest';

// The two-group demo: deterministic, the blinded and open versions hold the same recordings, the key stays outside
// the study, and its truth follows the time-scale law of the refractory fibre (src/model/refractory.ts: a fibre of
// time scale s has every interval of the s = 1 fibre divided by s, exactly; Hodgkin & Huxley 1952 equations).
const dir = mkdtempSync(join(tmpdir(), 'fascicle-group-demo-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('makeGroupDemo(studyDir, keyDir)', () => {
  const a = makeGroupDemo(join(dir, 'a'), join(dir, 'a-key'), { seed: 3 });
  const b = makeGroupDemo(join(dir, 'b'), join(dir, 'b-key'), { seed: 3 });
  const open = makeGroupDemo(join(dir, 'o'), join(dir, 'o-key'), { seed: 3, blinded: false });
  it('is deterministic for a seed; blinded and open studies hold the same recordings', () => {
    const files = readdirSync(join(dir, 'a')).sort();
    expect(readdirSync(join(dir, 'b')).sort()).toEqual(files);
    for (const f of files)
      expect(readFileSync(join(dir, 'a', f)).equals(readFileSync(join(dir, 'b', f))), f).toBe(true);
    for (const f of files.filter((x) => x.endsWith('.csv')))
      expect(readFileSync(join(dir, 'a', f)).equals(readFileSync(join(dir, 'o', f))), f).toBe(true);
    expect(readFileSync(a.key, 'utf8')).toBe(readFileSync(b.key, 'utf8'));
  });
  it('the blinded manifest holds codes only, the open one real labels; the key is outside the study and reads as one', () => {
    const mb = JSON.parse(readFileSync(a.manifest, 'utf8'));
    const mo = JSON.parse(readFileSync(open.manifest, 'utf8'));
    expect(mb.blinding).toEqual({ coded: true, condition: 'group' });
    expect(mo.blinding).toBeUndefined();
    const groups = (m: { files: { conditions: { group: string } }[] }) =>
      [...new Set(m.files.map((f) => f.conditions.group))].sort();
    expect(groups(mb)).toEqual(['K1', 'K2']);
    expect(groups(mo)).toEqual(['control', 'treated']);
    expect(readdirSync(join(dir, 'a')).some((f) => looksLikeBlindingKey(readFileSync(join(dir, 'a', f), 'utf8')))).toBe(
      false,
    );
    expect(looksLikeBlindingKey(readFileSync(a.key, 'utf8'))).toBe(true);
    expect(Object.values(a.groups).filter((g) => g === 'treated').length).toBe(3);
  });
  it("truth: the treated group's absolute refractory period is the control's / 0.8 (time-scale law)", () => {
    const t = JSON.parse(readFileSync(a.truth, 'utf8'));
    const arp = (g: string) =>
      Object.values(t.preparations as Record<string, { group: string; arpMs: number }>)
        .filter((p) => p.group === g)
        .map((p) => p.arpMs);
    // every fibre recruited at 20 mA: the class's ARP is its thickest fibres', at the class time scale x 0.8
    const c = arp('control'),
      tr = arp('treated');
    for (const x of tr) expect(x * GROUP_DEMO_EFFECT.timeScale).toBeCloseTo(c[0], 6);
    for (const x of c) expect(x).toBeCloseTo(c[0], 9);
  });
});
