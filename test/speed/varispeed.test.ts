import { describe, expect, it } from 'vitest';
import { MemorySource, collectBlocks } from '../../dsp/source.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { varispeed } from '../../dsp/ops/varispeed.ts';
import { speed } from '../../dsp/ops/speed.ts';
import { readFileSync } from 'node:fs';
import { openAudio } from '../../main/io/index.ts';

/** Frequency (cycles/sample) of the strongest line near `guess`, by maximising |Σ w·y·e^{−jωn}| (golden section). */
function lineFrequency(y: Float64Array, guess: number, span: number): number {
  const n = y.length;
  const w = Float64Array.from({ length: n }, (_, k) => 0.5 - 0.5 * Math.cos((2 * Math.PI * (k + 0.5)) / n));
  const mag = (f: number) => {
    let re = 0, im = 0;
    for (let k = 0; k < n; k++) {
      re += w[k]! * y[k]! * Math.cos(2 * Math.PI * f * k);
      im -= w[k]! * y[k]! * Math.sin(2 * Math.PI * f * k);
    }
    return re * re + im * im;
  };
  let lo = guess - span, hi = guess + span;
  const g = (Math.sqrt(5) - 1) / 2;
  for (let i = 0; i < 60; i++) {
    const a = hi - g * (hi - lo), b = lo + g * (hi - lo);
    if (mag(a) > mag(b)) hi = b;
    else lo = a;
  }
  return (lo + hi) / 2;
}

describe('varispeed: the time-scaling identity x(a·t) ↔ X(f/a)/|a|', () => {
  // Source: scaling theorem (REFERENCES.md §10). Played a times as fast, a component at f Hz sits at
  // f·a Hz, the duration is N/a, and (Parseval) the energy Σy² = Σx²/a because every sample value
  // is kept while the number of samples shrinks by a.
  const fs = 16000, n = 16000;
  const tonesHz = [97.3, 1234.5, 3000];
  // Raised-cosine fade in/out so the ends are silent and the energy is all in-band.
  const x = Float64Array.from({ length: n }, (_, k) => {
    const fade = Math.min(1, k / 1600, (n - 1 - k) / 1600);
    const env = 0.5 - 0.5 * Math.cos(Math.PI * Math.max(0, fade));
    return env * tonesHz.reduce((s, f, i) => s + (0.3 / (i + 1)) * Math.sin((2 * Math.PI * f * k) / fs + i), 0);
  });
  const ex = x.reduce((s, v) => s + v * v, 0);
  for (const a of [0.5, 0.9, 1.35, 2]) {
    it(`--factor ${a}`, async () => {
      const r = await varispeed.prepare(new MemorySource([x, x], fs), validateParams(varispeed.params, { factor: a }), silentContext);
      expect(r.sampleRateHz).toBe(fs);
      const y = await collectBlocks(r.blocks, 2);
      expect(Math.abs(y[0]!.length - n / a)).toBeLessThanOrEqual(1);
      expect(r.framesHint).toBe(y[0]!.length);
      for (const f of tonesHz) {
        const got = lineFrequency(y[0]!, (f * a) / fs, 2 / y[0]!.length) * fs;
        expect(Math.abs(got / (f * a) - 1)).toBeLessThan(1e-4);
      }
      const ey = y[0]!.reduce((s, v) => s + v * v, 0);
      expect(ey / (ex / a)).toBeCloseTo(1, 6);
      // Stereo channels stay sample-aligned: identical inputs give identical outputs.
      expect(Array.from(y[1]!)).toEqual(Array.from(y[0]!));
    });
  }

  it('--semitones 12 is --factor 2; --undo 2 is --factor 0.5; --cents and --rate', async () => {
    const src = new MemorySource([x], fs);
    const get = async (p: Record<string, unknown>) => {
      const r = await varispeed.prepare(src, validateParams(varispeed.params, p as never), silentContext);
      return { r, y: (await collectBlocks(r.blocks, 1))[0]! };
    };
    const a = await get({ semitones: 12 }), b = await get({ factor: 2 });
    expect(Array.from(a.y)).toEqual(Array.from(b.y));
    const c = await get({ undo: 2 }), d = await get({ factor: 0.5 });
    expect(Array.from(c.y)).toEqual(Array.from(d.y));
    const e = await get({ cents: -1200 });
    expect(e.r.resolved.factor).toBeCloseTo(0.5, 12);
    // 16 kHz → 22.05 kHz at factor 1: same duration, tones unchanged in Hz.
    const f = await get({ factor: 1, rateHz: 22050 });
    expect(f.r.sampleRateHz).toBe(22050);
    expect(Math.abs(f.y.length - (n * 22050) / fs)).toBeLessThanOrEqual(1);
    const got = lineFrequency(f.y, 1234.5 / 22050, 2 / f.y.length) * 22050;
    expect(Math.abs(got / 1234.5 - 1)).toBeLessThan(1e-4);
  });
});

describe('the demo recording (assets/demo; its true factor is stored beside it)', () => {
  it('speed reads the stored factor from hum and tone, and varispeed --undo brings it to 1', async () => {
    const root = new URL('../../assets/demo/', import.meta.url).pathname;
    const p = JSON.parse(readFileSync(root + 'thornbury-reel7.json', 'utf8')) as { speedFactor: number; mainsHz: number; toneHz: number; sampleRateHz: number };
    const file = await openAudio(root + 'thornbury-reel7.wav');
    try {
      const r = await speed.run(file, validateParams(speed.params, {}), silentContext);
      expect(r.method).not.toBeNull();
      expect(Math.abs(r.factor / p.speedFactor - 1)).toBeLessThan(2e-4);
      expect(r.candidates.some((c) => c.method === 'hum' && c.mainsHz === p.mainsHz && Math.abs(c.factor / p.speedFactor - 1) < 2e-4)).toBe(true);
      expect(r.candidates.some((c) => c.method === 'tone' && c.toneHz === p.toneHz && Math.abs(c.factor / p.speedFactor - 1) < 2e-4)).toBe(true);
      const out = await varispeed.prepare(file, validateParams(varispeed.params, { undo: r.factor, quality: 'draft' }), silentContext);
      const y = await collectBlocks(out.blocks, 2);
      const after = await speed.run(new MemorySource(y, p.sampleRateHz), validateParams(speed.params, {}), silentContext);
      expect(Math.abs(after.factor - 1)).toBeLessThan(Math.max(2e-4, (3 * (after.uncertaintyPercent ?? 0)) / 100));
    } finally {
      await file.close();
    }
  });
});
