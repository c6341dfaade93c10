/**
 * FLAC container facts, pure: the metadata blocks (STREAMINFO for rate, channels, bits, length and
 * MD5). The audio frames (header checks against STREAMINFO, CRC-8/CRC-16, the verifying frame
 * scanner) are in flac-frames.ts. Sample decoding itself goes through a maintained decoder package
 * (main/io/flac.ts for the command line, renderer/src/lib/flac-source.ts in the editor), fed only
 * with verified frames; its floats become exact sample values and MD5 bytes here
 * (flacCodesToSamples, packFlacCodes), and a backwards read is reversedDecodedBlocks.
 *
 * Source: IETF RFC 9639, "Free Lossless Audio Codec (FLAC)" (2024): §8.1 metadata block header,
 * §8.2 STREAMINFO (bits per sample 4 to 32, channels 1 to 8, sample rate not 0).
 */
import { InputError } from '../errors.ts';
import { fourcc, showId, u16be, u32be, u32le } from './bytes.ts';
import { sampleRateProblem } from './limits.ts';
import { FLAC_MAX_HEADER_BYTES, flacHeaderMismatch, readFlacFrameHeader } from './flac-frames.ts';
import { readExact, type AudioLayout, type FlacStreamInfo, type LayoutChunk, type ReadFn } from './types.ts';

const BLOCK_NAMES = ['STREAMINFO', 'PADDING', 'APPLICATION', 'SEEKTABLE', 'VORBIS_COMMENT', 'CUESHEET', 'PICTURE'];

/** Size of an ID3v2 tag at the start of `head` (0 when there is none). ID3v2.4 §3.1: syncsafe size. */
export function id3v2Size(head: Uint8Array): number {
  if (head.length < 10 || head[0] !== 0x49 || head[1] !== 0x44 || head[2] !== 0x33) return 0;
  const size = ((head[6]! & 0x7f) << 21) | ((head[7]! & 0x7f) << 14) | ((head[8]! & 0x7f) << 7) | (head[9]! & 0x7f);
  return 10 + size + (head[5]! & 0x10 ? 10 : 0);
}

