import { describe, expect, it } from 'vitest';
import { Resampler, exactFraction, resampleSource } from '../../dsp/core/resample.ts';
import { kernelDesign } from '../../dsp/core/resample-kernel.ts';
import { ratioFromSpeedCurve, smoothCurve } from '../../dsp/core/speed-curve.ts';
import { MemorySource, collectBlocks } from '../../dsp/source.ts';
import { ParameterError } from '../../dsp/errors.ts';
import { seededRng } from '../helpers/rng.ts';
import { createSimdKernels } from '../../dsp/core/simd-kernels.ts';

function runAll(r: Resampler, input: Float64Array[], blockFrames: number): Float64Array[] {
  const parts: Float64Array[][] = [];
  const n = input[0]!.length;
  for (let i = 0; i < n; i += blockFrames) parts.push(r.process(input.map((c) => c.subarray(i, Math.min(n, i + blockFrames)))));
  parts.push(r.flush());
  const total = parts.reduce((a, p) => a + p[0]!.length, 0);
  return input.map((_, c) => {
    const y = new Float64Array(total);
    let at = 0;
    for (const p of parts) {
      y.set(p[c]!, at);
      at += p[c]!.length;
    }
    return y;
  });
}

const sine = (n: number, f: number, phase = 0) => Float64Array.from({ length: n }, (_, i) => Math.sin(2 * Math.PI * f * i + phase));

describe('Resampler: time scaling x(a·t) ↔ X(f/a)/|a|', () => {
  // Source: scaling theorem (Oppenheim & Willsky, Signals and Systems, Table 4.1). A sine of f
  // cycles/input frame becomes a sine of f/ratio cycles/output frame with the same phase at frame 0
  // (output frame 0 aligns with input frame 0), so the output is compared with the exact sine.
  for (const [label, ratio] of [['44.1→48 kHz (160/147)', 160 / 147], ['factor 1.0307', 1 / 1.0307], ['factor 0.5', 2], ['factor 4', 0.25], ['factor 1/3', 3]] as const) {
    it(`${label}: in-band sines match the exact scaled sine below −140 dB, length ⌈N·ratio⌉`, () => {
      const n = 6000;
      const r = new Resampler({ channelCount: 1, ratio, quality: 'archive' });
      for (const f of [0.013, 0.21, 0.44].map((v) => v * Math.min(1, ratio))) {
        r.reset();
        const [y] = runAll(r, [sine(n, f, 0.3)], 1000);
        expect(y!.length).toBe(Math.ceil(n * ratio - 1e-9));
        const skip = Math.ceil(300 * Math.max(1, ratio)); // edges see the silence outside the input
        let worst = 0;
        for (let k = skip; k < y!.length - skip; k++) worst = Math.max(worst, Math.abs(y![k]! - Math.sin((2 * Math.PI * f * k) / ratio + 0.3)));
        expect(20 * Math.log10(worst)).toBeLessThan(-140);
      }
    });
  }
});

describe('Resampler: streaming', () => {
  it('gives the same samples whatever the block size (1, 17, 4096 frames)', () => {
    const rng = seededRng(7);
    const x = [Float64Array.from({ length: 3000 }, () => rng() - 0.5), Float64Array.from({ length: 3000 }, () => rng() - 0.5)];
    for (const ratio of [160 / 147, 1 / 1.0213, 0.75]) {
      const ref = runAll(new Resampler({ channelCount: 2, ratio }), x, 4096);
      for (const bf of [1, 17]) {
        const y = runAll(new Resampler({ channelCount: 2, ratio }), x, bf);
        expect(y[0]!.length).toBe(ref[0]!.length);
        expect(Array.from(y[0]!)).toEqual(Array.from(ref[0]!));
        expect(Array.from(y[1]!)).toEqual(Array.from(ref[1]!));
      }
    }
  });

  it('keeps stereo channels sample-aligned (each channel equals the mono run)', () => {
    const rng = seededRng(11);
    const a = Float64Array.from({ length: 2500 }, () => rng() - 0.5);
    const b = Float64Array.from({ length: 2500 }, () => rng() - 0.5);
    for (const ratio of [1 / 1.35, 1.5]) {
      const st = runAll(new Resampler({ channelCount: 2, ratio }), [a, b], 999);
      const ma = runAll(new Resampler({ channelCount: 1, ratio }), [a], 999);
      const mb = runAll(new Resampler({ channelCount: 1, ratio }), [b], 999);
      for (let i = 0; i < ma[0]!.length; i++) {
        expect(Math.abs(st[0]![i]! - ma[0]![i]!)).toBeLessThan(1e-15);
        expect(Math.abs(st[1]![i]! - mb[0]![i]!)).toBeLessThan(1e-15);
      }
    }
  });

  it('resampleSource streams a MemorySource to the same result', async () => {
    const x = sine(5000, 0.05);
    const src = new MemorySource([x], 48000);
    const y = await collectBlocks(resampleSource(src, { ratio: 0.9, blockFrames: 777 }), 1);
    const ref = runAll(new Resampler({ channelCount: 1, ratio: 0.9 }), [x], 4096);
    expect(Array.from(y[0]!)).toEqual(Array.from(ref[0]!));
  });
});

