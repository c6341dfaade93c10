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
import { makeWindow, type WindowName } from './windows.ts';

export interface StftOptions {
  /** Transform size in samples (power of two). */
  fftSize: number;
  /** Hop between frames in samples, 1 ≤ hopSize ≤ fftSize. */
  hopSize: number;
  /** Analysis window (periodic). Default 'hann'. A given array is copied at construction. */
  window?: WindowName | Float64Array;
  /** Synthesis window for OverlapAdder / StftProcessor. Default: the analysis window (copied at construction). */
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
  /** The analysis window (frames use a copy taken at construction). */
  readonly window: Float64Array;
  readonly #window: Float64Array;
  readonly #plan: FftPlan;
  /**
   * Input history. The current frame's samples are #buf[#start … #start + #filled); frames move
   * forward by hopSize without copying, and the tail is moved back to the front only when the
   * next hop would not fit.
   */
  readonly #buf: Float64Array;
  readonly #spec: Float64Array;
  #start = 0;
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
    this.#window = Float64Array.from(this.window);
    this.#buf = new Float64Array(bufferLength(this.fftSize, this.hopSize));
    this.#spec = this.#plan.createHalfSpectrum();
    // The leading fftSize − hopSize zeros are already in the buffer.
    this.#filled = this.fftSize - this.hopSize;
  }

  /** Frames emitted so far. */
  get frameCount(): number {
    return this.#frame;
  }

  push(samples: Float64Array): void {
    const n = this.fftSize, b = this.#buf;
    const len = samples.length;
    let i = 0;
    while (i < len) {
      if (this.#start + n > b.length) this.#compact();
      const take = Math.min(n - this.#filled, len - i);
      b.set(take === len ? samples : samples.subarray(i, i + take), this.#start + this.#filled);
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
      if (this.#start + this.fftSize > this.#buf.length) this.#compact();
      this.#buf.fill(0, this.#start + this.#filled, this.#start + this.fftSize);
      this.#filled = this.fftSize;
      this.#emit();
    }
  }

  #compact(): void {
    this.#buf.copyWithin(0, this.#start, this.#start + this.#filled);
    this.#start = 0;
  }

  #emit(): void {
    const n = this.fftSize, s = this.#start;
    this.#plan.realForwardWindowed(this.#buf, s, this.#window, this.#spec);
    this.onFrame(this.#spec, this.#frame++);
    this.#start = s + this.hopSize;
    this.#filled = n - this.hopSize;
  }
}

/**
 * Length of a history buffer that slides by hopSize without copying: room for the frame plus
 * several hops, so the tail is moved back only every few frames.
 */
function bufferLength(fftSize: number, hopSize: number): number {
  return fftSize + Math.max(fftSize, 4 * hopSize);
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
  /**
   * Overlap-add accumulator: the pending sum starts at #acc[#start]; it slides forward by hopSize
   * per frame, and the fftSize − hopSize pending samples move back to the front (with the rest
   * zeroed) only when the next frame would not fit.
   */
  readonly #acc: Float64Array;
  readonly #out: Float64Array;
  #start = 0;

  constructor(options: StftOptions) {
    this.fftSize = options.fftSize;
    this.hopSize = options.hopSize;
    checkFraming(this.fftSize, this.hopSize);
    this.#plan = new FftPlan(this.fftSize);
    const analysis = resolveWindow(options.window, this.fftSize);
    // Copies: the plan may keep its own copy of the window, so ours must not change.
    this.#synthesis = (options.synthesisWindow ? resolveWindow(options.synthesisWindow, this.fftSize) : analysis).slice();
    this.#norm = wolaNormalizer(analysis, this.#synthesis, this.hopSize);
    this.#acc = new Float64Array(bufferLength(this.fftSize, this.hopSize));
    this.#out = new Float64Array(this.hopSize);
  }

  addFrame(spectrum: Float64Array): Float64Array {
    const n = this.fftSize, h = this.hopSize, a = this.#acc, w = this.#synthesis;
    let s = this.#start;
    if (s + n > a.length) {
      a.copyWithin(0, s, s + n - h);
      a.fill(0, n - h);
      s = 0;
    }
    this.#plan.realInverseAdd(spectrum, w, a, s);
    const out = this.#out, d = this.#norm;
    for (let i = 0; i < h; i++) out[i] = a[s + i]! / d[i]!;
    this.#start = s + h;
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
  /** Synthesised samples not yet returned: #pending[0 … #pendingLength). */
  #pending: Float64Array;
  #pendingLength = 0;

  constructor(options: StftOptions, modify: (spectrum: Float64Array, frameIndex: number) => void) {
    this.#adder = new OverlapAdder(options);
    this.#latency = options.fftSize - options.hopSize;
    this.#skip = this.#latency;
    this.#pending = new Float64Array(Math.max(options.fftSize, 4 * options.hopSize));
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
    const count = hopOut.length - from;
    if (count <= 0) return;
    let p = this.#pending;
    const at = this.#pendingLength;
    if (at + count > p.length) {
      const grown = new Float64Array(Math.max(2 * p.length, at + count));
      grown.set(p.subarray(0, at));
      this.#pending = p = grown;
    }
    p.set(from === 0 ? hopOut : hopOut.subarray(from), at);
    this.#pendingLength = at + count;
  }

  #drain(limit: number): Float64Array {
    const total = this.#pendingLength;
    const n = Math.min(total, limit - this.#outputCount);
    const out = this.#pending.slice(0, n);
    if (n < total) this.#pending.copyWithin(0, n, total);
    this.#pendingLength = total - n;
    this.#outputCount += n;
    return out;
  }
}
