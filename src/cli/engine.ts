/** The command line's engine: run a manifest's study (in workers or shards) into a bundle. */
import { reportHtml } from '../report/reportHtml';
import { Worker } from 'node:worker_threads';
import { join, resolve, dirname, isAbsolute } from 'node:path';
import { readFileSync, existsSync } from 'node:fs';
import { readManifest, readManifestJson, type Manifest } from '../io/manifest';
import { runPreparation, combineStudy, byPreparation, type PrepOutput, type Study } from '../report/study';
import type { PipelineOptions } from '../report/pipeline';
import { writeBundle, makeProvenance, checkOutput, relativeProvenance, type Provenance } from '../report/bundle';
import { methodsText } from '../report/methods';
import { OptionError, InputError, ThreadError } from '../errors';
import { studyFigureFiles } from '../plot/study';
import { studyFigureList } from '../registry/index';
import { bundleColumns, studyColumnUnits } from '../registry/columns';
import { nwbReady } from '../io/nwbLib';

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

/** Whether a manifest lists an NWB file (read like the manifest reader: its format, else a .nwb name). */
export function listsNwb(m: Manifest): boolean {
  return m.files.some((f) => f.format === 'nwb' || (f.format === undefined && /\.nwb$/i.test(f.path)));
}

/** Load the HDF5 library in this thread when the manifest lists NWB files (the manifest reader is synchronous). */
export async function readyFor(manifestPath: string): Promise<void> {
  if (listsNwb(readManifestJson(manifestPath).manifest)) await nwbReady();
}

/** Process one preparation (by its file indices) in this thread. */
export function processPreparation(
  manifestPath: string,
  fileIndices: number[] | null,
  prep: string | null,
  options: PipelineOptions,
): PrepOutput {
  const set = readManifest(manifestPath, fileIndices ? { only: (_f, i) => fileIndices.includes(i) } : {});
  if (prep !== null && !fileIndices) {
    const part = byPreparation(set).find((p) => p.preparation === prep);
    if (!part)
      throw new InputError({ file: manifestPath }, `no sweeps of preparation ${prep}`, 'the preparation to be listed');
    return runPreparation(part.set, options);
  }
  return runPreparation(set, options);
}

function runInWorkers(
  tasks: { prep: string; files: number[] | null }[],
  manifest: string,
  options: PipelineOptions,
  jobs: number,
  onProgress?: RunOptions['onProgress'],
): Promise<PrepOutput[]> {
  return new Promise((resolvePromise, reject) => {
    const results: PrepOutput[] = [];
    let next = 0,
      done = 0,
      failed = false;
    const workers: Worker[] = [];
    const current = new Map<Worker, string>();
    const fail = (e: Error) => {
      if (failed) return;
      failed = true;
      workers.forEach((x) => void x.terminate());
      reject(e);
    };
    const startOne = (w: Worker) => {
      if (next >= tasks.length) {
        current.delete(w);
        void w.terminate();
        return;
      }
      const t = tasks[next++];
      current.set(w, t.prep);
      w.postMessage({ manifest, files: t.files, prep: t.prep, options });
    };
    const heap = workerHeapMb();
    for (let k = 0; k < Math.min(jobs, tasks.length); k++) {
      const w = new Worker(
        join(__dirname, 'worker.js'),
        heap ? { resourceLimits: { maxOldGenerationSizeMb: heap } } : {},
      );
      workers.push(w);
      type Failure = { name: string; message: string; place?: object; problem?: string; expected?: string };
      w.on('message', (msg: { ok: boolean; output?: PrepOutput; error?: Failure }) => {
        if (failed) return;
        if (!msg.ok) {
          const er = msg.error!;
          const e = new Error(er.message);
          if (er.name === 'InputError' || er.name === 'ConfigError')
            Object.assign(e, { place: er.place, problem: er.problem, expected: er.expected });
          e.name = er.name;
          fail(e);
          return;
        }
        results.push(msg.output!);
        done++;
        onProgress?.(done, tasks.length, msg.output!.preparation);
        if (done === tasks.length) {
          current.clear(); // the workers now stop on purpose
          workers.forEach((x) => void x.terminate());
          resolvePromise(results);
        } else startOne(w);
      });
      // a worker that dies (out of memory, exit, crash) ends the run with a clear error, never a hang or a silent
      // exit 0
      let why = '';
      w.on('error', (e) => {
        why =
          (e as NodeJS.ErrnoException).code === 'ERR_WORKER_OUT_OF_MEMORY'
            ? 'ran out of memory'
            : `crashed (${e.message})`;
      });
      w.on('exit', (code) => {
        const prep = current.get(w);
        if (failed || prep === undefined) return;
        fail(
          new ThreadError(
            `the --jobs worker thread processing preparation ${prep} ${why || `exited (code ${code})`} ` +
              'before it finished; ' +
              'no bundle was written (try fewer --jobs, or --jobs 1)',
          ),
        );
      });
      startOne(w);
    }
  });
}

