/**
 * What a parsed audio file header says: where the samples are and how they are stored. Produced by
 * parseAudioLayout() from a synchronous byte-reading callback, so the same code serves the Node
 * reader (positioned file reads), the browser editor (a File's ArrayBuffer slices) and Web Workers.
 */
import type { BextInfo } from './bext.ts';
import type { SampleEncoding, SampleFormat } from './codec.ts';
import { InputError } from '../errors.ts';

export type ContainerName = 'WAV' | 'BWF' | 'RF64' | 'BW64' | 'AIFF' | 'AIFC' | 'FLAC';

/** A chunk (or FLAC metadata block) as found in the file. */
export interface LayoutChunk {
  /** Four-character id ('fmt ', 'LIST', …); FLAC metadata blocks use their type name ('STREAMINFO'). */
  id: string;
  /** Byte offset of the payload (after the chunk header). */
  offset: number;
  /** Payload size in bytes, without the pad byte. */
  size: number;
  /** Before or after the audio data. The audio chunk itself ('data', 'SSND') counts as 'before-data'. */
  position: 'before-data' | 'after-data';
}

/** FLAC STREAMINFO (FLAC format specification, "METADATA_BLOCK_STREAMINFO"). */
export interface FlacStreamInfo {
  minBlockSize: number;
  maxBlockSize: number;
  minFrameBytes: number;
  maxFrameBytes: number;
  sampleRateHz: number;
  channels: number;
  bitsPerSample: number;
  /** 0 when the encoder did not know the length. */
  totalSamples: number;
  /** MD5 of the decoded PCM as hex; all zeros when not computed by the encoder. */
  md5: string;
  /**
   * Not in STREAMINFO: for a fixed-block-size stream, the block size of its frames, taken from the
   * first frame (parseFlac); frame n starts at sample n × this. Absent for variable block sizes.
   */
  fixedBlockSize?: number;
}

export interface AudioLayout {
  container: ContainerName;
  sampleFormat: SampleFormat;
  /** Significant bits per sample (wValidBitsPerSample, AIFF sampleSize, FLAC bits). */
  bitsPerSample: number;
  /** Container bytes per stored sample (FLAC: the bytes its MD5 uses, ceil(bits/8)). */
  bytesPerSample: number;
  encoding: SampleEncoding;
  channels: number;
  sampleRateHz: number;
  /** WAVE_FORMAT_EXTENSIBLE dwChannelMask, when the file has one. */
  channelMask?: number;
  /** wFormatTag (after resolving EXTENSIBLE's SubFormat: 1 PCM, 3 float), WAV family only. */
  formatTag?: number;
  /** Whether the fmt chunk was WAVE_FORMAT_EXTENSIBLE. */
  extensible?: boolean;
  /** AIFC compression type ('NONE', 'sowt', 'fl32', …). */
  compressionType?: string;
  /** Byte offset of the first sample frame (FLAC: of the first audio frame). */
  dataOffset: number;
  /** Bytes of stored audio (FLAC: of the encoded frames). */
  dataBytes: number;
  /** Bytes per sample frame (FLAC: 0, frames are variable-length). */
  blockAlign: number;
  /** Sample frames (FLAC: STREAMINFO total samples, 0 when unknown). */
  frames: number;
  chunks: LayoutChunk[];
  bext?: BextInfo;
  flac?: FlacStreamInfo;
  /** RF64/BW64 ds64 values. */
  ds64?: { riffSize: number; dataSize: number; sampleCount: number; table: Record<string, number> };
}

/** Synchronous positioned read: returns the bytes at [offset, offset+length) (shorter at end of file). */
export type ReadFn = (offset: number, length: number) => Uint8Array;

/** Reads exactly `length` bytes or throws a truncation InputError naming what was expected. */
export function readExact(read: ReadFn, fileSize: number, name: string, offset: number, length: number, what: string): Uint8Array {
  if (offset + length > fileSize) {
    throw new InputError(`truncated: expected ${what} (${length} bytes) but the file ends at byte ${fileSize}`, name, offset);
  }
  const b = read(offset, length);
  if (b.length < length) {
    throw new InputError(`truncated: expected ${what} (${length} bytes) but only ${b.length} could be read`, name, offset);
  }
  return b;
}
