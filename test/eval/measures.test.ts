/**
 * The evaluation's own measures, checked on signals with exactly known answers, so the tables of
 * `npm run eval` can be trusted.
 */
import { describe, expect, it } from 'vitest';
import { bandDeviationDb, echoReductionDb, offsetTrack, residualSpeedPercent, thirdOctaveDb, powerSpectrum } from './measures.ts';
import { numbersFromJson, numbersToJson } from './pool.ts';
import { envelopeDeviationDb, hannSmoothed, longTermEnvelopeDeviationDb, occupiedBandHz, voicedPitchHz } from './stretch-measures.ts';
import { delayExact } from '../helpers/delay.ts';
import { intonedVoice } from '../helpers/voice-like.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

const RATE = 48000;

function noise(n: number, seed: number): Float64Array {
  const g = gaussian(seededRng(seed));
  return Float64Array.from({ length: n }, () => g());
}

describe('metrics between worker and report', () => {
  it('NaN and ±Infinity survive the JSON line', () => {
    // Source: exact identity; JSON (ECMA-404) has no NaN or Infinity, JSON.stringify writes null.
    const m = { worstCents: Infinity, newLineDb: -Infinity, preEchoDb: NaN, onsetErrorMs: 1.25 };
    expect(JSON.parse(JSON.stringify(m))).toEqual({ worstCents: null, newLineDb: null, preEchoDb: null, onsetErrorMs: 1.25 });
    const back = numbersFromJson(JSON.parse(JSON.stringify(numbersToJson(m))) as Record<string, number | string>);
    expect(back.worstCents).toBe(Infinity);
    expect(back.newLineDb).toBe(-Infinity);
    expect(back.preEchoDb).toBeNaN();
    expect(back.onsetErrorMs).toBe(1.25);
  });
});

describe('correction measures', () => {
  it('echo reduction is the residual energy ratio in dB', () => {
    // Source: exact identity — residual halved in amplitude is −6.02 dB in energy.
    const ref = noise(RATE, 1);
    const fault = noise(RATE, 2);
    const input = ref.map((v, i) => v + 0.3 * fault[i]!);
    const output = ref.map((v, i) => v + 0.15 * fault[i]!);
    expect(echoReductionDb(input, output, ref)).toBeCloseTo(20 * Math.log10(0.5), 10);
  });

  it('band deviation reads a broadband gain', () => {
    // Source: exact identity — a gain of 2 raises every band by 20·log10(2) = 6.0206 dB.
    const ref = noise(4 * RATE, 3);
    expect(bandDeviationDb(ref.map((v) => 2 * v), ref, RATE)).toBeCloseTo(6.0206, 3);
    expect(bandDeviationDb(ref, ref, RATE)).toBe(0);
  });

  it('third-octave bands use the nominal centres', () => {
    // Source: IEC 61260-1 (from memory): base-two centres 1000·2^(b/3) Hz; 1 kHz is one of them.
    const bands = thirdOctaveDb(powerSpectrum(noise(RATE, 4)), RATE);
    expect(bands.some((b) => Math.abs(b.centreHz - 1000) < 1e-9)).toBe(true);
    expect(bands[0]!.centreHz).toBeGreaterThanOrEqual(50);
  });

  it('offset track finds a fractional delay to a hundredth of a sample', () => {
    // Source: DFT shift theorem (exact band-limited delay), Oppenheim & Schafer, DTSP.
    const ref = noise(6 * RATE, 5);
    const delayed = delayExact(ref, 3.37);
    const t = offsetTrack(delayed, ref, RATE);
    expect(t.offsets.length).toBeGreaterThan(15);
    for (const o of t.offsets) expect(Math.abs(o * RATE - 3.37)).toBeLessThan(0.01);
  });

  it('residual speed is the slope of the offset track', () => {
    // Source: exact identity — an offset growing 0.2 ms per second is a 0.02 % speed error.
    const times = Array.from({ length: 40 }, (_, i) => 0.5 + 0.25 * i);
    const r = residualSpeedPercent({ times, offsets: times.map((t) => 1e-3 + 2e-4 * t) });
    for (const p of r.percent) expect(p).toBeCloseTo(0.02, 10);
  });
});

describe('the band a recording occupies (keep-formants judging)', () => {
  it('sines at 250, 1000 and 3000 Hz at 16 kHz occupy the 100 Hz blocks from 201 to 3090 Hz', () => {
    // Source: construction (nothing outside the three sines; Hann leakage 40 dB down within a few
    // 1.95 Hz bins, so only the blocks holding them count); blocks of 51 bins from bin 1.
    const fs = 16000;
    const x = Float64Array.from({ length: 4 * fs }, (_, i) => [250, 1000, 3000].reduce((s, f) => s + Math.sin((2 * Math.PI * f * i) / fs), 0));
    const [lo, hi] = occupiedBandHz(x, fs);
    expect(lo).toBeCloseTo((1 + 2 * 51) * (fs / 8192), 6);
    expect(hi).toBeCloseTo((1 + 31 * 51) * (fs / 8192), 6);
  });
});

