/**
 * FLAC files as streaming AudioSources, decoded by @wasm-audio-decoders/flac (libFLAC in
 * WebAssembly). The file is fed to the decoder in 256 KiB pieces and only the current block is
 * kept.
 *
 * Seeking (a block range that does not start at 0, and reverse reading): a bisection over byte
 * positions finds the last frame that starts at or before the wanted sample — a candidate is a
 * valid frame header (CRC-8) whose frame bytes up to the next valid header pass the CRC-16 check,
 * the same test the decoder's own parser uses to sync — and decoding restarts there (RFC 9639
 * §9). Reverse reading decodes segments of at least 2^18 frames from the end backwards, so a
 * reverse pass costs about one forward pass plus one seek per segment.
 *
 * The decoder returns float32 samples scaled by 1/(2^(b−1) − 1); for b ≤ 24 bits that is exact
 * enough to recover every integer code by rounding, which is done here, so blocks carry the same
 * values as the equivalent WAV (code / 2^(b−1)). Streams of more than 24 bits are refused.
 */
import { createHash } from 'node:crypto';
import { FLACDecoder } from '@wasm-audio-decoders/flac';
import { InputError } from '../../dsp/errors.ts';
import { findFlacFrame } from '../../dsp/formats/flac.ts';
import type { AudioLayout, FlacStreamInfo } from '../../dsp/formats/types.ts';
import { DEFAULT_BLOCK_FRAMES, resolveRange, type Block, type BlockOptions } from '../../dsp/source.ts';
import type { FileBytes } from './file-bytes.ts';
import { fileInfoFor } from './info.ts';
import type { ChunkRecord, FileInfo, OpenedAudio, SampleFormat } from './types.ts';

const FEED_BYTES = 256 << 10;
const REVERSE_SEGMENT_FRAMES = 1 << 18;

interface Decoded {
  /** Absolute index of the first sample in `channels`. */
  first: number;
  channels: Float32Array[];
  count: number;
}

export async function openFlac(file: FileBytes, layout: AudioLayout): Promise<OpenedAudio> {
  const si = layout.flac!;
  if (si.bitsPerSample > 24) {
    throw new InputError(`${si.bitsPerSample}-bit FLAC is not supported (the decoder is exact up to 24 bits)`, file.path, 4);
  }
  const audio = new FlacFileAudio(file, layout);
  if (si.totalSamples === 0) await audio.countFrames();
  return audio;
}

class FlacFileAudio implements OpenedAudio {
  readonly path: string;
  info: FileInfo;
  readonly sampleRateHz: number;
  readonly channelCount: number;
  frames: number;
  readonly bitsPerSample: number;
  readonly sampleFormat: SampleFormat = 'int';
  readonly chunks: readonly ChunkRecord[];
  readonly codingHistory = '';
  readonly nonFiniteSamples = 0;
  private readonly si: FlacStreamInfo;
  /** Integer code = round(decoded float × codeScale). */
  private readonly codeScale: number;
  private readonly outScale: number;

  constructor(
    private readonly file: FileBytes,
    readonly layout: AudioLayout,
  ) {
    this.si = layout.flac!;
    this.path = file.path;
    this.sampleRateHz = layout.sampleRateHz;
    this.channelCount = layout.channels;
    this.frames = layout.frames;
    this.bitsPerSample = layout.bitsPerSample;
    this.chunks = layout.chunks;
    this.codeScale = Math.pow(2, this.bitsPerSample - 1) - 1;
    this.outScale = 1 / Math.pow(2, this.bitsPerSample - 1);
    this.info = fileInfoFor(file.path, layout, layout.frames);
  }

  /** For streams whose STREAMINFO does not give the length: one decoding pass to count samples. */
  async countFrames(): Promise<void> {
    let n = 0;
    for await (const d of this.decodeFrom(this.layout.dataOffset, 0, Infinity)) n = d.first + d.count;
    if (n === 0) throw new InputError('no audio: the FLAC stream decodes to no samples', this.path, this.layout.dataOffset);
    this.frames = n;
    this.info = fileInfoFor(this.path, this.layout, n);
  }

  /**
   * Decodes from the frame at byte `offset` (whose first sample is `firstSample`) until at least
   * sample `until` has been produced or the stream ends. Yields decoded pieces in order.
   */
  private async *decodeFrom(offset: number, firstSample: number, until: number): AsyncGenerator<Decoded> {
    const decoder = new FLACDecoder();
    await decoder.ready;
    let next = firstSample;
    const buf = new Uint8Array(FEED_BYTES);
    try {
      let pos = offset;
      const emit = (r: { channelData: Float32Array[]; samplesDecoded: number; errors: { message: string }[] }) => {
        if (r.errors.length > 0) {
          throw new InputError(`FLAC decoding failed: ${r.errors[0]!.message}`, this.path, pos);
        }
        const d: Decoded = { first: next, channels: r.channelData, count: r.samplesDecoded };
        next += r.samplesDecoded;
        return d;
      };
      while (pos < this.file.size && next < until) {
        const n = this.file.readInto(pos, FEED_BYTES, buf);
        if (n === 0) break;
        // The decoder copies its input, so the buffer can be reused.
        const r = await decoder.decode(buf.subarray(0, n));
        pos += n;
        if (r.samplesDecoded > 0) yield emit(r);
      }
      if (next < until) {
        const r = await decoder.flush();
        if (r.samplesDecoded > 0) yield emit(r);
      }
    } finally {
      decoder.free();
    }
  }

