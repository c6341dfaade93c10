/**
 * The Broadcast Wave `bext` chunk and its CodingHistory.
 *
 * Layout (EBU Tech 3285 v2, 2011): Description 256, Originator 32, OriginatorReference 32,
 * OriginationDate 10 ("yyyy-mm-dd"), OriginationTime 8 ("hh:mm:ss"), TimeReferenceLow/High 4+4
 * (first sample's count since midnight), Version 2, UMID 64, LoudnessValue, LoudnessRange,
 * MaxTruePeakLevel, MaxMomentaryLoudness, MaxShortTermLoudness 5×2 (signed, 0.01 LU units; v2),
 * Reserved 180 — fixed part 602 bytes — then CodingHistory (ASCII, variable).
 *
 * CodingHistory (EBU R98-1999): one line per processing stage, comma-separated `key=value` fields
 * `A=` algorithm, `F=` sample rate, `W=` word length, `M=` mode, `T=` free text; each line ends CR/LF.
 */
import { BugError } from '../errors.ts';
import { i16le, latin1Bytes, putU16le, putU32le, readAsciiField, u16le, u32le, writeAsciiField } from './bytes.ts';

export const BEXT_FIXED_BYTES = 602;

export interface BextInfo {
  description: string;
  originator: string;
  originatorReference: string;
  originationDate: string;
  originationTime: string;
  /** First sample's position in samples since midnight (64-bit, exact below 2^53). */
  timeReference: number;
  version: number;
  /** UMID as hex (64 bytes → 128 hex digits; all zeros when unused). */
  umidHex: string;
  /** Loudness fields (v2) in their stored units (0.01 LU / dB); 0x7FFF = not set. */
  loudnessValue: number;
  loudnessRange: number;
  maxTruePeakLevel: number;
  maxMomentaryLoudness: number;
  maxShortTermLoudness: number;
  codingHistory: string;
  /** The fixed 602-byte part exactly as stored (zero-padded if the chunk was shorter). */
  fixed: Uint8Array;
}

/** Parses a bext payload. Shorter-than-602-byte chunks (old writers) are zero-padded. */
export function parseBext(payload: Uint8Array): BextInfo {
  const fixed = new Uint8Array(BEXT_FIXED_BYTES);
  fixed.set(payload.subarray(0, BEXT_FIXED_BYTES));
  let historyEnd = payload.length;
  while (historyEnd > BEXT_FIXED_BYTES && payload[historyEnd - 1] === 0) historyEnd--;
  let codingHistory = '';
  for (let i = BEXT_FIXED_BYTES; i < historyEnd; i++) codingHistory += String.fromCharCode(payload[i]!);
  let umidHex = '';
  for (let i = 348; i < 412; i++) umidHex += fixed[i]!.toString(16).padStart(2, '0');
  return {
    description: readAsciiField(fixed, 0, 256),
    originator: readAsciiField(fixed, 256, 32),
    originatorReference: readAsciiField(fixed, 288, 32),
    originationDate: readAsciiField(fixed, 320, 10),
    originationTime: readAsciiField(fixed, 330, 8),
    timeReference: u32le(fixed, 338) + u32le(fixed, 342) * 0x1_0000_0000,
    version: u16le(fixed, 346),
    umidHex,
    loudnessValue: i16le(fixed, 412),
    loudnessRange: i16le(fixed, 414),
    maxTruePeakLevel: i16le(fixed, 416),
    maxMomentaryLoudness: i16le(fixed, 418),
    maxShortTermLoudness: i16le(fixed, 420),
    codingHistory,
    fixed,
  };
}

export interface NewBextFields {
  description: string;
  originator: string;
  originatorReference: string;
  /** "yyyy-mm-dd" */
  originationDate: string;
  /** "hh:mm:ss" */
  originationTime: string;
  timeReference?: number;
}

/**
 * A fresh fixed part (version 2, UMID zero, loudness fields 0x7FFF = "not calculated").
 * Source: EBU Tech 3285 v2 (2011), loudness fields "set to 0x7FFF" when not used [from memory].
 */
export function newBextFixed(fields: NewBextFields): Uint8Array {
  const b = new Uint8Array(BEXT_FIXED_BYTES);
  writeAsciiField(b, 0, 256, fields.description);
  writeAsciiField(b, 256, 32, fields.originator);
  writeAsciiField(b, 288, 32, fields.originatorReference);
  writeAsciiField(b, 320, 10, fields.originationDate);
  writeAsciiField(b, 330, 8, fields.originationTime);
  setTimeReference(b, fields.timeReference ?? 0);
  putU16le(b, 346, 2);
  for (let at = 412; at < 422; at += 2) putU16le(b, at, 0x7fff);
  return b;
}

