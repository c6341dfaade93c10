/**
 * The batch check on many machines: a private redis-server (test/helpers/redis.ts) with a
 * password and its append-only file on; workers as separate processes (`reelwright worker`, as
 * they run on other machines); enqueue and report in this process.
 *
 * The reference for every result is the same check run on one machine (`check` without
 * --queue): the contract is that a queued batch reports exactly what the local check
 * reports, field for field. The fault tests hold the queue to "nothing lost, nothing counted
 * twice" (common practice for at-least-once job queues: a result is idempotent per file).
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { randomBytes, randomUUID } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCheck } from '../../main/check/index.ts';
import type { CheckReport } from '../../main/check/report.ts';
import { runQueueReport } from '../../main/check/queue/report.ts';
import { runWorker } from '../../main/check/queue/worker.ts';
import { batchKeys, PREFIX, QUEUE_NAME, readResults, type FileRecord, type QueueJobData } from '../../main/check/queue/store.ts';
import { defaultThresholds } from '../../main/check/thresholds.ts';
import { io } from '../../main/cli/index.ts';
import { writeTestWav } from '../helpers/write-wav.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';
import { startRedis, type RedisServer } from '../helpers/redis.ts';
import { ensureTool, OPENSSL } from '../setup/system-tools.ts';

const ROOT = path.resolve(import.meta.dirname, '../..');
const PASSWORD = `pw-${randomBytes(9).toString('hex')}`;
const FS = 48000;
const OLD_TIME = new Date('2021-05-04T10:00:00Z');

let tmp: string, base: string, archive: string, outDir: string;
let server: RedisServer;
let client: Redis;
let queue: Queue;
let saved: typeof io;

/** Everything printed by any command or worker of this file, checked for the password at the end. */
const printed: string[] = [];
const capture = { out: (s: string) => void printed.push(s), err: (s: string) => void printed.push(s) };
const outLines: string[] = [];
const opts = { out: (s: string) => void (printed.push(s), outLines.push(s)), err: capture.err };

const writeWav = (file: string, channels: Float64Array[], sampleRateHz = FS, bits: 16 | 24 = 24) => writeTestWav(file, channels, sampleRateHz, bits);

/** Small files of four kinds, so the reports differ from file to file. */
async function take(file: string, k: number, seconds = 0.5): Promise<void> {
  const g = gaussian(seededRng(1000 + k));
  const n = Math.round(seconds * FS);
  const noise = (rms: number) => Float64Array.from({ length: n }, () => rms * g());
  switch (k % 4) {
    case 0: return writeWav(file, [noise(0.05), noise(0.05)]);
    case 1: return writeWav(file, [noise(0.05).subarray(0, Math.round(seconds * 44100))], 44100, 16);
    case 2: return writeWav(file, [noise(0.6), noise(0.6)].map((c) => c.map((v) => Math.max(-1, Math.min(1, v)))));
    default: {
      const a = noise(0.05);
      const b = new Float64Array(n);
      b.set(a.subarray(0, n - 3), 3); // channel 2 three samples late
      return writeWav(file, [a, b]);
    }
  }
}

interface WorkerProc {
  child: ChildProcess;
  id: string;
  output: () => string;
  exited: Promise<number | null>;
}

const workers: WorkerProc[] = [];