/** Heap limit of each worker thread in MB, from FASCICLE_WORKER_HEAP_MB (unset: Node's default). */
export function workerHeapMb(): number | undefined {
  const env = process.env.FASCICLE_WORKER_HEAP_MB;
  if (env === undefined || env === '') return undefined;
  const v = Number(env);
  if (!Number.isInteger(v) || v < 8)
    throw new OptionError(`invalid FASCICLE_WORKER_HEAP_MB: ${JSON.stringify(env)}; must be an integer >= 8 (MB)`);
  return v;
}

/** The per-preparation outputs of a run (all, or a shard's share). */
export async function computeOutputs(o: RunOptions, options: PipelineOptions): Promise<PrepOutput[]> {
  const { manifest } = readManifestJson(o.manifest);
  if (listsNwb(manifest)) await nwbReady();
  const preps = preparationsOf(manifest);
  let tasks: { prep: string; files: number[] | null }[];
  if (preps) tasks = [...preps].map(([prep, files]) => ({ prep, files }));
  else {
    const all = readManifest(o.manifest);
    tasks = [...new Set(all.conditions.map((c) => String(c.preparation ?? '')))]
      .sort()
      .map((prep) => ({ prep, files: null }));
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

/**
 * The pipeline options of a manifest: its "analysis" section (checked by the manifest
 * reader), with a top-level "classPreset" as the components' preset.
 */
export function analysisOptions(manifestPath: string): PipelineOptions {
  const m = readManifestJson(manifestPath).manifest;
  const o = { ...(m.analysis ?? {}) } as PipelineOptions;
  if (m.classPreset !== undefined)
    o.components = { ...(o.components ?? {}), preset: o.components?.preset ?? m.classPreset };
  return o;
}

/** Every input a manifest names (the manifest, its folder, each listed file): an output must not be or hold any. */
export function manifestInputs(manifestPath: string): string[] {
  const m = readManifestJson(manifestPath).manifest;
  const dir = dirname(resolve(manifestPath));
  return [resolve(manifestPath), dir, ...m.files.map((f) => (isAbsolute(f.path) ? f.path : join(dir, f.path)))];
}

/**
 * The tables a study's bundle holds: every table with rows (an analysis that had no data writes no file; the report
 * and notes say why), and the flags table always (with its header when nothing was flagged); columns named in the
 * bundle's style with their units (src/registry/columns.ts).
 */
export function bundleTables(study: Study): Record<string, Record<string, unknown>[]> {
  const out: Record<string, Record<string, unknown>[]> = {};
  const units = studyColumnUnits(study);
  for (const [name, rows] of Object.entries(study.tables))
    if (rows && (rows.length || name === 'flags')) out[name] = bundleColumns(name, rows, units);
  return out;
}

/** Write the bundle of a combined study. */
export async function writeStudyBundle(
  out: string,
  study: Study,
  rerun: Provenance['rerun'],
  preparations: number,
  figures = true,
): Promise<string[]> {
  const files0 =
    rerun?.manifest && existsSync(rerun.manifest) ? readManifestJson(rerun.manifest).manifest.files.length : undefined;
  const named = rerun?.manifest && existsSync(rerun.manifest) ? manifestInputs(rerun.manifest) : [];
  const inputs = [...named, ...study.sources.map((s) => s.path)];
  checkOutput(out, inputs);
  const files: Record<string, string> = {};
  if (figures) Object.assign(files, studyFigureFiles(studyFigureList(study)));
  let provenance = makeProvenance(study.history, study.sources, rerun);
  if (rerun?.manifest) provenance = relativeProvenance(provenance, rerun.manifest, out);
  const methods = methodsText(study.history, { ...(study.recording ?? {}), preparations, files: files0 });
  // one offline page with the summary, figures, tables, flags, methods and provenance (uses the bundle's plotly copy)
  files['report.html'] = reportHtml({ study, methods, provenance, bundle: true, ...(figures ? {} : { figures: [] }) });
  return writeBundle(
    out,
    {
      tables: bundleTables(study),
      methods,
      provenance,
      files: { ...files, 'notes.txt': study.notes.length ? study.notes.join('\n') + '\n' : 'no notes\n' },
    },
    { inputs },
  );
}

/** Run a manifest's study and write its bundle (or, with a shard, the shard's partial output). */
export async function runStudy(o: RunOptions): Promise<{ out: string; study: Study | null; outputs: PrepOutput[] }> {
  if (o.jobs !== undefined && !(Number.isInteger(o.jobs) && o.jobs >= 1 && o.jobs <= 64))
    throw new OptionError(`invalid --jobs: ${o.jobs}; must be an integer 1..64`);
  workerHeapMb(); // a bad FASCICLE_WORKER_HEAP_MB is an error even when no worker thread is started
  const options = analysisOptions(o.manifest);
  // refuse a destination that would lose files before any work is done
  checkOutput(o.out, manifestInputs(o.manifest));
  const outputs = await computeOutputs(o, options);
  const rerun = {
    manifest: resolve(o.manifest),
    options,
    ...(o.shard ? { shard: `${o.shard.index}/${o.shard.count}` } : {}),
  };
  if (o.shard) {
    const inputs = [...manifestInputs(o.manifest), ...outputs.flatMap((p) => p.sources.map((s) => s.path))];
    const prov = relativeProvenance(
      makeProvenance(
        [],
        outputs.flatMap((p) => p.sources),
        rerun,
      ),
      rerun.manifest,
      o.out,
    );
    const shard = { shard: rerun.shard, manifest: prov.rerun!.manifest, options, outputs };
    writeBundle(
      o.out,
      { tables: {}, methods: '', provenance: prov, files: { 'shard.json': JSON.stringify(shard) } },
      { inputs },
    );
    return { out: o.out, study: null, outputs };
  }
  const study = combineStudy(outputs, options);
  await writeStudyBundle(o.out, study, rerun, outputs.length, o.figures !== false);
  return { out: o.out, study, outputs };
}

/** Merge shard outputs into one bundle. */
export async function mergeShards(dirs: string[], out: string): Promise<Study> {
  // the shard folders are the inputs of a merge: never the destination, nor inside it
  checkOutput(
    out,
    dirs.map((d) => resolve(d)),
  );
  const all: PrepOutput[] = [];
  let manifest = '',
    options: PipelineOptions = {};
  const seen = new Map<string, string>(); // shard "i/n" -> its folder
  let first: { dir: string; manifest: string; options: string; count: number } | null = null;
  for (const d of dirs) {
    const p = join(d, 'shard.json');
    if (!existsSync(p))
      throw new InputError({ file: p }, 'not found', 'a shard output written by "fascicle run --shard i/n"');
    let s: { shard?: unknown; manifest: string; options: PipelineOptions; outputs: PrepOutput[] };
    try {
      s = JSON.parse(readFileSync(p, 'utf8'));
    } catch (e) {
      throw new InputError(
        { file: p },
        `invalid JSON (${(e as Error).message})`,
        'a shard output written by "fascicle run --shard i/n"',
      );
    }
    if (!s || typeof s.manifest !== 'string' || !Array.isArray(s.outputs))
      throw new InputError({ file: p }, 'not a shard output', 'a shard output written by "fascicle run --shard i/n"');
    const tag = typeof s.shard === 'string' ? s.shard : '?/?';
    const before = seen.get(tag);
    if (before !== undefined)
      throw new InputError(
        { file: p },
        `shard ${tag} is given twice (${before} and ${d})`,
        'each shard of one run, once',
      );
    seen.set(tag, d);
    const here = {
      dir: d,
      manifest: resolve(d, s.manifest),
      options: JSON.stringify(s.options ?? {}),
      count: Number(tag.split('/')[1]),
    };
    first ??= here;
    if (here.manifest !== first.manifest || here.options !== first.options || here.count !== first.count)
      throw new InputError(
        { file: p },
        here.manifest !== first.manifest
          ? `the shard is of ${here.manifest}, the shard in ${first.dir} of ${first.manifest}`
          : here.count !== first.count
            ? `the shard is one of ${here.count}, the shard in ${first.dir} one of ${first.count}`
            : `the shard was run with other analysis options than the shard in ${first.dir}`,
        'the shards of one run of one manifest',
      );
    manifest = resolve(d, s.manifest);
    options = s.options;
    all.push(...s.outputs);
  }
  const n = first?.count ?? 0;
  const missing = Array.from({ length: Number.isInteger(n) ? n : 0 }, (_, i) => `${i + 1}/${n}`).filter(
    (t) => !seen.has(t),
  );
  if (missing.length)
    throw new InputError(
      { file: dirs.join(', ') },
      `shard${missing.length === 1 ? '' : 's'} ${missing.join(', ')} of the run ${missing.length === 1 ? 'is' : 'are'} ` +
        'missing: the merged bundle would leave out their preparations',
      `all ${n} shards`,
    );
  const preps = all.map((o) => o.preparation);
  const dup = preps.find((p, i) => preps.indexOf(p) !== i);
  if (dup !== undefined)
    throw new InputError(
      { file: dirs.join(', ') },
      `preparation ${dup} appears in more than one shard`,
      'each shard of one run, once',
    );
  const study = combineStudy(all, options);
  await writeStudyBundle(out, study, { manifest, options }, all.length);
  return study;
}
