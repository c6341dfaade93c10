/**
 * The cepstral fit of a reflection with a steep band edge in the programme's spectrum: the edge
 * rings through the cepstrum at its own frequency, and the fit takes that ringing as background
 * (dsp/echo/fit.ts backgroundBases, bandEdges).
 */
import { describe, expect, it } from 'vitest';
import { bandEdges, echoCepstrumAt, fitSingleEcho, fitWindows } from '../../dsp/echo/fit.ts';
import { deadJunctions } from '../../dsp/echo/refine.ts';
import { cepstrumOf } from '../../dsp/echo/log-spectrum.ts';
import { FftPlan } from '../../dsp/core/fft.ts';

const N = 4096;

/** Mean log power spectrum (k = 0…N/2) of a programme flat to `edgeBin`, `dropNepers` lower above it, with the exact ripple of 1 + g·z^−τ. */
function rippledStep(tau: number, g: number, edgeBin: number, dropNepers: number): Float64Array {
  const l = new Float64Array(N / 2 + 1);
  for (let k = 0; k <= N / 2; k++) {
    const w = (2 * Math.PI * k) / N;
    // Source: |1 + g·e^{−jωτ}|² = 1 + g² + 2g·cos ωτ (exact identity).
    l[k] = (k > edgeBin ? -dropNepers : 0) + Math.log(1 + g * g + 2 * g * Math.cos(w * tau));
  }
  return l;
}

describe('cepstral fit with a band edge', () => {
  it('the model cepstrum of 1 + g·z^−τ has rahmonics (−1)^{k+1}·g^k/k at kτ', () => {
    // Source: the power series log(1 + u) = Σ (−1)^{k+1} u^k / k, with u = g·e^{−jωτ}; the log
    // power doubles it and splits it between q and N − q, so the cepstrum at kτ is (−1)^{k+1}g^k/k.
    const g = 0.6, tau = 150;
    for (let k = 1; k <= 4; k++) expect(echoCepstrumAt(k * tau, tau, g, N)).toBeCloseTo(((-1) ** (k + 1) * g ** k) / k, 9);
    // Against the transform of the exact log spectrum (same identity, computed numerically).
    const c = cepstrumOf(rippledStep(tau, g, N, 0), new FftPlan(N));
    for (const q of [tau, 2 * tau, 3 * tau, tau + 3]) expect(c[q]).toBeCloseTo(echoCepstrumAt(q, tau, g, N), 9);
  });

  it('finds the edge of a band-limited spectrum', () => {
    // An 8 kHz band edge at 44.1 kHz, bin 743 of 4096. Source: exact identity (the step is
    // placed there by construction).
    const edge = Math.round((8000 / 44100) * N);
    const nu = bandEdges(rippledStep(129.23, -0.45, edge, 60 * (Math.LN10 / 10)));
    expect(nu.length).toBeGreaterThanOrEqual(1);
    // Within 4 bins: the fit's (cos, sin) pair needs ν only well enough that its phase drifts
    // little across a 17-point window (2π·4/4096·16 ≈ 0.1 rad).
    expect(Math.abs(nu[0]! * N - edge)).toBeLessThanOrEqual(4);
    // A flat spectrum with the ripple alone has no edge (the ripple's swing is under 10 dB).
    expect(bandEdges(rippledStep(129.23, -0.45, N, 0))).toEqual([]);
  });

  it('with the edge taken as background, the gain and delay are exact; without it they are off', () => {
    // A 60 dB step at the band edge and a 2.93 ms / −0.45 reflection at 44.1 kHz (129.23
    // samples): the step's ringing, ≈ D·sin(2πνq)/(πq), is some 0.02–0.03 at q ≈ 129.
    // Source: exact identity — the data is the exact log spectrum of (step) × |1 + g·z^−τ|², so
    // the true (τ, g) must come back.
    const tau = 129.23, g = -0.45, edge = Math.round((8000 / 44100) * N);
    const data = cepstrumOf(rippledStep(tau, g, edge, 60 * (Math.LN10 / 10)), new FftPlan(N));
    const windows = fitWindows(tau, g, N);
    const start = { delaySamples: tau + 0.3, gain: g * 0.9 };
    const plain = fitSingleEcho(data, N, start, { windows });
    const withEdge = fitSingleEcho(data, N, start, { windows, ringing: [edge / N] });
    expect(Math.abs(withEdge.gain - g)).toBeLessThan(0.003);
    expect(Math.abs(withEdge.delaySamples - tau)).toBeLessThan(0.02);
    // The plain fit (constant + slope only) is pulled by the ringing: this is what the basis fixes.
    expect(Math.abs(plain.gain - g)).toBeGreaterThan(2 * Math.abs(withEdge.gain - g));
  });

  it('without an edge, the ringing terms change nothing that matters', () => {
    // Source: exact identity (the ripple alone, as above).
    const tau = 301.7, g = 0.35;
    const data = cepstrumOf(rippledStep(tau, g, N, 0), new FftPlan(N));
    const windows = fitWindows(tau, g, N);
    const f = fitSingleEcho(data, N, { delaySamples: tau - 0.2, gain: 0.3 }, { windows, ringing: [0.18] });
    expect(f.gain).toBeCloseTo(g, 3);
    expect(f.delaySamples).toBeCloseTo(tau, 2);
  });

  it('names the ends of the empty runs of a gate, widest run first', () => {
    // Common practice (bookkeeping): bins 700…2048 empty of 4096 → one junction at 700/4096.
    const gate = new Float64Array(N / 2 + 1).fill(-Infinity);
    for (let k = 700; k <= N / 2; k++) gate[k] = Infinity;
    for (let k = 100; k < 110; k++) gate[k] = Infinity;
    const j = deadJunctions(gate);
    expect(j[0]).toBeCloseTo(700 / N, 12);
    expect(j).toHaveLength(2);
  });
});
