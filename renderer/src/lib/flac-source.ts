/**
 * FLAC in the editor, as the command line reads it (main/io/flac.ts), over byte reads that arrive
 * asynchronously (the bridge, or the picked file itself): the pure FlacFrameScanner
 * (dsp/formats/flac-frames.ts) cuts the bytes into verified frames (headers against STREAMINFO,
 * CRC-8 and CRC-16, no frame missing or repeated), only those reach @wasm-audio-decoders/flac,
 * and the decoded floats are rounded back to the exact integer codes, so blocks equal the
 * equivalent WAV's. Seeking bisects byte positions to a frame that verifies (RFC 9639 §9).
 * `audioMd5()` is STREAMINFO's MD5 of the decoded samples (RFC 9639 §8.2) and refuses the file
 * when the two differ.
 */
import { FLACDecoder } from '@wasm-audio-decoders/flac';
import { CancelledError, InputError } from '../../../dsp/errors.ts';
import { clockTime, findFlacFrame, FlacFrameScanner, type FlacFrame } from '../../../dsp/formats/flac-frames.ts';
import type { AudioLayout, FlacStreamInfo } from '../../../dsp/formats/types.ts';
import { flacCodesToSamples, packFlacCodes, reversedDecodedBlocks } from '../../../dsp/formats/flac.ts';
import { defaultBlockFrames, resolveRange, type AudioSource, type Block, type BlockOptions } from '../../../dsp/source.ts';
import { Md5 } from './md5.ts';

export type ReadBytes = (offset: number, length: number) => Promise<Uint8Array>;

const FEED_BYTES = 1 << 20;
const NO_MD5 = '0'.repeat(32);

interface Decoded { first: number; channels: Float32Array[]; count: number }

export class FlacSource implements AudioSource {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  frames: number;
  readonly bitsPerSample: number;
  readonly sampleFormat = 'int' as const;
  readonly #si: FlacStreamInfo;
  #md5: string | undefined;
  #decoder: FLACDecoder | null = null;

  private constructor(private readonly read: ReadBytes, readonly layout: AudioLayout, private readonly fileSize: number, private readonly name: string) {
    this.#si = layout.flac!;
    this.sampleRateHz = layout.sampleRateHz;
    this.channelCount = layout.channels;
    this.frames = layout.frames;
    this.bitsPerSample = layout.bitsPerSample;
  }

  static async open(read: ReadBytes, layout: AudioLayout, fileSize: number, name: string): Promise<FlacSource> {
    const si = layout.flac!;
    if (si.bitsPerSample > 24) throw new InputError(`${si.bitsPerSample}-bit FLAC is not supported (the decoder is exact up to 24 bits)`, name, 4);
    const s = new FlacSource(read, layout, fileSize, name);
    if (si.totalSamples === 0) {
      // STREAMINFO does not give the length: one checked pass counts the samples.
      let n = 0;
      for await (const d of s.#decodeFrom(layout.dataOffset, 0, Infinity)) n = d.first + d.count;
      if (n === 0) throw new InputError('no audio: the FLAC stream decodes to no samples', name, layout.dataOffset);
      s.frames = n;
    }
    return s;
  }

  async #takeDecoder(): Promise<FLACDecoder> {
    if (this.#decoder) return this.#decoder;
    const d = new FLACDecoder();
    await d.ready;
    this.#decoder = d;
    return d;
  }

  async *#decodeFrom(offset: number, firstSample: number, until: number): AsyncGenerator<Decoded> {
    const scanner = new FlacFrameScanner(this.#si, this.name, { offset, firstSample, fileSize: this.fileSize });
    let pos = offset;
    while (scanner.nextSample < until && !scanner.done) {
      const want = Math.min(FEED_BYTES, this.fileSize - pos);
      const bytes = want > 0 ? await this.read(pos, want) : new Uint8Array(0);
      pos += bytes.length;
      const frames = bytes.length > 0 ? scanner.push(bytes) : scanner.finish();
      if (frames.length > 0) yield await this.#decodeBatch(frames);
      if (bytes.length === 0) break;
    }
  }

  async #decodeBatch(frames: FlacFrame[]): Promise<Decoded> {
    const decoder = await this.#takeDecoder();
    const print = console.error;
    console.error = () => {};
    let pending: ReturnType<FLACDecoder['decodeFrames']>;
    try { pending = decoder.decodeFrames(frames.map((f) => f.bytes)); } finally { console.error = print; }
    const r = await pending;
    let expected = 0;
    for (const f of frames) expected += f.blockSize;
    if (r.errors.length > 0 || r.samplesDecoded !== expected || r.channelData.length !== this.channelCount) {
      const f = frames[0]!;
      this.#decoder?.free();
      this.#decoder = null;
      const why = r.errors[0]?.message.replace(/\s+/g, ' ').trim() ?? `${r.samplesDecoded} samples decoded where ${expected} were expected`;
      throw new InputError(`FLAC frame at sample ${f.firstSample} (${clockTime(f.firstSample / this.sampleRateHz)}) cannot be decoded: ${why}`, this.name, f.offset);
    }
    return { first: frames[0]!.firstSample, channels: r.channelData, count: expected };
  }

