/**
 * The wow-and-flutter weighting curve of IEC 60386 / AES6-2008 (≡ CCIR 409-2, DIN 45507,
 * IEEE 193), realised digitally, and the flat "unweighted" measuring band.
 *
 * No standard gives poles and zeros, only a table of levels re 4 Hz with tolerances (AES6-2008
 * Table 1). We use the minimax fit to that table from REFERENCES.md §1:
 *   H(s) = K · s³ / [(s + 2π·0.6143)³ · (s + 2π·11.834)],  K such that |H(j2π·4 Hz)| = 1,
 * (error vs the table ≤ 0.8 dB from 0.315 to 200 Hz, +1.1 dB at 0.1 Hz), mapped to z by the
 * bilinear transform at the demodulator's output rate (≈ 4 kHz; warping at 200 Hz is < 0.1 dB),
 * as four first-order sections, then normalised to exactly 0 dB at 4 Hz in the digital domain.
 */
import { designBiquad, type BiquadCoefficients } from '../core/biquad.ts';

export const WEIGHTING_POLE_LOW_HZ = 0.6143;
export const WEIGHTING_POLE_HIGH_HZ = 11.834;

/** The table (Hz, dB re 4 Hz, tolerance +, tolerance −) of AES6-2008 Table 1 as transcribed in REFERENCES.md §1. */
export const WEIGHTING_TABLE: readonly (readonly [number, number, number, number])[] = [
  [0.1, -48, 10, 4], [0.2, -30.6, 10, 4], [0.315, -19.7, 4, 4], [0.4, -15.0, 4, 4], [0.63, -8.4, 2, 2],
  [0.8, -6.0, 2, 2], [1, -4.2, 2, 2], [1.6, -1.8, 2, 2], [2, -0.9, 2, 2], [4, 0, 0, 0], [6.3, -0.9, 2, 2],
  [10, -2.1, 2, 2], [20, -5.9, 2, 2], [40, -10.4, 2, 2], [63, -14.2, 4, 4], [100, -17.3, 4, 4], [200, -23.0, 4, 4],
];

/** One first-order IIR section y = b0·x + b1·x[−1] − a1·y[−1]. */
interface FirstOrder { b0: number; b1: number; a1: number }

/** s/(s + p) by the bilinear transform at `fs`. */
function highpass1(poleRadPerS: number, fs: number): FirstOrder {
  const c = 2 * fs;
  return { b0: c / (c + poleRadPerS), b1: -c / (c + poleRadPerS), a1: -(c - poleRadPerS) / (c + poleRadPerS) };
}
/** p/(s + p) (unity gain at DC) by the bilinear transform at `fs`. */
function lowpass1(poleRadPerS: number, fs: number): FirstOrder {
  const c = 2 * fs;
  return { b0: poleRadPerS / (c + poleRadPerS), b1: poleRadPerS / (c + poleRadPerS), a1: -(c - poleRadPerS) / (c + poleRadPerS) };
}

/** A cascade of first- and second-order sections applied in place to a whole track. */
export class SectionCascade {
  constructor(
    readonly first: readonly FirstOrder[],
    readonly second: readonly BiquadCoefficients[],
    public gain: number,
  ) {}

  /** Complex response magnitude at `hz` for sample rate `fs`. */
  magnitude(hz: number, fs: number): number {
    const w = (2 * Math.PI * hz) / fs;
    const zr = Math.cos(w), zi = -Math.sin(w); // z^{-1}
    let m = this.gain;
    for (const s of this.first) {
      const nr = s.b0 + s.b1 * zr, ni = s.b1 * zi;
      const dr = 1 + s.a1 * zr, di = s.a1 * zi;
      m *= Math.hypot(nr, ni) / Math.hypot(dr, di);
    }
    const z2r = Math.cos(2 * w), z2i = -Math.sin(2 * w);
    for (const s of this.second) {
      const nr = s.b0 + s.b1 * zr + s.b2 * z2r, ni = s.b1 * zi + s.b2 * z2i;
      const dr = 1 + s.a1 * zr + s.a2 * z2r, di = s.a1 * zi + s.a2 * z2i;
      m *= Math.hypot(nr, ni) / Math.hypot(dr, di);
    }
    return m;
  }

  /** Filters `x` into a new array (zero initial state). */
  apply(x: Float64Array): Float64Array {
    const y = Float64Array.from(x, (v) => v * this.gain);
    for (const s of this.first) {
      let x1 = 0, y1 = 0;
      for (let i = 0; i < y.length; i++) {
        const v = y[i]!;
        const out = s.b0 * v + s.b1 * x1 - s.a1 * y1;
        x1 = v;
        y1 = out;
        y[i] = out;
      }
    }
    for (const s of this.second) {
      let x1 = 0, x2 = 0, y1 = 0, y2 = 0;
      for (let i = 0; i < y.length; i++) {
        const v = y[i]!;
        const out = s.b0 * v + s.b1 * x1 + s.b2 * x2 - s.a1 * y1 - s.a2 * y2;
        x2 = x1; x1 = v; y2 = y1; y1 = out;
        y[i] = out;
      }
    }
    return y;
  }
}

/** The IEC 60386 / AES6 weighting filter at sample rate `fs` (0 dB at 4 Hz). */
export function weightingFilter(fs: number): SectionCascade {
  const a = 2 * Math.PI * WEIGHTING_POLE_LOW_HZ, b = 2 * Math.PI * WEIGHTING_POLE_HIGH_HZ;
  const f = new SectionCascade([highpass1(a, fs), highpass1(a, fs), highpass1(a, fs), lowpass1(b, fs)], [], 1);
  f.gain = 1 / f.magnitude(4, fs);
  return f;
}

/** Second-order Butterworth section (RBJ design with Q = 1/√2, dsp/core/biquad.ts). */
function butter2(kind: 'lowpass' | 'highpass', cutoffHz: number, fs: number): BiquadCoefficients {
  return designBiquad({ kind, frequencyHz: cutoffHz, sampleRateHz: fs, q: Math.SQRT1_2 });
}

/** Flat measuring band for unweighted figures: 0.5–200 Hz, second-order Butterworth on each side. */
export const UNWEIGHTED_BAND_HZ = [0.5, 200] as const;
export function unweightedFilter(fs: number): SectionCascade {
  return new SectionCascade([], [butter2('highpass', UNWEIGHTED_BAND_HZ[0], fs), butter2('lowpass', Math.min(UNWEIGHTED_BAND_HZ[1], 0.45 * fs), fs)], 1);
}
