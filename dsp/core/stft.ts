/**
 * Short-time Fourier analysis and weighted overlap-add synthesis, streaming block by block.
 *
 * Framing (shared by analyzer, synthesizer and processor): frame k covers input samples
 * [k·hopSize − (fftSize − hopSize), k·hopSize + hopSize), i.e. the input is preceded by
 * fftSize − hopSize zeros so that every input sample is covered by the full set of frames that
 * overlap it. Frame k therefore ends at sample (k+1)·hopSize.
 *
 * Synthesis is weighted overlap-add (WOLA): every frame is inverse-transformed, multiplied by the
 * synthesis window and added; the sum is divided by D(n) = Σ_k w_a(n − kH)·w_s(n − kH), which is
 * periodic in n with period H. Unmodified frames therefore reconstruct the input exactly (to
 * rounding) for any window whose D(n) > 0 — Allen (1977), "Short term spectral analysis, synthesis,
 * and modification by discrete Fourier transform", IEEE TASSP 25(3); Griffin & Lim (1984).
 */
import { ParameterError } from '../errors.ts';
import { FftPlan } from './fft.ts';
import { makeWindow, type WindowName } from './window.ts';

export interface StftOptions {
  /** Transform size in samples (power of two). */
  fftSize: number;
  /** Hop between frames in samples, 1 ≤ hopSize ≤ fftSize. */
  hopSize: number;
  /** Analysis window (periodic). Default 'hann'. */
  window?: WindowName | Float64Array;
  /** Synthesis window for OverlapAdder / StftProcessor. Default: the analysis window. */
  synthesisWindow?: Float64Array;
}

function resolveWindow(w: WindowName | Float64Array | undefined, n: number): Float64Array {
  if (w instanceof Float64Array) {
    if (w.length !== n) throw new ParameterError(`window length ${w.length} must equal fftSize ${n}`);
    return w;
  }
  return makeWindow(w ?? 'hann', n);
}

function checkFraming(fftSize: number, hopSize: number): void {
  if (!Number.isInteger(hopSize) || hopSize < 1 || hopSize > fftSize) {
    throw new ParameterError(`hopSize=${hopSize} must be a whole number from 1 to fftSize=${fftSize}`);
  }
}

/**
 * Streams samples in and calls `onFrame(spectrum, frameIndex)` for each complete frame.
 * `spectrum` holds bins 0…N/2 interleaved (N+2 numbers) and is reused: copy it to keep it.
 */
export class StftAnalyzer {
  readonly fftSize: number;
  readonly hopSize: number;
  readonly window: Float64Array;
  readonly #plan: FftPlan;
  readonly #buf: Float64Array;
  readonly #windowed: Float64Array;
  readonly #spec: Float64Array;
  #filled: number;
  #frame = 0;
  #inputTotal = 0;

  constructor(
    options: StftOptions,
    readonly onFrame: (spectrum: Float64Array, frameIndex: number) => void,
  ) {
    this.fftSize = options.fftSize;
    this.hopSize = options.hopSize;
    checkFraming(this.fftSize, this.hopSize);
    this.#plan = new FftPlan(this.fftSize);
    this.window = resolveWindow(options.window, this.fftSize);
    this.#buf = new Float64Array(this.fftSize);
    this.#windowed = new Float64Array(this.fftSize);
    this.#spec = this.#plan.createHalfSpectrum();
    // The leading fftSize − hopSize zeros are already in the buffer.
    this.#filled = this.fftSize - this.hopSize;
  }

  /** Frames emitted so far. */
  get frameCount(): number {
    return this.#frame;
  }