  /** The last verified frame starting at or before `target` (bisection over byte positions). */
  async #seek(target: number): Promise<{ offset: number; first: number }> {
    const start = { offset: this.layout.dataOffset, first: 0 };
    if (target <= 0) return start;
    const window = Math.min(this.fileSize, this.#si.maxFrameBytes > 0 ? Math.max(2 * this.#si.maxFrameBytes + 64, 128 << 10) : 1 << 20);
    let best = start, lo = start.offset, hi = this.fileSize;
    while (hi - lo > window) {
      const mid = Math.floor((lo + hi) / 2);
      const buf = await this.read(mid, Math.min(window, this.fileSize - mid));
      const f = findFlacFrame(buf, 0, this.#si, mid + buf.length >= this.fileSize);
      if (!f || f.header.firstSample > target) hi = mid;
      else {
        best = { offset: mid + f.offset, first: f.header.firstSample };
        lo = mid + f.offset;
        if (lo + 1 >= hi) break;
      }
    }
    return best;
  }

  async *#range(start: number, end: number): AsyncGenerator<{ ch: Float32Array[]; from: number; count: number }> {
    const s = await this.#seek(start);
    let reached = s.first;
    for await (const d of this.#decodeFrom(s.offset, s.first, end)) {
      reached = d.first + d.count;
      const lo = Math.max(start, d.first), hi = Math.min(end, d.first + d.count);
      if (hi > lo) yield { ch: d.channels, from: lo - d.first, count: hi - lo };
      if (reached >= end) break;
    }
    if (reached < end) throw new InputError(`truncated: the FLAC stream ends after ${reached} of ${this.frames} samples`, this.name, this.fileSize);
  }

  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const size = Math.max(1, Math.floor(options.blockFrames ?? defaultBlockFrames(this.channelCount)));
    if (end <= start) return;
    const n = this.channelCount;
    if (options.reverse) {
      yield* reversedDecodedBlocks((lo, hi) => this.#range(lo, hi), (src, from, count, dst, at) => flacCodesToSamples(src, from, count, dst, at, this.bitsPerSample), n, start, end, size);
      return;
    }
    let blockStart = start, fill = 0;
    const fresh = (lo: number) => Array.from({ length: n }, () => new Float64Array(Math.min(size, end - lo)));
    let block = fresh(start);
    for await (const { ch, from, count } of this.#range(start, end)) {
      let done = 0;
      while (done < count) {
        const take = Math.min(count - done, block[0]!.length - fill);
        for (let c = 0; c < n; c++) flacCodesToSamples(ch[c]!, from + done, take, block[c]!, fill, this.bitsPerSample);
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

  /**
   * Frames [start, end) as float32 planar pieces straight from the decoder (exact codes), for the
   * overview: no float64 blocks in between.
   */
  async *float32Pieces(start: number, end: number): AsyncGenerator<Float32Array[]> {
    let buf: Float32Array[] = [];
    for await (const { ch, from, count } of this.#range(start, end)) {
      if (buf.length === 0 || buf[0]!.length < count) buf = Array.from({ length: this.channelCount }, () => new Float32Array(count));
      for (let c = 0; c < this.channelCount; c++) flacCodesToSamples(ch[c]!, from, count, buf[c]!, 0, this.bitsPerSample);
      yield buf.map((b) => b.subarray(0, count));
    }
  }

  /** STREAMINFO's MD5 of the decoded audio, checked against it (the file is refused when they differ). */
  async audioMd5(progress?: (fraction: number) => void, signal?: { aborted: boolean }): Promise<string> {
    if (this.#md5) return this.#md5;
    const md5 = new Md5();
    const bytes = Math.ceil(this.bitsPerSample / 8), n = this.channelCount;
    let scratch = new Uint8Array(0);
    let done = 0;
    for await (const { ch, from, count } of this.#range(0, this.frames)) {
      if (signal?.aborted) throw new CancelledError('cancelled');
      if (scratch.length < count * n * bytes) scratch = new Uint8Array(count * n * bytes);
      for (let c = 0; c < n; c++) packFlacCodes(ch[c]!, from, count, scratch, c * bytes, n * bytes, this.bitsPerSample);
      md5.update(scratch.subarray(0, count * n * bytes));
      done += count;
      progress?.(done / this.frames);
    }
    const hex = md5.hex();
    if (this.#si.md5 !== NO_MD5 && hex !== this.#si.md5) {
      throw new InputError(`the decoded audio's MD5 (${hex}) differs from the one in STREAMINFO (${this.#si.md5}): the file is damaged or was altered after encoding`, this.name, (this.layout.chunks[0]?.offset ?? 8) + 18);
    }
    this.#md5 = hex;
    return hex;
  }
}
