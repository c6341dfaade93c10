/**
 * Streaming decimation by an integer factor D with the FIR equivalent of a cascaded
 * integrator–comb (CIC) decimator of order R: R length-D moving averages in cascade (a B-spline
 * kernel of R(D − 1) + 1 taps), evaluated only at the kept samples and as an ordinary FIR, so
 * nothing accumulates in floating point over hour-long streams. Its response is
 *   H(f) = [sin(πfD/fs) / (D·sin(πf/fs))]^R
 * (Hogenauer 1981, "An economical class of digital filters for decimation and interpolation",
 * IEEE TASSP 29(2):155–162): unity at DC, zeros on every multiple of the new sample rate — where
 * aliases would land near 0 Hz — so the bands that fold onto low frequencies are attenuated by
 * 30–40 dB or more for R = 3 and 50–65 dB for R = 5. It droops in the passband (−0.9·R dB at a
 * quarter of the new rate): fine for the correlation searches and narrowband tracks it feeds, not
 * a resampler for listening. Cost: R multiply-adds per input sample.
 */
import { createSimdKernels, type SimdKernels } from './simd-kernels.ts';
import { ParameterError } from '../errors.ts';

/** Input samples moved into the history per step (the output does not depend on it). */
const CHUNK = 8192;

/** Normalised (Σ = 1) taps of boxcar(D)^{*R}: length R·(D − 1) + 1, exactly symmetric. */
export function boxcarPowerKernel(factor: number, order: number): Float64Array {
  if (!Number.isInteger(factor) || factor < 1) throw new ParameterError(`decimation factor ${factor} must be a whole number ≥ 1`);
  if (!Number.isInteger(order) || order < 1) throw new ParameterError(`decimator order ${order} must be a whole number ≥ 1`);
  // Integer counts first (exact), one division at the end.
  let h = new Float64Array([1]);
  for (let r = 0; r < order; r++) {
    const g = new Float64Array(h.length + factor - 1);
    for (let i = 0; i < h.length; i++) for (let j = 0; j < factor; j++) g[i + j]! += h[i]!;
    h = g;
  }
  let s = 0;
  for (const v of h) s += v;
  for (let i = 0; i < h.length; i++) h[i]! /= s;
  return h;
}

/**
 * y[m] = Σ_k h[k]·x[m·D − k] (input before sample 0 is zero). Output m is centred on input sample
 * m·D − delaySamples, delaySamples = (taps − 1)/2.
 */
export class Decimator {
  readonly factor: number;
  /** The FIR taps, boxcarPowerKernel(factor, order). */
  readonly kernel: Float64Array;
  /** Group delay in input samples (the output lags the input by this much). */
  readonly delaySamples: number;
  /** The taps used by the dot products: an even count, a leading zero tap when padded. */
  readonly #taps: Float64Array;
  readonly #hist: Float64Array;
  #histLen: number;
  /** Offset from the end of the history to the newest sample of the next output. */
  #phase = 0;
  /** SIMD dot products over a memory holding [taps | out (2 doubles) | history]. */
  readonly #simd: SimdKernels | null;
  #histByte = 0;

  /**
   * `order` moving averages in cascade (3 by default; 5 folds 60 dB less back into the passband).
   * `engine` 'js' forces the plain loop (tests compare the two).
   */
  constructor(factor: number, order = 3, engine: 'auto' | 'js' = 'auto') {
    this.factor = factor;
    this.kernel = boxcarPowerKernel(factor, order);
    this.delaySamples = (this.kernel.length - 1) / 2;
    let taps = this.kernel;
    // An even tap count for the two-lane dot product: a leading zero tap when odd.
    if (taps.length % 2 === 1) {
      taps = new Float64Array(taps.length + 1);
      taps.set(this.kernel, 1);
    }
    this.#taps = taps;
    const nt = taps.length;
    // History: nt − 1 kept samples and a chunk, sized so small decimators fit one 64 KiB page.
    const histLength = nt - 1 + Math.max(CHUNK / 2, CHUNK - 2 * nt - 1);
    this.#simd = engine === 'js' || factor === 1 ? null : createSimdKernels(8 * (nt + 2 + histLength));
    if (this.#simd) {
      this.#simd.f64.set(taps, 0);
      this.#histByte = 8 * (nt + 2);
      this.#hist = this.#simd.f64.subarray(this.#histByte / 8, this.#histByte / 8 + histLength);
    } else {
      this.#hist = new Float64Array(histLength);
    }
    this.#histLen = nt - 1;
  }

  /** Decimates a block; returns the new output samples. */
  process(input: Float64Array): Float64Array {
    const f = this.factor;
    if (f === 1) return Float64Array.from(input);
    const taps = this.#taps, nt = taps.length;
    const outCount = Math.max(0, Math.ceil((input.length - this.#phase) / f));
    const out = new Float64Array(outCount);
    let o = 0;
    let i = 0;
    const h = this.#hist;
    const simd = this.#simd;
    while (i < input.length) {
      // Move a chunk of input into the history buffer.
      const take = Math.min(h.length - this.#histLen, input.length - i);
      h.set(input.subarray(i, i + take), this.#histLen);
      const startLen = this.#histLen;
      this.#histLen += take;
      // Outputs at stream positions whose sample is now in the buffer.
      let p = startLen + this.#phase; // buffer index of the newest sample of the next output
      if (simd) {
        const outByte = 8 * nt, mem = simd.f64, histByte = this.#histByte;
        while (p < this.#histLen) {
          simd.dot1(0, histByte + 8 * (p - (nt - 1)), nt, outByte);
          out[o++] = mem[nt]!;
          p += f;
        }
      } else {
        while (p < this.#histLen) {
          let acc = 0;
          const base = p - (nt - 1);
          for (let j = 0; j < nt; j++) acc += taps[j]! * h[base + j]!;
          out[o++] = acc;
          p += f;
        }
      }
      this.#phase = p - this.#histLen;
      // Keep the last nt − 1 samples.
      h.copyWithin(0, this.#histLen - (nt - 1), this.#histLen);
      this.#histLen = nt - 1;
      i += take;
    }
    return o === out.length ? out : out.slice(0, o);
  }
}
