/**
 * Streaming WAV/BWF/RF64 writing, pure: a header of fixed length written first (with provisional
 * sizes) and rewritten in place once the audio is complete, the encoded sample bytes in between,
 * and a trailer (pad byte and the chunks that belong after the audio).
 *
 * The header always reserves 36 bytes right after "WAVE": a 28-byte `JUNK` chunk in a RIFF file,
 * which becomes the `ds64` chunk when the file turns out to need RF64 (EBU Tech 3306 §3: "a JUNK
 * chunk of the size of ds64 ... placed before fmt so a RIFF file can be upgraded"). Output order:
 * RIFF/RF64 · JUNK/ds64 · fmt · fact (float only) · bext · copied chunks (source order) · data ·
 * pad · copied chunks that came after the source's audio.
 *
 * Usable from Node (main/io/writer.ts) and from the browser editor, which can collect
 * [finish().header, …encode() parts, finish().trailer] into a Blob.
 */
import { BugError, ParameterError } from '../errors.ts';
import { putFourcc, putU16le, putU32le, putU64le } from './bytes.ts';
import { encodeSamples, wavEncoding, type SampleEncoding, type SampleFormat } from './codec.ts';

export interface WavFormatSpec {
  sampleFormat: SampleFormat;
  /** 8/16/24/32 for int, 32/64 for float. */
  bitsPerSample: number;
  channels: number;
  /** Stored as an integer (rounded). */
  sampleRateHz: number;
  /** dwChannelMask for WAVE_FORMAT_EXTENSIBLE (default 0 = no speaker positions). */
  channelMask?: number;
  /** Write WAVE_FORMAT_EXTENSIBLE. Default: only for more than 2 channels. */
  extensible?: boolean;
}

/** A chunk to copy into the output: id and payload (without the pad byte). */
export interface RawChunk {
  id: string;
  data: Uint8Array;
}

export interface WavLayoutSpec {
  format: WavFormatSpec;
  /** A complete bext payload (see buildBext), or none. */
  bext?: Uint8Array;
  /** Chunks written between the header chunks and 'data', in order. */
  chunksBefore?: readonly RawChunk[];
  /** Chunks written after 'data', in order. */
  chunksAfter?: readonly RawChunk[];
  /** 'auto' (default): RF64 only when the RIFF size would pass 4 GiB; 'rf64': always RF64. */
  container?: 'auto' | 'rf64';
}

/** Chunk ids the writer makes itself; a source's copies of them are not carried over. */
export const WRITER_OWNED_CHUNKS: readonly string[] = ['fmt ', 'data', 'ds64', 'bext', 'fact'];
/** Filler chunks dropped on copy (their only job was to reserve space in the source). */
export const FILLER_CHUNKS: readonly string[] = ['JUNK', 'junk', 'PAD ', 'pad ', 'FLLR', 'filr'];

/** Whether a source chunk with this id is copied into an output file. */
export function copiesChunk(id: string): boolean {
  return !WRITER_OWNED_CHUNKS.includes(id) && !FILLER_CHUNKS.includes(id);
}

const MAX_U32 = 0xffffffff;
const chunkBytes = (size: number) => 8 + size + (size & 1);

function checkFormat(f: WavFormatSpec): void {
  const ok = f.sampleFormat === 'int' ? [8, 16, 24, 32].includes(f.bitsPerSample) : [32, 64].includes(f.bitsPerSample);
  if (!ok) throw new ParameterError(`cannot write ${f.bitsPerSample}-bit ${f.sampleFormat} samples (int 8/16/24/32, float 32/64)`);
  if (!Number.isInteger(f.channels) || f.channels < 1 || f.channels > 65535) throw new ParameterError(`cannot write ${f.channels} channels`);
  const rate = Math.round(f.sampleRateHz);
  if (!(rate >= 1 && rate <= MAX_U32)) throw new ParameterError(`cannot write a sample rate of ${f.sampleRateHz} Hz`);
}

function useExtensible(f: WavFormatSpec): boolean {
  return f.extensible ?? f.channels > 2;
}

