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
import { BugError } from '../errors.ts';
import { type EchoKernel, kernelMaxLag } from './kernel.ts';

const CHUNK = 16384;

export class EchoCanceller {
  readonly kernel: EchoKernel;
  readonly #reversedTaps: Float64Array;
  readonly #maxLag: number;
  readonly #buf: Float64Array;
  #pos: number;

  constructor(kernel: EchoKernel) {
    if (kernel.offset < 1) throw new BugError(`echo kernel offset ${kernel.offset} must be ≥ 1`);
    this.kernel = kernel;
    this.#maxLag = kernelMaxLag(kernel);
    // Taps in increasing-index order over the history: tap for lag maxLag first.
    this.#reversedTaps = Float64Array.from(kernel.taps).reverse();
    this.#buf = new Float64Array(this.#maxLag + CHUNK);
    this.#pos = this.#maxLag;
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
    if (nt === 1) {
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
