/**
 * Rendering of an echo cancellation as a stream of blocks in forward order.
 *
 * Post-echoes (reflections, τ > 0): the causal recursion x̂[n] = y[n] − Σ k[i]·x̂[n − o − i],
 * block by block with its state carried over (canceller.ts).
 *
 * Pre-echoes (print-through before a loud passage, τ = −T < 0): y = x + g·x(t + T) needs the
 * future, so the same recursion runs on the time-reversed signal, where the pre-echo is a
 * post-echo. The output must still leave in forward order, and the writer consumes it block by
 * block, so the file is cut into segments of C frames. Each segment [a, a + C) is produced by
 * reading [a, a + C + W) backwards (source.blocks({reverse: true})), running the recursion from
 * rest, keeping the last C outputs (those of [a, a + C)) and reversing them. The W extra frames
 * let the recursion's state settle: it decays like |g|^(W/T), so W = T·ln(10⁻⁶)/ln|g| leaves an
 * error 120 dB down. Memory: C frames per channel (C ≤ 2²² frames, or the whole file when it is
 * shorter); cost: (C + W)/C reads of the file. For faint print-through (|g| ≈ 0.01) W is only
 * 3·T.
 *
 * When both are present the pre-echo stage runs first (it reads the source backwards) and the
 * post-echo stage filters its output; the two filters are linear and time-invariant, so the order
 * does not change the result.
 */
import type { AudioSource, Block } from '../source.ts';
import { EchoCanceller } from './canceller.ts';
import type { EchoKernel } from './kernel.ts';

export interface CancelPlan {
  /** Reflection kernel (lags > 0) or null. */
  post: EchoKernel | null;
  /**
   * A second post-echo stage run after `post` (print-through after the loud passages, when a
   * reflection is cancelled too). On tape the copy is printed from the recorded signal, which
   * already holds the room's reflection, so the two inverse filters in cascade are the exact
   * inverse of that chain; for copies of the dry programme instead the cascade leaves a cross
   * term g·c at τ + T (about 50 dB under the programme for g = 0.5 and c at −45 dB).
   */
  postAfter?: EchoKernel | null;
  /** Pre-echo kernel in reversed time (lags > 0, i.e. T), its gain for sizing the warm-up, or null. */
  pre: { kernel: EchoKernel; gain: number; delaySamples: number } | null;
  /** Channels to process (others pass through unchanged); null = all. */
  channels: readonly number[] | null;
}

const MAX_SEGMENT = 1 << 22;

/** Warm-up length (frames) for a reversed recursion of gain g at delay T. */
export function reverseWarmup(delaySamples: number, gain: number): number {
  const a = Math.min(0.999, Math.max(1e-6, Math.abs(gain)));
  const periods = Math.max(1, Math.log(1e-6) / Math.log(a));
  return Math.ceil(delaySamples * periods) + 64;
}

export function segmentLength(frames: number, warmup: number): number {
  return Math.min(frames, Math.max(1 << 16, Math.min(MAX_SEGMENT, 4 * warmup)));
}

async function* preEchoStage(source: AudioSource, pre: NonNullable<CancelPlan['pre']>, channels: readonly number[] | null, blockFrames: number): AsyncIterable<Block> {
  const nch = source.channelCount;
  const frames = source.frames;
  const warm = reverseWarmup(pre.delaySamples, pre.gain);
  const seg = segmentLength(frames, warm);
  const active = (c: number) => channels === null || channels.includes(c);
  for (let a = 0; a < frames; a += seg) {
    const b = Math.min(frames, a + seg);
    const readEnd = Math.min(frames, b + warm);
    const outSeg = Array.from({ length: nch }, () => new Float64Array(b - a));
    const cancellers = Array.from({ length: nch }, (_, c) => (active(c) ? new EchoCanceller(pre.kernel) : null));
    // Reversed reading: the first (readEnd − b) samples are warm-up, the rest map to [a, b) backwards.
    let revPos = 0; // index in reversed time, 0 = frame readEnd − 1
    for await (const block of source.blocks({ startFrame: a, endFrame: readEnd, reverse: true })) {
      const len = block[0]!.length;
      for (let c = 0; c < nch; c++) {
        const data = block[c]!;
        const out = cancellers[c] ? cancellers[c]!.process(data, data) : data;
        for (let i = 0; i < len; i++) {
          const frame = readEnd - 1 - (revPos + i);
          if (frame < b) outSeg[c]![frame - a] = out[i]!;
        }
      }
      revPos += len;
    }
    for (let at = 0; at < b - a; at += blockFrames) {
      const hi = Math.min(b - a, at + blockFrames);
      yield outSeg.map((ch) => ch.slice(at, hi));
    }
  }
}

/** The cancelled signal, in forward-order blocks. */
export async function* renderCancellation(source: AudioSource, plan: CancelPlan, blockFrames = 65536): AsyncIterable<Block> {
  const input: AsyncIterable<Block> = plan.pre ? preEchoStage(source, plan.pre, plan.channels, blockFrames) : source.blocks({ blockFrames });
  const nch = source.channelCount;
  const post = plan.post
    ? Array.from({ length: nch }, (_, c) => (plan.channels === null || plan.channels.includes(c) ? new EchoCanceller(plan.post!) : null))
    : null;
  const after = plan.postAfter
    ? Array.from({ length: nch }, (_, c) => (plan.channels === null || plan.channels.includes(c) ? new EchoCanceller(plan.postAfter!) : null))
    : null;
  for await (const block of input) {
    if (post) for (let c = 0; c < nch; c++) post[c]?.process(block[c]!, block[c]!);
    if (after) for (let c = 0; c < nch; c++) after[c]?.process(block[c]!, block[c]!);
    yield block;
  }
}
