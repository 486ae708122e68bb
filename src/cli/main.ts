#!/usr/bin/env node
/**
 * fascicle command line.
 *   fascicle run <manifest.json> --out <dir> [--jobs N] [--shard i/n] [--nwb <file> [--nwb-raw]] [--no-figures] [--quiet]
 *   fascicle merge <shard-dir>... --out <dir>
 *   fascicle rerun <bundle-dir> [--manifest <path>] [--key <key>]
 *   fascicle unblind <bundle-dir> --key <key.csv|json> --out <dir> [--manifest <path>] [--no-figures] [--quiet]
 *   fascicle help [<command>] | version | --help | <command> --help | --version (a leading -- is skipped)
 * Exit codes: 0 success; 2 usage or configuration error (also a refused --out); 3 bad input
 * file; 4 the data cannot support the analysis; 5 a rerun did not reproduce the bundle;
 * 6 the output could not be written; 7 a worker thread failed; 1 anything else.
 * After run and merge: exit 4 when nothing at all could be computed (the bundle is still written).
 */
import { readFileSync, readdirSync, mkdtempSync, rmSync, existsSync, statSync, lstatSync } from 'node:fs';
import { join, resolve, dirname, relative, isAbsolute } from 'node:path';
import { tmpdir } from 'node:os';
import {
  runStudy,
  mergeShards,
  analysisOptions,
  computeOutputs,
  manifestInputs,
  writeStudyBundle,
  bundleTables,
} from './engine';
import { flagReport, FLAG_LINE_CAP } from './flags';
import { combineStudy, type Study } from '../report/study';
import { summaryLines, type SummaryOptions } from '../report/summary';
import { verifyInputs, checkOutput, addToBundle, type Provenance } from '../report/bundle';
import { readManifestJson, readBlindingKey, type BlindingKey } from '../io/manifest';
import { unblindOutputs, unblindPipelineOptions, checkBlindingKey } from '../analysis/blinding';
import type { Step } from '../sweeps/SweepSet';
import { InputError, AnalysisError, OptionError, OutputError, ConfigError, ThreadError, systemReason } from '../errors';
import { nearest, didYouMean } from '../validate';
import { VERSION } from '../version';