  push(samples: Float64Array): void {
    const n = this.fftSize;
    let i = 0;
    while (i < samples.length) {
      const take = Math.min(n - this.#filled, samples.length - i);
      this.#buf.set(samples.subarray(i, i + take), this.#filled);
      this.#filled += take;
      this.#inputTotal += take;
      i += take;
      if (this.#filled === n) this.#emit();
    }
  }

  /**
   * Feeds zeros until every input sample has been covered by all frames overlapping it: the last
   * input sample sits at padded position p = inputTotal − 1 + fftSize − hopSize, and its last
   * frame is ⌊p/H⌋.
   */
  flush(): void {
    if (this.#inputTotal === 0) return;
    const lastPadded = this.#inputTotal - 1 + this.fftSize - this.hopSize;
    const framesNeeded = Math.floor(lastPadded / this.hopSize) + 1;
    while (this.#frame < framesNeeded) {
      this.#buf.fill(0, this.#filled);
      this.#filled = this.fftSize;
      this.#emit();
    }
  }

  #emit(): void {
    const n = this.fftSize, h = this.hopSize, w = this.window, b = this.#buf, x = this.#windowed;
    for (let i = 0; i < n; i++) x[i] = b[i]! * w[i]!;
    this.#plan.realForward(x, this.#spec);
    this.onFrame(this.#spec, this.#frame++);
    b.copyWithin(0, h);
    this.#filled = n - h;
  }
}

/** The periodic WOLA normaliser D[r] = Σ_m w_a(r + mH)·w_s(r + mH), r = 0…H−1. */
export function wolaNormalizer(analysis: Float64Array, synthesis: Float64Array, hopSize: number): Float64Array {
  const d = new Float64Array(hopSize);
  for (let i = 0; i < analysis.length; i++) d[i % hopSize]! += analysis[i]! * synthesis[i]!;
  for (let r = 0; r < hopSize; r++) {
    if (!(d[r]! > 1e-12)) throw new ParameterError(`window/hop combination cannot reconstruct (overlap sum is zero at offset ${r})`);
  }
  return d;
}

/**
 * Weighted overlap-add synthesis. `addFrame(spectrum)` returns the `hopSize` output samples that
 * the frame completed (a view into an internal buffer, valid until the next call).
 * Output sample p (in padded coordinates, see the framing note above) is complete after frame
 * ⌊p/H⌋ has been added.
 */
export class OverlapAdder {
  readonly fftSize: number;
  readonly hopSize: number;
  readonly #plan: FftPlan;
  readonly #synthesis: Float64Array;
  readonly #norm: Float64Array;
  readonly #acc: Float64Array;
  readonly #time: Float64Array;
  readonly #out: Float64Array;

  constructor(options: StftOptions) {
    this.fftSize = options.fftSize;
    this.hopSize = options.hopSize;
    checkFraming(this.fftSize, this.hopSize);
    this.#plan = new FftPlan(this.fftSize);
    const analysis = resolveWindow(options.window, this.fftSize);
    this.#synthesis = options.synthesisWindow ? resolveWindow(options.synthesisWindow, this.fftSize) : analysis;
    this.#norm = wolaNormalizer(analysis, this.#synthesis, this.hopSize);
    this.#acc = new Float64Array(this.fftSize);
    this.#time = new Float64Array(this.fftSize);
    this.#out = new Float64Array(this.hopSize);
  }

  addFrame(spectrum: Float64Array): Float64Array {
    const n = this.fftSize, h = this.hopSize, t = this.#time, a = this.#acc, w = this.#synthesis;
    this.#plan.realInverse(spectrum, t);
    for (let i = 0; i < n; i++) a[i]! += t[i]! * w[i]!;
    const out = this.#out, d = this.#norm;
    for (let i = 0; i < h; i++) out[i] = a[i]! / d[i]!;
    a.copyWithin(0, h);
    a.fill(0, n - h);
    return out;
  }
}

/**
 * Analysis → modify → synthesis for one channel, with the output aligned to the input: the
 * concatenated outputs of process() and flush() have exactly as many samples as went in, and
 * equal the input (to rounding) when `modify` leaves the spectra unchanged.
 */
export class StftProcessor {
  readonly #analyzer: StftAnalyzer;
  readonly #adder: OverlapAdder;
  readonly #latency: number;
  #skip: number;
  #inputCount = 0;
  #outputCount = 0;
  #chunks: Float64Array[] = [];

  constructor(options: StftOptions, modify: (spectrum: Float64Array, frameIndex: number) => void) {
    this.#adder = new OverlapAdder(options);
    this.#latency = options.fftSize - options.hopSize;
    this.#skip = this.#latency;
    this.#analyzer = new StftAnalyzer(options, (spec, k) => {
      modify(spec, k);
      this.#take(this.#adder.addFrame(spec));
    });
  }

  /** Samples of delay between input and the internal synthesis (compensated in the output). */
  get latencySamples(): number {
    return this.#latency;
  }

  process(input: Float64Array): Float64Array {
    this.#inputCount += input.length;
    this.#analyzer.push(input);
    return this.#drain(this.#inputCount);
  }

  flush(): Float64Array {
    this.#analyzer.flush();
    return this.#drain(this.#inputCount);
  }

  #take(hopOut: Float64Array): void {
    let from = 0;
    if (this.#skip > 0) {
      from = Math.min(this.#skip, hopOut.length);
      this.#skip -= from;
    }
    if (from < hopOut.length) this.#chunks.push(hopOut.slice(from));
  }

  #drain(limit: number): Float64Array {
    let total = 0;
    for (const c of this.#chunks) total += c.length;
    const n = Math.min(total, limit - this.#outputCount);
    const out = new Float64Array(n);
    let at = 0;
    const rest: Float64Array[] = [];
    for (const c of this.#chunks) {
      if (at >= n) {
        rest.push(c);
        continue;
      }
      const take = Math.min(c.length, n - at);
      out.set(c.subarray(0, take), at);
      at += take;
      if (take < c.length) rest.push(c.subarray(take));
    }
    this.#chunks = rest;
    this.#outputCount += n;
    return out;
  }
}
