/**
 * The kernels behind FftPlan (TypeScript, and WebAssembly SIMD where available) at every
 * power-of-two size: against the direct DFT for the smallest sizes, against fft.js (an independent
 * npm implementation) at every size, round trips, the input/aliasing cases the plan promises to
 * handle, and the two kernels against each other (they evaluate the same expressions, so they must
 * agree exactly).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import FFT from 'fft.js';
import { FftPlan, fftKernelsFor, setFftKernels, type FftKernels } from '../../dsp/core/fft.ts';
import { fftModuleBytes, wasmFft } from '../../dsp/core/fft-wasm.ts';
import { seededRng } from '../helpers/rng.ts';

type FftJs = {
  transform(out: Float64Array, data: Float64Array): void;
  inverseTransform(out: Float64Array, data: Float64Array): void;
};

const SIZES = Array.from({ length: 16 }, (_, i) => 2 ** (i + 1)); // 2 … 65536

const noise = (n: number, seed: number) => {
  const r = seededRng(seed);
  return Float64Array.from({ length: n }, () => r() - 0.5);
};
const maxAbs = (a: ArrayLike<number>) => {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]!));
  return m;
};
const maxDiff = (a: ArrayLike<number>, b: ArrayLike<number>, len = a.length) => {
  let m = 0;
  for (let i = 0; i < len; i++) m = Math.max(m, Math.abs(a[i]! - b[i]!));
  return m;
};

/** Direct DFT of interleaved complex data; sign −1 forward, +1 inverse (unscaled). */
function directDft(x: Float64Array, sign: number): Float64Array {
  const n = x.length / 2;
  const out = new Float64Array(2 * n);
  for (let k = 0; k < n; k++) {
    let sr = 0, si = 0;
    for (let t = 0; t < n; t++) {
      const a = (sign * 2 * Math.PI * ((k * t) % n)) / n;
      const c = Math.cos(a), s = Math.sin(a);
      sr += x[2 * t]! * c - x[2 * t + 1]! * s;
      si += x[2 * t]! * s + x[2 * t + 1]! * c;
    }
    out[2 * k] = sr;
    out[2 * k + 1] = si;
  }
  return out;
}

describe('shared WebAssembly memory', () => {
  // First in this file, before other tests have grown the memory to its largest size.
  it('plans keep working after larger plans grow the memory', () => {
    // Source: exact identity — the same plan and input give the same spectrum before and after.
    const memory = () => wasmFft()!.kernels.memory.buffer.byteLength;
    const small = new FftPlan(512);
    const x = noise(512, 81), win = noise(512, 82);
    const before = small.createHalfSpectrum(), after = small.createHalfSpectrum();
    small.realForwardWindowed(x, 0, win, before);
    const bytesBefore = memory();
    for (const n of [8192, 32768, 65536]) {
      const big = new FftPlan(n);
      const y = noise(2 * n, n), back = big.createComplex(), spec = big.createComplex();
      big.forward(y, spec); // complex tables of the full size too
      big.inverse(spec, back);
      expect(maxDiff(back, y)).toBeLessThan(1e-14);
    }
    expect(memory()).toBeGreaterThan(bytesBefore);
    small.realForwardWindowed(x, 0, win, after);
    expect(maxDiff(after, before)).toBe(0);
  });

  it('sizes above 65536 run on the TypeScript kernels (the shared memory never shrinks)', () => {
    expect(new FftPlan(65536).kernels).toBe('wasm-simd');
    expect(new FftPlan(131072).kernels).toBe('js');
  });
});

/**
 * Plans made by the tests of the enclosing block use the given kernels ('auto' = WebAssembly SIMD
 * where available). Plans pick their kernels at construction, and every test builds its own.
 */
function useKernels(choice: 'auto' | 'js'): void {
  beforeEach(() => setFftKernels(choice));
  afterEach(() => setFftKernels('auto'));
}

