/**
 * What a queued batch keeps in Redis, and the one way results are written.
 *
 * BullMQ holds the jobs (queue `check`, key prefix `reelwright`). Beside them, per batch:
 *   reelwright:batch:NAME:meta     string  BatchMeta (JSON)
 *   reelwright:batch:NAME:files    hash    path → FileRecord: the files of the batch and the token of
 *                                          the job that currently stands for each
 *   reelwright:batch:NAME:results  hash    path → ResultRecord: the report entry and who made it,
 *                                          as Brotli-compressed JSON (about a quarter of the size)
 *   reelwright:batch:NAME:done     hash    path → DoneRecord: small, one per finished file
 * Every write sets the time to live of all four keys again (the batch's `--keep-days`).
 *
 * A result is written only by the job whose token the files hash holds for the path (a Lua script
 * checks it in the same step), so a late job from an earlier enqueue, or a job run twice because
 * its worker's lock expired, can never add a second result: each file is counted once.
 */
import { brotliCompressSync, brotliDecompressSync, constants } from 'node:zlib';
import type { Redis } from 'ioredis';
import type { FileEntry } from '../check-file.ts';
import type { ParamValues } from '../../../dsp/ops/types.ts';
import type { Status, Thresholds } from '../thresholds.ts';
import { ParameterError } from '../../../dsp/errors.ts';

export const PREFIX = 'reelwright';
export const QUEUE_NAME = 'check';

/** The data of one job (one file). Documented in DEVELOPERS.md ("The batch check on many machines"). */
export interface QueueJobData {
  v: 1;
  batch: string;
  /** Absolute path, as named on the enqueuing machine; every worker must see the file there. */
  path: string;
  sizeBytes: number;
  mtimeMs: number;
  /** This enqueue's id for the file; also the BullMQ job id. */
  token: string;
  /** Parameters per analysis verb, as for `check` on one machine. */
  params: Record<string, ParamValues>;
  /** The pass/warn/fail rules in force when it was enqueued. */
  thresholds: Thresholds;
  /** Set when size and time are unchanged since the stored result: the worker checksums the audio and keeps that result when the MD5 is the same. */
  previousMd5?: string;
  /** How long Redis keeps the batch after this file's result (seconds). */
  ttlSeconds: number;
}

export interface FileRecord {
  sizeBytes: number;
  mtimeMs: number;
  token: string;
  /** When this token was enqueued (ms since 1970). */
  enqueuedAt: number;
}

export interface DoneRecord {
  token: string;
  status: Status;
  sizeBytes: number;
  mtimeMs: number;
  audioMd5?: string;
  /** The file could not be checked (its entry has an error). */
  failed: boolean;
}

export interface ResultRecord {
  v: 1;
  token: string;
  /** Size and time of the file as the worker saw it. */
  sizeBytes: number;
  mtimeMs: number;
  status: Status;
  /** host/pid of the worker that wrote it ('' for a failure recorded by the queue itself). */
  worker: string;
  /** Which start of the job this was (1 = first; more after a retry or a stalled worker). */
  attempt: number;
  finishedAt: string;
  /** The report entry, without status and reasons (they are judged when the report is made). */
  entry: FileEntry;
}

export interface BatchMeta {
  v: 1;
  batch: string;
  createdAt: string;
  /** When the batch was last enqueued. */
  updatedAt: string;
  /** The PATH arguments of every enqueue (absolute). */
  paths: string[];
  thresholds: Thresholds;
  params: Record<string, ParamValues>;
  ttlSeconds: number;
}

export function batchKeys(batch: string) {
  const b = `${PREFIX}:batch:${batch}`;
  return { meta: `${b}:meta`, files: `${b}:files`, results: `${b}:results`, done: `${b}:done` };
}

const BATCH_NAME = /^[A-Za-z0-9][A-Za-z0-9._-]{0,99}$/;

export function checkBatchName(name: string | undefined): string {
  if (name === undefined) throw new ParameterError('--batch NAME is required with --queue (the batch to add the files to)');
  if (!BATCH_NAME.test(name)) throw new ParameterError(`--batch ${JSON.stringify(name)}: use 1 to 100 letters, digits, ".", "_" or "-", starting with a letter or digit`);
  return name;
}

/** JSON on one line, typed arrays as arrays and non-finite numbers as null (as the JSON report). */
export function compactJson(value: unknown): string {
  return JSON.stringify(value, (_k, v) => {
    if (typeof v === 'number' && !Number.isFinite(v)) return null;
    if (ArrayBuffer.isView(v) && !(v instanceof DataView)) return Array.from(v as unknown as ArrayLike<number>);
    return v;
  });
}

