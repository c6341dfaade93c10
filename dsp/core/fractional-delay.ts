/**
 * Fractional delay by a Kaiser-windowed sinc: h(t) = sinc(t − D)·w_K(t − D), the ideal
 * band-limited interpolator truncated and windowed. Laakso, Välimäki, Karjalainen & Laine (1996),
 * "Splitting the unit delay", IEEE Signal Processing Magazine 13(1):30–60 (windowed-sinc FIR
 * design); Kaiser window per Kaiser (1974).
 */
import { ParameterError } from '../errors.ts';
import { FirFilter } from './fir.ts';
import { kaiserSinc } from './kaiser-sinc.ts';
import { besselI0, kaiserBeta } from './windows.ts';

export interface FractionalDelayOptions {
  /** Delay in samples, any real value (negative advances the signal). */
  delaySamples: number;
  /** Half the number of taps (taps = 2·halfTaps). Default 32. */
  halfTaps?: number;
  /** Kaiser stopband attenuation in dB that sets β. Default 100. */
  attenuationDb?: number;
}

export interface FractionalDelayKernel {
  /** Taps h[i] for i = 0…2·halfTaps−1. */
  kernel: Float64Array;
  /** The filter is y[n] = Σ h[i]·x[n − (i + offset)]. */
  offset: number;
}

export function fractionalDelayKernel(options: FractionalDelayOptions): FractionalDelayKernel {
  const d = options.delaySamples;
  const half = options.halfTaps ?? 32;
  if (!Number.isFinite(d)) throw new ParameterError(`delay ${d} samples is not a finite number`);
  if (!Number.isInteger(half) || half < 1) throw new ParameterError(`halfTaps=${half} must be a whole number ≥ 1`);
  const beta = kaiserBeta(options.attenuationDb ?? 100);
  const di = Math.floor(d);
  const frac = d - di;
  const taps = 2 * half;
  const kernel = new Float64Array(taps);
  const i0b = besselI0(beta);
  // Tap i sits at lag m = i + offset, with offset = di − half + 1, so lags span di−half+1 … di+half.
  const offset = di - half + 1;
  // t = distance of tap i from the ideal sample position; the window spans ±half.
  for (let i = 0; i < taps; i++) kernel[i] = kaiserSinc(i + offset - d, 0.5, half, beta, i0b);
  if (frac === 0) {
    // An integer delay is exact: a single unit tap.
    kernel.fill(0);
    kernel[half - 1] = 1;
  }
  return { kernel, offset };
}

/** Streaming fractional delay for one channel: y[n] = x(n − delaySamples), output aligned with input. */
export class FractionalDelay extends FirFilter {
  readonly delaySamples: number;
  constructor(options: FractionalDelayOptions) {
    const { kernel, offset } = fractionalDelayKernel(options);
    super(kernel, offset);
    this.delaySamples = options.delaySamples;
  }
}
