/**
 * Descriptive metadata of FLAC and AIFF files carried into a WAV file as a RIFF `LIST`/`INFO`
 * chunk, so converting an archive master keeps its title, people, dates and notes. Pure: chunk
 * payloads in, chunk payloads out.
 *
 * Sources:
 * - RIFF INFO list and its ids (INAM title, IART artist, ICMT comments, ICOP copyright, ICRD
 *   creation date, IGNR genre, IPRD product, ISFT software, IKEY keywords, ISBJ subject, ISRC
 *   source): Microsoft/IBM, "Multimedia Programming Interface and Data Specifications 1.0" (1991),
 *   §3 "INFO list chunk". ITRK (track number) is common practice, not in that list.
 * - Vorbis comment layout (vendor length, vendor, count, length-prefixed `NAME=value` UTF-8) and
 *   the field names TITLE, ARTIST, PERFORMER, ALBUM, TRACKNUMBER, DATE, GENRE, DESCRIPTION,
 *   COPYRIGHT, ORGANIZATION, LOCATION, CONTACT, ISRC: Xiph.Org, "Ogg Vorbis I format specification:
 *   comment field and header specification"; FLAC carries it as metadata block 4 (IETF RFC 9639 §8.6).
 * - AIFF text chunks NAME, AUTH, '(c) ', ANNO (text, pad byte to even) and COMT (comments with time
 *   stamp and marker id): Apple, "Audio Interchange File Format: AIFF, Version 1.3" (1989), §
 *   "Text Chunks", "Comments Chunk".
 */
import { fourcc, putFourcc, u16be, u32le } from './bytes.ts';

/** A source chunk or metadata block, by id, with its payload. */
export interface SourceChunk {
  readonly id: string;
  readonly data: Uint8Array;
}

/** The INFO list built from a source, and what of the source's metadata it could not carry. */
export interface CarriedMetadata {
  /** Payload of a `LIST` chunk (starting with 'INFO'), or null when there was nothing to carry. */
  readonly list: Uint8Array | null;
  /** INFO id → text, in the order written. */
  readonly fields: ReadonlyArray<readonly [string, string]>;
  /** Source chunks or blocks with metadata that a WAV file does not carry here (e.g. PICTURE, MARK). */
  readonly notCarried: readonly string[];
}

const VORBIS_TO_INFO: Record<string, string> = {
  TITLE: 'INAM',
  ARTIST: 'IART',
  PERFORMER: 'IART',
  ALBUM: 'IPRD',
  TRACKNUMBER: 'ITRK',
  DATE: 'ICRD',
  GENRE: 'IGNR',
  DESCRIPTION: 'ICMT',
  COMMENT: 'ICMT',
  COPYRIGHT: 'ICOP',
  ISRC: 'ISRC',
  KEYWORDS: 'IKEY',
};

const AIFF_TO_INFO: Record<string, string> = { NAME: 'INAM', AUTH: 'IART', '(c) ': 'ICOP', ANNO: 'ICMT' };

/** Structure, not metadata: the output rebuilds these itself. */
const STRUCTURAL = new Set(['STREAMINFO', 'PADDING', 'SEEKTABLE', 'COMM', 'SSND', 'FVER']);

/** UTF-8 bytes → text (malformed sequences become U+FFFD). dsp/ has no TextDecoder (no DOM or Node types). */
function decodeUtf8(b: Uint8Array): string {
  let s = '';
  for (let i = 0; i < b.length; ) {
    const c = b[i]!;
    const n = c < 0x80 ? 0 : c >= 0xf0 && c < 0xf8 ? 3 : c >= 0xe0 && c < 0xf0 ? 2 : c >= 0xc2 && c < 0xe0 ? 1 : -1;
    let cp = n === 0 ? c : n === 1 ? c & 0x1f : n === 2 ? c & 0x0f : c & 0x07;
    let ok = n >= 0 && i + n < b.length;
    for (let k = 1; ok && k <= n; k++) {
      const d = b[i + k];
      if (d === undefined || (d & 0xc0) !== 0x80) ok = false;
      else cp = (cp << 6) | (d & 0x3f);
    }
    if (ok && n > 0 && (cp < [0, 0x80, 0x800, 0x10000][n]! || cp > 0x10ffff || (cp >= 0xd800 && cp < 0xe000))) ok = false;
    s += ok ? String.fromCodePoint(cp) : '\ufffd';
    i += ok ? n + 1 : 1;
  }
  return s;
}

/** Text → UTF-8 bytes. */
function encodeUtf8(s: string): Uint8Array {
  const out: number[] = [];
  for (const ch of s) {
    const cp = ch.codePointAt(0)!;
    if (cp < 0x80) out.push(cp);
    else if (cp < 0x800) out.push(0xc0 | (cp >> 6), 0x80 | (cp & 0x3f));
    else if (cp < 0x10000) out.push(0xe0 | (cp >> 12), 0x80 | ((cp >> 6) & 0x3f), 0x80 | (cp & 0x3f));
    else out.push(0xf0 | (cp >> 18), 0x80 | ((cp >> 12) & 0x3f), 0x80 | ((cp >> 6) & 0x3f), 0x80 | (cp & 0x3f));
  }
  return Uint8Array.from(out);
}

