/**
 * One gain in every band: a reflection delays the whole programme by τ, so its ripple has the
 * same depth in every band that holds programme (evidence.ts, `bands`; detect.ts, bandVerdict);
 * print-through is one copy at one level in every band (its highs at most somewhat lower) and in
 * both halves of the passages compared (detect.ts, ptBandsDisagree and ptHalvesDisagree).
 */
import { describe, expect, it } from 'vitest';
import { analyseEcho, bandVerdict, PRINT_THROUGH_MAX_DB, FEW_FRAMES, FEW_FRAMES_CONFIDENCE, FEW_FRAMES_MIN_GAIN, ptBandsDisagree, ptHalvesDisagree } from '../../dsp/echo/detect.ts';
import { echoBands, frameEvidence } from '../../dsp/echo/evidence.ts';
import { MemorySource } from '../../dsp/source.ts';
import { unecho } from '../../dsp/ops/unecho.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { addEchoes, delayExact } from '../helpers/delay.ts';
import { voiceLike } from '../helpers/voice.ts';

const fs = 48000;

/**
 * Low-pass by a Hann-windowed sinc (cutoff fc, 2·half + 1 taps, unit gain at DC), applied by
 * direct convolution. Source: the windowed-sinc design (S. W. Smith, The Scientist and Engineer's
 * Guide to DSP, ch. 16; common practice), independent of the code under test.
 */
function lowpass(x: Float64Array, fc: number, half: number): Float64Array {
  const h = new Float64Array(2 * half + 1);
  let sum = 0;
  for (let i = -half; i <= half; i++) {
    const s = i === 0 ? (2 * fc) / fs : Math.sin((2 * Math.PI * fc * i) / fs) / (Math.PI * i);
    const w = 0.5 + 0.5 * Math.cos((Math.PI * i) / (half + 1));
    h[i + half] = s * w;
    sum += s * w;
  }
  const y = new Float64Array(x.length);
  for (let n = 0; n < x.length; n++) {
    let acc = 0;
    for (let i = -half; i <= half; i++) {
      const m = n - i;
      if (m >= 0 && m < x.length) acc += (h[i + half]! / sum) * x[m]!;
    }
    y[n] = acc;
  }
  return y;
}

