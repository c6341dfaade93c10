/** The `spectrum` analysis: dBFS scaling, evenly spaced frames for long files, bandwidth, compare. */
import { describe, expect, it } from 'vitest';
import { spectrum } from '../../dsp/ops/spectrum.ts';
import { MemorySource } from '../../dsp/source.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { welchSpectrum } from '../../dsp/core/welch.ts';
import { FftPlan } from '../../dsp/core/fft.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

const fs = 48000;

/**
 * White Gaussian noise band-limited to `cutoffHz` by zeroing FFT bins (exact brick wall), over a
 * white floor 80 dB down (real transfers always have one: hiss, converter noise, dither).
 */
function bandLimitedNoise(n: number, cutoffHz: number, seed: number): Float64Array {
  const g = gaussian(seededRng(seed));
  const x = Float64Array.from({ length: n }, () => 0.1 * g());
  const p = new FftPlan(n);
  const s = p.createHalfSpectrum();
  p.realForward(x, s);
  for (let k = Math.ceil((cutoffHz * n) / fs); k <= n / 2; k++) s[2 * k] = s[2 * k + 1] = 0;
  p.realInverse(s, x);
  for (let i = 0; i < n; i++) x[i]! += 1e-5 * g();
  return x;
}

describe('spectrum', () => {
  it('reads a full-scale bin-centred sine at 0 dBFS in every channel', async () => {
    // Source: dBFS convention (full-scale sine peaks at 0 dBFS, AES17) and Welch with coherent-gain correction.
    const k0 = 256, f = (k0 * fs) / 8192;
    const x = Float64Array.from({ length: fs * 2 }, (_, t) => Math.sin((2 * Math.PI * f * t) / fs));
    const r = await spectrum.run(new MemorySource([x, x.map((v) => v / 2)], fs), { fftSize: 8192 }, silentContext);
    expect(r.levelsDb[0]![k0]!).toBeCloseTo(0, 2);
    expect(r.levelsDb[1]![k0]!).toBeCloseTo(-6.0206, 2);
  });

  it('finds the band edge of noise cut at 15 kHz and full band for unfiltered noise', async () => {
    // Source: construction (brick-wall band limit); the rule is documented in dsp/levels/spectrum.ts.
    const cut = bandLimitedNoise(1 << 19, 15000, 3);
    const r = await spectrum.run(new MemorySource([cut], fs), { fftSize: 8192 }, silentContext);
    expect(Math.abs(r.bandwidthHz - 15000)).toBeLessThan(300);
    const full = bandLimitedNoise(1 << 19, 24000, 4);
    const r2 = await spectrum.run(new MemorySource([full], fs), { fftSize: 8192 }, silentContext);
    expect(r2.bandwidthHz).toBeGreaterThan(23000);
  });

  it('estimates a long file from evenly spaced frames within 0.3 dB of the full average', async () => {
    // Source: common practice — the mean of K independent periodogram frames has a relative standard
    // deviation of 1/√K (Welch 1967); with 400 frames of stationary noise, ±0.3 dB per bin averaged over a band.
    const x = bandLimitedNoise(1 << 21, 20000, 5);
    const src = new MemorySource([x], fs);
    const full = await welchSpectrum(src, { fftSize: 4096 });
    const sparse = await welchSpectrum(src, { fftSize: 4096, maxFrames: 400 });
    expect(full.frames).toBeGreaterThan(1000);
    expect(sparse.frames).toBe(400);
    // Compare band averages (1 kHz wide) so single-bin scatter does not dominate.
    for (let f0 = 1000; f0 < 19000; f0 += 3000) {
      const a = Math.round((f0 * 4096) / fs), b = Math.round(((f0 + 1000) * 4096) / fs);
      let pf = 0, ps = 0;
      for (let k = a; k < b; k++) {
        pf += full.meanPower[0]![k]!;
        ps += sparse.meanPower[0]![k]!;
      }
      expect(Math.abs(10 * Math.log10(ps / pf))).toBeLessThan(0.3);
    }
  });

  it('compare gives after − before per channel', async () => {
    // Source: exact identity — halving the amplitude is −6.02 dB at every bin.
    const x = bandLimitedNoise(1 << 16, 20000, 6);
    const a = await spectrum.run(new MemorySource([x], fs), {}, silentContext);
    const b = await spectrum.run(new MemorySource([x.map((v) => v / 2)], fs), {}, silentContext);
    const d = spectrum.compare!(a, b) as { differenceDb: number[][] };
    for (const v of d.differenceDb[0]!.slice(10, 3000)) expect(v).toBeCloseTo(-6.0206, 1);
    expect(spectrum.render!(a, 'svg', b)).toMatch(/^<svg[\s\S]*<\/svg>$/);
    expect(spectrum.render!(a, 'csv').split('\n')[0]).toBe('frequencyHz,levelDb_ch1');
  });
});
