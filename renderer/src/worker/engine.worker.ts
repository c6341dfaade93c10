/**
 * The editor's worker: opens the file (through byte reads relayed by the page), builds the peak
 * caches, runs every analysis and correction from the registry, renders previews, spectra and
 * spectrogram tiles, and encodes exports. The page runs two of these: one for the views
 * (peaks, tiles, playback chunks) and one for the work (diagnose, preview, compare, export), so
 * drawing never waits behind a long render.
 */
import { CancelledError, InputError } from '../../../dsp/errors.ts';
import type { AudioSource } from '../../../dsp/source.ts';
import { MemorySource } from '../../../dsp/source.ts';
import { PeakBuilder, pyramidBuffers, BASE_BUCKET_FRAMES } from '../lib/peaks.ts';
import { Md5 } from '../lib/md5.ts';
import { FileSource } from './file-source.ts';
import type { FlacSource } from '../lib/flac-source.ts';
import { decodeSamples, type AudioLayout } from '../../../dsp/formats/index.ts';
import { readLayout } from './audio-layout.ts';
import type { FromWorker, Job, JobResults, ToWorker, Which } from './protocol.ts';
import { TILE_COLUMNS, SPECTRO_ROWS } from './protocol.ts';
import { spectroTile, longTermSpectrum, toDb, type Placed } from './spectral.ts';
import { preview, remeasure, type Processed } from './jobs.ts';
import { diagnose } from '../../../dsp/ops/diagnose.ts';
import { exportFile } from './export.ts';
import { fileMarkers } from './markers.ts';

const scope = self as unknown as {
  postMessage(m: FromWorker, transfer?: Transferable[]): void;
  onmessage: ((e: MessageEvent<ToWorker>) => void) | null;
};
const post = (m: FromWorker, transfer: Transferable[] = []) => scope.postMessage(m, transfer);

let rid = 0;
const reads = new Map<number, { resolve: (b: Uint8Array) => void; reject: (e: Error) => void }>();
const writes = new Map<number, { resolve: () => void; reject: (e: Error) => void }>();
const running = new Map<number, { aborted: boolean }>();

let file: { handle: string; name: string; sizeBytes: number } | null = null;
let layout: AudioLayout | null = null;
let original: FileSource | FlacSource | null = null;
let processed: Processed | null = null;

/** Web mode hands the worker the file itself; reads then never go through the page. */
let directBlob: Blob | null = null;

function readBytes(handle: string, offset: number, length: number): Promise<Uint8Array> {
  if (directBlob && file?.handle === handle) {
    return directBlob.slice(offset, Math.min(directBlob.size, offset + length)).arrayBuffer().then((b) => new Uint8Array(b));
  }
  const id = ++rid;
  return new Promise((resolve, reject) => {
    reads.set(id, { resolve, reject });
    post({ kind: 'read', rid: id, handle, offset, length });
  });
}

function writeBytes(handle: string, bytes: Uint8Array, atOffset: number | null): Promise<void> {
  const id = ++rid;
  const buf = bytes.byteOffset === 0 && bytes.byteLength === bytes.buffer.byteLength ? (bytes.buffer as ArrayBuffer) : bytes.slice().buffer;
  return new Promise((resolve, reject) => {
    writes.set(id, { resolve, reject });
    post({ kind: 'write', rid: id, handle, bytes: buf, atOffset }, [buf]);
  });
}

const isFlac = (s: FileSource | FlacSource | null): s is FlacSource => s !== null && s.layout.container === 'FLAC';

const needOriginal = (): FileSource | FlacSource => {
  if (!original) throw new InputError('no recording is open');
  return original;
};

const placed = (which: Which): Placed | null => {
  if (which === 'original') return { source: needOriginal(), offsetSeconds: 0 };
  return processed ? { source: processed.source, offsetSeconds: processed.offsetSeconds } : null;
};