describe('band-by-band reading of a reflection', () => {
  const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 7 });
  const d = 0.0234 * fs;

  it('bands span at least six ripple periods each and cover 125 Hz to 0.45·fs', () => {
    // Source: by definition of the bands (octaves from 125 Hz, merged to ≥ 6 periods of fs/τ).
    for (const [n, tau] of [[8192, d], [4096, 48], [65536, 0.3 * fs]] as const) {
      const b = echoBands(n, tau, fs);
      expect(b.length).toBeGreaterThanOrEqual(1);
      expect(b[0]!.kLo).toBe(Math.round((125 * n) / fs));
      expect(b[b.length - 1]!.kHi).toBe(Math.floor(0.45 * n));
      for (let i = 0; i < b.length; i++) {
        expect(b[i]!.kHi - b[i]!.kLo).toBeGreaterThanOrEqual(Math.ceil((6 * n) / tau));
        if (i > 0) expect(b[i]!.kLo).toBe(b[i - 1]!.kHi);
      }
    }
  });

  it('y = x + g·x(t − τ): every band with programme reads about g, and the reflection stands', async () => {
    // Source: truth by construction (DFT shift theorem, test/helpers/delay.ts); a frame's log
    // power carries log|1 + g·e^{−jωτ}|² = 2·Σ (−1)^{k+1} (g^k/k)·cos(kωτ) in every bin
    // (series of log(1 + z); Oppenheim & Schafer, DTSP ch. 13), whose cos(ωτ) term is 2g.
    const g = 0.3;
    const y = addEchoes(x, [{ delaySamples: d, gain: g }]);
    const e = await frameEvidence(new MemorySource([y], fs), d, g, { channel: 0, start: 0, end: y.length });
    const read = e.bands.filter((b) => b.gain !== null);
    console.info(`reflection 23.4 ms / 0.3, bands: ${read.map((b) => `${Math.round(b.loHz)}–${Math.round(b.hiHz)} Hz ${b.gain!.toFixed(3)} ± ${b.gainStd!.toFixed(3)}`).join(', ')}`);
    expect(read.length).toBeGreaterThanOrEqual(3);
    for (const b of read) {
      expect(b.gain!).toBeGreaterThan(0.6 * g);
      expect(b.gain!).toBeLessThan(1.3 * g);
    }
    expect(bandVerdict(e.bands, g, '23.4')).toBeNull();
  });

  it('a copy of the lows only (below 1 kHz) is no reflection: the upper bands read about nothing', async () => {
    // Source: by construction — y = x + g·(h ∗ x)(t − τ) with h a 1 kHz windowed-sinc low-pass:
    // above ≈ 1.3 kHz the copy is more than 40 dB down, so there the frames carry no ripple at τ.
    const g = 0.3;
    const copy = delayExact(lowpass(x, 1000, 200), d);
    const y = Float64Array.from(x, (v, i) => v + g * copy[i]!);
    const e = await frameEvidence(new MemorySource([y], fs), d, g, { channel: 0, start: 0, end: y.length });
    const high = e.bands.filter((b) => b.gain !== null && b.loHz >= 1500);
    expect(high.length).toBeGreaterThanOrEqual(1);
    for (const b of high) expect(Math.abs(b.gain!)).toBeLessThan(0.1 * g);
    const v = bandVerdict(e.bands, g, '23.4');
    expect(v).not.toBeNull();
    expect(v!.present).toBe(false);
  });

  it('unecho cancels the print-through it found and says which peak it left, and why', async () => {
    // Source: by construction — one 2 s phrase heard again 200 ms later at 0.5 (a repeat in a
    // few moments, which a reflection is not) plus a −40 dB copy of everything 1.5 s before
    // (print-through, by the DFT shift theorem; negative delay = before).
    const lag = 0.2 * fs, pt = Math.pow(10, -40 / 20);
    const y = Float64Array.from(x);
    for (let i = 3 * fs; i < 5 * fs; i++) y[i + lag]! += 0.5 * x[i]!;
    const z = addEchoes(y, [{ delaySamples: -1.5 * fs, gain: pt }]);
    const r = await unecho.prepare(new MemorySource([z], fs), {}, silentContext);
    expect(String(r.resolved.cancelled)).toMatch(/^print-through 1\.50\d* s before/);
    expect(String(r.resolved.left)).toMatch(/^reflection set aside: /);
  }, 60_000);

  it('a band reading far above the whole-programme gain is set aside', () => {
    // Source: the rule's definition (|b| − 2σ > 1.5·|ĝ| + 0.05), on made-up readings.
    const band = (loHz: number, gain: number) => ({ loHz, hiHz: 2 * loHz, gain, gainStd: 0.01, frames: 50 });
    expect(bandVerdict([band(125, 0.2), band(250, 0.21), band(500, 0.19)], 0.2, '12.2')).toBeNull();
    expect(bandVerdict([band(125, 0.9), band(250, 0.21), band(500, 0.19)], 0.2, '12.2')?.present).toBe(false);
    // The other sign in a band above the lowest one.
    expect(bandVerdict([band(125, 0.2), band(250, -0.1), band(500, 0.19)], 0.2, '12.2')?.present).toBe(false);
    // The lowest band alone may disagree (a low note's few partials).
    expect(bandVerdict([band(125, -0.2), band(250, 0.2), band(500, 0.19)], 0.2, '12.2')).toBeNull();
    // Source: the rule's definition (b·sign(ĝ) < −0.15·|ĝ| in a band above the lowest), on
    // made-up readings with a wide spread (σ = 0.03), as a brass melody's 30.2 ms peak read them.
    const wide = (loHz: number, gain: number) => ({ loHz, hiHz: 2 * loHz, gain, gainStd: 0.03, frames: 50 });
    expect(bandVerdict([wide(125, -0.01), wide(500, 0.021), wide(1000, -0.106), wide(2000, -0.084), wide(4000, -0.116)], -0.082, '30.2')?.present).toBe(false);
    // A band near zero is not the other sign (−0.1·|ĝ|: within the rule).
    expect(bandVerdict([wide(125, -0.08), wide(500, 0.008), wide(1000, -0.09), wide(2000, -0.08)], -0.082, '30.2')).toBeNull();
  });

  it('every band far below both ĝ and the frames\' median is set aside; bands as low as a diluted median are not', () => {
    // Source: the rule's definition (largest |b| + 2σ < 0.5·min(|ĝ|, |median|) with three or more
    // bands), on the readings of two corpus clips: a band loop's hi-hat eighth notes at 305 ms
    // (ĝ 0.324, frame median 0.351, bands 125 Hz–8 kHz at most 0.077: no reflection, the repeat is
    // above 8 kHz) and trombone chords with a true 37.8 ms / 0.65 reflection (frame median 0.205,
    // bands 0.212, 0.032, −0.019, 0.183: the frames read a strong reflection low, all alike).
    const b = (loHz: number, gain: number, gainStd: number) => ({ loHz, hiHz: 2 * loHz, gain, gainStd, frames: 17 });
    const loop = [b(125, -0.027, 0.016), b(250, 0.023, 0.006), b(500, 0.005, 0.006), b(1000, 0.026, 0.01), b(2000, 0.046, 0.01), b(4000, 0.077, 0.013)];
    expect(bandVerdict(loop, 0.324, '305.0', 0.351)?.present).toBe(false);
    expect(bandVerdict(loop, 0.324, '305.0', 0.351)?.reason).toMatch(/every band with programme reads far less/);
    const trombone = [b(124, 0.212, 0.011), b(495, 0.032, 0.021), b(990, -0.019, 0.032), b(1981, 0.183, 0.016)];
    expect(bandVerdict(trombone, 0.646, '37.8', 0.205)?.reason ?? '').not.toMatch(/every band with programme reads far less/);
    // Without the median the comparison is with ĝ alone (0.234 < 0.5·0.646).
    expect(bandVerdict(trombone, 0.646, '37.8')?.reason).toMatch(/every band with programme reads far less/);
  });
});

