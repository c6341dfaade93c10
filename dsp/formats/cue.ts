/**
 * Markers in a WAV/BWF file: the `cue ` chunk (one cue point per marker: identifier, position,
 * the 'data' chunk, offset in sample frames) and the `LIST` chunk of type `adtl` holding a `labl`
 * sub-chunk (identifier, zero-terminated text) for each named cue point. Layout as in Microsoft's
 * "Multimedia Programming Interface and Data Specifications 1.0" (1991), §3 "cue-ck" and
 * "assoc-data-list"; EBU Tech 3285 (BWF) carries them unchanged. Labels are Latin-1, as the bext
 * fields are (a character outside it is written as '?'). Pure byte code.
 */
import { InputError, ParameterError } from '../errors.ts';
import { latin1Bytes, readAsciiField } from './bytes.ts';

export interface CuePoint {
  /** dwIdentifier, unique in the file (1, 2, …). */
  readonly id: number;
  /** Sample frame of the 'data' chunk the point marks. */
  readonly frame: number;
  readonly label: string;
}

const u32 = (b: Uint8Array, at: number) => (b[at]! | (b[at + 1]! << 8) | (b[at + 2]! << 16)) + b[at + 3]! * 0x1000000;
const put32 = (b: Uint8Array, at: number, v: number) => { b[at] = v & 255; b[at + 1] = (v >>> 8) & 255; b[at + 2] = (v >>> 16) & 255; b[at + 3] = (v >>> 24) & 255; };
const fourcc = (b: Uint8Array, at: number) => String.fromCharCode(b[at]!, b[at + 1]!, b[at + 2]!, b[at + 3]!);
const putFourcc = (b: Uint8Array, at: number, id: string) => { for (let i = 0; i < 4; i++) b[at + i] = id.charCodeAt(i); };

/** The `cue ` payload for these points (24 bytes each after the count). */
export function buildCueChunk(points: readonly CuePoint[]): Uint8Array {
  const b = new Uint8Array(4 + 24 * points.length);
  put32(b, 0, points.length);
  points.forEach((p, i) => {
    const at = 4 + 24 * i;
    if (!(Number.isInteger(p.frame) && p.frame >= 0 && p.frame <= 0xffffffff)) throw new ParameterError(`cue point ${p.id}: frame ${p.frame} does not fit a cue chunk`);
    put32(b, at, p.id);
    put32(b, at + 4, p.frame); // dwPosition: the play-order position; with no playlist, the frame
    putFourcc(b, at + 8, 'data');
    put32(b, at + 12, 0); // dwChunkStart: 0 for an uncompressed file with a single data chunk
    put32(b, at + 16, 0); // dwBlockStart: 0 likewise
    put32(b, at + 20, p.frame); // dwSampleOffset
  });
  return b;
}

/** The `LIST` payload (type `adtl`) with one `labl` per point that has a label. */
export function buildAdtlList(points: readonly CuePoint[]): Uint8Array {
  const parts = points.filter((p) => p.label !== '').map((p) => ({ id: p.id, text: latin1Bytes(p.label) }));
  const size = 4 + parts.reduce((n, p) => { const s = 4 + p.text.length + 1; return n + 8 + s + (s & 1); }, 0);
  const b = new Uint8Array(size);
  putFourcc(b, 0, 'adtl');
  let at = 4;
  for (const p of parts) {
    const s = 4 + p.text.length + 1;
    putFourcc(b, at, 'labl');
    put32(b, at + 4, s);
    put32(b, at + 8, p.id);
    b.set(p.text, at + 12);
    at += 8 + s + (s & 1); // the zero terminator and the pad byte are already 0
  }
  return b;
}

/** Whether a LIST payload is an associated-data list (the labels of cue points). */
export const isAdtlList = (payload: Uint8Array) => payload.length >= 4 && fourcc(payload, 0) === 'adtl';

/** Reads cue points and their labels; `name` names the file in errors. */
export function parseCuePoints(cue: Uint8Array, adtl: Uint8Array | null, name = 'the file'): CuePoint[] {
  if (cue.length < 4) throw new InputError('the cue chunk is shorter than its count', name);
  const n = u32(cue, 0);
  if (4 + 24 * n > cue.length) throw new InputError(`the cue chunk says ${n} points but holds ${Math.floor((cue.length - 4) / 24)}`, name);
  const labels = new Map<number, string>();
  if (adtl && isAdtlList(adtl)) {
    for (let at = 4; at + 8 <= adtl.length;) {
      const id = fourcc(adtl, at), size = u32(adtl, at + 4);
      if (at + 8 + size > adtl.length) break;
      if ((id === 'labl' || id === 'note') && size >= 4) {
        const cueId = u32(adtl, at + 8);
        if (id === 'labl' || !labels.has(cueId)) labels.set(cueId, readAsciiField(adtl, at + 12, size - 4));
      }
      at += 8 + size + (size & 1);
    }
  }
  const out: CuePoint[] = [];
  for (let i = 0; i < n; i++) {
    const at = 4 + 24 * i;
    const id = u32(cue, at);
    out.push({ id, frame: u32(cue, at + 20), label: labels.get(id) ?? '' });
  }
  return out.sort((a, b) => a.frame - b.frame);
}
