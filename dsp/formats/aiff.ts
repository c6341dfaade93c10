/**
 * AIFF and AIFF-C (uncompressed) header parsing and header building.
 *
 * Sources: Apple, "Audio Interchange File Format: AIFF" 1.3 (1989) — FORM/COMM/SSND, big-endian
 * two's-complement samples, 80-bit extended sample rate, sampleSize bits left-justified in whole
 * bytes; Apple, "Audio Interchange File Format: AIFF-C" draft (1991) — compressionType after the
 * COMM fields, 'NONE'; Apple Core Audio practice for 'sowt' (little-endian 16-bit and wider),
 * 'fl32'/'FL32', 'fl64'/'FL64' (IEEE float, big-endian), 'in24'/'in32' (big-endian integers).
 */
import { InputError } from '../errors.ts';
import { fourcc, i16be, putFourcc, putU16be, putU32be, readExtended80, showId, u32be, writeExtended80 } from './bytes.ts';
import { encodingProblem, type SampleEncoding, type SampleFormat } from './codec.ts';
import { channelCountProblem, sampleRateProblem } from './limits.ts';
import { readExact, type AudioLayout, type LayoutChunk, type ReadFn } from './types.ts';

/** Uncompressed AIFC compression types: byte order and sample kind (bytes from sampleSize unless fixed). */
const AIFC_TYPES: Record<string, { bigEndian: boolean; sampleFormat: SampleFormat; bytes?: number }> = {
  NONE: { bigEndian: true, sampleFormat: 'int' },
  twos: { bigEndian: true, sampleFormat: 'int' },
  sowt: { bigEndian: false, sampleFormat: 'int' },
  in24: { bigEndian: true, sampleFormat: 'int', bytes: 3 },
  in32: { bigEndian: true, sampleFormat: 'int', bytes: 4 },
  '42ni': { bigEndian: false, sampleFormat: 'int', bytes: 3 },
  '23ni': { bigEndian: false, sampleFormat: 'int', bytes: 4 },
  fl32: { bigEndian: true, sampleFormat: 'float', bytes: 4 },
  FL32: { bigEndian: true, sampleFormat: 'float', bytes: 4 },
  fl64: { bigEndian: true, sampleFormat: 'float', bytes: 8 },
  FL64: { bigEndian: true, sampleFormat: 'float', bytes: 8 },
};

/** Parses an AIFF/AIFC file whose first 12 bytes are `head`. */
export function parseAiff(read: ReadFn, fileSize: number, name: string, head: Uint8Array): AudioLayout {
  const formType = fourcc(head, 8);
  if (formType !== 'AIFF' && formType !== 'AIFC') {
    throw new InputError(`expected form type 'AIFF' or 'AIFC' after 'FORM', found ${showId(formType)}`, name, 8);
  }
  const isAifc = formType === 'AIFC';
  const declared = u32be(head, 4);
  const limit = declared >= 4 && declared + 8 <= fileSize ? declared + 8 : fileSize;
  const chunks: LayoutChunk[] = [];
  let comm: { channels: number; frames: number; bits: number; rateHz: number; compression: string; at: number } | undefined;
  let ssnd: LayoutChunk | undefined;
  let ssndDataOffset = 0;
  let pos = 12;
  while (pos + 8 <= limit) {
    const h = readExact(read, fileSize, name, pos, 8, 'a chunk header');
    const id = fourcc(h, 0);
    const size = u32be(h, 4);
    const payload = pos + 8;
    if (payload + size > fileSize) {
      const what = id === 'SSND' ? 'the audio data is truncated' : 'the chunk runs past the end of the file';
      throw new InputError(
        `chunk ${showId(id)} claims ${size} bytes from byte ${payload} but the file ends at byte ${fileSize}: ${what}`,
        name,
        pos,
      );
    }
    const rec: LayoutChunk = { id, offset: payload, size, position: ssnd ? 'after-data' : 'before-data' };
    chunks.push(rec);
    if (id === 'COMM') {
      const need = isAifc ? 22 : 18;
      if (size < need) throw new InputError(`'COMM' chunk is ${size} bytes; at least ${need} expected`, name, pos);
      const p = readExact(read, fileSize, name, payload, need, "the 'COMM' chunk");
      comm = {
        channels: i16be(p, 0),
        frames: u32be(p, 2),
        bits: i16be(p, 6),
        rateHz: readExtended80(p, 8),
        compression: isAifc ? fourcc(p, 18) : 'NONE',
        at: payload,
      };
    } else if (id === 'SSND') {
      if (size < 8) throw new InputError(`'SSND' chunk is ${size} bytes; at least 8 expected`, name, pos);
      const p = readExact(read, fileSize, name, payload, 8, "the 'SSND' header");
      const offset = u32be(p, 0);
      if (8 + offset > size) throw new InputError(`'SSND' offset ${offset} lies beyond the chunk's ${size} bytes`, name, payload);
      ssnd = rec;
      ssndDataOffset = payload + 8 + offset;
    }
    pos = payload + size + (size & 1);
  }
  if (!ssnd && pos < limit) {
    throw new InputError(`truncated: expected a chunk header (8 bytes) but the file ends at byte ${fileSize}`, name, pos);
  }
  if (!comm) throw new InputError("no 'COMM' chunk: the file does not say how its samples are stored", name, 12);
  const t = AIFC_TYPES[comm.compression];
  if (!t) {
    throw new InputError(
      `compressed AIFC (${showId(comm.compression)}) is not supported; only uncompressed NONE, twos, sowt, in24, in32, fl32 and fl64 can be read`,
      name,
      comm.at + 18,
    );
  }
  if (comm.channels <= 0) throw new InputError(`the COMM chunk says ${comm.channels} channels`, name, comm.at);
  const tooMany = channelCountProblem(comm.channels);
  if (tooMany) throw new InputError(`the COMM chunk says ${tooMany}`, name, comm.at);
  const badRate = sampleRateProblem(comm.rateHz);
  if (badRate) throw new InputError(`the COMM chunk says ${badRate}`, name, comm.at + 8);
  if (t.sampleFormat === 'int' && comm.bits <= 0) throw new InputError(`the COMM chunk says ${comm.bits} bits per sample`, name, comm.at + 6);
  const bytesPerSample = t.bytes ?? Math.ceil(comm.bits / 8);
  const encoding: SampleEncoding = { sampleFormat: t.sampleFormat, bytesPerSample, bigEndian: t.bigEndian, unsigned8: false };
  const problem = encodingProblem(encoding);
  if (problem) throw new InputError(problem, name, comm.at + 6);
  const bitsPerSample = t.sampleFormat === 'float' ? bytesPerSample * 8 : Math.min(comm.bits, bytesPerSample * 8);
  if (!ssnd) {
    if (comm.frames === 0) throw new InputError('no audio: the COMM chunk says 0 sample frames and there is no SSND chunk', name, comm.at + 2);
    throw new InputError("no 'SSND' chunk: the file holds no audio", name, 12);
  }
  if (comm.frames === 0) throw new InputError('no audio: the COMM chunk says 0 sample frames', name, comm.at + 2);
  const blockAlign = comm.channels * bytesPerSample;
  const available = ssnd.offset + ssnd.size - ssndDataOffset;
  const dataBytes = comm.frames * blockAlign;
  if (dataBytes > available) {
    throw new InputError(
      `the COMM chunk says ${comm.frames} frames (${dataBytes} bytes) but the 'SSND' chunk holds ${available}: the audio data is truncated`,
      name,
      ssnd.offset - 8,
    );
  }
  return {
    container: isAifc ? 'AIFC' : 'AIFF',
    sampleFormat: t.sampleFormat,
    bitsPerSample,
    bytesPerSample,
    encoding,
    channels: comm.channels,
    sampleRateHz: comm.rateHz,
    compressionType: isAifc ? comm.compression : undefined,
    dataOffset: ssndDataOffset,
    dataBytes,
    blockAlign,
    frames: comm.frames,
    chunks,
  };
}

