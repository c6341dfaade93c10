/** Exact Fourier identities and the STFT / fractional-delay / biquad building blocks. */
import { describe, expect, it } from 'vitest';
import { FftPlan } from '../../dsp/core/fft.ts';
import { StftProcessor, StftAnalyzer } from '../../dsp/core/stft.ts';
import { FractionalDelay } from '../../dsp/core/fractional-delay.ts';
import { biquadResponse, designBiquad } from '../../dsp/core/biquad.ts';
import { makeWindow } from '../../dsp/core/windows.ts';
import { seededRng } from '../helpers/rng.ts';

const N = 1024;
function spectrum(x: Float64Array): Float64Array {
  const p = new FftPlan(x.length);
  const s = p.createHalfSpectrum();
  p.realForward(x, s);
  return s;
}
const noise = (n: number, seed: number) => {
  const r = seededRng(seed);
  return Float64Array.from({ length: n }, () => r() - 0.5);
};

describe('Fourier identities (Oppenheim & Schafer, DTSP, DFT property table)', () => {
  it('Parseval: Σ|x|² = (1/N)Σ|X|²', () => {
    // Source: Parseval's relation for the DFT.
    const x = noise(N, 1);
    const s = spectrum(x);
    let e = 0;
    for (const v of x) e += v * v;
    let E = s[0]! ** 2 + s[N]! ** 2;
    for (let k = 1; k < N / 2; k++) E += 2 * (s[2 * k]! ** 2 + s[2 * k + 1]! ** 2);
    expect(E / N).toBeCloseTo(e, 10);
  });

  it('circular time shift keeps |X| and adds the phase slope −2πkm/N', () => {
    // Source: DFT shift property x[(n−m) mod N] ↔ e^{−j2πkm/N} X[k].
    const x = noise(N, 2);
    const m = 37;
    const y = Float64Array.from({ length: N }, (_, n) => x[(n - m + N) % N]!);
    const X = spectrum(x), Y = spectrum(y);
    for (let k = 0; k <= N / 2; k++) {
      const a = (-2 * Math.PI * k * m) / N;
      const er = X[2 * k]! * Math.cos(a) - X[2 * k + 1]! * Math.sin(a);
      const ei = X[2 * k]! * Math.sin(a) + X[2 * k + 1]! * Math.cos(a);
      expect(Y[2 * k]!).toBeCloseTo(er, 9);
      expect(Y[2 * k + 1]!).toBeCloseTo(ei, 9);
    }
  });

  it('reversal of a real signal gives the conjugate spectrum', () => {
    // Source: x[(−n) mod N] ↔ X*[k] for real x.
    const x = noise(N, 3);
    const y = Float64Array.from({ length: N }, (_, n) => x[(N - n) % N]!);
    const X = spectrum(x), Y = spectrum(y);
    for (let k = 0; k <= N / 2; k++) {
      expect(Y[2 * k]!).toBeCloseTo(X[2 * k]!, 10);
      expect(Y[2 * k + 1]!).toBeCloseTo(-X[2 * k + 1]!, 10);
    }
  });

  it('modulation by a cosine moves the spectrum by ±f0', () => {
    // Source: x[n]cos(2πk0n/N) ↔ ½(X[k−k0] + X[k+k0]).
    const k0 = 100;
    // A band-limited x (bins 0…40) so the shifted copies do not overlap.
    const p = new FftPlan(N);
    const base = p.createHalfSpectrum();
    const r = seededRng(4);
    for (let k = 1; k <= 40; k++) {
      base[2 * k] = r() - 0.5;
      base[2 * k + 1] = r() - 0.5;
    }
    const x = new Float64Array(N);
    p.realInverse(base, x);
    const y = x.map((v, n) => v * Math.cos((2 * Math.PI * k0 * n) / N));
    const Y = spectrum(y);
    for (let k = k0 - 40; k <= k0 + 40; k++) {
      const src = Math.abs(k - k0);
      const sign = k >= k0 ? 1 : -1; // X[−k] = X*[k]
      expect(Y[2 * k]!).toBeCloseTo(0.5 * base[2 * src]!, 10);
      expect(Y[2 * k + 1]!).toBeCloseTo(0.5 * sign * base[2 * src + 1]!, 10);
    }
  });

  it('a rectangle transforms to the Dirichlet kernel (rect ↔ sinc)', () => {
    // Source: length-L rectangle ↔ |sin(ωL/2)/sin(ω/2)| (Oppenheim & Willsky, Table 5.1).
    const L = 33;
    const x = new Float64Array(N);
    x.fill(1, 0, L);
    const X = spectrum(x);
    for (let k = 1; k < N / 2; k++) {
      const w = (2 * Math.PI * k) / N;
      const mag = Math.hypot(X[2 * k]!, X[2 * k + 1]!);
      expect(mag).toBeCloseTo(Math.abs(Math.sin((w * L) / 2) / Math.sin(w / 2)), 9);
    }
  });
});

