/**
 * Byte helpers shared by the container parsers and writers: four-character codes, fixed-width
 * integers in either byte order, 64-bit sizes as plain numbers (exact up to 2^53), and the
 * 80-bit IEEE 754 extended float that AIFF uses for its sample rate. Pure: Uint8Array in and out.
 */
import { BugError } from '../errors.ts';

/** Reads a four-character code (chunk id) as a string of 4 Latin-1 characters. */
export function fourcc(b: Uint8Array, at: number): string {
  return String.fromCharCode(b[at]!, b[at + 1]!, b[at + 2]!, b[at + 3]!);
}

/** Writes a four-character code; throws on ids that are not exactly 4 Latin-1 characters. */
export function putFourcc(b: Uint8Array, at: number, id: string): void {
  if (id.length !== 4) throw new BugError(`chunk id ${JSON.stringify(id)} must be 4 characters`);
  for (let i = 0; i < 4; i++) {
    const c = id.charCodeAt(i);
    if (c > 255) throw new BugError(`chunk id ${JSON.stringify(id)} must be Latin-1`);
    b[at + i] = c;
  }
}

/** Printable form of a four-character code for messages: `'RIFF'`, or hex bytes when not printable. */
export function showId(id: string): string {
  return /^[\x20-\x7e]{4}$/.test(id)
    ? `'${id}'`
    : '0x' + Array.from(id, (c) => c.charCodeAt(0).toString(16).padStart(2, '0')).join('');
}

export const u16le = (b: Uint8Array, at: number): number => b[at]! | (b[at + 1]! << 8);
export const u16be = (b: Uint8Array, at: number): number => (b[at]! << 8) | b[at + 1]!;
export const i16le = (b: Uint8Array, at: number): number => (u16le(b, at) << 16) >> 16;
export const i16be = (b: Uint8Array, at: number): number => (u16be(b, at) << 16) >> 16;
export const u32le = (b: Uint8Array, at: number): number =>
  (b[at]! | (b[at + 1]! << 8) | (b[at + 2]! << 16) | (b[at + 3]! << 24)) >>> 0;
export const u32be = (b: Uint8Array, at: number): number =>
  ((b[at]! << 24) | (b[at + 1]! << 16) | (b[at + 2]! << 8) | b[at + 3]!) >>> 0;
/** 64-bit little-endian unsigned as a number (exact below 2^53, which covers any real file). */
export const u64le = (b: Uint8Array, at: number): number => u32le(b, at) + u32le(b, at + 4) * 0x1_0000_0000;

export function putU16le(b: Uint8Array, at: number, v: number): void {
  b[at] = v & 0xff;
  b[at + 1] = (v >>> 8) & 0xff;
}
export function putU16be(b: Uint8Array, at: number, v: number): void {
  b[at] = (v >>> 8) & 0xff;
  b[at + 1] = v & 0xff;
}
export function putU32le(b: Uint8Array, at: number, v: number): void {
  b[at] = v & 0xff;
  b[at + 1] = (v >>> 8) & 0xff;
  b[at + 2] = (v >>> 16) & 0xff;
  b[at + 3] = (v >>> 24) & 0xff;
}
export function putU32be(b: Uint8Array, at: number, v: number): void {
  b[at] = (v >>> 24) & 0xff;
  b[at + 1] = (v >>> 16) & 0xff;
  b[at + 2] = (v >>> 8) & 0xff;
  b[at + 3] = v & 0xff;
}
/** 64-bit little-endian unsigned from a non-negative integer number ≤ 2^53. */
export function putU64le(b: Uint8Array, at: number, v: number): void {
  if (!Number.isSafeInteger(v) || v < 0) throw new BugError(`64-bit size ${v} is not a non-negative safe integer`);
  putU32le(b, at, v % 0x1_0000_0000);
  putU32le(b, at + 4, Math.floor(v / 0x1_0000_0000));
}

/**
 * Reads an 80-bit IEEE 754 extended-precision float, big-endian (AIFF/AIFC COMM sample rate):
 * 1 sign bit, 15-bit exponent (bias 16383), 64-bit significand with an explicit integer bit.
 * Source: Apple, "Audio Interchange File Format: AIFF" 1.3 (1989), §"The Common Chunk"; IEEE 754-1985
 * extended format.
 */
export function readExtended80(b: Uint8Array, at: number): number {
  const sign = b[at]! & 0x80 ? -1 : 1;
  const exp = ((b[at]! & 0x7f) << 8) | b[at + 1]!;
  const hi = u32be(b, at + 2);
  const lo = u32be(b, at + 6);
  if (exp === 0 && hi === 0 && lo === 0) return 0;
  if (exp === 0x7fff) return hi === 0 && lo === 0 ? sign * Infinity : NaN;
  const e = exp - 16383;
  return sign * (hi * Math.pow(2, e - 31) + lo * Math.pow(2, e - 63));
}

/** Writes a finite number ≥ 0 as an 80-bit extended float, big-endian (exact for any double). */
export function writeExtended80(b: Uint8Array, at: number, value: number): void {
  if (!Number.isFinite(value) || value < 0) throw new BugError(`cannot store ${value} as an AIFF sample rate`);
  b.fill(0, at, at + 10);
  if (value === 0) return;
  let e = Math.floor(Math.log2(value));
  // Guard against log2 rounding at exact powers of two.
  if (Math.pow(2, e) > value) e--;
  if (Math.pow(2, e + 1) <= value) e++;
  const m = value / Math.pow(2, e); // in [1, 2)
  const hiF = m * 0x8000_0000; // m · 2^31, integer bit included
  const hi = Math.floor(hiF);
  const lo = Math.round((hiF - hi) * 0x1_0000_0000); // exact: a double has 53 significant bits
  const exp = e + 16383;
  b[at] = (exp >>> 8) & 0x7f;
  b[at + 1] = exp & 0xff;
  putU32be(b, at + 2, hi);
  putU32be(b, at + 6, lo);
}

/** ASCII/Latin-1 text from a fixed-size field, cut at the first NUL. */
export function readAsciiField(b: Uint8Array, at: number, length: number): string {
  let s = '';
  for (let i = 0; i < length; i++) {
    const c = b[at + i];
    if (c === undefined || c === 0) break;
    s += String.fromCharCode(c);
  }
  return s;
}

/** Writes text into a fixed-size field, NUL-padded; characters outside Latin-1 become '?'. Truncates. */
export function writeAsciiField(b: Uint8Array, at: number, length: number, text: string): void {
  b.fill(0, at, at + length);
  const n = Math.min(length, text.length);
  for (let i = 0; i < n; i++) {
    const c = text.charCodeAt(i);
    b[at + i] = c < 256 ? c : 0x3f;
  }
}

/** Latin-1 bytes of a string (non-Latin-1 characters become '?'). */
export function latin1Bytes(text: string): Uint8Array {
  const out = new Uint8Array(text.length);
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    out[i] = c < 256 ? c : 0x3f;
  }
  return out;
}

/** Concatenates byte arrays. */
export function concatBytes(parts: readonly Uint8Array[]): Uint8Array {
  let n = 0;
  for (const p of parts) n += p.length;
  const out = new Uint8Array(n);
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

/** True on little-endian hosts (every platform Reelwright runs on; checked, not assumed). */
export const HOST_LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