function fmtPayloadBytes(f: WavFormatSpec): number {
  if (useExtensible(f)) return 40;
  return f.sampleFormat === 'float' ? 18 : 16;
}

/** Length of the header (everything before the first sample byte); independent of the audio length. */
export function wavHeaderBytes(spec: WavLayoutSpec): number {
  checkFormat(spec.format);
  let n = 12 + chunkBytes(28) + chunkBytes(fmtPayloadBytes(spec.format));
  if (spec.format.sampleFormat === 'float') n += chunkBytes(4);
  if (spec.bext) n += chunkBytes(spec.bext.length);
  for (const c of spec.chunksBefore ?? []) n += chunkBytes(c.data.length);
  return n + 8;
}

/** Length of the trailer: the data pad byte plus the after-data chunks. */
export function wavTrailerBytes(spec: WavLayoutSpec, dataBytes: number): number {
  let n = dataBytes & 1;
  for (const c of spec.chunksAfter ?? []) n += chunkBytes(c.data.length);
  return n;
}

function putChunk(b: Uint8Array, at: number, id: string, payload: Uint8Array): number {
  putFourcc(b, at, id);
  if (payload.length > MAX_U32) throw new ParameterError(`chunk '${id}' of ${payload.length} bytes is too large to copy`);
  putU32le(b, at + 4, payload.length);
  b.set(payload, at + 8);
  if (payload.length & 1) b[at + 8 + payload.length] = 0;
  return at + chunkBytes(payload.length);
}

/**
 * Builds the header for a given amount of audio. The same spec gives the same length for any
 * dataBytes, so a provisional header (dataBytes 0) can be overwritten with the final one.
 */
export function buildWavHeader(
  spec: WavLayoutSpec,
  dataBytes: number,
  frames: number,
): { header: Uint8Array; container: 'RIFF' | 'RF64' } {
  const f = spec.format;
  const headerBytes = wavHeaderBytes(spec);
  const totalBytes = headerBytes + dataBytes + wavTrailerBytes(spec, dataBytes);
  const riffSize = totalBytes - 8;
  const rf64 = spec.container === 'rf64' || riffSize >= MAX_U32;
  const b = new Uint8Array(headerBytes);
  putFourcc(b, 0, rf64 ? 'RF64' : 'RIFF');
  putU32le(b, 4, rf64 ? MAX_U32 : riffSize);
  putFourcc(b, 8, 'WAVE');
  let at = 12;
  // ds64 (EBU Tech 3306 §3.3): riffSize, dataSize, sampleCount as 64-bit; tableLength 0.
  putFourcc(b, at, rf64 ? 'ds64' : 'JUNK');
  putU32le(b, at + 4, 28);
  if (rf64) {
    putU64le(b, at + 8, riffSize);
    putU64le(b, at + 16, dataBytes);
    putU64le(b, at + 24, frames);
    putU32le(b, at + 32, 0);
  }
  at += 36;
  const bytes = f.bitsPerSample / 8;
  const blockAlign = f.channels * bytes;
  const rate = Math.round(f.sampleRateHz);
  const ext = useExtensible(f);
  const fmtBytes = fmtPayloadBytes(f);
  putFourcc(b, at, 'fmt ');
  putU32le(b, at + 4, fmtBytes);
  const p = at + 8;
  putU16le(b, p, ext ? 0xfffe : f.sampleFormat === 'float' ? 3 : 1);
  putU16le(b, p + 2, f.channels);
  putU32le(b, p + 4, rate);
  putU32le(b, p + 8, rate * blockAlign);
  putU16le(b, p + 12, blockAlign);
  putU16le(b, p + 14, f.bitsPerSample);
  if (fmtBytes >= 18) putU16le(b, p + 16, fmtBytes - 18);
  if (ext) {
    putU16le(b, p + 18, f.bitsPerSample);
    putU32le(b, p + 20, f.channelMask ?? 0);
    // SubFormat GUID {0000000x-0000-0010-8000-00AA00389B71}, x = 1 PCM, 3 IEEE float.
    b.set([f.sampleFormat === 'float' ? 3 : 1, 0, 0, 0, 0, 0, 0x10, 0, 0x80, 0, 0, 0xaa, 0, 0x38, 0x9b, 0x71], p + 24);
  }
  at += 8 + fmtBytes;
  if (f.sampleFormat === 'float') {
    const fact = new Uint8Array(4);
    putU32le(fact, 0, Math.min(frames, MAX_U32));
    at = putChunk(b, at, 'fact', fact);
  }
  if (spec.bext) at = putChunk(b, at, 'bext', spec.bext);
  for (const c of spec.chunksBefore ?? []) at = putChunk(b, at, c.id, c.data);
  putFourcc(b, at, 'data');
  putU32le(b, at + 4, rf64 ? MAX_U32 : dataBytes);
  return { header: b, container: rf64 ? 'RF64' : 'RIFF' };
}

