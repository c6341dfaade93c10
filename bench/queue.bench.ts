/**
 * The batch check on a job queue against the check on one machine: 40 one-minute 96 kHz 24-bit
 * stereo files (REELWRIGHT_QUEUE_FILES=N for another count), checked
 *   - by `check --jobs 1` and `check --jobs 2` (one machine, worker threads),
 *   - on a private redis-server (append-only file on, as in production) by 1 and then 2
 *     `reelwright worker` processes of one thread each, already started (as on machines that
 *     wait for work); the time runs from the enqueue to the last stored result.
 * Targets (issue): 2 workers ≥ 1.7× faster than 1 worker; queue overhead < 50 ms per file, where
 * overhead = (batch time with 1 worker − the sum of the per-file check times the worker measured
 * itself) ÷ files: everything that is not the check (Redis, BullMQ, handing the file to the
 * thread, storing the result). It is measured on the 1-minute files and, where the check itself
 * is short, on 100 files of 0.2 s; beside it the CPU time of the queue's own parts.
 * Wall times on a shared machine mostly measure the other work: the load average is printed
 * beside them, and CPU times too.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Redis } from 'ioredis';
import { runCheck } from '../main/check/index.ts';
import { batchKeys, readResults } from '../main/check/queue/store.ts';
import { startRedis, type RedisServer } from '../test/helpers/redis.ts';
import { writeAudio } from '../main/io/writer.ts';
import { makeFile } from './check.bench.ts';
import { childrenOf, cpuOf, fmt, line } from './util.ts';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const load = () => fmt(os.loadavg()[0]!, 1);

/** CPU seconds so far of a process, its threads and its running child processes (and theirs). */
function treeCpuOf(pid: number): number {
  return cpuOf(pid) + childrenOf(pid).reduce((a, c) => a + treeCpuOf(c), 0);
}

function localCheck(dir: string, jobs: number, tmp: string): { seconds: number; cpuSeconds: number } {
  const script = path.join(tmp, `local-${jobs}.mjs`);
  fs.writeFileSync(
    script,
    `import { register } from ${JSON.stringify(path.join(ROOT, 'node_modules/tsx/dist/esm/api/index.mjs'))};\n` +
      `register();\nconst { runCheck } = await import(${JSON.stringify(path.join(ROOT, 'main/check/index.ts'))});\n` +
      `const t0 = process.hrtime.bigint();\n` +
      `await runCheck([${JSON.stringify(dir)}, '--jobs', '${jobs}', '--quiet', '--json', ${JSON.stringify(path.join(tmp, `local-${jobs}.json`))}], { out() {} });\n` +
      `const s = Number(process.hrtime.bigint() - t0) / 1e9;\nconst u = process.resourceUsage();\n` +
      // The check processes have ended and been waited for: their CPU is in cutime + cstime.
      `const f = (await import('node:fs')).readFileSync('/proc/self/stat', 'utf8').split(') ')[1].split(' ');\n` +
      `const children = (Number(f[13]) + Number(f[14])) / 100;\n` +
      `process.stdout.write(JSON.stringify({ seconds: s, cpuSeconds: (u.userCPUTime + u.systemCPUTime) / 1e6 + children }) + '\\n');\n`,
  );
  const r = spawnSync(process.execPath, [script], { encoding: 'utf8', cwd: ROOT, maxBuffer: 1 << 20 });
  if (r.status !== 0) throw new Error(`local check failed: ${r.stderr.slice(-500)}`);
  return JSON.parse(r.stdout.trim().split('\n').pop()!);
}

const TINY = 100;

/** A 0.2 s mono 48 kHz file of noise (a different one each). */
async function makeTiny(file: string, seed: number): Promise<void> {
  fs.mkdirSync(path.dirname(file), { recursive: true });
  let x = 2463534242 + seed;
  const a = new Float64Array(9600);
  for (let i = 0; i < a.length; i++) {
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    a[i] = 0.1 * ((x >>> 0) / 4294967296 - 0.5);
  }
  async function* blocks() {
    yield [a];
  }
  await writeAudio(file, { sampleRateHz: 48000, channelCount: 1, blocks: blocks() }, { bitsPerSample: 24, sampleFormat: 'int', dither: false });
}