/** A result as stored: Brotli (quality 4: a 120 kB entry in a few ms, to about 30 kB) of its JSON. */
export function encodeRecord(record: ResultRecord): Buffer {
  return brotliCompressSync(compactJson(record), { params: { [constants.BROTLI_PARAM_QUALITY]: 4 } });
}

export function decodeRecord(stored: Buffer): ResultRecord {
  return JSON.parse(brotliDecompressSync(stored).toString('utf8')) as ResultRecord;
}

/** One file's stored result. */
export async function readResult(redis: Redis, batch: string, path: string): Promise<ResultRecord | undefined> {
  const b = await redis.hgetBuffer(batchKeys(batch).results, path);
  return b ? decodeRecord(b) : undefined;
}

/** All stored results of a batch, by path (read in pieces). */
export async function readResults(redis: Redis, batch: string): Promise<Map<string, ResultRecord>> {
  const out = new Map<string, ResultRecord>();
  let cursor = '0';
  do {
    const [next, flat] = await redis.hscanBuffer(batchKeys(batch).results, cursor, 'COUNT', 100);
    for (let i = 0; i + 1 < flat.length; i += 2) out.set(flat[i]!.toString('utf8'), decodeRecord(flat[i + 1]!));
    cursor = next.toString();
  } while (cursor !== '0');
  return out;
}

// KEYS: files results done meta; ARGV: path token resultJson doneJson ttlSeconds onlyIfAbsent
const STORE_LUA = `
local f = redis.call('HGET', KEYS[1], ARGV[1])
if not f then return 0 end
if cjson.decode(f).token ~= ARGV[2] then return 0 end
if ARGV[6] == '1' and redis.call('HEXISTS', KEYS[3], ARGV[1]) == 1 then return 0 end
redis.call('HSET', KEYS[2], ARGV[1], ARGV[3])
redis.call('HSET', KEYS[3], ARGV[1], ARGV[4])
local ttl = tonumber(ARGV[5])
for i = 1, #KEYS do redis.call('EXPIRE', KEYS[i], ttl) end
return 1
`;

type WithStore = Redis & { reelwrightStore(...args: (string | number | Buffer)[]): Promise<number> };

/**
 * Writes a file's result when `token` still stands for the file. `onlyIfAbsent` (failures noticed
 * by the queue) never replaces a result already there. True when it was written.
 */
export async function storeResult(redis: Redis, batch: string, path: string, record: ResultRecord, ttlSeconds: number, onlyIfAbsent = false): Promise<boolean> {
  const r = redis as WithStore;
  if (typeof r.reelwrightStore !== 'function') redis.defineCommand('reelwrightStore', { numberOfKeys: 4, lua: STORE_LUA });
  const k = batchKeys(batch);
  const done: DoneRecord = {
    token: record.token,
    status: record.status,
    sizeBytes: record.sizeBytes,
    mtimeMs: record.mtimeMs,
    ...(record.entry.file.audioMd5 !== undefined ? { audioMd5: record.entry.file.audioMd5 } : {}),
    failed: record.entry.error !== undefined,
  };
  const n = await r.reelwrightStore(k.files, k.results, k.done, k.meta, path, record.token, encodeRecord(record), JSON.stringify(done), Math.max(1, Math.round(ttlSeconds)), onlyIfAbsent ? '1' : '0');
  return n === 1;
}

/** An entry for a file that could not be checked at all. */
export function failureEntry(path: string, error: string): FileEntry {
  return { file: { path }, findings: [], notes: [], error, seconds: 0 };
}

export async function readMeta(redis: Redis, batch: string): Promise<BatchMeta | undefined> {
  const raw = await redis.get(batchKeys(batch).meta);
  return raw ? (JSON.parse(raw) as BatchMeta) : undefined;
}

/** All fields of a hash, read in pieces (HSCAN) so a large batch does not block Redis. */
export async function readHash(redis: Redis, key: string): Promise<Map<string, string>> {
  const out = new Map<string, string>();
  let cursor = '0';
  do {
    const [next, flat] = await redis.hscan(key, cursor, 'COUNT', 200);
    for (let i = 0; i + 1 < flat.length; i += 2) out.set(flat[i]!, flat[i + 1]!);
    cursor = next;
  } while (cursor !== '0');
  return out;
}