const HELP: Record<string, string> = {
  main: `fascicle ${VERSION}: compound action potential analysis

Usage:
  fascicle run <manifest.json> --out <dir> [options]   analyse a study into a bundle
  fascicle merge <shard-dir>... --out <dir>            combine the outputs of sharded runs
  fascicle rerun <bundle-dir> [--manifest <path>]      check that a bundle reproduces from its inputs
  fascicle unblind <bundle-dir> --key <key> --out <dir>
                                                       a blinded bundle with the real group labels
  fascicle help [<command>]                            this help, or help for one command
  fascicle version                                     the version
  (also: fascicle --help, fascicle <command> --help, fascicle --version)

Through npx, use "npx fascicle help" and "npx fascicle version": "npm exec fascicle --help"
and "--version" (and npx in some npm versions) answer for npm itself, not for fascicle.

Exit codes: 0 success, 2 usage or configuration error (command line or manifest settings,
or an output folder fascicle will not overwrite), 3 bad input file, 4 data cannot support
the analysis (nothing at all could be computed), 5 rerun did not reproduce, 6 the output
could not be written (disk full, read-only, no permission), 7 a worker thread failed,
1 other error.`,
  run: `fascicle run <manifest.json> --out <dir> [options]

Runs the standard pipeline on the study the manifest describes, with the options of the
manifest's "analysis" section: sweep quality control, conditioning, averaging of repeats,
fiber-class components, conduction velocities, and whichever of recruitment, strength-duration,
dose-response, temperature, paired-pulse recovery and trains the data supports (group
statistics, mixed models and velocity distributions when the section asks for them).
Writes a bundle: tables (CSV and JSON), figures (HTML), methods.txt, notes.txt and provenance.json.

Options:
  --out <dir>       bundle folder [required]. It must be new, empty, or a bundle fascicle
                    wrote (which is replaced atomically); a folder with other files, a file,
                    or a path that is or holds an input is refused
  --jobs <N>        preparations processed in parallel (worker threads)  [default 1];
                    with 1, large sets use every core inside each step instead
                    (FASCICLE_THREADS=<n> in the environment limits that;
                    FASCICLE_WORKER_HEAP_MB=<MB> limits each worker thread's heap)
  --shard <i/n>     process only share i of n of the preparations (sorted by name);
                    writes a partial output for "fascicle merge"
  --nwb <file>      also write the study as an NWB 2.7.0 file: the conditioned sweeps (with
                    --nwb-raw: as acquired), a trials table with every condition, the
                    electrodes with distances, the history and the result tables; a file
                    fascicle did not write is never replaced
  --no-figures      skip the figure files
  --quiet           no progress output (results and flags are still printed)

After the run it prints the results, a summary of the flags (estimates that were rejected,
not measured, or kept with a warning; all in tables/flags.csv) and a line for each rejected
and not-measured one (at most ${FLAG_LINE_CAP}). Exit 0 when anything was computed, even with flags;
exit 4 only when nothing at all could be computed (the bundle is still written).`,
  merge: `fascicle merge <shard-dir>... --out <dir>

Combines the partial outputs written by "fascicle run --shard i/n" (all n shards of one run)
into one bundle, identical to the bundle of the unsharded run. --out as for "run".`,
  rerun: `fascicle rerun <bundle-dir> [--manifest <path>]

Checks every input file against the SHA-256 in the bundle's provenance.json (exit 3 naming a
changed file), reruns the recorded analysis, and compares every table (CSV and JSON), the set
of tables and the methods text (exit 5 on any difference). Paths in provenance.json are
relative (inputs to the manifest, the manifest to the bundle), so a study copied together
with its bundle reruns anywhere; --manifest gives the manifest when only the study moved.
A bundle made by "fascicle unblind" reruns with --key <the same key file> (its SHA-256 is checked).`,
  unblind: `fascicle unblind <bundle-dir> --key <key.csv|key.json> --out <dir> [options]

Applies the key of a blinded study (a manifest with "blinding": { "coded": true }) to its bundle
and writes a NEW bundle whose tables, figures, report and methods use the real labels of the
coded condition (default group); the bundle and the key are only read. It checks every input
file against the SHA-256 in the bundle's provenance.json (exit 3), reruns the recorded analysis
and checks that it reproduces the blinded bundle's tables (exit 5), then reruns the combined
statistics with the real labels (so levels, comparisons and figures are those of a run with
the real labels) and adds an "unblind" step to the provenance: when the key was applied, the
key file's name and its SHA-256. The key must be kept outside the study folder.

Key file: CSV with a header "code,label" and one code and its label per line, or JSON
{ "fascicleBlindingKey": 1, "codes": { "K1": "control", "K2": "treated" } }. A code the study
does not use, a code without a label, and two codes with the same label are errors (exit 3).

Options:
  --key <file>      the key [required]
  --out <dir>       the new bundle [required]; refused as for "run" (a folder with other files,
                    a file, the blinded bundle itself, or a path that is or holds an input)
  --manifest <path> the study's manifest, when only the study moved
  --no-figures      skip the figure files
  --quiet           no progress output`,
  help: `fascicle help [<command>]

Prints the help, or the help of one command (run, merge, rerun, unblind).`,
  version: `fascicle version

Prints the version.`,
};

const COMMANDS = ['run', 'merge', 'rerun', 'unblind', 'help', 'version'];
const VALUE_OPTIONS: Record<string, string[]> = {
  run: ['out', 'jobs', 'shard', 'nwb'],
  merge: ['out'],
  rerun: ['manifest', 'key'],
  unblind: ['key', 'out', 'manifest'],
  help: [],
  version: [],
};
const FLAG_OPTIONS: Record<string, string[]> = {
  run: ['no-figures', 'quiet', 'help', 'nwb-raw'],
  merge: ['help'],
  rerun: ['help'],
  unblind: ['no-figures', 'quiet', 'help'],
  help: ['help'],
  version: ['help'],
};

class UsageError extends Error {}

// the methods sentences of a blinded run and of an unblinding (unless the registry words them already)

