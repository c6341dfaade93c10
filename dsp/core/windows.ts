/**
 * Analysis windows and Kaiser filter design.
 * Window definitions and figures (sidelobes, coherent gain, ENBW): Harris (1978),
 * "On the use of windows for harmonic analysis with the DFT", Proc. IEEE 66(1):51–83.
 * Kaiser β and length formulas: Kaiser (1974), and Oppenheim & Schafer, Discrete-Time Signal
 * Processing, Kaiser-window design section.
 */
import { ParameterError } from '../errors.ts';

export type WindowName = 'hann' | 'hamming' | 'blackman-harris' | 'rectangular' | 'kaiser';

export interface WindowOptions {
  /** Periodic (DFT-even, for spectral analysis and overlap-add) or symmetric (filter design). Default periodic. */
  symmetric?: boolean;
  /** Kaiser β (only for 'kaiser'). */
  beta?: number;
}

/** Modified Bessel function of the first kind, order 0 (power series; converges for all x). */
export function besselI0(x: number): number {
  const h = (x * x) / 4;
  let sum = 1;
  let term = 1;
  for (let k = 1; k < 500; k++) {
    term *= h / (k * k);
    sum += term;
    if (term < sum * 1e-17) break;
  }
  return sum;
}

export function makeWindow(name: WindowName, length: number, options: WindowOptions = {}): Float64Array {
  if (!Number.isInteger(length) || length < 1) throw new ParameterError(`window length ${length} must be a whole number ≥ 1`);
  const w = new Float64Array(length);
  if (length === 1) {
    w[0] = 1;
    return w;
  }
  const denom = options.symmetric ? length - 1 : length;
  const cosSum = (a: readonly number[]) => {
    for (let n = 0; n < length; n++) {
      const x = (2 * Math.PI * n) / denom;
      let v = 0;
      for (let k = 0; k < a.length; k++) v += (k % 2 ? -1 : 1) * a[k]! * Math.cos(k * x);
      w[n] = v;
    }
  };
  switch (name) {
    case 'rectangular':
      w.fill(1);
      break;
    case 'hann':
      cosSum([0.5, 0.5]);
      break;
    case 'hamming':
      cosSum([0.54, 0.46]);
      break;
    case 'blackman-harris': // 4-term, −92 dB (Harris 1978)
      cosSum([0.35875, 0.48829, 0.14128, 0.01168]);
      break;
    case 'kaiser': {
      const beta = options.beta;
      if (beta === undefined || !(beta >= 0)) throw new ParameterError('a Kaiser window needs beta ≥ 0');
      const i0b = besselI0(beta);
      for (let n = 0; n < length; n++) {
        const r = (2 * n) / denom - 1;
        w[n] = besselI0(beta * Math.sqrt(Math.max(0, 1 - r * r))) / i0b;
      }
      break;
    }
  }
  return w;
}

/** Coherent gain Σw/N (0.5 for Hann). */
export const coherentGain = (w: Float64Array): number => w.reduce((a, b) => a + b, 0) / w.length;

/** Equivalent noise bandwidth in bins: N·Σw²/(Σw)² (1.5 for Hann). */
export function enbwBins(w: Float64Array): number {
  let s = 0, s2 = 0;
  for (const v of w) {
    s += v;
    s2 += v * v;
  }
  return (w.length * s2) / (s * s);
}

/**
 * Kaiser β for a stopband attenuation of `attenuationDb` (A = −20·log10 δ):
 * β = 0.1102(A − 8.7) for A > 50; 0.5842(A − 21)^0.4 + 0.07886(A − 21) for 21 ≤ A ≤ 50; 0 below.
 */
export function kaiserBeta(attenuationDb: number): number {
  const a = attenuationDb;
  if (a > 50) return 0.1102 * (a - 8.7);
  if (a >= 21) return 0.5842 * Math.pow(a - 21, 0.4) + 0.07886 * (a - 21);
  return 0;
}

/**
 * Kaiser filter length (taps) for attenuation A dB and transition width Δω (rad/sample):
 * M = (A − 7.95)/(2.285·Δω) + 1, rounded up (Kaiser's constant, as scipy.signal.kaiserord uses).
 */
export function kaiserLength(attenuationDb: number, transitionRadPerSample: number): number {
  if (!(transitionRadPerSample > 0)) throw new ParameterError('transition width must be > 0');
  return Math.ceil((attenuationDb - 7.95) / (2.285 * transitionRadPerSample) + 1);
}
