/**
 * `reelwright worker --queue URL --root DIR… [--concurrency N] [--lock-seconds S] [--quiet]`:
 * takes jobs that `check --queue` put on the queue and runs on each file exactly the check that
 * `check` runs on one machine (check-file.ts, in check processes), then stores the entry in Redis.
 *
 * Safety: a job's path is resolved to its real path (so `..` and symbolic links are followed) and
 * refused unless it lies inside one of the --root folders (also resolved). A job is held under a
 * lock renewed while the file is checked; a worker that dies (SIGKILL, power) stops renewing it,
 * and once it expires another worker takes the job over. Failures to reach the file are retried
 * (the job's attempts, with a growing pause) and then recorded as the file's error; a file that
 * cannot be read as audio is a result like on one machine, not a retry.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { UnrecoverableError, Worker, type Job } from 'bullmq';
import type { Redis } from 'ioredis';
import { ParameterError } from '../../../dsp/errors.ts';
import { findOperation } from '../../../dsp/ops/registry.ts';
import { validateParams } from '../../../dsp/ops/params.ts';
import { parseArgs } from '../../cli/args.ts';
import { reportError } from '../../cli/shared.ts';
import type { FileEntry, JobResult } from '../check-file.ts';
import { judge, type Thresholds } from '../thresholds.ts';
import { CheckThreadPool } from '../thread.ts';
import { connect, hideCommandLine, parseQueueUrl, scrub, type QueueTarget } from './connection.ts';
import { failureText } from './batch.ts';
import { checkBatchName, failureEntry, PREFIX, QUEUE_NAME, readResult, storeResult, type QueueJobData, type ResultRecord } from './store.ts';

const USAGE = `reelwright worker --queue redis://HOST:PORT/DB --root DIR [--root DIR…] [options]

Takes files queued by \`reelwright check PATH… --queue URL --batch NAME\` and checks each exactly as
\`reelwright check\` does on one machine; the results stay in Redis for \`reelwright report\`. Start
one on every machine that can read the files (at the same paths). Stop with Ctrl+C or SIGTERM: the
files in progress are finished first (a second signal stops at once; their jobs then pass to
another worker when their lock expires).

Options:
  --queue URL                 redis://[:PASSWORD@]HOST:PORT/DB, or rediss://… for TLS (the password may
                              instead be in REELWRIGHT_QUEUE_PASSWORD).
  --root DIR                  A folder this worker may read; repeat for several. A job for a file
                              outside every root (after following links and "..") is refused.
  --concurrency N             Files checked at once, one process each (default: the number of cores).
  --lock-seconds S            How long a job stays locked to this worker without a sign of life before
                              another worker may take it over (default 30).
  --quiet                     No line per file.`;

/** Values of a flag that may be given several times (`--root A --root B`), and the other arguments. */
function takeRepeated(argv: readonly string[], flag: string): { values: string[]; rest: string[] } {
  const values: string[] = [], rest: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === `--${flag}`) {
      const v = argv[++i];
      if (v === undefined) throw new ParameterError(`--${flag} needs a value`);
      values.push(v);
    } else if (a.startsWith(`--${flag}=`)) values.push(a.slice(flag.length + 3));
    else rest.push(a);
  }
  return { values, rest };
}

/** True when `real` (a resolved path) is one of the roots or lies inside one. */
export function insideRoots(real: string, roots: readonly string[]): boolean {
  return roots.some((r) => real === r || real.startsWith(r.endsWith(path.sep) ? r : r + path.sep));
}

