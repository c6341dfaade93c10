/**
 * Long-term average spectrum by Welch's method: Welch (1967), "The use of fast Fourier transform
 * for the estimation of power spectra", IEEE Trans. Audio Electroacoust. 15(2):70–73.
 * Segments of fftSize samples, hop hopSize (default 50 % overlap), periodic window, no detrending,
 * squared magnitudes averaged. Two scalings are reported:
 *  - levelsDb: amplitude scaling with the window's coherent gain removed, so a sine of peak
 *    amplitude A reads 20·log10(A) at its bin (a full-scale sine reads 0 dBFS);
 *  - psdDbPerHz: one-sided power spectral density in dB re 1/Hz (noise scaling; Σw² and fs).
 * Frames are taken wholly inside the signal; a signal shorter than one segment is zero-padded
 * into a single frame.
 */
import { gainToDb, powerToDb } from '../units.ts';
import { ParameterError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import { FftPlan } from './fft.ts';
import { makeWindow, type WindowName } from './windows.ts';

export interface WelchOptions {
  sampleRateHz: number;
  channelCount: number;
  fftSize?: number;
  hopSize?: number;
  window?: WindowName;
}

export interface WelchResult {
  frequenciesHz: Float64Array;
  /** Per channel: coherent-gain-corrected level, dB re full-scale sine peak. */
  levelsDb: Float64Array[];
  /** Per channel: one-sided PSD in dB re 1/Hz (full scale = 1). */
  psdDbPerHz: Float64Array[];
  /** Per channel: mean |X[k]|² (raw, unscaled). */
  meanPower: Float64Array[];
  frames: number;
  fftSize: number;
  binWidthHz: number;
}

export class WelchAccumulator {
  readonly fftSize: number;
  readonly hopSize: number;
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly #window: Float64Array;
  readonly #plan: FftPlan;
  readonly #bufs: Float64Array[];
  readonly #sums: Float64Array[];
  readonly #tmp: Float64Array;
  readonly #spec: Float64Array;
  #filled = 0;
  #frames = 0;

  constructor(options: WelchOptions) {
    this.fftSize = options.fftSize ?? 8192;
    this.hopSize = options.hopSize ?? this.fftSize / 2;
    if (!(options.sampleRateHz > 0)) throw new ParameterError('sampleRateHz must be > 0');
    if (!Number.isInteger(this.hopSize) || this.hopSize < 1 || this.hopSize > this.fftSize) {
      throw new ParameterError(`hopSize=${this.hopSize} must be a whole number from 1 to fftSize`);
    }
    this.sampleRateHz = options.sampleRateHz;
    this.channelCount = options.channelCount;
    this.#plan = new FftPlan(this.fftSize);
    this.#window = makeWindow(options.window ?? 'hann', this.fftSize);
    this.#bufs = Array.from({ length: this.channelCount }, () => new Float64Array(this.fftSize));
    this.#sums = Array.from({ length: this.channelCount }, () => new Float64Array(this.fftSize / 2 + 1));
    this.#tmp = new Float64Array(this.fftSize);
    this.#spec = this.#plan.createHalfSpectrum();
  }

  push(block: readonly Float64Array[]): void {
    const len = block[0]?.length ?? 0;
    let i = 0;
    while (i < len) {
      const take = Math.min(this.fftSize - this.#filled, len - i);
      for (let c = 0; c < this.channelCount; c++) this.#bufs[c]!.set(block[c]!.subarray(i, i + take), this.#filled);
      this.#filled += take;
      i += take;
      if (this.#filled === this.fftSize) {
        this.#accumulate();
        for (const b of this.#bufs) b.copyWithin(0, this.hopSize);
        this.#filled = this.fftSize - this.hopSize;
      }
    }
  }

  /**
   * Adds one whole frame (fftSize samples per channel) taken from anywhere in the signal, for
   * estimates from evenly spaced frames of long files. Does not disturb a stream being pushed.
   */
  addFrame(frame: readonly Float64Array[]): void {
    const saved = this.#bufs.map((b) => b.slice());
    for (let c = 0; c < this.channelCount; c++) {
      const b = this.#bufs[c]!;
      b.fill(0);
      b.set(frame[c]!.subarray(0, this.fftSize));
    }
    this.#accumulate();
    saved.forEach((b, c) => this.#bufs[c]!.set(b));
  }

  #accumulate(): void {
    const n = this.fftSize, w = this.#window, t = this.#tmp, s = this.#spec;
    for (let c = 0; c < this.channelCount; c++) {
      const b = this.#bufs[c]!, sum = this.#sums[c]!;
      for (let i = 0; i < n; i++) t[i] = b[i]! * w[i]!;
      this.#plan.realForward(t, s);
      for (let k = 0; k <= n / 2; k++) sum[k]! += s[2 * k]! * s[2 * k]! + s[2 * k + 1]! * s[2 * k + 1]!;
    }
    this.#frames++;
  }

  result(): WelchResult {
    if (this.#frames === 0 && this.#filled > 0) {
      // Shorter than one segment: one zero-padded frame.
      for (const b of this.#bufs) b.fill(0, this.#filled);
      this.#accumulate();
    }
    const n = this.fftSize, half = n / 2;
    const frames = Math.max(1, this.#frames);
    let sw = 0, sw2 = 0;
    for (const v of this.#window) {
      sw += v;
      sw2 += v * v;
    }
    const frequenciesHz = Float64Array.from({ length: half + 1 }, (_, k) => (k * this.sampleRateHz) / n);
    const levelsDb: Float64Array[] = [];
    const psdDbPerHz: Float64Array[] = [];
    const meanPower: Float64Array[] = [];
    for (const sum of this.#sums) {
      const mean = sum.map((v) => v / frames);
      meanPower.push(mean);
      levelsDb.push(
        mean.map((p, k) => {
          const edge = k === 0 || k === half;
          const amp = (edge ? 1 : 2) * Math.sqrt(p) / sw;
          return gainToDb(Math.max(amp, 1e-30));
        }),
      );
      psdDbPerHz.push(
        mean.map((p, k) => {
          const edge = k === 0 || k === half;
          return powerToDb(Math.max(((edge ? 1 : 2) * p) / (this.sampleRateHz * sw2), 1e-300));
        }),
      );
    }
    return { frequenciesHz, levelsDb, psdDbPerHz, meanPower, frames: this.#frames, fftSize: n, binWidthHz: this.sampleRateHz / n };
  }
}

/**
 * Welch spectrum of a source, streamed. With `maxFrames`, a source that would need more frames is
 * estimated from that many frames spaced evenly over it (each read on its own), so an hour of audio
 * costs a few thousand transforms — plenty for a long-term average.
 */
export async function welchSpectrum(
  source: AudioSource,
  options: Omit<WelchOptions, 'sampleRateHz' | 'channelCount'> & { startFrame?: number; endFrame?: number; maxFrames?: number } = {},
  onProgress?: (fraction: number) => void,
): Promise<WelchResult> {
  const acc = new WelchAccumulator({ ...options, sampleRateHz: source.sampleRateHz, channelCount: source.channelCount });
  const start = options.startFrame ?? 0;
  const end = options.endFrame ?? source.frames;
  const total = Math.max(1, end - start);
  const streamFrames = total >= acc.fftSize ? Math.floor((total - acc.fftSize) / acc.hopSize) + 1 : 1;
  const maxFrames = options.maxFrames ?? Infinity;
  if (streamFrames > maxFrames) {
    const span = total - acc.fftSize;
    for (let i = 0; i < maxFrames; i++) {
      const at = start + Math.round((i * span) / Math.max(1, maxFrames - 1));
      for await (const block of source.blocks({ startFrame: at, endFrame: at + acc.fftSize, blockFrames: acc.fftSize })) {
        acc.addFrame(block);
      }
      onProgress?.((i + 1) / maxFrames);
    }
    return acc.result();
  }
  let done = 0;
  for await (const block of source.blocks({ startFrame: start, endFrame: end })) {
    acc.push(block);
    done += block[0]!.length;
    onProgress?.(done / total);
  }
  return acc.result();
}