const decodeLatin1 = (b: Uint8Array) => Array.from(b, (c) => String.fromCharCode(c)).join('');

/** Parses a Vorbis comment block: the vendor string and the `NAME=value` fields (names upper-cased). */
export function parseVorbisComment(b: Uint8Array): { vendor: string; fields: Array<[string, string]> } {
  const fields: Array<[string, string]> = [];
  if (b.length < 8) return { vendor: '', fields };
  const vendorLength = u32le(b, 0);
  let at = 4 + vendorLength;
  if (at + 4 > b.length) return { vendor: '', fields };
  const vendor = decodeUtf8(b.subarray(4, at));
  const count = u32le(b, at);
  at += 4;
  for (let i = 0; i < count && at + 4 <= b.length; i++) {
    const n = u32le(b, at);
    at += 4;
    if (at + n > b.length) break;
    const text = decodeUtf8(b.subarray(at, at + n));
    at += n;
    const eq = text.indexOf('=');
    if (eq > 0) fields.push([text.slice(0, eq).toUpperCase(), text.slice(eq + 1)]);
  }
  return { vendor, fields };
}

/** The texts of an AIFF COMT chunk (time stamps and marker ids are not kept). */
export function parseAiffComments(b: Uint8Array): string[] {
  const out: string[] = [];
  if (b.length < 2) return out;
  const count = u16be(b, 0);
  let at = 2;
  for (let i = 0; i < count && at + 8 <= b.length; i++) {
    const n = u16be(b, at + 6);
    at += 8;
    if (at + n > b.length) break;
    out.push(decodeLatin1(b.subarray(at, at + n)));
    at += n + (n & 1);
  }
  return out;
}

/** Text of an AIFF text chunk (bytes up to a terminating NUL, if any). */
function aiffText(b: Uint8Array): string {
  const end = b.indexOf(0);
  return decodeLatin1(end >= 0 ? b.subarray(0, end) : b).trim();
}

/** A `LIST` payload: 'INFO' then one zero-terminated UTF-8 sub-chunk per field, each padded to even length. */
export function infoListPayload(fields: ReadonlyArray<readonly [string, string]>): Uint8Array {
  const parts = fields.map(([id, text]) => ({ id, bytes: encodeUtf8(text) }));
  const size = 4 + parts.reduce((s, p) => s + 8 + p.bytes.length + 1 + ((p.bytes.length + 1) & 1), 0);
  const out = new Uint8Array(size);
  putFourcc(out, 0, 'INFO');
  let at = 4;
  for (const p of parts) {
    putFourcc(out, at, p.id);
    const n = p.bytes.length + 1;
    new DataView(out.buffer).setUint32(at + 4, n, true);
    out.set(p.bytes, at + 8);
    at += 8 + n + (n & 1);
  }
  return out;
}

/** Reads an INFO list payload back (for tests and `info`): id → text. */
export function parseInfoList(b: Uint8Array): Array<[string, string]> {
  const out: Array<[string, string]> = [];
  if (b.length < 4 || fourcc(b, 0) !== 'INFO') return out;
  for (let at = 4; at + 8 <= b.length; ) {
    const id = fourcc(b, at);
    const n = u32le(b, at + 4);
    const body = b.subarray(at + 8, Math.min(b.length, at + 8 + n));
    const end = body.indexOf(0);
    out.push([id, decodeUtf8(end >= 0 ? body.subarray(0, end) : body)]);
    at += 8 + n + (n & 1);
  }
  return out;
}

/**
 * What of a FLAC or AIFF source's metadata goes into the WAV output's INFO list. Fields that map
 * to the same INFO id are joined with a new line; Vorbis fields without an INFO id go into ICMT as
 * `NAME=value` lines, so no tag is lost.
 */
export function carryMetadata(container: 'FLAC' | 'AIFF' | 'AIFC', chunks: readonly SourceChunk[]): CarriedMetadata {
  const byId = new Map<string, string[]>();
  const add = (id: string, text: string) => {
    if (!text) return;
    const list = byId.get(id) ?? [];
    if (!list.includes(text)) list.push(text);
    byId.set(id, list);
  };
  const extra: string[] = [];
  const notCarried: string[] = [];
  for (const c of chunks) {
    if (STRUCTURAL.has(c.id)) continue;
    if (container === 'FLAC') {
      if (c.id !== 'VORBIS_COMMENT') {
        notCarried.push(c.id);
        continue;
      }
      for (const [name, value] of parseVorbisComment(c.data).fields) {
        const id = VORBIS_TO_INFO[name];
        if (id) add(id, value);
        else extra.push(`${name}=${value}`);
      }
    } else if (AIFF_TO_INFO[c.id]) {
      add(AIFF_TO_INFO[c.id]!, aiffText(c.data));
    } else if (c.id === 'COMT') {
      for (const t of parseAiffComments(c.data)) add('ICMT', t);
    } else {
      notCarried.push(c.id);
    }
  }
  for (const e of extra) add('ICMT', e);
  const fields = [...byId].map(([id, texts]) => [id, texts.join('\n')] as const);
  return { list: fields.length ? infoListPayload(fields) : null, fields, notCarried };
}
