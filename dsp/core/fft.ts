/**
 * Fast Fourier transforms with plans that precompute once and write into caller-owned buffers.
 * Conventions:
 *  - complex arrays are interleaved re/im Float64Arrays;
 *  - forward: X[k] = Σ x[n] e^{−j2πkn/N} (no scaling);
 *  - inverse: x[n] = (1/N) Σ X[k] e^{+j2πkn/N}, so inverse(forward(x)) = x;
 *  - real transforms keep bins 0…N/2 (N/2+1 complex values, N+2 numbers).
 * Sizes that are not powers of two go through Bluestein's chirp-z algorithm (`AnySizeFft`).
 *
 * The power-of-two kernel is an iterative radix-4 decimation-in-time FFT (Cooley & Tukey 1965;
 * the radix-4 butterfly is two radix-2 stages merged, so it runs on radix-2 bit-reversed input):
 * the first, twiddle-free stage (radix 4, or radix 2 when log2 N is odd) reads the input in
 * bit-reversed order, the remaining radix-4 stages work in place with per-stage twiddle tables
 * laid out in the order the butterflies use them. Real transforms of size N run as one N/2-point
 * complex transform of z[n] = x[2n] + j·x[2n+1] plus the usual split step (forward) or its
 * inverse (before the transform), so no call allocates.
 *
 * Two implementations of that kernel: WebAssembly SIMD (fft-wasm.ts; used for 16 ≤ N ≤ 65536
 * wherever WebAssembly SIMD works — Node 20, Chromium, Electron) and the TypeScript functions
 * below (other sizes, and everywhere else). They evaluate the same expressions in the same order, so a plan
 * gives the same numbers on either; `plan.kernels` says which one it runs on.
 */
import { ParameterError } from '../errors.ts';
import { wasmFft, type WasmComplexTables, type WasmFft } from './fft-wasm.ts';

export const isPowerOfTwo = (n: number): boolean => Number.isInteger(n) && n >= 2 && (n & (n - 1)) === 0;
export const nextPowerOfTwo = (n: number): number => {
  let p = 2;
  while (p < n) p *= 2;
  return p;
};

/**
 * Complex transforms above this many points keep twiddle tables only for their stages of quarter
 * span ≤ TABLED_QUARTER_SPAN; the later stages evaluate their twiddles as they go, with the same
 * expression as the table (so the same numbers). A table for 2^20 points would hold 16 MB, and
 * only one-off transforms of whole excerpts are that large; it costs them a few cos/sin per group
 * of butterflies. (Plans on the WebAssembly kernels are far smaller and keep full tables.)
 */
const TABLED_POINTS = 1 << 16;
const TABLED_QUARTER_SPAN = 1 << 10;

/**
 * Read-only tables for complex transforms of m points (m a power of two ≥ 1), shared by every
 * plan that needs them.
 */
class Radix4Tables {
  readonly m: number;
  /** Radix of the first, twiddle-free stage: 4 when log2 m is even, otherwise 2 (1 for m = 1). */
  readonly firstRadix: number;
  /** Interleaved offset (2·index) of the first input of each first-stage butterfly. */
  readonly bitrev: Int32Array;
  /**
   * Twiddles of the radix-4 stages, stage after stage (quarter span q = firstRadix, 4·firstRadix,
   * …, m/4), for k = 0…q−1: W^k, W^{2k}, W^{3k} with W = e^{∓j2π/(4q)}, interleaved (6 numbers).
   * Above TABLED_POINTS only the stages up to TABLED_QUARTER_SPAN are here.
   */
  readonly forwardTwiddles: Float64Array;
  #inverse: Float64Array | null = null;

