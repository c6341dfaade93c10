/**
 * Reversed-channel detection from the asymmetry of onsets and decays.
 *
 * Natural sounds start quickly and die away slowly: a struck, plucked or spoken sound reaches its
 * peak in milliseconds and decays over tens or hundreds of milliseconds (exponential decay of
 * free vibration; e.g. Fletcher & Rossing, The Physics of Musical Instruments, 2nd ed., §2–3, and
 * the attack/decay shapes of speech syllables). Played backwards the same material swells slowly
 * and stops abruptly. The detector measures that asymmetry in the level envelope:
 *
 *  1. per channel, the mean power of consecutive 10 ms blocks, in dB, floored 60 dB below a robust
 *     peak (the 99th percentile of the blocks), so silences do not produce infinite steps;
 *  2. the steps d = L[i+1] − L[i] between neighbouring blocks where either block is within 35 dB of
 *     that peak (quieter steps are mostly hum, hiss and room tone beating against the blocks);
 *  3. the normalised third moment of the steps, A = (Σ d₊³ − Σ d₋³)/(Σ d₊³ + Σ d₋³) ∈ [−1, 1]
 *     (d₊, d₋ the rising and falling steps; Σd ≈ 0 over a whole file, so this is the sign and
 *     size of the steps' skewness, with big steps counting most).
 *
 * Time reversal maps every step d to −d, so A(reversed) = −A(forward) exactly for a block-aligned
 * signal: the score is antisymmetric by construction. The reported `score` is −A: near +1 for
 * reversed percussive or spoken material, near −1 for the same played forwards, near 0 for
 * stationary material (tones, hiss) whose steps are symmetric. `likely` also needs repeated
 * evidence (see `looksReversed`): a single abrupt stop is not enough.
 *
 * Streaming: one pass; the only summary kept is the block-level envelope (100 values per second
 * per channel).
 */
import type { AudioSource } from '../source.ts';

export interface ReversedChannel {
  /** 1-based channel number. */
  readonly channel: number;
  readonly likely: boolean;
  /** −1 … +1: positive when the channel swells and stops abruptly (plays backwards). */
  readonly score: number;
  /** Seconds of material loud enough to judge. */
  readonly activeSeconds: number;
  /** Level rises and falls of at least 6 dB within 10 ms. */
  readonly abruptStarts: number;
  readonly abruptStops: number;
}

export interface ReversedResult {
  readonly channels: ReversedChannel[];
}

export const REVERSED_BLOCK_SECONDS = 0.01;
export const REVERSED_SCORE_THRESHOLD = 0.3;
export const REVERSED_MIN_ACTIVE_SECONDS = 2;
export const REVERSED_MIN_EVENTS = 5;
const FLOOR_DB = 60;
const ACTIVE_DB = 35;

/**
 * Per-channel block power envelope, grown as the source streams past. Sized for the source's
 * length up front (4 bytes per 10 ms block), so a long many-channel file costs no more than that.
 */
class Envelope {
  #values: Float32Array;
  length = 0;
  #acc = 0;
  #count = 0;
  constructor(
    readonly blockFrames: number,
    expectedBlocks: number,
  ) {
    this.#values = new Float32Array(Math.max(16, expectedBlocks));
  }

  add(x: Float64Array): void {
    const b = this.blockFrames;
    let acc = this.#acc, count = this.#count;
    for (let i = 0; i < x.length; i++) {
      const v = x[i]!;
      acc += v * v;
      if (++count === b) {
        this.#push(acc / b);
        acc = 0;
        count = 0;
      }
    }
    this.#acc = acc;
    this.#count = count;
  }

  get values(): Float32Array {
    return this.#values.subarray(0, this.length);
  }

  #push(power: number): void {
    if (this.length === this.#values.length) {
      const grown = new Float32Array(this.#values.length * 2);
      grown.set(this.#values);
      this.#values = grown;
    }
    this.#values[this.length++] = power;
  }
}

/** Steps of at least this size (dB per block) count as attacks or abrupt stops. */
export const LARGE_STEP_DB = 6;

export interface Asymmetry {
  /** −A (see the module comment): positive when the envelope swells and stops abruptly. */
  readonly score: number;
  readonly activeBlocks: number;
  /** Rising and falling steps of at least LARGE_STEP_DB among the active ones. */
  readonly largeRises: number;
  readonly largeFalls: number;
}

/** The asymmetry score of one block-power envelope (see the module comment). */
export function asymmetryScore(power: Float32Array): Asymmetry {
  const n = power.length;
  if (n < 2) return { score: 0, activeBlocks: 0, largeRises: 0, largeFalls: 0 };
  const db = new Float64Array(n);
  for (let i = 0; i < n; i++) db[i] = 10 * Math.log10(power[i]! + 1e-30);
  const sorted = Float64Array.from(db).sort();
  const peak = sorted[Math.min(n - 1, Math.floor(0.99 * (n - 1)))]!;
  const floor = peak - FLOOR_DB, active = peak - ACTIVE_DB;
  let up = 0, down = 0, activeBlocks = 0, largeRises = 0, largeFalls = 0;
  for (let i = 0; i + 1 < n; i++) {
    const a = Math.max(db[i]!, floor), b = Math.max(db[i + 1]!, floor);
    if (Math.max(a, b) < active) continue;
    activeBlocks++;
    const d = b - a;
    if (d > 0) up += d * d * d;
    else down -= d * d * d;
    if (d >= LARGE_STEP_DB) largeRises++;
    else if (d <= -LARGE_STEP_DB) largeFalls++;
  }
  const total = up + down;
  return { score: total > 0 ? (down - up) / total : 0, activeBlocks, largeRises, largeFalls };
}

/**
 * The decision: a clear asymmetry (score ≥ 0.3) over at least 2 s of active material, carried by
 * repeated evidence — at least 5 abrupt stops (falls ≥ 6 dB within 10 ms). One abrupt stop (a tone
 * that ends, an edit) weighs heavily in the score but is not evidence of reversal. (Counting alone
 * would not do: the releases of speech also fall fast near their ends; the score weighs the size
 * of the steps.)
 */
export function looksReversed(a: Asymmetry, activeSeconds: number): boolean {
  return a.score >= REVERSED_SCORE_THRESHOLD && activeSeconds >= REVERSED_MIN_ACTIVE_SECONDS && a.largeFalls >= REVERSED_MIN_EVENTS;
}

/** Reads the source once and scores every channel. */
export async function detectReversedChannels(source: AudioSource, onProgress?: (fraction: number) => void): Promise<ReversedResult> {
  const blockFrames = Math.max(1, Math.round(REVERSED_BLOCK_SECONDS * source.sampleRateHz));
  const expected = Math.ceil(source.frames / blockFrames) + 1;
  const envs = Array.from({ length: source.channelCount }, () => new Envelope(blockFrames, expected));
  let done = 0;
  for await (const block of source.blocks()) {
    for (let c = 0; c < envs.length; c++) envs[c]!.add(block[c]!);
    done += block[0]!.length;
    onProgress?.(done / Math.max(1, source.frames));
  }
  const channels = envs.map((env, c) => {
    const a = asymmetryScore(env.values);
    const activeSeconds = (a.activeBlocks * blockFrames) / source.sampleRateHz;
    return {
      channel: c + 1,
      likely: looksReversed(a, activeSeconds),
      score: a.score,
      activeSeconds,
      abruptStarts: a.largeRises,
      abruptStops: a.largeFalls,
    };
  });
  return { channels };
}
