// Blinding (ARRIVE 2.0 essential item 5, Percie du Sert et al. 2020, PLoS Biol 18:e3000410): coded group labels
// during the analysis, the key applied afterwards. The checks are invariants with an outside reference: an analysis
// of coded data, unblinded, must equal the same analysis of the same data labelled openly (a run the coding never
// touched), number for number; a mismatched key is refused naming the code; the key file's SHA-256 is the one
// `sha256sum` prints (coreutils, run here through node:child_process).
import { describe, it, expect, afterAll } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync, readFileSync, mkdirSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  unblind,
  parseBlindingKey,
  readBlindingKey,
  checkBlindingKey,
  looksLikeBlindingKey,
  blindingStep,
  unblindOutputs,
} from '../../src/analysis/blinding';
import { compareGroups } from '../../src/analysis/groups';
import { mixedModel } from '../../src/analysis/mixed';
import { readManifest, readManifestJson } from '../../src/io/manifest';
import { runPipeline, type PipelineOptions } from '../../src/report/pipeline';
import { runPreparation, combineStudy, byPreparation } from '../../src/report/study';
import { makeGroupDemo } from '../../src/model/makeGroupDemo';
import '../../src'; // the whole package: the report layer (methods text) and the registry's sentences
import { InputError, ConfigError } from '../../src/errors';

const dir = mkdtempSync(join(tmpdir(), 'fascicle-blinding-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('parseBlindingKey / readBlindingKey', () => {
  it('reads CSV (header code,label; comma, semicolon or tab; # comments) and JSON keys', () => {
    expect(parseBlindingKey('code,label\nK1,control\nK2,treated\n', 'k.csv').codes).toEqual({
      K1: 'control',
      K2: 'treated',
    });
    const semi = parseBlindingKey('\uFEFF# made at allocation\nCode; group\r\nA ; sham\r\nB;lesion\r\n', 'k.csv');
    expect(semi.codes).toEqual({ A: 'sham', B: 'lesion' });
    expect(semi.condition).toBe('group');
    const j = parseBlindingKey('{"fascicleBlindingKey":1,"condition":"drug","codes":{"X":"saline"}}', 'k.json');
    expect(j).toMatchObject({ codes: { X: 'saline' }, condition: 'drug' });
    expect(looksLikeBlindingKey('code,label\nK1,a\n')).toBe(true);
    expect(looksLikeBlindingKey('{"fascicleBlindingKey": 1, "codes": {}}')).toBe(true);
    expect(looksLikeBlindingKey('time (ms),sweep 1 (uV)\n0,1\n')).toBe(false);
  });
  it('records the SHA-256 of the file as sha256sum prints it', () => {
    const p = join(dir, 'key.csv');
    writeFileSync(p, 'code,label\nK1,control\nK2,treated\n');
    const ref = execFileSync('sha256sum', [p], { encoding: 'utf8' }).split(' ')[0]; // GNU coreutils
    expect(readBlindingKey(p).sha256).toBe(ref);
  });
  it('bad keys are typed errors naming the line or field', () => {
    expect(() => parseBlindingKey('code,label\nK1,a\nK1,b\n', 'k.csv')).toThrow(/line 3.*code "K1" is given again/);
    expect(() => parseBlindingKey('id,label\nK1,a\n', 'k.csv')).toThrow(/k\.csv.*line 1/);
    expect(() => parseBlindingKey('code,label\nK1,a,b\n', 'k.csv')).toThrow(/line 2.*not a code and a label/);
    expect(() => parseBlindingKey('{"codez":{}}', 'k.json')).toThrow(InputError);
    expect(() => parseBlindingKey('{"codes":{"K1":"a"},"conditon":"group"}', 'k.json')).toThrow(
      /did you mean "condition"/,
    );
  });
});

describe('checkBlindingKey', () => {
  const key = (codes: Record<string, string>) => ({ codes, file: 'key.csv', sha256: null });
  it('a key code the study does not use, a study code without a label, and a repeated label name the code', () => {
    expect(() => checkBlindingKey(key({ K1: 'a', K2: 'b', K9: 'c' }), ['K1', 'K2'], 'group')).toThrow(
      /code "K9" is not a code of this study/,
    );
    expect(() => checkBlindingKey(key({ K1: 'a' }), ['K1', 'K2'], 'group')).toThrow(/no label for code "K2"/);
    expect(() => checkBlindingKey(key({ K1: 'a', K2: 'a' }), ['K1', 'K2'], 'group')).toThrow(
      /codes "K1" and "K2" both have the label "a"/,
    );
    expect([...checkBlindingKey(key({ K2: 'b', K1: 'a' }), ['K1', 'K2'], 'group')]).toEqual([
      ['K2', 'b'],
      ['K1', 'a'],
    ]);
  });
});

