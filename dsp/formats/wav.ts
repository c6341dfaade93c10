/**
 * RIFF/WAVE, Broadcast Wave (bext), RF64 and BW64 header parsing.
 *
 * Sources: Microsoft/IBM "Multimedia Programming Interface and Data Specifications 1.0" (1991) for
 * RIFF chunks and WAVE_FORMAT_PCM; Microsoft WAVEFORMATEXTENSIBLE documentation for format tag
 * 0xFFFE, wValidBitsPerSample, dwChannelMask and the SubFormat GUIDs; EBU Tech 3285 (BWF, bext);
 * EBU Tech 3306 (RF64, ds64); ITU-R BS.2088 (BW64).
 */
import { InputError } from '../errors.ts';
import { parseBext } from './bext.ts';
import { fourcc, showId, u16le, u32le, u64le } from './bytes.ts';
import { encodingProblem, type SampleEncoding } from './codec.ts';
import { channelCountProblem, sampleRateProblem } from './limits.ts';
import { readExact, type AudioLayout, type LayoutChunk, type ReadFn } from './types.ts';

/** Known compressed or otherwise unsupported WAVE format tags, for clear messages. */
const WAVE_FORMAT_NAMES: Record<number, string> = {
  0x0002: 'Microsoft ADPCM',
  0x0006: 'A-law',
  0x0007: 'μ-law',
  0x0011: 'IMA ADPCM',
  0x0016: 'ITU G.723 ADPCM',
  0x0031: 'GSM 6.10',
  0x0040: 'ITU G.721 ADPCM',
  0x0050: 'MPEG',
  0x0055: 'MPEG Layer 3 (MP3)',
  0x0092: 'Dolby AC-3 S/PDIF',
  0x0161: 'Windows Media Audio',
  0x0162: 'Windows Media Audio Pro',
  0x0163: 'Windows Media Audio Lossless',
  0x00ff: 'AAC',
  0x1610: 'MPEG-4 AAC',
  0xf1ac: 'FLAC in WAV',
};

/** The last 12 bytes of KSDATAFORMAT_SUBTYPE_PCM / _IEEE_FLOAT ({0000000x-0000-0010-8000-00AA00389B71}). */
const KS_GUID_TAIL = [0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];
/** Ambisonic B-format SubFormats ({0000000x-0721-11D3-8644-C8C1CA000000}): plain PCM/float samples. */
const AMBISONIC_GUID_TAIL = [0x21, 0x07, 0xd3, 0x11, 0x86, 0x44, 0xc8, 0xc1, 0xca, 0x00, 0x00, 0x00];

function formatName(tag: number): string {
  const hex = '0x' + tag.toString(16).toUpperCase().padStart(4, '0');
  const name = WAVE_FORMAT_NAMES[tag];
  return name ? `${hex} (${name})` : hex;
}

interface FmtInfo {
  formatTag: number;
  extensible: boolean;
  channels: number;
  sampleRateHz: number;
  blockAlign: number;
  bitsPerSample: number;
  bytesPerSample: number;
  sampleFormat: 'int' | 'float';
  channelMask?: number;
}

