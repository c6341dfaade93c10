/**
 * Echo cancellation by the exact inverse of the echo model. For y = x + k∗x (k the reflection
 * kernel at lags ≥ 1), the inverse is the recursion
 *   x̂[n] = y[n] − Σᵢ k[i]·x̂[n − offset − i],
 * i.e. the all-pole filter 1/(1 + K(z)), which is stable when |K(e^{jω})| < 1 at every frequency
 * (the echo factor is then minimum-phase; Oppenheim & Schafer, DTSP, ch. 13 on echo factors).
 * State (the last `maxLag` outputs) is kept across blocks, so any blocking gives the same output.
 *
 * A pre-echo (negative delay) is the same recursion run on the time-reversed signal: reversing
 * time turns y = x + g·x(t + T) into a post-echo; see reverse-cancel.ts.
 */
import { createSimdKernels, type SimdKernels } from '../core/simd-kernels.ts';
import { BugError } from '../errors.ts';
import { type EchoKernel, kernelMaxLag } from './kernel.ts';

const CHUNK = 16384;
/**
 * Shortest first-tap lag for the run-wise SIMD loop: outputs closer than `offset` apart do not
 * depend on each other, so a run of `offset` samples is computed at once, two outputs per
 * instruction; below this the runs are too short to pay for the call (measured).
 */
const MIN_SIMD_RUN = 8;

export class EchoCanceller {
  readonly kernel: EchoKernel;
  readonly #reversedTaps: Float64Array;
  readonly #maxLag: number;
  readonly #buf: Float64Array;
  #pos: number;
  /** WebAssembly SIMD kernels whose memory holds the taps (at byte 0) and #buf, or null. */
  readonly #simd: SimdKernels | null;
  readonly #bufByte: number;

  /** `engine` 'js' forces the plain loops (for tests that compare the two). */
  constructor(kernel: EchoKernel, engine: 'auto' | 'js' = 'auto') {
    if (kernel.offset < 1) throw new BugError(`echo kernel offset ${kernel.offset} must be ≥ 1`);
    this.kernel = kernel;
    this.#maxLag = kernelMaxLag(kernel);
    // Taps in increasing-index order over the history: tap for lag maxLag first.
    this.#reversedTaps = Float64Array.from(kernel.taps).reverse();
    const nt = this.#reversedTaps.length;
    const length = this.#maxLag + CHUNK;
    this.#bufByte = 16 * Math.ceil(nt / 2);
    this.#simd = engine === 'js' || kernel.offset < MIN_SIMD_RUN ? null : createSimdKernels(this.#bufByte + 8 * length);
    if (this.#simd) {
      this.#simd.f64.set(this.#reversedTaps, 0);
      this.#buf = this.#simd.f64.subarray(this.#bufByte / 8, this.#bufByte / 8 + length);
    } else {
      this.#buf = new Float64Array(length);
    }
    this.#pos = this.#maxLag;
  }

  /** Which loop runs: the WebAssembly SIMD run loop or the plain one. */
  get engine(): 'simd' | 'js' {
    return this.#simd ? 'simd' : 'js';
  }

  /** Filters `input` into `output` (may be the same array); returns `output`. */
  process(input: Float64Array, output: Float64Array = new Float64Array(input.length)): Float64Array {
    const taps = this.#reversedTaps;
    const nt = taps.length;
    const buf = this.#buf;
    const maxLag = this.#maxLag;
    // First history index read for output at position p: p − maxLag.
    let pos = this.#pos;
    const n = input.length;
    const simd = this.#simd;
    if (simd) {
      const offset = this.kernel.offset, bufByte = this.#bufByte;
      let i = 0;
      while (i < n) {
        const run = Math.min(offset, n - i, buf.length - pos);
        for (let k = 0; k < run; k++) buf[pos + k] = input[i + k]!;
        simd.echoRun(0, bufByte + 8 * (pos - maxLag), bufByte + 8 * pos, nt, run);
        if (run & 1) {
          const k = run - 1, start = pos - maxLag + k;
          let acc = buf[pos + k]!;
          for (let j = 0; j < nt; j++) acc -= taps[j]! * buf[start + j]!;
          buf[pos + k] = acc;
        }
        for (let k = 0; k < run; k++) output[i + k] = buf[pos + k]!;
        pos += run;
        i += run;
        if (pos === buf.length) {
          buf.copyWithin(0, pos - maxLag, pos);
          pos = maxLag;
        }
      }
    } else if (nt === 1) {
      const g = taps[0]!;
      for (let i = 0; i < n; i++) {
        const v = input[i]! - g * buf[pos - maxLag]!;
        buf[pos++] = v;
        output[i] = v;
        if (pos === buf.length) {
          buf.copyWithin(0, pos - maxLag, pos);
          pos = maxLag;
        }
      }
    } else if ((nt & 3) === 0) {
      // Four partial sums: shorter dependency chains for the same arithmetic.
      for (let i = 0; i < n; i++) {
        const start = pos - maxLag;
        let a0 = 0, a1 = 0, a2 = 0, a3 = 0;
        for (let j = 0; j < nt; j += 4) {
          const b = start + j;
          a0 += taps[j]! * buf[b]!;
          a1 += taps[j + 1]! * buf[b + 1]!;
          a2 += taps[j + 2]! * buf[b + 2]!;
          a3 += taps[j + 3]! * buf[b + 3]!;
        }
        const acc = input[i]! - (a0 + a1 + a2 + a3);
        buf[pos++] = acc;
        output[i] = acc;
        if (pos === buf.length) {
          buf.copyWithin(0, pos - maxLag, pos);
          pos = maxLag;
        }
      }
    } else {
      for (let i = 0; i < n; i++) {
        let acc = input[i]!;
        const start = pos - maxLag;
        for (let j = 0; j < nt; j++) acc -= taps[j]! * buf[start + j]!;
        buf[pos++] = acc;
        output[i] = acc;
        if (pos === buf.length) {
          buf.copyWithin(0, pos - maxLag, pos);
          pos = maxLag;
        }
      }
    }
    this.#pos = pos;
    return output;
  }

  reset(): void {
    this.#buf.fill(0);
    this.#pos = this.#maxLag;
  }
}

/** Applies the echo model y = x + k∗x (a forward FIR; for building and checking), state across blocks. */
export class EchoAdder {
  readonly #reversedTaps: Float64Array;
  readonly #maxLag: number;
  readonly #buf: Float64Array;
  #pos: number;

  constructor(kernel: EchoKernel) {
    this.#maxLag = kernelMaxLag(kernel);
    this.#reversedTaps = Float64Array.from(kernel.taps).reverse();
    this.#buf = new Float64Array(this.#maxLag + CHUNK);
    this.#pos = this.#maxLag;
  }

  process(input: Float64Array, output: Float64Array = new Float64Array(input.length)): Float64Array {
    const taps = this.#reversedTaps, nt = taps.length, buf = this.#buf, maxLag = this.#maxLag;
    let pos = this.#pos;
    for (let i = 0; i < input.length; i++) {
      const x = input[i]!;
      let acc = x;
      const start = pos - maxLag;
      for (let j = 0; j < nt; j++) acc += taps[j]! * buf[start + j]!;
      buf[pos++] = x;
      output[i] = acc;
      if (pos === buf.length) {
        buf.copyWithin(0, pos - maxLag, pos);
        pos = maxLag;
      }
    }
    this.#pos = pos;
    return output;
  }
}
