/**
 * A strong reflection's rahmonics lead back to it (dsp/echo/detect.ts `rootOf`): a peak at k·τ
 * with the sign an echo gives there is looked at from τ first, with the two peaks' scores
 * together; a periodic source's train of positive peaks is not taken for one.
 */
import { describe, expect, it } from 'vitest';
import { ROOT_MIN_Z, rootOf } from '../../dsp/echo/detect.ts';
import type { CoarseCandidate } from '../../dsp/echo/coarse.ts';

const fs = 44100;
const cand = (quefrency: number, amplitude: number, z: number, scale = 0): CoarseCandidate => ({ quefrency, amplitude, z, noise: 1, scale });

describe('rahmonic roots', () => {
  // Source: the cepstrum of an echo y = x + g·x(t − τ) is Σ (−1)^{k+1}·g^k/k at k·τ (the series of
  // log(1 + g·e^{−jωτ}); Oppenheim & Schafer, DTSP, ch. 13): the sign there is that of g for odd
  // k and negative for even k.
  const tau = 769.8; // samples (17.455 ms at 44.1 kHz)
  for (const g of [0.9, -0.6]) {
    it(`g = ${g}: every rahmonic k·τ (k = 2…8) leads back to τ, with the scores added`, () => {
      const root = cand(tau, g, 7.3);
      for (let k = 2; k <= 8; k++) {
        const amp = ((-1) ** (k + 1) * g ** k) / k;
        const c = cand(k * tau + 1, amp, 11, 1);
        const r = rootOf(c, [root, c], fs);
        expect(r, `k = ${k}`).not.toBeNull();
        expect(r!.quefrency).toBe(tau);
        // Source: the sum of two independent unit-variance scores over √2 has unit variance (common practice).
        expect(r!.z).toBeCloseTo((7.3 + 11) / Math.SQRT2, 12);
      }
    });
  }

  it('a periodic source (positive peaks at every multiple of its period) has no root at its even multiples', () => {
    // Source: a harmonic series' log spectrum is periodic in frequency with period 1/P, so its
    // cepstrum has positive peaks at k·P (Noll 1967, JASA 41(2); common practice).
    const p = 400;
    const root = cand(p, 0.3, 7);
    for (const k of [2, 4, 6, 8]) expect(rootOf(cand(k * p, 0.1, 11, 1), [root], fs), `k = ${k}`).toBeNull();
  });

  it('no root below ROOT_MIN_Z, where the scores together add nothing, off the multiple, under 1 ms, or needing |g| ≥ 1', () => {
    // Source: the rule as stated in detect.ts (common practice for a detection threshold).
    const c = cand(2 * 800, -0.2, 11, 1);
    expect(rootOf(c, [cand(800, 0.5, ROOT_MIN_Z - 0.1)], fs)).toBeNull();
    expect(rootOf(c, [cand(800, 0.5, 30)], fs)).toBeNull(); // (30 + 11)/√2 = 29 < 30: nothing to add
    expect(rootOf(c, [cand(800, 0.5, 12)], fs)!.z).toBeCloseTo(23 / Math.SQRT2, 12);
    expect(rootOf(c, [cand(790, 0.5, 7)], fs)).toBeNull();
    expect(rootOf(cand(2 * 40, -0.2, 11), [cand(40, 0.5, 7)], fs)).toBeNull();
    // Source: the same series — |a_k| = |g|^k/k, so a peak of −0.34 at 4·τ would need |g| =
    // (4·0.34)^{1/4} = 1.08, more than the direct sound (a reflection loses energy; common practice).
    expect(rootOf(cand(4 * 336, -0.34, 18.8, 1), [cand(336, 0.44, 9.8)], fs)).toBeNull();
    expect(rootOf(cand(4 * 336, -0.2, 18.8, 1), [cand(336, 0.44, 7)], fs)).not.toBeNull();
  });
});
