/**
 * `reelwright check PATH… --queue URL --batch NAME [--wait]`: one job per audio file on the
 * Redis-backed queue (BullMQ), for `reelwright worker` processes on any number of machines.
 * Returns at once with the batch name and the number of jobs; `--wait` follows the batch and then
 * reports exactly like `check` on one machine.
 *
 * Enqueueing a batch again: a file whose size and modification time are those of its stored
 * result gets a job that only checksums the audio (the stored result is kept when the MD5 is the
 * same); a file still queued or being checked is left to its job; any other file is checked anew.
 */
import { randomUUID } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { Queue } from 'bullmq';
import { ParameterError } from '../../../dsp/errors.ts';
import { AUDIO_EXTENSIONS, collectAudioFiles, finishCheck, outsideManifest, type CheckSetup } from '../common.ts';
import { connect, hideCommandLine, parseQueueUrl, scrub, type QueueTarget } from './connection.ts';
import { batchKeys, checkBatchName, PREFIX, QUEUE_NAME, readMeta, type BatchMeta, type DoneRecord, type FileRecord, type QueueJobData } from './store.ts';
import { batchEntries, followBatch } from './batch.ts';

const CHUNK = 500;
/** Job states in which a file's job will still run. */
const PENDING = new Set(['waiting', 'active', 'delayed', 'prioritized', 'waiting-children']);

function positiveNumber(text: string | undefined, flag: string, dflt: number, min: number, max: number, integer = false): number {
  if (text === undefined) return dflt;
  const v = Number(text);
  if (!Number.isFinite(v) || v < min || v > max || (integer && !Number.isInteger(v))) {
    throw new ParameterError(`--${flag} ${text}: expected ${integer ? 'a whole number' : 'a number'} from ${min} to ${max}`);
  }
  return v;
}