/** The bytes after the audio: a zero pad byte when dataBytes is odd, then the after-data chunks. */
export function buildWavTrailer(spec: WavLayoutSpec, dataBytes: number): Uint8Array {
  const b = new Uint8Array(wavTrailerBytes(spec, dataBytes));
  let at = dataBytes & 1;
  for (const c of spec.chunksAfter ?? []) at = putChunk(b, at, c.id, c.data);
  return b;
}

export interface WavStreamResult {
  /** The final header, same length as the provisional one: overwrite bytes [0, header.length). */
  header: Uint8Array;
  trailer: Uint8Array;
  container: 'RIFF' | 'RF64';
  frames: number;
  dataBytes: number;
  totalBytes: number;
}

/**
 * Encodes planar blocks into WAV sample bytes while counting them; `finish()` returns the final
 * header and the trailer.
 */
export class WavStreamEncoder {
  readonly encoding: SampleEncoding;
  readonly bytesPerFrame: number;
  readonly provisionalHeader: Uint8Array;
  private framesDone = 0;
  private readonly rng: (() => number) | undefined;

  constructor(
    readonly spec: WavLayoutSpec,
    options: { dither?: boolean; rng?: () => number } = {},
  ) {
    const f = spec.format;
    this.encoding = wavEncoding(f.sampleFormat, f.bitsPerSample);
    this.bytesPerFrame = f.channels * this.encoding.bytesPerSample;
    this.rng = options.dither && f.sampleFormat === 'int' ? (options.rng ?? Math.random) : undefined;
    this.provisionalHeader = buildWavHeader(spec, 0, 0).header;
  }

  get frames(): number {
    return this.framesDone;
  }

  /** Bytes needed to encode `frames` frames. */
  bytesFor(frames: number): number {
    return frames * this.bytesPerFrame;
  }

  /** Encodes one planar block into `dst` at `dstOffset`; returns the bytes written. */
  encodeInto(block: readonly ArrayLike<number>[], dst: Uint8Array, dstOffset = 0): number {
    if (block.length !== this.spec.format.channels) {
      throw new BugError(`block has ${block.length} channels; ${this.spec.format.channels} expected`);
    }
    const frames = block[0]?.length ?? 0;
    for (const ch of block) if (ch.length !== frames) throw new BugError('block channels differ in length');
    encodeSamples(block, 0, frames, this.encoding, dst, dstOffset, this.rng);
    this.framesDone += frames;
    return frames * this.bytesPerFrame;
  }

  /** Encodes one planar block into a new byte array. */
  encode(block: readonly ArrayLike<number>[]): Uint8Array {
    const out = new Uint8Array(this.bytesFor(block[0]?.length ?? 0));
    this.encodeInto(block, out, 0);
    return out;
  }

  finish(): WavStreamResult {
    const dataBytes = this.framesDone * this.bytesPerFrame;
    const { header, container } = buildWavHeader(this.spec, dataBytes, this.framesDone);
    const trailer = buildWavTrailer(this.spec, dataBytes);
    return {
      header,
      trailer,
      container,
      frames: this.framesDone,
      dataBytes,
      totalBytes: header.length + dataBytes + trailer.length,
    };
  }
}