for (const choice of ['auto', 'js'] as const) {
  describe(`FftPlan (${choice} kernels) at the smallest sizes`, () => {
    useKernels(choice);
    // Source: the DFT definition X[k] = Σ x[n] e^{−j2πkn/N} (Oppenheim & Schafer, DTSP, ch. 8).
    for (const n of [2, 4, 8, 16, 32]) {
      it(`N=${n}: complex forward/inverse and real forward/inverse equal the direct DFT`, () => {
        const plan = new FftPlan(n);
        const z = noise(2 * n, 17 + n);
        const out = plan.createComplex();
        plan.forward(z, out);
        expect(maxDiff(out, directDft(z, -1))).toBeLessThan(1e-13);
        plan.inverse(z, out);
        const inv = directDft(z, 1).map((v) => v / n);
        expect(maxDiff(out, inv)).toBeLessThan(1e-14);

        const x = noise(n, 31 + n);
        const xc = new Float64Array(2 * n);
        for (let i = 0; i < n; i++) xc[2 * i] = x[i]!;
        const full = directDft(xc, -1);
        const half = plan.createHalfSpectrum();
        plan.realForward(x, half);
        expect(maxDiff(half, full, n + 2)).toBeLessThan(1e-13);
        // Bins 0 and N/2 of a real signal are real: the plan writes exact zeros there.
        expect(half[1]).toBe(0);
        expect(half[n + 1]).toBe(0);
        const y = new Float64Array(n);
        plan.realInverse(half, y);
        expect(maxDiff(y, x)).toBeLessThan(1e-15);
      });
    }
  });

  describe(`FftPlan (${choice} kernels) at every power of two from 2 to 65536`, () => {
    useKernels(choice);
    it('complex transforms agree with fft.js and real transforms with fft.js on the zero-imaginary input', () => {
      // Source: fft.js 4.0.4 (npm), an independent radix-4 implementation; float64 tolerance.
      for (const n of SIZES) {
        const plan = new FftPlan(n);
        const ref = new FFT(n) as unknown as FftJs;
        const z = noise(2 * n, n);
        const ours = plan.createComplex(), theirs = plan.createComplex();
        plan.forward(z, ours);
        ref.transform(theirs, z);
        const scale = maxAbs(theirs);
        expect(maxDiff(ours, theirs) / scale, `forward N=${n}`).toBeLessThan(1e-13);
        plan.inverse(z, ours);
        ref.inverseTransform(theirs, z);
        expect(maxDiff(ours, theirs) / maxAbs(theirs), `inverse N=${n}`).toBeLessThan(1e-13);

        const x = noise(n, 3 * n);
        const xc = new Float64Array(2 * n);
        for (let i = 0; i < n; i++) xc[2 * i] = x[i]!;
        ref.transform(theirs, xc);
        const half = plan.createHalfSpectrum();
        plan.realForward(x, half);
        expect(maxDiff(half, theirs, n + 2) / maxAbs(theirs), `real forward N=${n}`).toBeLessThan(1e-13);
      }
    });

    it('round trips: inverse(forward(z)) = z and realInverse(realForward(x)) = x', () => {
      // Source: exact identity x = IDFT(DFT(x)); rounding grows like log2 N.
      for (const n of SIZES) {
        const plan = new FftPlan(n);
        const z = noise(2 * n, 5 * n);
        const spec = plan.createComplex(), back = plan.createComplex();
        plan.forward(z, spec);
        plan.inverse(spec, back);
        expect(maxDiff(back, z), `complex N=${n}`).toBeLessThan(1e-14);
        const x = noise(n, 7 * n);
        const half = plan.createHalfSpectrum();
        const y = new Float64Array(n);
        plan.realForward(x, half);
        plan.realInverse(half, y);
        expect(maxDiff(y, x), `real N=${n}`).toBeLessThan(1e-14);
      }
    });

    it('realInverse treats bins 0 and N/2 like the fft.js-based split it replaced', () => {
      // Source: the split identity IDFT_{N/2}(E + jO) = x[2n] + j·x[2n+1] with
      // E[k] = (X[k] + X*[N/2−k])/2, O[k] = (X[k] − X*[N/2−k])/2·e^{+j2πk/N}, evaluated here with
      // fft.js; a half spectrum with imaginary parts at DC and Nyquist (not a real signal's) must
      // give the same samples as before.
      for (const n of [4, 8, 64, 2048]) {
        const plan = new FftPlan(n);
        const h = n / 2;
        const spec = noise(n + 2, 11 * n);
        const z = new Float64Array(n);
        for (let k = 0; k < h; k++) {
          const xr = spec[2 * k]!, xi = spec[2 * k + 1]!;
          const yr = spec[2 * (h - k)]!, yi = -spec[2 * (h - k) + 1]!;
          const c = Math.cos((2 * Math.PI * k) / n), s = Math.sin((2 * Math.PI * k) / n);
          const dr = 0.5 * (xr - yr), di = 0.5 * (xi - yi);
          z[2 * k] = 0.5 * (xr + yr) - (dr * s + di * c);
          z[2 * k + 1] = 0.5 * (xi + yi) + (dr * c - di * s);
        }
        const expected = new Float64Array(n);
        (new FFT(h) as unknown as FftJs).inverseTransform(expected, z);
        const y = new Float64Array(n);
        plan.realInverse(spec, y);
        expect(maxDiff(y, expected), `N=${n}`).toBeLessThan(1e-15);
      }
    });
  });

  describe(`FftPlan (${choice} kernels) inputs`, () => {
    useKernels(choice);
    it('realForward accepts plain arrays, Float32Arrays and an input sharing memory with the output', () => {
      // Source: exact identity — the same numbers give the same spectrum whatever holds them.
      const n = 256;
      const plan = new FftPlan(n);
      const x = noise(n, 99);
      const want = plan.createHalfSpectrum();
      plan.realForward(x, want);
      const got = plan.createHalfSpectrum();
      plan.realForward(Array.from(x), got);
      expect(maxDiff(got, want)).toBe(0);
      const x32 = Float32Array.from(x);
      const want32 = plan.createHalfSpectrum();
      plan.realForward(Float64Array.from(x32), want32);
      plan.realForward(x32, got);
      expect(maxDiff(got, want32)).toBe(0);
      // Input in the first N numbers of the output buffer itself.
      const shared = plan.createHalfSpectrum();
      shared.set(x);
      plan.realForward(shared.subarray(0, n), shared);
      expect(maxDiff(shared, want)).toBe(0);
    });

    it('realInverse may write over its own spectrum buffer', () => {
      // Source: exact identity x = IDFT(DFT(x)).
      const n = 512;
      const plan = new FftPlan(n);
      const x = noise(n, 123);
      const spec = plan.createHalfSpectrum();
      plan.realForward(x, spec);
      plan.realInverse(spec, spec.subarray(0, n));
      expect(maxDiff(spec.subarray(0, n), x)).toBeLessThan(1e-15);
    });

    it('complex transforms refuse the same array as input and output', () => {
      const plan = new FftPlan(8);
      const z = plan.createComplex();
      expect(() => plan.forward(z, z)).toThrow(/must be different/);
      expect(() => plan.inverse(z, z)).toThrow(/must be different/);
    });

    it('plans of the same size are independent (shared tables are read-only)', () => {
      // Source: exact identity — two plans given the same input give the same output.
      const a = new FftPlan(1024), b = new FftPlan(1024);
      const x = noise(1024, 5), y = noise(1024, 6);
      const sa = a.createHalfSpectrum(), sb = b.createHalfSpectrum(), sa2 = a.createHalfSpectrum();
      a.realForward(x, sa);
      b.realForward(y, sb);
      a.realForward(x, sa2);
      expect(maxDiff(sa, sa2)).toBe(0);
    });
  });
}

