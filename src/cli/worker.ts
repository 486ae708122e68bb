/** Worker thread: processes one preparation per message. */
import { parentPort } from 'node:worker_threads';
import { processPreparation } from './engine';

parentPort!.on('message', (m: { manifest: string; files: number[] | null; prep: string; options: object }) => {
  try {
    const output = processPreparation(m.manifest, m.files, m.files ? null : m.prep, m.options);
    parentPort!.postMessage({ ok: true, output });
  } catch (e) {
    parentPort!.postMessage({ ok: false, error: { name: (e as Error).name, message: (e as Error).message } });
  }
});
