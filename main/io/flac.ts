/**
 * FLAC files as streaming AudioSources, decoded by @wasm-audio-decoders/flac (libFLAC in
 * WebAssembly). The file is read in 256 KiB pieces and cut into frames by the pure
 * FlacFrameScanner (dsp/formats/flac-frames.ts), which checks every frame header against
 * STREAMINFO (channels, bits, rate, block size), checks that no frame is missing or repeated and
 * verifies each frame's CRC-16; only whole, verified frames reach the decoder. A damaged or
 * self-contradicting file is refused at the first bad frame with its byte offset and time. A
 * whole forward pass also compares the decoded audio's MD5 with STREAMINFO's (RFC 9639 §8.2).
 *
 * Seeking (a block range that does not start at 0, and reverse reading): a bisection over byte
 * positions finds the last frame that starts at or before the wanted sample — a candidate is a
 * valid frame header (CRC-8) whose frame bytes up to the next valid header pass the CRC-16 check
 * — and decoding restarts there (RFC 9639 §9). Reverse reading decodes segments of at least 2^18
 * frames from the end backwards, so a reverse pass costs about one forward pass plus one seek per
 * segment.
 *
 * The decoder returns float32 samples scaled by 1/(2^(b−1) − 1); for b ≤ 24 bits that is exact
 * enough to recover every integer code by rounding, which is done here, so blocks carry the same
 * values as the equivalent WAV (code / 2^(b−1)). Streams of more than 24 bits are refused.
 */
import { createHash, type Hash } from 'node:crypto';
import { FLACDecoder } from '@wasm-audio-decoders/flac';
import { InputError } from '../../dsp/errors.ts';
import { clockTime, findFlacFrame, FlacFrameScanner, type FlacFrame } from '../../dsp/formats/flac-frames.ts';
import type { AudioLayout, FlacStreamInfo } from '../../dsp/formats/types.ts';
import { flacCodesToSamples, packFlacCodes, reversedDecodedBlocks } from '../../dsp/formats/flac.ts';
import { defaultBlockFrames, resolveRange, type Block, type BlockOptions } from '../../dsp/source.ts';
import type { FileBytes } from './file-bytes.ts';
import { fileInfoFor } from './info.ts';
import { breathe } from './yield.ts';
import type { ChunkRecord, FileInfo, OpenedAudio, SampleFormat } from './types.ts';

const FEED_BYTES = 256 << 10;
const NO_MD5 = '0'.repeat(32);
const LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

interface Decoded {
  /** Absolute index of the first sample in `channels`. */
  first: number;
  channels: Float32Array[];
  count: number;
}

/**
 * Decoders kept for reuse: creating one instantiates libFLAC's WebAssembly (about 2 ms). Frames
 * are decoded one by one with no state carried between them, so a decoder that finished (or
 * stopped between frames) is as good as new; one that reported an error is freed.
 */
const idleDecoders: FLACDecoder[] = [];
const MAX_IDLE_DECODERS = 2;
/** Frames each decoder has been given (its error reports count frames from its creation). */
const framesFed = new WeakMap<FLACDecoder, number>();

async function takeDecoder(): Promise<FLACDecoder> {
  const idle = idleDecoders.pop();
  if (idle) return idle;
  const d = new FLACDecoder();
  await d.ready;
  framesFed.set(d, 0);
  return d;
}

function returnDecoder(d: FLACDecoder, healthy: boolean): void {
  if (healthy && idleDecoders.length < MAX_IDLE_DECODERS) idleDecoders.push(d);
  else d.free();
}

/** MD5 of decoded samples as STREAMINFO computes it: little-endian signed ceil(b/8)-byte integers, interleaved. */
class PcmMd5 {
  readonly #hash: Hash = createHash('md5');
  #scratch = new Uint8Array(0);
  /** The scratch as 16-bit words, for 16-bit samples on little-endian hosts (one store per sample). */
  #scratch16: Int16Array | null = null;
  readonly bytes: number;
  readonly codeScale: number;
  readonly outScale: number;
  constructor(
    readonly channels: number,
    readonly bitsPerSample: number,
  ) {
    this.bytes = Math.ceil(bitsPerSample / 8);
    this.codeScale = 2 ** (bitsPerSample - 1) - 1;
    this.outScale = 1 / 2 ** (bitsPerSample - 1);
  }

  /** Makes room for `count` frames; then pack()/convertAndPack() each channel, then end(count). */
  begin(count: number): void {
    const need = count * this.channels * this.bytes;
    if (this.#scratch.length < need) {
      this.#scratch = new Uint8Array(need);
      this.#scratch16 = this.bytes === 2 && LITTLE_ENDIAN ? new Int16Array(this.#scratch.buffer) : null;
    }
  }

