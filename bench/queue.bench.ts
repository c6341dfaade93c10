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
 * thread, storing the result).
 * Wall times on a shared machine mostly measure the other work: the load average is printed
 * beside them, and CPU times too.
 */
import { spawn, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Redis } from 'ioredis';
import { runCheck } from '../main/check/index.ts';
import { batchKeys, readResults } from '../main/check/queue/store.ts';
import { startRedis } from '../test/helpers/redis.ts';
import { makeFile } from './check.bench.ts';
import { fmt, line } from './util.ts';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const load = () => fmt(os.loadavg()[0]!, 1);

/** CPU seconds (user + system) so far of a process and its threads, or of its main thread alone, from /proc. */
function cpuOf(pid: number, mainThreadOnly = false): number {
  try {
    const f = fs.readFileSync(mainThreadOnly ? `/proc/${pid}/task/${pid}/stat` : `/proc/${pid}/stat`, 'utf8').split(') ')[1]!.split(' ');
    return (Number(f[11]) + Number(f[12])) / 100; // utime, stime in clock ticks (100 Hz on Linux)
  } catch {
    return NaN;
  }
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
      `process.stdout.write(JSON.stringify({ seconds: s, cpuSeconds: (u.userCPUTime + u.systemCPUTime) / 1e6 }) + '\\n');\n`,
  );
  const r = spawnSync(process.execPath, [script], { encoding: 'utf8', cwd: ROOT, maxBuffer: 1 << 20 });
  if (r.status !== 0) throw new Error(`local check failed: ${r.stderr.slice(-500)}`);
  return JSON.parse(r.stdout.trim().split('\n').pop()!);
}

export default async function run(): Promise<void> {
  const count = Number(process.env.REELWRIGHT_QUEUE_FILES ?? 40);
  const tmp = fs.realpathSync(fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-bench-queue-')));
  const server = await startRedis();
  const client = new Redis({ host: '127.0.0.1', port: server.port, maxRetriesPerRequest: null });
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

    const l1 = localCheck(dir, 1, tmp);
    line('queue', 'local check --jobs 1', `${fmt(l1.seconds, 1)} s`, `CPU ${fmt(l1.cpuSeconds, 1)} s; load ${load()}`);
    const l2 = localCheck(dir, 2, tmp);
    line('queue', 'local check --jobs 2', `${fmt(l2.seconds, 1)} s`, `CPU ${fmt(l2.cpuSeconds, 1)} s; ${fmt(l1.seconds / l2.seconds, 2)}× --jobs 1; load ${load()}`);

    const queued: Record<number, { seconds: number; checkSeconds: number; cpuSeconds: number; queueCpuSeconds: number }> = {};
    for (const w of [1, 2]) {
      const started = await Promise.all(
        Array.from({ length: w }, async () => {
          const child = spawn(process.execPath, [path.join(ROOT, 'bin/reelwright.mjs'), 'worker', '--queue', server.url, '--root', dir, '--concurrency', '1', '--quiet'], { cwd: ROOT, stdio: ['ignore', 'ignore', 'pipe'] });
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
      // The queue's own CPU: the workers' main threads (BullMQ, Redis client, storing results; the
      // check runs in other threads) and redis-server.
      const queueCpu = () => started.reduce((a, c) => a + cpuOf(c.pid!, true), 0) + cpuOf(server.pid!);
      const cpu0 = started.reduce((a, c) => a + cpuOf(c.pid!), 0);
      const qcpu0 = queueCpu();
      const batch = `bench-${w}`;
      const t0 = process.hrtime.bigint();
      await runCheck([dir, '--queue', server.url, '--batch', batch, '--quiet'], { out() {}, err() {} });
      const k = batchKeys(batch);
      for (;;) {
        const [files, done] = await Promise.all([client.hlen(k.files), client.hlen(k.done)]);
        if (files > 0 && done === files) break;
        await new Promise((r) => setTimeout(r, 20));
      }
      const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
      const cpuSeconds = started.reduce((a, c) => a + cpuOf(c.pid!), 0) - cpu0;
      const queueCpuSeconds = queueCpu() - qcpu0;
      const recs = [...(await readResults(client, batch)).values()];
      const checkSeconds = recs.reduce((a, r) => a + r.entry.seconds, 0);
      const failed = recs.filter((r) => r.entry.error !== undefined).length;
      queued[w] = { seconds, checkSeconds, cpuSeconds, queueCpuSeconds };
      line('queue', `queue, ${w} worker${w > 1 ? 's' : ''} (1 thread each)`, `${fmt(seconds, 1)} s`, `workers' CPU ${fmt(cpuSeconds, 1)} s; ${recs.length} results${failed ? `, ${failed} FAILED` : ''}; load ${load()}`);
      for (const c of started) c.kill('SIGTERM');
      await Promise.all(started.map((c) => new Promise((r) => (c.exitCode !== null ? r(null) : c.once('exit', r)))));
    }
    const ratio = queued[1]!.seconds / queued[2]!.seconds;
    line('queue', '2 workers vs 1: speed-up (target ≥ 1.7×)', `${fmt(ratio, 2)}×`, `${ratio >= 1.7 ? 'met' : 'NOT met'} (wall time; local --jobs 2 vs 1: ${fmt(l1.seconds / l2.seconds, 2)}×)`);
    const overheadMs = ((queued[1]!.seconds - queued[1]!.checkSeconds) / count) * 1000;
    line('queue', 'queue overhead per file, 1 worker (target < 50 ms)', `${fmt(overheadMs, 1)} ms`, `${overheadMs < 50 ? 'met' : 'NOT met'}: (${fmt(queued[1]!.seconds, 1)} s batch − ${fmt(queued[1]!.checkSeconds, 1)} s of per-file checks) ÷ ${count}`);
    line('queue', 'queue CPU per file, 1 worker', `${fmt((queued[1]!.queueCpuSeconds / count) * 1000, 1)} ms`, `worker main thread + redis-server (${fmt(queued[1]!.queueCpuSeconds, 2)} s for ${count} files); less sensitive to other load than the wall-time figure`);
    line('queue', 'queue vs local, 1 worker / --jobs 1', `${fmt(queued[1]!.seconds / l1.seconds, 2)}×`, `(${fmt(((queued[1]!.seconds - l1.seconds) / count) * 1000, 0)} ms per file; the local time includes starting its thread)`);
  } finally {
    for (const c of procs) if (c.exitCode === null) c.kill('SIGKILL');
    client.disconnect();
    await server.stop();
    fs.rmSync(tmp, { recursive: true, force: true });
  }
}
