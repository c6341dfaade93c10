/**
 * Streaming renderings for the stretch and transpose operations.
 *
 * Transpose (duration kept, every frequency × f, f = 2^(cents/1200)) is a time-stretch by f
 * followed by varispeed resampling at 1/f (dsp/core/resample.ts): the stretch makes the input f
 * times longer at the same pitch, the resampler plays it f times as fast. To let the resampler use
 * its exact-phase polyphase bank (precomputed coefficients; several times faster than its general
 * path) f is replaced by the nearest fraction a/b whose denominator fits the bank, when that moves
 * the pitch by at most 0.05 cent (about a hundredth of the ≈ 5-cent pitch difference listeners
 * notice; reported as `fractionErrorCents`); otherwise the exact f is used. The output is trimmed or padded to
 * exactly the input's length (the two stages round to ±1 frame).
 */
import { Resampler } from '../core/resample.ts';
import { kernelDesign, type ResampleQuality } from '../core/resample-kernel.ts';
import { ParameterError } from '../errors.ts';
import { streamThrough, type AudioSource, type Block } from '../source.ts';
import { MAX_RATIO, MIN_RATIO, TimeStretcher, type TimeStretchOptions } from './phase-vocoder.ts';

/** Streams a source stretched by `ratio` (duration × ratio, pitch kept). */
export async function* stretchSource(
  source: AudioSource,
  options: Omit<TimeStretchOptions, 'sampleRateHz' | 'channelCount'> & { blockFrames?: number },
): AsyncIterable<Block> {
  const ts = new TimeStretcher({ ...options, sampleRateHz: source.sampleRateHz, channelCount: source.channelCount });
  yield* streamThrough(source, options.blockFrames, (block) => ts.push(block), () => ts.flush());
}

export interface TransposePlan {
  /** Frequency factor asked for, 2^(cents/1200). */
  readonly factor: number;
  /** Stretch ratio used (= the resampler's speed-up); a/b when a fraction is used. */
  readonly stretchRatio: number;
  /** The fraction [a, b] used, or null for the exact factor. */
  readonly fraction: readonly [number, number] | null;
  /** Pitch error of the fraction against the factor, cents. */
  readonly errorCents: number;
}

/**
 * A lower bound on the resampler's exact-phase bank size (coefficients; dsp/core/resample.ts keeps
 * its own, currently 2^17). Only speed depends on it: a fraction that does not fit makes the
 * resampler take its general path, with the same result.
 */
const RESAMPLER_BANK = 1 << 16;
const MAX_FRACTION_ERROR_CENTS = 0.05;

export function planTranspose(cents: number, quality: ResampleQuality): TransposePlan {
  const factor = Math.pow(2, cents / 1200);
  if (!(factor >= MIN_RATIO * (1 - 1e-12) && factor <= MAX_RATIO * (1 + 1e-12))) {
    throw new ParameterError(`a transposition of ${cents} cents is outside ±2400 cents (two octaves)`);
  }
  // The bank holds den × taps coefficients; taps = 2·⌈halfWidth / s⌉, s = min(1, 1/f).
  const taps = 2 * Math.ceil(kernelDesign(quality).halfWidth / Math.min(1, 1 / factor));
  const maxDen = Math.floor(RESAMPLER_BANK / taps);
  let best: [number, number] | null = null;
  let bestErr = Infinity;
  for (let b = 1; b <= maxDen; b++) {
    const a = Math.round(factor * b);
    if (a < 1) continue;
    const err = Math.abs(1200 * Math.log2(a / b / factor));
    if (err < bestErr - 1e-15) {
      best = [a, b];
      bestErr = err;
    }
  }
  if (best && bestErr <= MAX_FRACTION_ERROR_CENTS) {
    return { factor, stretchRatio: best[0] / best[1], fraction: best, errorCents: 1200 * Math.log2(best[0] / best[1] / factor) };
  }
  return { factor, stretchRatio: factor, fraction: null, errorCents: 0 };
}

export interface TransposeOptions {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly cents: number;
  readonly keepFormants?: boolean;
  /** Resampler quality (default 'draft': ≥ 90 dB image/alias rejection). */
  readonly quality?: ResampleQuality;
  readonly fftSize?: number;
  readonly transients?: boolean;
}

/** Stretch then resample, trimmed to the input's length; push/flush like the stretcher. */
export class Transposer {
  readonly plan: TransposePlan;
  readonly #stretch: TimeStretcher;
  readonly #resample: Resampler;
  #inputFrames = 0;
  #emitted = 0;

  constructor(options: TransposeOptions) {
    const quality = options.quality ?? 'draft';
    this.plan = planTranspose(options.cents, quality);
    const r = this.plan.stretchRatio;
    this.#stretch = new TimeStretcher({
      sampleRateHz: options.sampleRateHz,
      channelCount: options.channelCount,
      ratio: r,
      fftSize: options.fftSize,
      transients: options.transients,
      formantFactor: options.keepFormants ? r : undefined,
    });
    this.#resample = new Resampler({ channelCount: options.channelCount, ratio: 1 / r, quality });
  }

  push(block: readonly Float64Array[]): Float64Array[] {
    this.#inputFrames += block[0]?.length ?? 0;
    const s = this.#stretch.pushShared(block); // views, copied by the resampler at once
    return this.#trim(s[0]!.length > 0 ? this.#resample.process(s) : s.map(() => new Float64Array(0)), false);
  }

  flush(): Float64Array[] {
    const s = this.#stretch.flushShared();
    const a = s[0]!.length > 0 ? this.#resample.process(s) : s;
    const b = this.#resample.flush();
    const joined = a.map((ch, c) => {
      const out = new Float64Array(ch.length + b[c]!.length);
      out.set(ch);
      out.set(b[c]!, ch.length);
      return out;
    });
    return this.#trim(joined, true);
  }

  /** Keeps the output at exactly the input's length (pads the last frame or two with silence). */
  #trim(out: Float64Array[], last: boolean): Float64Array[] {
    const len = out[0]!.length;
    const keep = Math.max(0, Math.min(len, this.#inputFrames - this.#emitted));
    let result = keep === len ? out : out.map((ch) => ch.slice(0, keep));
    this.#emitted += keep;
    const missing = last ? this.#inputFrames - this.#emitted : 0;
    if (missing > 0) {
      result = result.map((ch) => {
        const padded = new Float64Array(ch.length + missing);
        padded.set(ch);
        return padded;
      });
      this.#emitted += missing;
    }
    return result;
  }
}

/** Streams a transposed source (duration kept). */
export async function* transposeSource(source: AudioSource, options: Omit<TransposeOptions, 'sampleRateHz' | 'channelCount'> & { blockFrames?: number }): AsyncIterable<Block> {
  const t = new Transposer({ ...options, sampleRateHz: source.sampleRateHz, channelCount: source.channelCount });
  yield* streamThrough(source, options.blockFrames, (block) => t.push(block), () => t.flush());
}
