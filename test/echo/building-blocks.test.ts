import { describe, expect, it } from 'vitest';
import { EchoAdder, EchoCanceller } from '../../dsp/echo/canceller.ts';
import { Decimator } from '../../dsp/core/decimate.ts';
import { echoCepstrumAt } from '../../dsp/echo/fit.ts';
import { kernelPeakGain, kernelResponse, singleEchoKernel } from '../../dsp/echo/kernel.ts';
import { cepstrumOf } from '../../dsp/echo/log-spectrum.ts';
import { FftPlan } from '../../dsp/core/fft.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';
import { delayExact } from '../helpers/delay.ts';

const noise = (n: number, seed: number) => {
  const g = gaussian(seededRng(seed));
  return Float64Array.from({ length: n }, () => g());
};

describe('echo kernel (windowed-sinc fractional delay)', () => {
  it('matches an ideal delay e^{−jωτ} to −68 dB up to 0.8 of Nyquist', () => {
    // Source: ideal fractional delay H(ω) = e^{−jωd} (Laakso et al. 1996, IEEE SP Mag. 13(1)).
    for (const d of [24.5, 62.4, 372.96, 1123.2]) {
      const k = singleEchoKernel(d, 1);
      const n = 8192;
      const r = kernelResponse(k, n);
      let worst = 0;
      for (let bin = 0; bin <= 0.8 * (n / 2); bin++) {
        const w = (2 * Math.PI * bin) / n;
        worst = Math.max(worst, Math.hypot(r[2 * bin]! - Math.cos(w * d), r[2 * bin + 1]! + Math.sin(w * d)));
      }
      expect(20 * Math.log10(worst)).toBeLessThan(-68);
    }
  });

  it('keeps its first tap at lag ≥ 1 for short delays and stays below unity gain', () => {
    for (const d of [1.5, 3.3, 7.25]) {
      const k = singleEchoKernel(d, 0.9);
      expect(k.offset).toBeGreaterThanOrEqual(1);
      expect(kernelPeakGain(k)).toBeLessThan(1);
    }
  });
});

describe('EchoCanceller', () => {
  it('undoes an integer-delay echo to rounding level', () => {
    // Source: REFERENCES §5 — 1/(1 + a·z^{−T}) applied to a synthetic echo returns the original
    // to rounding level (exact identity of the recursion).
    const x = noise(20000, 11);
    const y = new Float64Array(x.length);
    for (let i = 0; i < x.length; i++) y[i] = x[i]! + (i >= 100 ? 0.5 * x[i - 100]! : 0);
    const c = new EchoCanceller(singleEchoKernel(100, 0.5));
    const out = new Float64Array(x.length);
    // Odd block sizes: state must carry across blocks.
    for (let at = 0, b = 777; at < x.length; at += b) c.process(y.subarray(at, at + b), out.subarray(at, at + b));
    let err = 0;
    for (let i = 0; i < x.length; i++) err = Math.max(err, Math.abs(out[i]! - x[i]!));
    expect(err).toBeLessThan(1e-12);
  });

  it('inverts EchoAdder exactly for any kernel (fractional delay, strong gain)', () => {
    // Source: exact identity (1 + K)·1/(1 + K) = 1 for the same kernel, any blocking.
    const x = noise(30000, 12);
    const k = singleEchoKernel(373.25, -0.95);
    const y = new EchoAdder(k).process(x);
    const c = new EchoCanceller(k);
    const out = new Float64Array(x.length);
    for (let at = 0, b = 4099; at < x.length; at += b) c.process(y.subarray(at, at + b), out.subarray(at, at + b));
    let err = 0;
    for (let i = 0; i < x.length; i++) err = Math.max(err, Math.abs(out[i]! - x[i]!));
    expect(err).toBeLessThan(1e-9);
  });

  it('gives the same output with its WebAssembly SIMD run loop as with the plain loops', () => {
    // Source: exact identity — both evaluate x̂[n] = y[n] − Σ k[i]·x̂[n − offset − i]; only the
    // order of the additions differs (rounding level). Short and long lags, odd runs and odd
    // block sizes, one tap and many.
    const y = noise(50000, 14);
    for (const [d, g, half] of [[14.5, 0.7, 4], [24.3, -0.9, 16], [1123.4, 0.5, 16], [377, 0.3, 1], [60.3, 0.95, 4]] as const) {
      const k = singleEchoKernel(d, g, half);
      const fast = new EchoCanceller(k), plain = new EchoCanceller(k, 'js');
      expect([fast.engine, plain.engine]).toEqual(['simd', 'js']);
      const a = new Float64Array(y.length), b = new Float64Array(y.length);
      for (let at = 0, n = 3001; at < y.length; at += n) {
        fast.process(y.subarray(at, at + n), a.subarray(at, at + n));
        plain.process(y.subarray(at, at + n), b.subarray(at, at + n));
      }
      let err = 0, peak = 0;
      for (let i = 0; i < y.length; i++) {
        err = Math.max(err, Math.abs(a[i]! - b[i]!));
        peak = Math.max(peak, Math.abs(b[i]!));
      }
      expect(err / peak).toBeLessThan(1e-12);
    }
  });

  it('removes a band-limited fractional echo made by the DFT shift theorem to below −60 dB', () => {
    // Source: DFT time-shift theorem (REFERENCES §10) for the echo; the residual is the kernel's
    // interpolation error, confined by lowpass-filtering the test signal to 0.7 of Nyquist.
    const raw = noise(1 << 15, 13);
    // Band-limit with an ideal brick-wall in the DFT domain.
    const plan = new FftPlan(1 << 15);
    const spec = plan.createHalfSpectrum();
    plan.realForward(raw, spec);
    for (let k = Math.floor(0.7 * (1 << 14)); k <= 1 << 14; k++) spec[2 * k] = spec[2 * k + 1] = 0;
    const x = new Float64Array(1 << 15);
    plan.realInverse(spec, x);
    const d = 250.37, g = 0.6;
    const e = delayExact(x, d);
    const y = x.map((v, i) => v + g * e[i]!);
    const out = new EchoCanceller(singleEchoKernel(d, g)).process(y);
    let num = 0, den = 0;
    for (let i = 2000; i < x.length - 2000; i++) {
      num += (out[i]! - x[i]!) ** 2;
      den += (y[i]! - x[i]!) ** 2;
    }
    expect(10 * Math.log10(num / den)).toBeLessThan(-60);
  });
});

