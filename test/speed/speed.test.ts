import { describe, expect, it } from 'vitest';
import { MemorySource, collectBlocks } from '../../dsp/source.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { NotFoundError, ParameterError } from '../../dsp/errors.ts';
import { speed } from '../../dsp/ops/speed.ts';
import { varispeed } from '../../dsp/ops/varispeed.ts';
import { estimateSpeed } from '../../dsp/speed/estimate.ts';
import { explainFactor, standardPairText } from '../../dsp/speed/standard.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';
import { add, hum, melody, normalizeRms, pinkNoise, programme, rampRecordedTime, rmsFor } from './synth.ts';

const runSpeed = (x: Float64Array[], fs: number, params: Record<string, unknown> = {}) =>
  speed.run(new MemorySource(x, fs), validateParams(speed.params, params as never), silentContext);

describe('speed from mains hum', () => {
  // Source: the scaling theorem (x(a·t) ↔ X(f/a)/|a|): hum of 50 Hz recorded, played at factor a,
  // sits at 50·a Hz and harmonics. Material: 30 s of programme (harmonic melody + room noise) at
  // −20 dBFS with hum (fundamental −50 dBFS, five harmonics) evaluated at recorded time a·t.
  const fs = 48000, n = 30 * fs;
  for (const a of [0.5, 0.9, 0.98, 1.0, 1.03, 1.35, 2]) {
    it(`factor ${a}: within ±0.02 % (and within its stated uncertainty ×4)`, async () => {
      const x = add(programme(n, fs, a, 3), hum(n, fs, 50, -50, (t) => a * t));
      const r = await runSpeed([x], fs, { mainsHz: '50' });
      expect(r.method).toBe('hum');
      expect(r.mainsHz).toBe(50);
      const errPercent = (r.factor / a - 1) * 100;
      expect(Math.abs(errPercent)).toBeLessThan(0.02);
      expect(Math.abs(errPercent)).toBeLessThan(4 * r.uncertaintyPercent! + 1e-6);
      expect(r.confidence).toBeGreaterThanOrEqual(0.5);
      expect(r.cents).toBeCloseTo(1200 * Math.log2(r.factor), 9);
    });
  }

  it('without --mains: 60 Hz hum at 0.98 is read as 60 Hz × 0.98 and the 50 Hz reading is listed', async () => {
    const a = 0.98;
    const x = add(programme(n, fs, a, 4), hum(n, fs, 60, -50, (t) => a * t));
    const r = await runSpeed([x], fs);
    expect(r.method).toBe('hum');
    expect(r.mainsHz).toBe(60);
    expect(Math.abs(r.factor / a - 1)).toBeLessThan(2e-4);
    // The same line is 50 Hz × 1.176: the ambiguity is reported, not hidden.
    const alt = r.candidates.find((c) => c.method === 'hum' && c.mainsHz === 50);
    expect(alt?.factor).toBeCloseTo((60 * a) / 50, 3);
    expect(r.notes.join(' ')).toMatch(/60 Hz mains at factor 0\.980\d or 50 Hz mains at factor 1\.17/);
  });

  it('stereo: hum in both channels, programme different per channel', async () => {
    const a = 1.35, fs2 = 32000, n2 = 20 * fs2;
    const h = hum(n2, fs2, 50, -50, (t) => a * t);
    const r = await runSpeed([add(programme(n2, fs2, a, 5), h), add(programme(n2, fs2, a, 6), h)], fs2, { mainsHz: '50' });
    expect(Math.abs(r.factor / a - 1)).toBeLessThan(2e-4);
    // 45 / 33⅓ = 1.35 exactly (REFERENCES.md §2).
    expect(r.standardPair).toMatch(/recorded at 33⅓ rpm, played at 45 rpm/);
  });
});

describe('speed from a reference tone', () => {
  // 5 s of tone in white noise at 40 dB SNR (tone power / noise power), then programme.
  // Cramér–Rao bound (REFERENCES.md §5a): σ_f ≈ √3/(π·T·√(η·N)) ≈ 2e-6 Hz here, so ±0.005 %
  // leaves a wide margin for the estimator.
  const fs = 48000;
  for (const [toneHz, a] of [[1000, 1.0213], [3150, 0.9871], [10000, 1.0]] as const) {
    it(`${toneHz} Hz at factor ${a}: within ±0.005 %`, async () => {
      const nTone = 5 * fs, n = 12 * fs;
      const g = gaussian(seededRng(toneHz));
      const amp = 0.25, sigma = Math.sqrt((amp * amp) / 2 / 1e4);
      const x = programme(n, fs, a, 7);
      for (let i = 0; i < nTone; i++) x[i] = amp * Math.sin((2 * Math.PI * toneHz * a * i) / fs + 0.3) + sigma * g();
      const r = await runSpeed([x], fs, { toneHz });
      expect(r.method).toBe('tone');
      expect(Math.abs((r.factor / a - 1) * 100)).toBeLessThan(0.005);
      expect(r.toneHz).toBe(toneHz);
      // Automatic: a tone near a standard line-up frequency is found without --tone.
      const auto = await runSpeed([x], fs);
      expect(auto.candidates.some((c) => c.method === 'tone' && Math.abs(c.factor / a - 1) < 5e-5)).toBe(true);
    });
  }
});

