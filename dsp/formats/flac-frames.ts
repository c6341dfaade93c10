/**
 * FLAC audio frames, pure: frame-header parsing (sync code, block size, sample rate, channel
 * assignment, bit depth, coded number, CRC-8), the check of every header against STREAMINFO, and a
 * streaming scanner that cuts the byte stream into frames whose CRC-16 verifies, in order, with no
 * sample missing or repeated. The decoder is then only ever given whole, verified frames, so a
 * damaged file is refused at the first bad frame (its byte offset, first sample and time) instead
 * of being decoded into silence, wrong levels or a shorter file. Shared by the Node reader
 * (main/io/flac.ts) and the browser editor.
 *
 * Source: IETF RFC 9639, "Free Lossless Audio Codec (FLAC)" (2024): §8.2 STREAMINFO, §9.1 frame
 * header (block size and sample rate codes, channel assignment, bit depth codes, coded number,
 * CRC-8 with polynomial x^8+x^2+x+1), §9.3 frame footer (CRC-16, polynomial x^16+x^15+x^2+1, both
 * initialised to 0). The checks made against STREAMINFO are the ones the reference decoder
 * (libFLAC, Debian package flac 1.4.2) makes: it refuses "bits-per-sample is 16 in frame but 8 in
 * STREAMINFO" and "channels is 1 in frame but 2 in STREAMINFO".
 */
import { InputError } from '../errors.ts';
import type { FlacStreamInfo } from './types.ts';

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
/**
 * Slicing-by-4 tables for CRC-16 (common practice, after Kounavis & Berry 2005): S_k[v] is the CRC
 * of byte v followed by k zero bytes, so four bytes cost four lookups in 2 KiB of tables.
 */
const CRC16_S1 = new Uint16Array(256), CRC16_S2 = new Uint16Array(256), CRC16_S3 = new Uint16Array(256);
for (let v = 0; v < 256; v++) {
  const t1 = ((CRC16[v]! << 8) & 0xffff) ^ CRC16[CRC16[v]! >> 8]!;
  const t2 = ((t1 << 8) & 0xffff) ^ CRC16[t1 >> 8]!;
  CRC16_S1[v] = t1;
  CRC16_S2[v] = t2;
  CRC16_S3[v] = ((t2 << 8) & 0xffff) ^ CRC16[t2 >> 8]!;
}

/** CRC-16 continued over b[from, to). */
function crc16Run(b: Uint8Array, from: number, to: number, crc: number): number {
  const s0 = CRC16, s1 = CRC16_S1, s2 = CRC16_S2, s3 = CRC16_S3;
  let i = from;
  for (; i + 4 <= to; i += 4) {
    crc = s3[b[i]! ^ (crc >> 8)]! ^ s2[b[i + 1]! ^ (crc & 0xff)]! ^ s1[b[i + 2]!]! ^ s0[b[i + 3]!]!;
  }
  for (; i < to; i++) crc = ((crc << 8) & 0xffff) ^ s0[(crc >> 8) ^ b[i]!]!;
  return crc;
}

export function crc8(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  for (let i = from; i < to; i++) c = CRC8[c ^ b[i]!]!;
  return c;
}

export function crc16(b: Uint8Array, from: number, to: number, init = 0): number {
  return crc16Run(b, from, to, init);
}

/** A frame header as written, before it is compared with STREAMINFO. */
export interface FlacRawFrameHeader {
  /** Bytes of the header including its CRC-8. */
  headerBytes: number;
  /** Variable block size strategy (the coded number is a sample number, not a frame number). */
  variable: boolean;
  /** The coded number: frame number (fixed strategy) or first sample number (variable). */
  number: number;
  blockSize: number;
  channels: number;
  /** Bits per sample, or 0 for "as STREAMINFO says". */
  bitsPerSample: number;
  /** Sample rate, or 0 for "as STREAMINFO says". */
  sampleRateHz: number;
}