describe('the envelope deviation of a transposed voice (keep-formants judging)', () => {
  it('a harmonic comb smoothed over at least twice its spacing has the same level wherever it lies', () => {
    // Source: Poisson summation — Σ_h w(hΔ − c) = (1/Δ) Σ_k Ŵ(k/Δ) e^{−2πikc/Δ}; for a Hann kernel of
    // full width W, Ŵ(ν)/Ŵ(0) = sinc(νW)/(1 − (νW)²): zero at νW = 2, 3, … (so W = 2Δ is exactly
    // flat), |·| ≤ 0.027 beyond 2 (±5.4 % at W = 2.35Δ), 0.17 at W = 1.5Δ (±34 %).
    const comb = (offset: number) => Float64Array.from({ length: 4001 }, (_, k) => ((k - offset) % 200 === 0 && k >= offset ? 1 : 0));
    const spread = (widthHz: number) => {
      let lo = Infinity, hi = 0;
      for (const offset of [0, 37, 73, 111, 150]) {
        const v = hannSmoothed(comb(offset), 1, widthHz);
        for (let k = 1000; k <= 3000; k += 7) {
          lo = Math.min(lo, v[k]!);
          hi = Math.max(hi, v[k]!);
        }
      }
      return hi / lo;
    };
    expect(spread(400)).toBeLessThan(1 + 1e-9);
    expect(spread(600)).toBeLessThan(1 + 1e-9);
    expect(spread(470)).toBeLessThan(1.12); // (1 + 0.054)/(1 − 0.054)
    expect(spread(470)).toBeGreaterThan(1.08);
    expect(spread(300)).toBeGreaterThan(1.8); // (1 + 0.34)/(1 − 0.34) ≈ 2.0
  });

  it('reads the pitch of a harmonic tone', () => {
    // Source: construction — 10 equal harmonics of 180 Hz; the period is found to the nearest lag
    // at fs/⌊fs/8 kHz⌋ (8 kHz at 16 kHz: 44 samples, 181.8 Hz; 8.82 kHz at 44.1 kHz: 49, 180.0 Hz).
    for (const fs of [16000, 44100]) {
      const x = Float64Array.from({ length: 2 * fs }, (_, i) => {
        let s = 0;
        for (let h = 1; h <= 10; h++) s += Math.cos((2 * Math.PI * 180 * h * i) / fs);
        return s;
      });
      expect(Math.abs(voicedPitchHz(x, fs) / 180 - 1)).toBeLessThan(0.011);
    }
  });

  it('passes a perfect transposition of a 200 Hz telephone voice and fails a moved envelope', () => {
    // Source: construction — the same syllables made again at f0·2^(±4/12) through the same Klatt
    // cascade and the same telephone band (test/helpers/voice-like.ts) keep the envelope exactly:
    // a fair measure passes them. Made with the formants raised by 2 semitones, or moved with the
    // pitch (what a transposition without --keep-formants does), the envelope is wrong: a strict
    // measure fails them. The long-term bands used before read where the harmonics fall.
    const fs = 16000, seconds = 8;
    const x = intonedVoice(fs, seconds, 200, { telephone: true });
    const rows: string[] = [];
    for (const semitones of [-4, 4]) {
      const f = 2 ** (semitones / 12);
      const perfect = intonedVoice(fs, seconds, 200, { telephone: true, pitchFactor: f });
      const shifted = intonedVoice(fs, seconds, 200, { telephone: true, pitchFactor: f, formantScale: 2 ** (2 / 12) });
      const moved = intonedVoice(fs, seconds, 200, { telephone: true, pitchFactor: f, formantScale: f });
      const now = [perfect, shifted, moved].map((y) => envelopeDeviationDb(x, y, fs, f));
      const before = longTermEnvelopeDeviationDb(x, perfect, fs, f);
      rows.push(`${semitones > 0 ? '+' : ''}${semitones}: perfect ${now[0]!.toFixed(2)} dB (long-term ${before.toFixed(2)}), formants +2 st ${now[1]!.toFixed(2)}, moved ${now[2]!.toFixed(2)}`);
      expect(now[0]).toBeLessThanOrEqual(3.5);
      expect(before).toBeGreaterThan(5);
      expect(now[1]).toBeGreaterThan(4);
      expect(now[2]).toBeGreaterThan(6);
    }
    console.log('[formants] 200 Hz telephone voice, envelope deviation: ' + rows.join('; '));
  });
});
