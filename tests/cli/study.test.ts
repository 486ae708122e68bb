// The study-design features through `fascicle run` (dist/cli/main.js, built by `npx tsc -p tsconfig.json`) on a
// forward-model two-group study (src/model/makeGroupDemo.ts) with a train file added: sweep quality control with
// rejection, paired-pulse recovery, trains, group statistics, the mixed model, and blinding with `fascicle unblind`.
// Truth: the sweep the demo corrupts, and the fibres' refractory recovery and train responses from direct cable
// simulations (src/model/pulses.ts, src/model/refractory.ts; Hodgkin & Huxley 1952 membrane). Blinding (ARRIVE 2.0
// item 5, Percie du Sert et al. 2020): the unblinded bundle must equal, table for table, the bundle of the same data
// labelled openly; the key's SHA-256 is checked against `sha256sum` (GNU coreutils).
import { describe, it, expect, afterAll } from 'vitest';
import { spawnSync, execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync, readFileSync, existsSync, mkdirSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createHash } from 'node:crypto';
import { makeGroupDemo } from '../../src/model/makeGroupDemo';
import { rodentSciatic, drawFibers, type NerveModel } from '../../src/model/nerve';
import { simulateTrain, trainTruth } from '../../src/model/pulses';
import { writeWide } from '../../src/io/write';

