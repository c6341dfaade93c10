/**
 * Wow and flutter meter against the IEC 60386 / AES6-2008 weighting table (REFERENCES.md §1) and
 * synthetic FM of a test tone with known deviation: x(t) = A·sin(2π f0 t + (Δf/fm)·sin(2π fm t)),
 * whose instantaneous frequency is f0 + Δf·cos(2π fm t) exactly.
 */
import { describe, expect, it } from 'vitest';
import { MemorySource } from '../../dsp/source.ts';
import { flutter, type FlutterResult } from '../../dsp/ops/flutter.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { NotFoundError } from '../../dsp/errors.ts';
import { weightingFilter, WEIGHTING_TABLE } from '../../dsp/flutter/weighting.ts';
import { seededRng, gaussian } from '../helpers/rng.ts';

const FS = 48000;

interface Fm { rateHz: number; deviation: number }
/** A tone with sinusoidal FM components (deviation = peak fraction, 0.001 = 0.1 %). */
function fmTone(seconds: number, f0: number, mods: Fm[], opts: { fs?: number; amp?: number } = {}): Float64Array {
  const fs = opts.fs ?? FS, amp = opts.amp ?? 0.5;
  const n = Math.round(seconds * fs);
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const t = i / fs;
    let ph = 2 * Math.PI * f0 * t;
    for (const m of mods) ph += ((m.deviation * f0) / m.rateHz) * Math.sin(2 * Math.PI * m.rateHz * t);
    x[i] = amp * Math.sin(ph);
  }
  return x;
}

async function measure(channels: Float64Array[], params: Record<string, number> = {}, fs = FS): Promise<FlutterResult> {
  return flutter.run(new MemorySource(channels, fs), validateParams(flutter.params, params), silentContext);
}

describe('weighting filter', () => {
  // Source: AES6-2008 Table 1 (via REFERENCES.md §1, [3P]) — levels re 4 Hz and their tolerances.
  for (const fsd of [4000, 4009.09]) {
    it(`follows the table within tolerance at ${fsd} Hz`, () => {
      const w = weightingFilter(fsd);
      for (const [hz, db, plus, minus] of WEIGHTING_TABLE) {
        const got = 20 * Math.log10(w.magnitude(hz, fsd));
        if (hz === 4) expect(Math.abs(got)).toBeLessThan(1e-9);
        else {
          expect(got).toBeLessThanOrEqual(db + plus);
          expect(got).toBeGreaterThanOrEqual(db - minus);
        }
      }
    });
  }
});

