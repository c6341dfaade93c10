/**
 * The spectrum of what is always there: per frequency bin, a low quantile (the 20th percentile)
 * of the power over short frames through the file.
 *
 * Mains hum is present at one level all the time, through pauses and under the programme; a
 * note's partial starts with the playing, decays and stops (common practice). In the long-window
 * average a loud held note buries a −50 dB hum line a few hertz away (its partials are 30–40 dB
 * stronger, and their leakage lifts the local floor); in the level that each bin reaches in at
 * least 80 % of the frames, the hum keeps its full level while a partial counts only with what
 * is left of it late in its decay or between notes. Candidates ranked on this spectrum are
 * measured alongside those of the plain and quiet-weighted spectra (./hum.ts).
 *
 * Streaming: frames of `frameLength` samples (Hann, zero-padded ×2, hop half a frame) of the
 * decimated stream; each bin's frame power goes into a histogram of 0.5-dB cells, so memory is
 * fixed (bins × cells counters, about 3 MB) whatever the file's length.
 */
import { FftPlan } from '../core/fft.ts';

const QUANTILE = 0.2;
const CELL_DB = 0.5;
const DB_LO = -160;
const DB_HI = 80;
const CELLS = Math.round((DB_HI - DB_LO) / CELL_DB);
/** Longest frame (seconds): 0.5 Hz resolution, steps of 1 s. */
const MAX_FRAME_SECONDS = 2.1;

/** Frame length (power of two) for a stream of `length` samples: ≤ 2.1 s, and at least 5 frames. */
export function steadyFrameLength(sampleRateHz: number, length: number): number {
  let L = 64;
  while (2 * L <= MAX_FRAME_SECONDS * sampleRateHz && 2 * L * 3 <= length) L *= 2;
  return L;
}

export class SteadySpectrum {
  readonly frameLength: number;
  readonly fftSize: number;
  readonly binWidthHz: number;
  /** Bins kept (0 … bins − 1). */
  readonly bins: number;
  readonly #plan: FftPlan;
  readonly #window: Float64Array;
  readonly #buf: Float64Array;
  readonly #frame: Float64Array;
  readonly #spec: Float64Array;
  readonly #hist: Uint16Array;
  readonly #sum: Float64Array;
  #filled = 0;
  #frames = 0;

  /** `maxHz`: the highest frequency of interest. */
  constructor(sampleRateHz: number, totalSamples: number, maxHz: number) {
    this.frameLength = steadyFrameLength(sampleRateHz, totalSamples);
    this.fftSize = 2 * this.frameLength;
    this.binWidthHz = sampleRateHz / this.fftSize;
    this.bins = Math.min(this.fftSize / 2 + 1, Math.ceil(maxHz / this.binWidthHz) + 4);
    this.#plan = new FftPlan(this.fftSize);
    const L = this.frameLength;
    this.#window = new Float64Array(L);
    for (let i = 0; i < L; i++) this.#window[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / L);
    this.#buf = new Float64Array(L);
    this.#frame = new Float64Array(this.fftSize);
    this.#spec = this.#plan.createHalfSpectrum();
    this.#hist = new Uint16Array(this.bins * CELLS);
    this.#sum = new Float64Array(this.bins);
  }

  get frames(): number {
    return this.#frames;
  }

  push(y: Float64Array): void {
    const L = this.frameLength, hop = L >> 1;
    let i = 0;
    while (i < y.length) {
      const take = Math.min(L - this.#filled, y.length - i);
      this.#buf.set(y.subarray(i, i + take), this.#filled);
      this.#filled += take;
      i += take;
      if (this.#filled === L) {
        this.#accumulate();
        this.#buf.copyWithin(0, hop);
        this.#filled = L - hop;
      }
    }
  }

  #accumulate(): void {
    // Counters are 16-bit: past 65535 frames (18 hours at 1 s steps) further frames are not counted.
    if (this.#frames >= 65535) return;
    const L = this.frameLength, f = this.#frame, w = this.#window, b = this.#buf, s = this.#spec;
    for (let i = 0; i < L; i++) f[i] = b[i]! * w[i]!;
    f.fill(0, L);
    this.#plan.realForward(f, s);
    const h = this.#hist;
    for (let k = 0; k < this.bins; k++) {
      const p = s[2 * k]! * s[2 * k]! + s[2 * k + 1]! * s[2 * k + 1]!;
      this.#sum[k]! += p;
      const db = p > 0 ? 10 * Math.log10(p) : DB_LO;
      const c = Math.max(0, Math.min(CELLS - 1, Math.floor((db - DB_LO) / CELL_DB)));
      h[k * CELLS + c]!++;
    }
    this.#frames++;
  }

  /**
   * Per bin, the power reached in at least 80 % of the frames (`low`: the 20th percentile, read
   * within its 0.5-dB cell by linear interpolation of the counts) and the mean power over the
   * frames (`mean`); null with fewer than 5 frames. A line at one level has low/mean near 1 (a
   * little less in noise); a partial that decays by 10 dB through the file about 0.35.
   */
  result(): { low: Float64Array; mean: Float64Array } | null {
    const n = this.#frames;
    if (n < 5) return null;
    const out = new Float64Array(this.bins);
    const mean = Float64Array.from(this.#sum, (v) => v / n);
    const target = QUANTILE * n;
    const h = this.#hist;
    for (let k = 0; k < this.bins; k++) {
      let seen = 0, c = 0;
      for (; c < CELLS; c++) {
        const m = h[k * CELLS + c]!;
        if (seen + m >= target) break;
        seen += m;
      }
      const m = Math.max(1, h[k * CELLS + Math.min(c, CELLS - 1)]!);
      const frac = Math.max(0, Math.min(1, (target - seen) / m));
      out[k] = Math.min(mean[k]!, Math.pow(10, (DB_LO + (c + frac) * CELL_DB) / 10));
    }
    return { low: out, mean };
  }
}