const cli = join(__dirname, '..', '..', 'dist', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'fascicle-study-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const run = (...args: string[]) => spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });
const tableOf = (b: string, name: string) =>
  JSON.parse(readFileSync(join(b, 'tables', `${name}.json`), 'utf8')) as Record<string, unknown>[];

const blind = makeGroupDemo(join(dir, 'study'), join(dir, 'key'), { seed: 11 });
const open = makeGroupDemo(join(dir, 'open'), join(dir, 'open-key'), { seed: 11, blinded: false });
const truth = JSON.parse(readFileSync(blind.truth, 'utf8'));

// a train file for N1 (a model of its own; 400 and 1000 Hz, 5 pulses), added to both manifests
const m0 = rodentSciatic();
const trainModel: NerveModel = { ...m0, populations: [{ ...m0.populations[0], count: 200 }] };
const rc = { intensity: 20, distanceMm: 20, temperatureC: 37, concentration: 0, pulseWidthMs: 0.05 };
const tr = simulateTrain({
  model: trainModel,
  seed: 3,
  grid: { fs: 50000, t0Ms: -3, nSamples: 900 },
  base: rc,
  frequenciesHz: [400, 1000],
  pulses: 5,
  nuisance: { noiseUv: 8, artifactUv: 3000, artifactHalfMa: 2, artifactTauMs: 0.06, pulseWidthMs: 0.05 },
});
for (const [d, codes] of [
  [join(dir, 'study'), true],
  [join(dir, 'open'), false],
] as const) {
  writeWide(join(d, 'N1-train.csv'), tr);
  const m = JSON.parse(readFileSync(join(d, 'manifest.json'), 'utf8'));
  m.files.push({
    path: 'N1-train.csv',
    format: 'delimited',
    conditions: {
      preparation: 'N1',
      group: codes ? truth.preparations.N1.code : truth.preparations.N1.group,
      series: 'train',
      distanceMm: 20,
      temperatureC: 37,
      concentration: 0,
      intensity: 20,
      intensityUnit: 'mA',
      pulseWidthMs: 0.05,
    },
    sweeps: tr.conditions.map((c) => ({ trainHz: c.trainHz, trainPulses: c.trainPulses })),
  });
  writeFileSync(join(d, 'manifest.json'), JSON.stringify(m, null, 1));
}
const trainTruths = [400, 1000].map((hz) => trainTruth(trainModel, drawFibers(trainModel, 3), rc, hz, 5)[0]);

/** Every file under a folder with its SHA-256 (to prove nothing there changed). */
function snapshot(d: string): Record<string, string> {
  const out: Record<string, string> = {};
  const walk = (p: string, rel: string) => {
    for (const e of readdirSync(p, { withFileTypes: true })) {
      const q = join(p, e.name);
      if (e.isDirectory()) walk(q, `${rel}${e.name}/`);
      else out[rel + e.name] = createHash('sha256').update(readFileSync(q)).digest('hex');
    }
  };
  walk(d, '');
  return out;
}

describe('fascicle run on a blinded two-group study: the five study-design features', () => {
  const b = join(dir, 'bundle-blinded');
  const r = run('run', blind.manifest, '--out', b, '--quiet');
  it('exits 0, says the run is blinded, and writes the tables and figures of every feature', () => {
    expect(r.stderr).not.toMatch(/error/i);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/blinded: the "group" labels are codes \(K1, K2\)/);
    for (const t of ['sweep_qc', 'sweeps_removed', 'paired_pulse_summary', 'train_summary', 'group_tests'])
      expect(existsSync(join(b, 'tables', `${t}.json`)), t).toBe(true);
    for (const t of ['mixed_coefficients', 'mixed_anova', 'mixed_variance'])
      expect(existsSync(join(b, 'tables', `${t}.json`)), t).toBe(true);
    for (const f of ['paired-pulse', 'train']) expect(existsSync(join(b, 'figures', `${f}.html`)), f).toBe(true);
    const prov = JSON.parse(readFileSync(join(b, 'provenance.json'), 'utf8'));
    const step = prov.steps.find((s: { verb: string }) => s.verb === 'blinding');
    expect(step.options).toEqual({ state: 'blinded', condition: 'group', codes: ['K1', 'K2'] });
    // the codes are the labels everywhere
    const labels = new Set(tableOf(b, 'group_summary').map((q) => q.group));
    expect([...labels].sort()).toEqual(['K1', 'K2']);
    expect(readFileSync(join(b, 'methods.txt'), 'utf8')).toMatch(
      /the group of every sweep was given as one of 2 codes/,
    );
    expect(readFileSync(join(b, 'report.html'), 'utf8')).not.toMatch(/>(control|treated)<|group=(control|treated)/);
  });
  it('QC: the sweep held on the rail is the one removed, and the methods text says so', () => {
    const removed = tableOf(b, 'sweeps_removed').map((q) => [q.preparation, q.file, q.file_sweep]);
    expect(removed).toEqual([['N1', 'N1-distance.csv', 2]]); // truth: makeGroupDemo corrupts N1's distance sweep 2
    expect(readFileSync(join(b, 'methods.txt'), 'utf8')).toMatch(/excluded: 1 from N1 \(1 saturated/);
  });
  it('paired pulse: per preparation, ARP within 0.1 ms and R50 within 10% of the simulated fibres', () => {
    for (const s of tableOf(b, 'paired_pulse_summary')) {
      const t = truth.preparations[s.preparation as string];
      console.log(
        `CLI ${s.preparation} (${t.group}): ARP ${s.arp_ms}-${s.arp_next_ms} vs ${t.arpMs};`,
        'R50',
        s.r50_ms,
        'vs',
        t.r50Ms,
      );
      expect(Math.abs((s.arp_ms as number) - t.arpMs)).toBeLessThanOrEqual(0.1);
      expect(Math.abs((s.r50_ms as number) - t.r50Ms) / t.r50Ms).toBeLessThan(0.1);
    }
  });
  it('trains: the failing pulse and the latency increase at the last pulse match the simulated fibres', () => {
    for (const s of tableOf(b, 'train_summary')) {
      const t = trainTruths.find((q) => q.hz === s.train_hz)!;
      const last = t.centroidShiftMs[t.centroidShiftMs.length - 1]!;
      console.log(`CLI train ${s.train_hz} Hz: last-pulse latency increase ${s.last_latency_increase_ms} vs ${last}`);
      expect(s.failure_pulse).toBe(t.failurePulse);
      if (last > 0.02) expect(Math.abs((s.last_latency_increase_ms as number) - last) / last).toBeLessThan(0.2);
    }
  });
  it('groups and the mixed model: one point per preparation; the treated animals recover later', () => {
    const pts = tableOf(b, 'group_points');
    expect(pts.length).toBe(6);
    for (const s of tableOf(b, 'group_summary')) {
      const mine = pts.filter((q) => q.group === s.group).map((q) => q.velocity_m_s as number);
      expect(s.n_animals).toBe(3);
      expect(s.mean as number).toBeCloseTo(mine.reduce((x, y) => x + y, 0) / mine.length, 12);
    }
    expect(tableOf(b, 'group_tests').find((q) => q.test === 'Welch t')!.status).toBe('ok');
    const fit = tableOf(b, 'mixed_variance').find((q) => q.series === 'distance')!;
    expect(fit.status).toBe('ok');
    expect(fit.n_animals).toBe(6);
    // truth: recovery x 1.25 in the treated group (HH time scale x 0.8), far beyond the spread between animals
    const r50 = (label: string) =>
      tableOf(b, 'paired_pulse_summary')
        .filter((q) => truth.preparations[q.preparation as string].group === label)
        .map((q) => q.r50_ms as number);
    expect(Math.min(...r50('treated'))).toBeGreaterThan(Math.max(...r50('control')));
  });
  describe('fascicle unblind', () => {
    const before = snapshot(b);
    const keyBefore = readFileSync(blind.key);
    const real = join(dir, 'bundle-real');
    const u = run('unblind', b, '--key', blind.key, '--out', real, '--quiet');
    const o = join(dir, 'bundle-open');
    const ro = run('run', open.manifest, '--out', o, '--quiet');
    it('writes a new bundle equal, table for table, to the bundle of the openly labelled study', () => {
      expect(u.stderr).not.toMatch(/error/i);
      expect(u.status).toBe(0);
      expect(ro.status).toBe(0);
      expect(u.stdout).toMatch(/unblinded 2 "group" codes/);
      const names = readdirSync(join(o, 'tables')).sort();
      expect(readdirSync(join(real, 'tables')).sort()).toEqual(names);
      for (const f of names)
        expect(readFileSync(join(real, 'tables', f), 'utf8'), f).toBe(readFileSync(join(o, 'tables', f), 'utf8'));
      // the methods text: the open run's, plus the blinding sentences and their reference (ARRIVE 2.0)
      const m = readFileSync(join(real, 'methods.txt'), 'utf8');
      expect(m).toMatch(/The analysis was blinded \(ARRIVE 2\.0 item 5; Percie du Sert et al\. 2020\)/);
      expect(m).toMatch(/The blinding key was applied after the analysis/);
      const plain = m
        .replace(/ The analysis was blinded [^.]*\([^)]*\)[^.]*\./, '')
        .replace(/ The blinding key was applied [^.]*\([^)]*\)[^.]*\./, '')
        .replace(/\nPercie du Sert N[^\n]*/, '');
      expect(plain).toBe(readFileSync(join(o, 'methods.txt'), 'utf8'));
      // figures: the same but for each page's random element id
      const noId = (s: string) => s.replace(/fascicle-fig-[a-z0-9]+-/g, 'ID-');
      for (const f of readdirSync(join(o, 'figures')).filter((x) => x.endsWith('.html')))
        expect(noId(readFileSync(join(real, 'figures', f), 'utf8')), f).toBe(
          noId(readFileSync(join(o, 'figures', f), 'utf8')),
        );
      expect(readFileSync(join(real, 'figures', 'groups-velocity_m_s-A-alpha_beta.html'), 'utf8')).toMatch(/treated/);
    });
    it('the provenance records when the key was applied, its file name and SHA-256; the input bundle and key are untouched', () => {
      const prov = JSON.parse(readFileSync(join(real, 'provenance.json'), 'utf8'));
      const step = prov.steps[prov.steps.length - 1];
      expect(step.verb).toBe('unblind');
      const sha = execFileSync('sha256sum', [blind.key], { encoding: 'utf8' }).split(' ')[0];
      expect(step.options).toMatchObject({
        keyFile: 'key.csv',
        keySha256: sha,
        condition: 'group',
        mapping: blind.codes,
      });
      expect(Math.abs(Date.parse(step.options.appliedAt) - Date.now())).toBeLessThan(600_000);
      expect(snapshot(b)).toEqual(before);
      expect(readFileSync(blind.key).equals(keyBefore)).toBe(true);
    });
    it('rerun of the unblinded bundle needs the same key, then reproduces it', () => {
      const no = run('rerun', real);
      expect(no.status).toBe(2);
      expect(no.stderr).toMatch(/unblinded with the key key\.csv.*--key/);
      const yes = run('rerun', real, '--key', blind.key);
      expect(yes.stderr).toBe('');
      expect(yes.status).toBe(0);
    });
    it('refusals: an existing folder with other files, the input bundle itself, a bundle already unblinded or never blinded', () => {
      const other = join(dir, 'mine');
      mkdirSync(other);
      writeFileSync(join(other, 'notes.txt'), 'my notes');
      const a = run('unblind', b, '--key', blind.key, '--out', other, '--quiet');
      expect(a.status).toBe(2);
      expect(a.stderr).toMatch(/not empty and is not a bundle written by fascicle/);
      expect(readFileSync(join(other, 'notes.txt'), 'utf8')).toBe('my notes');
      const self = run('unblind', b, '--key', blind.key, '--out', b, '--quiet');
      expect(self.status).toBe(2);
      expect(self.stderr).toMatch(/is an input of this analysis/);
      expect(snapshot(b)).toEqual(before);
      const twice = run('unblind', real, '--key', blind.key, '--out', join(dir, 'again'), '--quiet');
      expect(twice.status).toBe(3);
      expect(twice.stderr).toMatch(/already unblinded/);
      const never = run('unblind', o, '--key', blind.key, '--out', join(dir, 'again'), '--quiet');
      expect(never.status).toBe(3);
      expect(never.stderr).toMatch(/no "blinding" step/);
    });
    it('a key that does not fit names the code (exit 3); a key inside the study is refused by run (exit 2)', () => {
      const bad = (name: string, text: string) => {
        const p = join(dir, 'keys', name);
        mkdirSync(join(dir, 'keys'), { recursive: true });
        writeFileSync(p, text);
        return run('unblind', b, '--key', p, '--out', join(dir, `out-${name}`), '--quiet');
      };
      const unknown = bad('unknown.csv', 'code,label\nK1,a\nK2,b\nK7,c\n');
      expect(unknown.status).toBe(3);
      expect(unknown.stderr).toMatch(/code "K7" is not a code of this study/);
      const missing = bad('missing.csv', 'code,label\nK1,a\n');
      expect(missing.status).toBe(3);
      expect(missing.stderr).toMatch(/no label for code "K2"/);
      const dup = bad('dup.json', '{"fascicleBlindingKey":1,"codes":{"K1":"same","K2":"same"}}');
      expect(dup.status).toBe(3);
      expect(dup.stderr).toMatch(/codes "K1" and "K2" both have the label "same"/);
      expect(existsSync(join(dir, 'out-dup.json'))).toBe(false);
      const inside = join(dir, 'study', 'allocation.csv');
      writeFileSync(inside, keyBefore);
      try {
        const again = run('run', blind.manifest, '--out', join(dir, 'bundle-2'), '--quiet');
        expect(again.status).toBe(2);
        expect(again.stderr).toMatch(/blinding key lies in the study folder: allocation\.csv/);
      } finally {
        rmSync(inside);
      }
    });
  });
});