/** Enqueues a folder as a batch and waits (polling every 20 ms) until every file has a result. */
async function runBatch(started: ChildProcess[], folder: string, batch: string) {
  // The queue's own CPU: the workers' main threads (BullMQ, Redis client, storing results; the
  // check runs in other threads) and redis-server.
  const queueCpu = () => started.reduce((a, c) => a + cpuOf(c.pid!, true), 0) + cpuOf(server!.pid!);
  const cpu0 = started.reduce((a, c) => a + treeCpuOf(c.pid!), 0);
  const qcpu0 = queueCpu();
  const t0 = process.hrtime.bigint();
  await runCheck([folder, '--queue', server!.url, '--batch', batch, '--quiet'], { out() {}, err() {} });
  const k = batchKeys(batch);
  for (;;) {
    const [files, done] = await Promise.all([client!.hlen(k.files), client!.hlen(k.done)]);
    if (files > 0 && done === files) break;
    await new Promise((r) => setTimeout(r, 20));
  }
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const cpuSeconds = started.reduce((a, c) => a + treeCpuOf(c.pid!), 0) - cpu0;
  const queueCpuSeconds = queueCpu() - qcpu0;
  const recs = [...(await readResults(client!, batch)).values()];
  return {
    seconds,
    cpuSeconds,
    queueCpuSeconds,
    checkSeconds: recs.reduce((a, r) => a + r.entry.seconds, 0),
    results: recs.length,
    failed: recs.filter((r) => r.entry.error !== undefined).length,
  };
}

let server: RedisServer | undefined;
let client: Redis | undefined;