/**
 * Refuse an --nwb place the writer would refuse, before the analysis runs (not after a bundle was written): an input
 * of the study, something that is not a regular file (a folder), or a file that is not an NWB file fascicle wrote.
 */
async function checkNwbTarget(manifest: string, path: string): Promise<void> {
  const target = resolve(path);
  let st;
  try {
    st = lstatSync(target);
  } catch {
    return; // a new file
  }
  if (st.isFile() && manifestInputs(manifest).some((p) => resolve(p) === target))
    throw new OutputError(path, `refusing to write ${path}: it is an input of this analysis`, { refused: true });
  if (!st.isFile())
    throw new OutputError(
      path,
      `refusing to write ${path}: it is ${st.isDirectory() ? 'a folder' : 'not a regular file'}; ` +
        'give --nwb a file name (e.g. study.nwb)',
      { refused: true },
    );
  const { nwbReady } = await import('../io/nwb');
  const { writtenByFascicle } = await import('../io/nwbWrite');
  await nwbReady();
  if (!writtenByFascicle(target))
    throw new OutputError(
      path,
      `refusing to overwrite ${path}: it is not an NWB file written by fascicle; give --nwb a new file name`,
      { refused: true },
    );
}

/** The study's sweeps (conditioned as the pipeline conditions them, or as acquired) and result tables as NWB. */
async function writeStudyNwb(manifest: string, path: string, raw: boolean, study: Study): Promise<void> {
  const { nwbReady } = await import('../io/nwb');
  const { writeNwbSync } = await import('../io/nwbWrite');
  const { readManifest } = await import('../io/manifest');
  const { condition } = await import('../report/pipeline');
  await nwbReady();
  const set = readManifest(manifest);
  const sweeps = raw ? set : condition(set, analysisOptions(manifest));
  // the tables as the bundle names them (the same columns as its CSV files)
  const w = writeNwbSync(sweeps, path, { raw, overwrite: true, results: bundleTables(study) });
  console.log(`NWB: ${path} (${w.trials} sweeps, ${w.series.length} series, ${w.tables.length} tables)`);
}

function parse(argv: string[]): { cmd: string; pos: string[]; flags: Record<string, string | boolean> } {
  const [cmd = '', ...rest] = argv;
  const pos: string[] = [];
  const flags: Record<string, string | boolean> = {};
  const values = VALUE_OPTIONS[cmd] ?? [],
    bools = FLAG_OPTIONS[cmd] ?? ['help'];
  for (let i = 0; i < rest.length; i++) {
    const a = rest[i];
    if (a === '--help' || a === '-h') flags.help = true;
    else if (a.startsWith('--')) {
      const eq = a.indexOf('=');
      const k = eq > 0 ? a.slice(2, eq) : a.slice(2);
      if (bools.includes(k)) {
        if (eq > 0) throw new UsageError(`option --${k} takes no value`);
        flags[k] = true;
        continue;
      }
      if (!values.includes(k)) {
        const all = [...values, ...bools];
        const near = nearest(k, all);
        throw new UsageError(
          `unknown option --${k} for "${cmd}"${near ? ` (did you mean --${near}?)` : ''}; ${all.length ? `valid options: ${all.map((x) => '--' + x).join(', ')}` : 'it takes no options'}`,
        );
      }
      const v = eq > 0 ? a.slice(eq + 1) : rest[++i];
      if (v === undefined || (eq < 0 && v.startsWith('--'))) throw new UsageError(`option --${k} needs a value`);
      // a second value would silently win over the first (e.g. a bundle written where the user did not look)
      if (typeof flags[k] === 'string' && flags[k] !== v)
        throw new UsageError(`option --${k} is given twice (${flags[k]} and ${v}); give it once`);
      flags[k] = v;
    } else pos.push(a);
  }
  return { cmd, pos, flags };
}