  constructor(m: number) {
    this.m = m;
    let bits = 0;
    while (1 << bits < m) bits++;
    this.firstRadix = m === 1 ? 1 : bits % 2 === 0 ? 4 : 2;
    const groups = m / Math.max(1, this.firstRadix);
    this.bitrev = new Int32Array(groups);
    for (let g = 0; g < groups; g++) {
      const i = g * this.firstRadix;
      let r = 0;
      for (let b = 0; b < bits; b++) r |= ((i >> b) & 1) << (bits - 1 - b);
      this.bitrev[g] = 2 * r;
    }
    let total = 0;
    for (let q = this.firstRadix; 4 * q <= m; q *= 4) {
      if (m > TABLED_POINTS && q > TABLED_QUARTER_SPAN) break;
      total += 6 * q;
    }
    this.forwardTwiddles = new Float64Array(total);
    let at = 0;
    for (let q = this.firstRadix; 4 * q <= m && at < total; q *= 4) {
      const span = 4 * q;
      for (let k = 0; k < q; k++) {
        for (let p = 1; p <= 3; p++) {
          // p·k < 3q < span, so the angle stays in [0, 3π/2).
          const ang = (2 * Math.PI * p * k) / span;
          const c = Math.cos(ang), s = Math.sin(ang);
          this.forwardTwiddles[at + 2 * (p - 1)] = c;
          this.forwardTwiddles[at + 2 * (p - 1) + 1] = -s;
        }
        at += 6;
      }
    }
  }

  /**
   * The inverse transform's twiddles, the conjugates of the forward ones (made on first use: the
   * WebAssembly tables need them; the TypeScript kernel negates the forward ones as it reads
   * them, which gives the same numbers and keeps large plans at half the table memory).
   */
  get inverseTwiddles(): Float64Array {
    if (!this.#inverse) {
      const f = this.forwardTwiddles, v = new Float64Array(f.length);
      for (let i = 0; i < f.length; i += 2) {
        v[i] = f[i]!;
        v[i + 1] = -f[i + 1]!;
      }
      this.#inverse = v;
    }
    return this.#inverse;
  }
}

const tableCache = new Map<number, Radix4Tables>();
function tablesFor(m: number): Radix4Tables {
  let t = tableCache.get(m);
  if (!t) {
    t = new Radix4Tables(m);
    tableCache.set(m, t);
  }
  return t;
}

/**
 * Unscaled complex DFT of m = t.m points from `src` to `dst` (interleaved, different arrays),
 * with the kernel e^{−j…} (forward) or e^{+j…} (inverse).
 */