  /**
   * The last verified frame starting at or before `target`: bisection over byte positions.
   * Returns the frame's byte offset and first sample.
   */
  private seek(target: number): { offset: number; first: number } {
    const start = { offset: this.layout.dataOffset, first: 0 };
    if (target <= 0) return start;
    const window = this.si.maxFrameBytes > 0 ? Math.max(2 * this.si.maxFrameBytes + 64, 128 << 10) : 1 << 20;
    let best = start;
    let lo = start.offset;
    let hi = this.file.size;
    const buf = new Uint8Array(window);
    while (hi - lo > window) {
      const mid = Math.floor((lo + hi) / 2);
      const n = this.file.readInto(mid, window, buf);
      const f = findFlacFrame(buf.subarray(0, n), 0, this.si, mid + n >= this.file.size);
      if (!f || f.header.firstSample > target) {
        hi = mid;
      } else {
        best = { offset: mid + f.offset, first: f.header.firstSample };
        lo = mid + f.offset;
        if (lo + 1 >= hi) break;
      }
    }
    return best;
  }

  /** Converts decoded floats to exact code/2^(b−1) values. */
  private convert(src: Float32Array, from: number, count: number, dst: Float64Array, at: number): void {
    const k = this.codeScale, s = this.outScale;
    for (let i = 0; i < count; i++) dst[at + i] = Math.round(src[from + i]! * k) * s;
  }

  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const size = Math.max(1, Math.floor(options.blockFrames ?? DEFAULT_BLOCK_FRAMES));
    if (end <= start) return;
    const channels = this.channelCount;
    if (!options.reverse) {
      yield* this.forward(start, end, size);
      return;
    }
    const seg = Math.max(size, REVERSE_SEGMENT_FRAMES);
    for (let segEnd = end; segEnd > start; segEnd -= seg) {
      const segStart = Math.max(start, segEnd - seg);
      const parts = Array.from({ length: channels }, () => new Float64Array(segEnd - segStart));
      let at = 0;
      for await (const { ch, from, count } of this.decodeRangeIter(segStart, segEnd)) {
        for (let c = 0; c < channels; c++) this.convert(ch[c]!, from, count, parts[c]!, at);
        at += count;
      }
      for (let hi = segEnd; hi > segStart; hi -= size) {
        const lo = Math.max(segStart, hi - size);
        yield parts.map((p) => p.slice(lo - segStart, hi - segStart).reverse());
      }
    }
  }

  private async *forward(start: number, end: number, size: number): AsyncGenerator<Block> {
    const channels = this.channelCount;
    const fresh = (lo: number) => Array.from({ length: channels }, () => new Float64Array(Math.min(size, end - lo)));
    let blockStart = start;
    let block = fresh(start);
    let fill = 0;
    for await (const { ch, from, count } of this.decodeRangeIter(start, end)) {
      let done = 0;
      while (done < count) {
        const take = Math.min(count - done, block[0]!.length - fill);
        for (let c = 0; c < channels; c++) this.convert(ch[c]!, from + done, take, block[c]!, fill);
        fill += take;
        done += take;
        if (fill === block[0]!.length) {
          const full = block;
          blockStart += fill;
          fill = 0;
          if (blockStart < end) block = fresh(blockStart);
          yield full;
        }
      }
    }
  }

  /** Decoded pieces covering frames [start, end) exactly, in order; throws if the stream ends early. */
  private async *decodeRangeIter(start: number, end: number): AsyncGenerator<{ ch: Float32Array[]; from: number; count: number }> {
    const s = this.seek(start);
    let reached = s.first;
    for await (const d of this.decodeFrom(s.offset, s.first, end)) {
      reached = d.first + d.count;
      const lo = Math.max(start, d.first);
      const hi = Math.min(end, d.first + d.count);
      if (hi > lo) yield { ch: d.channels, from: lo - d.first, count: hi - lo };
      if (reached >= end) break;
    }
    if (reached < end) {
      throw new InputError(`truncated: the FLAC stream ends after ${reached} of ${this.frames} samples`, this.path, this.file.size);
    }
  }

  async readChunk(chunk: ChunkRecord): Promise<Uint8Array> {
    return this.file.read(chunk.offset, chunk.size);
  }

  /**
   * MD5 of the decoded samples as little-endian signed integers of ceil(b/8) bytes, interleaved —
   * what FLAC's STREAMINFO MD5 covers (RFC 9639 §8.2), so the two can be compared.
   */
  async audioMd5(onProgress?: (fraction: number) => void): Promise<string> {
    const hash = createHash('md5');
    const channels = this.channelCount;
    const bytes = Math.ceil(this.bitsPerSample / 8);
    const k = this.codeScale;
    let scratch = new Uint8Array(0);
    let done = 0;
    for await (const { ch, from, count } of this.decodeRangeIter(0, this.frames)) {
      const need = count * channels * bytes;
      if (scratch.length < need) scratch = new Uint8Array(need);
      let j = 0;
      for (let i = 0; i < count; i++) {
        for (let c = 0; c < channels; c++) {
          const q = Math.round(ch[c]![from + i]! * k);
          scratch[j++] = q;
          if (bytes > 1) scratch[j++] = q >> 8;
          if (bytes > 2) scratch[j++] = q >> 16;
        }
      }
      hash.update(scratch.subarray(0, need));
      done += count;
      onProgress?.(done / this.frames);
    }
    const hex = hash.digest('hex');
    this.info.audioMd5 = hex;
    return hex;
  }

  async scanNonFinite(): Promise<number> {
    return 0;
  }

  async close(): Promise<void> {
    this.file.close();
  }
}