describe('flutter meter on synthetic FM', () => {
  it('reads 0.1 % peak deviation at 4 Hz as 0.1 % ± 3 % of reading, weighted', async () => {
    // Source: REFERENCES.md §1 [DERIVED] — 4 Hz is the 0 dB reference of the weighting, so the
    // weighted two-sigma reading equals the peak deviation; RMS = peak/√2 for sinusoidal flutter.
    for (const fs of [48000, 96000]) {
      const r = await measure([fmTone(12, 3150, [{ rateHz: 4, deviation: 0.001 }], { fs })], {}, fs);
      expect(Math.abs(r.weightedPeakPercent - 0.1) / 0.1).toBeLessThan(0.03);
      expect(Math.abs(r.unweightedPeakPercent - 0.1) / 0.1).toBeLessThan(0.03);
      expect(Math.abs(r.weightedRmsPercent - 0.1 / Math.SQRT2) / (0.1 / Math.SQRT2)).toBeLessThan(0.02);
      expect(r.dominantRateHz!).toBeCloseTo(4, 1);
      expect(r.toneHz).toBe(3150);
    }
  });

  // Source: REFERENCES.md §1 — reading = 0.1 % × 10^(W(fm)/20) within the table's tolerance at fm.
  for (const [hz, db, plus, minus] of WEIGHTING_TABLE.filter(([hz]) => [0.315, 1, 10, 20, 63, 200].includes(hz))) {
    it(`follows the weighting table at ${hz} Hz (${db} dB, +${plus}/−${minus})`, async () => {
      const seconds = hz < 1 ? 16 : 8;
      const r = await measure([fmTone(seconds, 3150, [{ rateHz: hz, deviation: 0.001 }])]);
      const readingDb = 20 * Math.log10(r.weightedPeakPercent / 0.1);
      expect(readingDb).toBeLessThanOrEqual(db + plus);
      expect(readingDb).toBeGreaterThanOrEqual(db - minus);
    });
  }

  it('reads a pure tone as ≤ 0.001 %, also after 16-bit quantisation with TPDF dither', async () => {
    // Source: the limit for a pure tone; a quantised tone's phase noise is far below it.
    const x = fmTone(10, 3150, []);
    expect((await measure([x])).weightedPeakPercent).toBeLessThanOrEqual(0.001);
    const rng = seededRng(3);
    const q = Float64Array.from(x, (v) => Math.round(v * 32768 + rng() - rng()) / 32768);
    const r = await measure([q]);
    expect(r.weightedPeakPercent).toBeLessThanOrEqual(0.001);
    expect(r.unweightedPeakPercent).toBeLessThanOrEqual(0.001);
    expect(r.dominantRateHz).toBeNull();
  });

  it('shows a constant speed offset as mean speed error, not flutter', async () => {
    // Source: REFERENCES.md §1 — a constant speed offset must read 0 % flutter.
    const r = await measure([fmTone(8, 3150 * 1.012, [])]);
    expect(r.meanSpeedErrorPercent).toBeCloseTo(1.2, 4);
    expect(r.weightedPeakPercent).toBeLessThanOrEqual(0.001);
    expect(r.driftPercent).toBeLessThan(0.001);
  });

  it('reports slow drift separately from flutter', async () => {
    // A linear sweep of the speed from −0.2 % to +0.2 % over 20 s (phase = integral of the
    // frequency). The 2 s moving average lags a ramp by 1 s (0.02 %) and the segment's ends are
    // trimmed by 0.25 s (0.005 %), so the largest excursion reads 0.175 %.
    const fs = 16000, sec = 20, f0 = 3150, n = fs * sec;
    const x = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const t = i / fs;
      // f(t) = f0 (1 + 0.002 (2t/T − 1)) → phase 2π f0 (t + 0.002 (t²/T − t))
      x[i] = 0.5 * Math.sin(2 * Math.PI * f0 * (t + 0.002 * ((t * t) / sec - t)));
    }
    const r = await measure([x], {}, fs);
    expect(r.driftPercent).toBeGreaterThan(0.17);
    expect(r.driftPercent).toBeLessThan(0.18);
    expect(r.weightedPeakPercent).toBeLessThan(0.002);
  });

  it('names the dominant rate and the next one', async () => {
    // Two components with known rates and depths (0.06 % at 5.5 Hz, 0.02 % at 32 Hz).
    const r = await measure([fmTone(10, 3150, [{ rateHz: 5.5, deviation: 0.0006 }, { rateHz: 32, deviation: 0.0002 }])]);
    expect(r.dominantRateHz!).toBeCloseTo(5.5, 1);
    expect(r.rates[0]!.peakPercent).toBeCloseTo(0.06, 2);
    expect(r.rates[1]!.rateHz).toBeCloseTo(32, 1);
    expect(Math.abs(r.rates[1]!.peakPercent - 0.02) / 0.02).toBeLessThan(0.1);
    const f = flutter.findings!(r, { sampleRateHz: FS, channelCount: 1, frames: 10 * FS });
    expect(f[0]!.sentence).toMatch(/5\.50 Hz: .*capstan or the pinch roller/);
  });
});

describe('locating the tone', () => {
  it('finds an off-speed tone between programme and measures only it', async () => {
    // 3 s noise, 10 s of a 3 % slow tone with 0.1 % / 4 Hz FM, 4 s noise; stereo.
    const g = gaussian(seededRng(9));
    const noise = (sec: number) => Float64Array.from({ length: sec * FS }, () => 0.1 * g());
    const tone = fmTone(10, 3150 * 0.97, [{ rateHz: 4, deviation: 0.001 }]);
    const x = new Float64Array(17 * FS);
    x.set(noise(3), 0);
    x.set(tone, 3 * FS);
    x.set(noise(4), 13 * FS);
    const r = await measure([x, x.map((v) => 0.7 * v)]);
    expect(r.segment.startSeconds).toBeGreaterThanOrEqual(3);
    expect(r.segment.startSeconds).toBeLessThan(3.5);
    expect(r.segment.endSeconds).toBeLessThanOrEqual(13);
    expect(r.segment.endSeconds).toBeGreaterThan(12.5);
    expect(r.segment.channel).toBe(1);
    expect(r.meanSpeedErrorPercent).toBeCloseTo(-3, 2);
    expect(Math.abs(r.weightedPeakPercent - 0.1) / 0.1).toBeLessThan(0.03);
  });

  it('says so when there is no tone (or a different one)', async () => {
    const g = gaussian(seededRng(10));
    await expect(measure([Float64Array.from({ length: 5 * FS }, () => 0.1 * g())])).rejects.toThrow(NotFoundError);
    await expect(measure([fmTone(5, 3150, [])], { toneHz: 1000 })).rejects.toThrow(/no steady test tone near 1000 Hz/);
  });
});
