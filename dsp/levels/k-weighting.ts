/**
 * K-weighting of ITU-R BS.1770-4 (10/2015), Annex 1: a high-frequency shelf (about +4 dB above
 * 2 kHz, modelling the head) followed by a second-order high-pass (the "RLB" curve).
 *
 * The standard tabulates the coefficients at 48 kHz only. For any other rate the two analogue
 * prototypes are re-derived by the bilinear transform from their parameters (shelf f0, gain, Q;
 * high-pass f0, Q). These parameter values are the ones published with libebur128 (ebur128.c),
 * which reproduce the 48 kHz table to 8 digits; test/levels checks that.
 */
import { biquadResponse, type BiquadCoefficients } from '../core/biquad.ts';

/** Stage 1 (shelf) parameters. */
const SHELF_F0_HZ = 1681.974450955533;
const SHELF_GAIN_DB = 3.999843853973347;
const SHELF_Q = 0.7071752369554196;
const SHELF_VB_EXPONENT = 0.4996667741545416;
/** Stage 2 (high-pass) parameters. */
const HIGHPASS_F0_HZ = 38.13547087602444;
const HIGHPASS_Q = 0.5003270373238773;

/** The two K-weighting stages at sample rate `sampleRateHz`. */
export function kWeightingCoefficients(sampleRateHz: number): [BiquadCoefficients, BiquadCoefficients] {
  // Stage 1: high shelf. With K = tan(π f0 / fs), Vh the linear shelf gain and Vb = Vh^e:
  // b = [Vh + Vb K/Q + K², 2(K² − Vh), Vh − Vb K/Q + K²] / a0, a = [1, 2(K² − 1), 1 − K/Q + K²] / a0.
  let k = Math.tan((Math.PI * SHELF_F0_HZ) / sampleRateHz);
  const vh = Math.pow(10, SHELF_GAIN_DB / 20);
  const vb = Math.pow(vh, SHELF_VB_EXPONENT);
  let a0 = 1 + k / SHELF_Q + k * k;
  const shelf: BiquadCoefficients = {
    b0: (vh + (vb * k) / SHELF_Q + k * k) / a0,
    b1: (2 * (k * k - vh)) / a0,
    b2: (vh - (vb * k) / SHELF_Q + k * k) / a0,
    a1: (2 * (k * k - 1)) / a0,
    a2: (1 - k / SHELF_Q + k * k) / a0,
  };
  // Stage 2: high-pass; the standard keeps the numerator at [1, −2, 1] (no gain normalisation).
  k = Math.tan((Math.PI * HIGHPASS_F0_HZ) / sampleRateHz);
  a0 = 1 + k / HIGHPASS_Q + k * k;
  const highpass: BiquadCoefficients = { b0: 1, b1: -2, b2: 1, a1: (2 * (k * k - 1)) / a0, a2: (1 - k / HIGHPASS_Q + k * k) / a0 };
  return [shelf, highpass];
}

/** Gain of the complete K-weighting in dB at one frequency (+0.691 dB at 997 Hz at 48 kHz). */
export function kWeightingGainDb(frequencyHz: number, sampleRateHz: number): number {
  const [s, h] = kWeightingCoefficients(sampleRateHz);
  return biquadResponse(s, frequencyHz, sampleRateHz).magnitudeDb + biquadResponse(h, frequencyHz, sampleRateHz).magnitudeDb;
}

/**
 * Streaming K-weighting of one channel: both stages fused in one loop (transposed direct form II,
 * float64 state), returning Σ y² over the samples given so callers can integrate energy without
 * keeping the filtered signal.
 */
export class KWeightingFilter {
  readonly #b0: number; readonly #b1: number; readonly #b2: number; readonly #a1: number; readonly #a2: number;
  readonly #d1: number; readonly #d2: number;
  #s1 = 0; #s2 = 0; #t1 = 0; #t2 = 0;

  constructor(sampleRateHz: number) {
    const [shelf, hp] = kWeightingCoefficients(sampleRateHz);
    this.#b0 = shelf.b0; this.#b1 = shelf.b1; this.#b2 = shelf.b2;
    this.#a1 = shelf.a1; this.#a2 = shelf.a2;
    this.#d1 = hp.a1; this.#d2 = hp.a2;
  }

  /** Filters x[from, to) and returns the sum of the squared K-weighted samples. */
  energy(x: Float64Array, from: number, to: number): number {
    const b0 = this.#b0, b1 = this.#b1, b2 = this.#b2, a1 = this.#a1, a2 = this.#a2, d1 = this.#d1, d2 = this.#d2;
    let s1 = this.#s1, s2 = this.#s2, t1 = this.#t1, t2 = this.#t2;
    let sum = 0;
    for (let i = from; i < to; i++) {
      const v = x[i]!;
      const u = b0 * v + s1; // shelf
      s1 = b1 * v - a1 * u + s2;
      s2 = b2 * v - a2 * u;
      const y = u + t1; // high-pass, numerator [1, −2, 1]
      t1 = -2 * u - d1 * y + t2;
      t2 = u - d2 * y;
      sum += y * y;
    }
    this.#s1 = s1; this.#s2 = s2; this.#t1 = t1; this.#t2 = t2;
    return sum;
  }
}