describe('Resampler: time-varying ratio', () => {
  it('a constant curve gives the constant-ratio result (to rounding)', () => {
    const x = sine(4000, 0.07);
    for (const factor of [1.02, 0.98]) {
      const curve = ratioFromSpeedCurve({ timesSeconds: [0, 1], factors: [factor, factor] }, { inputRateHz: 4000, mode: 'play' });
      const y = runAll(new Resampler({ channelCount: 1, ratio: curve }), [x], 500)[0]!;
      const ref = runAll(new Resampler({ channelCount: 1, ratio: 1 / factor }), [x], 500)[0]!;
      expect(Math.abs(y.length - ref.length)).toBeLessThanOrEqual(1);
      let worst = 0;
      for (let i = 0; i < Math.min(y.length, ref.length); i++) worst = Math.max(worst, Math.abs(y[i]! - ref[i]!));
      expect(worst).toBeLessThan(1e-9);
    }
  });

  it('follows a linear speed ramp: the output phase is the integral of the instantaneous frequency', () => {
    // Source: exact identity. Playing along factor F(p) moves input position p by dp/dn = F(p);
    // for F(p) = 1 + c·p the position is p(n) = (e^{c·n} − 1)/c, so a sine sin(2πf·p) becomes
    // sin(2πf·p(n)) exactly. The check tolerates the (tiny) error of the 1st-order position update.
    const fs = 8000, n = 16000, f = 0.05, c = 0.02 / n;
    const x = sine(n, f);
    const times = [0, n / fs];
    const curve = ratioFromSpeedCurve({ timesSeconds: times, factors: [1, 1 + c * n] }, { inputRateHz: fs, mode: 'play' });
    const y = runAll(new Resampler({ channelCount: 1, ratio: curve }), [x], 1024)[0]!;
    let worst = 0;
    let p = 0;
    for (let k = 0; k < y.length; k++) {
      if (k > 400 && p < n - 400) worst = Math.max(worst, Math.abs(y[k]! - Math.sin(2 * Math.PI * f * p)));
      p += 1 + c * p; // the resampler's own position recursion, evaluated exactly
    }
    expect(worst).toBeLessThan(1e-7);
    // duration: Σ 1/F ≈ ∫ dp/(1 + c·p) = ln(1 + c·n)/c output frames
    expect(Math.abs(y.length - Math.log(1 + c * n) / c)).toBeLessThan(2);
  });

  it('smoothCurve passes through its points without overshoot (monotone cubic)', () => {
    const f = smoothCurve([0, 1, 2, 3], [1, 1, 2, 2]);
    expect(f(1)).toBe(1);
    expect(f(2)).toBe(2);
    for (let t = 0; t <= 3; t += 0.01) {
      expect(f(t)).toBeGreaterThanOrEqual(1);
      expect(f(t)).toBeLessThanOrEqual(2);
    }
  });
});

