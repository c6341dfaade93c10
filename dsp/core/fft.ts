/**
 * Fast Fourier transforms over fft.js (radix-4), with plans that precompute once and write into
 * caller-owned buffers. Conventions:
 *  - complex arrays are interleaved re/im Float64Arrays;
 *  - forward: X[k] = Σ x[n] e^{−j2πkn/N} (no scaling);
 *  - inverse: x[n] = (1/N) Σ X[k] e^{+j2πkn/N}, so inverse(forward(x)) = x;
 *  - real transforms keep bins 0…N/2 (N/2+1 complex values, N+2 numbers).
 * Sizes that are not powers of two go through Bluestein's chirp-z algorithm (`AnySizeFft`).
 */
import FFT from 'fft.js';
import { ParameterError } from '../errors.ts';

export const isPowerOfTwo = (n: number): boolean => Number.isInteger(n) && n >= 2 && (n & (n - 1)) === 0;
export const nextPowerOfTwo = (n: number): number => {
  let p = 2;
  while (p < n) p *= 2;
  return p;
};

type FftJs = {
  transform(out: Float64Array, data: Float64Array): void;
  realTransform(out: Float64Array, data: Float64Array): void;
  inverseTransform(out: Float64Array, data: Float64Array): void;
};

/** A power-of-two FFT plan. Not re-entrant: one plan per thread of work. */
export class FftPlan {
  readonly size: number;
  readonly #full: FftJs;
  readonly #half: FftJs | null;
  readonly #scratchA: Float64Array;
  readonly #scratchB: Float64Array;
  /** e^{+j2πk/N} for k = 0…N/2, interleaved (for the real inverse). */
  readonly #twiddle: Float64Array;

  constructor(size: number) {
    if (!isPowerOfTwo(size)) throw new ParameterError(`fftSize=${size} must be a power of two ≥ 2`);
    this.size = size;
    this.#full = new FFT(size) as unknown as FftJs;
    this.#half = size >= 4 ? (new FFT(size / 2) as unknown as FftJs) : null;
    this.#scratchA = new Float64Array(2 * size);
    this.#scratchB = new Float64Array(2 * size);
    this.#twiddle = new Float64Array(size + 2);
    for (let k = 0; k <= size / 2; k++) {
      this.#twiddle[2 * k] = Math.cos((2 * Math.PI * k) / size);
      this.#twiddle[2 * k + 1] = Math.sin((2 * Math.PI * k) / size);
    }
  }

  /** Complex forward transform. `out` and `input` (length 2N) must be different arrays. */
  forward(input: Float64Array, out: Float64Array): void {
    this.#full.transform(out, input);
  }

  /** Complex inverse transform with 1/N scaling. */
  inverse(input: Float64Array, out: Float64Array): void {
    this.#full.inverseTransform(out, input);
  }

  /** Real forward transform: `input` length N, `out` length N+2 (bins 0…N/2, interleaved). */
  realForward(input: ArrayLike<number>, out: Float64Array): void {
    const n = this.size;
    const tmp = this.#scratchA;
    this.#full.realTransform(tmp, input as Float64Array);
    for (let i = 0; i < n + 2; i++) out[i] = tmp[i]!;
    out[1] = 0;
    out[n + 1] = 0;
  }

  /**
   * Real inverse transform with 1/N scaling: `spectrum` holds bins 0…N/2 (length N+2) of a real
   * signal, `out` receives N samples. Uses one N/2-point complex transform: with
   * E[k] = (X[k] + X*[N/2−k])/2 and O[k] = (X[k] − X*[N/2−k])/2 · e^{+j2πk/N},
   * IDFT_{N/2}(E + jO) = x[2n] + j·x[2n+1].
   */
  realInverse(spectrum: Float64Array, out: Float64Array): void {
    const n = this.size;
    if (this.#half === null) {
      const a = spectrum[0]!, b = spectrum[2]!;
      out[0] = (a + b) / 2;
      out[1] = (a - b) / 2;
      return;
    }
    const h = n / 2;
    const z = this.#scratchA;
    const w = this.#twiddle;
    for (let k = 0; k < h; k++) {
      const xr = spectrum[2 * k]!, xi = spectrum[2 * k + 1]!;
      const yr = spectrum[2 * (h - k)]!, yi = -spectrum[2 * (h - k) + 1]!; // X*[N/2−k]
      const er = 0.5 * (xr + yr), ei = 0.5 * (xi + yi);
      const dr = 0.5 * (xr - yr), di = 0.5 * (xi - yi);
      const cr = w[2 * k]!, ci = w[2 * k + 1]!;
      const or = dr * cr - di * ci, oi = dr * ci + di * cr;
      z[2 * k] = er - oi; // E + jO
      z[2 * k + 1] = ei + or;
    }
    const zt = this.#scratchB;
    this.#half.inverseTransform(zt, z.subarray(0, n));
    for (let k = 0; k < h; k++) {
      out[2 * k] = zt[2 * k]!;
      out[2 * k + 1] = zt[2 * k + 1]!;
    }
  }

