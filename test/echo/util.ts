/** Small measurement helpers for the echo tests. */
import { sharedPlan } from '../../dsp/core/fft.ts';
import { makeWindow } from '../../dsp/core/windows.ts';

/**
 * Levels (dB) of the voice band in third-octave bands from 100 Hz to 8 kHz (centres 10^(k/10)·1 kHz,
 * edges ×2^(±1/6); common practice, IEC 61260 band layout), from a Welch power average with
 * Hann frames of 8192 samples, 50 % overlap.
 */
export function bandLevelsDb(x: Float64Array, fs: number): number[] {
  const n = 8192;
  const plan = sharedPlan(n);
  const w = makeWindow('hann', n);
  const frame = new Float64Array(n), spec = new Float64Array(n + 2), acc = new Float64Array(n / 2 + 1);
  for (let s = 0; s + n <= x.length; s += n / 2) {
    for (let i = 0; i < n; i++) frame[i] = x[s + i]! * w[i]!;
    plan.realForward(frame, spec);
    for (let k = 0; k <= n / 2; k++) acc[k]! += spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2;
  }
  const out: number[] = [];
  for (let b = -10; b <= 9; b++) {
    const fc = 1000 * Math.pow(10, b / 10);
    const lo = Math.ceil((fc * Math.pow(2, -1 / 6) * n) / fs), hi = Math.floor((fc * Math.pow(2, 1 / 6) * n) / fs);
    let e = 0;
    for (let k = lo; k <= hi; k++) e += acc[k]!;
    out.push(10 * Math.log10(e + 1e-300));
  }
  return out;
}

/** 10·log10(‖a − ref‖² / ‖b − ref‖²) over [from, to). */
export function residualRatioDb(a: Float64Array, b: Float64Array, ref: Float64Array, from = 0, to = ref.length): number {
  let num = 0, den = 0;
  for (let i = from; i < to; i++) {
    num += (a[i]! - ref[i]!) ** 2;
    den += (b[i]! - ref[i]!) ** 2;
  }
  return 10 * Math.log10(num / den);
}
