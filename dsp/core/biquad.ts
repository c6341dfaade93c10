/**
 * Second-order IIR sections. Designs follow R. Bristow-Johnson's "Cookbook formulae for audio EQ
 * biquad filter coefficients" (bilinear transform of the analogue prototypes, frequency
 * pre-warped). Filtering is transposed direct form II, state kept across blocks.
 */
import { powerToDb } from '../units.ts';
import { ParameterError } from '../errors.ts';

/** Normalised coefficients (a0 = 1): y = b0 x + b1 x1 + b2 x2 − a1 y1 − a2 y2. */
export interface BiquadCoefficients {
  b0: number;
  b1: number;
  b2: number;
  a1: number;
  a2: number;
}

export type BiquadKind = 'lowpass' | 'highpass' | 'bandpass' | 'notch' | 'allpass' | 'peaking' | 'lowshelf' | 'highshelf';

export interface BiquadDesign {
  kind: BiquadKind;
  frequencyHz: number;
  sampleRateHz: number;
  /** Quality factor (default 1/√2). For shelves: the shelf slope parameter Q. */
  q?: number;
  /** For peaking and shelves. */
  gainDb?: number;
}

export function designBiquad(d: BiquadDesign): BiquadCoefficients {
  const { kind, frequencyHz: f0, sampleRateHz: fs } = d;
  if (!(fs > 0) || !(f0 > 0) || !(f0 < fs / 2)) {
    throw new ParameterError(`biquad frequency ${f0} Hz must lie between 0 and half the sample rate (${fs / 2} Hz)`);
  }
  const q = d.q ?? Math.SQRT1_2;
  if (!(q > 0)) throw new ParameterError(`biquad Q=${q} must be > 0`);
  const w0 = (2 * Math.PI * f0) / fs;
  const cw = Math.cos(w0), sw = Math.sin(w0);
  const alpha = sw / (2 * q);
  const A = Math.pow(10, (d.gainDb ?? 0) / 40);
  let b0: number, b1: number, b2: number, a0: number, a1: number, a2: number;
  switch (kind) {
    case 'lowpass':
      [b0, b1, b2] = [(1 - cw) / 2, 1 - cw, (1 - cw) / 2];
      [a0, a1, a2] = [1 + alpha, -2 * cw, 1 - alpha];
      break;
    case 'highpass':
      [b0, b1, b2] = [(1 + cw) / 2, -(1 + cw), (1 + cw) / 2];
      [a0, a1, a2] = [1 + alpha, -2 * cw, 1 - alpha];
      break;
    case 'bandpass': // constant 0 dB peak gain
      [b0, b1, b2] = [alpha, 0, -alpha];
      [a0, a1, a2] = [1 + alpha, -2 * cw, 1 - alpha];
      break;
    case 'notch':
      [b0, b1, b2] = [1, -2 * cw, 1];
      [a0, a1, a2] = [1 + alpha, -2 * cw, 1 - alpha];
      break;
    case 'allpass':
      [b0, b1, b2] = [1 - alpha, -2 * cw, 1 + alpha];
      [a0, a1, a2] = [1 + alpha, -2 * cw, 1 - alpha];
      break;
    case 'peaking':
      [b0, b1, b2] = [1 + alpha * A, -2 * cw, 1 - alpha * A];
      [a0, a1, a2] = [1 + alpha / A, -2 * cw, 1 - alpha / A];
      break;
    case 'lowshelf': {
      const s = 2 * Math.sqrt(A) * alpha;
      b0 = A * (A + 1 - (A - 1) * cw + s);
      b1 = 2 * A * (A - 1 - (A + 1) * cw);
      b2 = A * (A + 1 - (A - 1) * cw - s);
      a0 = A + 1 + (A - 1) * cw + s;
      a1 = -2 * (A - 1 + (A + 1) * cw);
      a2 = A + 1 + (A - 1) * cw - s;
      break;
    }
    case 'highshelf': {
      const s = 2 * Math.sqrt(A) * alpha;
      b0 = A * (A + 1 + (A - 1) * cw + s);
      b1 = -2 * A * (A - 1 + (A + 1) * cw);
      b2 = A * (A + 1 + (A - 1) * cw - s);
      a0 = A + 1 - (A - 1) * cw + s;
      a1 = 2 * (A - 1 - (A + 1) * cw);
      a2 = A + 1 - (A - 1) * cw - s;
      break;
    }
  }
  return { b0: b0 / a0, b1: b1 / a0, b2: b2 / a0, a1: a1 / a0, a2: a2 / a0 };
}

/** Complex response H(e^{jω}) at frequencyHz: magnitude in dB and phase in radians. */
export function biquadResponse(c: BiquadCoefficients, frequencyHz: number, sampleRateHz: number): { magnitudeDb: number; phaseRad: number } {
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const c1 = Math.cos(w), s1 = Math.sin(w), c2 = Math.cos(2 * w), s2 = Math.sin(2 * w);
  const nr = c.b0 + c.b1 * c1 + c.b2 * c2, ni = -(c.b1 * s1 + c.b2 * s2);
  const dr = 1 + c.a1 * c1 + c.a2 * c2, di = -(c.a1 * s1 + c.a2 * s2);
  const den = dr * dr + di * di;
  const hr = (nr * dr + ni * di) / den, hi = (ni * dr - nr * di) / den;
  return { magnitudeDb: powerToDb(hr * hr + hi * hi), phaseRad: Math.atan2(hi, hr) };
}

/** A cascade of biquads filtering one channel, transposed direct form II, state across blocks. */
export class SosFilter {
  readonly sections: readonly BiquadCoefficients[];
  readonly #z1: Float64Array;
  readonly #z2: Float64Array;

  constructor(sections: readonly BiquadCoefficients[]) {
    this.sections = sections;
    this.#z1 = new Float64Array(sections.length);
    this.#z2 = new Float64Array(sections.length);
  }

  /** Filters `input` into `output` (may be the same array). */
  process(input: Float64Array, output: Float64Array = new Float64Array(input.length)): Float64Array {
    const z1 = this.#z1, z2 = this.#z2;
    if (output !== input) output.set(input);
    for (let s = 0; s < this.sections.length; s++) {
      const { b0, b1, b2, a1, a2 } = this.sections[s]!;
      let s1 = z1[s]!, s2 = z2[s]!;
      for (let i = 0; i < output.length; i++) {
        const x = output[i]!;
        const y = b0 * x + s1;
        s1 = b1 * x - a1 * y + s2;
        s2 = b2 * x - a2 * y;
        output[i] = y;
      }
      z1[s] = s1;
      z2[s] = s2;
    }
    return output;
  }

  reset(): void {
    this.#z1.fill(0);
    this.#z2.fill(0);
  }
}