export type AiffFlavour = 'AIFF' | 'NONE' | 'sowt' | 'fl32' | 'fl64';

export interface AiffHeaderSpec {
  flavour: AiffFlavour;
  channels: number;
  sampleRateHz: number;
  /** Integer bits (8/16/24/32); float flavours imply 32/64. */
  bitsPerSample: number;
  frames: number;
}

/** The sample encoding a given AIFF flavour stores. */
export function aiffEncoding(spec: Pick<AiffHeaderSpec, 'flavour' | 'bitsPerSample'>): SampleEncoding {
  switch (spec.flavour) {
    case 'fl32':
      return { sampleFormat: 'float', bytesPerSample: 4, bigEndian: true, unsigned8: false };
    case 'fl64':
      return { sampleFormat: 'float', bytesPerSample: 8, bigEndian: true, unsigned8: false };
    default:
      return { sampleFormat: 'int', bytesPerSample: spec.bitsPerSample / 8, bigEndian: spec.flavour !== 'sowt', unsigned8: false };
  }
}

/**
 * Builds an AIFF/AIFC header ending with the SSND chunk header (offset 0, blockSize 0); the sample
 * bytes follow, then `aiffTrailer()` (the pad byte when the sample data is odd).
 */
export function buildAiffHeader(spec: AiffHeaderSpec): Uint8Array {
  const enc = aiffEncoding(spec);
  const aifc = spec.flavour !== 'AIFF';
  const dataBytes = spec.frames * spec.channels * enc.bytesPerSample;
  const commSize = aifc ? 24 : 18; // AIFC: + compressionType + empty pstring (count byte + pad)
  const fverSize = aifc ? 12 : 0;
  const headerBytes = 12 + fverSize + 8 + commSize + 16;
  const b = new Uint8Array(headerBytes);
  putFourcc(b, 0, 'FORM');
  putU32be(b, 4, headerBytes - 8 + dataBytes + (dataBytes & 1));
  putFourcc(b, 8, aifc ? 'AIFC' : 'AIFF');
  let at = 12;
  if (aifc) {
    putFourcc(b, at, 'FVER');
    putU32be(b, at + 4, 4);
    putU32be(b, at + 8, 0xa2805140); // AIFC version 1 timestamp (AIFF-C draft)
    at += 12;
  }
  putFourcc(b, at, 'COMM');
  putU32be(b, at + 4, commSize);
  putU16be(b, at + 8, spec.channels);
  putU32be(b, at + 10, spec.frames);
  putU16be(b, at + 14, enc.bytesPerSample * 8);
  writeExtended80(b, at + 16, spec.sampleRateHz);
  if (aifc) {
    putFourcc(b, at + 26, spec.flavour);
    b[at + 30] = 0; // empty compressionName pstring, padded to even length
    b[at + 31] = 0;
  }
  at += 8 + commSize;
  putFourcc(b, at, 'SSND');
  putU32be(b, at + 4, 8 + dataBytes);
  putU32be(b, at + 8, 0);
  putU32be(b, at + 12, 0);
  return b;
}

/** What follows the sample bytes: one zero pad byte when their count is odd. */
export function aiffTrailer(dataBytes: number): Uint8Array {
  return new Uint8Array(dataBytes & 1);
}

