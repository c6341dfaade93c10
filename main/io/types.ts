/**
 * What the command line, the editor's main process and the batch report need from audio files.
 * The byte-level parsing is pure (dsp/formats); these types describe the Node-side objects.
 */
import type { AudioSource } from '../../dsp/source.ts';
import type { AudioLayout } from '../../dsp/formats/types.ts';
import type { BextInfo } from '../../dsp/formats/bext.ts';

export type SampleFormat = 'int' | 'float';
export type ContainerFormat = 'WAV' | 'BWF' | 'RF64' | 'BW64' | 'AIFF' | 'AIFC' | 'FLAC';

/** The contract's `file` object (see ARCHITECTURE.md), printed by every `--json` verb. */
export interface FileInfo {
  path: string;
  format: ContainerFormat;
  sampleRateHz: number;
  channels: number;
  bitsPerSample: number;
  sampleFormat: SampleFormat;
  durationSeconds: number;
  frames: number;
  /** Chunk ids in file order, e.g. ["fmt ", "bext", "data", "LIST"]. */
  chunks: string[];
  /** MD5 (hex) of the audio data bytes as stored (fixity); present only when it was computed. */
  audioMd5?: string;
}

/** A chunk found in the source, for byte-exact copying into outputs. */
export interface ChunkRecord {
  id: string;
  /** Byte offset of the chunk's payload (after its 8-byte header) in the file. */
  offset: number;
  /** Payload size in bytes (without the pad byte). */
  size: number;
  /** Whether the chunk came before or after the audio data in the source. */
  position: 'before-data' | 'after-data';
}

/** An open audio file: a read-only, re-readable streaming source plus what the file says about itself. */
export interface OpenedAudio extends AudioSource {
  readonly path: string;
  readonly info: FileInfo;
  readonly bitsPerSample: number;
  readonly sampleFormat: SampleFormat;
  readonly chunks: readonly ChunkRecord[];
  /** bext CodingHistory text already in the file ('' when none). */
  readonly codingHistory: string;
  /** Reads one chunk's payload bytes (for copying). */
  readChunk(chunk: ChunkRecord): Promise<Uint8Array>;
  /** Streams the stored audio bytes through MD5 (for FLAC: the decoded PCM, as FLAC's own MD5 does). */
  audioMd5(onProgress?: (fraction: number) => void): Promise<string>;
  close(): Promise<void>;
  /** Everything the header parser found (container details, chunk list, ds64, FLAC STREAMINFO). */
  readonly layout: AudioLayout;
  /** The parsed bext chunk, when the file has one. */
  readonly bext?: BextInfo;
  /**
   * NaN/±Inf samples in a float file. They are read as 0 (so analyses stay finite); this is the
   * count found by the last complete pass over the whole file (blocks(), audioMd5() or
   * scanNonFinite()), undefined until one has run. Always 0 for integer files.
   */
  readonly nonFiniteSamples: number | undefined;
  /** A validation pass over the stored samples: counts NaN/±Inf (fast, no decoding). */
  scanNonFinite(onProgress?: (fraction: number) => void): Promise<number>;
}

export interface WriteOptions {
  /** Output word length. */
  bitsPerSample: 8 | 16 | 24 | 32 | 64;
  sampleFormat: SampleFormat;
  /** TPDF dither when converting to integer samples. */
  dither: boolean;
  /** The source whose unknown chunks are copied byte-exact and whose CodingHistory is extended. */
  copyFrom?: OpenedAudio;
  /** Free text for this run's CodingHistory line (`T=` field). */
  historyText?: string;
  /** The source path: writing onto it is refused. */
  sourcePath?: string;
  /** Replace an existing file at the output path (never the source). Default: refuse it. */
  overwrite?: boolean;
  /**
   * Runs after the last block, before the finished file is moved into place; if it throws, nothing
   * is written (e.g. the source's own checksum is verified when the rendering did not read it in
   * one forward pass).
   */
  beforeCommit?: () => Promise<unknown>;
  /** Stops the write (the temporary file is removed, CancelledError is thrown): Ctrl+C, SIGTERM. */
  signal?: { readonly aborted: boolean };
  /** Force the RF64 container (`--rf64`); otherwise chosen automatically past 4 GiB. */
  forceRf64?: boolean;
  /** Seeded random source for dither (tests); default Math.random. */
  rng?: () => number;
  onProgress?: (framesWritten: number) => void;
}

export interface WriteResult {
  path: string;
  frames: number;
  bytes: number;
  container: 'RIFF' | 'RF64';
  /** Metadata of a FLAC/AIFF source that the output does not carry (block or chunk ids), when any. */
  notCarried?: string[];
}
