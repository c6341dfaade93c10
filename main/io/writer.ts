/**
 * writeAudio(): streams a rendering into a WAV/BWF file (RF64 past 4 GiB).
 *
 * Safety: the output is written to a temporary file in the destination folder (name starting
 * `.reelwright-tmp-PID-`), flushed to disk, and moved into place only when complete; on any error
 * — including an exception thrown by the rendering's iterator mid-way, and an abort (Ctrl+C,
 * SIGTERM) — the temporary file is deleted and nothing appears at the destination. Writing onto
 * the source file is refused (compared by real path, and by device + inode when the output
 * already exists). An existing output is replaced only with `overwrite`; otherwise it is refused
 * before any work and again, atomically, when the finished file is linked into place. Temporary
 * files left by a process that was killed (SIGKILL, power loss) are removed the next time
 * Reelwright writes into that folder: those whose process no longer runs and that have not been
 * touched for a minute.
 *
 * Provenance: chunks of a WAV-family source that the writer does not own (LIST/INFO, iXML, axml,
 * cue, unknown ids…) are copied byte-exact in their original order, those that followed the
 * source's audio after the output's audio; JUNK and similar fillers are dropped. The bext chunk is
 * kept with all its fields and its CodingHistory gains one EBU R98 line for this run; a source
 * without bext gets a new one, so the history always records the run. A FLAC or AIFF source's tags
 * and text chunks become a LIST/INFO chunk (dsp/formats/info-list.ts); its metadata that a WAV
 * file cannot carry here (pictures, cue sheets, markers) is named in the result's `notCarried`.
 */
import { randomBytes } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { CancelledError, ParameterError } from '../../dsp/errors.ts';
import { codingHistoryLine, outputBext } from '../../dsp/formats/bext.ts';
import { carryMetadata } from '../../dsp/formats/info-list.ts';
import { copiesChunk, WavStreamEncoder, type RawChunk, type WavLayoutSpec } from '../../dsp/formats/wav-writer.ts';
import type { Block } from '../../dsp/source.ts';
import { describeFsError } from './file-bytes.ts';
import { breathe } from './yield.ts';
import type { WriteOptions, WriteResult } from './types.ts';

export interface RenderingLike {
  sampleRateHz: number;
  channelCount: number;
  blocks: AsyncIterable<Block>;
}

export const TEMP_PREFIX = '.reelwright-tmp-';

/** Temporary files being written now (removed by the interrupt handler if the process must stop at once). */
const active = new Set<string>();

export function activeTemporaryFiles(): string[] {
  return [...active];
}

/** Deletes the temporary files being written now (synchronously: for a process about to exit). */
export function removeActiveTemporaryFiles(): void {
  for (const tmp of active) {
    try {
      fs.unlinkSync(tmp);
    } catch {
      // already gone
    }
    active.delete(tmp);
  }
}

const STALE_NAME = /^\.reelwright-tmp-(\d+)-[0-9a-f]{8}-/;
const STALE_AFTER_MS = 60_000;

function processRuns(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as { code?: string }).code === 'EPERM';
  }
}

/**
 * Removes `.reelwright-tmp-PID-…` files in `dir` left by processes that no longer run and not
 * modified for a minute (a killed run; a live writer touches its file continuously).
 * @returns the names removed
 */
export function removeStaleTemporaryFiles(dir: string, nowMs = Date.now()): string[] {
  const removed: string[] = [];
  let names: string[];
  try {
    names = fs.readdirSync(dir);
  } catch {
    return removed;
  }
  for (const name of names) {
    const m = STALE_NAME.exec(name);
    if (!m) continue;
    const pid = Number(m[1]);
    if (pid === process.pid || processRuns(pid)) continue;
    const file = path.join(dir, name);
    try {
      const st = fs.lstatSync(file);
      if (!st.isFile() || nowMs - st.mtimeMs < STALE_AFTER_MS) continue;
      fs.unlinkSync(file);
      removed.push(name);
    } catch {
      // gone meanwhile, or not ours to remove
    }
  }
  return removed;
}