export interface FlacFrameHeader {
  /** Bytes of the header including its CRC-8. */
  headerBytes: number;
  blockSize: number;
  /** Index of the frame's first sample in the stream. */
  firstSample: number;
}

/** The longest frame header: 4 fixed bytes, a 7-byte coded number, 2 + 2 extra bytes, CRC-8. */
export const FLAC_MAX_HEADER_BYTES = 16;

const RATE_CODES = [0, 88200, 176400, 192000, 8000, 16000, 22050, 24000, 32000, 44100, 48000, 96000];
/** Bit depth codes (RFC 9639 §9.1.4): 0 = from STREAMINFO, 3 reserved (-1). */
const SIZE_CODES = [0, 8, 12, -1, 16, 20, 24, 32];

/**
 * Reads the frame header at `at` as written: sync code, reserved bits, field codes and CRC-8.
 * Returns null when the bytes there are not a valid header (or not all of it lies before `end`).
 */
export function readFlacFrameHeader(b: Uint8Array, at: number, end = b.length): FlacRawFrameHeader | null {
  if (at + 6 > end || b[at] !== 0xff || (b[at + 1]! & 0xfe) !== 0xf8) return null;
  const variable = (b[at + 1]! & 1) === 1;
  const bsCode = b[at + 2]! >> 4;
  const srCode = b[at + 2]! & 0x0f;
  const chCode = b[at + 3]! >> 4;
  const ssCode = (b[at + 3]! >> 1) & 7;
  if (bsCode === 0 || srCode === 15 || chCode > 10 || (b[at + 3]! & 1) !== 0 || SIZE_CODES[ssCode] === -1) return null;
  // Coded number (UTF-8-like, up to 7 bytes; 36 bits only with variable block sizes).
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
  if (p + extra + 1 > end) return null;
  for (let k = 0; k < extra; k++) {
    const c = b[p++]!;
    if ((c & 0xc0) !== 0x80) return null;
    num = num * 64 + (c & 0x3f);
  }
  let blockSize: number;
  if (bsCode === 1) blockSize = 192;
  else if (bsCode <= 5) blockSize = 576 << (bsCode - 2);
  else if (bsCode === 6) {
    if (p >= end) return null;
    blockSize = b[p++]! + 1;
  } else if (bsCode === 7) {
    if (p + 2 > end) return null;
    blockSize = ((b[p]! << 8) | b[p + 1]!) + 1;
    p += 2;
  } else blockSize = 256 << (bsCode - 8);
  // RFC 9639 §9.1.1: a block size of 65536 is not allowed.
  if (blockSize > 65535) return null;
  let rateHz = RATE_CODES[srCode] ?? 0;
  if (srCode === 12) {
    if (p >= end) return null;
    rateHz = b[p++]! * 1000;
  } else if (srCode === 13 || srCode === 14) {
    if (p + 2 > end) return null;
    rateHz = ((b[p]! << 8) | b[p + 1]!) * (srCode === 14 ? 10 : 1);
    p += 2;
  }
  if (srCode >= 12 && rateHz === 0) return null;
  if (p >= end) return null;
  if (crc8(b, at, p) !== b[p]) return null;
  return {
    headerBytes: p + 1 - at,
    variable,
    number: num,
    blockSize,
    channels: chCode < 8 ? chCode + 1 : 2,
    bitsPerSample: SIZE_CODES[ssCode]!,
    sampleRateHz: rateHz,
  };
}

/**
 * What in a frame header disagrees with STREAMINFO (channels, bits per sample, sample rate, block
 * size), in one phrase; null when it agrees.
 */
