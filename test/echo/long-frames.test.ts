/**
 * Frames of about 16·τ for the frame-by-frame reading of a peak (dsp/echo/detect.ts,
 * holdsInLongFrames; evidence.ts `fftSize`). With the default frames of about 4·τ the echo's
 * log ripple has a period of about 4 bins, the Hann main lobe's width: a sparse tonal frame
 * (struck bell-like partials) reads a true reflection at a fraction of ĝ, and longer frames
 * read it at about ĝ. A programme without the reflection reads about nothing in either.
 */
import { describe, expect, it } from 'vitest';
import { LONG_FRAMES_FACTOR, LONG_FRAMES_MIN_MEDIAN, SHARE_RANGE } from '../../dsp/echo/detect.ts';
import { frameEvidence } from '../../dsp/echo/evidence.ts';
import { MemorySource } from '../../dsp/source.ts';
import { addEchoes } from '../helpers/delay.ts';
import { seededRng } from '../helpers/rng.ts';

const fs = 48000;

/** Struck notes of four inharmonic partials each (ratios 1, 2.76, 5.40, 8.93: a free bar's modes), decaying in about 0.3 s. */
function bells(seconds: number, seed: number): Float64Array {
  const rng = seededRng(seed);
  const x = new Float64Array(Math.round(seconds * fs));
  const ratios = [1, 2.756, 5.404, 8.933];
  for (let t0 = 0; t0 + fs < x.length; t0 += Math.round(0.25 * fs)) {
    const f0 = 400 * 2 ** (Math.floor(rng() * 24) / 12);
    for (let p = 0; p < ratios.length; p++) {
      const f = f0 * ratios[p]!;
      if (f > 0.45 * fs) continue;
      const a = 0.3 / (p + 1), ph = 2 * Math.PI * rng();
      for (let i = 0; i < fs; i++) x[t0 + i]! += a * Math.exp(-i / (0.3 * fs)) * Math.sin((2 * Math.PI * f * i) / fs + ph);
    }
  }
  return x;
}

describe('the frame reading in long frames', () => {
  const x = bells(12, 5);
  const d = 0.0302 * fs, g = 0.9;

  it('reads a true reflection on sparse tonal notes at about ĝ, the 4·τ frames at far less', async () => {
    // Source: truth by construction, y = x + g·x(t − τ) (DFT shift theorem, test/helpers/delay.ts);
    // the log power spectrum of 1 + g·e^{−jωτ} has its cepstral value g at τ (series of log(1 + z),
    // Oppenheim & Schafer, DTSP ch. 13), which a frame resolves when its ripple period (n/τ bins)
    // is several main-lobe widths of the Hann window (4 bins; Harris 1978, Proc. IEEE 66(1)).
    const y = addEchoes(x, [{ delaySamples: d, gain: g }]);
    const src = new MemorySource([y], fs);
    const short = await frameEvidence(src, d, g, { channel: 0, start: 0, end: y.length });
    const long = await frameEvidence(src, d, g, { channel: 0, start: 0, end: y.length, fftSize: 1 << Math.ceil(Math.log2(LONG_FRAMES_FACTOR * (d + 16))) });
    expect(long.fftSize).toBe(4 * short.fftSize);
    expect(short.medianGain!).toBeLessThan(LONG_FRAMES_MIN_MEDIAN * g);
    expect(long.medianGain!).toBeGreaterThan(LONG_FRAMES_MIN_MEDIAN * g);
    expect(long.medianGain!).toBeLessThan(1.15 * g);
    expect(long.share!).toBeGreaterThanOrEqual(SHARE_RANGE[0]);
    expect(long.share!).toBeLessThanOrEqual(SHARE_RANGE[1]);
  });

  it('reads about nothing at τ where there is no reflection', async () => {
    // Source: by construction, the same notes without the echo: no ripple at τ (common practice).
    const src = new MemorySource([x], fs);
    const long = await frameEvidence(src, d, g, { channel: 0, start: 0, end: x.length, fftSize: 1 << Math.ceil(Math.log2(LONG_FRAMES_FACTOR * (d + 16))) });
    expect(Math.abs(long.medianGain!)).toBeLessThan(0.2 * g);
  });
});
