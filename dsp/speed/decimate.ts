/**
 * Cheap streaming decimators for the speed analyses.
 *
 * The lowpass is a boxcar of length D convolved with itself R times (the impulse response of an
 * R-stage cascaded integrator–comb decimator, Hogenauer 1981, "An economical class of digital
 * filters for decimation and interpolation", IEEE TASSP 29(2)), evaluated here as an ordinary FIR so
 * nothing accumulates in floating point over hour-long streams. Its zeros sit on every multiple of
 * the output rate, which is where aliases would land near 0 Hz; response (sin(πfD)/(D·sin(πf)))^R.
 * Cost: R multiply-adds per input sample.
 */
import { ParameterError } from '../errors.ts';

/** Normalised (Σ = 1) taps of boxcar(D)^{*R}: length R·(D − 1) + 1. */
export function boxcarPowerKernel(factor: number, order: number): Float64Array {
  if (!Number.isInteger(factor) || factor < 1) throw new ParameterError(`decimation factor ${factor} must be a whole number ≥ 1`);
  if (!Number.isInteger(order) || order < 1) throw new ParameterError(`decimator order ${order} must be a whole number ≥ 1`);
  let h = new Float64Array([1]);
  for (let r = 0; r < order; r++) {
    const g = new Float64Array(h.length + factor - 1);
    for (let i = 0; i < h.length; i++) for (let j = 0; j < factor; j++) g[i + j]! += h[i]!;
    h = g;
  }
  let s = 0;
  for (const v of h) s += v;
  for (let i = 0; i < h.length; i++) h[i]! /= s;
  return h;
}

/**
 * y[m] = Σ_k h[k]·x[m·D − k] (input before sample 0 is zero). Output m is centred on input sample
 * m·D − delaySamples, delaySamples = (taps − 1)/2.
 */
export class Decimator {
  readonly factor: number;
  readonly kernel: Float64Array;
  readonly delaySamples: number;
  #buf: Float64Array;
  /** Global index of #buf[0]. */
  #start: number;
  #len: number;
  #next = 0;

  constructor(factor: number, order: number) {
    this.factor = factor;
    this.kernel = boxcarPowerKernel(factor, order);
    this.delaySamples = (this.kernel.length - 1) / 2;
    const hist = this.kernel.length - 1;
    this.#buf = new Float64Array(hist + 4096);
    this.#start = -hist;
    this.#len = hist;
  }

  process(x: Float64Array): Float64Array {
    const taps = this.kernel.length, D = this.factor, h = this.kernel;
    if (this.#len + x.length > this.#buf.length) {
      const g = new Float64Array(Math.max(this.#len + x.length, 2 * this.#buf.length));
      g.set(this.#buf.subarray(0, this.#len));
      this.#buf = g;
    }
    this.#buf.set(x, this.#len);
    this.#len += x.length;
    const end = this.#start + this.#len; // one past the newest global index
    const first = this.#next;
    const last = Math.floor((end - 1) / D); // largest m with m·D ≤ end − 1
    const count = Math.max(0, last - first + 1);
    const out = new Float64Array(count);
    const buf = this.#buf, start = this.#start;
    for (let j = 0; j < count; j++) {
      const top = (first + j) * D - start; // buffer index of x[m·D]
      let a = 0, b = 0, k = 0;
      for (; k + 1 < taps; k += 2) {
        a += h[k]! * buf[top - k]!;
        b += h[k + 1]! * buf[top - k - 1]!;
      }
      if (k < taps) a += h[k]! * buf[top - k]!;
      out[j] = a + b;
    }
    this.#next = first + count;
    // Keep the taps − 1 samples before the next output's newest input.
    const keepFrom = this.#next * D - (taps - 1) - start;
    if (keepFrom > 0) {
      buf.copyWithin(0, keepFrom, this.#len);
      this.#len -= keepFrom;
      this.#start += keepFrom;
    }
    return out;
  }
}

/**
 * A narrowband complex track: x[n]·e^{−j2π f n} lowpassed and decimated (a heterodyne receiver).
 * Track sample m is centred on input sample m·D − delaySamples.
 */
export class HeterodyneTrack {
  readonly cyclesPerSample: number;
  readonly #re: Decimator;
  readonly #im: Decimator;
  #n = 0;
  #tmpRe = new Float64Array(0);
  #tmpIm = new Float64Array(0);
  /** Track samples (float32 is ample: its rounding sits ~140 dB below the line). */
  re: Float32Array = new Float32Array(1024);
  im: Float32Array = new Float32Array(1024);
  length = 0;

  constructor(cyclesPerSample: number, factor: number, order: number) {
    this.cyclesPerSample = cyclesPerSample;
    this.#re = new Decimator(factor, order);
    this.#im = new Decimator(factor, order);
  }

  get delaySamples(): number {
    return this.#re.delaySamples;
  }

  push(x: Float64Array): void {
    const n = x.length;
    if (this.#tmpRe.length < n) {
      this.#tmpRe = new Float64Array(n);
      this.#tmpIm = new Float64Array(n);
    }
    const re = this.#tmpRe.subarray(0, n), im = this.#tmpIm.subarray(0, n);
    // Oscillator restarted exactly at each block from the global index (no long-run drift).
    const f = this.cyclesPerSample;
    const p0 = 2 * Math.PI * ((this.#n * f) % 1);
    let c = Math.cos(p0), s = -Math.sin(p0);
    const dc = Math.cos(2 * Math.PI * f), ds = -Math.sin(2 * Math.PI * f);
    for (let i = 0; i < n; i++) {
      const v = x[i]!;
      re[i] = v * c;
      im[i] = v * s;
      const c2 = c * dc - s * ds;
      s = c * ds + s * dc;
      c = c2;
    }
    this.#n += n;
    const a = this.#re.process(re), b = this.#im.process(im);
    if (this.length + a.length > this.re.length) {
      const cap = Math.max(this.length + a.length, 2 * this.re.length);
      const r2 = new Float32Array(cap), i2 = new Float32Array(cap);
      r2.set(this.re.subarray(0, this.length));
      i2.set(this.im.subarray(0, this.length));
      this.re = r2;
      this.im = i2;
    }
    this.re.set(a, this.length);
    this.im.set(b, this.length);
    this.length += a.length;
  }
}
