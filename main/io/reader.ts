/**
 * openAudio(): opens WAV/BWF/RF64/BW64, AIFF/AIFC and FLAC files as streaming, re-readable
 * AudioSources. The header is parsed by the pure dsp/formats code through synchronous positioned
 * reads; samples are read on demand, one block at a time, so a file of any length is never held in
 * memory. The file is opened read-only and never written.
 */
import { createHash } from 'node:crypto';
import { InputError } from '../../dsp/errors.ts';
import { countNonFinite, decodeSamples } from '../../dsp/formats/codec.ts';
import { parseAudioLayout } from '../../dsp/formats/layout.ts';
import type { AudioLayout } from '../../dsp/formats/types.ts';
import type { BextInfo } from '../../dsp/formats/bext.ts';
import { defaultBlockFrames, resolveRange, type Block, type BlockOptions } from '../../dsp/source.ts';
import { FileBytes } from './file-bytes.ts';
import { openFlac } from './flac.ts';
import { fileInfoFor } from './info.ts';
import { breathe } from './yield.ts';
import type { ChunkRecord, FileInfo, OpenedAudio, SampleFormat } from './types.ts';

/** Bytes per read for whole-file passes (MD5, validation). */
const PASS_BYTES = 4 << 20;

/**
 * Opens an audio file for streaming reads.
 * @throws InputError (oneLine(): "PATH: at byte N: problem") when the file cannot be read as audio
 */
export async function openAudio(path: string): Promise<OpenedAudio> {
  const file = FileBytes.open(path);
  try {
    const layout = parseAudioLayout((offset, length) => file.read(offset, length), file.size, path);
    if (layout.container === 'FLAC') return await openFlac(file, layout);
    return new PcmFileAudio(file, layout);
  } catch (e) {
    file.close();
    throw e;
  }
}

/** Uncompressed PCM/float in WAV-family and AIFF-family files. */
class PcmFileAudio implements OpenedAudio {
  readonly path: string;
  readonly info: FileInfo;
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly frames: number;
  readonly bitsPerSample: number;
  readonly sampleFormat: SampleFormat;
  readonly chunks: readonly ChunkRecord[];
  readonly codingHistory: string;
  readonly bext?: BextInfo;
  nonFiniteSamples: number | undefined;

  constructor(
    private readonly file: FileBytes,
    readonly layout: AudioLayout,
  ) {
    this.path = file.path;
    this.sampleRateHz = layout.sampleRateHz;
    this.channelCount = layout.channels;
    this.frames = layout.frames;
    this.bitsPerSample = layout.bitsPerSample;
    this.sampleFormat = layout.sampleFormat;
    this.chunks = layout.chunks;
    this.bext = layout.bext;
    this.codingHistory = layout.bext?.codingHistory ?? '';
    this.info = fileInfoFor(file.path, layout, layout.frames);
    this.nonFiniteSamples = layout.sampleFormat === 'int' ? 0 : undefined;
  }

  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const size = Math.max(1, Math.floor(options.blockFrames ?? defaultBlockFrames(this.channelCount)));
    const { blockAlign, dataOffset, encoding } = this.layout;
    const channels = this.channelCount;
    const buf = new Uint8Array(Math.min(size, Math.max(1, end - start)) * blockAlign);
    let bad = 0;
    // With `reusable`, one set of arrays serves every block (shorter views for the last one).
    const kept: Float64Array[] | null = options.reusable
      ? Array.from({ length: channels }, () => new Float64Array(Math.min(size, Math.max(1, end - start))))
      : null;
    const readBlock = (lo: number, hi: number): Block => {
      const n = hi - lo;
      const bytes = n * blockAlign;
      const got = this.file.readInto(dataOffset + lo * blockAlign, bytes, buf);
      if (got < bytes) {
        throw new InputError(
          `truncated: expected ${bytes} bytes of audio but the file ends at byte ${this.file.size}`,
          this.path,
          dataOffset + lo * blockAlign + got,
        );
      }
      const out: Float64Array[] = [];
      for (let c = 0; c < channels; c++) out.push(kept ? (kept[c]!.length === n ? kept[c]! : kept[c]!.subarray(0, n)) : new Float64Array(n));
      bad += decodeSamples(buf, 0, encoding, channels, n, out, 0);
      return out;
    };
    if (options.reverse) {
      for (let hi = end; hi > start; hi -= size) {
        const block = readBlock(Math.max(start, hi - size), hi);
        for (const ch of block) ch.reverse();
        yield block;
        await breathe();
      }
    } else {
      for (let lo = start; lo < end; lo += size) {
        yield readBlock(lo, Math.min(end, lo + size));
        await breathe();
      }
    }
    if (start === 0 && end === this.frames) this.nonFiniteSamples = bad;
  }

  async readChunk(chunk: ChunkRecord): Promise<Uint8Array> {
    const b = this.file.read(chunk.offset, chunk.size);
    if (b.length < chunk.size) {
      throw new InputError(`truncated: chunk '${chunk.id}' needs ${chunk.size} bytes`, this.path, chunk.offset);
    }
    return b;
  }

  /** Passes over the stored audio bytes in large reads. */
  private pass(visit: (bytes: Uint8Array) => void, onProgress?: (fraction: number) => void): void {
    const { dataOffset, dataBytes, blockAlign } = this.layout;
    const step = Math.max(blockAlign, PASS_BYTES - (PASS_BYTES % blockAlign));
    const buf = new Uint8Array(Math.min(step, dataBytes));
    for (let done = 0; done < dataBytes; ) {
      const want = Math.min(step, dataBytes - done);
      const got = this.file.readInto(dataOffset + done, want, buf);
      if (got < want) {
        throw new InputError(`truncated: the audio data ends early`, this.path, dataOffset + done + got);
      }
      visit(buf.subarray(0, got));
      done += got;
      onProgress?.(done / dataBytes);
    }
  }

  async audioMd5(onProgress?: (fraction: number) => void): Promise<string> {
    const hash = createHash('md5');
    const enc = this.layout.encoding;
    let bad = 0;
    this.pass((bytes) => {
      hash.update(bytes);
      if (enc.sampleFormat === 'float') bad += countNonFinite(bytes, 0, enc, Math.floor(bytes.length / enc.bytesPerSample));
    }, onProgress);
    this.nonFiniteSamples = bad;
    const hex = hash.digest('hex');
    this.info.audioMd5 = hex;
    return hex;
  }

  async scanNonFinite(onProgress?: (fraction: number) => void): Promise<number> {
    const enc = this.layout.encoding;
    if (enc.sampleFormat === 'int') return 0;
    let bad = 0;
    this.pass((bytes) => {
      bad += countNonFinite(bytes, 0, enc, Math.floor(bytes.length / enc.bytesPerSample));
    }, onProgress);
    this.nonFiniteSamples = bad;
    return bad;
  }

  async close(): Promise<void> {
    this.file.close();
  }
}