/** Sets TimeReferenceLow/High in a fixed part (in place). */
export function setTimeReference(fixed: Uint8Array, samples: number): void {
  const v = Math.max(0, Math.round(samples));
  putU32le(fixed, 338, v % 0x1_0000_0000);
  putU32le(fixed, 342, Math.floor(v / 0x1_0000_0000));
}

/** A bext payload: the 602-byte fixed part followed by the CodingHistory text. */
export function buildBext(fixed: Uint8Array, codingHistory: string): Uint8Array {
  if (fixed.length !== BEXT_FIXED_BYTES) throw new BugError(`bext fixed part must be ${BEXT_FIXED_BYTES} bytes`);
  const history = latin1Bytes(codingHistory);
  const out = new Uint8Array(BEXT_FIXED_BYTES + history.length);
  out.set(fixed);
  out.set(history, BEXT_FIXED_BYTES);
  return out;
}

export interface HistoryLineSpec {
  sampleRateHz: number;
  bitsPerSample: number;
  sampleFormat: 'int' | 'float';
  channels: number;
  /** Free text for `T=`. Commas become semicolons, line breaks spaces, non-ASCII '?'. */
  text: string;
}

/** R98 mode word for a channel count. Two channels are written as "stereo". */
export function historyMode(channels: number): string {
  if (channels === 1) return 'mono';
  if (channels === 2) return 'stereo';
  return `${channels}-channel`;
}

/**
 * One CodingHistory line, CR/LF-terminated:
 * `A=PCM,F=48000,W=24,M=stereo,T=reelwright unecho delay=0.0231s gain=0.42\r\n`.
 * Float output is `A=PCM` with `T=` starting "IEEE float;" (R98 has no float code).
 */
export function codingHistoryLine(spec: HistoryLineSpec): string {
  let text = spec.text.replace(/[\r\n]+/g, ' ').replace(/,/g, ';').replace(/[^\x20-\x7e]/g, '?').trim();
  if (spec.sampleFormat === 'float') text = text ? `IEEE float; ${text}` : 'IEEE float';
  const fields = [
    'A=PCM',
    `F=${Math.round(spec.sampleRateHz)}`,
    `W=${spec.bitsPerSample}`,
    `M=${historyMode(spec.channels)}`,
  ];
  if (text) fields.push(`T=${text}`);
  return fields.join(',') + '\r\n';
}

/**
 * Appends a line to existing history, first closing an unterminated last line with CR/LF so each
 * stage stays on its own line.
 */
export function appendCodingHistory(existing: string, line: string): string {
  let base = existing;
  if (base.length > 0 && !base.endsWith('\r\n')) base = base.replace(/\r?\n?$/, '') + '\r\n';
  return base + line;
}

/** Splits CodingHistory into its lines (without terminators, empty lines dropped). */
export function codingHistoryLines(history: string): string[] {
  return history.split(/\r\n|\n|\r/).filter((l) => l.length > 0);
}

/** Parses an R98 line into its key/value fields (`A`, `F`, `W`, `M`, `T`, …). */
export function parseHistoryLine(line: string): Record<string, string> {
  const out: Record<string, string> = {};
  // T= is last and free text; split on commas before it only.
  const t = line.indexOf('T=');
  const head = t >= 0 && (t === 0 || line[t - 1] === ',') ? line.slice(0, t) : line;
  for (const part of head.split(',')) {
    const eq = part.indexOf('=');
    if (eq > 0) out[part.slice(0, eq)] = part.slice(eq + 1);
  }
  if (head !== line) out['T'] = line.slice(t + 2);
  return out;
}

/**
 * The bext payload for a processed output: the source's fixed fields kept byte for byte (or fresh
 * ones when the source had no bext) and its CodingHistory extended by exactly one line.
 * TimeReference counts samples at the file's rate, so when the output rate differs it is rescaled
 * to keep the same time of day.
 */
export function outputBext(options: {
  source?: BextInfo;
  fresh: NewBextFields;
  line: string;
  sourceRateHz?: number;
  outputRateHz: number;
}): Uint8Array {
  const { source, line } = options;
  if (!source) return buildBext(newBextFixed(options.fresh), line);
  const fixed = source.fixed.slice();
  if (options.sourceRateHz && options.sourceRateHz !== options.outputRateHz && source.timeReference > 0) {
    setTimeReference(fixed, (source.timeReference * options.outputRateHz) / options.sourceRateHz);
  }
  return buildBext(fixed, appendCodingHistory(source.codingHistory, line));
}
