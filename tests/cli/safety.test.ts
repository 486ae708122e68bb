// The command line never deletes or overwrites what it did not write, says what went wrong
// with a write and where, and reruns a moved study. Checks are against the bytes on disk
// (SHA-256 of every file before and after) and the documented exit codes of src/cli/main.ts.
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import {
  cpSync,
  mkdirSync,
  mkdtempSync,
  readFileSync,
  writeFileSync,
  existsSync,
  readdirSync,
  statSync,
  rmSync,
  unlinkSync,
} from 'node:fs';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import {
  writeBundle,
  setBeforeWrite,
  csvCell,
  toCsv,
  addToBundle,
  BUNDLE_MARKER,
  TEMP_MARKER,
} from '../../src/report/bundle';
import { OutputError } from '../../src/errors';

const root = join(__dirname, '..', '..');
const cliPath = join(root, 'dist', 'cli', 'main.js');
const run = (args: string[], opts: { cwd?: string; env?: Record<string, string> } = {}) =>
  spawnSync(process.execPath, [cliPath, ...args], {
    encoding: 'utf8',
    cwd: opts.cwd,
    env: { ...process.env, ...(opts.env ?? {}) },
  });
const work = mkdtempSync(join(tmpdir(), 'fascicle-safety-'));
const prov = { package: 'fascicle' as const, version: '0', node: '', inputs: [], steps: [] };

/** SHA-256 of every file under dir (relative path -> hash), and the folders. */
function snapshot(dir: string): Record<string, string> {
  const out: Record<string, string> = {};
  const walk = (d: string) => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) {
        out[relative(dir, p) + '/'] = 'dir';
        walk(p);
      } else out[relative(dir, p)] = createHash('sha256').update(readFileSync(p)).digest('hex');
    }
  };
  walk(dir);
  return out;
}

/** A one- or two-preparation copy of the demo study (fast to analyse). */
function study(name: string, preps: string[]): string {
  const dir = join(work, name);
  mkdirSync(dir, { recursive: true });
  const m = JSON.parse(readFileSync(join(root, 'data-demo', 'manifest.json'), 'utf8'));
  m.files = m.files.filter((f: { conditions: { preparation: string } }) => preps.includes(f.conditions.preparation));
  for (const f of readdirSync(join(root, 'data-demo')))
    if (preps.some((p) => f.startsWith(p + '-'))) cpSync(join(root, 'data-demo', f), join(dir, f));
  writeFileSync(join(dir, 'manifest.json'), JSON.stringify(m, null, 1));
  return join(dir, 'manifest.json');
}

let m1: string;
beforeAll(() => {
  m1 = study('s1', ['R1']);
});
afterAll(() => rmSync(work, { recursive: true, force: true }));

