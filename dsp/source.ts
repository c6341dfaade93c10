/**
 * The streaming audio source every operation reads from. Files (main/io), in-memory buffers
 * (tests, the editor's worker) and rendered steps all implement it. Samples are float64,
 * planar (one array per channel), full scale = ±1.
 */
import type { Frames, Hertz } from './units.ts';
import { ParameterError } from './errors.ts';

export type Block = Float64Array[];

export interface BlockOptions {
  /** First frame to read (default 0). */
  startFrame?: Frames;
  /** One past the last frame to read (default: end of source). */
  endFrame?: Frames;
  /**
   * Frames per yielded block (default 65536 for one or two channels, fewer for more: see
   * defaultBlockFrames). The last block may be shorter.
   */
  blockFrames?: Frames;
  /** Yield blocks from the end towards the start, each block's samples reversed. */
  reverse?: boolean;
  /**
   * The caller only reads the blocks and keeps no reference to one after asking for the next:
   * a source may then hand the same arrays to several such callers (SharedPass does, instead of
   * a copy each). Without it, yielded arrays belong to the caller, who may overwrite them.
   */
  readOnly?: boolean;
  /**
   * The caller is done with each block before it asks for the next (it keeps no reference and
   * needs none of its values later): a source may then yield the same arrays every time,
   * overwritten, instead of new ones (file sources do; less garbage in passes that read an
   * excerpt many times). The last block may be a shorter view of them.
   */
  reusable?: boolean;
}

export interface AudioSource {
  readonly sampleRateHz: Hertz;
  readonly channelCount: number;
  /** Total frames. */
  readonly frames: Frames;
  /**
   * Planar blocks in order. Each call starts a new pass over the source; a source may be read
   * any number of times. Yielded arrays belong to the caller.
   */
  blocks(options?: BlockOptions): AsyncIterable<Block>;
}

export const DEFAULT_BLOCK_FRAMES = 65536;

/**
 * Frames per block when the caller does not say: 65536 for one or two channels, fewer for more
 * (at least 4096), so one block holds at most 2^17 samples (1 MiB of float64) whatever the
 * channel count. Operations take blocks of any length; their results do not depend on it.
 */
export function defaultBlockFrames(channels: number): Frames {
  let n = DEFAULT_BLOCK_FRAMES;
  while (n > 4096 && n * channels > 1 << 17) n >>= 1;
  return n;
}

export function resolveRange(source: { frames: Frames }, options: BlockOptions = {}): [Frames, Frames] {
  const start = Math.max(0, Math.floor(options.startFrame ?? 0));
  const end = Math.min(source.frames, Math.floor(options.endFrame ?? source.frames));
  return [start, Math.max(start, end)];
}

/** An AudioSource over planar arrays already in memory (tests, short previews, the editor). */
export class MemorySource implements AudioSource {
  readonly channelCount: number;
  readonly frames: Frames;
  constructor(
    readonly channels: readonly Float64Array[],
    readonly sampleRateHz: Hertz,
  ) {
    if (channels.length === 0) throw new ParameterError('a source needs at least one channel');
    this.channelCount = channels.length;
    this.frames = channels[0]!.length;
    for (const c of channels) {
      if (c.length !== this.frames) throw new ParameterError('all channels must have the same length');
    }
  }

  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const size = Math.max(1, Math.floor(options.blockFrames ?? DEFAULT_BLOCK_FRAMES));
    if (options.reverse) {
      for (let hi = end; hi > start; hi -= size) {
        const lo = Math.max(start, hi - size);
        yield this.channels.map((c) => c.slice(lo, hi).reverse());
      }
    } else {
      for (let lo = start; lo < end; lo += size) {
        const hi = Math.min(end, lo + size);
        yield this.channels.map((c) => c.slice(lo, hi));
      }
    }
  }
}

/** Reads a whole source (or a range) into memory. Only for short material: tests and previews. */
export async function readAll(source: AudioSource, options: BlockOptions = {}): Promise<Float64Array[]> {
  const [start, end] = resolveRange(source, options);
  const out = Array.from({ length: source.channelCount }, () => new Float64Array(end - start));
  let at = 0;
  for await (const block of source.blocks({ ...options, reverse: false })) {
    for (let c = 0; c < out.length; c++) out[c]!.set(block[c]!, at);
    at += block[0]!.length;
  }
  return out;
}

/** Collects an async stream of blocks into planar arrays (tests and previews). */
export async function collectBlocks(blocks: AsyncIterable<Block>, channelCount: number): Promise<Float64Array[]> {
  const parts: Block[] = [];
  let total = 0;
  for await (const b of blocks) {
    parts.push(b);
    total += b[0]?.length ?? 0;
  }
  const out = Array.from({ length: channelCount }, () => new Float64Array(total));
  let at = 0;
  for (const b of parts) {
    for (let c = 0; c < channelCount; c++) out[c]!.set(b[c]!, at);
    at += b[0]?.length ?? 0;
  }
  return out;
}

/**
 * Streams `source` through a processor that holds samples back: `step` turns each input block into
 * the output ready so far, `finish` returns the rest once the input has ended. Empty outputs are
 * not yielded.
 */
export async function* streamThrough(
  source: AudioSource,
  blockFrames: number | undefined,
  step: (block: Block) => Block,
  finish: () => Block,
): AsyncGenerator<Block> {
  for await (const block of source.blocks({ blockFrames })) {
    const out = step(block);
    if (out[0]!.length > 0) yield out;
  }
  const tail = finish();
  if (tail[0]!.length > 0) yield tail;
}