/** Moves the finished temporary file to `outPath`; without `overwrite`, never over an existing file. */
function moveIntoPlace(tmp: string, outPath: string, overwrite: boolean): void {
  if (overwrite) {
    try {
      fs.renameSync(tmp, outPath);
    } catch (e) {
      throw new ParameterError(`${outPath}: ${describeFsError(e, 'cannot move the finished file into place')}`);
    }
    return;
  }
  try {
    // A hard link fails if the name exists: no file can be replaced, even one created meanwhile.
    fs.linkSync(tmp, outPath);
    fs.unlinkSync(tmp);
    return;
  } catch (e) {
    const code = (e as { code?: string }).code;
    if (code === 'EEXIST') throw existsError(outPath);
    if (code !== 'EPERM' && code !== 'ENOTSUP' && code !== 'EOPNOTSUPP' && code !== 'EXDEV' && code !== 'EMLINK') {
      throw new ParameterError(`${outPath}: ${describeFsError(e, 'cannot move the finished file into place')}`);
    }
  }
  // A file system without hard links: check, then rename.
  if (fs.existsSync(outPath)) throw existsError(outPath);
  try {
    fs.renameSync(tmp, outPath);
  } catch (e) {
    throw new ParameterError(`${outPath}: ${describeFsError(e, 'cannot move the finished file into place')}`);
  }
}

function existsError(outPath: string): ParameterError {
  return new ParameterError(`${outPath} already exists; nothing was written (pass --overwrite to replace it)`);
}

const WAV_FAMILY = new Set(['WAV', 'BWF', 'RF64', 'BW64']);

/** Whether `outPath` names the same file as `sourcePath` (real paths; device + inode when both exist). */
export function isSameFile(outPath: string, sourcePath: string): boolean {
  let realSource: string;
  let sourceStat: fs.Stats | undefined;
  try {
    realSource = fs.realpathSync(sourcePath);
    sourceStat = fs.statSync(realSource);
  } catch {
    realSource = path.resolve(sourcePath);
  }
  let realOut: string;
  try {
    realOut = fs.realpathSync(outPath);
    const outStat = fs.statSync(realOut);
    if (sourceStat && outStat.dev === sourceStat.dev && outStat.ino === sourceStat.ino) return true;
  } catch {
    // The output does not exist yet: resolve its folder.
    try {
      realOut = path.join(fs.realpathSync(path.dirname(path.resolve(outPath))), path.basename(outPath));
    } catch {
      realOut = path.resolve(outPath);
    }
  }
  return realOut === realSource;
}

function pad2(n: number): string {
  return String(n).padStart(2, '0');
}

/** Fields of a new bext chunk for a file Reelwright writes from a source without one. */
function freshBextFields(sourcePath: string | undefined, now: Date) {
  const date = `${now.getFullYear()}-${pad2(now.getMonth() + 1)}-${pad2(now.getDate())}`;
  const time = `${pad2(now.getHours())}:${pad2(now.getMinutes())}:${pad2(now.getSeconds())}`;
  return {
    description: sourcePath ? `Processed by Reelwright from ${path.basename(sourcePath)}` : 'Written by Reelwright',
    originator: 'Reelwright',
    originatorReference: `RW${date.replace(/-/g, '')}${time.replace(/:/g, '')}${randomBytes(3).toString('hex').toUpperCase()}`,
    originationDate: date,
    originationTime: time,
  };
}

function writeFully(fd: number, bytes: Uint8Array, length: number, position: number, outPath: string): void {
  let done = 0;
  try {
    while (done < length) done += fs.writeSync(fd, bytes, done, length - done, position + done);
  } catch (e) {
    throw new ParameterError(`${outPath}: ${describeFsError(e, 'writing failed')}`);
  }
}

/**
 * Writes `rendering` to `outPath` as WAV/BWF (RF64 when the file passes 4 GiB or when forced).
 * @throws ParameterError for impossible options, for writing onto the source, for an empty
 *   rendering or when the destination cannot be written
 */