function complexTransform(src: Float64Array, dst: Float64Array, t: Radix4Tables, inverse: boolean): void {
  const m2 = 2 * t.m;
  const rev = t.bitrev;
  const radix = t.firstRadix;
  // First stage: twiddle-free butterflies on the input read in bit-reversed order.
  if (radix === 4) {
    const h = m2 >> 1, qtr = m2 >> 2, q3 = h + qtr;
    // Inverse swaps outputs 1 and 3 (the ∓j rotation changes sign).
    const o1 = inverse ? 6 : 2, o3 = inverse ? 2 : 6;
    for (let g = 0, j = 0; j < m2; g++, j += 8) {
      const b = rev[g]!;
      const a0r = src[b]!, a0i = src[b + 1]!;
      const a1r = src[b + h]!, a1i = src[b + h + 1]!;
      const a2r = src[b + qtr]!, a2i = src[b + qtr + 1]!;
      const a3r = src[b + q3]!, a3i = src[b + q3 + 1]!;
      const sr = a0r + a1r, si = a0i + a1i, dr = a0r - a1r, di = a0i - a1i;
      const tr = a2r + a3r, ti = a2i + a3i, er = a2r - a3r, ei = a2i - a3i;
      dst[j] = sr + tr;
      dst[j + 1] = si + ti;
      dst[j + 4] = sr - tr;
      dst[j + 5] = si - ti;
      dst[j + o1] = dr + ei;
      dst[j + o1 + 1] = di - er;
      dst[j + o3] = dr - ei;
      dst[j + o3 + 1] = di + er;
    }
  } else if (radix === 2) {
    const h = m2 >> 1;
    for (let g = 0, j = 0; j < m2; g++, j += 4) {
      const b = rev[g]!;
      const a0r = src[b]!, a0i = src[b + 1]!;
      const a1r = src[b + h]!, a1i = src[b + h + 1]!;
      dst[j] = a0r + a1r;
      dst[j + 1] = a0i + a1i;
      dst[j + 2] = a0r - a1r;
      dst[j + 3] = a0i - a1i;
    }
  } else {
    dst[0] = src[0]!;
    dst[1] = src[1]!;
    return;
  }
  // Radix-4 stages in place. With A1 = W^{2k}·x1, A2 = W^k·x2, A3 = W^{3k}·x3 (x_i at offset i·q):
  // y0 = (x0+A1) + (A2+A3), y2 = (x0+A1) − (A2+A3), y1/y3 = (x0−A1) ∓ j(A2−A3).
  // The inverse kernel's twiddles are the conjugates: the forward ones with the sign of the
  // imaginary part turned (exactly, so the numbers equal a table of conjugates).
  const tw = t.forwardTwiddles;
  const sg = inverse ? -1 : 1;
  let base = 0;
  for (let q = radix; 4 * q <= t.m; q *= 4) {
    const q2 = 2 * q, span = 8 * q;
    const o1 = inverse ? 3 * q2 : q2, o3 = inverse ? q2 : 3 * q2;
    const tabled = base + 6 * q <= tw.length;
    const span4 = 4 * q;
    for (let k = 0, w = base; k < q2; k += 2, w += 6) {
      let w1r: number, w1i: number, w2r: number, w2i: number, w3r: number, w3i: number;
      if (tabled) {
        w1r = tw[w]!; w1i = sg * tw[w + 1]!; w2r = tw[w + 2]!; w2i = sg * tw[w + 3]!; w3r = tw[w + 4]!; w3i = sg * tw[w + 5]!;
      } else {
        // The table's expressions (Radix4Tables), evaluated here.
        const kk = k >> 1;
        const a1 = (2 * Math.PI * 1 * kk) / span4, a2 = (2 * Math.PI * 2 * kk) / span4, a3 = (2 * Math.PI * 3 * kk) / span4;
        w1r = Math.cos(a1); w1i = sg * -Math.sin(a1); w2r = Math.cos(a2); w2i = sg * -Math.sin(a2); w3r = Math.cos(a3); w3i = sg * -Math.sin(a3);
      }
      for (let i0 = k; i0 < m2; i0 += span) {
        const i1 = (i0 + q2) | 0, i2 = (i1 + q2) | 0, i3 = (i2 + q2) | 0;
        const x1r = dst[i1]!, x1i = dst[(i1 + 1) | 0]!;
        const x2r = dst[i2]!, x2i = dst[(i2 + 1) | 0]!;
        const x3r = dst[i3]!, x3i = dst[(i3 + 1) | 0]!;
        const a1r = x1r * w2r - x1i * w2i, a1i = x1r * w2i + x1i * w2r;
        const a2r = x2r * w1r - x2i * w1i, a2i = x2r * w1i + x2i * w1r;
        const a3r = x3r * w3r - x3i * w3i, a3i = x3r * w3i + x3i * w3r;
        const a0r = dst[i0]!, a0i = dst[(i0 + 1) | 0]!;
        const sr = a0r + a1r, si = a0i + a1i, dr = a0r - a1r, di = a0i - a1i;
        const tr = a2r + a3r, ti = a2i + a3i, er = a2r - a3r, ei = a2i - a3i;
        const p1 = (i0 + o1) | 0, p3 = (i0 + o3) | 0;
        dst[i0] = sr + tr;
        dst[(i0 + 1) | 0] = si + ti;
        dst[i2] = sr - tr;
        dst[(i2 + 1) | 0] = si - ti;
        dst[p1] = dr + ei;
        dst[(p1 + 1) | 0] = di - er;
        dst[p3] = dr - ei;
        dst[(p3 + 1) | 0] = di + er;
      }
    }
    base += 6 * q;
  }
}

/** Kernels a plan runs on: WebAssembly SIMD (see fft-wasm.ts) or the TypeScript ones above. */
export type FftKernels = 'wasm-simd' | 'js';