// rows of six animals in two coded groups, two time points, several values per animal (invented numbers)
const realOf: Record<string, string> = { K1: 'treated', K2: 'control' };
const rowsCoded = Array.from({ length: 6 * 2 * 3 }, (_, i) => {
  const a = Math.floor(i / 6),
    t = Math.floor(i / 3) % 2;
  return {
    class: 'A-alpha/beta',
    preparation: `N${a + 1}`,
    group: a % 2 ? 'K1' : 'K2',
    epoch: t ? 'drug' : 'baseline',
    velocity_m_s: 50 + 3 * (a % 2) + 2 * t + Math.sin(i * 1.7) + 0.5 * a,
  };
});
const rowsReal = rowsCoded.map((r) => ({ ...r, group: realOf[r.group] }));

describe('unblind(result, key) gives what the analysis of openly labelled rows gives', () => {
  const frozen = Object.freeze(rowsCoded.map((r) => Object.freeze({ ...r })));
  it('group comparison: summary, tests (comparison labels, p values) and points', () => {
    const o = { value: 'velocity_m_s', group: 'group', animal: 'preparation', condition: 'epoch' };
    const coded = compareGroups(frozen as never, o);
    const real = compareGroups(rowsReal, o);
    const u = unblind(coded, realOf);
    expect(u.summary).toEqual(real.summary);
    expect(u.tests).toEqual(real.tests);
    expect(u.points).toEqual(real.points);
    expect(u.tests.some((t) => String(t.comparison) === 'control vs treated')).toBe(true); // first seen first
    expect(coded.tests.some((t) => String(t.comparison).includes('K1'))).toBe(true); // the input result unchanged
    expect(u.history.map((h) => h.verb).slice(-2)).toEqual(['unblind', 'compareGroups']);
  });
  it('group comparison ordered by coded levels keeps that order under the real labels', () => {
    const o = { value: 'velocity_m_s', group: 'group', animal: 'preparation', condition: 'epoch' };
    const coded = compareGroups(frozen as never, { ...o, levels: { group: ['K1', 'K2'] } });
    const real = compareGroups(rowsReal, { ...o, levels: { group: ['treated', 'control'] } });
    const u = unblind(coded, realOf);
    expect(u.tests).toEqual(real.tests);
    expect(u.tests.some((t) => String(t.comparison) === 'treated vs control')).toBe(true); // given order, not first seen
  });
  it('mixed model with coded levels (the reference level follows the key)', () => {
    const o = { value: 'velocity_m_s', fixed: ['group', 'epoch'], random: 'preparation' };
    const coded = mixedModel(frozen as never, { ...o, levels: { group: ['K2', 'K1'] } });
    const real = mixedModel(rowsReal, { ...o, levels: { group: ['control', 'treated'] } });
    const u = unblind(coded, realOf);
    expect(u.coefficients).toEqual(real.coefficients);
    expect(u.anova).toEqual(real.anova);
    expect(u.variance).toEqual(real.variance);
    expect(u.coefficients.some((c) => String(c.term).includes('treated vs control'))).toBe(true);
  });
  it('rows: a new array, the input unchanged; a key that does not fit is refused naming the code', () => {
    const u = unblind(frozen, realOf) as typeof rowsReal;
    expect(u).toEqual(rowsReal);
    expect(frozen[0].group).toBe('K2');
    expect(() => unblind(frozen, { K1: 'treated' })).toThrow(/no label for code "K2"/);
    expect(() => unblind(frozen, { K1: 'treated', K2: 'control', K3: 'sham' })).toThrow(/code "K3"/);
  });
});