describe('thin frame evidence', () => {
  it('a long reflection in a short file (under 10 frames of 4·τ) stands, at confidence ≤ 0.8', async () => {
    // Source: truth by construction, y = x + 0.4·x(t − 450 ms) by the DFT shift theorem on 12 s
    // of voice-like material: frames 4·τ long leave fewer than 10 of them.
    const { x } = voiceLike({ sampleRateHz: fs, seconds: 12, seed: 3 });
    const r = (await analyseEcho(new MemorySource([addEchoes(x, [{ delaySamples: 0.45 * fs, gain: 0.4 }])], fs))).reflection;
    expect(r.evidence).not.toBeNull();
    expect(r.evidence!.frames).toBeLessThan(FEW_FRAMES);
    expect(r.present).toBe(true);
    expect(Math.abs(r.delaySeconds! - 0.45) * fs).toBeLessThanOrEqual(0.1);
    expect(r.confidence).toBeLessThanOrEqual(FEW_FRAMES_CONFIDENCE);
  }, 60_000);

  it('a weak one from under 10 frames is not reported (|ĝ| under FEW_FRAMES_MIN_GAIN)', async () => {
    // Source: truth by construction, y = x + 0.04·x(t − 450 ms) on the same 12 s: a reflection
    // is there, but a handful of frames cannot tell one so weak from the sound's own structure.
    const { x } = voiceLike({ sampleRateHz: fs, seconds: 12, seed: 3 });
    const r = (await analyseEcho(new MemorySource([addEchoes(x, [{ delaySamples: 0.45 * fs, gain: 0.04 }])], fs))).reflection;
    expect(FEW_FRAMES_MIN_GAIN).toBeGreaterThan(0.04);
    expect(r.evidence!.frames).toBeLessThan(FEW_FRAMES);
    // (Its peak is clear, z ≈ 19: without the rule it stood at confidence 0.8.)
    expect(r.present).toBeNull();
    expect(r.reason).toMatch(/frames/);
  }, 60_000);
});