describe('Resampler: design and validation', () => {
  it('uses Kaiser β from the attenuation (β(147) = 0.1102·(147 − 8.7))', () => {
    // Source: Kaiser (1974); scipy.signal.kaiser_beta uses the same formula.
    expect(kernelDesign('archive').beta).toBeCloseTo(0.1102 * (147 - 8.7), 12);
    expect(kernelDesign('draft').beta).toBeCloseTo(0.1102 * (95 - 8.7), 12);
  });
  it('finds exact fractions by continued fractions', () => {
    expect(exactFraction(147 / 160, 1000)).toEqual([147, 160]);
    expect(exactFraction(1.0307, 20000)).toEqual([10307, 10000]);
    expect(exactFraction(Math.PI, 1000)).toBeNull();
  });
  it('rejects impossible settings with ParameterError', () => {
    expect(() => new Resampler({ channelCount: 1, ratio: 0 })).toThrow(ParameterError);
    expect(() => new Resampler({ channelCount: 1, ratio: 1000 })).toThrow(/ratio=1000/);
    expect(() => new Resampler({ channelCount: 0, ratio: 1 })).toThrow(ParameterError);
    const r = new Resampler({ channelCount: 2, ratio: 1 });
    expect(() => r.process([new Float64Array(4)])).toThrow(/1 channels, the resampler 2/);
  });
});

describe('Resampler: WebAssembly SIMD and plain engines agree', () => {
  // The SIMD kernels only change the order of additions, so the two engines agree to rounding.
  const rng = seededRng(23);
  const mk = (n: number) => Float64Array.from({ length: n }, () => rng() - 0.5);
  const cases: [string, number | ReturnType<typeof ratioFromSpeedCurve>][] = [
    ['exact-phase bank 160/147', 160 / 147],
    ['Farrow, factor 1.0213', 1 / 1.0213],
    ['Farrow, factor 0.77', 1 / 0.77],
    ['speed curve 0.9 → 1.2', ratioFromSpeedCurve({ timesSeconds: [0, 0.5], factors: [0.9, 1.2] }, { inputRateHz: 4000, mode: 'undo' })],
  ];
  for (const [label, ratio] of cases) {
    for (const C of [1, 2, 3]) {
      it(`${label}, ${C} channel(s)`, () => {
        const x = Array.from({ length: C }, () => mk(2500));
        const a = runAll(new Resampler({ channelCount: C, ratio, engine: 'js' }), x, 700);
        const simd = new Resampler({ channelCount: C, ratio, engine: 'auto' });
        const b = runAll(simd, x, 700);
        for (let c = 0; c < C; c++) {
          expect(b[c]!.length).toBe(a[c]!.length);
          let worst = 0;
          for (let i = 0; i < a[c]!.length; i++) worst = Math.max(worst, Math.abs(a[c]![i]! - b[c]![i]!));
          expect(worst).toBeLessThan(1e-13);
        }
        // Node 20 has WebAssembly SIMD: the fast path really ran.
        expect(simd.engine).toBe('simd');
      });
    }
  }
});

describe('SIMD dot2Run: a run of outputs in one call', () => {
  // Source: exact identity — dot2Run performs dot2's operations in the same order for each output,
  // so every sum must equal the one dot2 gives, bit for bit (tap counts that are and are not multiples of four and of eight, phase wraps).
  it('equals dot2 called once per output along the bank', () => {
    const k = createSimdKernels(8 * 20000)!;
    expect(k).not.toBeNull();
    const rng = seededRng(5);
    const f = k.f64;
    for (let i = 0; i < 12000; i++) f[i] = rng() - 0.5;
    for (const [T, den, num] of [[16, 147, 160], [10, 7, 5], [24, 89, 106], [146, 37, 44], [122, 44, 37], [20, 3, 4], [2, 5, 3], [4, 5, 3]] as const) {
      const advInt = Math.floor(num / den), advRem = num - advInt * den;
      const bank = 0, x0 = 8 * 6000, x1 = 8 * 9000, count = 60, out = 8 * 12000, one = 8 * 14000;
      let phase = 3 % den;
      k.dot2Run(bank, T, den, advInt, advRem, phase, x0, x1, count, out);
      let p0 = x0, p1 = x1;
      for (let i = 0; i < count; i++) {
        k.dot2(bank + 8 * phase * T, p0, p1, T, one);
        expect(f[12000 + 2 * i]).toBe(f[14000]);
        expect(f[12000 + 2 * i + 1]).toBe(f[14001]);
        p0 += 8 * advInt;
        p1 += 8 * advInt;
        phase += advRem;
        if (phase >= den) {
          phase -= den;
          p0 += 8;
          p1 += 8;
        }
      }
    }
  });
});
