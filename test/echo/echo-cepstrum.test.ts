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

describe('frames left out as locked to the delay', () => {
  // Frame log spectra built from chosen cepstra: L(k) = Σ_q 2·c_q·cos(2πkq/N) has exactly c_q at
  // q (and N − q). Source: exact identity (the real cepstrum of an even sequence).
  const fs = 44100, tau = 181; // 4.1 ms
  const frame = (peaks: [number, number][]) => {
    const l = new Float64Array(N / 2 + 1);
    for (let k = 0; k <= N / 2; k++) for (const [q, c] of peaks) l[k] = l[k]! + 2 * c * Math.cos((2 * Math.PI * k * q) / N);
    return l;
  };
  it('keeps a cancelled frame whose only peak at τ is what is left of the echo', async () => {
    const { lockedByPeriod } = await import('../../dsp/echo/refine.ts');
    const lock = lockedByPeriod(N, tau, fs);
    expect(lock.accept(frame([[tau, 0.3]]))).toBe(true);
    expect(lock.accept(frame([[tau, -0.3]]))).toBe(true);
  });
  it('leaves out a note whose period is τ (positive rahmonics at 2τ, 3τ) or a whole multiple of it', async () => {
    // Source: the cepstrum of a periodic pulse train has positive peaks at every multiple of its
    // period (common practice: cepstral pitch detection).
    const { lockedByPeriod } = await import('../../dsp/echo/refine.ts');
    const lock = lockedByPeriod(N, tau, fs);
    expect(lock.accept(frame([[tau, 0.3], [2 * tau, 0.25], [3 * tau, 0.2]]))).toBe(false);
    expect(lock.accept(frame([[3 * tau, 0.4], [6 * tau, 0.3]]))).toBe(false);
    // A note of an unrelated period is kept.
    expect(lock.accept(frame([[257, 0.4], [514, 0.3]]))).toBe(true);
  });
});
