/**
 * A check process of `reelwright check` and `reelwright worker` (thread.ts starts it): takes one
 * job at a time from the coordinator over the IPC channel, posts progress and then the result.
 * Started through worker-entry.mjs, which registers the TypeScript loader.
 *
 * Ctrl+C and SIGTERM reach every process of a terminal's (or a service's) process group: this one
 * leaves them to the coordinator, which decides whether the file in progress is finished first
 * (the queue worker) and then stops it. When the coordinator goes away (killed), the channel
 * closes and this process ends.
 */
import { checkFile, type CheckJob } from './check-file.ts';
import { openAudio } from '../io/reader.ts';
import { installReclaim } from '../io/reclaim.ts';

export type ToWorker = { type: 'job'; id: number; job: CheckJob } | { type: 'stop' };
export type FromWorker =
  | { type: 'ready' }
  | { type: 'progress'; id: number; fraction: number }
  | { type: 'result'; id: number; result: Awaited<ReturnType<typeof checkFile>> };

if (!process.send) throw new Error('worker.ts runs as a check process started by main/check/thread.ts');
const send = (m: FromWorker) => {
  if (process.connected) process.send!(m);
};
installReclaim();
process.on('SIGINT', () => {});
process.on('SIGTERM', () => {});
process.on('disconnect', () => process.exit(0));
process.on('message', (msg: ToWorker) => {
  if (msg.type === 'stop') {
    process.disconnect();
    return;
  }
  void (async () => {
    let last = 0;
    const result = await checkFile(msg.job, openAudio, (fraction) => {
      const now = Date.now();
      if (now - last < 250) return;
      last = now;
      send({ type: 'progress', id: msg.id, fraction });
    });
    send({ type: 'result', id: msg.id, result });
  })();
});
send({ type: 'ready' });