describe('a blinded study: readManifest, runPipeline and unblind on forward-model data', () => {
  const blind = makeGroupDemo(join(dir, 'study'), join(dir, 'key'), { seed: 5 });
  const open = makeGroupDemo(join(dir, 'open'), join(dir, 'open-key'), { seed: 5, blinded: false });
  it('the manifest marks the study blinded; the sweeps carry the codes; the history records it', () => {
    const set = readManifest(blind.manifest);
    expect([...new Set(set.conditions.map((c) => c.group))].sort()).toEqual(['K1', 'K2']);
    const b = blindingStep(set.history)!;
    expect(b.options).toEqual({ state: 'blinded', condition: 'group', codes: ['K1', 'K2'] });
    expect(blindingStep(readManifest(open.manifest).history)).toBeNull();
  });
  it("the API's methods text says the analysis was blinded (the registry words the blinding step)", () => {
    const text = readManifest(blind.manifest).components().methods();
    expect(text).toMatch(/blind/i);
    expect(readManifest(open.manifest).components().methods()).not.toMatch(/blind/i);
  });
  it('unblind(runPipeline(coded)) equals runPipeline(open labels): components, groups, mixed model, flags', () => {
    const options = readManifestJson(blind.manifest).manifest.analysis as PipelineOptions;
    const coded = runPipeline(readManifest(blind.manifest), options);
    const real = runPipeline(readManifest(open.manifest), options);
    const key = readBlindingKey(blind.key);
    const u = unblind(coded, key);
    const plain = (x: unknown) => JSON.parse(JSON.stringify(x));
    // the file condition names each file as the manifest does; both studies use the same names
    expect(plain(u.components.rows)).toEqual(plain(real.components.rows));
    expect(plain(u.groups!.tables())).toEqual(plain(real.groups!.tables()));
    expect(plain(u.mixed!.tables())).toEqual(plain(real.mixed!.tables()));
    expect(plain(u.flags)).toEqual(plain(real.flags));
    expect(plain(u.pairedPulse!.tables())).toEqual(plain(real.pairedPulse!.tables()));
    const step = u.history[u.history.length - 1];
    expect(step.verb).toBe('unblind');
    expect(step.options).toMatchObject({ keyFile: 'key.csv', keySha256: key.sha256, condition: 'group' });
    expect(Date.parse(String(step.options.appliedAt))).toBeGreaterThan(Date.now() - 600_000);
    expect(coded.groups!.summary.map((r) => r.group).sort()).toEqual(['K1', 'K2']); // the coded result unchanged
  });
  it('unblind(combined study) and unblindOutputs + combineStudy equal the open-label study, table for table', () => {
    const options = readManifestJson(blind.manifest).manifest.analysis as PipelineOptions;
    const study = (path: string) => {
      const parts = byPreparation(readManifest(path)).map((p) => runPreparation(p.set, options));
      return { parts, study: combineStudy(parts, options) };
    };
    const coded = study(blind.manifest),
      real = study(open.manifest);
    const plain = (x: unknown) => JSON.parse(JSON.stringify(x));
    const u = unblind(coded.study, blind.key);
    expect(Object.keys(u.tables).sort()).toEqual(Object.keys(real.study.tables).sort());
    for (const k of Object.keys(real.study.tables))
      expect(plain((u.tables as Record<string, unknown>)[k]), k).toEqual(
        plain((real.study.tables as Record<string, unknown>)[k]),
      );
    const o = unblindOutputs(coded.parts, blind.key);
    const again = combineStudy(o.outputs, options);
    expect(plain(again.tables)).toEqual(plain(real.study.tables));
    expect(o.step.verb).toBe('unblind');
    expect(u.history[u.history.length - 1].verb).toBe('unblind');
  });
  it('a key inside the study folder is refused (ConfigError naming it); outside it is not', () => {
    const inside = join(dir, 'study', 'allocation.csv');
    writeFileSync(inside, readFileSync(blind.key));
    try {
      expect(() => readManifest(blind.manifest)).toThrow(ConfigError);
      expect(() => readManifest(blind.manifest)).toThrow(/blinding key lies in the study folder: allocation\.csv/);
    } finally {
      rmSync(inside);
    }
    expect(() => readManifest(blind.manifest)).not.toThrow();
  });
  it('a blinding section whose condition no file has is a configuration error naming the field', () => {
    mkdirSync(join(dir, 'bad'), { recursive: true });
    const m = JSON.parse(readFileSync(blind.manifest, 'utf8'));
    m.blinding = { coded: true, condition: 'arm' };
    m.files = m.files.map((f: { path: string }) => ({ ...f, path: join('..', 'study', f.path) }));
    const p = join(dir, 'bad', 'manifest.json');
    writeFileSync(p, JSON.stringify(m));
    expect(() => readManifestJson(p)).toThrow(/\/blinding\/condition.*no file or sweep has a "arm" condition/);
    m.blinding = { coded: true, conditon: 'group' };
    writeFileSync(p, JSON.stringify(m));
    expect(() => readManifestJson(p)).toThrow(/did you mean "condition"/);
  });
});