/** `reelwright worker` in its own process, as on another machine; resolves once it takes jobs. */
async function startWorker(extra: string[] = []): Promise<WorkerProc> {
  const child = spawn(process.execPath, [path.join(ROOT, 'bin/reelwright.mjs'), 'worker', '--queue', server.url, '--root', base, '--concurrency', '1', '--lock-seconds', '3', ...extra], {
    cwd: ROOT,
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let text = '';
  child.stdout!.on('data', (b: Buffer) => (text += b.toString()));
  child.stderr!.on('data', (b: Buffer) => (text += b.toString()));
  const exited = new Promise<number | null>((r) => child.once('exit', (code) => r(code)));
  const w: WorkerProc = { child, id: `${os.hostname()}/${child.pid}`, output: () => text, exited };
  workers.push(w);
  await waitFor(() => text.includes('taking files from') || child.exitCode !== null, 270_000, 'the worker to start');
  if (child.exitCode !== null) throw new Error(`worker exited: ${text}`);
  return w;
}

async function waitFor(cond: () => boolean | Promise<boolean>, ms: number, what: string): Promise<void> {
  const end = Date.now() + ms;
  while (!(await cond())) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

const done = async (batch: string) => {
  const k = batchKeys(batch);
  const [files, d] = await Promise.all([client.hlen(k.files), client.hlen(k.done)]);
  return { files, done: d };
};
const finished = (batch: string) => async () => {
  const c = await done(batch);
  return c.files > 0 && c.done === c.files;
};
const records = (batch: string) => readResults(client, batch);
const readJson = (f: string) => JSON.parse(fs.readFileSync(f, 'utf8')) as CheckReport;

beforeAll(async () => {
  tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-queue-'));
  tmp = fs.realpathSync(tmp);
  base = path.join(tmp, 'storage');
  archive = path.join(base, 'archive');
  outDir = path.join(tmp, 'out');
  fs.mkdirSync(outDir, { recursive: true });
  // 40 takes in two reels (the second one nested), a broken file and a note.
  for (let k = 0; k < 40; k++) {
    const dir = k < 20 ? path.join(archive, 'reel-01') : path.join(archive, 'reel-02', 'side-b');
    await take(path.join(dir, `take-${String(k).padStart(2, '0')}.wav`), k);
  }
  // A whole-second modification time, so that the test can put it back exactly later.
  fs.utimesSync(path.join(archive, 'reel-01', 'take-03.wav'), OLD_TIME, OLD_TIME);
  fs.writeFileSync(path.join(archive, 'reel-02', 'broken.wav'), 'this is not a WAV file');
  fs.writeFileSync(path.join(archive, 'reel-02', 'notes.txt'), 'splice at 2:10');
  // A file long enough to be caught mid-check, and six short ones.
  await take(path.join(base, 'long', '00-long.wav'), 0, 10);
  for (let k = 1; k <= 6; k++) await take(path.join(base, 'long', `take-${k}.wav`), k);
  // A file outside the workers' root, and a link to it inside.
  await take(path.join(tmp, 'outside', 'secret.wav'), 3);
  fs.mkdirSync(path.join(base, 'links'));
  fs.symlinkSync(path.join(tmp, 'outside', 'secret.wav'), path.join(base, 'links', 'escape.wav'));
  // A file that stays unreadable (a link to nothing: storage not mounted) beside a good one.
  await take(path.join(base, 'retry', 'ok.wav'), 7);
  fs.symlinkSync(path.join(base, 'retry', 'not-there.wav'), path.join(base, 'retry', 'gone.wav'));

  server = await startRedis({ password: PASSWORD });
  client = new Redis({ host: '127.0.0.1', port: server.port, password: PASSWORD, maxRetriesPerRequest: null, retryStrategy: () => 100 });
  client.on('error', () => {});
  queue = new Queue(QUEUE_NAME, { connection: client, prefix: PREFIX });
  saved = { ...io };
  io.out = capture.out;
  io.err = capture.err;
}, 120_000);

afterAll(async () => {
  if (saved) Object.assign(io, saved);
  for (const w of workers) if (w.child.exitCode === null && w.child.signalCode === null) w.child.kill('SIGTERM');
  await Promise.all(workers.map((w) => Promise.race([w.exited, new Promise((r) => setTimeout(r, 20_000))])));
  for (const w of workers) if (w.child.exitCode === null && w.child.signalCode === null) w.child.kill('SIGKILL');
  await queue?.close().catch(() => {});
  client?.disconnect();
  await server?.stop();
  fs.rmSync(tmp, { recursive: true, force: true });
}, 60_000);

describe('reelwright check on a job queue', () => {
  it('a batch of 41 files (a broken one, a nested folder) over 3 workers reports exactly what the local check reports', async () => {
    const L = (ext: string) => path.join(outDir, `local.${ext}`), Q = (ext: string) => path.join(outDir, `queued.${ext}`);
    // The workers start (load their code) while the local check runs.
    const starting = Promise.all([startWorker(), startWorker(), startWorker()]);
    expect(await runCheck([archive, '--json', L('json'), '--csv', L('csv'), '--report', L('html'), '--jobs', '2', '--quiet'], opts)).toBe(1);
    await starting;

    outLines.length = 0;
    const code = await runCheck([archive, '--queue', server.url, '--batch', 'eq', '--keep-days', '2', '--wait', '--quiet', '--json', Q('json'), '--csv', Q('csv'), '--report', Q('html')], opts);
    expect(outLines[0]).toMatch(/^batch eq: 41 jobs queued for 41 files on redis:\/\/:\*\*\*@127\.0\.0\.1:\d+\/0$/);
    expect(code).toBe(1);
    // `report` later gives the same again.
    expect(await runQueueReport(['--queue', server.url, '--batch', 'eq', '--json', path.join(outDir, 'later.json')], opts)).toBe(1);

    const local = readJson(L('json')), queued = readJson(Q('json')), later = readJson(path.join(outDir, 'later.json'));
    const withoutTimes = (r: CheckReport) => ({
      ...r, createdAt: undefined, batch: undefined,
      summary: { ...r.summary, seconds: undefined },
      files: r.files.map((f) => ({ ...f, seconds: undefined })),
    });
    expect(local.files).toHaveLength(41);
    expect(local.files.filter((f) => f.error !== undefined).map((f) => path.basename(f.file.path))).toEqual(['broken.wav']);
    expect(withoutTimes(queued)).toEqual(withoutTimes(local));
    expect(withoutTimes(later)).toEqual(withoutTimes(local));
    expect(queued.batch).toBe('eq');
    // The CSV row for row, apart from the time each file took (the last column).
    const noTime = (f: string) => {
      const rows = fs.readFileSync(f, 'utf8').split('\r\n');
      expect(rows[0]!.endsWith(',analysisSeconds')).toBe(true);
      return rows.map((r) => r.replace(/,[^,"]*$/, ''));
    };
    expect(noTime(Q('csv'))).toEqual(noTime(L('csv')));
    // The HTML page, apart from its date and the times.
    const page = (f: string) => fs.readFileSync(f, 'utf8').replace(/\d{4}-\d\d-\d\dT[\d:.]+Z/g, 'DATE').replace(/<dt>analysisSeconds<\/dt><dd>[\d.]+<\/dd>/g, '');
    expect(page(Q('html'))).toBe(page(L('html')));
    // Fixity in every entry.
    for (const f of queued.files) expect(f.file.sha256).toMatch(/^[0-9a-f]{64}$/);

    // Every file once, from all three workers; the batch's keys expire after --keep-days.
    const recs = await records('eq');
    expect(recs.size).toBe(41);
    expect(new Set([...recs.values()].map((r) => r.worker))).toEqual(new Set(workers.map((w) => w.id)));
    const ttl = await client.ttl(batchKeys('eq').results);
    expect(ttl).toBeGreaterThan(2 * 86400 - 120);
    expect(ttl).toBeLessThanOrEqual(2 * 86400);
  }, 900_000);

  it('enqueueing the batch again keeps files unchanged in size, time and audio MD5, and checks the others again', async () => {
    const before = readJson(path.join(outDir, 'queued.json'));
    // take-03: new audio of the same size with its old modification time (only the MD5 tells);
    // take-05: new audio and a new time.
    const f03 = path.join(archive, 'reel-01', 'take-03.wav'), f05 = path.join(archive, 'reel-01', 'take-05.wav');
    const st03 = fs.statSync(f03);
    expect(st03.mtime).toEqual(OLD_TIME);
    await take(f03, 103);
    fs.utimesSync(f03, OLD_TIME, OLD_TIME);
    expect(fs.statSync(f03).size).toBe(st03.size);
    expect(fs.statSync(f03).mtimeMs).toBe(st03.mtimeMs);
    await take(f05, 105);
    outLines.length = 0;
    const json = path.join(outDir, 'again.json');
    expect(await runCheck([archive, '--queue', server.url, '--batch', 'eq', '--keep-days', '2', '--wait', '--quiet', '--json', json], opts)).toBe(1);
    expect(outLines[0]).toMatch(/^batch eq: 41 jobs queued for 41 files \(39 unchanged since the last run: audio checksum only\)/);
    const again = readJson(json);
    expect(again.summary.resumed).toBe(38);
    const byPath = new Map(before.files.map((f) => [f.file.path, f]));
    for (const f of again.files) {
      const was = byPath.get(f.file.path)!;
      if (f.file.path === f03 || f.file.path === f05 || f.error !== undefined) {
        expect(f.resumed, f.file.path).toBeUndefined();
        if (f.error === undefined) expect(f.file.audioMd5).not.toBe(was.file.audioMd5);
      } else {
        expect(f.resumed, f.file.path).toBe(true);
        expect({ ...f, resumed: undefined }).toEqual({ ...was, resumed: undefined });
      }
    }
  }, 900_000);

  it('a worker killed in the middle of a file: another worker takes its job over once the lock expires, and every file is counted once', async () => {
    const long = path.join(base, 'long');
    expect(await runCheck([long, '--queue', server.url, '--batch', 'kill'], opts)).toBe(0);
    let holder: WorkerProc | undefined;
    await waitFor(async () => {
      const active = await queue.getActive();
      const j = active.find((a) => (a.data as QueueJobData).path.endsWith('00-long.wav') && a.processedBy);
      holder = j ? workers.find((w) => w.id === j.processedBy) : undefined;
      return holder !== undefined;
    }, 60_000, 'a worker to take the long file');
    holder!.child.kill('SIGKILL');
    await holder!.exited;
    expect(await finished('kill')()).toBe(false);
    await waitFor(finished('kill'), 360_000, 'the batch to finish without the killed worker');

    const recs = await records('kill');
    expect([...recs.keys()].sort()).toEqual(fs.readdirSync(long).map((f) => path.join(long, f)).sort());
    const longRec = recs.get(path.join(long, '00-long.wav'))!;
    expect(longRec.worker).not.toBe(holder!.id);
    expect(longRec.attempt).toBeGreaterThanOrEqual(2);
    expect(longRec.entry.error).toBeUndefined();
    const json = path.join(outDir, 'kill.json');
    await runQueueReport(['--queue', server.url, '--batch', 'kill', '--json', json], opts);
    const r = readJson(json);
    expect(r.files.map((f) => f.file.path)).toEqual([...recs.keys()].sort());
    expect(r.files.filter((f) => f.error !== undefined)).toEqual([]);
  }, 900_000);

  it('Redis restarted in the middle of a batch (append-only file on) loses no finished result', async () => {
    const reel = path.join(archive, 'reel-01');
    expect(await runCheck([reel, '--queue', server.url, '--batch', 'restart'], opts)).toBe(0);
    await waitFor(async () => (await done('restart')).done >= 6, 360_000, 'six results');
    const snapshot = await client.hgetallBuffer(batchKeys('restart').results);
    const n = Object.keys(snapshot).length;
    expect(n).toBeGreaterThanOrEqual(6);
    expect(n).toBeLessThan(20);
    await server.kill();
    await new Promise((r) => setTimeout(r, 500));
    await server.start();
    await waitFor(finished('restart'), 540_000, 'the batch to finish after the restart');
    const after = await client.hgetallBuffer(batchKeys('restart').results);
    for (const [p, v] of Object.entries(snapshot)) expect(after[p]?.equals(v), p).toBe(true);
    expect(Object.keys(after)).toHaveLength(20);
    const json = path.join(outDir, 'restart.json');
    expect(await runQueueReport(['--queue', server.url, '--batch', 'restart', '--json', json], opts)).toBe(1);
    expect(readJson(json).files.map((f) => f.file.path)).toEqual(readJson(path.join(outDir, 'local.json')).files.map((f) => f.file.path).filter((p) => p.startsWith(reel + path.sep)));
  }, 900_000);

  it('a worker refuses files outside its --root, also through a symbolic link or ".."', async () => {
    const secret = path.join(tmp, 'outside', 'secret.wav');
    // (Named together, the link and its target would be one file; two enqueues into one batch.)
    expect(await runCheck([path.join(base, 'links'), '--queue', server.url, '--batch', 'roots'], opts)).toBe(0);
    expect(await runCheck([secret, '--queue', server.url, '--batch', 'roots'], opts)).toBe(0);
    // A job put on the queue by hand, its path climbing out of the root.
    const crafted = `${base}/long/../../outside/secret.wav`;
    const token = randomUUID();
    const st = fs.statSync(secret);
    const record: FileRecord = { sizeBytes: st.size, mtimeMs: st.mtimeMs, token, enqueuedAt: Date.now() };
    await client.hset(batchKeys('roots').files, crafted, JSON.stringify(record));
    const data: QueueJobData = { v: 1, batch: 'roots', path: crafted, sizeBytes: st.size, mtimeMs: st.mtimeMs, token, params: {}, thresholds: defaultThresholds(), ttlSeconds: 3600 };
    await queue.add('file', data, { jobId: token, removeOnComplete: true });
    await waitFor(finished('roots'), 360_000, 'the refusals');
    const json = path.join(outDir, 'roots.json');
    expect(await runQueueReport(['--queue', server.url, '--batch', 'roots', '--json', json], opts)).toBe(1);
    const r = readJson(json);
    expect(r.files.map((f) => f.file.path).sort()).toEqual([crafted, path.join(base, 'links', 'escape.wav'), secret].sort());
    for (const f of r.files) {
      expect(f.error, f.file.path).toMatch(/^refused: the file lies outside this worker's roots/);
      expect(f.status).toBe('fail');
      expect(f.file.sha256, 'never read').toBeUndefined();
      expect(f.levels).toBeUndefined();
    }
  }, 540_000);

  it('a file that keeps failing is tried a bounded number of times, then reported as failed with its reason', async () => {
    const json = path.join(outDir, 'retry.json');
    const code = await runCheck([path.join(base, 'retry'), '--queue', server.url, '--batch', 'retry', '--attempts', '2', '--retry-seconds', '0.2', '--wait', '--quiet', '--json', json], opts);
    expect(code).toBe(1);
    const r = readJson(json);
    const gone = r.files.find((f) => f.file.path.endsWith('gone.wav'))!;
    expect(gone.error).toMatch(/^could not be read: no such file; is the storage mounted at the same path on this worker\? \(tried 2 times\)$/);
    expect(gone.status).toBe('fail');
    expect((await records('retry')).get(gone.file.path)!.attempt).toBe(2);
    expect(r.files.find((f) => f.file.path.endsWith('ok.wav'))!.error).toBeUndefined();
  }, 540_000);

  it('speaks TLS (rediss://) with a password, the server checked against its certificate authority', async () => {
    const certDir = path.join(tmp, 'tls');
    fs.mkdirSync(certDir);
    const [cert, key] = [path.join(certDir, 'cert.pem'), path.join(certDir, 'key.pem')];
    const made = spawnSync(ensureTool(OPENSSL), ['req', '-x509', '-newkey', 'rsa:2048', '-nodes', '-keyout', key, '-out', cert, '-days', '1', '-subj', '/CN=127.0.0.1', '-addext', 'subjectAltName=IP:127.0.0.1'], { encoding: 'utf8' });
    expect(made.status, made.stderr).toBe(0);
    const tls = await startRedis({ password: PASSWORD, tls: { cert, key, ca: cert } });
    const saved = process.env.REELWRIGHT_QUEUE_CA;
    let stop!: () => void;
    try {
      // Without the authority the certificate is refused; the message names the queue without its password.
      delete process.env.REELWRIGHT_QUEUE_CA;
      const errs: string[] = [];
      expect(await runCheck([path.join(base, 'long', 'take-1.wav'), '--queue', tls.url, '--batch', 'tls'], { out: opts.out, err: (s) => void (errs.push(s), printed.push(s)) })).toBe(2);
      expect(errs.join('\n')).toMatch(/cannot use the queue at rediss:\/\/:\*\*\*@127\.0\.0\.1:\d+\/0: .*(self.signed|certificate)/i);

      process.env.REELWRIGHT_QUEUE_CA = cert;
      const running = runWorker(['--queue', tls.url, '--root', base, '--concurrency', '1', '--quiet'], { ...capture, stop: new Promise<void>((r) => (stop = r)) });
      const json = path.join(outDir, 'tls.json');
      const code = await runCheck([path.join(base, 'long', 'take-1.wav'), path.join(base, 'long', 'take-2.wav'), '--queue', tls.url, '--batch', 'tls', '--wait', '--quiet', '--json', json], opts);
      stop();
      expect(await running).toBe(0);
      expect(code).toBeLessThanOrEqual(1);
      expect(readJson(json).files.map((f) => [path.basename(f.file.path), f.error, typeof f.file.audioMd5])).toEqual([['take-1.wav', undefined, 'string'], ['take-2.wav', undefined, 'string']]);
    } finally {
      stop?.();
      if (saved === undefined) delete process.env.REELWRIGHT_QUEUE_CA;
      else process.env.REELWRIGHT_QUEUE_CA = saved;
      await tls.stop();
    }
  }, 540_000);

  it('never prints the password: not in reports, log lines, error messages or the process list', async () => {
    // Wrong password, unreachable server, malformed URL.
    const wrong = server.url.replace(encodeURIComponent(PASSWORD), `${PASSWORD}x`);
    expect(await runQueueReport(['--queue', wrong, '--batch', 'eq'], opts)).toBe(2);
    expect(printed.at(-1)).toMatch(/cannot use the queue at redis:\/\/:\*\*\*@127\.0\.0\.1:\d+\/0: WRONGPASS/);
    expect(await runQueueReport(['--queue', `redis://:${PASSWORD}@127.0.0.1:1/0`, '--batch', 'eq'], opts)).toBe(2);
    expect(printed.at(-1)).toMatch(/ECONNREFUSED/);
    expect(await runQueueReport(['--queue', `redis://:${PASSWORD}@127.0.0.1:port/0`, '--batch', 'eq'], opts)).toBe(2);
    expect(await runCheck([archive, '--queue', `http://:${PASSWORD}@127.0.0.1/0`, '--batch', 'eq'], opts)).toBe(2);
    // The running workers renamed their process (ps shows "reelwright worker").
    for (const w of workers.filter((x) => x.child.exitCode === null && x.child.signalCode === null)) {
      expect(fs.readFileSync(`/proc/${w.child.pid}/cmdline`, 'utf8')).not.toContain(PASSWORD);
    }
    const everything = [
      ...printed,
      ...workers.map((w) => w.output()),
      ...fs.readdirSync(outDir).map((f) => fs.readFileSync(path.join(outDir, f), 'utf8')),
      ...(await client.keys(`${PREFIX}:*`)).filter((k) => k.includes(':batch:')).map((k) => k),
    ].join('\n');
    expect(everything.length).toBeGreaterThan(1000);
    expect(everything).toContain('redis://:***@127.0.0.1');
    expect(everything).not.toContain(PASSWORD);
    // The stored results and job data hold no password either.
    for (const b of ['eq', 'kill', 'restart', 'roots', 'retry']) {
      expect(JSON.stringify([...(await records(b)).values()])).not.toContain(PASSWORD);
    }
    expect(JSON.stringify((await queue.getFailed()).map((j) => j.data))).not.toContain(PASSWORD);
  }, 360_000);
});
