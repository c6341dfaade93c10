/**
 * Averaged log power spectrum and its cepstrum, accumulated block by block.
 *
 * Why the average of logs: with y = h∗x, log|Y(ω)|² = log|X(ω)|² + log|H(ω)|² in every frame, so
 * the echo's ripple log|1 + g·e^{−jωτ}|² adds the same curve to every frame whatever the source
 * does, while the source's own log spectrum moves around and averages into a smooth curve. The
 * real cepstrum c(q) = IDFT(mean log|Y|²) then holds the echo as a peak at quefrency τ of height g
 * (log(1 + z) = z − z²/2 + …; Bogert, Healy & Tukey 1963; Childers, Skinner & Kemerait 1977;
 * Oppenheim & Schafer, DTSP, ch. 13).
 *
 * Frames: periodic Hann, `fftSize` samples, `hopSize` apart, taken wholly inside the input.
 * `frameStride` > 1 analyses only every stride-th frame (lean first passes over long files).
 * Frames of digital silence are skipped (their log spectrum is undefined).
 */
import { type FftPlan, sharedPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';
import { ParameterError } from '../errors.ts';

export interface LogSpectrumOptions {
  fftSize: number;
  hopSize?: number;
  frameStride?: number;
  /** Skip frames until this many input samples have gone by (warm-up of a filter upstream). */
  skipSamples?: number;
  /**
   * Also keep the averages of alternate frames (even / odd analysed frames). With 50 % overlap
   * alternate frames do not overlap, so the two halves are independent looks at the material:
   * an echo shows in both, a chance coincidence in the source usually in one.
   */
  keepHalves?: boolean;
  /**
   * Called with each frame's log spectrum (k = 0…N/2, natural-log power; the array is reused)
   * before it is added; returning false leaves the frame out.
   */
  accept?(frameLog: Float64Array): boolean;
  /**
   * Called with each frame's first sample (counted from the end of `skipSamples`) before it is
   * analysed; returning false leaves the frame out.
   */
  acceptAt?(frameStart: number): boolean;
  /**
   * Per-bin gate (natural-log power, k = 0…N/2): cells below it are left out of the average, so
   * bins are averaged over the frames where the signal stands above the noise there. Bins that
   * never do are filled by interpolation across frequency (see meanLogSpectrum).
   */
  gate?: Float64Array;
  /**
   * Compare with the gate not each cell's own level but the mean power of the `gateSmoothBins`
   * cells around it (default 1: the cell itself). Over one period of an echo's ripple the ripple
   * averages out, so cells are then chosen independently of the ripple being measured; chosen by
   * their own level, the cells where the ripple happens to be up pass more often and bias the fit.
   */
  gateSmoothBins?: number;
  /** Collect per-band cell levels for noiseGate() (bands of 1/512 of the spectrum). */
  collectLevels?: boolean;
}

/** Bands and level grid of the cell-level histograms (1 dB steps). */
const GATE_BANDS = 512, LEVEL_MIN_DB = -320, LEVEL_STEPS = 400;

export class LogSpectrumAccumulator {
  readonly fftSize: number;
  readonly hopSize: number;
  readonly frameStride: number;
  readonly #plan: FftPlan;
  #window: Float64Array;
  #buf: Float64Array;
  #frame: Float64Array;
  #spec: Float64Array;
  readonly #sum: Float64Array;
  /** Sums over the even- and odd-numbered analysed frames (two independent halves). */
  readonly #halves: [Float64Array, Float64Array] | null;
  readonly #halfFrames: [number, number] = [0, 0];
  readonly #accept: ((frameLog: Float64Array) => boolean) | null;
  readonly #acceptAt: ((frameStart: number) => boolean) | null;
  readonly #gate: Float64Array | null;
  readonly #counts: Float64Array | null;
  readonly #levels: Int32Array | null;
  readonly #frameLog: Float64Array;
  readonly #gateSmooth: number;
  /** Prefix sums of the frame's cell powers (for the smoothed gate level). */
  readonly #powerSums: Float64Array | null;
  #filled = 0;
  #frameIndex = 0;
  #frames = 0;
  #consumed = 0;
  /** Samples still to drop before the next analysed frame (non-overlapping strided mode). */
  #gap = 0;
  readonly #skip: number;

  constructor(options: LogSpectrumOptions) {
    const n = options.fftSize;
    this.fftSize = n;
    this.hopSize = options.hopSize ?? n / 2;
    this.frameStride = Math.max(1, Math.floor(options.frameStride ?? 1));
    if (!Number.isInteger(this.hopSize) || this.hopSize < 1 || this.hopSize > n) {
      throw new ParameterError(`hopSize=${this.hopSize} must be a whole number from 1 to ${n}`);
    }
    this.#plan = sharedPlan(n);
    this.#window = makeWindow('hann', n);
    this.#buf = new Float64Array(n);
    this.#frame = new Float64Array(n);
    this.#spec = new Float64Array(n + 2);
    this.#sum = new Float64Array(n / 2 + 1);
    this.#halves = options.keepHalves ? [new Float64Array(n / 2 + 1), new Float64Array(n / 2 + 1)] : null;
    this.#accept = options.accept ?? null;
    this.#acceptAt = options.acceptAt ?? null;
    this.#gate = options.gate ?? null;
    this.#counts = this.#gate ? new Float64Array(n / 2 + 1) : null;
    this.#levels = options.collectLevels ? new Int32Array(GATE_BANDS * LEVEL_STEPS) : null;
    this.#frameLog = new Float64Array(options.accept || options.gate || options.collectLevels ? n / 2 + 1 : 0);
    this.#skip = options.skipSamples ?? 0;
    this.#gateSmooth = Math.max(1, Math.round(options.gateSmoothBins ?? 1));
    this.#powerSums = this.#gate && this.#gateSmooth > 1 ? new Float64Array(n / 2 + 2) : null;
  }

  /**
   * Lets the frame buffers and the window go (4 arrays of N numbers: 34 MB at 2^20 points) once
   * the input has ended; the sums stay, so the means can still be read. push() after release()
   * is an error.
   */
  release(): void {
    const none = new Float64Array(0);
    this.#window = this.#buf = this.#frame = this.#spec = none;
    this.#released = true;
  }
  #released = false;

  /** Frames accumulated so far. */
  get frames(): number {
    return this.#frames;
  }

  push(samples: Float64Array): void {
    if (this.#released) throw new Error('LogSpectrumAccumulator: push() after release()');
    const n = this.fftSize, hop = this.hopSize, buf = this.#buf;
    let i = 0;
    if (this.#consumed < this.#skip) {
      const drop = Math.min(samples.length, this.#skip - this.#consumed);
      this.#consumed += drop;
      i = drop;
    }
    const step = this.frameStride * hop;
    if (step >= n) {
      // Analysed frames do not overlap: fill one frame, then jump to the next analysed start
      // without copying what lies between.
      while (i < samples.length) {
        if (this.#gap > 0) {
          const drop = Math.min(this.#gap, samples.length - i);
          this.#gap -= drop;
          i += drop;
          this.#consumed += drop;
          continue;
        }
        const take = Math.min(n - this.#filled, samples.length - i);
        buf.set(samples.subarray(i, i + take), this.#filled);
        this.#filled += take;
        i += take;
        this.#consumed += take;
        if (this.#filled === n) {
          this.#analyse();
          this.#frameIndex += this.frameStride;
          this.#filled = 0;
          this.#gap = step - n;
        }
      }
      return;
    }
    while (i < samples.length) {
      const take = Math.min(n - this.#filled, samples.length - i);
      buf.set(samples.subarray(i, i + take), this.#filled);
      this.#filled += take;
      i += take;
      this.#consumed += take;
      if (this.#filled === n) {
        if (this.#frameIndex % this.frameStride === 0) this.#analyse();
        this.#frameIndex++;
        buf.copyWithin(0, hop, n);
        this.#filled = n - hop;
      }
    }
  }


  #analyse(): void {
    const n = this.fftSize, w = this.#window, f = this.#frame, buf = this.#buf;
    if (this.#acceptAt && !this.#acceptAt(this.#consumed - this.#skip - n)) return;
    let energy = 0;
    for (let i = 0; i < n; i++) {
      const v = buf[i]! * w[i]!;
      f[i] = v;
      energy += v * v;
    }
    if (!(energy > 1e-24 * n)) return;
    this.#plan.realForward(f, this.#spec);
    const s = this.#spec, sum = this.#sum;
    const half = this.#halves ? this.#halves[this.#frames & 1] : null;
    // Floor 200 dB under the frame's mean bin power keeps log() finite in exact-zero bins.
    const floor = (energy / n) * 1e-20;
    if (this.#accept || this.#gate || this.#levels) {
      const fl = this.#frameLog;
      for (let k = 0; k <= n / 2; k++) fl[k] = Math.log(s[2 * k]! ** 2 + s[2 * k + 1]! ** 2 + floor);
      const levels = this.#levels;
      if (levels) {
        for (let k = 0; k <= n / 2; k++) {
          const band = Math.min(GATE_BANDS - 1, Math.floor((k * GATE_BANDS) / (n / 2 + 1)));
          const step = Math.max(0, Math.min(LEVEL_STEPS - 1, Math.floor(fl[k]! * (10 / Math.LN10) - LEVEL_MIN_DB)));
          levels[band * LEVEL_STEPS + step]!++;
        }
      }
      if (this.#accept && !this.#accept(fl)) return;
      const gate = this.#gate, counts = this.#counts, sums = this.#powerSums;
      const halfW = this.#gateSmooth >> 1, top = n / 2;
      if (sums) for (let k = 0; k <= top; k++) sums[k + 1] = sums[k]! + s[2 * k]! ** 2 + s[2 * k + 1]! ** 2 + floor;
      for (let k = 0; k <= n / 2; k++) {
        if (gate) {
          let level = fl[k]!;
          if (sums) {
            const a = Math.max(0, k - halfW), b = Math.min(top, k + halfW);
            level = Math.log((sums[b + 1]! - sums[a]!) / (b - a + 1));
          }
          if (level < gate[k]!) continue;
          counts![k]!++;
        }
        sum[k]! += fl[k]!;
        if (half) half[k]! += fl[k]!;
      }
    } else {
      for (let k = 0; k <= n / 2; k++) {
        const re = s[2 * k]!, im = s[2 * k + 1]!;
        const v = Math.log(re * re + im * im + floor);
        sum[k]! += v;
        if (half) half[k]! += v;
      }
    }
    this.#halfFrames[this.#frames & 1]++;
    this.#frames++;
  }

  /** Whether both halves (even and odd analysed frames) were kept and hold frames. */
  get hasBothHalves(): boolean {
    return this.#halves !== null && this.#halfFrames[0] > 0 && this.#halfFrames[1] > 0;
  }

  /** Mean log power of the even (0) or odd (1) analysed frames, or null if not kept / empty. */
  halfMeanLogSpectrum(which: 0 | 1, into?: Float64Array): Float64Array | null {
    const h = this.#halves?.[which];
    const m = this.#halfFrames[which];
    if (!h || m === 0) return null;
    const out = into && into.length >= h.length ? into.subarray(0, h.length) : new Float64Array(h.length);
    for (let k = 0; k < h.length; k++) out[k] = h[k]! / m;
    return out;
  }

  /** Mean natural-log power per bin, k = 0…N/2 (a copy). */
  meanLogSpectrum(): Float64Array {
    const out = new Float64Array(this.#sum.length);
    const counts = this.#counts;
    if (!counts) {
      const m = Math.max(1, this.#frames);
      for (let k = 0; k < out.length; k++) out[k] = this.#sum[k]! / m;
      return out;
    }
    // Gated: per-bin means over the cells that passed; bins with too few are filled by linear
    // interpolation between the nearest bins that have them (constant beyond the ends).
    const minCells = Math.max(1, Math.round(0.02 * this.#frames));
    const have: number[] = [];
    for (let k = 0; k < out.length; k++) {
      if (counts[k]! >= minCells) {
        out[k] = this.#sum[k]! / counts[k]!;
        have.push(k);
      }
    }
    if (have.length === 0) return out.fill(0);
    for (let k = 0; k < have[0]!; k++) out[k] = out[have[0]!]!;
    for (let i = 0; i + 1 < have.length; i++) {
      const a = have[i]!, b = have[i + 1]!;
      for (let k = a + 1; k < b; k++) out[k] = out[a]! + ((out[b]! - out[a]!) * (k - a)) / (b - a);
    }
    for (let k = have[have.length - 1]! + 1; k < out.length; k++) out[k] = out[have[have.length - 1]!]!;
    return out;
  }

  /**
   * A per-bin gate from the collected cell levels: in each band, the 20th percentile of the cell
   * levels plus `marginDb`. Where most cells are noise the 20th percentile sits about 6.5 dB under
   * the noise's mean power; with a 20 dB margin the gate is 13.5 dB above it and lets practically
   * no noise-only cell through. Null when levels were not collected or nothing was seen.
   */
  noiseGate(marginDb = 20): Float64Array | null {
    const levels = this.#levels;
    if (!levels || this.#frames === 0) return null;
    const nb = this.fftSize / 2 + 1;
    const gate = new Float64Array(nb);
    const bandGate = new Float64Array(GATE_BANDS);
    for (let b = 0; b < GATE_BANDS; b++) {
      let total = 0;
      for (let i = 0; i < LEVEL_STEPS; i++) total += levels[b * LEVEL_STEPS + i]!;
      let acc = 0, step = 0;
      for (; step < LEVEL_STEPS; step++) {
        acc += levels[b * LEVEL_STEPS + step]!;
        if (acc >= 0.2 * total) break;
      }
      bandGate[b] = ((step + LEVEL_MIN_DB + marginDb) * Math.LN10) / 10;
    }
    for (let k = 0; k < nb; k++) gate[k] = bandGate[Math.min(GATE_BANDS - 1, Math.floor((k * GATE_BANDS) / nb))]!;
    return gate;
  }
}

/**
 * Real cepstrum of a half spectrum of real log values (k = 0…N/2, mirrored to N bins):
 * c(q) = (1/N) Σ_k L_k e^{j2πkq/N}, q = 0…N−1. The log is of |X|², so a single echo of gain g
 * gives c(τ) ≈ g (twice the amplitude-cepstrum value g/2).
 */
export function cepstrumOf(
  logSpectrum: Float64Array,
  plan: FftPlan,
  scratch?: { into?: Float64Array; half?: Float64Array; work?: Float64Array },
): Float64Array {
  const n = plan.size;
  // Optional caller's arrays (at least N+2, N and N numbers): the same numbers, no new ones.
  const half = scratch?.half && scratch.half.length >= n + 2 ? scratch.half.subarray(0, n + 2) : plan.createHalfSpectrum();
  for (let k = 0; k <= n / 2; k++) {
    half[2 * k] = logSpectrum[k]!;
    half[2 * k + 1] = 0;
  }
  const c = scratch?.into && scratch.into.length >= n ? scratch.into.subarray(0, n) : new Float64Array(n);
  plan.realInverse(half, c, scratch?.work && scratch.work.length >= n ? scratch.work : undefined);
  return c;
}
