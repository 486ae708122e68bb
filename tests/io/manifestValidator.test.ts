// The manifest validator is compiled ahead of time from schema/manifest.schema.json with Ajv's standalone
// code generation (ajv.js.org/standalone.html), so that reading a manifest does not load and run the schema
// compiler (0.3-0.4 s of every command). This test regenerates it and fails when the committed module no
// longer matches the schema; `FASCICLE_WRITE_VALIDATOR=1 npx vitest run tests/io/manifestValidator.test.ts`
// writes it anew. It also checks the precompiled validator against Ajv compiling the schema at run time
// (the reference implementation of JSON Schema draft 7 that the manifest used before) on valid and invalid
// manifests: the same verdicts and the same first error.
import { describe, it, expect } from 'vitest';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { format } from 'prettier';
import Ajv from 'ajv';
import standaloneCode from 'ajv/dist/standalone';
import { MANIFEST_SCHEMA_PATH } from '../../src/io/manifest';
import validateManifest from '../../src/io/manifestValidator';

const root = join(__dirname, '..', '..');
const target = join(root, 'src', 'io', 'manifestValidator.ts');
const OPTIONS = { allErrors: false, strict: false };

async function generate(): Promise<string> {
  const ajv = new Ajv({ ...OPTIONS, code: { source: true } });
  const validate = ajv.compile(JSON.parse(readFileSync(MANIFEST_SCHEMA_PATH, 'utf8')));
  const code = standaloneCode(ajv, validate);
  const head = '"use strict";module.exports = validate10;module.exports.default = validate10;';
  if (!code.startsWith(head)) throw new Error('unexpected standalone code: ' + code.slice(0, 120));
  const body =
    '/* eslint-disable */\n// @ts-nocheck\n' +
    '// Generated from schema/manifest.schema.json by tests/io/manifestValidator.test.ts (Ajv standalone code,\n' +
    '// options allErrors false, strict false): do not edit; regenerate with FASCICLE_WRITE_VALIDATOR=1.\n' +
    code.slice(head.length) +
    '\nexport default validate10;\n';
  const config = JSON.parse(readFileSync(join(root, '.prettierrc.json'), 'utf8'));
  return format(body, { ...config, parser: 'typescript' });
}

describe('precompiled manifest validator', () => {
  it('is the standalone code of the current schema', async () => {
    const want = await generate();
    if (process.env.FASCICLE_WRITE_VALIDATOR === '1') writeFileSync(target, want);
    expect(readFileSync(target, 'utf8')).toBe(want);
  });
  it('gives the verdicts and first errors of Ajv compiling the schema at run time', () => {
    const ajv = new Ajv(OPTIONS);
    const reference = ajv.compile(JSON.parse(readFileSync(MANIFEST_SCHEMA_PATH, 'utf8')));
    const file = { path: 'p1.csv', conditions: { preparation: 'A', temperatureC: 37 } };
    const cases: unknown[] = [
      { fascicleManifest: 1, files: [file] },
      { fascicleManifest: 1, files: [file], defaults: { series: 'distance' } },
      { fascicleManifest: 2, files: [] },
      { fascicleManifest: 1, files: [{ path: 'p1.csv', conditions: { temperatureC: 'warm' } }] },
      { fascicleManifest: 1, files: [{ path: 3 }] },
      { fascicleManifest: 1 },
      { fascicleManifest: 1, files: [file], extra: true },
      { fascicleManifest: 1, files: [{ ...file, sweeps: [{ distanceMm: 20 }, { distanceMm: [1] }] }] },
      [],
      'manifest',
      null,
    ];
    let invalid = 0;
    for (const c of cases) {
      const a = reference(c),
        b = validateManifest(c);
      expect(b).toBe(a);
      if (!a) {
        invalid++;
        const ea = reference.errors![0],
          eb = (validateManifest as unknown as { errors: (typeof ea)[] }).errors[0];
        expect([eb.instancePath, eb.message, eb.params]).toEqual([ea.instancePath, ea.message, ea.params]);
      }
    }
    expect(invalid).toBeGreaterThan(5);
  });
});