export async function enqueueCheck(setup: CheckSetup, out: (s: string) => void, err: (s: string) => void): Promise<number> {
  const { args, str, outputs } = setup;
  const target = parseQueueUrl(str('queue')!);
  hideCommandLine(target, 'check');
  try {
    return await enqueue(setup, target, (s) => out(scrub(s, target)), (s) => err(scrub(s, target)));
  } catch (e) {
    if (e instanceof Error) e.message = scrub(e.message, target);
    throw e;
  }

  async function enqueue(_s: CheckSetup, t: QueueTarget, say: (s: string) => void, warn: (s: string) => void): Promise<number> {
    const batch = checkBatchName(str('batch'));
    const ttlSeconds = Math.max(1, Math.round(positiveNumber(str('keep-days'), 'keep-days', 30, 1 / 86400, 3650) * 86400));
    const attempts = positiveNumber(str('attempts'), 'attempts', 3, 1, 100, true);
    const retryMs = Math.round(positiveNumber(str('retry-seconds'), 'retry-seconds', 10, 0, 86400) * 1000);
    const wait = args.flags.get('wait') === true;
    for (const f of ['jobs', 'resume']) {
      if (args.flags.has(f)) throw new ParameterError(`--${f} does not apply with --queue (workers set their own --concurrency; enqueueing a batch again re-checks only changed files)`);
    }
    if (!wait && (outputs.json || outputs.html || outputs.csv || outputs.manifest || outputs.writeManifest)) {
      throw new ParameterError('the report options with --queue need --wait (or run `reelwright report --queue URL --batch NAME …` once the batch is done)');
    }
    const files = collectAudioFiles(args.positionals).map((p) => path.resolve(p));
    if (files.length === 0) {
      warn(`reelwright check: no audio files (${[...AUDIO_EXTENSIONS].join(' ')}) found in ${args.positionals.join(', ')}`);
      return 2;
    }
    if (outputs.writeManifest) outsideManifest(outputs.writeManifest, args.positionals, outputs);
    const stats = files.map((p) => {
      try {
        const st = fs.statSync(p);
        return { sizeBytes: st.size, mtimeMs: st.mtimeMs };
      } catch {
        return { sizeBytes: -1, mtimeMs: 0 }; // a dangling link: the worker reports it
      }
    });

    const redis = await connect(t, 'client', warn);
    const queue = new Queue(QUEUE_NAME, { connection: redis, prefix: PREFIX });
    try {
      const k = batchKeys(batch);
      const now = new Date().toISOString();
      const old = await readMeta(redis, batch);
      const absPaths = args.positionals.map((p) => path.resolve(p));
      const meta: BatchMeta = {
        v: 1,
        batch,
        createdAt: old?.createdAt ?? now,
        updatedAt: now,
        paths: [...new Set([...(old?.paths ?? []), ...absPaths])],
        thresholds: setup.thresholds,
        params: setup.params,
        ttlSeconds,
      };
      let queued = 0, verify = 0, still = 0;
      for (let at = 0; at < files.length; at += CHUNK) {
        const paths = files.slice(at, at + CHUNK);
        const [fileRaw, doneRaw] = await Promise.all([redis.hmget(k.files, ...paths), redis.hmget(k.done, ...paths)]);
        const states = await Promise.all(
          paths.map((_, i) => {
            const f = fileRaw[i];
            return f && doneRaw[i] === null ? queue.getJobState((JSON.parse(f) as FileRecord).token) : Promise.resolve('none');
          }),
        );
        const multi = redis.multi();
        const jobs: { name: string; data: QueueJobData; opts: object }[] = [];
        paths.forEach((p, i) => {
          const st = stats[at + i]!;
          const before = fileRaw[i] ? (JSON.parse(fileRaw[i]!) as FileRecord) : undefined;
          if (before && PENDING.has(states[i]!) && before.sizeBytes === st.sizeBytes && before.mtimeMs === st.mtimeMs) {
            still++;
            return;
          }
          const done = doneRaw[i] ? (JSON.parse(doneRaw[i]!) as DoneRecord) : undefined;
          const unchanged = done && !done.failed && done.audioMd5 && done.sizeBytes === st.sizeBytes && done.mtimeMs === st.mtimeMs ? done.audioMd5 : undefined;
          const token = randomUUID();
          const record: FileRecord = { ...st, token, enqueuedAt: Date.now() };
          multi.hset(k.files, p, JSON.stringify(record));
          multi.hdel(k.done, p);
          jobs.push({
            name: 'file',
            data: { v: 1, batch, path: p, ...st, token, params: setup.params, thresholds: setup.thresholds, ...(unchanged ? { previousMd5: unchanged } : {}), ttlSeconds },
            opts: {
              jobId: token,
              attempts,
              backoff: { type: 'exponential', delay: retryMs },
              removeOnComplete: true,
              removeOnFail: { age: ttlSeconds },
            },
          });
          if (unchanged) verify++;
          queued++;
        });
        multi.set(k.meta, JSON.stringify(meta));
        for (const key of Object.values(k)) multi.expire(key, ttlSeconds);
        await multi.exec();
        if (jobs.length) await queue.addBulk(jobs);
      }
      const detail = [
        verify ? `${verify} unchanged since the last run: audio checksum only` : '',
        still ? `${still} still queued from before` : '',
      ].filter(Boolean);
      say(`batch ${batch}: ${queued} job${queued === 1 ? '' : 's'} queued for ${files.length} file${files.length === 1 ? '' : 's'}${detail.length ? ` (${detail.join('; ')})` : ''} on ${t.display}`);
      if (!wait) {
        say(`follow it with --wait, or write its reports later: reelwright report --queue URL --batch ${batch} --report r.html --json r.json --csv r.csv`);
        return 0;
      }
      await followBatch(redis, queue, batch, args.flags.get('quiet') === true, warn);
      const final = (await readMeta(redis, batch)) ?? meta;
      const { entries, pending, seconds } = await batchEntries(redis, queue, batch, final);
      return finishCheck(entries, {
        paths: final.paths,
        thresholds: final.thresholds,
        seconds,
        outputs,
        batch,
        notes: pending.length ? [`${pending.length} file(s) not checked yet`] : [],
      }, say);
    } finally {
      await queue.close().catch(() => {});
      redis.disconnect();
    }
  }
}
