/**
 * Streaming FIR filtering with a signed tap offset, output aligned with the input.
 * The filter computes y[n] = Σ_i h[i] · x[n − (i + offset)]; a negative offset reaches into the
 * future, which the stream handles by holding back output until those samples arrive. The
 * concatenated outputs of process() and flush() have exactly as many samples as went in; samples
 * outside the input count as zero.
 */
export class FirFilter {
  readonly kernel: Float64Array;
  readonly offset: number;
  /** Samples of look-ahead needed: max(0, −offset). */
  readonly lookAheadSamples: number;
  /** Input samples still needed, starting at absolute index #bufStart. */
  #buffer = new Float64Array(0);
  #bufStart = 0;
  #inCount = 0;
  #outCount = 0;

  constructor(kernel: Float64Array, offset = 0) {
    this.kernel = kernel;
    this.offset = Math.trunc(offset);
    this.lookAheadSamples = Math.max(0, -this.offset);
  }

  process(input: Float64Array): Float64Array {
    return this.#run(input, false);
  }

  flush(): Float64Array {
    return this.#run(new Float64Array(0), true);
  }

  #run(input: Float64Array, final: boolean): Float64Array {
    const h = this.kernel, taps = h.length, off = this.offset;
    // Output n reads inputs n − off − (taps − 1) … n − off; drop what no future output needs.
    const oldestNeeded = this.#outCount - off - (taps - 1);
    const drop = Math.max(0, Math.min(oldestNeeded - this.#bufStart, this.#buffer.length));
    const kept = this.#buffer.subarray(drop);
    const buf = new Float64Array(kept.length + input.length);
    buf.set(kept, 0);
    buf.set(input, kept.length);
    this.#buffer = buf;
    this.#bufStart += drop;
    this.#inCount += input.length;

    const ready = final ? this.#inCount : this.#inCount - this.lookAheadSamples;
    const count = Math.max(0, ready - this.#outCount);
    const out = new Float64Array(count);
    const base = this.#bufStart, end = this.#inCount;
    for (let j = 0; j < count; j++) {
      const newest = this.#outCount + j - off;
      const iMin = Math.max(0, newest - (end - 1));
      const iMax = Math.min(taps - 1, newest - base);
      let acc = 0;
      for (let i = iMin; i <= iMax; i++) acc += h[i]! * buf[newest - i - base]!;
      out[j] = acc;
    }
    this.#outCount += count;
    return out;
  }
}
