/**
 * The resampler's kernel: its design figures per quality and the continuous kernel h(u), and the
 * cubic (Farrow) segments the resampler tabulates it in. See ./resample.ts for how they are used.
 *
 * Design (in cycles per sample of the lower rate):
 *   passband edge 0.45, stopband edge 0.50 (no component anywhere above the lower Nyquist
 *   survives: alias and image rejection hold across the whole band, not only in the passband);
 *   cutoff fc = 0.475; Kaiser β and half-width from the attenuation A by Kaiser's formulas
 *   (Kaiser, "Nonrecursive digital filter design using the I0-sinh window function", 1974).
 *   - 'archive': A = 147 dB design (measured ≥ 140 dB; passband ripple ≈ 1e-6 dB);
 *   - 'draft':   A = 95 dB design (measured ≥ 90 dB), about 60 % of the taps.
 */
import { ParameterError } from '../errors.ts';
import { kaiserSinc } from './kaiser-sinc.ts';
import { kaiserBeta } from './windows.ts';

export type ResampleQuality = 'archive' | 'draft';

/** Published design figures of one quality (cycles per sample of the lower rate). */
export interface KernelDesign {
  readonly quality: ResampleQuality;
  readonly passbandEdge: number;
  readonly stopbandEdge: number;
  readonly cutoff: number;
  /** Kaiser design attenuation A in dB. */
  readonly designAttenuationDb: number;
  readonly beta: number;
  /** Kernel half-width in samples of the lower rate. */
  readonly halfWidth: number;
  /** Farrow segments per input sample. */
  readonly segmentsPerSample: number;
}

/** Smallest and largest ratio accepted (factor 0.25–4 combined with rate changes up to 16:1). */
export const MIN_RATIO = 1 / 64;
export const MAX_RATIO = 64;

const PASS = 0.45;
const STOP = 0.5;

export function kernelDesign(quality: ResampleQuality): KernelDesign {
  if (quality !== 'archive' && quality !== 'draft') {
    throw new ParameterError(`quality "${String(quality)}" must be archive or draft`);
  }
  const a = quality === 'archive' ? 147 : 95;
  const dw = 2 * Math.PI * (STOP - PASS);
  // Kaiser: length M + 1 with M = (A − 7.95)/(2.285·Δω); half-width M/2.
  const halfWidth = (a - 7.95) / (2.285 * dw) / 2;
  return {
    quality,
    passbandEdge: PASS,
    stopbandEdge: STOP,
    cutoff: (PASS + STOP) / 2,
    designAttenuationDb: a,
    beta: kaiserBeta(a),
    halfWidth,
    segmentsPerSample: quality === 'archive' ? 128 : 64,
  };
}

/**
 * The continuous kernel h(u) (u in samples of the lower rate): 2fc·sinc(2fc·u)·w(u), with a Kaiser
 * window w of half-width W. ∫h du = 1 (unity gain in the passband).
 */
export function kernelValue(d: KernelDesign, u: number): number {
  return kaiserSinc(u, d.cutoff, d.halfWidth, d.beta);
}

/** Monomial coefficients of the cubic through (0,y0), (1/3,y1), (2/3,y2), (1,y3). */
export function cubicThrough(y0: number, y1: number, y2: number, y3: number, out: Float64Array, at: number): void {
  // Newton divided differences on nodes 0, 1/3, 2/3, 1 (spacing h = 1/3).
  const d1 = (y1 - y0) * 3;
  const d2 = (y2 - y1) * 3;
  const d3 = (y3 - y2) * 3;
  const e1 = ((d2 - d1) * 3) / 2;
  const e2 = ((d3 - d2) * 3) / 2;
  const f1 = e2 - e1; // third divided difference (÷ (1 − 0) = 1)
  // P(μ) = y0 + d1·μ + e1·μ(μ − 1/3) + f1·μ(μ − 1/3)(μ − 2/3)
  out[at] = y0;
  out[at + 1] = d1 - e1 / 3 + (f1 * 2) / 9;
  out[at + 2] = e1 - f1;
  out[at + 3] = f1;
}