describe('speed from a tone at the tail of a long file', () => {
  it('finds a 1 kHz tone in the last minute of a 150 s transfer (only the head and tail are scanned)', async () => {
    const fs = 8000, n = 150 * fs, a = 0.9871;
    const x = programme(n, fs, a, 8);
    for (let i = 140 * fs; i < 146 * fs; i++) x[i] = 0.3 * Math.sin((2 * Math.PI * 1000 * a * i) / fs);
    const r = await runSpeed([x], fs, { toneHz: 1000 });
    expect(r.method).toBe('tone');
    expect(Math.abs((r.factor / a - 1) * 100)).toBeLessThan(0.005);
    // The curve covers the tone, 140–146 s.
    expect(r.curve.timesSeconds[0]!).toBeGreaterThan(139);
    expect(r.curve.timesSeconds.at(-1)!).toBeLessThan(147);
  });
});

describe('speed from musical tuning', () => {
  // A harmonic melody in equal temperament tuned off by c cents (A4 = 440·2^(c/1200), ISO 16):
  // the tuning reads c within ±3 cents; the factor is only known modulo a semitone, and the music
  // may have been tuned to another pitch, so tuning alone never sets the speed: "not determined",
  // with the reason and no correction (analyses issue: musical tuning alone is weak evidence).
  for (const cents of [-37, 18]) {
    it(`${cents} cents: read, but the speed is not determined from it`, async () => {
      const fs = 32000, n = 20 * fs;
      const x = normalizeRms(add(melody(n, fs, { cents, seed: 11 }), pinkNoise(n, 12, rmsFor(-60))), rmsFor(-20));
      const r = await runSpeed([x], fs);
      expect(r.tuningCents).not.toBeNull();
      expect(Math.abs(r.tuningCents! - cents)).toBeLessThan(3);
      const t = r.candidates.find((c) => c.method === 'tuning')!;
      expect(Math.abs(1200 * Math.log2(t.factor) - cents)).toBeLessThan(3);
      expect(r.method).toBeNull();
      expect(r.factor).toBe(1);
      expect(r.notes.join(' ')).toMatch(/cannot tell a whole semitone/);
      const f = speed.findings!(r, { sampleRateHz: fs, channelCount: 1, frames: n });
      expect(f).toHaveLength(1);
      expect(f[0]!.title).toBe('Speed not determined');
      expect(f[0]!.sentence).toMatch(/tuning alone is weak evidence/);
      expect(f[0]!.suggestion).toBeUndefined();
    });
  }

  // Source: exact identity — a uniform speed change by factor a moves every partial by
  // 1200·log2(a) cents, so the tuning reading moves by the same amount modulo 100 cents.
  it('follows a uniform speed change within ±0.5 cent', async () => {
    const fs = 32000, n = 20 * fs;
    const read = async (factor: number) => {
      const x = normalizeRms(add(melody(n, fs, { cents: 7, factor, seed: 13 }), pinkNoise(n, 14, rmsFor(-60))), rmsFor(-20));
      return (await runSpeed([x], fs)).tuningCents!;
    };
    const base = await read(1);
    for (const shift of [-23, 31]) {
      let d = (await read(2 ** (shift / 1200))) - base - shift;
      d -= 100 * Math.round(d / 100);
      expect(Math.abs(d)).toBeLessThan(0.5);
    }
  });
});

describe('drift', () => {
  // Linear speed ramp F(t) = 1 + 0.01·t/60 (played time t): hum phase 2π·50·∫F = 2π·50·(t + 0.01·t²/120).
  const fs = 16000, n = 60 * fs, slope = 0.01 / 60;
  const x = add(programme(n, fs, 1, 21), hum(n, fs, 50, -50, rampRecordedTime(1, slope)));

  it('the speed curve follows the ramp within ±0.05 % every second; follow-curve removes it', async () => {
    const r = await runSpeed([x], fs, { mainsHz: '50' });
    expect(r.curve.timesSeconds.length).toBeGreaterThanOrEqual(50);
    // The curve runs from the first to the last second, edges included (the trend carried there);
    // inside, one point a second.
    const ts = r.curve.timesSeconds;
    expect(ts[0]).toBe(0);
    expect(ts.at(-1)).toBeCloseTo(60, 9);
    for (let i = 0; i < ts.length; i++) {
      const t = ts[i]!;
      if (i > 1 && i < ts.length - 1) expect(t - ts[i - 1]!).toBeCloseTo(1, 6);
      expect(Math.abs((r.curve.factors[i]! / (1 + slope * t) - 1) * 100)).toBeLessThan(0.05);
    }
    expect(Math.abs(r.factor - 1.005)).toBeLessThan(5e-4);
    const findings = speed.findings!(r, { sampleRateHz: fs, channelCount: 1, frames: n });
    expect(findings.some((f) => f.suggestion?.params.followCurve === true)).toBe(true);

    const src = new MemorySource([x], fs);
    const rendering = await varispeed.prepare(src, validateParams(varispeed.params, { followCurve: true, fromHum: '50' }), silentContext);
    const y = await collectBlocks(rendering.blocks, 1);
    // Output duration: ∫ dt/F over the input (recorded time) = 60 + 0.01·60/2 s.
    expect(Math.abs(y[0]!.length / fs - 60.3)).toBeLessThan(0.05);
    const after = await runSpeed(y, fs, { mainsHz: '50' });
    expect(Math.abs(after.factor - 1)).toBeLessThan(5e-4);
    for (const f of after.curve.factors) expect(Math.abs(f - 1)).toBeLessThan(5e-4);
  });
});