/** A job's data, checked field by field (anything may have put it on the queue); a string says what is wrong. */
export function checkJobData(d: unknown): QueueJobData | string {
  if (d === null || typeof d !== 'object') return 'job data is not an object';
  const j = d as Record<string, unknown>;
  if (j.v !== 1) return `job data version ${String(j.v)} is not known to this worker (update reelwright)`;
  if (typeof j.batch !== 'string') return 'job data has no batch';
  try {
    checkBatchName(j.batch);
  } catch {
    return 'job data has an invalid batch name';
  }
  if (typeof j.path !== 'string' || !path.isAbsolute(j.path) || j.path.includes('\0')) return 'job path is not an absolute path';
  if (typeof j.token !== 'string' || !/^[A-Za-z0-9-]{1,64}$/.test(j.token)) return 'job has no valid token';
  for (const f of ['sizeBytes', 'mtimeMs', 'ttlSeconds'] as const) if (typeof j[f] !== 'number' || !Number.isFinite(j[f])) return `job data has no ${f}`;
  if (j.params === null || typeof j.params !== 'object' || Array.isArray(j.params)) return 'job params are not an object';
  if (j.thresholds === null || typeof j.thresholds !== 'object' || Array.isArray(j.thresholds)) return 'job thresholds are not an object';
  if (j.previousMd5 !== undefined && (typeof j.previousMd5 !== 'string' || !/^[0-9a-f]{32}$/.test(j.previousMd5))) return 'job previousMd5 is not an MD5';
  for (const [verb, values] of Object.entries(j.params as Record<string, unknown>)) {
    const op = findOperation(verb);
    if (!op || op.kind !== 'analysis') return `job params name no analysis "${verb}"`;
    try {
      validateParams(op.params, values as never);
    } catch (e) {
      return `job params for ${verb}: ${(e as Error).message}`;
    }
  }
  return j as unknown as QueueJobData;
}

export interface WorkerOptions {
  out?: (s: string) => void;
  err?: (s: string) => void;
  /** Resolves to stop the worker as SIGTERM would (tests). */
  stop?: Promise<void>;
}

export async function runWorker(argv: string[], options: WorkerOptions = {}): Promise<number> {
  const out = options.out ?? ((s: string) => void process.stdout.write(s.endsWith('\n') ? s : s + '\n'));
  const err = options.err ?? ((s: string) => void process.stderr.write(s.endsWith('\n') ? s : s + '\n'));
  let target: QueueTarget | undefined;
  try {
    const { values: rootArgs, rest } = takeRepeated(argv, 'root');
    const args = parseArgs(rest, { booleans: new Set(['help', 'quiet']), values: new Set(['queue', 'concurrency', 'lock-seconds']) });
    if (args.flags.get('help')) {
      out(USAGE);
      return 0;
    }
    if (args.positionals.length) throw new ParameterError(`unexpected argument ${args.positionals[0]} (the worker takes its files from the queue)`);
    const url = args.flags.get('queue');
    if (typeof url !== 'string') throw new ParameterError('--queue URL is required (usage: reelwright worker --queue redis://HOST:PORT/DB --root DIR)');
    target = parseQueueUrl(url);
    hideCommandLine(target, 'worker');
    if (rootArgs.length === 0) throw new ParameterError('--root DIR is required: the folders this worker may read (repeat for several)');
    const roots = rootArgs.map((r) => {
      try {
        const real = fs.realpathSync(r);
        if (!fs.statSync(real).isDirectory()) throw new ParameterError(`--root ${r}: not a folder`);
        return real;
      } catch (e) {
        if (e instanceof ParameterError) throw e;
        throw new ParameterError(`--root ${r}: no such folder`);
      }
    });
    const cText = args.flags.get('concurrency');
    const concurrency = cText === undefined ? Math.max(1, os.availableParallelism?.() ?? os.cpus().length) : Number(cText);
    if (!Number.isInteger(concurrency) || concurrency < 1 || concurrency > 256) throw new ParameterError(`--concurrency ${String(cText)}: expected a whole number from 1 to 256`);
    const lText = args.flags.get('lock-seconds');
    const lockSeconds = lText === undefined ? 30 : Number(lText);
    if (!Number.isFinite(lockSeconds) || lockSeconds < 0.5 || lockSeconds > 3600) throw new ParameterError(`--lock-seconds ${String(lText)}: expected a number from 0.5 to 3600`);
    const t = target;
    const say = (s: string) => err(scrub(`${new Date().toISOString()} ${s}`, t));
    return await work({ target: t, roots, concurrency, lockMs: Math.round(lockSeconds * 1000), quiet: args.flags.get('quiet') === true, say, stop: options.stop });
  } catch (e) {
    if (e instanceof Error) e.message = scrub(e.message, target);
    return reportError('worker', e);
  }
}

