/**
 * Worker thread of `reelwright check`: takes one job at a time from the coordinator, posts progress
 * and then the result. Started through worker-entry.mjs, which registers the TypeScript loader.
 */
import { parentPort } from 'node:worker_threads';
import { openAudio } from '../io/reader.ts';
import { checkFile, type CheckJob } from './check-file.ts';

export type ToWorker = { type: 'job'; id: number; job: CheckJob } | { type: 'stop' };
export type FromWorker =
  | { type: 'ready' }
  | { type: 'progress'; id: number; fraction: number }
  | { type: 'result'; id: number; result: Awaited<ReturnType<typeof checkFile>> };

const port = parentPort!;
port.on('message', (msg: ToWorker) => {
  if (msg.type === 'stop') {
    port.close();
    return;
  }
  void (async () => {
    let last = 0;
    const result = await checkFile(msg.job, openAudio, (fraction) => {
      const now = Date.now();
      if (now - last < 250) return;
      last = now;
      port.postMessage({ type: 'progress', id: msg.id, fraction } satisfies FromWorker);
    });
    port.postMessage({ type: 'result', id: msg.id, result } satisfies FromWorker);
  })();
});
port.postMessage({ type: 'ready' } satisfies FromWorker);
