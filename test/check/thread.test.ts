/**
 * The check processes behind `check` and `worker` (main/check/thread.ts): a file checked in one
 * gives exactly the entry the same check gives in this process (apart from its time), the
 * process runs with V8's single-threaded flag, leaves Ctrl+C / SIGTERM to its coordinator, and
 * ends by itself when its coordinator is killed (common practice for worker processes: no
 * orphan keeps running, and a signal to the whole process group does not drop the file in
 * progress).
 */
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { checkFile } from '../../main/check/check-file.ts';
import { CHECK_PROCESS_FLAGS, CheckThreadPool, newCheckThread } from '../../main/check/thread.ts';
import { openAudio } from '../../main/io/reader.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';
import { writeTestWav } from '../helpers/write-wav.ts';

const ROOT = path.resolve(import.meta.dirname, '../..');
let dir: string;

beforeAll(async () => {
  dir = fs.realpathSync(fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-thread-')));
  const g = gaussian(seededRng(7));
  const n = 48000;
  const a = Float64Array.from({ length: n }, () => 0.1 * g());
  const b = new Float64Array(n);
  b.set(a.subarray(0, n - 2), 2);
  await writeTestWav(path.join(dir, 'a.wav'), [a, b], 48000, 24);
  fs.writeFileSync(path.join(dir, 'broken.wav'), 'RIFF....WAVEfmt ');
});

afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

/** Running (a zombie left for a parent that does not reap it counts as ended). */
const alive = (pid: number) => {
  try {
    return fs.readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1]![0] !== 'Z';
  } catch {
    return false;
  }
};

async function until(cond: () => boolean, ms: number): Promise<boolean> {
  const t0 = Date.now();
  while (Date.now() - t0 < ms) {
    if (cond()) return true;
    await new Promise((r) => setTimeout(r, 50));
  }
  return cond();
}

describe('check processes', () => {
  it('give the entry the same check gives in this process, field for field apart from the time', async () => {
    const pool = new CheckThreadPool(1);
    try {
      for (const name of ['a.wav', 'broken.wav']) {
        const job = { path: path.join(dir, name), params: {} };
        const there = await pool.run(job);
        const here = await checkFile(job, openAudio, () => {});
        const noTime = (r: typeof here) => (r.kind === 'entry' ? { ...r, entry: { ...r.entry, seconds: 0 } } : r);
        expect(noTime(there)).toEqual(noTime(here));
      }
    } finally {
      await pool.close();
    }
  });

  it('run single-threaded, ignore SIGINT and SIGTERM, and stop when told to', async () => {
    const t = newCheckThread();
    await new Promise<void>((resolve) => t.once('message', () => resolve()));
    const pid = t.pid!;
    expect(fs.readFileSync(`/proc/${pid}/cmdline`, 'utf8').split('\0')).toEqual(expect.arrayContaining([...CHECK_PROCESS_FLAGS]));
    process.kill(pid, 'SIGINT');
    process.kill(pid, 'SIGTERM');
    await new Promise((r) => setTimeout(r, 300));
    expect(alive(pid)).toBe(true);
    await t.terminate();
    expect(alive(pid)).toBe(false);
  });

  it('end by themselves when their coordinator is killed', async () => {
    // A coordinator in its own process that starts one check process and prints its pid.
    const script = path.join(dir, 'coordinator.mjs');
    fs.writeFileSync(
      script,
      `import { register } from ${JSON.stringify(path.join(ROOT, 'node_modules/tsx/dist/esm/api/index.mjs'))};\nregister();\n` +
        `const { newCheckThread } = await import(${JSON.stringify(path.join(ROOT, 'main/check/thread.ts'))});\n` +
        `const t = newCheckThread();\nt.once('message', () => process.stdout.write(t.pid + '\\n'));\nsetInterval(() => {}, 1000);\n`,
    );
    const coordinator = spawn(process.execPath, [script], { stdio: ['ignore', 'pipe', 'inherit'] });
    const pid = await new Promise<number>((resolve) => coordinator.stdout!.once('data', (b: Buffer) => resolve(Number(b.toString().trim()))));
    expect(alive(pid)).toBe(true);
    coordinator.kill('SIGKILL');
    expect(await until(() => !alive(pid), 10_000)).toBe(true);
  });
});
