/**
 * A narrowband complex track for the speed analyses: x[n]·e^{−j2π f n} lowpassed and decimated by
 * the boxcar-power (CIC) FIR of ../core/decimate.ts (a heterodyne receiver).
 */
import { Decimator } from '../core/decimate.ts';

/** Track sample m is centred on input sample m·D − delaySamples. */
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
