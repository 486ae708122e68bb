/** Worker thread: processes one preparation per message. */
import { parentPort } from 'node:worker_threads';
import { processPreparation, readyFor } from './engine';

parentPort!.on('message', async (m: { manifest: string; files: number[] | null; prep: string; options: object }) => {
  try {
    await readyFor(m.manifest); // each thread loads the HDF5 library itself when the study has NWB files
    const output = processPreparation(m.manifest, m.files, m.files ? null : m.prep, m.options);
    parentPort!.postMessage({ ok: true, output });
  } catch (e) {
    const x = e as Error & { place?: object; problem?: string; expected?: string };
    const error = { name: x.name, message: x.message, place: x.place, problem: x.problem, expected: x.expected };
    parentPort!.postMessage({ ok: false, error });
  }
});
