/**
 * The one Kaiser-windowed-sinc kernel designer: the ideal low-pass impulse response truncated by a
 * Kaiser window (Kaiser 1974; Oppenheim & Schafer, Discrete-Time Signal Processing, the
 * Kaiser-window design method),
 *   h(t) = 2fc·sinc(2fc·t)·w(t/W),  w(r) = I0(β·√(1 − r²)) / I0(β) for |r| ≤ 1, 0 outside,
 * with fc the cutoff in cycles per sample and W the half-width in samples. fc = ½ is the
 * band-limited interpolator sinc(t)·w (fractional delay, true-peak oversampling); smaller fc a
 * low-pass (decimation filters, the resampler's prototype). Continuous in t, so the same function
 * gives integer-spaced taps, fractional phases and Farrow tables.
 */
import { besselI0, kaiserBeta, kaiserLength } from './windows.ts';

/**
 * h(t) above. `i0Beta` = I0(β) may be passed when many values share one β (it is the same
 * number either way).
 */
export function kaiserSinc(t: number, cutoff: number, halfWidth: number, beta: number, i0Beta = besselI0(beta)): number {
  const at = Math.abs(t);
  if (at > halfWidth) return 0;
  const r = at / halfWidth;
  const w = besselI0(beta * Math.sqrt(Math.max(0, 1 - r * r))) / i0Beta;
  const x = 2 * cutoff * at;
  const sinc = x < 1e-9 ? 1 : Math.sin(Math.PI * x) / (Math.PI * x);
  return 2 * cutoff * sinc * w;
}

/**
 * Linear-phase low-pass FIR of odd `length` (taps h(i − (length − 1)/2), window spanning the whole
 * filter), scaled to unity gain at DC.
 */
export function kaiserLowpassTaps(length: number, cutoff: number, beta: number): Float64Array {
  const h = new Float64Array(length);
  if (length === 1) {
    h[0] = 1;
    return h;
  }
  const mid = (length - 1) / 2;
  const i0b = besselI0(beta);
  let sum = 0;
  for (let i = 0; i < length; i++) {
    h[i] = kaiserSinc(i - mid, cutoff, mid, beta, i0b);
    sum += h[i]!;
  }
  for (let i = 0; i < length; i++) h[i]! /= sum;
  return h;
}

/**
 * Kaiser-design low-pass from its specification: pass band to `passHz`, at least `stopDb` of
 * attenuation from `stopHz`, cutoff midway; the length from Kaiser's formula, made odd.
 */
export function kaiserLowpass(sampleRateHz: number, passHz: number, stopHz: number, stopDb: number): Float64Array {
  let n = kaiserLength(stopDb, (2 * Math.PI * (stopHz - passHz)) / sampleRateHz);
  if (n % 2 === 0) n++;
  return kaiserLowpassTaps(n, (passHz + stopHz) / 2 / sampleRateHz, kaiserBeta(stopDb));
}
