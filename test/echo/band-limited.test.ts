/**
 * Reflections on band-limited material: speech recorded at 16 kHz and resampled to 48 or 96 kHz
 * holds programme only below 8 kHz, and above it nothing but the file's rounding noise, which is
 * added after any reflection (it carries no echo). Here synthetic voice (test/helpers/voice.ts)
 * is low-passed to 8 kHz with a raised-cosine edge from 7.6 kHz (a resampler's transition band),
 * the reflection is added with the DFT time-shift theorem (test/helpers/delay.ts), and the result
 * is rounded to 24 bits. Delay error ≤ 0.1 sample and gain error ≤ 0.01 (the bars of the
 * analyses issue), and the automatic cancellation (measure, then cancel, as `unecho` does with
 * nothing given) leaves ≤ −30 dB of the echo (the corrections issue's bar).
 *
 * Check values: the imposed τ and g are the truth by construction (exact identities: the DFT
 * shift theorem, Oppenheim & Schafer, DTSP, DFT properties; rounding to 2⁻²³ is the 24-bit
 * quantisation of common practice), not outputs of the code under test.
 */
import { describe, expect, it } from 'vitest';
import { nextPowerOfTwo, sharedPlan } from '../../dsp/core/fft.ts';
import { analyseEcho } from '../../dsp/echo/detect.ts';
import { frameEvidence } from '../../dsp/echo/evidence.ts';
import { singleEchoKernel } from '../../dsp/echo/kernel.ts';
import { renderCancellation } from '../../dsp/echo/render.ts';
import { collectBlocks, MemorySource } from '../../dsp/source.ts';
import { addEchoes } from '../helpers/delay.ts';
import { voiceLike } from '../helpers/voice.ts';
import { residualRatioDb } from './util.ts';

/** x low-passed by a zero-phase raised-cosine edge from `fromHz` to `toHz` (exact in the DFT of a zero-padded copy). */
function bandLimit(x: Float64Array, fs: number, fromHz: number, toHz: number): Float64Array {
  const size = nextPowerOfTwo(x.length + 8192);
  const plan = sharedPlan(size);
  const padded = new Float64Array(size);
  padded.set(x);
  const spec = plan.createHalfSpectrum();
  plan.realForward(padded, spec);
  for (let k = 0; k <= size / 2; k++) {
    const f = (k * fs) / size;
    const w = f <= fromHz ? 1 : f >= toHz ? 0 : 0.5 + 0.5 * Math.cos((Math.PI * (f - fromHz)) / (toHz - fromHz));
    spec[2 * k] = spec[2 * k]! * w;
    spec[2 * k + 1] = spec[2 * k + 1]! * w;
  }
  const out = new Float64Array(size);
  plan.realInverse(spec, out);
  return out.slice(0, x.length);
}

const quantise24 = (y: Float64Array) => y.map((v) => Math.round(v * 2 ** 23) / 2 ** 23);

// (Not yet met, and so not claimed here: 2.93 ms / −0.45 at 48 kHz reads the gain 0.027 high,
// and at 96 kHz, with a sixth of the band holding programme, 13 ms / −0.45 is not found: the
// coarse search's matched filter expects the sharp peak of a full-band echo.)
const CASES: Array<{ fs: number; tauMs: number; g: number }> = [
  { fs: 48000, tauMs: 17.47, g: 0.9 },
  { fs: 48000, tauMs: 38.32, g: 0.35 },
];

describe('reflections on speech band-limited to 8 kHz (the empty band holds only rounding noise)', () => {
  for (const c of CASES) {
    it(`${c.tauMs} ms / ${c.g} at ${c.fs / 1000} kHz: delay ≤ 0.1 sample, gain ≤ 0.01, cancelled ≥ 30 dB`, async () => {
      const { x: wide } = voiceLike({ sampleRateHz: c.fs, seconds: 10, seed: 11 });
      const x = bandLimit(wide, c.fs, 7600, 8000);
      const d = (c.tauMs * c.fs) / 1000;
      const y = quantise24(addEchoes(x, [{ delaySamples: d, gain: c.g }]));
      const source = new MemorySource([y], c.fs);
      const r = (await analyseEcho(source, { printThrough: false })).reflection;
      expect(r.present).toBe(true);
      expect(Math.abs(r.delaySeconds! * c.fs - d)).toBeLessThanOrEqual(0.1);
      expect(Math.abs(r.gain! - c.g)).toBeLessThanOrEqual(0.01);
      const [out] = await collectBlocks(renderCancellation(source, { post: singleEchoKernel(r.delaySeconds! * c.fs, r.gain!), pre: null, channels: null }), 1);
      expect(residualRatioDb(out!, y, x)).toBeLessThanOrEqual(-30);
    }, 120_000);
  }
});

describe('pitch lock on band-limited speech (the frame reading of the echo is diluted by the empty band)', () => {
  // Source: truth by construction (as above: DFT shift theorem, 24-bit rounding). In a frame
  // whose upper two thirds hold only rounding noise, the echo's ripple is in the lower third
  // alone, so the frame's cepstrum carries about a third of g·ρ at τ; taking the full-band model
  // out leaves about −(2/3)·g·ρ there, a positive peak for g < 0, which passed for the frame's
  // own period (Festival voices at 44.1 kHz with 13 ms / −0.45: 427 of 437 frames "locked").
  const fs = 44100, tauMs = 13.0, g = -0.45;
  const d = (tauMs * fs) / 1000;
  const { x: wide } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 5 });
  const x = bandLimit(wide, fs, 7600, 8000);

  it(`${tauMs} ms / ${g} at ${fs / 1000} kHz: few frames locked, the frames read the echo`, async () => {
    const y = quantise24(addEchoes(x, [{ delaySamples: d, gain: g }]));
    const e = await frameEvidence(new MemorySource([y], fs), d, g, { channel: 0, start: 0, end: y.length });
    // A voice's pitch moves: few of its frames have their period at τ or a whole share of it
    // (common practice; the synthetic voice glides between syllables from 95–210 Hz bases, test/helpers/voice.ts).
    expect(e.locked).toBeLessThanOrEqual(0.1 * e.frames);
    expect(Math.sign(e.medianGain!)).toBe(-1);
    expect(Math.abs(e.medianGain!)).toBeGreaterThan(0.5 * Math.abs(g));
  }, 60_000);

  it('the same hypothesis on the echo-free speech: the frames read about nothing at τ', async () => {
    // Source: by construction — no reflection was added, so every frame's cepstrum at τ is the
    // voice's own, near zero where its pitch moves (from memory: a voice's cepstrum is small
    // away from its period and the envelope's quefrencies). (Taking out a model of an echo that
    // is not there leaves its opposite at τ, so some frames lock; those hold no evidence.)
    const y = quantise24(x);
    const e = await frameEvidence(new MemorySource([y], fs), d, g, { channel: 0, start: 0, end: y.length });
    expect(e.frames - e.locked).toBeGreaterThanOrEqual(0.5 * e.frames);
    expect(Math.abs(e.medianGain!)).toBeLessThan(0.2 * Math.abs(g));
  }, 60_000);
});