/** A plan of `size` on the given kernels. */
function planOn(kernels: 'auto' | 'js', size: number): FftPlan {
  setFftKernels(kernels);
  const p = new FftPlan(size);
  setFftKernels('auto');
  return p;
}

describe('WebAssembly SIMD kernels against the TypeScript kernels', () => {
  it('the module validates and is used here (Node 20 has WebAssembly SIMD)', () => {
    // Source: WebAssembly SIMD (fixed-width, v128) is standard and enabled by default since V8 9.1.
    const api = (globalThis as unknown as { WebAssembly: { validate(bytes: Uint8Array): boolean } }).WebAssembly;
    expect(api.validate(fftModuleBytes())).toBe(true);
    expect(fftKernelsFor(1024)).toBe('wasm-simd' satisfies FftKernels);
    expect(new FftPlan(4096).kernels).toBe('wasm-simd');
  });

  it('every method gives exactly the same numbers on both kernels, sizes 16…65536', () => {
    // Source: both evaluate the same IEEE-754 expressions in the same order (no fused multiply-add).
    for (let n = 16; n <= 65536; n *= 2) {
      const js = planOn('js', n), wasm = planOn('auto', n);
      expect(js.kernels).toBe('js');
      expect(wasm.kernels).toBe('wasm-simd');
      const x = noise(n, 41 * n), z = noise(2 * n, 43 * n), win = noise(n, 47 * n);
      const spec = noise(n + 2, 53 * n); // imaginary parts at DC and Nyquist included
      const a = new Float64Array(2 * n + 2), b = new Float64Array(2 * n + 2);
      const same = (what: string) => expect(maxDiff(a, b), `${what} N=${n}`).toBe(0);
      js.realForward(x, a);
      wasm.realForward(x, b);
      same('realForward');
      js.realInverse(spec, a);
      wasm.realInverse(spec, b);
      same('realInverse');
      js.forward(z, a);
      wasm.forward(z, b);
      same('forward');
      js.inverse(z, a);
      wasm.inverse(z, b);
      same('inverse');
      const long = noise(n + 37, 59 * n);
      js.realForwardWindowed(long, 29, win, a);
      wasm.realForwardWindowed(long, 29, win, b);
      same('realForwardWindowed');
      a.fill(0.25);
      b.fill(0.25);
      js.realInverseAdd(spec, win, a, 3);
      wasm.realInverseAdd(spec, win, b, 3);
      same('realInverseAdd');
    }
  });
});