/** Below this size the copies in and out of WebAssembly memory cost more than they save. */
const WASM_MIN_SIZE = 16;
/**
 * Above this size plans use the TypeScript kernels: the shared WebAssembly memory never shrinks,
 * and one-off transforms of whole signals (up to millions of points) would pin it at that size.
 */
const WASM_MAX_SIZE = 65536;
let allowWasm = true;

/**
 * Chooses the kernels for plans created from now on: 'auto' (WebAssembly SIMD where available,
 * the default) or 'js'. Both give identical numbers; this exists for tests and benchmarks.
 */
export function setFftKernels(choice: 'auto' | 'js'): void {
  allowWasm = choice === 'auto';
}

/** The kernels a plan of `size` created now would use. */
export function fftKernelsFor(size: number): FftKernels {
  return allowWasm && size >= WASM_MIN_SIZE && size <= WASM_MAX_SIZE && wasmFft() !== null ? 'wasm-simd' : 'js';
}

/** State of a plan running on the WebAssembly kernels. */
interface WasmPlan {
  readonly fft: WasmFft;
  readonly half: WasmComplexTables;
  full: WasmComplexTables | null;
  readonly split: number;
  readonly join: number;
  /** fft.generation the views below were made for. */
  generation: number;
  heap: Float64Array;
  /** Views of the scratch areas: B as a half spectrum, A as N samples, B as 2N numbers, C as N. */
  spectrumB: Float64Array;
  samplesA: Float64Array;
  complexB: Float64Array;
  samplesC: Float64Array;
}

/** A power-of-two FFT plan. Not re-entrant: one plan per thread of work. */
export class FftPlan {
  readonly size: number;
  /** Which kernels this plan runs on (fixed at construction). */
  readonly kernels: FftKernels;
  /** Tables for N-point complex transforms, made on first use. */
  #full: Radix4Tables | null = null;
  /** Tables for the N/2-point complex transform behind the real transforms. */
  readonly #half: Radix4Tables;
  /** ½·e^{−j2πk/N} for k = 0…N/4, interleaved (the split step of the real transforms). */
  readonly #split: Float64Array;
  /**
   * Scratch of N numbers for inputs that are not Float64Arrays or overlap the output, and for
   * realInverse without a work array; made on first use (a 2^21-point plan's is 16 MB).
   */
  #scratchArray: Float64Array | null = null;
  /** Second scratch of N numbers (realInverseAdd on the TypeScript kernels), made on first use. */
  #scratch2: Float64Array | null = null;
  readonly #wasm: WasmPlan | null;