describe('STFT → ISTFT', () => {
  for (const [fftSize, hopSize] of [
    [1024, 512],
    [1024, 256],
    [2048, 512],
  ] as const) {
    it(`reconstructs to 1e-10 (Hann, fftSize ${fftSize}, hop ${hopSize}), streamed in odd blocks`, () => {
      // Source: exact WOLA reconstruction (Allen 1977; Griffin & Lim 1984): Σ w_a·w_s normalised.
      const x = noise(48_001, fftSize + hopSize);
      const proc = new StftProcessor({ fftSize, hopSize, window: 'hann' }, () => {});
      const out: number[] = [];
      const sizes = [1, 333, 7, 4097, 1000, 13];
      for (let i = 0, j = 0; i < x.length; j++) {
        const n = Math.min(sizes[j % sizes.length]!, x.length - i);
        out.push(...proc.process(x.subarray(i, i + n)));
        i += n;
      }
      out.push(...proc.flush());
      expect(out.length).toBe(x.length);
      let err = 0;
      for (let i = 0; i < x.length; i++) err = Math.max(err, Math.abs(out[i]! - x[i]!));
      expect(err).toBeLessThan(1e-10);
    });
  }

  it('frames equal the DFT of the windowed segment they cover', () => {
    // Source: STFT definition; frame k covers samples [kH − (N−H), kH + H).
    const fftSize = 256, hopSize = 64;
    const x = noise(2000, 9);
    const frames: Float64Array[] = [];
    const a = new StftAnalyzer({ fftSize, hopSize }, (s) => frames.push(s.slice()));
    a.push(x);
    const k = 10;
    const start = k * hopSize - (fftSize - hopSize);
    const w = makeWindow('hann', fftSize);
    const seg = Float64Array.from({ length: fftSize }, (_, i) => (start + i >= 0 ? x[start + i]! : 0) * w[i]!);
    const ref = spectrum(seg);
    for (let i = 0; i < ref.length; i++) expect(frames[k]![i]!).toBeCloseTo(ref[i]!, 10);
  });
});

describe('fractional delay', () => {
  it('delays band-limited sines by 0.37 samples to better than −90 dB', () => {
    // Source: exact identity sin(ω(n − D)) for a delayed sinusoid; Kaiser-windowed sinc, 64 taps.
    const fs = 48000, D = 0.37, n = 20000;
    const freqs = [440, 3150, 10000, 17000];
    const make = (shift: number) =>
      Float64Array.from({ length: n }, (_, t) => freqs.reduce((s, f) => s + 0.2 * Math.sin((2 * Math.PI * f * (t - shift)) / fs), 0));
    const fd = new FractionalDelay({ delaySamples: D, halfTaps: 32, attenuationDb: 110 });
    const x = make(0);
    const y = new Float64Array(n);
    y.set(fd.process(x.subarray(0, 5000)), 0);
    const rest = fd.process(x.subarray(5000));
    const tail = fd.flush();
    y.set(rest, n - rest.length - tail.length);
    y.set(tail, n - tail.length);
    const ideal = make(D);
    let e = 0, s = 0;
    for (let t = 100; t < n - 100; t++) {
      e += (y[t]! - ideal[t]!) ** 2;
      s += ideal[t]! ** 2;
    }
    expect(10 * Math.log10(e / s)).toBeLessThan(-90);
  });

  it('handles negative and integer delays with output aligned to input', () => {
    // Source: exact identity for integer shifts.
    const x = noise(500, 5);
    const adv = new FractionalDelay({ delaySamples: -3 });
    const y = [...adv.process(x), ...adv.flush()];
    expect(y.length).toBe(500);
    for (let t = 0; t < 497; t++) expect(y[t]!).toBeCloseTo(x[t + 3]!, 12);
  });
});

describe('biquad designs (bilinear transform with pre-warping)', () => {
  it('meet their defining values at the design frequency', () => {
    // Source: R. Bristow-Johnson, "Cookbook formulae for audio EQ biquad filter coefficients":
    // pre-warping puts the analogue prototype's response exactly at f0.
    const fs = 48000;
    const lp = designBiquad({ kind: 'lowpass', frequencyHz: 1000, sampleRateHz: fs });
    expect(biquadResponse(lp, 1000, fs).magnitudeDb).toBeCloseTo(-3.0103, 3); // Butterworth −3 dB point
    expect(biquadResponse(lp, 1, fs).magnitudeDb).toBeCloseTo(0, 4);
    const pk = designBiquad({ kind: 'peaking', frequencyHz: 2500, sampleRateHz: fs, q: 2, gainDb: 6 });
    expect(biquadResponse(pk, 2500, fs).magnitudeDb).toBeCloseTo(6, 9);
    const notch = designBiquad({ kind: 'notch', frequencyHz: 60, sampleRateHz: fs, q: 10 });
    expect(biquadResponse(notch, 60, fs).magnitudeDb).toBeLessThan(-200);
    const hs = designBiquad({ kind: 'highshelf', frequencyHz: 1000, sampleRateHz: fs, gainDb: 4 });
    expect(biquadResponse(hs, 20000, fs).magnitudeDb).toBeCloseTo(4, 1);
    expect(biquadResponse(hs, 1000, fs).magnitudeDb).toBeCloseTo(2, 6); // shelf midpoint = half the gain
  });
});