describe('echo cepstrum model', () => {
  it('reproduces the published cepstrum of an echo factor (a = 0.5, T = 100, N = 4096)', () => {
    // Source: REFERENCES §5 table [DERIVED; Oppenheim & Schafer ch. 13]: the real cepstrum of
    // log|H| is a/2, −a²/4, a³/6 at T, 2T, 3T; ours is of log|H|² (twice as large).
    const n = 4096;
    expect(echoCepstrumAt(100, 100, 0.5, n)).toBeCloseTo(2 * 0.25, 10);
    expect(echoCepstrumAt(200, 100, 0.5, n)).toBeCloseTo(2 * -0.0625, 10);
    expect(echoCepstrumAt(300, 100, 0.5, n)).toBeCloseTo(2 * 0.02083333, 7);
    expect(echoCepstrumAt(n - 100, 100, 0.5, n)).toBeCloseTo(0.5, 10); // same value at −T
    expect(Math.abs(echoCepstrumAt(150, 100, 0.5, n))).toBeLessThan(1e-12);
  });

  it('matches an FFT of the sampled log ripple for fractional delays', () => {
    // Source: definition of the N-point real cepstrum of the mirrored half spectrum.
    const n = 4096;
    for (const [tau, g] of [[62.4, 0.9], [373.25, -0.5], [1500.3, 0.95]] as const) {
      const L = new Float64Array(n / 2 + 1);
      for (let k = 0; k <= n / 2; k++) L[k] = Math.log(1 + g * g + 2 * g * Math.cos(((2 * Math.PI * k) / n) * tau));
      const c = cepstrumOf(L, new FftPlan(n));
      for (const q of [1, 5, Math.round(tau) - 3, Math.round(tau), Math.round(2 * tau), 2048]) {
        expect(echoCepstrumAt(q, tau, g, n)).toBeCloseTo(c[q]!, 9);
      }
    }
  });
});

describe('Decimator', () => {
  it('gives the same output with its WebAssembly SIMD dot products as with the plain loop', () => {
    // Source: exact identity — the same FIR sums, added in a different order (rounding level);
    // even and odd tap counts, uneven blocks.
    const x = noise(40001, 15);
    for (const [factor, order] of [[12, 3], [5, 2], [8, 5]] as const) {
      const fast = new Decimator(factor, order), plain = new Decimator(factor, order, 'js');
      expect(fast.delaySamples).toBe(plain.delaySamples);
      const a: number[] = [], b: number[] = [];
      for (let at = 0, n = 1237; at < x.length; at += n) {
        a.push(...fast.process(x.subarray(at, at + n)));
        b.push(...plain.process(x.subarray(at, at + n)));
      }
      expect(a.length).toBe(b.length);
      expect(Math.max(...a.map((v, i) => Math.abs(v - b[i]!)))).toBeLessThan(1e-14);
    }
  });

  it('has the third-order CIC response [sin(πfD/fs)/(D·sin(πf/fs))]³', () => {
    // Source: Hogenauer (1981), IEEE TASSP 29(2), CIC frequency response; tones measured after
    // decimating 48 kHz by 12 (new rate 4 kHz), compared in dB within 0.05 dB.
    const fs = 48000, f = 12;
    for (const hz of [250, 1000, 1700, 3000, 5100]) {
      const x = Float64Array.from({ length: 48000 }, (_, i) => Math.sin((2 * Math.PI * hz * i) / fs));
      const d = new Decimator(f);
      const out = Float64Array.from([...d.process(x.subarray(0, 30001)), ...d.process(x.subarray(30001))]);
      expect(out.length).toBe(4000);
      // Amplitude from the least-squares fit of a tone at the aliased frequency.
      const fa = Math.abs(((hz + 2000) % 4000) - 2000);
      let c = 0, s = 0, cc = 0, ss = 0;
      for (let i = 100; i < out.length; i++) {
        const ph = (2 * Math.PI * fa * i) / 4000;
        c += out[i]! * Math.cos(ph); s += out[i]! * Math.sin(ph);
        cc += Math.cos(ph) ** 2; ss += Math.sin(ph) ** 2;
      }
      const amp = Math.hypot(c / cc, s / ss);
      const expected = Math.abs(Math.sin((Math.PI * hz * f) / fs) / (f * Math.sin((Math.PI * hz) / fs))) ** 3;
      expect(20 * Math.log10(amp)).toBeCloseTo(20 * Math.log10(expected), 1);
    }
  });
});