function parseFmt(p: Uint8Array, at: number, name: string): FmtInfo {
  if (p.length < 16) throw new InputError(`'fmt ' chunk is ${p.length} bytes; at least 16 expected`, name, at);
  let formatTag = u16le(p, 0);
  const channels = u16le(p, 2);
  const sampleRateHz = u32le(p, 4);
  const blockAlign = u16le(p, 12);
  const containerBitsField = u16le(p, 14);
  let bitsPerSample = containerBitsField;
  let channelMask: number | undefined;
  const extensible = formatTag === 0xfffe;
  if (extensible) {
    if (p.length < 40) {
      throw new InputError(`WAVE_FORMAT_EXTENSIBLE 'fmt ' chunk is ${p.length} bytes; 40 expected`, name, at);
    }
    const validBits = u16le(p, 18);
    channelMask = u32le(p, 20);
    const tail = Array.from(p.subarray(28, 40));
    const known = tail.every((v, i) => v === KS_GUID_TAIL[i]) || tail.every((v, i) => v === AMBISONIC_GUID_TAIL[i]);
    const sub = u32le(p, 24);
    if (!known || (sub !== 1 && sub !== 3)) {
      const hex = Array.from(p.subarray(24, 40), (v) => v.toString(16).padStart(2, '0')).join('');
      throw new InputError(
        `unsupported WAVE_FORMAT_EXTENSIBLE SubFormat ${hex}${known ? ` (format ${formatName(sub)})` : ''}; PCM or IEEE float expected`,
        name,
        at + 24,
      );
    }
    formatTag = sub;
    if (validBits !== 0) bitsPerSample = validBits;
  }
  if (formatTag !== 1 && formatTag !== 3) {
    throw new InputError(
      `unsupported WAV encoding ${formatName(formatTag)}; only uncompressed PCM and IEEE float can be read`,
      name,
      at,
    );
  }
  if (channels === 0) throw new InputError('the fmt chunk says zero channels', name, at + 2);
  const tooMany = channelCountProblem(channels);
  if (tooMany) throw new InputError(`the fmt chunk says ${tooMany}`, name, at + 2);
  const badRate = sampleRateProblem(sampleRateHz);
  if (badRate) throw new InputError(`the fmt chunk says ${badRate}`, name, at + 4);
  if (containerBitsField === 0) throw new InputError('the fmt chunk says 0 bits per sample', name, at + 14);
  const sampleFormat = formatTag === 3 ? 'float' : 'int';
  // Container size: whole bytes for the stated bits, or wider when blockAlign says so (e.g. 24 in 32).
  let bytesPerSample = Math.ceil(containerBitsField / 8);
  if (blockAlign > 0 && blockAlign % channels === 0 && blockAlign / channels > bytesPerSample) {
    bytesPerSample = blockAlign / channels;
  }
  if (sampleFormat === 'float' && containerBitsField !== 32 && containerBitsField !== 64) {
    throw new InputError(`${containerBitsField}-bit float samples are not supported (32 or 64 expected)`, name, at + 14);
  }
  const problem = encodingProblem({ sampleFormat, bytesPerSample, bigEndian: false, unsigned8: true });
  if (problem) throw new InputError(problem, name, at + 14);
  if (bitsPerSample > bytesPerSample * 8) {
    throw new InputError(`${bitsPerSample} valid bits do not fit a ${bytesPerSample * 8}-bit container`, name, at + 18);
  }
  if (blockAlign !== 0 && blockAlign < channels * bytesPerSample) {
    throw new InputError(
      `block align ${blockAlign} is too small for ${channels} channels of ${bytesPerSample * 8} bits`,
      name,
      at + 12,
    );
  }
  return {
    formatTag,
    extensible,
    channels,
    sampleRateHz,
    blockAlign: channels * bytesPerSample,
    bitsPerSample: sampleFormat === 'float' ? bytesPerSample * 8 : bitsPerSample,
    bytesPerSample,
    sampleFormat,
    channelMask,
  };
}