  /** A zeroed buffer for complex data of this size (2N numbers). */
  createComplex(): Float64Array {
    return new Float64Array(2 * this.size);
  }

  /** A zeroed buffer for a real transform's half spectrum (N+2 numbers). */
  createHalfSpectrum(): Float64Array {
    return new Float64Array(this.size + 2);
  }
}

const planCache = new Map<number, FftPlan>();
/**
 * A shared plan for one-off, non-hot-path transforms. Hot loops should own their plan
 * (plans are not re-entrant).
 */
export function sharedPlan(size: number): FftPlan {
  let p = planCache.get(size);
  if (!p) {
    p = new FftPlan(size);
    planCache.set(size, p);
  }
  return p;
}

/**
 * DFT of any length N ≥ 1 by Bluestein's chirp-z algorithm (a length-N DFT written as a
 * convolution with the chirp e^{jπn²/N}, evaluated with power-of-two FFTs of size ≥ 2N−1).
 */
export class AnySizeFft {
  readonly size: number;
  readonly #plan: FftPlan | null;
  readonly #m: number;
  readonly #chirp: Float64Array; // e^{−jπn²/N}
  readonly #kernelSpec: Float64Array;
  readonly #a: Float64Array;
  readonly #b: Float64Array;

  constructor(size: number) {
    if (!Number.isInteger(size) || size < 1) throw new ParameterError(`DFT size ${size} must be a whole number ≥ 1`);
    this.size = size;
    if (isPowerOfTwo(size)) {
      this.#plan = sharedPlan(size);
      this.#m = size;
      this.#chirp = this.#kernelSpec = this.#a = this.#b = new Float64Array(0);
      return;
    }
    const m = nextPowerOfTwo(2 * size - 1);
    this.#m = m;
    this.#plan = new FftPlan(m);
    this.#chirp = new Float64Array(2 * size);
    for (let n = 0; n < size; n++) {
      // n² mod 2N keeps the angle accurate for large n.
      const ang = (Math.PI * ((n * n) % (2 * size))) / size;
      this.#chirp[2 * n] = Math.cos(ang);
      this.#chirp[2 * n + 1] = -Math.sin(ang);
    }
    const kernel = new Float64Array(2 * m);
    for (let n = 0; n < size; n++) {
      const re = this.#chirp[2 * n]!, im = -this.#chirp[2 * n + 1]!; // conj chirp
      kernel[2 * n] = re;
      kernel[2 * n + 1] = im;
      if (n > 0) {
        kernel[2 * (m - n)] = re;
        kernel[2 * (m - n) + 1] = im;
      }
    }
    this.#kernelSpec = new Float64Array(2 * m);
    this.#plan.forward(kernel, this.#kernelSpec);
    this.#a = new Float64Array(2 * m);
    this.#b = new Float64Array(2 * m);
  }

  /** Complex forward DFT (interleaved, length 2N in and out). */
  forward(input: Float64Array, out: Float64Array): void {
    this.#run(input, out, false);
  }

  /** Complex inverse DFT with 1/N scaling. */
  inverse(input: Float64Array, out: Float64Array): void {
    this.#run(input, out, true);
  }

  #run(input: Float64Array, out: Float64Array, inverse: boolean): void {
    const n = this.size;
    if (this.#m === n) {
      if (inverse) this.#plan!.inverse(input, out);
      else this.#plan!.forward(input, out);
      return;
    }
    const s = inverse ? -1 : 1; // inverse = conj(forward(conj(x)))/N
    const a = this.#a, b = this.#b, c = this.#chirp, m = this.#m;
    a.fill(0);
    for (let i = 0; i < n; i++) {
      const xr = input[2 * i]!, xi = s * input[2 * i + 1]!;
      const cr = c[2 * i]!, ci = c[2 * i + 1]!;
      a[2 * i] = xr * cr - xi * ci;
      a[2 * i + 1] = xr * ci + xi * cr;
    }
    this.#plan!.forward(a, b);
    const k = this.#kernelSpec;
    for (let i = 0; i < m; i++) {
      const br = b[2 * i]!, bi = b[2 * i + 1]!, kr = k[2 * i]!, ki = k[2 * i + 1]!;
      b[2 * i] = br * kr - bi * ki;
      b[2 * i + 1] = br * ki + bi * kr;
    }
    this.#plan!.inverse(b, a);
    const scale = inverse ? 1 / n : 1;
    for (let i = 0; i < n; i++) {
      const yr = a[2 * i]!, yi = a[2 * i + 1]!;
      const cr = c[2 * i]!, ci = c[2 * i + 1]!;
      out[2 * i] = (yr * cr - yi * ci) * scale;
      out[2 * i + 1] = s * (yr * ci + yi * cr) * scale;
    }
  }
}

/** Squared magnitude of bin k of an interleaved spectrum. */
export const binPower = (spec: Float64Array, k: number): number => spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2;
