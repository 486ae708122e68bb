/** The command line's engine: run a manifest's study (in workers or shards) into a bundle. */
import { Worker } from 'node:worker_threads';
import { join, resolve } from 'node:path';
import { readFileSync, existsSync } from 'node:fs';
import { readManifest, readManifestJson, type Manifest } from '../io/manifest';
import { runPreparation, combineStudy, byPreparation, type PrepOutput, type Study } from '../report/study';
import type { PipelineOptions } from '../report/pipeline';
import { writeBundle, makeProvenance, type Provenance } from '../report/bundle';
import { methodsText } from '../report/methods';
import { OptionError, InputError } from '../errors';
import { studyFigures } from '../plot/study';

export interface RunOptions {
  manifest: string;
  out: string;
  jobs?: number;
  shard?: { index: number; count: number };
  figures?: boolean;
  onProgress?: (done: number, total: number, prep: string) => void;
}

/** Preparations of a manifest, sorted, each with the indices of its files (null when a file mixes preparations). */
export function preparationsOf(m: Manifest): Map<string, number[]> | null {
  const out = new Map<string, number[]>();
  for (let i = 0; i < m.files.length; i++) {
    const f = m.files[i];
    const p = f.conditions?.preparation ?? m.defaults?.preparation;
    if (p === undefined || p === null || (f.sweeps && f.sweeps.some((s) => 'preparation' in s))) return null;
    const k = String(p);
    (out.get(k) ?? out.set(k, []).get(k)!).push(i);
  }
  return new Map([...out].sort((a, b) => (a[0] < b[0] ? -1 : 1)));
}

/** Process one preparation (by its file indices) in this thread. */
export function processPreparation(manifestPath: string, fileIndices: number[] | null, prep: string | null, options: PipelineOptions): PrepOutput {
  const set = readManifest(manifestPath, fileIndices ? { only: (_f, i) => fileIndices.includes(i) } : {});
  if (prep !== null && !fileIndices) {
    const part = byPreparation(set).find((p) => p.preparation === prep);
    if (!part) throw new InputError({ file: manifestPath }, `no sweeps of preparation ${prep}`, 'the preparation to be listed');
    return runPreparation(part.set, options);
  }
  return runPreparation(set, options);
}

function runInWorkers(tasks: { prep: string; files: number[] | null }[], manifest: string, options: PipelineOptions, jobs: number, onProgress?: RunOptions['onProgress']): Promise<PrepOutput[]> {
  return new Promise((resolvePromise, reject) => {
    const results: PrepOutput[] = [];
    let next = 0, done = 0, failed = false;
    const workers: Worker[] = [];
    const startOne = (w: Worker) => {
      if (next >= tasks.length) { w.terminate(); return; }
      const t = tasks[next++];
      w.postMessage({ manifest, files: t.files, prep: t.prep, options });
    };
    for (let k = 0; k < Math.min(jobs, tasks.length); k++) {
      const w = new Worker(join(__dirname, 'worker.js'));
      workers.push(w);
      w.on('message', (msg: { ok: boolean; output?: PrepOutput; error?: { name: string; message: string } }) => {
        if (failed) return;
        if (!msg.ok) {
          failed = true;
          workers.forEach((x) => x.terminate());
          const e = new Error(msg.error!.message);
          e.name = msg.error!.name;
          reject(e);
          return;
        }
        results.push(msg.output!);
        done++;
        onProgress?.(done, tasks.length, msg.output!.preparation);
        if (done === tasks.length) { workers.forEach((x) => x.terminate()); resolvePromise(results); }
        else startOne(w);
      });
      w.on('error', (e) => { if (!failed) { failed = true; workers.forEach((x) => x.terminate()); reject(e); } });
      startOne(w);
    }
  });
}

