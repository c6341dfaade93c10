/**
 * Speed factors and speed curves as resampling ratios (output frames per input frame =
 * (outRate / inRate) / factor), for the resampler in ./resample.ts.
 */
import { ParameterError } from '../errors.ts';
import type { TimeVaryingRatio } from './resample.ts';

/** Output frames per input frame for varispeed `factor` (played ÷ recorded speed) and a rate change. */
export function ratioForFactor(factor: number, inputRateHz: number, outputRateHz = inputRateHz): number {
  if (!(factor > 0) || !Number.isFinite(factor)) throw new ParameterError(`factor=${factor} must be a positive number`);
  return outputRateHz / inputRateHz / factor;
}

/** A speed curve: factor (played ÷ recorded) at times in seconds of the input. */
export interface SpeedCurve {
  readonly timesSeconds: readonly number[];
  readonly factors: readonly number[];
}

/**
 * A smooth interpolant through (t, y) points: monotone piecewise cubic (Fritsch & Carlson, "Monotone
 * piecewise cubic interpolation", SIAM J. Numer. Anal. 17(2), 1980), so no overshoot between points;
 * held constant outside the first and last point.
 */
export function smoothCurve(times: readonly number[], values: readonly number[]): (t: number) => number {
  const n = times.length;
  if (n === 0 || values.length !== n) throw new ParameterError('a curve needs matching, non-empty time and value lists');
  for (let i = 1; i < n; i++) {
    if (!(times[i]! > times[i - 1]!)) throw new ParameterError('curve times must increase');
  }
  if (n === 1) return () => values[0]!;
  const h = new Float64Array(n - 1), delta = new Float64Array(n - 1), m = new Float64Array(n);
  for (let i = 0; i < n - 1; i++) {
    h[i] = times[i + 1]! - times[i]!;
    delta[i] = (values[i + 1]! - values[i]!) / h[i]!;
  }
  m[0] = delta[0]!;
  m[n - 1] = delta[n - 2]!;
  for (let i = 1; i < n - 1; i++) {
    const d0 = delta[i - 1]!, d1 = delta[i]!;
    if (d0 * d1 <= 0) m[i] = 0;
    else {
      const w1 = 2 * h[i]! + h[i - 1]!, w2 = h[i]! + 2 * h[i - 1]!;
      m[i] = (w1 + w2) / (w1 / d0 + w2 / d1);
    }
  }
  let last = 0;
  return (t: number) => {
    if (t <= times[0]!) return values[0]!;
    if (t >= times[n - 1]!) return values[n - 1]!;
    let i = last;
    if (!(times[i]! <= t && t < times[i + 1]!)) {
      let lo = 0, hi = n - 1;
      while (hi - lo > 1) {
        const mid = (lo + hi) >> 1;
        if (times[mid]! <= t) lo = mid;
        else hi = mid;
      }
      i = lo;
      last = i;
    }
    const hh = h[i]!, u = (t - times[i]!) / hh;
    const u2 = u * u, u3 = u2 * u;
    return (
      (2 * u3 - 3 * u2 + 1) * values[i]! +
      (u3 - 2 * u2 + u) * hh * m[i]! +
      (-2 * u3 + 3 * u2) * values[i + 1]! +
      (u3 - u2) * hh * m[i + 1]!
    );
  };
}

/**
 * The time-varying ratio that plays a recording along a speed curve.
 * - mode 'undo': the curve is a measured speed factor S(t) of the input; the output plays the input
 *   at 1/S(t), which brings every moment back to its recorded speed (ratio = rateRatio·S).
 * - mode 'play': the curve is the factor to apply (ratio = rateRatio / F).
 */
export function ratioFromSpeedCurve(
  curve: SpeedCurve,
  opts: { inputRateHz: number; outputRateHz?: number; mode: 'undo' | 'play' },
): TimeVaryingRatio {
  const { inputRateHz } = opts;
  const rate = (opts.outputRateHz ?? inputRateHz) / inputRateHz;
  for (const f of curve.factors) {
    if (!(f > 0) || !Number.isFinite(f)) throw new ParameterError(`speed curve factor ${f} must be positive`);
  }
  const f = smoothCurve(curve.timesSeconds, curve.factors);
  const undo = opts.mode === 'undo';
  const minF = Math.min(...curve.factors), maxF = Math.max(...curve.factors);
  return {
    ratioAt: (frame: number) => {
      const v = f(frame / inputRateHz);
      return undo ? rate * v : rate / v;
    },
    minRatio: undo ? rate * minF : rate / maxF,
    maxRatio: undo ? rate * maxF : rate / minF,
  };
}
