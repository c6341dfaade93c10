/**
 * Transpose (dsp/stretch/render.ts): pitch of steady tones, level, duration, the rational plan for
 * the resampler, and formant keeping on vowels with a known filter response.
 */
import { describe, expect, it } from 'vitest';
import { Transposer, planTranspose } from '../../dsp/stretch/render.ts';
import { ParameterError } from '../../dsp/errors.ts';
import { fitSine } from '../helpers/sine-fit.ts';
import { cascadeMagnitude, FORMANT_BANDWIDTHS_HZ, intonedVoice, steadyVowel, VOWELS } from '../helpers/voice-like.ts';
import { envelopeDeviationDb, longTermEnvelopeDeviationDb } from '../eval/stretch-measures.ts';

const FS = 48000;

function transposeArray(x: Float64Array, cents: number, keepFormants = false): Float64Array {
  const t = new Transposer({ sampleRateHz: FS, channelCount: 1, cents, keepFormants });
  const a = t.push([x])[0]!, b = t.flush()[0]!;
  const y = new Float64Array(a.length + b.length);
  y.set(a);
  y.set(b, a.length);
  return y;
}

/** Amplitude of the component at exactly f Hz: Hann-weighted DFT at f, 2|Σ y·w·e^{−jωn}| / Σw. */
function amplitudeAt(y: Float64Array, f: number, from: number, to: number): number {
  let re = 0, im = 0, sw = 0;
  const n = to - from;
  for (let i = 0; i < n; i++) {
    const w = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / n);
    const ph = (2 * Math.PI * f * (from + i)) / FS;
    re += y[from + i]! * w * Math.cos(ph);
    im -= y[from + i]! * w * Math.sin(ph);
    sw += w;
  }
  return (2 * Math.hypot(re, im)) / sw;
}

describe('transpose: steady tones', () => {
  const rows: string[] = [];
  for (const semitones of [7, -7]) {
    for (const f of [220, 440, 1000]) {
      it(`${f} Hz by ${semitones > 0 ? '+' : ''}${semitones} semitones`, () => {
        // Source: equal temperament, f·2^(s/12) (REFERENCES §7: 440 Hz + 7 semitones = 659.26 Hz);
        // IEEE Std 1057 sine fit. Required: ±0.5 cent, ±0.2 dB, duration unchanged.
        const x = Float64Array.from({ length: Math.round(1.5 * FS) }, (_, i) => 0.5 * Math.sin((2 * Math.PI * f * i) / FS + 0.2));
        const y = transposeArray(x, 100 * semitones);
        expect(y.length).toBe(x.length);
        const expected = f * 2 ** (semitones / 12);
        const fit = fitSine(y, FS, expected, 8192, y.length - 8192);
        const cents = 1200 * Math.log2(fit.frequencyHz / expected);
        const db = 20 * Math.log10(fit.amplitude / 0.5);
        rows.push(`${f} Hz ${semitones > 0 ? '+' : ''}${semitones}: → ${fit.frequencyHz.toFixed(4)} Hz, ${cents.toExponential(2)} cents, ${db.toFixed(5)} dB`);
        expect(Math.abs(cents)).toBeLessThanOrEqual(0.5);
        expect(Math.abs(db)).toBeLessThanOrEqual(0.2);
      });
    }
  }
  it('prints the table', () => {
    console.log('[transpose] steady sines:\n  ' + rows.join('\n  '));
    expect(rows.length).toBe(6);
  });

  it('440 Hz up 7 semitones reads 659.26 Hz, and an octave is exact', () => {
    // Source: REFERENCES §7 worked values (440 → 659.26 Hz at +7, 880 Hz at +12).
    const x = Float64Array.from({ length: FS }, (_, i) => 0.5 * Math.sin((2 * Math.PI * 440 * i) / FS));
    // 659.26 is rounded to 0.01 Hz; the resampler fraction 442/295 may add 0.05 cent (0.02 Hz).
    expect(Math.abs(fitSine(transposeArray(x, 700), FS, 659.26, 8192, FS - 8192).frequencyHz - 659.26)).toBeLessThan(0.005 + 0.02);
    // The plan's fraction for +12 is exactly 2/1. With the long-window band reaching 3.5–4 kHz (the
    // default), the 440 Hz tone passes through that band, and the fit reads 3.0e-6 Hz off: 6e-6 cent.
    // The tolerance is therefore 5e-5 Hz (1e-4 cent); it was 5e-7 Hz with the band below 300 Hz.
    expect(fitSine(transposeArray(x, 1200), FS, 880, 8192, FS - 8192).frequencyHz).toBeCloseTo(880, 4);
  });

  it('keeps the duration exactly for any amount and length', () => {
    // Source: definition (duration kept).
    for (const cents of [-2400, -700, -300, 13, 300, 700, 2400]) {
      const x = Float64Array.from({ length: 12345 }, (_, i) => Math.sin(i * 0.05));
      expect(transposeArray(x, cents).length).toBe(12345);
    }
  });
});

