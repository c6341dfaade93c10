/**
 * FLAC container facts, pure: the metadata blocks (STREAMINFO for rate, channels, bits, length and
 * MD5), and frame-header recognition for seeking (sync code, header fields, CRC-8 of the header and
 * CRC-16 of the whole frame). Sample decoding itself goes through a maintained decoder package on
 * the Node side (main/io/flac.ts).
 *
 * Source: IETF RFC 9639, "Free Lossless Audio Codec (FLAC)" (2024): §8.2 STREAMINFO, §9.1 frame
 * header (block size and sample rate codes, channel assignment, coded number, CRC-8 with polynomial
 * x^8+x^2+x+1), §9.3 frame footer (CRC-16, polynomial x^16+x^15+x^2+1, both initialised to 0).
 */
import { InputError } from '../errors.ts';
import { fourcc, showId, u16be, u32be } from './bytes.ts';
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
      if (size < 34) throw new InputError(`FLAC STREAMINFO is ${size} bytes; 34 expected`, name, pos);
      info = parseStreamInfo(readExact(read, fileSize, name, pos + 4, 34, 'FLAC STREAMINFO'));
      if (info.sampleRateHz === 0) throw new InputError('FLAC STREAMINFO says a sample rate of 0 Hz', name, pos + 14);
    }
    pos += 4 + size;
    if (last) break;
  }
  const si = info!;
  const dataBytes = fileSize - pos;
  if (dataBytes <= 0 || (si.totalSamples === 0 && dataBytes < 6)) {
    throw new InputError('no audio: the FLAC file ends after its metadata', name, pos);
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

function makeTable(poly: number, width: 8 | 16): Uint16Array {
  const t = new Uint16Array(256);
  const top = 1 << (width - 1);
  const mask = (1 << width) - 1;
  for (let i = 0; i < 256; i++) {
    let c = i << (width - 8);
    for (let k = 0; k < 8; k++) c = c & top ? ((c << 1) ^ poly) & mask : (c << 1) & mask;
    t[i] = c;
  }
  return t;
}
const CRC8 = makeTable(0x07, 8);
const CRC16 = makeTable(0x8005, 16);

export function crc8(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  for (let i = from; i < to; i++) c = CRC8[c ^ b[i]!]!;
  return c;
}

export function crc16(b: Uint8Array, from: number, to: number, init = 0): number {
  let c = init;
  for (let i = from; i < to; i++) c = ((c << 8) & 0xffff) ^ CRC16[(c >> 8) ^ b[i]!]!;
  return c;
}

export interface FlacFrameHeader {
  /** Bytes of the header including its CRC-8. */
  headerBytes: number;
  blockSize: number;
  /** Index of the frame's first sample in the stream. */
  firstSample: number;
}

const RATE_CODES = [0, 88200, 176400, 192000, 8000, 16000, 22050, 24000, 32000, 44100, 48000, 96000];
const SIZE_CODES = [0, 8, 12, -1, 16, 20, 24, 32];

/**
 * Parses and checks the frame header at `at` against STREAMINFO (channels, bits, rate, block size).
 * Returns null when the bytes there are not a valid header (or not all of it is in `b`).
 */
export function parseFlacFrameHeader(b: Uint8Array, at: number, si: FlacStreamInfo): FlacFrameHeader | null {
  if (at + 6 > b.length || b[at] !== 0xff || (b[at + 1]! & 0xfe) !== 0xf8) return null;
  const variable = (b[at + 1]! & 1) === 1;
  const bsCode = b[at + 2]! >> 4;
  const srCode = b[at + 2]! & 0x0f;
  const chCode = b[at + 3]! >> 4;
  const ssCode = (b[at + 3]! >> 1) & 7;
  if (bsCode === 0 || srCode === 15 || chCode > 10 || (b[at + 3]! & 1) !== 0 || SIZE_CODES[ssCode] === -1) return null;
  const channels = chCode < 8 ? chCode + 1 : 2;
  if (channels !== si.channels) return null;
  if (ssCode !== 0 && SIZE_CODES[ssCode] !== si.bitsPerSample) return null;
  // Coded number (UTF-8-like, up to 7 bytes).
  let p = at + 4;
  const first = b[p++]!;
  let extra: number;
  let num: number;
  if (first < 0x80) {
    extra = 0;
    num = first;
  } else if (first >= 0xc0 && first < 0xe0) {
    extra = 1;
    num = first & 0x1f;
  } else if (first >= 0xe0 && first < 0xf0) {
    extra = 2;
    num = first & 0x0f;
  } else if (first >= 0xf0 && first < 0xf8) {
    extra = 3;
    num = first & 0x07;
  } else if (first >= 0xf8 && first < 0xfc) {
    extra = 4;
    num = first & 0x03;
  } else if (first >= 0xfc && first < 0xfe) {
    extra = 5;
    num = first & 0x01;
  } else if (first === 0xfe && variable) {
    extra = 6;
    num = 0;
  } else return null;
  if (p + extra + 3 > b.length) return null;
  for (let k = 0; k < extra; k++) {
    const c = b[p++]!;
    if ((c & 0xc0) !== 0x80) return null;
    num = num * 64 + (c & 0x3f);
  }
  let blockSize: number;
  if (bsCode === 1) blockSize = 192;
  else if (bsCode <= 5) blockSize = 576 << (bsCode - 2);
  else if (bsCode === 6) blockSize = b[p++]! + 1;
  else if (bsCode === 7) {
    blockSize = ((b[p]! << 8) | b[p + 1]!) + 1;
    p += 2;
  } else blockSize = 256 << (bsCode - 8);
  let rateHz = srCode === 0 ? si.sampleRateHz : RATE_CODES[srCode] ?? 0;
  if (srCode === 12) rateHz = b[p++]! * 1000;
  else if (srCode === 13) {
    rateHz = (b[p]! << 8) | b[p + 1]!;
    p += 2;
  } else if (srCode === 14) {
    rateHz = ((b[p]! << 8) | b[p + 1]!) * 10;
    p += 2;
  }
  if (p >= b.length) return null;
  if (rateHz !== si.sampleRateHz) return null;
  if (si.maxBlockSize > 0 && blockSize > si.maxBlockSize) return null;
  if (crc8(b, at, p) !== b[p]) return null;
  const firstSample = variable ? num : num * (si.maxBlockSize || blockSize);
  return { headerBytes: p + 1 - at, blockSize, firstSample };
}

/**
 * Finds the first verified frame starting at or after `from` in `b`: a valid header whose frame
 * bytes, up to the next valid header, pass the CRC-16 check (the test the decoder's own parser
 * uses to sync). When `endsStream` is true, a frame running to the end of `b` may be the last one.
 * @returns the frame's offset in `b` and its header, or null when none can be verified in `b`
 */
export function findFlacFrame(
  b: Uint8Array,
  from: number,
  si: FlacStreamInfo,
  endsStream: boolean,
): { offset: number; header: FlacFrameHeader } | null {
  for (let p = Math.max(0, from); p + 6 <= b.length; p++) {
    if (b[p] !== 0xff || (b[p + 1]! & 0xfe) !== 0xf8) continue;
    const h = parseFlacFrameHeader(b, p, si);
    if (!h) continue;
    // CRC-16 over the frame including its stored CRC is 0 at the frame's true end.
    let crc = crc16(b, p, p + h.headerBytes);
    let q = p + h.headerBytes;
    let verified = false;
    for (; q < b.length; q++) {
      if (b[q] === 0xff && (b[q + 1]! & 0xfe) === 0xf8 && crc === 0 && parseFlacFrameHeader(b, q, si)) {
        verified = true;
        break;
      }
      crc = ((crc << 8) & 0xffff) ^ CRC16[(crc >> 8) ^ b[q]!]!;
    }
    if (!verified && endsStream && crc === 0) verified = true;
    if (verified) return { offset: p, header: h };
  }
  return null;
}