export function flacHeaderMismatch(h: FlacRawFrameHeader, si: FlacStreamInfo): string | null {
  if (h.channels !== si.channels) {
    return `the frame has ${h.channels} channel${h.channels === 1 ? '' : 's'} but STREAMINFO says ${si.channels}`;
  }
  if (h.bitsPerSample !== 0 && h.bitsPerSample !== si.bitsPerSample) {
    return `the frame has ${h.bitsPerSample}-bit samples but STREAMINFO says ${si.bitsPerSample} bits`;
  }
  if (h.sampleRateHz !== 0 && h.sampleRateHz !== si.sampleRateHz) {
    return `the frame's sample rate is ${h.sampleRateHz} Hz but STREAMINFO says ${si.sampleRateHz} Hz`;
  }
  if (si.maxBlockSize > 0 && h.blockSize > si.maxBlockSize) {
    return `the frame holds ${h.blockSize} samples, more than the largest block of ${si.maxBlockSize} STREAMINFO gives`;
  }
  return null;
}

/**
 * The first sample of a frame found on its own (seeking): its sample number, or its frame number
 * × the stream's fixed block size (from the first frame; STREAMINFO's largest block otherwise).
 */
function firstSampleOf(h: FlacRawFrameHeader, si: FlacStreamInfo): number {
  return h.variable ? h.number : h.number * (si.fixedBlockSize ?? (si.maxBlockSize || h.blockSize));
}

/**
 * Parses and checks the frame header at `at` against STREAMINFO (channels, bits, rate, block size).
 * Returns null when the bytes there are not a valid header (or not all of it is in `b`) or when it
 * disagrees with STREAMINFO.
 */
export function parseFlacFrameHeader(b: Uint8Array, at: number, si: FlacStreamInfo): FlacFrameHeader | null {
  const h = readFlacFrameHeader(b, at);
  if (!h || flacHeaderMismatch(h, si)) return null;
  return { headerBytes: h.headerBytes, blockSize: h.blockSize, firstSample: firstSampleOf(h, si) };
}

/**
 * Finds the first verified frame starting at or after `from` in `b`: a valid header whose frame
 * bytes, up to the next valid header, pass the CRC-16 check. When `endsStream` is true, a frame
 * running to the end of `b` may be the last one. Used to seek; the scanner then checks every frame
 * from there.
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

/** Seconds as h:mm:ss.mmm, for saying where in the recording a problem is. */
export function clockTime(seconds: number): string {
  const ms = Math.round(seconds * 1000);
  const h = Math.floor(ms / 3600000), m = Math.floor((ms % 3600000) / 60000), s = Math.floor((ms % 60000) / 1000);
  return `${h}:${String(m).padStart(2, '0')}:${String(s).padStart(2, '0')}.${String(ms % 1000).padStart(3, '0')}`;
}

/** A verified frame, handed to the decoder. */
export interface FlacFrame {
  /** Byte offset of the frame in the file. */
  offset: number;
  /** The frame's bytes, header to CRC-16 (a view into the scanner's buffer, valid until the next push). */
  bytes: Uint8Array;
  /** Index of its first sample in the stream. */
  firstSample: number;
  blockSize: number;
}

export interface FlacScanStart {
  /** Byte offset of the first frame to read (the first audio frame, or one found by seeking). */
  offset: number;
  /** Its first sample. */
  firstSample: number;
  /** The file's size: the scanner knows where the stream ends. */
  fileSize: number;
}

/**
 * The most bytes a frame may take before the scanner calls it damaged: RFC 9639 §9.2 says a
 * subframe is never larger than its verbatim form (one bit more per sample on a side channel), so
 * twice that, with room for the subframe headers and wasted-bits codes, leaves encoders slack
 * while bounding how far a damaged frame is searched. (STREAMINFO's largest frame is a claim,
 * not a bound: it is not trusted here.)
 */
function frameByteBound(h: FlacRawFrameHeader, si: FlacStreamInfo): number {
  const bits = (h.bitsPerSample || si.bitsPerSample) + 1;
  return 2 * (FLAC_MAX_HEADER_BYTES + 2 + h.channels * (Math.ceil((h.blockSize * bits) / 8) + 8 + bits)) + 1024;
}

