/**
 * Time reversal of a whole file, a time range, or chosen channels only, streamed block by block.
 *
 * Output frame i of a reversed range [start, end) is input frame start + end − 1 − i: the range is
 * read backwards with `source.blocks({ reverse: true })` (blocks from the end towards the start,
 * each block's samples reversed), while the frames outside the range, and the channels not chosen,
 * are copied through unchanged. Samples are moved, never computed, so reversing twice returns
 * the input exactly (and byte for byte when the output is written in the input's format).
 */
import { InputError, ParameterError } from '../errors.ts';
import type { AudioSource, Block } from '../source.ts';

export interface ReverseOptions {
  /** Channels to reverse, 0-based (default: all). */
  readonly channels?: readonly number[];
  /** First frame of the reversed range (default 0). */
  readonly startFrame?: number;
  /** One past the last frame of the range (default: the end). */
  readonly endFrame?: number;
  readonly blockFrames?: number;
}

/** Checks the options against the source and returns them resolved (channels sorted, unique). */
export function resolveReverse(source: AudioSource, options: ReverseOptions): { channels: number[]; startFrame: number; endFrame: number } {
  const start = options.startFrame ?? 0;
  const end = options.endFrame ?? source.frames;
  if (!Number.isInteger(start) || !Number.isInteger(end)) throw new ParameterError(`the range ${start}…${end} must be whole frames`);
  if (start < 0 || end > source.frames) throw new ParameterError(`the range ${start}…${end} lies outside the input's 0…${source.frames} frames`);
  if (end <= start) throw new ParameterError(`the range ${start}…${end} is empty`);
  const chosen = options.channels ?? Array.from({ length: source.channelCount }, (_, c) => c);
  if (chosen.length === 0) throw new ParameterError('no channel chosen');
  for (const c of chosen) {
    if (!Number.isInteger(c) || c < 0 || c >= source.channelCount) {
      throw new ParameterError(`channel ${c + 1} does not exist (the input has ${source.channelCount})`);
    }
  }
  return { channels: [...new Set(chosen)].sort((a, b) => a - b), startFrame: start, endFrame: end };
}

/** Streams the source with the range reversed on the chosen channels. */
export async function* reverseBlocks(source: AudioSource, options: ReverseOptions = {}): AsyncIterable<Block> {
  const { channels, startFrame, endFrame } = resolveReverse(source, options);
  const blockFrames = options.blockFrames;
  if (startFrame > 0) yield* source.blocks({ startFrame: 0, endFrame: startFrame, blockFrames });
  const range = { startFrame, endFrame, blockFrames };
  if (channels.length === source.channelCount) {
    yield* source.blocks({ ...range, reverse: true });
  } else {
    // Reversed blocks for the chosen channels beside forward blocks for the others, re-cut to
    // common lengths (the two passes need not yield equal block sizes).
    const chosen = new Set(channels);
    const back = rechunk(source.blocks({ ...range, reverse: true }));
    const fwd = rechunk(source.blocks(range));
    let left = endFrame - startFrame;
    while (left > 0) {
      const want = Math.min(left, blockFrames ?? 65536);
      const b = await back.take(want);
      const f = b.length > 0 ? await fwd.take(b[0]!.length) : [];
      if (b.length === 0 || f.length === 0 || b[0]!.length === 0 || f[0]!.length !== b[0]!.length) {
        throw new InputError('the input ended early while reversing');
      }
      yield Array.from({ length: source.channelCount }, (_, c) => (chosen.has(c) ? b[c]! : f[c]!));
      left -= b[0]!.length;
    }
  }
  if (endFrame < source.frames) yield* source.blocks({ startFrame: endFrame, blockFrames });
}

/** Pulls exactly `n` frames (fewer only at the end) from a block stream. */
function rechunk(blocks: AsyncIterable<Block>): { take(n: number): Promise<Block> } {
  const it = blocks[Symbol.asyncIterator]();
  let pending: Block | null = null;
  let at = 0;
  return {
    async take(n: number): Promise<Block> {
      const parts: Block[] = [];
      let got = 0;
      while (got < n) {
        if (pending === null || at >= pending[0]!.length) {
          const r = await it.next();
          if (r.done) break;
          pending = r.value;
          at = 0;
          continue;
        }
        const k = Math.min(n - got, pending[0]!.length - at);
        parts.push(pending.map((ch) => ch.subarray(at, at + k)));
        at += k;
        got += k;
      }
      const channels = parts[0]?.length ?? pending?.length ?? 0;
      return Array.from({ length: channels }, (_, c) => {
        const out = new Float64Array(got);
        let o = 0;
        for (const p of parts) {
          out.set(p[c]!, o);
          o += p[c]!.length;
        }
        return out;
      });
    },
  };
}