describe('drift through a short clip', () => {
  // Ramp F(t) = 1 + 0.0005·t over 8 s (played time), as a machine running up to speed; hum phase
  // 2π·50·(t + 0.0005·t²/2). Source: the ramp is synthesised; the drift bar of the corrections
  // issue (residual ≤ 0.02 % over the whole file, edges included) applied to the curve itself.
  const fs = 16000, n = 8 * fs, slope = 0.0005;
  const x = add(normalizeRms(programme(n, fs, 1, 23), rmsFor(-30)), hum(n, fs, 50, -50, rampRecordedTime(1, slope)));

  it('the curve is the ramp within ±0.02 % from the first to the last sample', async () => {
    const r = await runSpeed([x], fs, { mainsHz: '50' });
    const ts = r.curve.timesSeconds;
    expect(ts[0]).toBe(0);
    expect(ts.at(-1)).toBeCloseTo(8, 9);
    for (let i = 0; i < ts.length; i++) {
      expect(Math.abs((r.curve.factors[i]! / (1 + slope * ts[i]!) - 1) * 100)).toBeLessThan(0.02);
    }
    // The mean speed over the clip: 1 + 0.0005·4.
    expect(Math.abs(r.factor / 1.002 - 1)).toBeLessThan(1e-4);
  });
});

describe('when nothing can be measured', () => {
  it('noise alone: method null, confidence below 0.5, factor 1', async () => {
    const fs = 16000, n = 20 * fs;
    const r = await runSpeed([pinkNoise(n, 31, rmsFor(-20))], fs);
    expect(r.method).toBeNull();
    expect(r.confidence).toBeLessThan(0.5);
    expect(r.factor).toBe(1);
    expect(r.standardPair).toBeNull();
  });
  it('--mains / --tone with nothing there: NotFoundError', async () => {
    const fs = 16000, n = 10 * fs;
    const x = [pinkNoise(n, 32, rmsFor(-20))];
    await expect(runSpeed(x, fs, { mainsHz: '60' })).rejects.toThrow(NotFoundError);
    await expect(runSpeed(x, fs, { toneHz: 1000 })).rejects.toThrow(/no steady tone found for --tone 1000/);
    await expect(
      varispeed.prepare(new MemorySource(x, fs), validateParams(varispeed.params, { fromHum: '50' }), silentContext),
    ).rejects.toThrow(NotFoundError);
  });
  it('impossible varispeed settings: ParameterError', async () => {
    const src = new MemorySource([new Float64Array(1000)], 8000);
    expect(() => validateParams(varispeed.params, { factor: 5 })).toThrow(ParameterError);
    expect(() => validateParams(varispeed.params, { factor: 0.1 })).toThrow(/outside the allowed range/);
    await expect(varispeed.prepare(src, validateParams(varispeed.params, {}), silentContext)).rejects.toThrow(/say how/);
    await expect(varispeed.prepare(src, validateParams(varispeed.params, { factor: 3, semitones: 12 }), silentContext)).rejects.toThrow(/outside 0.25–4/);
    await expect(varispeed.prepare(src, validateParams(varispeed.params, { factor: 2, fromHum: '50' }), silentContext)).rejects.toThrow(ParameterError);
  });
});

describe('standard speeds', () => {
  // Ratios of standard speeds (REFERENCES.md §2): tape steps are exactly 2×; 45/33⅓ = 1.35;
  // 3600/46 ÷ 3000/38.5 = 1.00436 (7.51 cents).
  it('explains factors within 0.5 % of a ratio of standard speeds', () => {
    expect(standardPairText(2)).toMatch(/^recorded at 3¾ ips, played at 7½ ips/);
    expect(standardPairText(0.5)).toMatch(/^recorded at 7½ ips, played at 3¾ ips/);
    expect(standardPairText(1.35 * 1.004)).toBe('recorded at 33⅓ rpm, played at 45 rpm');
    expect(standardPairText(45 / 78)).toMatch(/recorded at 78 rpm, played at 45 rpm/);
    expect(standardPairText(1.03)).toBeNull();
    expect(standardPairText(1)).toBeNull();
    const sync = explainFactor(3600 / 46 / (3000 / 38.5))[0]!;
    expect(1200 * Math.log2(sync.ratio)).toBeCloseTo(7.51, 2);
    expect(sync.text).toMatch(/77\.92 rpm .*78\.26 rpm/);
  });
});