const ID3V1_BYTES = 128;

/**
 * Cuts a FLAC byte stream into verified frames. Feed it the file's bytes in order from
 * `start.offset` with push(); each call returns the frames completed so far. Every frame must
 * start with a header that agrees with STREAMINFO, continue the previous frame's samples exactly
 * and end where its CRC-16 verifies; the first frame that does not is refused with an InputError
 * naming its byte offset, first sample and time. At the end of the file the last frame must
 * verify too (an ID3v1 tag after it is allowed), and when STREAMINFO gives the total, the samples
 * must add up to it.
 */
export class FlacFrameScanner {
  readonly #si: FlacStreamInfo;
  readonly #name: string;
  readonly #fileSize: number;
  #buf = new Uint8Array(0);
  /** Absolute offset of #buf[0]. */
  #base: number;
  /** Valid bytes in #buf. */
  #len = 0;
  /** The frame being scanned: its start in #buf, header and first sample. */
  #cur: { at: number; h: FlacRawFrameHeader; first: number } | null = null;
  /** Scan position in #buf and the CRC-16 of [#cur.at, #scan). */
  #scan = 0;
  #crc = 0;
  /** First CRC-16 failure seen for the current frame: a valid next header where the CRC is not 0. */
  #crcFailAt = -1;
  /** A place where the CRC-16 is 0 but the header after it is damaged. */
  #badHeaderAt = -1;
  /** CRC-16 where an ID3v1 tag would start (the end of the file − 128), or -1. */
  #crcAtTag = -1;
  #expectFirst: number;
  #prev: FlacRawFrameHeader | null = null;
  #prevOffset = 0;
  #done = false;

  constructor(si: FlacStreamInfo, name: string, start: FlacScanStart) {
    this.#si = si;
    this.#name = name;
    this.#fileSize = start.fileSize;
    this.#base = start.offset;
    this.#expectFirst = start.firstSample;
  }

  /** The sample after the last frame returned. */
  get nextSample(): number {
    return this.#cur ? this.#cur.first : this.#expectFirst;
  }

  /** Whether the end of the file has been reached and every frame returned. */
  get done(): boolean {
    return this.#done;
  }

  /** Absolute offset of the next byte push() expects. */
  get position(): number {
    return this.#base + this.#len;
  }