for (const choice of ['auto', 'js'] as const) {
  describe(`FftPlan (${choice} kernels) windowed forward and overlap-add inverse`, () => {
    useKernels(choice);

    it('realForwardWindowed equals windowing a copy and calling realForward', () => {
      // Source: definition of the method (exact: the same products feed the same transform).
      for (const n of [2, 4, 8, 16, 1024]) {
        const plan = new FftPlan(n);
        const input = noise(n + 10, n), win = noise(n, n + 1);
        const windowed = Float64Array.from({ length: n }, (_, i) => input[7 + i]! * win[i]!);
        const want = plan.createHalfSpectrum(), got = plan.createHalfSpectrum();
        plan.realForward(windowed, want);
        plan.realForwardWindowed(input, 7, win, got);
        expect(maxDiff(got, want), `N=${n}`).toBe(0);
      }
    });

    it('realInverseAdd adds window × realInverse into the accumulator at the offset, and nothing elsewhere', () => {
      // Source: definition of the method (exact: the same products and sums).
      for (const n of [2, 4, 8, 16, 1024]) {
        const plan = new FftPlan(n);
        const spec = noise(n + 2, 3 * n), win = noise(n, 3 * n + 1);
        const x = new Float64Array(n);
        plan.realInverse(spec, x);
        const acc = noise(n + 11, 3 * n + 2), before = acc.slice();
        plan.realInverseAdd(spec, win, acc, 5);
        for (let i = 0; i < acc.length; i++) {
          const want = i >= 5 && i < 5 + n ? before[i]! + x[i - 5]! * win[i - 5]! : before[i]!;
          expect(acc[i], `N=${n} i=${i}`).toBe(want);
        }
      }
    });

    it('a different window array takes effect at once; the same array is reused', () => {
      // Source: the documented contract (the plan may keep a copy of the window it was given).
      const n = 256;
      const plan = new FftPlan(n);
      const input = noise(n, 71), w1 = noise(n, 72), w2 = noise(n, 73);
      const ref = new FftPlan(n);
      const want1 = ref.createHalfSpectrum(), want2 = ref.createHalfSpectrum(), got = plan.createHalfSpectrum();
      ref.realForward(input.map((v, i) => v * w1[i]!), want1);
      ref.realForward(input.map((v, i) => v * w2[i]!), want2);
      plan.realForwardWindowed(input, 0, w1, got);
      expect(maxDiff(got, want1)).toBe(0);
      plan.realForwardWindowed(input, 0, w2, got);
      expect(maxDiff(got, want2)).toBe(0);
      plan.realForwardWindowed(input, 0, w1, got);
      expect(maxDiff(got, want1)).toBe(0);
    });

    it('plans of different sizes and windows interleaved each get their own window', () => {
      // Source: definition of the method; windows longer than N contribute their first N values.
      const long = noise(1024, 91), other = noise(256, 92);
      const cases = [
        { plan: new FftPlan(256), win: long },
        { plan: new FftPlan(512), win: long },
        { plan: new FftPlan(256), win: other },
      ];
      const input = noise(1024, 93);
      for (let round = 0; round < 3; round++) {
        for (const { plan, win } of cases) {
          const n = plan.size;
          const want = plan.createHalfSpectrum(), got = plan.createHalfSpectrum();
          plan.realForward(input.subarray(0, n).map((v, i) => v * win[i]!), want);
          plan.realForwardWindowed(input, 0, win, got);
          expect(maxDiff(got, want), `round ${round} N=${n}`).toBe(0);
          const acc = new Float64Array(n), accWant = new Float64Array(n), x = new Float64Array(n);
          plan.realInverse(want, x);
          for (let i = 0; i < n; i++) accWant[i] = x[i]! * win[i]!;
          plan.realInverseAdd(want, win, acc, 0);
          expect(maxDiff(acc, accWant), `inverse round ${round} N=${n}`).toBe(0);
        }
      }
    });
  });
}
