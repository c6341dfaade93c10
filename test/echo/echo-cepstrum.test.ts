/**
 * The exact echo cepstrum that the refinement fits (dsp/echo/fit.ts echoCepstrumInto), against
 * the series it stands on and against a numerical transform of the exact log spectrum.
 */
import { describe, expect, it } from 'vitest';
import { echoCepstrumAt } from '../../dsp/echo/fit.ts';
import { cepstrumOf } from '../../dsp/echo/log-spectrum.ts';
import { FftPlan } from '../../dsp/core/fft.ts';

const N = 4096;

/** log|1 + g·e^{−jωτ}|² at k = 0…N/2. Source: |1 + g·e^{−jωτ}|² = 1 + g² + 2g·cos ωτ (exact identity). */
function ripple(tau: number, g: number): Float64Array {
  const l = new Float64Array(N / 2 + 1);
  for (let k = 0; k <= N / 2; k++) l[k] = Math.log(1 + g * g + 2 * g * Math.cos(((2 * Math.PI * k) / N) * tau));
  return l;
}

describe('echo cepstrum model', () => {
  it('has rahmonics (−1)^{k+1}·g^k/k at kτ for a whole-sample delay', () => {
    // Source: the power series log(1 + u) = Σ (−1)^{k+1} u^k / k with u = g·e^{−jωτ}; the log
    // power is twice its real part, which the real cepstrum splits between q and N − q.
    for (const g of [0.6, -0.45, 0.9]) {
      const tau = 150;
      for (let k = 1; k <= 4; k++) expect(echoCepstrumAt(k * tau, tau, g, N)).toBeCloseTo(((-1) ** (k + 1) * g ** k) / k, 8);
      expect(echoCepstrumAt(tau + 3, tau, g, N)).toBeCloseTo(0, 8);
    }
  });

  it('matches the transform of the exact log spectrum at fractional delays', () => {
    // Source: exact identity (the closed form is the N-point transform of the same samples).
    for (const [tau, g] of [[129.23, -0.45], [198.83, 0.25], [44.1, 0.65]] as const) {
      const c = cepstrumOf(ripple(tau, g), new FftPlan(N));
      for (const q of [Math.floor(tau), Math.ceil(tau), Math.round(2 * tau), Math.round(tau) + 5]) {
        expect(c[q]).toBeCloseTo(echoCepstrumAt(q, tau, g, N), 7);
      }
    }
  });
});