/** The per-preparation outputs of a run (all, or a shard's share). */
export async function computeOutputs(o: RunOptions, options: PipelineOptions): Promise<PrepOutput[]> {
  const { manifest } = readManifestJson(o.manifest);
  const preps = preparationsOf(manifest);
  let tasks: { prep: string; files: number[] | null }[];
  if (preps) tasks = [...preps].map(([prep, files]) => ({ prep, files }));
  else {
    const all = readManifest(o.manifest);
    tasks = [...new Set(all.conditions.map((c) => String(c.preparation ?? '')))].sort().map((prep) => ({ prep, files: null }));
  }
  if (o.shard) tasks = tasks.filter((_, i) => i % o.shard!.count === o.shard!.index - 1);
  const jobs = o.jobs ?? 1;
  if (jobs > 1 && tasks.length > 1) return runInWorkers(tasks, resolve(o.manifest), options, jobs, o.onProgress);
  const out: PrepOutput[] = [];
  for (const t of tasks) {
    out.push(processPreparation(o.manifest, t.files, t.files ? null : t.prep, options));
    o.onProgress?.(out.length, tasks.length, t.prep);
  }
  return out;
}

export function analysisOptions(manifestPath: string): PipelineOptions {
  return (readManifestJson(manifestPath).manifest.analysis ?? {}) as PipelineOptions;
}

/** Write the bundle of a combined study. */
export async function writeStudyBundle(out: string, study: Study, rerun: Provenance['rerun'], preparations: number, figures = true): Promise<string[]> {
  const files0 = rerun?.manifest && existsSync(rerun.manifest) ? readManifestJson(rerun.manifest).manifest.files.length : undefined;
  const files: Record<string, string> = {};
  if (figures) Object.assign(files, studyFigures(study));
  return writeBundle(out, {
    tables: study.tables as unknown as Record<string, Record<string, unknown>[]>,
    methods: methodsText(study.history, { preparations, files: files0 }),
    provenance: makeProvenance(study.history, study.sources, rerun),
    files: { ...files, 'notes.txt': study.notes.length ? study.notes.join('\n') + '\n' : 'no notes\n' },
  });
}

/** Run a manifest's study and write its bundle (or, with a shard, the shard's partial output). */
export async function runStudy(o: RunOptions): Promise<{ out: string; study: Study | null; outputs: PrepOutput[] }> {
  if (o.jobs !== undefined && !(Number.isInteger(o.jobs) && o.jobs >= 1 && o.jobs <= 64)) throw new OptionError(`invalid --jobs: ${o.jobs}; must be an integer 1..64`);
  const options = analysisOptions(o.manifest);
  const outputs = await computeOutputs(o, options);
  const rerun = { manifest: resolve(o.manifest), options, ...(o.shard ? { shard: `${o.shard.index}/${o.shard.count}` } : {}) };
  if (o.shard) {
    const { writeBundle: wb } = await import('../report/bundle');
    wb(o.out, { tables: {}, methods: '', provenance: makeProvenance([], outputs.flatMap((p) => p.sources), rerun), files: { 'shard.json': JSON.stringify({ shard: rerun.shard, manifest: rerun.manifest, options, outputs }) } });
    return { out: o.out, study: null, outputs };
  }
  const study = combineStudy(outputs, options);
  await writeStudyBundle(o.out, study, rerun, outputs.length, o.figures !== false);
  return { out: o.out, study, outputs };
}

/** Merge shard outputs into one bundle. */
export async function mergeShards(dirs: string[], out: string): Promise<Study> {
  const all: PrepOutput[] = [];
  let manifest = '', options: PipelineOptions = {};
  for (const d of dirs) {
    const p = join(d, 'shard.json');
    if (!existsSync(p)) throw new InputError({ file: p }, 'not found', 'a shard output written by "fascicle run --shard i/n"');
    const s = JSON.parse(readFileSync(p, 'utf8'));
    manifest = s.manifest; options = s.options;
    all.push(...s.outputs);
  }
  const preps = all.map((o) => o.preparation);
  const dup = preps.find((p, i) => preps.indexOf(p) !== i);
  if (dup !== undefined) throw new InputError({ file: dirs.join(', ') }, `preparation ${dup} appears in more than one shard`, 'each shard of one run, once');
  const study = combineStudy(all, options);
  await writeStudyBundle(out, study, { manifest, options }, all.length);
  return study;
}