/** Parses the FLAC metadata blocks; `start` is where 'fLaC' is (after any ID3v2 tag). */
export function parseFlac(read: ReadFn, fileSize: number, name: string, start: number): AudioLayout {
  const magic = readExact(read, fileSize, name, start, 4, "the 'fLaC' marker");
  if (fourcc(magic, 0) !== 'fLaC') throw new InputError(`expected 'fLaC' after the ID3v2 tag, found ${showId(fourcc(magic, 0))}`, name, start);
  let pos = start + 4;
  const chunks: LayoutChunk[] = [];
  let info: FlacStreamInfo | undefined;
  for (;;) {
    const h = readExact(read, fileSize, name, pos, 4, 'a FLAC metadata block header');
    const last = (h[0]! & 0x80) !== 0;
    const type = h[0]! & 0x7f;
    const size = (h[1]! << 16) | (h[2]! << 8) | h[3]!;
    if (type === 127) throw new InputError('invalid FLAC metadata block type 127', name, pos);
    if (pos + 4 + size > fileSize) {
      throw new InputError(
        `FLAC metadata block ${BLOCK_NAMES[type] ?? type} claims ${size} bytes from byte ${pos + 4} but the file ends at byte ${fileSize}`,
        name,
        pos,
      );
    }
    if (chunks.length === 0 && type !== 0) throw new InputError('the first FLAC metadata block must be STREAMINFO', name, pos);
    chunks.push({ id: BLOCK_NAMES[type] ?? `BLOCK${type}`, offset: pos + 4, size, position: 'before-data' });
    if (type === 0) {
      if (info) throw new InputError('a second FLAC STREAMINFO block', name, pos);
      if (size < 34) throw new InputError(`FLAC STREAMINFO is ${size} bytes; 34 expected`, name, pos);
      info = parseStreamInfo(readExact(read, fileSize, name, pos + 4, 34, 'FLAC STREAMINFO'));
      const badRate = sampleRateProblem(info.sampleRateHz);
      if (badRate) throw new InputError(`FLAC STREAMINFO says ${badRate}`, name, pos + 14);
      if (info.bitsPerSample < 4) {
        throw new InputError(`FLAC STREAMINFO says ${info.bitsPerSample} bits per sample (RFC 9639 allows 4 to 32)`, name, pos + 16);
      }
    }
    if (type === 4) {
      // VORBIS_COMMENT (RFC 9639 §8.6): a little-endian vendor string length first. The reference
      // decoder refuses a block whose vendor string runs past its end; so does this reader.
      const vendor = size >= 4 ? u32le(readExact(read, fileSize, name, pos + 4, 4, 'the VORBIS_COMMENT vendor length'), 0) : -1;
      if (vendor < 0 || 4 + vendor > size) {
        throw new InputError(
          `damaged FLAC VORBIS_COMMENT block: ${vendor < 0 ? `${size} bytes, too short for its vendor string's length` : `its vendor string claims ${vendor} bytes but the block holds ${size}`}`,
          name,
          pos + 4,
        );
      }
      // Then the number of comments, each at least its 4-byte length: more than fit is damage.
      const rest = size - 8 - vendor;
      if (rest >= 0) {
        const count = u32le(readExact(read, fileSize, name, pos + 8 + vendor, 4, 'the VORBIS_COMMENT comment count'), 0);
        if (count * 4 > rest) {
          throw new InputError(`damaged FLAC VORBIS_COMMENT block: it claims ${count} comments in the ${rest} bytes left`, name, pos + 8 + vendor);
        }
      }
    }
    pos += 4 + size;
    if (last) break;
  }
  const si = info!;
  const dataBytes = fileSize - pos;
  if (dataBytes <= 0) throw new InputError('no audio: the FLAC file ends after its metadata', name, pos);
  // The first frame's header, checked against STREAMINFO here so that a file that contradicts
  // itself is refused when it is opened; the reader checks every frame as it decodes.
  const head = read(pos, Math.min(FLAC_MAX_HEADER_BYTES, dataBytes));
  const first = readFlacFrameHeader(head, 0, head.length);
  if (!first) {
    throw new InputError(
      dataBytes < FLAC_MAX_HEADER_BYTES
        ? `no audio: only ${dataBytes} byte${dataBytes === 1 ? '' : 's'} after the FLAC metadata, not a whole frame`
        : 'expected the first FLAC audio frame after the metadata, found bytes that are not a frame header',
      name,
      pos,
    );
  }
  const mismatch = flacHeaderMismatch(first, si);
  if (mismatch) throw new InputError(`the first FLAC frame contradicts STREAMINFO: ${mismatch}`, name, pos);
  if (!first.variable) {
    if (first.number !== 0) throw new InputError(`the first FLAC frame is numbered ${first.number}, not 0: frames are missing`, name, pos);
    si.fixedBlockSize = first.blockSize;
  } else if (first.number !== 0) {
    throw new InputError(`the first FLAC frame starts at sample ${first.number}, not 0: frames are missing`, name, pos);
  }
  const bytesPerSample = Math.ceil(si.bitsPerSample / 8);
  return {
    container: 'FLAC',
    sampleFormat: 'int',
    bitsPerSample: si.bitsPerSample,
    bytesPerSample,
    encoding: { sampleFormat: 'int', bytesPerSample, bigEndian: false, unsigned8: false },
    channels: si.channels,
    sampleRateHz: si.sampleRateHz,
    dataOffset: pos,
    dataBytes,
    blockAlign: 0,
    frames: si.totalSamples,
    chunks,
    flac: si,
  };
}

export function parseStreamInfo(b: Uint8Array): FlacStreamInfo {
  let md5 = '';
  for (let i = 18; i < 34; i++) md5 += b[i]!.toString(16).padStart(2, '0');
  return {
    minBlockSize: u16be(b, 0),
    maxBlockSize: u16be(b, 2),
    minFrameBytes: (b[4]! << 16) | (b[5]! << 8) | b[6]!,
    maxFrameBytes: (b[7]! << 16) | (b[8]! << 8) | b[9]!,
    sampleRateHz: (b[10]! << 12) | (b[11]! << 4) | (b[12]! >> 4),
    channels: ((b[12]! >> 1) & 7) + 1,
    bitsPerSample: (((b[12]! & 1) << 4) | (b[13]! >> 4)) + 1,
    totalSamples: (b[13]! & 0x0f) * 0x1_0000_0000 + u32be(b, 14),
    md5,
  };
}

