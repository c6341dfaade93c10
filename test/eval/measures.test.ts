/**
 * The evaluation's own measures, checked on signals with exactly known answers, so the tables of
 * `npm run eval` can be trusted.
 */
import { describe, expect, it } from 'vitest';
import { bandDeviationDb, echoReductionDb, offsetTrack, residualSpeedPercent, thirdOctaveDb, powerSpectrum } from './measures.ts';
import { numbersFromJson, numbersToJson } from './pool.ts';
import { occupiedBandHz } from './stretch-measures.ts';
import { delayExact } from '../helpers/delay.ts';
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