function progressBar(quiet: boolean): ((done: number, total: number, prep: string) => void) | undefined {
  if (quiet) return undefined;
  if (process.stderr.isTTY) {
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    const { SingleBar, Presets } = require('cli-progress');
    let bar: { start(t: number, v: number): void; update(v: number, p: object): void; stop(): void } | null = null;
    return (done, total, prep) => {
      if (!bar) {
        bar = new SingleBar(
          { format: 'preparations [{bar}] {value}/{total} {prep}', stream: process.stderr },
          Presets.shades_classic,
        );
        bar!.start(total, 0);
      }
      bar!.update(done, { prep });
      if (done === total) bar!.stop();
    };
  }
  return (done, total, prep) => process.stderr.write(`preparation ${prep} done (${done}/${total})\n`);
}

async function main(argv0: string[]): Promise<number> {
  // a leading "--" (npm exec / npx pass it along in some versions) only ends the runner's own options
  const argv = argv0[0] === '--' ? argv0.slice(1) : argv0;
  if (argv[0] === '--version' || argv[0] === '-v') {
    console.log(VERSION);
    return 0;
  }
  if (!argv.length) {
    console.log(HELP.main);
    return 2;
  }
  if (argv[0] === '--help' || argv[0] === '-h') {
    console.log(HELP.main);
    return 0;
  }
  if (!COMMANDS.includes(argv[0])) {
    const near = nearest(argv[0], COMMANDS);
    throw new UsageError(
      `unknown command "${argv[0]}"${near ? ` (did you mean "${near}"?)` : ''}; ` +
        'expected run, merge, rerun, unblind, help or version',
    );
  }
  const { cmd, pos, flags } = parse(argv);
  if (flags.help) {
    console.log(HELP[cmd]);
    return 0;
  }
  if (cmd === 'version') {
    console.log(VERSION);
    return 0;
  }
  if (cmd === 'help') {
    if (pos.length > 1) throw new UsageError('help takes at most one command name');
    if (!pos.length) {
      console.log(HELP.main);
      return 0;
    }
    if (!(pos[0] in HELP) || pos[0] === 'main')
      throw new UsageError(`no help for "${pos[0]}"${didYouMean(pos[0], COMMANDS)}; commands: ${COMMANDS.join(', ')}`);
    console.log(HELP[pos[0]]);
    return 0;
  }
  if (cmd === 'run') {
    if (pos.length !== 1) throw new UsageError('run needs exactly one manifest file');
    if (typeof flags.out !== 'string') throw new UsageError('run needs --out <dir>');
    const jobs = flags.jobs === undefined ? 1 : Number(flags.jobs);
    if (!(Number.isInteger(jobs) && jobs >= 1 && jobs <= 64))
      throw new UsageError(`invalid --jobs ${flags.jobs}; must be an integer 1..64`);
    let shard: { index: number; count: number } | undefined;
    if (flags.shard !== undefined) {
      const m = /^(\d+)\/(\d+)$/.exec(String(flags.shard));
      if (!m || !(+m[1] >= 1 && +m[1] <= +m[2]))
        throw new UsageError(`invalid --shard ${flags.shard}; must be i/n with 1 <= i <= n`);
      shard = { index: +m[1], count: +m[2] };
    }
    if (flags['nwb-raw'] && typeof flags.nwb !== 'string') throw new UsageError('--nwb-raw needs --nwb <file>');
    if (typeof flags.nwb === 'string') await checkNwbTarget(pos[0], flags.nwb);
    const t0 = Date.now();
    const r = await runStudy({
      manifest: pos[0],
      out: flags.out,
      jobs,
      shard,
      figures: !flags['no-figures'],
      onProgress: progressBar(!!flags.quiet),
    });
    const secs = ((Date.now() - t0) / 1000).toFixed(1);
    if (shard) {
      console.log(
        `shard ${shard.index}/${shard.count}: ${r.outputs.length} preparation(s) written to ${flags.out} in ${secs} s; combine all shards with "fascicle merge"`,
      );
      return 0;
    }
    console.log(`fascicle ${VERSION}: analysed ${r.outputs.length} preparation(s) in ${secs} s`);
    const blind = r.study!.history.find((h) => h.verb === 'blinding');
    if (blind)
      console.log(
        `blinded: the "${blind.options.condition}" labels are codes (${(blind.options.codes as string[]).join(', ')}); ` +
          `apply the key afterwards with: fascicle unblind ${flags.out} --key <key file> --out <new folder>`,
      );
    if (flags['nwb-raw'] && typeof flags.nwb !== 'string') throw new UsageError('--nwb-raw needs --nwb <file>');
    if (typeof flags.nwb === 'string') {
      await writeStudyNwb(pos[0], flags.nwb, !!flags['nwb-raw'], r.study!);
      addToBundle(flags.out, flags.nwb); // an NWB file inside the bundle is the bundle's (the next run replaces it)
    }
    const reference = analysisOptions(pos[0]).components?.referenceDistanceMm;
    return reportStudy(r.study!, flags.out, { referenceDistanceMm: reference });
  }
  if (cmd === 'merge') {
    if (!pos.length) throw new UsageError('merge needs one or more shard folders');
    if (typeof flags.out !== 'string') throw new UsageError('merge needs --out <dir>');
    const study = await mergeShards(pos, flags.out);
    console.log(`merged ${pos.length} shard(s)`);
    return reportStudy(study, flags.out);
  }
  if (cmd === 'unblind') {
    if (pos.length !== 1) throw new UsageError('unblind needs exactly one bundle folder');
    if (typeof flags.key !== 'string') throw new UsageError('unblind needs --key <key file>');
    if (typeof flags.out !== 'string') throw new UsageError('unblind needs --out <dir> (a new bundle)');
    return unblindCommand(pos[0], flags.key, flags.out, {
      manifest: typeof flags.manifest === 'string' ? flags.manifest : undefined,
      figures: !flags['no-figures'],
      onProgress: progressBar(!!flags.quiet),
    });
  }
  if (pos.length !== 1) throw new UsageError('rerun needs exactly one bundle folder');
  return rerun(
    pos[0],
    typeof flags.manifest === 'string' ? flags.manifest : undefined,
    typeof flags.key === 'string' ? flags.key : undefined,
  );
}