async function run(id: number, job: Job, signal: { aborted: boolean }): Promise<{ result: unknown; transfer: Transferable[] }> {
  const progress = (fraction: number, label: string) => post({ kind: 'progress', id, fraction, label });
  const warn = (message: string) => post({ kind: 'warn', id, message });
  const ctx = { progress, warn, signal };
  switch (job.type) {
    case 'open': {
      file = { handle: job.file.handle, name: job.file.name, sizeBytes: job.file.sizeBytes };
      directBlob = job.file.blob ?? null;
      processed = null;
      const handle = job.file.handle;
      layout = await readLayout((o, l) => readBytes(handle, o, l), job.file.sizeBytes, job.file.name);
      const read = (o: number, l: number) => readBytes(handle, o, l);
      // The FLAC decoder is set up only when a FLAC opens (its WebAssembly compiles then; the worker is one file).
      original = layout.container === 'FLAC'
        ? await (await import('../lib/flac-source.ts')).FlacSource.open(read, layout, job.file.sizeBytes, job.file.name)
        : new FileSource(read, layout);
      if (isFlac(original) && original.frames !== layout.frames) layout = { ...layout, frames: original.frames };
      const result: JobResults['open'] = { layout, codingHistory: layout.bext?.codingHistory ?? '', chunkIds: layout.chunks.map((c) => c.id), markers: await fileMarkers(layout, (o, l) => readBytes(handle, o, l), job.file.name) };
      return { result, transfer: [] };
    }
    case 'overview': {
      const src = needOriginal();
      const total = job.endFrame - job.startFrame;
      const builder = new PeakBuilder(src.channelCount, total, src.sampleRateHz);
      let last = 0;
      if (isFlac(src)) {
        for await (const piece of src.float32Pieces(job.startFrame, job.endFrame)) {
          if (signal.aborted) throw new CancelledError('cancelled');
          builder.push(piece);
          if (builder.frames - last > total / 50) { last = builder.frames; progress(builder.frames / total, 'Drawing the overview'); }
        }
        const level = builder.level0();
        return { result: level, transfer: [...level.min, ...level.max].map((a) => a.buffer) };
      }
      // Straight from the stored bytes into reused float32 buffers: no per-block allocation.
      let planar: Float32Array[] = [];
      for await (const { bytes } of src.rawChunks(job.startFrame, job.endFrame, false, 16 << 20, 2)) {
        if (signal.aborted) throw new CancelledError('cancelled');
        const frames = Math.floor(bytes.length / src.layout.blockAlign);
        if (src.layout.encoding.sampleFormat === 'int' && src.layout.encoding.bytesPerSample === 2 && !src.layout.encoding.bigEndian && bytes.byteOffset % 4 === 0) {
          builder.pushInterleavedInt16(new Int16Array(bytes.buffer, bytes.byteOffset, frames * src.channelCount), frames);
          if (builder.frames - last > total / 50) { last = builder.frames; progress(builder.frames / total, 'Drawing the overview'); }
          continue;
        }
        if (planar.length === 0 || planar[0]!.length < frames) planar = Array.from({ length: src.channelCount }, () => new Float32Array(frames));
        decodeSamples(bytes, 0, src.layout.encoding, src.channelCount, frames, planar, 0);
        builder.push(frames === planar[0]!.length ? planar : planar.map((c) => c.subarray(0, frames)));
        if (builder.frames - last > total / 50) { last = builder.frames; progress(builder.frames / total, 'Drawing the overview'); }
      }
      const level = builder.level0();
      return { result: level, transfer: [...level.min, ...level.max].map((a) => a.buffer) };
    }
    case 'checksum': {
      const src = needOriginal();
      if (isFlac(src)) return { result: await src.audioMd5((f) => progress(f, 'Checksum'), signal), transfer: [] };
      const md5 = new Md5();
      for await (const { firstFrame, bytes } of src.rawChunks(0, src.frames)) {
        if (signal.aborted) throw new CancelledError('cancelled');
        md5.update(bytes);
        progress(firstFrame / Math.max(1, src.frames), 'Checksum');
      }
      return { result: md5.hex(), transfer: [] };
    }
    case 'diagnose':
      return { result: await diagnose(needOriginal(), { progress: (f) => progress(f, 'examining'), warn, signal }, { params: job.params ?? {} }), transfer: [] };
    case 'preview': {
      const r = await preview(needOriginal(), job.steps, job.startFrame, job.endFrame, ctx);
      processed = r.processed;
      return { result: r.result, transfer: r.result.channels.map((c) => c.buffer) };
    }
    case 'adoptProcessed': {
      const data = job.channels.map((c) => Float64Array.from(c));
      const source = new MemorySource(data, job.sampleRateHz);
      processed = { source, offsetSeconds: job.startFrame / needOriginal().sampleRateHz, region: null };
      const b = new PeakBuilder(source.channelCount, source.frames, source.sampleRateHz);
      b.push(job.channels);
      const p = b.finish();
      return { result: p, transfer: pyramidBuffers(p) };
    }
    case 'dropProcessed':
      processed = null;
      return { result: null, transfer: [] };
    case 'chunk': {
      const p = placed(job.which) ?? placed('original')!;
      const rate = p.source.sampleRateHz;
      const origRate = needOriginal().sampleRateHz;
      const start = Math.round((job.startFrame / origRate - p.offsetSeconds) * rate);
      const frames = Math.round((job.frames / origRate) * rate);
      const out = Array.from({ length: p.source.channelCount }, () => new Float32Array(Math.max(0, frames)));
      const lo = Math.max(0, start), hi = Math.min(p.source.frames, start + frames);
      if (hi > lo) {
        let at = lo - start;
        for await (const b of p.source.blocks({ startFrame: lo, endFrame: hi })) {
          for (let c = 0; c < out.length; c++) out[c]!.set(b[c]!, at);
          at += b[0]!.length;
        }
      }
      return { result: out, transfer: out.map((c) => c.buffer) };
    }
    case 'tile': {
      const p = placed(job.which);
      const colSeconds = (BASE_BUCKET_FRAMES * 4 ** job.level) / needOriginal().sampleRateHz;
      const values = p ? await spectroTile(p, colSeconds, job.index, signal) : new Uint8Array(TILE_COLUMNS * SPECTRO_ROWS);
      return { result: { level: job.level, index: job.index, columns: TILE_COLUMNS, rows: SPECTRO_ROWS, values }, transfer: [values.buffer] };
    }
    case 'spectra': {
      const src = needOriginal();
      const t0 = job.startFrame / src.sampleRateHz, t1 = job.endFrame / src.sampleRateHz;
      const fft = 8192;
      const before = await longTermSpectrum({ source: src, offsetSeconds: 0 }, t0, t1, fft, signal);
      // The same material after a step that changes time: the page maps the range through the chain.
      const a0 = job.afterStartSeconds ?? t0, a1 = job.afterEndSeconds ?? t1;
      const after = processed ? await longTermSpectrum({ source: processed.source, offsetSeconds: processed.offsetSeconds }, a0, a1, fft, signal) : null;
      const rate = processed?.source.sampleRateHz ?? src.sampleRateHz;
      const frequenciesHz = Float32Array.from({ length: fft / 2 + 1 }, (_, k) => (k * src.sampleRateHz) / fft);
      if (after && rate !== src.sampleRateHz) throw new InputError('compare needs the same sample rate before and after');
      const result: JobResults['spectra'] = { frequenciesHz, beforeDb: toDb(before), afterDb: after ? toDb(after) : null };
      return { result, transfer: [] };
    }
    case 'remeasure':
      if (!processed?.region) return { result: [], transfer: [] };
      return { result: await remeasure(processed.region, processed.offsetSeconds, job.steps, ctx), transfer: [] };
    case 'export': {
      if (!file) throw new InputError('no recording is open');
      const r = await exportFile(needOriginal(), file.handle, readBytes, writeBytes, job, ctx);
      return { result: r, transfer: [] };
    }
  }
}

scope.onmessage = (e) => {
  const m = e.data;
  switch (m.kind) {
    case 'job': {
      const signal = { aborted: false };
      running.set(m.id, signal);
      run(m.id, m.job, signal).then(
        ({ result, transfer }) => post({ kind: 'done', id: m.id, result }, transfer),
        (err: unknown) => {
          const er = err instanceof Error ? err : new Error(String(err));
          const message = er instanceof InputError ? er.oneLine() : er.message;
          post({ kind: 'failed', id: m.id, name: er.name, message });
        },
      ).finally(() => running.delete(m.id));
      break;
    }
    case 'cancel': {
      const s = running.get(m.id);
      if (s) s.aborted = true;
      break;
    }
    case 'bytes': {
      const r = reads.get(m.rid);
      reads.delete(m.rid);
      if (!r) break;
      if (m.error !== undefined || !m.buf) r.reject(new InputError(m.error ?? 'read failed'));
      else r.resolve(new Uint8Array(m.buf));
      break;
    }
    case 'wrote': {
      const w = writes.get(m.rid);
      writes.delete(m.rid);
      if (!w) break;
      if (m.error !== undefined) w.reject(new Error(m.error));
      else w.resolve();
      break;
    }
  }
};

export type { AudioSource };