  #where(first: number): string {
    return `sample ${first} (${clockTime(first / this.#si.sampleRateHz)})`;
  }

  #fail(message: string, at: number): never {
    throw new InputError(message, this.#name, at);
  }

  /**
   * Appends bytes (they continue the stream at `position`) and returns the frames now complete.
   * The frames' bytes are views into the scanner's buffer: use them before the next push().
   */
  push(chunk: Uint8Array): FlacFrame[] {
    this.reserve(chunk.length).set(chunk);
    return this.commit(chunk.length);
  }

  /**
   * Room for the next `length` bytes of the stream, to read into directly; then commit() the
   * number of bytes written. Earlier frames' bytes may move.
   */
  reserve(length: number): Uint8Array {
    // Bytes before the current frame (or before the next one) are no longer needed.
    const keep = this.#cur ? this.#cur.at : this.#scan;
    const live = this.#len - keep;
    const need = live + length;
    if (need > this.#buf.length) {
      const grown = new Uint8Array(Math.max(need, this.#buf.length * 2, 1 << 16));
      grown.set(this.#buf.subarray(keep, this.#len), 0);
      this.#buf = grown;
    } else if (keep > 0) {
      this.#buf.copyWithin(0, keep, this.#len);
    }
    if (keep > 0) {
      this.#base += keep;
      this.#len = live;
      this.#scan -= keep;
      if (this.#cur) this.#cur.at -= keep;
    }
    return this.#buf.subarray(this.#len, this.#len + length);
  }

  /** Takes `length` bytes written into reserve()'s view and returns the frames now complete. */
  commit(length: number): FlacFrame[] {
    if (this.#done) return [];
    this.#len += length;
    return this.#run(this.position >= this.#fileSize);
  }

  /** Says there are no more bytes (the file ended before its stated size) and returns the last frames. */
  finish(): FlacFrame[] {
    return this.#done ? [] : this.#run(true);
  }

  /** Checks a header that starts a frame (against STREAMINFO and the previous frame) and makes it current. */
  #begin(h: FlacRawFrameHeader, at: number): void {
    const abs = this.#base + at;
    const si = this.#si;
    const first = this.#expectFirst;
    const mismatch = flacHeaderMismatch(h, si);
    if (mismatch) this.#fail(`FLAC frame at ${this.#where(first)}: ${mismatch}; the file contradicts itself`, abs);
    const prev = this.#prev;
    if (prev) {
      if (h.variable !== prev.variable) this.#fail(`FLAC frame at ${this.#where(first)} switches between fixed and variable block sizes`, abs);
      const continues = h.variable ? h.number === first : h.number === prev.number + 1;
      if (!continues) {
        const said = h.variable ? `sample ${h.number}` : `frame number ${h.number}`;
        const expected = h.variable ? `sample ${first}` : `frame number ${prev.number + 1}`;
        this.#fail(`FLAC frame header says ${said} where ${expected} (${clockTime(first / si.sampleRateHz)}) comes next: frames are missing or out of order`, abs);
      }
      const fixed = si.fixedBlockSize;
      if (!prev.variable && fixed !== undefined && prev.blockSize !== fixed) {
        this.#fail(`FLAC frame at ${this.#where(first - prev.blockSize)} holds ${prev.blockSize} samples where every frame of this fixed-block stream but the last holds ${fixed}`, this.#prevOffset);
      }
    } else if (firstSampleOf(h, si) !== first) {
      this.#fail(`expected the FLAC frame of ${this.#where(first)} here, found one numbered ${h.number}`, abs);
    }
    if (si.totalSamples > 0 && first + h.blockSize > si.totalSamples) {
      this.#fail(`FLAC frame at ${this.#where(first)} holds samples up to ${first + h.blockSize}, past the ${si.totalSamples} STREAMINFO gives`, abs);
    }
    this.#cur = { at, h, first };
    this.#crc = crc16(this.#buf, at, at + h.headerBytes);
    this.#scan = at + h.headerBytes;
    this.#crcFailAt = -1;
    this.#badHeaderAt = -1;
    this.#crcAtTag = -1;
  }

  #emit(end: number, out: FlacFrame[]): void {
    const cur = this.#cur!;
    out.push({ offset: this.#base + cur.at, bytes: this.#buf.subarray(cur.at, end), firstSample: cur.first, blockSize: cur.h.blockSize });
    this.#prev = cur.h;
    this.#prevOffset = this.#base + cur.at;
    this.#expectFirst = cur.first + cur.h.blockSize;
    this.#cur = null;
  }

  #damaged(): never {
    const cur = this.#cur!;
    const at = this.#base + cur.at;
    if (this.#badHeaderAt >= 0) {
      this.#fail(`damaged FLAC frame header after the frame at ${this.#where(cur.first)} (byte ${at}): the audio cannot be read from there`, this.#badHeaderAt);
    }
    this.#fail(`FLAC frame at ${this.#where(cur.first)} fails its CRC-16 check: the audio is damaged there`, at);
  }

  #run(eof: boolean): FlacFrame[] {
    const out: FlacFrame[] = [];
    const b = this.#buf;
    const len = this.#len;
    const si = this.#si;
    for (;;) {
      if (!this.#cur) {
        const at = this.#scan;
        if (at >= len) {
          if (eof) this.#finishStream(at);
          return out;
        }
        if (!eof && len - at < FLAC_MAX_HEADER_BYTES) return out;
        const h = readFlacFrameHeader(b, at, len);
        if (!h) this.#fail(`expected a FLAC frame header (the frame of ${this.#where(this.#expectFirst)}), found bytes that are not one`, this.#base + at);
        this.#begin(h, at);
      }
      const cur = this.#cur!;
      const bound = cur.at + frameByteBound(cur.h, si);
      const tagAt = this.#fileSize - ID3V1_BYTES - this.#base;
      // Candidates need a whole header after them, unless the file ends first.
      const limit = eof ? len : len - FLAC_MAX_HEADER_BYTES;
      let q = this.#scan;
      let crc = this.#crc;
      let next: FlacRawFrameHeader | null = null;
      // A frame longer than its bound is damaged (its end was never found).
      const stop = Math.min(limit, bound + 1);
      // Candidates (a byte 0xFF) are found with indexOf; the CRC runs over the bytes between.
      const view = b.subarray(0, stop);
      while (q < stop) {
        let e = view.indexOf(0xff, q);
        if (e < 0) e = stop;
        if (tagAt >= q && tagAt < e) e = tagAt;
        crc = crc16Run(b, q, e, crc);
        q = e;
        if (q === tagAt) this.#crcAtTag = crc;
        if (q >= stop) break;
        const x = b[q]!;
        if (x === 0xff && (b[q + 1]! & 0xfe) === 0xf8) {
          const h = readFlacFrameHeader(b, q, len);
          if (crc === 0) {
            if (h) {
              next = h;
              break;
            }
            if (this.#badHeaderAt < 0) this.#badHeaderAt = this.#base + q;
          } else if (h && this.#crcFailAt < 0 && !flacHeaderMismatch(h, si)) {
            this.#crcFailAt = this.#base + q;
          }
        }
        crc = ((crc << 8) & 0xffff) ^ CRC16[(crc >> 8) ^ x]!;
        q++;
        if (q === tagAt) this.#crcAtTag = crc;
      }
      if (!next && q > bound) {
        this.#crc = crc;
        this.#damaged();
      }
      this.#scan = q;
      this.#crc = crc;
      if (next) {
        this.#emit(q, out);
        this.#begin(next, q);
        continue;
      }
      if (!eof) return out;
      // The current frame runs to the end of the file.
      if (crc === 0) {
        this.#emit(len, out);
      } else if (this.#crcAtTag === 0 && tagAt > cur.at && b[tagAt] === 0x54 && b[tagAt + 1] === 0x41 && b[tagAt + 2] === 0x47) {
        // "TAG": an ID3v1 tag after the last frame.
        this.#emit(tagAt, out);
      } else if (this.#crcFailAt >= 0 || this.#badHeaderAt >= 0) {
        this.#damaged();
      } else if (si.totalSamples > cur.first + cur.h.blockSize) {
        this.#fail(
          `truncated: the FLAC stream ends after ${cur.first} of ${si.totalSamples} samples (${clockTime(cur.first / si.sampleRateHz)}), inside a frame`,
          this.#base + cur.at,
        );
      } else {
        this.#fail(
          `the last FLAC frame, at ${this.#where(cur.first)}, fails its CRC-16 check at the end of the file: it is truncated or damaged, or followed by bytes that are not FLAC audio`,
          this.#base + cur.at,
        );
      }
      this.#finishStream(len);
      return out;
    }
  }

  #finishStream(at: number): void {
    this.#done = true;
    const total = this.#si.totalSamples;
    if (total > 0 && this.#expectFirst < total) {
      this.#fail(`truncated: the FLAC stream ends after ${this.#expectFirst} of ${total} samples (${clockTime(this.#expectFirst / this.#si.sampleRateHz)})`, this.#base + at);
    }
    if (this.#expectFirst === 0) this.#fail('no audio: the FLAC stream holds no frames', this.#base + at);
  }
}