/**
 * Print a written study's results and flags; the exit code: 0 when anything was computed
 * (even with flags), 4 when nothing at all could be (the bundle is written so the flags can be read).
 */
function reportStudy(s: Study, out: string, options: SummaryOptions = {}): number {
  for (const line of summaryLines(s, options)) console.log(`  ${line}`);
  for (const n of s.notes) console.log(`  note: ${n}`);
  for (const line of flagReport(s.tables.flags ?? [])) console.error(line);
  console.log(`bundle written to ${out}`);
  if (!(s.computed > 0)) {
    console.error(`fascicle: nothing could be computed: see tables/flags.csv (in ${out})`);
    return 4;
  }
  return 0;
}

const BUNDLE_EXPECTED = 'a bundle folder written by "fascicle run"';

/** Read a bundle's provenance.json, with clear errors for a missing folder or a missing or corrupt file. */
function readProvenance(dir: string): Provenance {
  if (!existsSync(dir)) throw new InputError({ file: dir }, 'no such folder', BUNDLE_EXPECTED);
  if (!statSync(dir).isDirectory())
    throw new InputError({ file: dir }, 'this is a file, not a folder', BUNDLE_EXPECTED);
  const p = join(dir, 'provenance.json');
  if (!existsSync(p))
    throw new InputError(
      { file: p },
      'the bundle has no provenance.json',
      `${BUNDLE_EXPECTED} (with its provenance.json)`,
    );
  let prov: Provenance;
  try {
    prov = JSON.parse(readFileSync(p, 'utf8'));
  } catch (e) {
    throw new InputError(
      { file: p },
      `invalid JSON (${(e as Error).message})`,
      'the provenance.json fascicle wrote, unedited',
    );
  }
  if (!prov || typeof prov !== 'object' || prov.package !== 'fascicle')
    throw new InputError(
      { file: p, field: 'package' },
      'not a fascicle provenance record',
      'the provenance.json fascicle wrote, unedited',
    );
  if (!Array.isArray(prov.inputs))
    throw new InputError(
      { file: p, field: 'inputs' },
      'no list of inputs',
      'the provenance.json fascicle wrote, unedited',
    );
  if (!prov.rerun || typeof prov.rerun.manifest !== 'string')
    throw new InputError(
      { file: p, field: 'rerun' },
      'records no rerunnable analysis (written by the library, not by "fascicle run")',
      'a bundle written by "fascicle run"',
    );
  if (prov.rerun.shard)
    throw new InputError(
      { file: p, field: 'rerun.shard' },
      `this is the partial output of shard ${prov.rerun.shard}`,
      'a whole bundle (merge the shards first with "fascicle merge")',
    );
  return prov;
}