export default async function run(): Promise<void> {
  const count = Number(process.env.REELWRIGHT_QUEUE_FILES ?? 40);
  const tmp = fs.realpathSync(fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-bench-queue-')));
  server = await startRedis();
  client = new Redis({ host: '127.0.0.1', port: server.port, maxRetriesPerRequest: null });
  const procs: ReturnType<typeof spawn>[] = [];
  try {
    const dir = path.join(tmp, 'batch');
    const first = path.join(dir, 'reel-00', 'take-00.wav');
    fs.mkdirSync(path.dirname(first), { recursive: true });
    await makeFile(first, 60);
    for (let i = 1; i < count; i++) {
      const f = path.join(dir, `reel-${String(Math.floor(i / 10)).padStart(2, '0')}`, `take-${String(i).padStart(2, '0')}.wav`);
      fs.mkdirSync(path.dirname(f), { recursive: true });
      fs.copyFileSync(first, f);
    }
    line('queue', `${count} files of 1 min, 96 kHz 24-bit stereo`, '', `${fmt((fs.statSync(first).size * count) / 2 ** 20, 0)} MB; load average ${load()} on ${os.cpus().length} cores`);

    // REELWRIGHT_QUEUE_LOCAL=0 leaves out the two local runs (half the bench's time).
    const withLocal = process.env.REELWRIGHT_QUEUE_LOCAL !== '0';
    const l1 = withLocal ? localCheck(dir, 1, tmp) : undefined;
    const l2 = withLocal ? localCheck(dir, 2, tmp) : undefined;
    if (l1 && l2) {
      line('queue', 'local check --jobs 1', `${fmt(l1.seconds, 1)} s`, `CPU ${fmt(l1.cpuSeconds, 1)} s; load ${load()}`);
      line('queue', 'local check --jobs 2', `${fmt(l2.seconds, 1)} s`, `CPU ${fmt(l2.cpuSeconds, 1)} s; ${fmt(l1.seconds / l2.seconds, 2)}× --jobs 1; load ${load()}`);
    } else line('queue', 'local check', 'left out', 'REELWRIGHT_QUEUE_LOCAL=0');

    const tiny = path.join(tmp, 'tiny');
    for (let i = 0; i < TINY; i++) await makeTiny(path.join(tiny, `take-${String(i).padStart(3, '0')}.wav`), i);
    const queued: Record<number, Awaited<ReturnType<typeof runBatch>>> = {};
    for (const w of [1, 2]) {
      const started = await Promise.all(
        Array.from({ length: w }, async () => {
          const child = spawn(process.execPath, [path.join(ROOT, 'bin/reelwright.mjs'), 'worker', '--queue', server!.url, '--root', tmp, '--concurrency', '1', '--quiet'], { cwd: ROOT, stdio: ['ignore', 'ignore', 'pipe'] });
          procs.push(child);
          let text = '';
          child.stderr!.on('data', (b: Buffer) => (text += b.toString()));
          await new Promise<void>((resolve, reject) => {
            const t = setInterval(() => {
              if (text.includes('taking files from')) {
                clearInterval(t);
                resolve();
              } else if (child.exitCode !== null) {
                clearInterval(t);
                reject(new Error(`worker exited: ${text}`));
              }
            }, 20);
          });
          return child;
        }),
      );
      const big = await runBatch(started, dir, `bench-${w}`);
      queued[w] = big;
      line('queue', `queue, ${w} worker${w > 1 ? 's' : ''} (1 check process each)`, `${fmt(big.seconds, 1)} s`, `workers' CPU ${fmt(big.cpuSeconds, 1)} s (${fmt(big.cpuSeconds / count, 2)} s per file, ${fmt(big.cpuSeconds / big.seconds / w, 2)} cores per worker); ${big.results} results${big.failed ? `, ${big.failed} FAILED` : ''}; load ${load()}`);
      if (w === 1) {
        // The overhead alone: many short files, where the check itself takes little time.
        const t = await runBatch(started, tiny, 'bench-tiny');
        line('queue', `queue overhead per file, ${TINY} files of 0.2 s (target < 50 ms)`, `${fmt(((t.seconds - t.checkSeconds) / TINY) * 1000, 1)} ms`,
          `${(t.seconds - t.checkSeconds) / TINY < 0.05 ? 'met' : 'NOT met'}: (${fmt(t.seconds, 2)} s batch − ${fmt(t.checkSeconds, 2)} s of checks) ÷ ${TINY}; queue CPU (worker main thread + redis-server) ${fmt((t.queueCpuSeconds / TINY) * 1000, 1)} ms per file; load ${load()}`);
      }
      for (const c of started) c.kill('SIGTERM');
      await Promise.all(started.map((c) => new Promise((r) => (c.exitCode !== null ? r(null) : c.once('exit', r)))));
    }
    const ratio = queued[1]!.seconds / queued[2]!.seconds;
    line('queue', '2 workers vs 1: speed-up (target ≥ 1.7×)', `${fmt(ratio, 2)}×`, `${ratio >= 1.7 ? 'met' : 'NOT met'} (wall time${l1 && l2 ? `; local --jobs 2 vs 1: ${fmt(l1.seconds / l2.seconds, 2)}×` : ''})`);
    const overheadMs = ((queued[1]!.seconds - queued[1]!.checkSeconds) / count) * 1000;
    line('queue', 'queue overhead per file, 1 worker, the 1-min files', `${fmt(overheadMs, 1)} ms`, `(${fmt(queued[1]!.seconds, 1)} s batch − ${fmt(queued[1]!.checkSeconds, 1)} s of per-file checks) ÷ ${count}`);
    line('queue', 'queue CPU per file, 1 worker, the 1-min files', `${fmt((queued[1]!.queueCpuSeconds / count) * 1000, 1)} ms`, `worker main thread + redis-server over the whole batch (${fmt(queued[1]!.queueCpuSeconds, 2)} s; includes their idle ticks while the files are checked)`);
    if (l1) line('queue', 'queue vs local, 1 worker / --jobs 1', `${fmt(queued[1]!.seconds / l1.seconds, 2)}×`, `(${fmt(((queued[1]!.seconds - l1.seconds) / count) * 1000, 0)} ms per file; the local time includes starting its thread)`);
  } finally {
    for (const c of procs) if (c.exitCode === null) c.kill('SIGKILL');
    client.disconnect();
    await server.stop();
    server = undefined;
    client = undefined;
    fs.rmSync(tmp, { recursive: true, force: true });
  }
}
