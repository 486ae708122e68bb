#!/usr/bin/env node
/**
 * fascicle command line.
 *   fascicle run <manifest.json> --out <dir> [--jobs N] [--shard i/n] [--no-figures] [--quiet]
 *   fascicle merge <shard-dir>... --out <dir>
 *   fascicle rerun <bundle-dir>
 *   fascicle --help | <command> --help | --version
 * Exit codes: 0 success; 2 usage error; 3 bad input file; 4 the data cannot support the
 * analysis; 5 a rerun did not reproduce the bundle; 1 anything else.
 */
import { readFileSync, readdirSync, mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { runStudy, mergeShards } from './engine';
import { verifyInputs, type Provenance } from '../report/bundle';
import { InputError, AnalysisError, OptionError } from '../errors';
import { VERSION } from '../version';

const HELP: Record<string, string> = {
  main: `fascicle ${VERSION}: compound action potential analysis

Usage:
  fascicle run <manifest.json> --out <dir> [options]   analyse a study into a bundle
  fascicle merge <shard-dir>... --out <dir>            combine the outputs of sharded runs
  fascicle rerun <bundle-dir>                          check that a bundle reproduces from its inputs
  fascicle <command> --help                            help for one command
  fascicle --version

Exit codes: 0 success, 2 usage error, 3 bad input file, 4 data cannot support the analysis,
5 rerun did not reproduce, 1 other error.`,
  run: `fascicle run <manifest.json> --out <dir> [options]

Runs the standard pipeline on the study the manifest describes: the conditioning in the
manifest's "analysis" section, fiber-class components, conduction velocities, and whichever
of recruitment, strength-duration, dose-response and temperature the data supports. Writes a bundle: tables
(CSV and JSON), figures (HTML), methods.txt and provenance.json.

Options:
  --out <dir>       bundle folder (replaced atomically if it exists)   [required]
  --jobs <N>        preparations processed in parallel (worker threads)  [default 1];
                    with 1, large sets use every core inside each step instead
                    (FASCICLE_THREADS=<n> in the environment limits that)
  --shard <i/n>     process only share i of n of the preparations (sorted by name);
                    writes a partial output for "fascicle merge"
  --no-figures      skip the figure files
  --quiet           no progress output`,
  merge: `fascicle merge <shard-dir>... --out <dir>

Combines the partial outputs written by "fascicle run --shard i/n" (all n shards of one run)
into one bundle, identical to the bundle of the unsharded run.`,
  rerun: `fascicle rerun <bundle-dir>

Checks every input file against the SHA-256 in the bundle's provenance.json (exit 3 naming a
changed file), reruns the recorded analysis, and compares every table cell (exit 5 on any
difference).`,
};

class UsageError extends Error {}

function parse(argv: string[]): { cmd: string; pos: string[]; flags: Record<string, string | boolean> } {
  const [cmd = '', ...rest] = argv;
  const pos: string[] = [];
  const flags: Record<string, string | boolean> = {};
  for (let i = 0; i < rest.length; i++) {
    const a = rest[i];
    if (a === '--help' || a === '-h') flags.help = true;
    else if (a === '--no-figures' || a === '--quiet') flags[a.slice(2)] = true;
    else if (a.startsWith('--')) {
      const [k, v] = a.includes('=') ? a.slice(2).split(/=(.*)/s) : [a.slice(2), rest[++i]];
      if (v === undefined) throw new UsageError(`option --${k} needs a value`);
      if (!['out', 'jobs', 'shard'].includes(k)) throw new UsageError(`unknown option --${k}`);
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
      if (!bar) { bar = new SingleBar({ format: 'preparations [{bar}] {value}/{total} {prep}', stream: process.stderr }, Presets.shades_classic); bar!.start(total, 0); }
      bar!.update(done, { prep });
      if (done === total) bar!.stop();
    };
  }
  return (done, total, prep) => process.stderr.write(`preparation ${prep} done (${done}/${total})\n`);
}

async function main(argv: string[]): Promise<number> {
  if (argv[0] === '--version' || argv[0] === '-v') { console.log(VERSION); return 0; }
  const { cmd, pos, flags } = parse(argv);
  if (!cmd || cmd === '--help' || cmd === '-h' || cmd === 'help') { console.log(HELP.main); return cmd ? 0 : 2; }
  if (!(cmd in HELP) || cmd === 'main') throw new UsageError(`unknown command "${cmd}"; expected run, merge or rerun`);
  if (flags.help) { console.log(HELP[cmd]); return 0; }
  if (cmd === 'run') {
    if (pos.length !== 1) throw new UsageError('run needs exactly one manifest file');
    if (typeof flags.out !== 'string') throw new UsageError('run needs --out <dir>');
    const jobs = flags.jobs === undefined ? 1 : Number(flags.jobs);
    if (!(Number.isInteger(jobs) && jobs >= 1 && jobs <= 64)) throw new UsageError(`invalid --jobs ${flags.jobs}; must be an integer 1..64`);
    let shard: { index: number; count: number } | undefined;
    if (flags.shard !== undefined) {
      const m = /^(\d+)\/(\d+)$/.exec(String(flags.shard));
      if (!m || !(+m[1] >= 1 && +m[1] <= +m[2])) throw new UsageError(`invalid --shard ${flags.shard}; must be i/n with 1 <= i <= n`);
      shard = { index: +m[1], count: +m[2] };
    }
    const t0 = Date.now();
    const r = await runStudy({ manifest: pos[0], out: flags.out, jobs, shard, figures: !flags['no-figures'], onProgress: progressBar(!!flags.quiet) });
    const secs = ((Date.now() - t0) / 1000).toFixed(1);
    if (shard) { console.log(`shard ${shard.index}/${shard.count}: ${r.outputs.length} preparation(s) written to ${flags.out} in ${secs} s; combine all shards with "fascicle merge"`); return 0; }
    const s = r.study!;
    console.log(`fascicle ${VERSION}: analysed ${r.outputs.length} preparation(s) in ${secs} s`);
    for (const row of s.tables.dose_response_summary) console.log(`  IC50 ${row.class}: ${fmt(row.ic50)} ${row.concentrationUnit} (95% CI ${fmt(row.ic50_ci95_low)}-${fmt(row.ic50_ci95_high)}), Hill slope ${fmt(row.hill)}`);
    for (const row of s.tables.strength_duration ?? []) if (row.chronaxie_ms !== null) console.log(`  chronaxie ${row.class} (${row.preparation}): ${fmt(row.chronaxie_ms)} ms (95% CI ${fmt(row.chronaxie_ci95_low_ms)}-${fmt(row.chronaxie_ci95_high_ms)}), rheobase ${fmt(row.rheobase)}${row.intensityUnit ? ` ${row.intensityUnit}` : ''}`);
    for (const row of s.tables.temperature) console.log(`  Q10 ${row.class}: ${fmt(row.q10)} (95% CI ${fmt(row.q10_ci95_low)}-${fmt(row.q10_ci95_high)})`);
    for (const n of s.notes) console.log(`  note: ${n}`);
    console.log(`bundle written to ${flags.out}`);
    return 0;
  }
  if (cmd === 'merge') {
    if (!pos.length) throw new UsageError('merge needs one or more shard folders');
    if (typeof flags.out !== 'string') throw new UsageError('merge needs --out <dir>');
    await mergeShards(pos, flags.out);
    console.log(`merged ${pos.length} shard(s); bundle written to ${flags.out}`);
    return 0;
  }
  // rerun
  if (pos.length !== 1) throw new UsageError('rerun needs exactly one bundle folder');
  const prov = JSON.parse(readFileSync(join(pos[0], 'provenance.json'), 'utf8')) as Provenance;
  if (!prov.rerun) throw new UsageError(`${pos[0]}/provenance.json records no rerunnable analysis`);
  verifyInputs(prov);
  const tmp = mkdtempSync(join(tmpdir(), 'fascicle-rerun-'));
  try {
    const out = join(tmp, 'bundle');
    await runStudy({ manifest: prov.rerun.manifest, out, jobs: 1 });
    let n = 0;
    for (const f of readdirSync(join(pos[0], 'tables')).filter((x) => x.endsWith('.csv'))) {
      const a = readFileSync(join(pos[0], 'tables', f), 'utf8');
      const b = readFileSync(join(out, 'tables', f), 'utf8');
      if (a !== b) { console.error(`rerun differs in tables/${f}`); return 5; }
      n++;
    }
    console.log(`reproduced ${n} tables exactly from ${prov.inputs.length} verified input files`);
    return 0;
  } finally {
    rmSync(tmp, { recursive: true, force: true });
  }
}

function fmt(v: unknown): string {
  if (v === null || v === undefined) return 'not bounded';
  return typeof v === 'number' ? String(Number(v.toPrecision(3))) : String(v);
}

export async function cli(argv: string[]): Promise<number> {
  try {
    return await main(argv);
  } catch (e) {
    const err = e as Error;
    if (e instanceof UsageError) { console.error(`fascicle: ${err.message}\n(try fascicle --help)`); return 2; }
    if (e instanceof InputError || err.name === 'InputError') { console.error(`fascicle: bad input: ${err.message}`); return 3; }
    if (e instanceof AnalysisError || e instanceof OptionError || err.name === 'AnalysisError' || err.name === 'OptionError') { console.error(`fascicle: ${err.message}`); return 4; }
    console.error(`fascicle: unexpected error: ${err.stack ?? err.message}`);
    return 1;
  }
}

if (require.main === module) {
  cli(process.argv.slice(2)).then((code) => { process.exitCode = code; });
}