describe('print-through: one level in every band and through the file', () => {
  it('band and half readings: one copy passes, a spread of more than 6 dB does not', () => {
    // Source: the rules' definitions (detect.ts PT_LEVEL_SPREAD_DB, PT_HIGH_OVER_DB), on made-up readings.
    const g = 0.01; // −40 dB
    expect(ptBandsDisagree([g, g, g / 2])).toBeNull(); // highs 6 dB lower: tape prints them less
    expect(ptBandsDisagree([g, g / 4, null])).not.toBeNull(); // 12 dB apart
    expect(ptBandsDisagree([g, g, 2 * g])).not.toBeNull(); // highs 6 dB above
    expect(ptHalvesDisagree([{ gain: g, z: 10 }, { gain: 0.9 * g, z: 9 }], g)).toBeNull();
    expect(ptHalvesDisagree([{ gain: g, z: 10 }, { gain: 0.1 * g, z: 1 }], g)).not.toBeNull();
    expect(ptHalvesDisagree([{ gain: g, z: 10 }, { gain: -g, z: -10 }], g)).not.toBeNull();
  });

  it('a −40 dB copy 1.5 s before, throughout: both halves read −40 dB', async () => {
    // Source: y = x + g·x(t + 1.5 s), g = 10^(−40/20), by the DFT shift theorem (contract sign:
    // negative delay = before).
    const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 21 });
    const g = Math.pow(10, -40 / 20);
    const r = (await analyseEcho(new MemorySource([addEchoes(x, [{ delaySamples: -1.5 * fs, gain: g }])], fs))).printThrough;
    expect(r.present).toBe(true);
    expect(r.detail?.halves).not.toBeNull();
    for (const h of r.detail!.halves!) expect(Math.abs(20 * Math.log10(h.gain) - -40)).toBeLessThanOrEqual(2);
  }, 60_000);

  it('a copy at −33 dB throughout is too strong for print-through (over PRINT_THROUGH_MAX_DB)', async () => {
    // Source: y = x + g·x(t + 1.5 s), g = 10^(−33/20), by the DFT shift theorem; print-through
    // is about −40 to −65 dB (REFERENCES.md §4), so a −33 dB likeness is the programme's own.
    const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 21 });
    const g = Math.pow(10, -33 / 20);
    const r = (await analyseEcho(new MemorySource([addEchoes(x, [{ delaySamples: -1.5 * fs, gain: g }])], fs))).printThrough;
    expect(PRINT_THROUGH_MAX_DB).toBeLessThan(-33);
    expect(r.present).toBe(false);
    expect(r.reason).toMatch(/too strong/);
  }, 60_000);

  it('a copy of one passage only (a phrase heard again, faintly) is not print-through', async () => {
    // Source: by construction — only the first 4 s of the programme are copied, 1.5 s earlier at
    // −40 dB; the rest of the file has no copy at all, as no tape layer would leave it.
    const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 21 });
    const g = Math.pow(10, -40 / 20);
    const piece = Float64Array.from(x, (v, i) => (i < 4 * fs ? v : 0));
    const copy = delayExact(piece, -1.5 * fs);
    const y = Float64Array.from(x, (v, i) => v + g * copy[i]!);
    const r = (await analyseEcho(new MemorySource([y], fs))).printThrough;
    console.info(`copy of one passage: present ${r.present}, ${r.reason}, halves ${JSON.stringify(r.detail?.halves)}`);
    expect(r.present).not.toBe(true);
    // And the halves of the passages compared say so on their own: the later half holds no copy.
    expect(r.detail?.halves).not.toBeNull();
    expect(ptHalvesDisagree(r.detail!.halves!, r.detail!.halves![0]!.gain)).not.toBeNull();
  }, 60_000);
});