  /**
   * Channel `c` of decoded frames [from, from+count): packs their integer codes at frame `frame`
   * of the scratch and, when `dst` is given, also writes code/2^(b−1) to dst[at…] (one pass).
   */
  convertAndPack(src: Float32Array, from: number, count: number, c: number, frame: number, dst: Float64Array | null, at: number): void {
    const bytes = this.bytes, k = this.codeScale, s = this.outScale;
    const out = this.#scratch;
    const step = this.channels * bytes;
    let j = frame * step + c * bytes;
    const e = from + count;
    const words = this.#scratch16;
    if (dst && words) {
      const wstep = this.channels;
      let w = frame * wstep + c;
      for (let i = from, o = at; i < e; i++, w += wstep) {
        const q = Math.round(src[i]! * k) | 0;
        dst[o++] = q * s;
        words[w] = q;
      }
    } else if (dst) {
      let o = at;
      if (bytes === 2) {
        for (let i = from; i < e; i++, j += step) {
          const q = Math.round(src[i]! * k) | 0;
          dst[o++] = q * s;
          out[j] = q;
          out[j + 1] = q >> 8;
        }
      } else if (bytes === 3) {
        for (let i = from; i < e; i++, j += step) {
          const q = Math.round(src[i]! * k) | 0;
          dst[o++] = q * s;
          out[j] = q;
          out[j + 1] = q >> 8;
          out[j + 2] = q >> 16;
        }
      } else {
        for (let i = from; i < e; i++, j += step) {
          const q = Math.round(src[i]! * k) | 0;
          dst[o++] = q * s;
          out[j] = q;
        }
      }
    } else {
      packFlacCodes(src, from, count, out, j, step, this.bitsPerSample);
    }
  }

  end(count: number): void {
    this.#hash.update(this.#scratch.subarray(0, count * this.channels * this.bytes));
  }

  /** All channels of decoded frames [from, from+count). */
  add(ch: Float32Array[], from: number, count: number): void {
    this.begin(count);
    for (let c = 0; c < this.channels; c++) this.convertAndPack(ch[c]!, from, count, c, 0, null, 0);
    this.end(count);
  }