export async function writeAudio(outPath: string, rendering: RenderingLike, options: WriteOptions): Promise<WriteResult> {
  const { sampleFormat, bitsPerSample } = options;
  const okBits = sampleFormat === 'int' ? [8, 16, 24, 32] : [32, 64];
  if (!okBits.includes(bitsPerSample)) {
    throw new ParameterError(`cannot write ${bitsPerSample}-bit ${sampleFormat} samples (int: 8, 16, 24, 32; float: 32, 64)`);
  }
  const channels = rendering.channelCount;
  if (!Number.isInteger(channels) || channels < 1) throw new ParameterError(`cannot write ${channels} channels`);
  if (!(rendering.sampleRateHz > 0) || Math.round(rendering.sampleRateHz) > 0xffffffff) {
    throw new ParameterError(`cannot write a sample rate of ${rendering.sampleRateHz} Hz`);
  }
  const source = options.copyFrom;
  for (const src of [options.sourcePath, source?.path]) {
    if (src !== undefined && isSameFile(outPath, src)) throw new ParameterError(`refusing to write onto the source file ${src}`);
  }
  const overwrite = options.overwrite === true;
  if (!overwrite && fs.existsSync(outPath)) throw existsError(outPath);
  const signal = options.signal;
  const interrupted = () => new CancelledError(`${outPath}: interrupted; the unfinished output was removed`);
  if (signal?.aborted) throw interrupted();

  // Chunks copied from the source, and the bext with this run's history line.
  const chunksBefore: RawChunk[] = [];
  const chunksAfter: RawChunk[] = [];
  let notCarried: string[] = [];
  if (source && WAV_FAMILY.has(source.info.format)) {
    for (const c of source.chunks) {
      if (!copiesChunk(c.id)) continue;
      const data = await source.readChunk(c);
      (c.position === 'after-data' ? chunksAfter : chunksBefore).push({ id: c.id, data });
    }
  } else if (source && (source.info.format === 'FLAC' || source.info.format === 'AIFF' || source.info.format === 'AIFC')) {
    // FLAC tags and AIFF text chunks become a RIFF INFO list; what cannot be carried is reported.
    const chunks = [];
    for (const c of source.chunks) chunks.push({ id: c.id, data: await source.readChunk(c) });
    const carried = carryMetadata(source.info.format, chunks);
    if (carried.list) chunksBefore.push({ id: 'LIST', data: carried.list });
    notCarried = [...carried.notCarried];
  }
  const line = codingHistoryLine({
    sampleRateHz: rendering.sampleRateHz,
    bitsPerSample,
    sampleFormat,
    channels,
    text: options.historyText ?? 'reelwright',
  });
  const bext = outputBext({
    source: source?.bext,
    fresh: freshBextFields(source?.path ?? options.sourcePath, new Date()),
    line,
    sourceRateHz: source?.sampleRateHz,
    outputRateHz: Math.round(rendering.sampleRateHz),
  });
  const mask = source?.layout.channelMask;
  const spec: WavLayoutSpec = {
    format: {
      sampleFormat,
      bitsPerSample,
      channels,
      sampleRateHz: rendering.sampleRateHz,
      channelMask: mask !== undefined && source?.channelCount === channels ? mask : undefined,
    },
    bext,
    chunksBefore,
    chunksAfter,
    container: options.forceRf64 ? 'rf64' : 'auto',
  };
  const encoder = new WavStreamEncoder(spec, {
    dither: options.dither && sampleFormat === 'int',
    rng: options.rng ?? Math.random,
  });

  const dir = path.dirname(path.resolve(outPath));
  removeStaleTemporaryFiles(dir);
  // The final name is kept (shortened) in the temp name so a stray temp file can be recognised.
  const tmp = path.join(dir, `${TEMP_PREFIX}${process.pid}-${randomBytes(4).toString('hex')}-${path.basename(outPath).slice(0, 100)}`);
  let fd: number | undefined;
  try {
    try {
      fd = fs.openSync(tmp, 'wx');
      active.add(tmp);
    } catch (e) {
      throw new ParameterError(`${outPath}: ${describeFsError(e, 'cannot write into its folder')}`);
    }
    const header = encoder.provisionalHeader;
    writeFully(fd, header, header.length, 0, outPath);
    let position = header.length;
    let buf = new Uint8Array(0);
    for await (const block of rendering.blocks) {
      if (block.length !== channels) {
        throw new ParameterError(`the rendering produced a block of ${block.length} channels; ${channels} expected`);
      }
      const n = block[0]!.length;
      if (n === 0) continue;
      const need = encoder.bytesFor(n);
      if (buf.length < need) buf = new Uint8Array(need);
      const bytes = encoder.encodeInto(block, buf, 0);
      writeFully(fd, buf, bytes, position, outPath);
      position += bytes;
      options.onProgress?.(encoder.frames);
      // Let signal handlers run; an abort stops the write here.
      await breathe();
      if (signal?.aborted) throw interrupted();
    }
    if (encoder.frames === 0) throw new ParameterError(`${outPath}: the rendering produced no audio; nothing was written`);
    await options.beforeCommit?.();
    const done = encoder.finish();
    writeFully(fd, done.trailer, done.trailer.length, position, outPath);
    writeFully(fd, done.header, done.header.length, 0, outPath);
    fs.fsyncSync(fd);
    fs.closeSync(fd);
    fd = undefined;
    if (signal?.aborted) throw interrupted();
    moveIntoPlace(tmp, outPath, overwrite);
    active.delete(tmp);
    return { path: outPath, frames: done.frames, bytes: done.totalBytes, container: done.container, ...(notCarried.length ? { notCarried } : {}) };
  } catch (e) {
    if (fd !== undefined) {
      try {
        fs.closeSync(fd);
      } catch {
        // already closed
      }
    }
    try {
      fs.unlinkSync(tmp);
    } catch {
      // never created
    }
    active.delete(tmp);
    throw e;
  }
}