  constructor(size: number) {
    if (!isPowerOfTwo(size)) throw new ParameterError(`fftSize=${size} must be a power of two ≥ 2`);
    this.size = size;
    this.#half = tablesFor(size / 2);
    const quarter = size >> 2;
    this.#split = new Float64Array(2 * quarter + 2);
    for (let k = 0; k <= quarter; k++) {
      const ang = (2 * Math.PI * k) / size;
      this.#split[2 * k] = 0.5 * Math.cos(ang);
      this.#split[2 * k + 1] = -0.5 * Math.sin(ang);
    }
    this.kernels = fftKernelsFor(size);
    this.#wasm = null;
    if (this.kernels === 'wasm-simd') {
      const fft = wasmFft()!;
      fft.ensureScratch(2 * size + 2);
      const half = fft.complexTables(this.#half);
      const split = fft.splitTable(size, this.#split);
      const join = fft.joinTable(size, this.#split);
      const none = new Float64Array(0);
      this.#wasm = { fft, half, full: null, split, join, generation: -1, heap: none, spectrumB: none, samplesA: none, complexB: none, samplesC: none };
    }
  }

  /** The plan's WebAssembly state with views refreshed after any growth of the shared memory. */
  #w(): WasmPlan {
    const w = this.#wasm!;
    const f = w.fft;
    if (w.generation !== f.generation) {
      const n = this.size, h = f.heap;
      w.heap = h;
      w.spectrumB = h.subarray(f.b / 8, f.b / 8 + n + 2);
      w.samplesA = h.subarray(f.a / 8, f.a / 8 + n);
      w.complexB = h.subarray(f.b / 8, f.b / 8 + 2 * n);
      w.samplesC = h.subarray(f.c / 8, f.c / 8 + n);
      w.generation = f.generation;
    }
    return w;
  }

  /** Complex forward transform. `out` and `input` (length 2N) must be different arrays. */
  forward(input: Float64Array, out: Float64Array): void {
    if (out === input) throw new Error('Input and output buffers must be different');
    if (this.#wasm) {
      const t = (this.#wasm.full ??= this.#wasm.fft.complexTables(this.#fullTables())); // may grow memory
      const w = this.#w(), f = w.fft;
      copyIn(w.heap, f.a / 8, input, 2 * this.size);
      f.kernels.fft(f.a, f.b, t.rev, t.forward, t.m, t.radix, 0);
      out.set(w.complexB);
      return;
    }
    complexTransform(input, out, this.#fullTables(), false);
  }

  /** Complex inverse transform with 1/N scaling. */
  inverse(input: Float64Array, out: Float64Array): void {
    if (out === input) throw new Error('Input and output buffers must be different');
    const s = 1 / this.size, n2 = 2 * this.size;
    if (this.#wasm) {
      const t = (this.#wasm.full ??= this.#wasm.fft.complexTables(this.#fullTables())); // may grow memory
      const w = this.#w(), f = w.fft;
      copyIn(w.heap, f.a / 8, input, n2);
      f.kernels.fft(f.a, f.b, t.rev, t.inverse, t.m, t.radix, 1);
      f.kernels.scale(f.b, n2, s);
      out.set(w.complexB);
      return;
    }
    complexTransform(input, out, this.#fullTables(), true);
    for (let i = 0; i < n2; i++) out[i]! *= s;
  }

  get #scratch(): Float64Array {
    return (this.#scratchArray ??= new Float64Array(this.size));
  }

  #fullTables(): Radix4Tables {
    return (this.#full ??= tablesFor(this.size));
  }

  /** Real forward transform: `input` length N, `out` length N+2 (bins 0…N/2, interleaved). */
  realForward(input: ArrayLike<number>, out: Float64Array): void {
    const n = this.size;
    if (this.#wasm) {
      const w = this.#w(), f = w.fft;
      copyIn(w.heap, f.a / 8, input, n);
      f.kernels.fft(f.a, f.b, w.half.rev, w.half.forward, w.half.m, w.half.radix, 0);
      f.kernels.split(f.b, w.split, n);
      out.set(w.spectrumB);
      return;
    }
    let x: Float64Array;
    if (input instanceof Float64Array && !overlaps(input, n, out)) x = input;
    else {
      x = this.#scratch;
      for (let i = 0; i < n; i++) x[i] = input[i]!;
    }
    if (n === 2) {
      const a = x[0]!, b = x[1]!;
      out[0] = a + b;
      out[1] = 0;
      out[2] = a - b;
      out[3] = 0;
      return;
    }
    // Z = DFT_{N/2}(x[2n] + j·x[2n+1]) lands in out[0…N−1]; split it in place into X[0…N/2].
    complexTransform(x, out, this.#half, false);
    splitForward(out, this.#split, n);
  }

  /**
   * Real forward transform of the windowed segment input[offset + i]·window[i], i = 0…N−1 (for
   * streaming analysers). Same numbers as windowing into a buffer and calling realForward.
   * The WebAssembly kernels keep a copy of `window` while the same array is passed again: treat
   * the window as read-only, and pass a new array to change it.
   */
  realForwardWindowed(input: Float64Array, offset: number, window: Float64Array, out: Float64Array): void {
    const n = this.size;
    if (this.#wasm) {
      const w = this.#w(), f = w.fft;
      const win = f.window(window, n, false);
      w.heap.set(input.subarray(offset, offset + n), f.a / 8);
      f.kernels.fftWindowed(f.a, win, f.b, w.half.rev, w.half.forward, w.half.m, w.half.radix, 0);
      f.kernels.split(f.b, w.split, n);
      out.set(w.spectrumB);
      return;
    }
    const x = this.#scratch;
    for (let i = 0; i < n; i++) x[i] = input[offset + i]! * window[i]!;
    this.realForward(x, out);
  }

  /**
   * Real inverse transform with 1/N scaling: `spectrum` holds bins 0…N/2 (length N+2) of a real
   * signal, `out` receives N samples. Uses one N/2-point complex transform: with
   * E[k] = (X[k] + X*[N/2−k])/2 and O[k] = (X[k] − X*[N/2−k])/2 · e^{+j2πk/N},
   * IDFT_{N/2}(E + jO) = x[2n] + j·x[2n+1].
   * `work` (N numbers, not overlapping `spectrum` or `out`) is used in place of the plan's own
   * scratch by the TypeScript kernels; its contents are overwritten. Same numbers either way.
   */
  realInverse(spectrum: Float64Array, out: Float64Array, work?: Float64Array): void {
    const n = this.size;
    if (this.#wasm) {
      const w = this.#w(), f = w.fft;
      copyIn(w.heap, f.a / 8, spectrum, n + 2);
      f.kernels.join(f.a, f.b, w.join, n, 1 / n);
      f.kernels.fft(f.b, f.a, w.half.rev, w.half.inverse, w.half.m, w.half.radix, 1);
      out.set(w.samplesA);
      return;
    }
    if (n === 2) {
      const a = spectrum[0]!, b = spectrum[2]!;
      out[0] = (a + b) / 2;
      out[1] = (a - b) / 2;
      return;
    }
    const z = work && work.length >= n ? work : this.#scratch;
    joinInverse(spectrum, z, this.#split, n);
    complexTransform(z, out, this.#half, true);
  }

  /**
   * Weighted overlap-add of one frame: acc[offset + i] += window[i]·x[i], i = 0…N−1, where x is
   * realInverse(spectrum). Same numbers as realInverse into a buffer followed by that loop.
   * As for realForwardWindowed, treat `window` as read-only (a copy may be kept).
   */
  realInverseAdd(spectrum: Float64Array, window: Float64Array, acc: Float64Array, offset: number): void {
    const n = this.size;
    if (this.#wasm) {
      const w = this.#w(), f = w.fft, h = w.heap;
      const win = f.window(window, n, true);
      copyIn(h, f.a / 8, spectrum, n + 2);
      h.set(acc.subarray(offset, offset + n), f.c / 8);
      f.kernels.join(f.a, f.b, w.join, n, 1 / n);
      f.kernels.fft(f.b, f.a, w.half.rev, w.half.inverse, w.half.m, w.half.radix, 1);
      f.kernels.overlapAdd(f.c, f.a, win, n);
      acc.set(w.samplesC, offset);
      return;
    }
    const t = (this.#scratch2 ??= new Float64Array(n));
    this.realInverse(spectrum, t);
    for (let i = 0; i < n; i++) acc[offset + i]! += t[i]! * window[i]!;
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

/** Whether a[0…count) and b share any memory. */
function overlaps(a: Float64Array, count: number, b: Float64Array): boolean {
  if (a.buffer !== b.buffer) return false;
  const a0 = a.byteOffset, a1 = a0 + 8 * count, b0 = b.byteOffset, b1 = b0 + b.byteLength;
  return a0 < b1 && b0 < a1;
}

/** Copies the first `count` numbers of `src` into heap[at…]. */
function copyIn(heap: Float64Array, at: number, src: ArrayLike<number>, count: number): void {
  if (src instanceof Float64Array || src instanceof Float32Array) {
    heap.set(src.length === count ? src : src.subarray(0, count), at);
    return;
  }
  for (let i = 0; i < count; i++) heap[at + i] = src[i]!;
}

/**
 * In place on s[0…n+1]: from Z = DFT_{N/2}(z) in s[0…n−1] to X[0…N/2] of the real signal.
 * With Fe[k] = (Z[k] + Z*[M−k])/2, Fo[k] = (Z[k] − Z*[M−k])/(2j), M = N/2:
 * X[k] = Fe[k] + W^k·Fo[k] and X[M−k] = (Fe[k] − W^k·Fo[k])*, W = e^{−j2π/N}.
 */
function splitForward(s: Float64Array, half: Float64Array, n: number): void {
  const z0r = s[0]!, z0i = s[1]!;
  s[0] = z0r + z0i;
  s[1] = 0;
  s[n] = z0r - z0i;
  s[n + 1] = 0;
  const quarter = n >> 2;
  for (let k = 1, i = 2, j = n - 2; k <= quarter; k++, i += 2, j -= 2) {
    const a = s[i]!, b = s[i + 1]!, c = s[j]!, d = s[j + 1]!;
    const cr = half[i]!, ci = half[i + 1]!; // ½W^k
    // 2·Fe = (a + c, b − d); 2·Fo = (b + d, c − a).
    const fer = 0.5 * (a + c), fei = 0.5 * (b - d);
    const pr = b + d, pi = c - a;
    const tr = cr * pr - ci * pi, ti = cr * pi + ci * pr; // W^k·Fo
    s[i] = fer + tr;
    s[i + 1] = fei + ti;
    s[j] = fer - tr;
    s[j + 1] = ti - fei;
  }
}

/**
 * From X[0…N/2] (spectrum, length n+2) to z[k] = (E[k] + j·O[k])/(N/2), k = 0…N/2−1 (length n),
 * so that the unscaled inverse N/2-point transform of z gives x[2n] + j·x[2n+1] with 1/N scaling.
 * E[M−k] = E*[k] and O[M−k] = O*[k], so each pass makes z[k] and z[M−k].
 */
function joinInverse(x: Float64Array, z: Float64Array, half: Float64Array, n: number): void {
  const s = 1 / n; // ½ from E and O, 2/N for the N/2-point transform
  const quarter = n >> 2;
  // k = 0 pairs with X[N/2].
  {
    const xr = x[0]!, xi = x[1]!, yr = x[n]!, yi = -x[n + 1]!;
    const er = s * (xr + yr), ei = s * (xi + yi);
    const or = s * (xr - yr), oi = s * (xi - yi);
    z[0] = er - oi;
    z[1] = ei + or;
  }
  for (let k = 1, i = 2, j = n - 2; k <= quarter; k++, i += 2, j -= 2) {
    const xr = x[i]!, xi = x[i + 1]!, yr = x[j]!, yi = -x[j + 1]!; // X[k], X*[M−k]
    const er = s * (xr + yr), ei = s * (xi + yi);
    const dr = s * (xr - yr), di = s * (xi - yi);
    // e^{+j2πk/N} = 2·conj(half[k]).
    const cr = 2 * half[i]!, ci = -2 * half[i + 1]!;
    const or = dr * cr - di * ci, oi = dr * ci + di * cr;
    z[i] = er - oi;
    z[i + 1] = ei + or;
    if (j !== i) {
      // z[M−k] = E*[k] + j·O*[k]
      z[j] = er + oi;
      z[j + 1] = or - ei;
    }
  }
}

const planCache = new Map<number, FftPlan>();
/**
 * A shared plan for one-off, non-hot-path transforms. Hot loops should own their plan
 * (plans are not re-entrant). Plans are kept until releaseSharedPlans().
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

/**
 * Lets the shared plans of `minSize` points or more go, with the tables only they use (the end of
 * an analysis that made one-off transforms of millions of points: a 2^21-point plan holds about
 * 40 MB). Plans already handed out keep working; the next sharedPlan() of that size makes a new one.
 */
export function releaseSharedPlans(minSize: number): void {
  for (const size of [...planCache.keys()]) if (size >= minSize) planCache.delete(size);
  for (const m of [...tableCache.keys()]) if (2 * m >= minSize) tableCache.delete(m);
}