  hex(): string {
    return this.#hash.digest('hex');
  }
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
  /** MD5 of the decoded audio, once a whole pass has computed (and checked) it. */
  private md5: string | undefined;

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
    this.info = fileInfoFor(file.path, layout, layout.frames);
  }

  private newMd5(): PcmMd5 {
    return new PcmMd5(this.channelCount, this.bitsPerSample);
  }

  /** Records the MD5 of a whole pass, refusing the file when it differs from STREAMINFO's. */
  private settleMd5(hex: string): string {
    if (this.si.md5 !== NO_MD5 && hex !== this.si.md5) {
      throw new InputError(
        `the decoded audio's MD5 (${hex}) differs from the one in STREAMINFO (${this.si.md5}): the file is damaged or was altered after encoding`,
        this.path,
        this.chunks[0]!.offset + 18,
      );
    }
    this.md5 = hex;
    this.info.audioMd5 = hex;
    return hex;
  }

  /** For streams whose STREAMINFO does not give the length: one checked decoding pass to count samples. */
  async countFrames(): Promise<void> {
    const md5 = this.newMd5();
    let n = 0;
    for await (const d of this.decodeFrom(this.layout.dataOffset, 0, Infinity)) {
      md5.add(d.channels, 0, d.count);
      n = d.first + d.count;
    }
    if (n === 0) throw new InputError('no audio: the FLAC stream decodes to no samples', this.path, this.layout.dataOffset);
    this.frames = n;
    this.info = fileInfoFor(this.path, this.layout, n);
    this.settleMd5(md5.hex());
  }

  /**
   * Decodes from the frame at byte `offset` (whose first sample is `firstSample`) until at least
   * sample `until` has been produced or the stream ends. Yields decoded pieces in order.
   */
  private async *decodeFrom(offset: number, firstSample: number, until: number): AsyncGenerator<Decoded> {
    let decoder: FLACDecoder | undefined;
    let healthy = true;
    const scanner = new FlacFrameScanner(this.si, this.path, { offset, firstSample, fileSize: this.file.size });
    try {
      let pos = offset;
      while (scanner.nextSample < until && !scanner.done) {
        const n = this.file.readInto(pos, FEED_BYTES, scanner.reserve(FEED_BYTES));
        pos += n;
        const frames = n > 0 ? scanner.commit(n) : scanner.finish();
        if (frames.length > 0) {
          decoder ??= await takeDecoder();
          let decoded: Decoded;
          try {
            decoded = await this.decodeBatch(decoder, frames);
          } catch (e) {
            // The decoder itself failed on a verified frame: do not reuse it.
            healthy = false;
            throw e;
          }
          yield decoded;
        }
        if (n === 0) break;
        await breathe();
      }
    } finally {
      if (decoder) returnDecoder(decoder, healthy);
    }
  }

  /** Decodes verified frames (their bytes are copied into the decoder before anything else runs). */
  private async decodeBatch(decoder: FLACDecoder, frames: FlacFrame[]): Promise<Decoded> {
    const fedBefore = framesFed.get(decoder) ?? 0;
    framesFed.set(decoder, fedBefore + frames.length);
    // The package prints its decoding errors on the console; they are reported here instead, once.
    const print = console.error;
    console.error = () => {};
    let pending: ReturnType<FLACDecoder['decodeFrames']>;
    try {
      pending = decoder.decodeFrames(frames.map((f) => f.bytes));
    } finally {
      console.error = print;
    }
    const r = await pending;
    let expected = 0;
    for (const f of frames) expected += f.blockSize;
    if (r.errors.length > 0 || r.samplesDecoded !== expected || r.channelData.length !== this.channelCount) {
      const index = r.errors.length > 0 ? Math.min(frames.length - 1, Math.max(0, r.errors[0]!.frameNumber - fedBefore)) : 0;
      const f = frames[index]!;
      const why = r.errors[0]?.message.replace(/\s+/g, ' ').trim() ?? `${r.samplesDecoded} samples in ${r.channelData.length} channels decoded where ${expected} in ${this.channelCount} were expected`;
      throw new InputError(`FLAC frame at sample ${f.firstSample} (${clockTime(f.firstSample / this.sampleRateHz)}) cannot be decoded: ${why}`, this.path, f.offset);
    }
    return { first: frames[0]!.firstSample, channels: r.channelData, count: expected };
  }

  /**
   * The last verified frame starting at or before `target`: bisection over byte positions.
   * Returns the frame's byte offset and first sample.
   */
  private seek(target: number): { offset: number; first: number } {
    const start = { offset: this.layout.dataOffset, first: 0 };
    if (target <= 0) return start;
    const window = Math.min(this.file.size, this.si.maxFrameBytes > 0 ? Math.max(2 * this.si.maxFrameBytes + 64, 128 << 10) : 1 << 20);
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

  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const size = Math.max(1, Math.floor(options.blockFrames ?? defaultBlockFrames(this.channelCount)));
    if (end <= start) return;
    const channels = this.channelCount;
    if (!options.reverse) {
      yield* this.forward(start, end, size);
      return;
    }
    yield* reversedDecodedBlocks((lo, hi) => this.decodeRangeIter(lo, hi), (src, from, count, dst, at) => flacCodesToSamples(src, from, count, dst, at, this.bitsPerSample), channels, start, end, size);
  }

  /** Forward blocks; a pass over the whole stream also checks (and remembers) the MD5. */
  private async *forward(start: number, end: number, size: number): AsyncGenerator<Block> {
    const channels = this.channelCount;
    const md5 = start === 0 && end === this.frames && this.md5 === undefined ? this.newMd5() : null;
    const fresh = (lo: number) => Array.from({ length: channels }, () => new Float64Array(Math.min(size, end - lo)));
    let blockStart = start;
    let block = fresh(start);
    let fill = 0;
    let last: Block | null = null;
    for await (const { ch, from, count } of this.decodeRangeIter(start, end)) {
      md5?.begin(count);
      let done = 0;
      while (done < count) {
        const take = Math.min(count - done, block[0]!.length - fill);
        if (md5) for (let c = 0; c < channels; c++) md5.convertAndPack(ch[c]!, from + done, take, c, done, block[c]!, fill);
        else for (let c = 0; c < channels; c++) flacCodesToSamples(ch[c]!, from + done, take, block[c]!, fill, this.bitsPerSample);
        fill += take;
        done += take;
        if (fill === block[0]!.length) {
          const full = block;
          blockStart += fill;
          fill = 0;
          if (blockStart < end) {
            block = fresh(blockStart);
            yield full;
          } else {
            last = full;
          }
        }
      }
      md5?.end(count);
    }
    // The last block leaves only once the whole stream has been checked.
    if (md5) this.settleMd5(md5.hex());
    if (last) yield last;
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
   * what FLAC's STREAMINFO MD5 covers (RFC 9639 §8.2). Refuses the file when the two differ.
   */
  async audioMd5(onProgress?: (fraction: number) => void): Promise<string> {
    if (this.md5 !== undefined) {
      onProgress?.(1);
      return this.md5;
    }
    const md5 = this.newMd5();
    let done = 0;
    for await (const { ch, from, count } of this.decodeRangeIter(0, this.frames)) {
      md5.add(ch, from, count);
      done += count;
      onProgress?.(done / this.frames);
    }
    return this.settleMd5(md5.hex());
  }

  async scanNonFinite(): Promise<number> {
    return 0;
  }

  async close(): Promise<void> {
    this.file.close();
  }
}