describe('fascicle run --out never loses files it did not write', () => {
  it('--out at a user folder, at the study folder and at a file leaves every byte there (exit 2, says what to do)', () => {
    const user = join(work, 'user');
    mkdirSync(join(user, 'sub'), { recursive: true });
    writeFileSync(join(user, 'thesis.docx'), 'chapter 1');
    writeFileSync(join(user, 'sub', 'notes.txt'), 'keep me');
    const file = join(work, 'results.csv');
    writeFileSync(file, 'a,b\n1,2\n');
    const studyDir = join(work, 's1');
    const before = {
      user: snapshot(user),
      study: snapshot(studyDir),
      file: readFileSync(file, 'utf8'),
      top: readdirSync(work).sort(),
    };
    const cases: [string, RegExp][] = [
      [user, /not empty and is not a bundle written by fascicle.*new or empty folder/],
      [studyDir, /is an input of this analysis/],
      [work, /contains an input of this analysis/],
      [file, /is a file, not a folder/],
      [join(studyDir, 'R1-distance.csv'), /is an input of this analysis/],
    ];
    for (const [out, msg] of cases) {
      const r = run(['run', m1, '--out', out, '--quiet', '--no-figures']);
      expect(r.status, `${out}: ${r.stderr}`).toBe(2);
      expect(r.stderr).toMatch(msg);
      expect(r.stderr).not.toMatch(/unexpected|at .*\.js:\d+/);
    }
    expect(snapshot(user)).toEqual(before.user);
    expect(snapshot(studyDir)).toEqual(before.study);
    expect(readFileSync(file, 'utf8')).toBe(before.file);
    expect(readdirSync(work).sort()).toEqual(before.top);
  });

  it('the library writer refuses the same places (OutputError, refused) and replaces only its own bundles', () => {
    const user = join(work, 'user2');
    mkdirSync(user);
    writeFileSync(join(user, 'x.txt'), 'mine');
    const e = (() => {
      try {
        writeBundle(user, { tables: {}, methods: 'm', provenance: prov });
      } catch (x) {
        return x;
      }
    })();
    expect(e).toBeInstanceOf(OutputError);
    expect((e as OutputError).refused).toBe(true);
    expect(readFileSync(join(user, 'x.txt'), 'utf8')).toBe('mine');
    // an empty folder is used; a bundle fascicle wrote is replaced and carries the marker
    const empty = join(work, 'empty');
    mkdirSync(empty);
    writeBundle(empty, { tables: { a: [{ x: 1 }] }, methods: 'one', provenance: prov });
    expect(JSON.parse(readFileSync(join(empty, BUNDLE_MARKER), 'utf8')).files).toContain('tables/a.csv');
    writeBundle(empty, { tables: { b: [{ x: 2 }] }, methods: 'two', provenance: prov });
    expect(readFileSync(join(empty, 'methods.txt'), 'utf8')).toBe('two');
    expect(existsSync(join(empty, 'tables', 'a.csv'))).toBe(false);
    expect(existsSync(join(empty, TEMP_MARKER))).toBe(false);
    // an input inside a bundle is refused as an input (and a file the user added is refused in any case, below)
    writeFileSync(join(empty, 'data.csv'), 'time (ms),s (uV)\n0,1\n1,2\n');
    expect(() =>
      writeBundle(empty, { tables: {}, methods: 'three', provenance: prov }, { inputs: [join(empty, 'data.csv')] }),
    ).toThrow(/contains an input/);
    expect(readFileSync(join(empty, 'methods.txt'), 'utf8')).toBe('two');
  });

  it('the folder it suggests instead of an input lies outside the study (beside the study folder)', () => {
    const studyDir = join(work, 'sugg');
    mkdirSync(join(studyDir, 'raw'), { recursive: true });
    const file = join(studyDir, 'raw', 'a.csv');
    writeFileSync(file, 'time (ms),s (uV)\n0,1\n1,2\n');
    const inputs = [join(studyDir, 'manifest.json'), studyDir, file];
    for (const out of [file, join(studyDir, 'raw'), studyDir]) {
      let msg = '';
      try {
        writeBundle(out, { tables: {}, methods: 'm', provenance: prov }, { inputs });
      } catch (e) {
        msg = (e as Error).message;
      }
      expect(msg, out).toMatch(/give --out a new folder outside the study, e\.g\. (\S+)$/);
      const suggested = /e\.g\. (\S+)$/.exec(msg)![1];
      expect(suggested).toBe(join(work, 'sugg-bundle'));
    }
    expect(readFileSync(file, 'utf8')).toBe('time (ms),s (uV)\n0,1\n1,2\n');
  });

  it('a bundle holding a file the user added or changed, or a copied marker in a user folder, is refused and kept', () => {
    // the marker lists every file with its SHA-256; anything else, or a listed file that changed, is the user's
    const b = join(work, 'b-user');
    writeBundle(b, { tables: { a: [{ x: 1 }] }, methods: 'one', provenance: prov });
    const marker = JSON.parse(readFileSync(join(b, BUNDLE_MARKER), 'utf8'));
    expect(marker.sha256['tables/a.csv']).toBe(
      createHash('sha256')
        .update(readFileSync(join(b, 'tables/a.csv')))
        .digest('hex'),
    );
    writeBundle(b, { tables: { a: [{ x: 2 }] }, methods: 'two', provenance: prov }); // its own bundle: replaced
    expect(readFileSync(join(b, 'methods.txt'), 'utf8')).toBe('two');
    const write = () => writeBundle(b, { tables: {}, methods: 'three', provenance: prov });
    // a note added beside the tables
    writeFileSync(join(b, 'tables', 'my-notes.txt'), 'mine');
    expect(write).toThrow(/holds files fascicle did not write or that changed since \(tables\/my-notes\.txt\)/);
    unlinkSync(join(b, 'tables', 'my-notes.txt'));
    // a table edited and saved in a spreadsheet
    writeFileSync(join(b, 'tables', 'a.csv'), 'x\n2\nmy edit\n');
    expect(write).toThrow(/tables\/a\.csv \(changed\)/);
    expect(readFileSync(join(b, 'tables', 'a.csv'), 'utf8')).toBe('x\n2\nmy edit\n');
    expect(readFileSync(join(b, 'methods.txt'), 'utf8')).toBe('two');
    // the marker copied into a user folder does not make the folder fascicle's
    const user = join(work, 'user-marker');
    mkdirSync(user);
    writeFileSync(join(user, 'thesis.docx'), 'chapter 1');
    cpSync(join(b, BUNDLE_MARKER), join(user, BUNDLE_MARKER));
    expect(() => writeBundle(user, { tables: {}, methods: 'm', provenance: prov })).toThrow(/thesis\.docx/);
    writeFileSync(join(user, BUNDLE_MARKER), 'not json');
    expect(() => writeBundle(user, { tables: {}, methods: 'm', provenance: prov })).toThrow(/unreadable/);
    expect(readFileSync(join(user, 'thesis.docx'), 'utf8')).toBe('chapter 1');
    // the command line says so with exit 2 and leaves the bundle as it was
    const out = join(work, 'b-user-cli');
    expect(run(['run', m1, '--out', out, '--quiet', '--no-figures']).status).toBe(0);
    writeFileSync(join(out, 'my-notes.txt'), 'mine');
    const before = snapshot(out);
    const r = run(['run', m1, '--out', out, '--quiet', '--no-figures']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/my-notes\.txt/);
    expect(snapshot(out)).toEqual(before);
  });

  it('a file fascicle wrote into its bundle afterwards (the --nwb file inside --out) is recorded, so the next run replaces it', () => {
    const b = join(work, 'b-nwb');
    writeBundle(b, { tables: { a: [{ x: 1 }] }, methods: 'one', provenance: prov });
    writeFileSync(join(b, 'study.nwb'), 'written by fascicle after the bundle');
    addToBundle(b, join(b, 'study.nwb'));
    addToBundle(b, join(work, 'elsewhere.nwb')); // outside the bundle: nothing recorded
    const marker = JSON.parse(readFileSync(join(b, BUNDLE_MARKER), 'utf8'));
    expect(marker.files).toContain('study.nwb');
    expect(marker.files).not.toContain('elsewhere.nwb');
    writeBundle(b, { tables: { a: [{ x: 2 }] }, methods: 'two', provenance: prov });
    expect(readFileSync(join(b, 'methods.txt'), 'utf8')).toBe('two');
    // recorded, then changed by someone else: refused
    writeFileSync(join(b, 'study.nwb'), 'v1');
    addToBundle(b, join(b, 'study.nwb'));
    writeFileSync(join(b, 'study.nwb'), 'v2, edited');
    expect(() => writeBundle(b, { tables: {}, methods: 'three', provenance: prov })).toThrow(/study\.nwb \(changed\)/);
  });

  it('a bundle of an earlier version (no marker, only bundle files, a fascicle provenance) is replaced; one with a stranger file is not', () => {
    const legacy = join(work, 'legacy');
    mkdirSync(join(legacy, 'tables'), { recursive: true });
    writeFileSync(join(legacy, 'provenance.json'), JSON.stringify(prov));
    writeFileSync(join(legacy, 'methods.txt'), 'old');
    writeFileSync(join(legacy, 'tables', 'a.csv'), 'x\n1\n');
    writeBundle(legacy, { tables: {}, methods: 'new', provenance: prov });
    expect(readFileSync(join(legacy, 'methods.txt'), 'utf8')).toBe('new');
    const mixed = join(work, 'mixed');
    mkdirSync(mixed);
    writeFileSync(join(mixed, 'provenance.json'), JSON.stringify(prov));
    writeFileSync(join(mixed, 'my-analysis.R'), 'x <- 1');
    expect(() => writeBundle(mixed, { tables: {}, methods: 'new', provenance: prov })).toThrow(
      /not a bundle written by fascicle/,
    );
    expect(readFileSync(join(mixed, 'my-analysis.R'), 'utf8')).toBe('x <- 1');
  });

  it('hidden temporary folders of an interrupted run are removed on the next run, only those carrying the temp marker', () => {
    const out = join(work, 'b-left');
    const dead = 2 ** 22 + 12345; // above the default pid_max of 2^22 on Linux: no such process
    const marked = join(work, `.b-left.tmp-${dead}-abc-123456`);
    const marked2 = join(work, `.b-left.old-${dead}-abc-123456`);
    const unmarked = join(work, `.b-left.tmp-${dead}-abc-654321`);
    for (const d of [marked, marked2, unmarked]) {
      mkdirSync(join(d, 'tables'), { recursive: true });
      writeFileSync(join(d, 'tables', 'a.csv'), 'x\n');
    }
    writeFileSync(join(marked, TEMP_MARKER), '');
    writeFileSync(join(marked2, TEMP_MARKER), '');
    writeBundle(out, { tables: {}, methods: 'm', provenance: prov });
    expect(existsSync(marked)).toBe(false);
    expect(existsSync(marked2)).toBe(false);
    expect(readFileSync(join(unmarked, 'tables', 'a.csv'), 'utf8')).toBe('x\n');
  });

  it('killed at random moments (seeded), the output is absent or complete, and the next run leaves no leftovers', async () => {
    const out = join(work, 'killed');
    // the time of one whole run, to spread the kills over it
    const t0 = Date.now();
    expect(run(['run', m1, '--out', join(work, 'timing'), '--quiet']).status).toBe(0);
    const T = Date.now() - t0;
    let seed = 20261202;
    const rand = () => (seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
    const outcomes = { absent: 0, complete: 0, old: 0, leftovers: 0 };
    for (let k = 0; k < 10; k++) {
      // half the runs start with no bundle there, half replace one (an old bundle fascicle wrote)
      rmSync(out, { recursive: true, force: true });
      if (k % 2 === 1) writeBundle(out, { tables: { old: [{ x: 1 }] }, methods: 'old bundle', provenance: prov });
      const delay = Math.round(T * (0.2 + 0.8 * rand()));
      const child = spawn(process.execPath, [cliPath, 'run', m1, '--out', out, '--quiet'], { stdio: 'ignore' });
      // even runs: killed at a random moment of the whole run; odd runs: a random 0-300 ms after
      // the temporary folder appears (the write and swap, where a kill can do harm)
      const late = k % 2 === 1 ? 300 * rand() : -1;
      await new Promise<void>((res) => {
        let timer: NodeJS.Timeout | undefined = late < 0 ? setTimeout(() => child.kill('SIGKILL'), delay) : undefined;
        const poll =
          late < 0
            ? undefined
            : setInterval(() => {
                if (!timer && readdirSync(work).some((f) => f.startsWith('.killed.tmp-')))
                  timer = setTimeout(() => child.kill('SIGKILL'), late);
              }, 1);
        child.on('exit', () => {
          clearTimeout(timer);
          clearInterval(poll);
          res();
        });
      });
      if (readdirSync(work).some((f) => f.startsWith('.killed.'))) outcomes.leftovers++;
      if (!existsSync(out)) outcomes.absent++;
      else {
        // complete: the marker (written last) lists every file, and every listed file is there
        const listed = JSON.parse(readFileSync(join(out, BUNDLE_MARKER), 'utf8')).files as string[];
        if (listed.includes('tables/old.csv')) {
          // the old bundle, untouched
          expect(readFileSync(join(out, 'methods.txt'), 'utf8')).toBe('old bundle');
          expect(existsSync(join(out, 'tables', 'components.csv'))).toBe(false);
          outcomes.old++;
          continue;
        }
        expect(listed).toEqual(
          expect.arrayContaining(['methods.txt', 'provenance.json', 'tables/components.csv', 'tables/velocity.json']),
        );
        for (const f of listed) expect(statSync(join(out, f)).isFile(), f).toBe(true);
        JSON.parse(readFileSync(join(out, 'tables', 'components.json'), 'utf8'));
        outcomes.complete++;
      }
    }
    console.log(
      `killed runs: ${outcomes.absent} left no output, ${outcomes.complete} a complete new bundle, ${outcomes.old} the old ` +
        `bundle untouched, ${outcomes.leftovers} left a hidden temporary folder (of 10)`,
    );
    expect(outcomes.absent + outcomes.complete + outcomes.old).toBe(10);
    const r = run(['run', m1, '--out', out, '--quiet']);
    expect(r.status, r.stderr).toBe(0);
    expect(readdirSync(work).filter((f) => f.startsWith('.killed.'))).toEqual([]);
    expect(existsSync(join(out, TEMP_MARKER))).toBe(false);
  }, 300_000);
});

describe('a failed write says what happened and where', () => {
  it('a full disk (ENOSPC) is named with the file being written; the old bundle stays', () => {
    const dir = join(work, 'full');
    writeBundle(dir, { tables: { a: [{ x: 1 }] }, methods: 'old', provenance: prov });
    setBeforeWrite((p) => {
      if (p.endsWith('b.csv'))
        throw Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' });
    });
    let err: unknown;
    try {
      writeBundle(dir, { tables: { a: [{ x: 2 }], b: [{ y: 1 }] }, methods: 'new', provenance: prov });
    } catch (e) {
      err = e;
    }
    setBeforeWrite(null);
    expect(err).toBeInstanceOf(OutputError);
    expect((err as Error).message).toMatch(/the disk is full \(ENOSPC\) while writing tables\/b\.csv/);
    expect((err as Error).message).toContain(dir);
    expect(readFileSync(join(dir, 'methods.txt'), 'utf8')).toBe('old');
    expect(readdirSync(work).filter((f) => f.startsWith('.full.'))).toEqual([]);
  });

  it('a read-only place (EROFS) asks for a writable folder, not for space', () => {
    const dir = join(work, 'rofs');
    setBeforeWrite(() => {
      throw Object.assign(new Error('EROFS: read-only file system, open'), { code: 'EROFS' });
    });
    let err: unknown;
    try {
      writeBundle(dir, { tables: { a: [{ x: 1 }] }, methods: 'new', provenance: prov });
    } catch (e) {
      err = e;
    }
    setBeforeWrite(null);
    expect(err).toBeInstanceOf(OutputError);
    expect((err as Error).message).toMatch(/read-only \(EROFS\).*choose a folder you can write to with --out/);
    expect((err as Error).message).not.toMatch(/free some space/);
    expect(existsSync(dir)).toBe(false);
  });

  it('a real file-size limit (EFBIG) and an immutable folder (EPERM) exit 6 naming the place, not "unexpected error"', () => {
    const lim = spawnSync(
      'bash',
      [
        '-c',
        `trap '' XFSZ; ulimit -f 200; exec "${process.execPath}" "${cliPath}" run "${m1}" --out "${join(work, 'big')}" --quiet`,
      ],
      { encoding: 'utf8' },
    );
    expect(lim.status, lim.stderr).toBe(6);
    expect(lim.stderr).toMatch(
      /cannot write the bundle .*big: the file is larger than the system allows.*\(EFBIG\) while writing/,
    );
    expect(existsSync(join(work, 'big'))).toBe(false);
    const ro = join(work, 'readonly');
    mkdirSync(ro);
    const chattr = spawnSync('chattr', ['+i', ro]);
    if (chattr.status !== 0) return; // needs chattr (root on ext4); the ENOSPC case above covers the message
    try {
      const r = run(['run', m1, '--out', join(ro, 'bundle'), '--quiet', '--no-figures']);
      expect(r.status, r.stderr).toBe(6);
      expect(r.stderr).toMatch(/cannot write the bundle .*readonly\/bundle: operation not permitted \(EPERM\)/);
      expect(r.stderr).not.toMatch(/unexpected/);
    } finally {
      spawnSync('chattr', ['-i', ro]);
    }
  });
});

describe('rerun of a moved study, and what rerun compares', () => {
  let moved: string;
  let bundle: string;
  beforeAll(() => {
    const m = study('orig', ['R1']);
    const r = run(['run', m, '--out', join(work, 'orig', 'bundle'), '--quiet', '--no-figures']);
    expect(r.status, r.stderr).toBe(0);
    const p = JSON.parse(readFileSync(join(work, 'orig', 'bundle', 'provenance.json'), 'utf8'));
    expect(p.rerun.manifest).toBe('../manifest.json');
    expect(p.inputs.every((s: { path: string }) => !s.path.startsWith('/'))).toBe(true);
    expect(JSON.stringify(p)).not.toContain(work); // no absolute path of the study anywhere
    // a collaborator's copy elsewhere; the original is gone
    moved = join(work, 'elsewhere', 'copy');
    cpSync(join(work, 'orig'), moved, { recursive: true });
    rmSync(join(work, 'orig'), { recursive: true });
    bundle = join(moved, 'bundle');
  });
  it('a moved study reruns, also given as a relative path from another folder', () => {
    const r = run(['rerun', bundle]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/reproduced \d+ tables \(\d+ files, CSV and JSON\) and the methods text exactly/);
    const rel = run(['rerun', relative(join(work, 'elsewhere'), bundle)], { cwd: join(work, 'elsewhere') });
    expect(rel.status, rel.stderr).toBe(0);
  });
  it('an edited JSON table, a deleted CSV table, an extra table and edited methods each exit 5 naming the file', () => {
    const cases: [string, () => void, () => void, RegExp][] = [];
    const edit = (f: string, fn: (s: string) => string) => {
      const p = join(bundle, f);
      const keep = readFileSync(p);
      return [() => writeFileSync(p, fn(keep.toString())), () => writeFileSync(p, keep)] as const;
    };
    const [e1, u1] = edit('tables/velocity.json', (s) => s.replace(/"velocity_m_s": (\d)/, '"velocity_m_s": 9$1'));
    cases.push(['json', e1, u1, /differs in tables\/velocity\.json/]);
    const thr = join(bundle, 'tables', 'thresholds.csv');
    const keepThr = readFileSync(thr);
    cases.push(['deleted', () => unlinkSync(thr), () => writeFileSync(thr, keepThr), /lacks tables\/thresholds\.csv/]);
    const extra = join(bundle, 'tables', 'mine.csv');
    cases.push([
      'extra',
      () => writeFileSync(extra, 'x\n1\n'),
      () => unlinkSync(extra),
      /has tables\/mine\.csv, which the rerun did not produce/,
    ]);
    const [e4, u4] = edit('methods.txt', (s) => s.replace('Butterworth', 'Chebyshev'));
    cases.push(['methods', e4, u4, /differs in methods\.txt/]);
    for (const [name, doIt, undo, msg] of cases) {
      doIt();
      try {
        const r = run(['rerun', bundle]);
        expect(r.status, `${name}: ${r.stderr}`).toBe(5);
        expect(r.stderr).toMatch(msg);
      } finally {
        undo();
      }
    }
  }, 300_000);
  it('a missing folder, a missing or corrupt provenance give a clean message and exit 3', () => {
    const nf = run(['rerun', join(work, 'no-such-bundle')]);
    expect(nf.status).toBe(3);
    expect(nf.stderr).toMatch(/no-such-bundle: no such folder/);
    expect(nf.stderr).not.toMatch(/\n\s+at /);
    const p = join(bundle, 'provenance.json');
    const keep = readFileSync(p);
    try {
      writeFileSync(p, '{"package": "fascicle", "inp');
      const c = run(['rerun', bundle]);
      expect(c.status).toBe(3);
      expect(c.stderr).toMatch(/provenance\.json: invalid JSON/);
      unlinkSync(p);
      const mi = run(['rerun', bundle]);
      expect(mi.status).toBe(3);
      expect(mi.stderr).toMatch(/the bundle has no provenance\.json/);
      expect(mi.stderr + c.stderr).not.toMatch(/unexpected/);
    } finally {
      writeFileSync(p, keep);
    }
  });
});

describe('fascicle merge checks its shards', () => {
  it('a shard folder as --out is refused; a shard twice, a missing shard or shards of two runs are errors', () => {
    const m2 = study('s-merge', ['R1', 'R2']);
    const a = join(work, 'merge-1of2'),
      b = join(work, 'merge-2of2'),
      solo = join(work, 'merge-1of1');
    expect(run(['run', m2, '--out', a, '--shard', '1/2', '--quiet', '--no-figures']).status).toBe(0);
    expect(run(['run', m2, '--out', b, '--shard', '2/2', '--quiet', '--no-figures']).status).toBe(0);
    expect(run(['run', m1, '--out', solo, '--shard', '1/1', '--quiet', '--no-figures']).status).toBe(0);
    const before = snapshot(a);
    // merging into one of the shards used to replace it with the merged bundle (the shard was gone)
    const into = run(['merge', a, b, '--out', a]);
    expect(into.status).toBe(2);
    expect(into.stderr).toMatch(/it is an input of this analysis/);
    expect(snapshot(a)).toEqual(before);
    const twice = run(['merge', a, a, b, '--out', join(work, 'merged-twice')]);
    expect([twice.status, twice.stderr]).toEqual([3, expect.stringMatching(/shard 1\/2 is given twice/)]);
    const missing = run(['merge', a, '--out', join(work, 'merged-missing')]);
    expect([missing.status, missing.stderr]).toEqual([3, expect.stringMatching(/shard 2\/2 of the run is missing/)]);
    const mixed = run(['merge', a, solo, '--out', join(work, 'merged-mixed')]);
    expect(mixed.status).toBe(3);
    expect(mixed.stderr).toMatch(/the shard is (of|one of)/);
    for (const d of ['merged-twice', 'merged-missing', 'merged-mixed']) expect(existsSync(join(work, d))).toBe(false);
    expect(run(['merge', a, b, '--out', join(work, 'merged-ok')]).status).toBe(0);
  });
});

describe('command line', () => {
  it('help and version subcommands (npx takes --help), help names the npx form', () => {
    const h = run(['help']);
    expect(h.status).toBe(0);
    expect(h.stdout).toMatch(/npx fascicle help/);
    expect(run(['help', 'rerun']).stdout).toMatch(/--manifest/);
    const v = run(['version']);
    expect(v.status).toBe(0);
    expect(v.stdout.trim()).toBe(JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')).version);
    expect(run(['hlep']).stderr).toMatch(/did you mean "help"/);
  });
  it('an unknown option suggests the nearest one; configuration errors exit 2', () => {
    const r = run(['run', m1, '--otu', 'x']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/unknown option --otu for "run" \(did you mean --out\?\)/);
    expect(run(['run', m1, '--out', 'x', '--no-figure']).stderr).toMatch(/did you mean --no-figures/);
    // an option a step rejects (cutoff above Nyquist) is a configuration error, not "data cannot support" (4)
    const dir = join(work, 's1');
    const m = JSON.parse(readFileSync(m1, 'utf8'));
    m.analysis.filter.cutoff = 1e6;
    writeFileSync(join(dir, 'bad-cutoff.json'), JSON.stringify(m));
    const c = run(['run', join(dir, 'bad-cutoff.json'), '--out', join(work, 'bc'), '--quiet', '--no-figures']);
    expect(c.status, c.stderr).toBe(2);
    expect(c.stderr).toMatch(/configuration error: .*cutoff/);
    // an unknown analysis key
    const m2 = JSON.parse(readFileSync(m1, 'utf8'));
    m2.analysis.lowpass = 5000;
    writeFileSync(join(dir, 'bad-key.json'), JSON.stringify(m2));
    const k = run(['run', join(dir, 'bad-key.json'), '--out', join(work, 'bk'), '--quiet']);
    expect(k.status, k.stderr).toBe(2);
    expect(k.stderr).toMatch(
      /bad-key\.json, field \/analysis\/lowpass: unknown key "lowpass" \(write "filter": \{ "btype": "lowpass"/,
    );
  });
  it('a top-level classPreset is used by the command line (amphibian classes in the components table)', () => {
    const dir = join(work, 's1');
    const m = JSON.parse(readFileSync(m1, 'utf8'));
    delete m.analysis.components.preset;
    m.classPreset = 'amphibian';
    writeFileSync(join(dir, 'amph.json'), JSON.stringify(m));
    const r = run(['run', join(dir, 'amph.json'), '--out', join(work, 'amph'), '--quiet', '--no-figures']);
    expect(r.status, r.stderr).toBe(0);
    const classes = new Set(
      (JSON.parse(readFileSync(join(work, 'amph', 'tables', 'components.json'), 'utf8')) as { class: string }[]).map(
        (x) => x.class,
      ),
    );
    const mam = run(['run', m1, '--out', join(work, 'mam'), '--quiet', '--no-figures']);
    expect(mam.status).toBe(0);
    const classesM = new Set(
      (JSON.parse(readFileSync(join(work, 'mam', 'tables', 'components.json'), 'utf8')) as { class: string }[]).map(
        (x) => x.class,
      ),
    );
    expect([...classes]).not.toEqual([...classesM]);
    m.classPreset = 'amfibian';
    writeFileSync(join(dir, 'amph2.json'), JSON.stringify(m));
    const bad = run(['run', join(dir, 'amph2.json'), '--out', join(work, 'amph2'), '--quiet']);
    expect(bad.status).toBe(2);
    expect(bad.stderr).toMatch(/field \/classPreset: unknown class preset "amfibian" \(did you mean "amphibian"\?\)/);
  });
  it('a --jobs worker that runs out of memory ends the run with exit 7 and a clear message, no bundle', () => {
    const m2 = study('s2', ['R1', 'R2']);
    const out = join(work, 'oom');
    const r = run(['run', m2, '--out', out, '--quiet', '--jobs', '2', '--no-figures'], {
      env: { FASCICLE_WORKER_HEAP_MB: '8' },
    });
    expect(r.status, r.stderr).toBe(7);
    expect(r.stderr).toMatch(/--jobs worker thread processing preparation R\d ran out of memory/);
    expect(existsSync(out)).toBe(false);
  });
});

describe('CSV cells', () => {
  it('quote any cell holding a delimiter of a common locale (, ; tab) and neutralise formulas', () => {
    // RFC 4180 section 2 (quoting); ; and tab are the delimiters of common spreadsheet locales (common practice, no source)
    expect(csvCell('x;=1+1')).toBe('"x;=1+1"');
    expect(csvCell('a\tb')).toBe('"a\tb"');
    expect(csvCell('=1+1;2')).toBe(`"'=1+1;2"`);
    expect(csvCell('\t=1')).toBe(`"'\t=1"`);
    expect(toCsv([{ 'a;b': 'c,d', e: 'plain' }])).toBe('"a;b",e\n"c,d",plain\n');
  });
});