describe('transpose: plan', () => {
  it('uses a fraction within 0.05 cent when the resampler bank can hold it, else the exact factor', () => {
    // Source: exact arithmetic — 2^(±12/12) = 2/1, 1/2; 2^(7/12) ≈ 442/295 (2.3e-3 cent).
    expect(planTranspose(1200, 'draft').fraction).toEqual([2, 1]);
    expect(planTranspose(-1200, 'draft').fraction).toEqual([1, 2]);
    for (const c of [-700, -300, 300, 700, 37]) {
      const p = planTranspose(c, 'draft');
      expect(Math.abs(p.errorCents)).toBeLessThanOrEqual(0.05);
      if (p.fraction) expect(p.stretchRatio).toBe(p.fraction[0] / p.fraction[1]);
    }
    expect(() => planTranspose(2500, 'draft')).toThrow(ParameterError);
  });
});

describe('transpose: --keep-formants', () => {
  it('keeps the vowel envelope where the filter put it; without it the envelope moves', () => {
    // Source: the vowel is a flat-spectrum harmonic source through a Klatt cascade with Peterson &
    // Barney formants, so the true envelope is |H(f)| of the difference equations, computed
    // exactly. Each output harmonic h·f0' is compared with |H(h·f0')| (the envelope kept in place)
    // after removing the mean dB offset. Measured: 2.2–4.4 dB RMS with --keep-formants,
    // 9.5–14 dB without (the formants shifted by the transposition). Bounds: ≤ 5 dB, and at least
    // 2× better than without.
    const lines: string[] = [];
    for (const vowel of [VOWELS[0]!, VOWELS[3]!, VOWELS[4]!]) {
      for (const semitones of [5, -5]) {
        const f0 = 120;
        const x = steadyVowel(vowel, f0, FS, 1.3);
        const f1 = f0 * 2 ** (semitones / 12);
        const deviation = (y: Float64Array) => {
          const d: number[] = [];
          for (let h = 1; h * f1 < 4000; h++) {
            if (h * f1 < 150) continue;
            const m = 20 * Math.log10(amplitudeAt(y, h * f1, 12000, 50000));
            d.push(m - 20 * Math.log10(cascadeMagnitude(vowel.formantsHz, FORMANT_BANDWIDTHS_HZ, FS, h * f1)));
          }
          const mean = d.reduce((s, v) => s + v, 0) / d.length;
          return Math.sqrt(d.reduce((s, v) => s + (v - mean) ** 2, 0) / d.length);
        };
        const kept = deviation(transposeArray(x, 100 * semitones, true));
        const plain = deviation(transposeArray(x, 100 * semitones, false));
        lines.push(`/${vowel.name}/ ${semitones > 0 ? '+' : ''}${semitones}: ${kept.toFixed(2)} dB kept, ${plain.toFixed(2)} dB plain`);
        expect(kept).toBeLessThan(5);
        expect(kept).toBeLessThan(plain / 2);
      }
    }
    console.log('[transpose] envelope deviation from the vowel filter (RMS over harmonics < 4 kHz):\n  ' + lines.join('\n  '));
  });

  it('keeps a 200 Hz telephone voice\'s envelope within ±3 dB at ±4 semitones', () => {
    // Source: construction — syllables of Peterson & Barney vowels through a Klatt cascade and a
    // telephone band (300–3400 Hz, test/helpers/voice-like.ts) on a source around 200 Hz; the
    // envelope is judged frame by frame at the voice's harmonic spacing (test/eval
    // stretch-measures.ts, where the same material made again at the new pitch reads 1.5 / 3.0 dB).
    // The long-term third-octave bands used before read 4.9–6.4 dB here because they follow where the
    // harmonics fall; moving the formants with the pitch (no --keep-formants) must still fail.
    const fs = 16000;
    const x = intonedVoice(fs, 8, 200, { telephone: true });
    const run = (cents: number, keep: boolean) => {
      const t = new Transposer({ sampleRateHz: fs, channelCount: 1, cents, keepFormants: keep });
      const a = t.push([x])[0]!, b = t.flush()[0]!;
      const y = new Float64Array(a.length + b.length);
      y.set(a);
      y.set(b, a.length);
      return y;
    };
    const rows: string[] = [];
    for (const semitones of [-4, 4]) {
      const f = 2 ** (semitones / 12);
      const kept = run(100 * semitones, true), plain = run(100 * semitones, false);
      const d = envelopeDeviationDb(x, kept, fs, f), dPlain = envelopeDeviationDb(x, plain, fs, f);
      rows.push(`${semitones > 0 ? '+' : ''}${semitones}: ${d.toFixed(2)} dB kept (long-term bands ${longTermEnvelopeDeviationDb(x, kept, fs, f).toFixed(2)}), ${dPlain.toFixed(2)} dB plain`);
      expect(d).toBeLessThanOrEqual(3);
      expect(dPlain).toBeGreaterThan(6);
    }
    console.log('[transpose] 200 Hz telephone voice, envelope deviation: ' + rows.join('; '));
  });

  it('does not change the pitch', () => {
    // Source: the envelope gain is real and smooth in frequency, so harmonic frequencies stay
    // f0·2^(s/12); measured on the fifth harmonic with the IEEE 1057 fit (±0.5 cent).
    const x = steadyVowel(VOWELS[3]!, 120, FS, 1.3);
    const y = transposeArray(x, 500, true);
    const target = 5 * 120 * 2 ** (5 / 12);
    // Isolate the harmonic by fitting only it: neighbours are 160 Hz away over 0.8 s.
    const fit = fitSine(y, FS, target, 12000, 50000);
    expect(Math.abs(1200 * Math.log2(fit.frequencyHz / target))).toBeLessThan(0.5);
  });
});