interface WorkSetup {
  target: QueueTarget;
  roots: string[];
  concurrency: number;
  lockMs: number;
  quiet: boolean;
  say: (s: string) => void;
  stop?: Promise<void>;
}

async function work(s: WorkSetup): Promise<number> {
  const id = `${os.hostname()}/${process.pid}`;
  const pool = new CheckThreadPool(s.concurrency);
  await pool.ready();
  const redis = await connect(s.target, 'worker', s.say);
  const worker = new Worker<QueueJobData>(QUEUE_NAME, (job) => processJob(job), {
    connection: redis,
    prefix: PREFIX,
    concurrency: s.concurrency,
    lockDuration: s.lockMs,
    stalledInterval: s.lockMs,
    // A job whose worker died this often is failed, not retried again (a file that kills workers).
    maxStalledCount: 2,
    name: id,
    autorun: false,
  });
  // BullMQ reports each failed command while the queue is away; one line per message a minute.
  const said = new Map<string, number>();
  worker.on('error', (e) => {
    const now = Date.now();
    if (/ECONNREFUSED|ECONNRESET|ETIMEDOUT|Connection is closed/.test(e.message)) return; // connection.ts says so once
    if (now - (said.get(e.message) ?? 0) < 60_000) return;
    said.set(e.message, now);
    s.say(`worker ${id}: ${e.message}`);
  });
  worker.on('failed', (job, e) => void recordFinalFailure(job, e));
  s.say(`worker ${id}: taking files from ${s.target.display} (${s.concurrency} at a time; roots ${s.roots.join(', ')})`);

  /** The job's last attempt failed (or it may not be retried): its file's result says why. */
  async function recordFinalFailure(job: Job<QueueJobData> | undefined, e: Error): Promise<void> {
    if (!job) return;
    const d = checkJobData(job.data);
    if (typeof d === 'string') return;
    const final = e instanceof UnrecoverableError || e.name === 'UnrecoverableError' || job.attemptsMade >= (job.opts.attempts ?? 1);
    if (!final) return;
    const record: ResultRecord = {
      v: 1, token: d.token, sizeBytes: d.sizeBytes, mtimeMs: d.mtimeMs, status: 'fail', worker: id,
      attempt: job.attemptsStarted ?? 0, finishedAt: new Date().toISOString(),
      entry: failureEntry(d.path, failureText(e.message, job.attemptsMade)),
    };
    try {
      await storeResult(redis, d.batch, d.path, record, d.ttlSeconds, true);
    } catch (x) {
      s.say(`worker ${id}: could not record the failure of ${d.path}: ${(x as Error).message}`);
    }
  }

  async function processJob(job: Job<QueueJobData>): Promise<{ stored: boolean }> {
    const t0 = Date.now();
    const d = checkJobData(job.data);
    if (typeof d === 'string') throw new UnrecoverableError(`refused: ${d}`);
    const attempt = job.attemptsStarted ?? job.attemptsMade + 1;
    const lastTry = job.attemptsMade + 1 >= (job.opts.attempts ?? 1);
    const fail = async (why: string, retry: boolean): Promise<never> => {
      if (!retry || lastTry) {
        const text = retry ? failureText(why, job.attemptsMade + 1) : why;
        await storeResult(redis, d.batch, d.path, resultRecord(d, failureEntry(d.path, text), 'fail', attempt), d.ttlSeconds, false);
        if (!s.quiet) s.say(`FAIL  ${d.path}  ${text}`);
        throw new UnrecoverableError(text);
      }
      throw new Error(why);
    };

    // Where the file really is; refused outside the roots.
    let real: string;
    try {
      real = await fs.promises.realpath(d.path);
    } catch (e) {
      return fail(`could not be read: ${fsReason(e)}`, true);
    }
    if (!insideRoots(real, s.roots)) {
      return fail(`refused: the file lies outside this worker's roots (${s.roots.join(', ')})${real !== d.path ? ` once links and ".." are followed` : ''}`, false);
    }
    let st: fs.Stats;
    try {
      st = await fs.promises.stat(real);
    } catch (e) {
      return fail(`could not be read: ${fsReason(e)}`, true);
    }
    if (st.isFile() && d.sizeBytes >= 0 && st.size !== d.sizeBytes) {
      return fail(`could not be read: it is ${st.size} bytes here but was ${d.sizeBytes} bytes when enqueued (still being copied, or changed since; enqueue the batch again once it is complete)`, true);
    }

    let result: JobResult;
    try {
      result = await pool.run({ path: real, params: d.params, previousMd5: d.previousMd5 });
      if (result.kind === 'unchanged') {
        const prev = await readResult(redis, d.batch, d.path);
        if (prev) result = { kind: 'entry', entry: { ...prev.entry, file: { ...result.file }, resumed: true } };
        else result = await pool.run({ path: real, params: d.params });
      }
    } catch (e) {
      return fail(`internal error: ${(e as Error).message}`, true);
    }
    // The path must still lead to the file that was read (a link swapped meanwhile is refused).
    let after: string | undefined;
    try {
      after = await fs.promises.realpath(d.path);
    } catch {
      after = undefined;
    }
    if (after !== real) return fail('refused: the path led to another file while it was being checked', false);

    const entry = (result as { kind: 'entry'; entry: FileEntry }).entry;
    entry.file = { ...entry.file, path: d.path };
    const { status } = judge(entry, d.thresholds as Thresholds);
    const stored = await storeResult(redis, d.batch, d.path, resultRecord(d, entry, status, attempt, st), d.ttlSeconds);
    if (!s.quiet) s.say(`${status.toUpperCase().padEnd(4)}  ${d.path}  (${((Date.now() - t0) / 1000).toFixed(1)} s${stored ? '' : '; not stored: the file was enqueued again meanwhile'})`);
    return { stored };
  }

  function resultRecord(d: QueueJobData, entry: FileEntry, status: ResultRecord['status'], attempt: number, st?: fs.Stats): ResultRecord {
    return {
      v: 1, token: d.token, sizeBytes: st?.size ?? d.sizeBytes, mtimeMs: st?.mtimeMs ?? d.mtimeMs, status, worker: id, attempt,
      finishedAt: new Date().toISOString(), entry,
    };
  }

  // Stop on SIGINT / SIGTERM (or options.stop): finish the files in progress, then leave.
  let signalCode = 0;
  let onSignal: (sig: NodeJS.Signals) => void = () => {};
  const stopped = new Promise<void>((resolve) => {
    onSignal = (sig: NodeJS.Signals) => {
      if (signalCode) {
        s.say(`worker ${id}: stopping now; the files in progress pass to another worker when their lock expires`);
        process.exit(signalCode);
      }
      signalCode = sig === 'SIGINT' ? 130 : 143;
      s.say(`worker ${id}: stopping after the files in progress (${sig} again to stop at once)`);
      resolve();
    };
    process.on('SIGINT', onSignal);
    process.on('SIGTERM', onSignal);
    void s.stop?.then(() => resolve());
  });
  const running = worker.run();
  await stopped;
  await worker.close();
  await running.catch(() => {});
  await pool.close();
  redis.disconnect();
  process.removeListener('SIGINT', onSignal);
  process.removeListener('SIGTERM', onSignal);
  s.say(`worker ${id}: stopped`);
  return signalCode;
}

function fsReason(e: unknown): string {
  const code = (e as NodeJS.ErrnoException).code;
  if (code === 'ENOENT') return 'no such file; is the storage mounted at the same path on this worker?';
  if (code === 'EACCES' || code === 'EPERM') return 'permission denied';
  if (code === 'ELOOP') return 'too many symbolic links';
  return (e as Error).message;
}