export { crc8, crc16, findFlacFrame, parseFlacFrameHeader, type FlacFrameHeader } from './flac-frames.ts';

/** Frames decoded at a time when a FLAC stream is read backwards (one segment, then reversed). */
export const FLAC_REVERSE_SEGMENT_FRAMES = 1 << 18;

/** A run of decoded samples: `count` samples of every channel from index `from` of `ch`. */
export interface DecodedRun {
  readonly ch: readonly Float32Array[];
  readonly from: number;
  readonly count: number;
}

/**
 * Blocks of [start, end) from last to first, each reversed, for a decoder that only reads forwards:
 * segments of at least FLAC_REVERSE_SEGMENT_FRAMES are decoded (`decode`), converted (`convert`) and
 * handed out backwards in blocks of `size`.
 */
export async function* reversedDecodedBlocks(
  decode: (lo: number, hi: number) => AsyncIterable<DecodedRun>,
  convert: (src: Float32Array, from: number, count: number, dst: Float64Array, at: number) => void,
  channelCount: number, start: number, end: number, size: number,
): AsyncGenerator<Float64Array[]> {
  const seg = Math.max(size, FLAC_REVERSE_SEGMENT_FRAMES);
  for (let segEnd = end; segEnd > start; segEnd -= seg) {
    const segStart = Math.max(start, segEnd - seg);
    const parts = Array.from({ length: channelCount }, () => new Float64Array(segEnd - segStart));
    let at = 0;
    for await (const { ch, from, count } of decode(segStart, segEnd)) {
      for (let c = 0; c < channelCount; c++) convert(ch[c]!, from, count, parts[c]!, at);
      at += count;
    }
    for (let hi = segEnd; hi > segStart; hi -= size) {
      const lo = Math.max(segStart, hi - size);
      yield parts.map((p) => p.slice(lo - segStart, hi - segStart).reverse());
    }
  }
}

/**
 * Decoded FLAC samples back to their exact values. The decoder returns float32 code/(2^(b−1) − 1);
 * for b ≤ 24 bits rounding the product with 2^(b−1) − 1 recovers every integer code, which is
 * stored as code/2^(b−1), the value the equivalent WAV reads as: dst[at + i] for src[from + i],
 * i < count.
 */
export function flacCodesToSamples(src: Float32Array, from: number, count: number, dst: Float64Array | Float32Array, at: number, bitsPerSample: number): void {
  const k = 2 ** (bitsPerSample - 1) - 1, s = 1 / 2 ** (bitsPerSample - 1);
  for (let i = 0; i < count; i++) dst[at + i] = Math.round(src[from + i]! * k) * s;
}

/**
 * The integer codes of decoded samples src[from … from + count) packed little-endian in ⌈b/8⌉
 * bytes at out[at], out[at + step], … — the interleaved layout STREAMINFO's MD5 is computed over
 * (RFC 9639 §8.2).
 */
export function packFlacCodes(src: Float32Array, from: number, count: number, out: Uint8Array, at: number, step: number, bitsPerSample: number): void {
  const k = 2 ** (bitsPerSample - 1) - 1, bytes = Math.ceil(bitsPerSample / 8);
  const e = from + count;
  let j = at;
  if (bytes === 2) {
    for (let i = from; i < e; i++, j += step) {
      const q = Math.round(src[i]! * k) | 0;
      out[j] = q;
      out[j + 1] = q >> 8;
    }
  } else if (bytes === 3) {
    for (let i = from; i < e; i++, j += step) {
      const q = Math.round(src[i]! * k) | 0;
      out[j] = q;
      out[j + 1] = q >> 8;
      out[j + 2] = q >> 16;
    }
  } else {
    for (let i = from; i < e; i++, j += step) out[j] = Math.round(src[i]! * k) | 0;
  }
}
