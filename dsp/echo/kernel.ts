/**
 * The reflection as a filter: y[n] = x[n] + Σᵢ taps[i]·x[n − offset − i], offset ≥ 1.
 *
 * A single reflection y(t) = x(t) + g·x(t − τ) at a fractional delay τ (in samples) is the
 * special case taps = g·(windowed-sinc fractional delay by τ), from dsp/core/fractional-delay.ts
 * (Laakso et al. 1996). A frequency-dependent reflection (a wall that absorbs highs) is the same
 * shape with free taps. Keeping both in one form lets the detector, the canceller and the model
 * fit share one code path.
 */
import { ParameterError } from '../errors.ts';
import { type FftPlan, nextPowerOfTwo, sharedPlan } from '../core/fft.ts';
import { fractionalDelayKernel } from '../core/fractional-delay.ts';

export interface EchoKernel {
  /** Lag of taps[0] in samples (≥ 1 so the inverse recursion is causal). */
  readonly offset: number;
  readonly taps: Float64Array;
}

/** Default half-length of the fractional-delay kernel (32 taps). */
export const DEFAULT_HALF_TAPS = 16;
/**
 * Kaiser attenuation setting for the kernel's window; with 32 taps, 70 dB keeps the interpolation
 * error below −68 dB up to 0.8 of Nyquist (−28 dB at 0.9); see test/echo/kernel.test.ts.
 */
export const KERNEL_ATTENUATION_DB = 70;

/**
 * Kernel of a single reflection of gain `gain` at `delaySamples` (> 0). The half-length shrinks
 * for very short delays so that the first tap stays at lag ≥ 1.
 */
export function singleEchoKernel(delaySamples: number, gain: number, halfTaps = DEFAULT_HALF_TAPS): EchoKernel {
  if (!(delaySamples >= 1)) throw new ParameterError(`echo delay ${delaySamples} samples must be at least 1 sample`);
  const half = Math.max(1, Math.min(halfTaps, Math.floor(delaySamples)));
  const fd = fractionalDelayKernel({ delaySamples, halfTaps: half, attenuationDb: KERNEL_ATTENUATION_DB });
  let offset = fd.offset;
  let taps = fd.kernel;
  // Integer delays come back as a unit tap; trim to the exact single tap.
  if (Number.isInteger(delaySamples)) {
    offset = delaySamples;
    taps = new Float64Array([1]);
  }
  if (offset < 1) {
    // Drop leading taps at lag ≤ 0 (only possible for delays under one half-length).
    const cut = 1 - offset;
    taps = taps.slice(cut);
    offset = 1;
  }
  const out = new Float64Array(taps.length);
  for (let i = 0; i < taps.length; i++) out[i] = gain * taps[i]!;
  return { offset, taps: out };
}

/** Largest lag the kernel reaches. */
export const kernelMaxLag = (k: EchoKernel): number => k.offset + k.taps.length - 1;

/** Sum of taps·lag / sum of taps: the kernel's centre of gravity in samples (its delay for a lowpass-ish reflection). */
export function kernelCentroid(k: EchoKernel): number {
  let s = 0, sl = 0;
  for (let i = 0; i < k.taps.length; i++) {
    s += k.taps[i]!;
    sl += k.taps[i]! * (k.offset + i);
  }
  return s !== 0 ? sl / s : k.offset;
}

/**
 * Frequency response K(ω) = Σ taps[i]·e^{−jω(offset+i)} at bins ω_k = 2πk/n, k = 0…n/2, written
 * interleaved into `out` (n + 2 numbers). n must be a power of two above the kernel's last lag.
 */
export function kernelResponse(k: EchoKernel, n: number, plan: FftPlan = sharedPlan(n), out = new Float64Array(n + 2)): Float64Array {
  if (kernelMaxLag(k) >= n) throw new ParameterError(`kernel reaches lag ${kernelMaxLag(k)}, beyond the transform size ${n}`);
  const buf = new Float64Array(n);
  for (let i = 0; i < k.taps.length; i++) buf[k.offset + i] = k.taps[i]!;
  plan.realForward(buf, out);
  return out;
}

/** max over ω of |K(ω)|, on a grid fine enough for kernels of this length. */
export function kernelPeakGain(k: EchoKernel): number {
  const n = Math.max(1024, nextPowerOfTwo(8 * (kernelMaxLag(k) + 1)));
  const r = kernelResponse(k, n);
  let m = 0;
  for (let i = 0; i <= n / 2; i++) m = Math.max(m, Math.hypot(r[2 * i]!, r[2 * i + 1]!));
  return m;
}

/** The kernel with every tap multiplied by `factor`. */
export const scaleKernel = (k: EchoKernel, factor: number): EchoKernel => ({
  offset: k.offset,
  taps: k.taps.map((t) => t * factor),
});