/** Parses a RIFF/RF64/BW64 WAVE file whose first 12 bytes are `head`. */
export function parseWav(read: ReadFn, fileSize: number, name: string, head: Uint8Array): AudioLayout {
  const outer = fourcc(head, 0);
  const isRf64 = outer === 'RF64' || outer === 'BW64';
  const formType = fourcc(head, 8);
  if (formType !== 'WAVE') throw new InputError(`expected form type 'WAVE' after ${showId(outer)}, found ${showId(formType)}`, name, 8);
  const declared = u32le(head, 4);
  let limit = !isRf64 && declared >= 4 && declared + 8 <= fileSize ? declared + 8 : fileSize;

  const chunks: LayoutChunk[] = [];
  let fmt: FmtInfo | undefined;
  let data: LayoutChunk | undefined;
  let ds64: AudioLayout['ds64'];
  let bext: AudioLayout['bext'];
  let pos = 12;
  while (pos + 8 <= limit) {
    const h = readExact(read, fileSize, name, pos, 8, 'a chunk header');
    const id = fourcc(h, 0);
    const size32 = u32le(h, 4);
    let size = size32;
    if (isRf64 && chunks.length === 0 && id !== 'ds64') {
      throw new InputError(`${outer} file must start with a 'ds64' chunk, found ${showId(id)}`, name, pos);
    }
    if (id === 'data' && ds64) size = ds64.dataSize;
    else if (id === 'data' && !isRf64 && fileSize - (pos + 8) > 0xffffffff) {
      // A plain RIFF file past 4 GiB from a writer that let the 32-bit size wrap around: when the
      // audio runs to the end of the file and the stored size equals the true size modulo 2^32,
      // take the true size.
      const rest = fileSize - (pos + 8);
      const whole = rest - (rest % 2 === 1 && size32 % 2 === 0 ? 1 : 0);
      if ((whole - size32) % 0x1_0000_0000 === 0) {
        size = whole;
        limit = fileSize;
      }
    } else if (ds64 && size32 === 0xffffffff) {
      const big = ds64.table[id];
      if (big === undefined) throw new InputError(`chunk ${showId(id)} has size 0xFFFFFFFF but no ds64 table entry`, name, pos + 4);
      size = big;
    }
    const payload = pos + 8;
    if (payload + size > fileSize) {
      const what = id === 'data' ? 'the audio data is truncated' : 'the chunk runs past the end of the file';
      throw new InputError(
        `chunk ${showId(id)} claims ${size} bytes from byte ${payload} but the file ends at byte ${fileSize}: ${what}`,
        name,
        pos,
      );
    }
    const rec: LayoutChunk = { id, offset: payload, size, position: data ? 'after-data' : 'before-data' };
    chunks.push(rec);
    if (id === 'ds64') {
      if (!isRf64) {
        // A ds64 in a plain RIFF file is meaningless; keep it listed and ignore it.
      } else {
        if (size < 28) throw new InputError(`'ds64' chunk is ${size} bytes; at least 28 expected`, name, pos);
        const p = readExact(read, fileSize, name, payload, size, "the 'ds64' chunk");
        const tableLength = u32le(p, 24);
        const table: Record<string, number> = {};
        for (let i = 0; i < tableLength && 28 + 12 * i + 12 <= size; i++) {
          table[fourcc(p, 28 + 12 * i)] = u64le(p, 28 + 12 * i + 4);
        }
        ds64 = { riffSize: u64le(p, 0), dataSize: u64le(p, 8), sampleCount: u64le(p, 16), table };
        const riffEnd = ds64.riffSize + 8;
        limit = ds64.riffSize >= 4 && riffEnd <= fileSize ? riffEnd : fileSize;
      }
    } else if (id === 'fmt ') {
      if (fmt) throw new InputError("a second 'fmt ' chunk", name, pos);
      fmt = parseFmt(readExact(read, fileSize, name, payload, size, "the 'fmt ' chunk"), payload, name);
    } else if (id === 'bext') {
      bext = parseBext(readExact(read, fileSize, name, payload, size, "the 'bext' chunk"));
    } else if (id === 'data') {
      if (data) throw new InputError("a second 'data' chunk", name, pos);
      data = rec;
    }
    pos = payload + size + (size & 1);
  }
  // Fewer than 8 bytes left: a missing final pad byte or stray trailing bytes; harmless once the
  // audio has been found.
  if (!data && pos < limit) {
    throw new InputError(`truncated: expected a chunk header (8 bytes) but the file ends at byte ${fileSize}`, name, pos);
  }
  if (isRf64 && !ds64) throw new InputError(`${outer} file without a 'ds64' chunk`, name, 12);
  if (!fmt) throw new InputError("no 'fmt ' chunk: the file does not say how its samples are stored", name, 12);
  if (!data) throw new InputError("no 'data' chunk: the file holds no audio", name, 12);
  const frames = Math.floor(data.size / fmt.blockAlign);
  if (frames === 0) {
    throw new InputError(
      `no audio: the 'data' chunk holds ${data.size} bytes, less than one ${fmt.blockAlign}-byte frame`,
      name,
      data.offset - 8,
    );
  }
  const encoding: SampleEncoding = {
    sampleFormat: fmt.sampleFormat,
    bytesPerSample: fmt.bytesPerSample,
    bigEndian: false,
    unsigned8: true,
  };
  return {
    container: isRf64 ? (outer as 'RF64' | 'BW64') : bext ? 'BWF' : 'WAV',
    sampleFormat: fmt.sampleFormat,
    bitsPerSample: fmt.bitsPerSample,
    bytesPerSample: fmt.bytesPerSample,
    encoding,
    channels: fmt.channels,
    sampleRateHz: fmt.sampleRateHz,
    channelMask: fmt.channelMask,
    formatTag: fmt.formatTag,
    extensible: fmt.extensible,
    dataOffset: data.offset,
    dataBytes: data.size,
    blockAlign: fmt.blockAlign,
    frames,
    chunks,
    bext,
    ds64,
  };
}
