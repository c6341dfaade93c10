/**
 * The frame-by-frame look at a cepstral peak (dsp/echo/evidence.ts): the share of the frames'
 * peak that a cancellation takes away, and the per-bin pair regression for long delays.
 */
import { describe, expect, it } from 'vitest';
import { frameEvidence } from '../../dsp/echo/evidence.ts';
import { SHARE_RANGE } from '../../dsp/echo/detect.ts';
import { MemorySource } from '../../dsp/source.ts';
import { addEchoes, delayExact } from '../helpers/delay.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';
import { voiceLike } from '../helpers/voice.ts';

const fs = 48000;

describe('frame evidence', () => {
  const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 7 });

  it('a reflection is in every frame: cancelling it leaves about nothing at τ (share ≈ 1)', async () => {
    // Source: truth by construction, y = x + g·x(t − τ) (DFT shift theorem, test/helpers/delay.ts);
    // cancelling with the true (τ, g) gives back x exactly (inverse of the echo factor,
    // Oppenheim & Schafer, DTSP ch. 13), whose frames have no peak at τ.
    const d = 0.15 * fs, g = 0.4;
    const y = addEchoes(x, [{ delaySamples: d, gain: g }]);
    const e = await frameEvidence(new MemorySource([y], fs), d, g, { channel: 0, start: 0, end: y.length });
    expect(e.share).not.toBeNull();
    expect(e.share!).toBeGreaterThan(0.85);
    expect(e.share!).toBeLessThan(1.15);
    expect(Math.abs(e.cancelledGain!)).toBeLessThan(0.1 * g);
    // The later of two short frames τ apart holds g times the earlier one, bin by bin.
    expect(Math.sign(e.pairGain!)).toBe(1);
    expect(e.pairGain!).toBeGreaterThan(0.4 * g);
    expect(e.pairGain!).toBeLessThan(2 * g + 0.05);
  });

  it('a phrase repeated once is in a few frames: cancelling puts an inverse echo into the rest (share < range)', async () => {
    // Source: by construction — one 1.2 s stretch of the programme is copied τ later at 0.4
    // (an edit, or a phrase sung twice), nothing else is; the same (τ, g) read as an echo puts
    // −g·ρ into every other frame (1/(1 + g·z^−τ) = 1 − g·z^−τ + …, exact series).
    const d = 0.15 * fs, g = 0.4;
    const piece = new Float64Array(x.length);
    piece.set(x.subarray(3 * fs, 4.2 * fs), 3 * fs);
    const copy = delayExact(piece, d);
    const y = Float64Array.from(x, (v, i) => v + g * copy[i]!);
    const e = await frameEvidence(new MemorySource([y], fs), d, g, { channel: 0, start: 0, end: y.length });
    expect(e.share).not.toBeNull();
    expect(e.share!).toBeLessThan(SHARE_RANGE[0]);
  });

  it('plucked notes with a reflection at 61.3 ms: the pair regression reads the reflection, not the notes', async () => {
    // Source: by construction — a new plucked note every 0.45 s (six partials decaying over
    // ≈ 0.4 s, pitches from a fixed list), a little noise, then y = x + 0.35·x(t − 61.3 ms).
    // Within a note the partials are in both frames of a pair with a phase turn 2π·f·τ that
    // differs from partial to partial; the per-bin median reads about g whatever that turn is.
    const rng = gaussian(seededRng(3));
    const pitches = [98, 131, 110, 147, 82.4, 123.5, 165, 104];
    const notes = new Float64Array(8 * fs);
    for (let j = 0; j * 0.45 * fs < notes.length; j++) {
      const f0 = pitches[j % pitches.length]!, t0 = Math.round(j * 0.45 * fs);
      for (let i = t0; i < notes.length; i++) {
        const t = (i - t0) / fs;
        notes[i] = notes[i]! + Math.exp(-t / 0.4) * [1, 2, 3, 4, 5, 6].reduce((a, k) => a + (0.3 / k) * Math.sin(2 * Math.PI * f0 * k * t + k), 0);
      }
    }
    for (let i = 0; i < notes.length; i++) notes[i] = notes[i]! + 0.003 * rng();
    const d = 0.0613 * fs, g = 0.35;
    const y = addEchoes(notes, [{ delaySamples: d, gain: g }]);
    const e = await frameEvidence(new MemorySource([y], fs), d, g, { channel: 0, start: 0, end: y.length });
    console.info(`plucked notes: pair ${e.pairGain}, share ${e.share}`);
    expect(e.pairGain!).toBeGreaterThan(0.4 * g);
    expect(e.pairGain!).toBeLessThan(2 * g + 0.05);
    expect(e.share!).toBeGreaterThan(SHARE_RANGE[0]);
    expect(e.share!).toBeLessThan(SHARE_RANGE[1]);
  });
});
