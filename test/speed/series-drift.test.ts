/**
 * The harmonic series' curve under a real drift and a few windows pulled off it
 * (dsp/speed/harmonic-track.ts). Synthetic narrowband tracks, as the heterodyne receiver gives
 * them: z[k] = e^{j·2π·h·(δ₀·t + ½·α·t²)} + white complex noise, t = k/fb.
 */
import { describe, expect, it } from 'vitest';
import { localLineFit, measureSeries, type TrackLayout } from '../../dsp/speed/harmonic-track.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

const fb = 25;
const layout: TrackLayout = { trackRateHz: fb, timeOf: (m) => m / fb, firstValid: 0, correlation: Float64Array.of(1) };

/** One harmonic's track: a unit line with offset δ₀ + α·t (Hz of the fundamental) and noise of variance σ² (per component σ²/2). */
function track(seconds: number, h: number, d0: number, alpha: number, sigma: number, seed: number, bursts: { at: number; len: number; hz: number; amp: number }[] = []) {
  const n = Math.round(seconds * fb);
  const g = gaussian(seededRng(seed));
  const re = new Float64Array(n), im = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const t = k / fb;
    const ph = 2 * Math.PI * h * (d0 * t + 0.5 * alpha * t * t);
    re[k] = Math.cos(ph) + (sigma / Math.SQRT2) * g();
    im[k] = Math.sin(ph) + (sigma / Math.SQRT2) * g();
    // A passing note's partial beside the line: a strong tone `hz` off, for `len` seconds.
    for (const b of bursts) {
      if (t >= b.at && t < b.at + b.len) {
        re[k]! += b.amp * Math.cos(2 * Math.PI * b.hz * t);
        im[k]! += b.amp * Math.sin(2 * Math.PI * b.hz * t);
      }
    }
  }
  return { re, im, length: n };
}

describe('window scatter under a real drift', () => {
  // Source: common practice — the median absolute deviation about the median is unchanged by a
  // shift of every value, so a steady trend (which adds the same amount to each first difference)
  // must not count as scatter; the scatter of a drifting series is that of the same noise
  // without the drift.
  it('a drift of 0.5 %/min reads the same window scatter as no drift', () => {
    const f0 = 50, seconds = 60, sigma = 0.03;
    const steady = measureSeries({ fundamentalHz: f0, harmonics: [1], weights: [1], tracks: [track(seconds, 1, 0, 0, sigma, 5)] }, layout)!;
    const drift = measureSeries({ fundamentalHz: f0, harmonics: [1], weights: [1], tracks: [track(seconds, 1, -0.125, (0.005 / 60) * f0, sigma, 5)] }, layout)!;
    expect(drift.drifting).toBe(true);
    expect(steady.drifting).toBe(false);
    const ratio = drift.windowScatterHz / steady.windowScatterHz;
    expect(ratio).toBeGreaterThan(0.6);
    expect(ratio).toBeLessThan(1.6);
  });
});

describe('windows a passing partial pulls off the curve', () => {
  // Source: the ramp is synthesised (δ(t) = δ₀ + α·t exactly); the drift bar of the corrections
  // issue (residual speed error ≤ 0.02 % over the whole file, edges included) applied to the curve.
  it('a ramp of 0.01/60 s under five 1.5-s bursts 0.6 Hz off the line: the curve and its mean stay on the ramp', () => {
    const f0 = 50, seconds = 60, alpha = (0.01 / 60) * f0, d0 = -0.25;
    const bursts = [5, 17, 29, 41, 50].map((at, i) => ({ at, len: 1.5, hz: i % 2 ? -0.6 : 0.6, amp: 2 }));
    const m = measureSeries({ fundamentalHz: f0, harmonics: [1], weights: [1], tracks: [track(seconds, 1, d0, alpha, 0.05, 9, bursts)] }, layout)!;
    expect(m.drifting).toBe(true);
    expect(m.timesSeconds.length).toBeGreaterThan(50);
    m.timesSeconds.forEach((t, i) => {
      const truth = f0 + d0 + alpha * t;
      expect(Math.abs((m.fundamentalsHz[i]! / truth - 1) * 100)).toBeLessThan(0.02);
    });
    // The mean over the track is the ramp's value at its middle (a line's mean).
    expect(Math.abs((m.meanFundamentalHz / (f0 + d0 + alpha * 30) - 1) * 100)).toBeLessThan(0.005);
  });
});

describe('localLineFit', () => {
  // Source: exact identity — a least-squares line through points on a line reproduces them, and
  // points left out of the fit do not move it.
  it('reproduces a line; a point left out reads the line, not its own value', () => {
    const t = Array.from({ length: 40 }, (_, i) => 0.5 + i);
    const y = t.map((v) => 50 + 0.003 * v);
    const use = t.map(() => true);
    const line = [...y];
    const r0 = localLineFit(t, y, use, 6);
    r0.forEach((v, i) => expect(Math.abs(v - line[i]!)).toBeLessThan(1e-10));
    y[17]! += 0.04;
    use[17] = false;
    const r1 = localLineFit(t, y, use, 6);
    r1.forEach((v, i) => expect(Math.abs(v - line[i]!)).toBeLessThan(1e-10));
  });
});