/** Every file under a bundle's tables folder (relative names, sorted). */
function tableFiles(dir: string): string[] {
  const t = join(dir, 'tables');
  return existsSync(t)
    ? readdirSync(t)
        .filter((f) => /\.(csv|json)$/.test(f))
        .sort()
    : [];
}

/** The manifest a bundle records (or the one given), which must exist. */
function bundleManifest(dir: string, prov: Provenance, manifestOverride?: string): string {
  const manifest = manifestOverride ?? resolve(dir, prov.rerun!.manifest);
  if (!existsSync(manifest)) {
    throw new InputError(
      { file: manifest },
      'the manifest recorded in the provenance is missing',
      "the study's manifest: copy the study with its bundle (paths are relative), or give it with --manifest <path>",
    );
  }
  return manifest;
}

async function rerun(dir: string, manifestOverride?: string, keyPath?: string): Promise<number> {
  const prov = readProvenance(dir);
  const manifest = bundleManifest(dir, prov, manifestOverride);
  const applied = (prov.steps as Step[]).find((h) => h.verb === 'unblind');
  if (applied && keyPath === undefined)
    throw new ConfigError(
      { file: join(dir, 'provenance.json'), field: 'steps' },
      `the bundle was unblinded with the key ${applied.options.keyFile ?? '(given in code)'} ` +
        `(SHA-256 ${applied.options.keySha256}, applied ${applied.options.appliedAt})`,
      'that key, given with --key <file>, to rerun it',
    );
  if (!applied && keyPath !== undefined)
    throw new UsageError('--key is only for a bundle made by "fascicle unblind"; this one was not unblinded');
  verifyInputs(prov, dirname(resolve(manifest)));
  const tmp = mkdtempSync(join(tmpdir(), 'fascicle-rerun-'));
  try {
    const out = join(tmp, 'bundle');
    if (applied) {
      const key = readBlindingKey(keyPath!);
      if (key.sha256 !== applied.options.keySha256)
        throw new InputError(
          { file: keyPath! },
          `its SHA-256 ${key.sha256} differs from that of the key applied (${applied.options.keySha256})`,
          `the key file the bundle was unblinded with (${applied.options.keyFile})`,
        );
      const u = await unblindedStudy(manifest, key, {});
      await writeStudyBundle(out, u.study, u.rerun, u.preparations, false);
    } else await runStudy({ manifest, out, jobs: 1, figures: false });
    const had = tableFiles(dir),
      got = tableFiles(out);
    const missing = got.filter((f) => !had.includes(f)),
      extra = had.filter((f) => !got.includes(f));
    if (missing.length) {
      console.error(
        `fascicle: rerun differs: the bundle lacks tables/${missing.join(', tables/')}, which the rerun produced`,
      );
      return 5;
    }
    if (extra.length) {
      console.error(
        `fascicle: rerun differs: the bundle has tables/${extra.join(', tables/')}, which the rerun did not produce`,
      );
      return 5;
    }
    for (const f of had) {
      const a = readFileSync(join(dir, 'tables', f)),
        b = readFileSync(join(out, 'tables', f));
      if (!a.equals(b)) {
        console.error(`fascicle: rerun differs in tables/${f}${firstDifference(a, b)}`);
        return 5;
      }
    }
    const mp = join(dir, 'methods.txt');
    if (!existsSync(mp)) {
      console.error('fascicle: rerun differs: the bundle has no methods.txt');
      return 5;
    }
    const ma = readFileSync(mp),
      mb = readFileSync(join(out, 'methods.txt'));
    if (!ma.equals(mb)) {
      console.error(`fascicle: rerun differs in methods.txt${firstDifference(ma, mb)}`);
      return 5;
    }
    console.log(
      `reproduced ${new Set(had.map((f) => f.replace(/\.(csv|json)$/, ''))).size} tables (${had.length} files, ` +
        `CSV and JSON) and the methods text exactly from ${prov.inputs.length} verified input files`,
    );
    return 0;
  } finally {
    rmSync(tmp, { recursive: true, force: true });
  }
}

