/**
 * Streaming onset detection by spectral flux, for the time-stretcher's transient handling.
 *
 * Method: the half-wave-rectified increase of magnitudes between a frame and the frame two hops
 * earlier (Masri 1996; Bello et al. 2005, "A tutorial on onset detection in music signals", IEEE
 * Trans. Speech Audio Process. 13(5):1035–1047, §3.1.1), the earlier frame max-filtered over ±1 bin
 * so vibrato and slow glides do not count; comparing with a frame that does not overlap the
 * current one (hop = N/2, lag 2) keeps an onset from being split between two overlapping frames
 * (both ideas from Böck & Widmer 2013, "Maximum filter vibrato suppression for onset detection",
 * DAFx-13). The flux of magnitudes |X| is divided by the two
 * frames' total, so the detection function is level-independent and lies in 0…1 (0 for a steady
 * signal, near 1 for a click in silence). Frames of about 21 ms resolve partials 50 Hz apart, so
 * the beating of close partials in a chord does not read as onsets; a stronger compression than
 * |X| (e.g. |X|^½) lets low-level noise dilute onsets over a loud background.
 *
 * Peak picking (Bello et al. 2005, §4): a frame is an onset when its flux is the largest within
 * −3…+2 frames and exceeds the mean of the previous 10 frames by `threshold` (0.15: every onset of
 * the test material and none in steady chords, vibrato or noise).
 */
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';
import { ParameterError } from '../errors.ts';

export interface OnsetDetectorOptions {
  readonly sampleRateHz: number;
  /** Required rise of the normalised flux above its recent mean (default 0.15). */
  readonly threshold?: number;
}

/** Frames of look-ahead the peak picker needs before it can decide on a frame. */
export const ONSET_LOOKAHEAD_FRAMES = 2;
const LOOKBACK_MAX = 3;
const MEAN_FRAMES = 10;
const HISTORY = 16; // ring of flux values; ≥ MEAN_FRAMES + LOOKAHEAD + 2
/**
 * Frames compared with: the largest of frames j − 2 … j − 4 (≈ 21–43 ms back at 24 kHz). Against
 * frame j − 2 alone, a sustained note below ≈ 50 Hz (a period longer than the ≈ 21 ms frame) swings
 * with its waveform's phase from frame to frame and reads as onsets every few frames; the maximum
 * over more than one period of it does not swing (the same idea as the ±1 bin maximum, in time).
 */
const REFERENCE_FRAMES = 3;
/** Absolute floor per bin for |X| (≈ −120 dB re a full-scale sine's peak bin). */
const FLOOR_PER_BIN = 1e-4;

/** Frame size for the detector: about 21 ms (512 samples at 24 kHz). */
export function onsetFrameSize(sampleRateHz: number): number {
  const target = 0.0213 * sampleRateHz;
  return Math.max(64, 2 ** Math.round(Math.log2(target)));
}

/**
 * Feed frames in order with `analyze(frame)`; after each call, `decided()` says whether frame
 * `index − ONSET_LOOKAHEAD_FRAMES` is an onset. Frames are `frameSize` samples spaced `hopSize`.
 */
export class SpectralFluxOnsets {
  readonly frameSize: number;
  readonly hopSize: number;
  readonly threshold: number;
  readonly #plan: FftPlan;
  readonly #window: Float64Array;
  readonly #buf: Float64Array;
  readonly #spec: Float64Array;
  #mag: Float64Array;
  /** Max-filtered magnitudes of the last REFERENCE_FRAMES + 1 frames, newest first. */
  #prevMax: Float64Array[];
  readonly #flux = new Float64Array(HISTORY);
  /** Frames analysed so far. */
  #count = 0;

  constructor(options: OnsetDetectorOptions) {
    if (!(options.sampleRateHz > 0)) throw new ParameterError(`sampleRateHz=${options.sampleRateHz} must be > 0`);
    this.frameSize = onsetFrameSize(options.sampleRateHz);
    this.hopSize = this.frameSize / 2;
    this.threshold = options.threshold ?? 0.15;
    this.#plan = new FftPlan(this.frameSize);
    this.#window = makeWindow('hann', this.frameSize);
    this.#buf = new Float64Array(this.frameSize);
    this.#spec = new Float64Array(this.frameSize + 2);
    const bins = this.frameSize / 2 + 1;
    this.#mag = new Float64Array(bins);
    this.#prevMax = Array.from({ length: REFERENCE_FRAMES + 1 }, () => new Float64Array(bins));
  }

  /** Number of frames analysed. */
  get frameCount(): number {
    return this.#count;
  }

  /** A buffer of `frameSize` samples the caller may fill and pass to `analyze` (no allocation). */
  get frameBuffer(): Float64Array {
    return this.#buf;
  }

  /** Analyses the next frame and returns its flux (0…1). */
  analyze(frame: Float64Array): number {
    const n = this.frameSize;
    const buf = this.#buf;
    const w = this.#window;
    for (let i = 0; i < n; i++) buf[i] = frame[i]! * w[i]!;
    const spec = this.#spec;
    this.#plan.realForward(buf, spec);
    const bins = n / 2 + 1;
    const mag = this.#mag;
    // Frames j − 2 … j − 4 (the first one does not overlap this frame).
    const p2 = this.#prevMax[1]!, p3 = this.#prevMax[2]!, p4 = this.#prevMax[3]!;
    let rise = 0, total = 0;
    for (let k = 0; k < bins; k++) {
      const re = spec[2 * k]!, im = spec[2 * k + 1]!;
      const a = Math.sqrt(re * re + im * im);
      mag[k] = a;
      const ref = Math.max(p2[k]!, p3[k]!, p4[k]!);
      const d = a - ref;
      if (d > 0) rise += d;
      total += a + ref;
    }
    const flux = this.#count < 2 ? 0 : rise / (total + 2 * FLOOR_PER_BIN * bins);
    // Later frames compare against this one, max-filtered over ±1 bin.
    const older = this.#prevMax.pop()!;
    this.#prevMax.unshift(older);
    for (let k = 0; k < bins; k++) {
      const l = k > 0 ? mag[k - 1]! : 0, r = k + 1 < bins ? mag[k + 1]! : 0;
      older[k] = Math.max(l, mag[k]!, r);
    }
    this.#flux[this.#count % HISTORY] = flux;
    this.#count++;
    return flux;
  }

  /**
   * Whether frame `frameCount − 1 − ONSET_LOOKAHEAD_FRAMES` (just decided) is an onset. Call once
   * after each `analyze`. Returns that frame's index, or −1.
   */
  decide(): number {
    const j = this.#count - 1 - ONSET_LOOKAHEAD_FRAMES;
    if (j < 2) return -1;
    const f = this.#flux;
    const v = f[j % HISTORY]!;
    for (let i = Math.max(2, j - LOOKBACK_MAX); i <= j + ONSET_LOOKAHEAD_FRAMES; i++) {
      if (i !== j && f[i % HISTORY]! > v) return -1;
      if (i > j && f[i % HISTORY]! === v) return -1; // on a plateau the last frame wins
    }
    let mean = 0, m = 0;
    for (let i = Math.max(2, j - MEAN_FRAMES); i < j; i++) {
      mean += f[i % HISTORY]!;
      m++;
    }
    mean = m > 0 ? mean / m : 0;
    return v >= mean + this.threshold ? j : -1;
  }

  /** Flux of an analysed frame still in the history (for tests and tuning). */
  fluxOf(frameIndex: number): number {
    if (frameIndex < this.#count - HISTORY || frameIndex >= this.#count) return NaN;
    return this.#flux[frameIndex % HISTORY]!;
  }
}
