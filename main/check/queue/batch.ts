/**
 * Reading a queued batch back: following it until every file is checked (`check --queue … --wait`),
 * recording files whose jobs failed for good, and turning the stored results into report entries
 * in the order `check` on one machine lists them.
 */
import type { Redis } from 'ioredis';
import type { Queue } from 'bullmq';
import type { FileEntry } from '../check-file.ts';
import { Progress } from '../../cli/output.ts';
import { batchKeys, failureEntry, readHash, readResults, storeResult, type BatchMeta, type DoneRecord, type FileRecord, type QueueJobData, type ResultRecord } from './store.ts';

/** A job's failure text from BullMQ, in the words of the report. */
export function failureText(reason: string | undefined, attempts: number): string {
  const r = reason ?? 'unknown reason';
  if (/stalled more than allowable limit/.test(r)) return `a worker stopped while checking it (killed, or out of memory) more often than allowed; not tried again`;
  if (/started more than allowable limit/.test(r)) return `started more often than allowed (workers keep stopping on it); not tried again`;
  return attempts <= 1 || r.startsWith('refused') ? r : `${r} (tried ${attempts} times)`;
}

/**
 * Records a result for every failed job of this batch that has none yet (a worker records its
 * own failures; this covers jobs that failed without one, e.g. after stalling too often).
 * Returns how many it recorded.
 */
export async function recordFailedJobs(redis: Redis, queue: Queue, batch: string): Promise<number> {
  let recorded = 0;
  for (let start = 0; ; start += 500) {
    const jobs = await queue.getFailed(start, start + 499);
    if (jobs.length === 0) break;
    for (const job of jobs) {
      const d = job.data as Partial<QueueJobData> | undefined;
      if (!d || d.batch !== batch || typeof d.path !== 'string' || typeof d.token !== 'string') continue;
      const record: ResultRecord = {
        v: 1,
        token: d.token,
        sizeBytes: d.sizeBytes ?? -1,
        mtimeMs: d.mtimeMs ?? 0,
        status: 'fail',
        worker: '',
        attempt: job.attemptsStarted ?? job.attemptsMade ?? 0,
        finishedAt: new Date(job.finishedOn ?? Date.now()).toISOString(),
        entry: failureEntry(d.path, failureText(job.failedReason, job.attemptsMade ?? 1)),
      };
      if (await storeResult(redis, batch, d.path, record, d.ttlSeconds ?? 86400, true)) recorded++;
    }
    if (jobs.length < 500) break;
  }
  return recorded;
}

/**
 * Records a failure for files whose job is gone from the queue without a result (Redis restarted
 * without its append-only file, keys evicted or deleted), so that following the batch ends and a
 * new enqueue checks them again. Files enqueued in the last `graceMs` are left alone.
 */
export async function recordLostJobs(redis: Redis, queue: Queue, batch: string, graceMs = 30_000, limit = 2000): Promise<number> {
  const k = batchKeys(batch);
  const [files, done] = await Promise.all([readHash(redis, k.files), redis.hkeys(k.done)]);
  const finished = new Set(done);
  let recorded = 0, looked = 0;
  for (const [p, raw] of files) {
    if (finished.has(p)) continue;
    if (++looked > limit) break;
    const f = JSON.parse(raw) as FileRecord;
    if (Date.now() - f.enqueuedAt < graceMs) continue;
    if ((await queue.getJobState(f.token)) !== 'unknown') continue;
    const record: ResultRecord = {
      v: 1, token: f.token, sizeBytes: f.sizeBytes, mtimeMs: f.mtimeMs, status: 'fail', worker: '', attempt: 0,
      finishedAt: new Date().toISOString(),
      entry: failureEntry(p, 'not checked: its job was lost from the queue (enqueue the batch again to check it)'),
    };
    const meta = await redis.ttl(k.files);
    if (await storeResult(redis, batch, p, record, meta > 0 ? meta : 86400, true)) recorded++;
  }
  return recorded;
}

export async function counts(redis: Redis, batch: string): Promise<{ total: number; done: number }> {
  const k = batchKeys(batch);
  const [total, done] = await Promise.all([redis.hlen(k.files), redis.hlen(k.done)]);
  return { total, done };
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * Follows a batch until every file has a result: a progress bar on a terminal, a line every 30 s
 * otherwise. Says so when no worker is connected.
 */
export async function followBatch(redis: Redis, queue: Queue, batch: string, quiet: boolean, log: (s: string) => void): Promise<void> {
  const progress = new Progress(`batch ${batch}`, quiet);
  const tty = Boolean(process.stderr.isTTY);
  let lastLine = Date.now(), lastSweep = 0, lastLostSweep = Date.now(), warnedNoWorker = false;
  const t0 = Date.now();
  for (;;) {
    const { total, done } = await counts(redis, batch);
    if (done >= total) break;
    progress.update(total ? done / total : 1, `(${done}/${total} files)`);
    const now = Date.now();
    if (!quiet && !tty && now - lastLine >= 30_000) {
      log(`batch ${batch}: ${done} of ${total} files checked`);
      lastLine = now;
    }
    if (now - lastSweep >= 3000) {
      lastSweep = now;
      await recordFailedJobs(redis, queue, batch);
      if (now - lastLostSweep >= 30_000) {
        lastLostSweep = now;
        await recordLostJobs(redis, queue, batch);
      }
      if (!warnedNoWorker && now - t0 > 10_000 && (await queue.getWorkersCount()) === 0) {
        warnedNoWorker = true;
        progress.done();
        log(`batch ${batch}: no worker is connected to the queue yet; start one with \`reelwright worker --queue URL --root DIR\``);
      }
    }
    await sleep(300);
  }
  progress.done();
}

/** The batch's report entries (unjudged), sorted by path as `check` sorts them, and what is still open. */
export async function batchEntries(redis: Redis, queue: Queue, batch: string, meta: BatchMeta): Promise<{ entries: FileEntry[]; pending: string[]; seconds: number }> {
  await recordFailedJobs(redis, queue, batch);
  const k = batchKeys(batch);
  const [files, done, results] = await Promise.all([readHash(redis, k.files), readHash(redis, k.done), readResults(redis, batch)]);
  const entries: FileEntry[] = [];
  const pending: string[] = [];
  let last = 0;
  const since = Date.parse(meta.updatedAt);
  for (const p of [...files.keys()].sort()) {
    const f = JSON.parse(files.get(p)!) as FileRecord;
    const d = done.get(p);
    const rec = results.get(p);
    if (d !== undefined && rec !== undefined && (JSON.parse(d) as DoneRecord).token === f.token) {
      entries.push(rec.entry);
      const t = Date.parse(rec.finishedAt);
      if (t >= since) last = Math.max(last, t);
      continue;
    }
    const state = await queue.getJobState(f.token);
    const why =
      state === 'active' ? 'not checked yet: a worker is checking it'
      : state === 'unknown' ? 'not checked: its job is no longer on the queue (enqueue the batch again to check it)'
      : 'not checked yet: waiting for a worker';
    pending.push(p);
    entries.push(failureEntry(p, why));
  }
  return { entries, pending, seconds: last > since ? (last - since) / 1000 : 0 };
}