const isInside = (child: string, parent: string) => {
  const r = relative(parent, child);
  return r === '' || (!r.startsWith('..') && !isAbsolute(r));
};

/**
 * The study of a blinded manifest with the key applied: outputs computed from the inputs (as run), relabelled, then
 * combined with the real labels; `blinded` is the study as the run combined it (for the check against its bundle).
 */
async function unblindedStudy(
  manifest: string,
  key: BlindingKey,
  o: { onProgress?: (done: number, total: number, prep: string) => void; check?: (blinded: Study) => void },
): Promise<{ study: Study; rerun: { manifest: string; options: unknown }; preparations: number }> {
  const m = readManifestJson(manifest).manifest;
  if (!m.blinding?.coded)
    throw new ConfigError(
      { file: manifest, field: '/blinding' },
      'the manifest does not say its labels are coded',
      'a blinded study: "blinding": { "coded": true } in its manifest',
    );
  const condition = m.blinding.condition ?? 'group';
  if (key.condition !== undefined && key.condition !== condition)
    throw new InputError(
      { file: key.file ?? '(key)' },
      `the key is for the condition "${key.condition}", but the study's coded condition is "${condition}"`,
      'the key of this study',
    );
  const options = analysisOptions(manifest);
  const outputs = await computeOutputs({ manifest, out: '', jobs: 1, onProgress: o.onProgress }, options);
  if (o.check) o.check(combineStudy(outputs, options));
  const u = unblindOutputs(outputs, key, { condition });
  const study = combineStudy(u.outputs, unblindPipelineOptions(options, condition, u.mapping));
  study.history.push(u.step);
  return { study, rerun: { manifest: resolve(manifest), options }, preparations: outputs.length };
}

/** fascicle unblind: a new bundle of a blinded study with the key applied (HELP.unblind). */
async function unblindCommand(
  dir: string,
  keyPath: string,
  out: string,
  o: {
    manifest?: string;
    figures: boolean;
    onProgress?: (done: number, total: number, prep: string) => void;
  },
): Promise<number> {
  const prov = readProvenance(dir);
  const steps = prov.steps as Step[];
  const applied = steps.find((h) => h.verb === 'unblind');
  if (applied)
    throw new InputError(
      { file: join(dir, 'provenance.json'), field: 'steps' },
      `the bundle is already unblinded (key ${applied.options.keyFile}, applied ${applied.options.appliedAt})`,
      'the blinded bundle of the study',
    );
  if (!steps.some((h) => h.verb === 'blinding'))
    throw new InputError(
      { file: join(dir, 'provenance.json'), field: 'steps' },
      'records no blinded analysis (no "blinding" step): its labels are not codes',
      'the bundle of a study whose manifest has "blinding": { "coded": true }',
    );
  const manifest = bundleManifest(dir, prov, o.manifest);
  const key = readBlindingKey(keyPath);
  // a key that does not fit the codes the run recorded is refused before any work
  const blinded = steps.find((h) => h.verb === 'blinding')!;
  if (Array.isArray(blinded.options.codes))
    checkBlindingKey(key, blinded.options.codes as string[], String(blinded.options.condition ?? 'group'));
  const inputs = manifestInputs(manifest);
  const studyDirs = [...new Set(inputs.slice(1).map((p, i) => (i === 0 ? p : dirname(p))))];
  const inStudy = studyDirs.find((d) => isInside(resolve(keyPath), d));
  if (inStudy)
    throw new ConfigError(
      { file: keyPath },
      `the key lies inside the study folder ${inStudy}`,
      'the key kept outside the study (move it, then unblind)',
    );
  // refuse a destination that would lose files (or is the bundle or the key) before any work is done
  checkOutput(out, [resolve(dir), resolve(keyPath), ...inputs]);
  verifyInputs(prov, dirname(resolve(manifest)));
  let differs: string | null = null;
  const u = await unblindedStudy(manifest, key, {
    onProgress: o.onProgress,
    check: (blinded) => {
      differs = tableDifference(dir, bundleTables(blinded));
    },
  });
  if (differs) {
    console.error(
      `fascicle: the blinded bundle does not reproduce from its inputs (${differs}); ` +
        'unblind only a bundle that "fascicle rerun" reproduces',
    );
    return 5;
  }
  await writeStudyBundle(out, u.study, u.rerun, u.preparations, o.figures);
  const step = u.study.history[u.study.history.length - 1];
  const map = step.options.mapping as Record<string, string>;
  console.log(
    `unblinded ${Object.keys(map).length} "${step.options.condition}" codes ` +
      `(${Object.entries(map)
        .map(([c, l]) => `${c} = ${l}`)
        .join(', ')}) with ${step.options.keyFile} (SHA-256 ${String(step.options.keySha256).slice(0, 12)}...)`,
  );
  return reportStudy(u.study, out, { referenceDistanceMm: analysisOptions(manifest).components?.referenceDistanceMm });
}

/** The first table of a bundle that differs from `tables` (as the bundle writes them), or null. */
function tableDifference(dir: string, tables: Record<string, unknown[]>): string | null {
  const had = tableFiles(dir).filter((f) => f.endsWith('.json'));
  const want = Object.keys(tables)
    .map((k) => `${k}.json`)
    .sort();
  const missing = want.filter((f) => !had.includes(f)),
    extra = had.filter((f) => !want.includes(f));
  if (missing.length) return `the bundle lacks tables/${missing[0]}`;
  if (extra.length) return `the bundle has tables/${extra[0]}, which the rerun did not produce`;
  for (const f of want) {
    const a = readFileSync(join(dir, 'tables', f)),
      b = Buffer.from(JSON.stringify(tables[f.replace(/\.json$/, '')], null, 1) + '\n');
    if (!a.equals(b)) return `tables/${f}${firstDifference(a, b)}`;
  }
  return null;
}

/** " at line N" of the first difference between two texts. */
function firstDifference(a: Buffer, b: Buffer): string {
  const n = Math.min(a.length, b.length);
  let i = 0;
  while (i < n && a[i] === b[i]) i++;
  let line = 1;
  for (let k = 0; k < i; k++) if (a[k] === 10) line++;
  return ` (first difference at line ${line})`;
}

export async function cli(argv: string[]): Promise<number> {
  try {
    return await main(argv);
  } catch (e) {
    const err = e as Error;
    const name = err?.name;
    if (e instanceof UsageError) {
      console.error(`fascicle: ${err.message}\n(try: fascicle help)`);
      return 2;
    }
    if (e instanceof OutputError || name === 'OutputError') {
      console.error(`fascicle: ${err.message}`);
      return (e as OutputError).refused === false ? 6 : 2;
    }
    if (e instanceof ConfigError || name === 'ConfigError') {
      console.error(`fascicle: configuration error: ${err.message}`);
      return 2;
    }
    if (e instanceof InputError || name === 'InputError') {
      console.error(`fascicle: bad input: ${err.message}`);
      return 3;
    }
    if (e instanceof OptionError || name === 'OptionError') {
      console.error(`fascicle: configuration error: ${err.message}`);
      return 2;
    }
    if (e instanceof AnalysisError || name === 'AnalysisError') {
      console.error(`fascicle: ${err.message}`);
      return 4;
    }
    if (e instanceof ThreadError || name === 'ThreadError') {
      console.error(`fascicle: ${err.message}`);
      return 7;
    }
    const code = (e as NodeJS.ErrnoException)?.code;
    if (typeof code === 'string' && /^E[A-Z]+$/.test(code)) {
      const where = (e as NodeJS.ErrnoException).path;
      console.error(`fascicle: ${systemReason(e)}${where ? ` at ${where}` : ''}`);
      return 1;
    }
    console.error(`fascicle: unexpected error (please report it): ${err?.stack ?? err?.message ?? String(e)}`);
    return 1;
  }
}

if (require.main === module) {
  cli(process.argv.slice(2)).then((code) => {
    process.exitCode = code;
  });
}
