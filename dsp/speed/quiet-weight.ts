/**
 * Time weights that let a steady line be seen where the programme is quiet.
 *
 * Mains hum is there at one level all the time; a drum loop or a played note puts its energy in
 * bursts (a kick every half second, a note's attack). Treating the programme as noise whose power
 * changes with time, the least-squares fit of a sinusoid weighs each sample by the inverse of the
 * local noise power (weighted least squares; common practice for heteroscedastic noise). The
 * weights here are that, capped: frame i (25 ms) has power Pᵢ (after a 10 Hz high-pass, the
 * largest of it and its two neighbours, so an attack is covered from its start), Qᵢ is the lower
 * quartile of the frame powers within ±4 s, and wᵢ = Qᵢ / max(Pᵢ, Qᵢ): 1 in the quiet quarter,
 * smaller in proportion to the programme's power elsewhere. A steady line keeps its frequency and
 * its phase under the weights (its amplitude is only multiplied by them), while the bursts that
 * bury it are turned down.
 *
 * Streaming: the quartile looks 4 s ahead, so weighted samples come out 4 s late (push returns
 * what is ready, finish the rest). The weights stay available by frame for a second pass
 * (`QuietGain`), which applies the same weights to the same decimated stream.
 */

const FRAME_SECONDS = 0.025;
const WINDOW_SECONDS = 4;
const QUANTILE = 0.25;
const HIGHPASS_HZ = 10;
/** Histogram of frame power in 0.5-dB bins over [−330, +30] dB. */
const BIN_DB = 0.5;
const DB_LO = -330;
const BINS = Math.round(360 / BIN_DB);

export class QuietWeighting {
  readonly frameLength: number;
  readonly #K: number;
  readonly #hpR: number;
  #hpX = 0;
  #hpY = 0;
  /** Frame powers (grown as needed) and their histogram bins. */
  #power = new Float64Array(4096);
  #bin = new Int32Array(4096);
  #frames = 0;
  #acc = 0;
  #accN = 0;
  /** Weights per frame, for frames whose weight is known. */
  #weights = new Float32Array(4096);
  #weighted = 0;
  readonly #hist = new Int32Array(BINS);
  #histLo = 0;
  #histHi = 0;
  /** Raw samples not yet weighted (from sample #pendingStart on). */
  #pending = new Float64Array(8192);
  #pendingLen = 0;
  #pendingStart = 0;
  #out = new Float64Array(0);
  #finished = false;

  constructor(sampleRateHz: number) {
    this.frameLength = Math.max(1, Math.round(FRAME_SECONDS * sampleRateHz));
    this.#K = Math.max(1, Math.round(WINDOW_SECONDS / FRAME_SECONDS));
    this.#hpR = Math.exp((-2 * Math.PI * HIGHPASS_HZ) / sampleRateHz);
  }

  /** Weights of every frame (complete after `finish`). */
  get weights(): Float32Array {
    return this.#weights.subarray(0, this.#weighted);
  }

  /** Weighted samples that are ready (a view, valid until the next call). */
  push(y: Float64Array): Float64Array {
    if (this.#finished) throw new Error('QuietWeighting: push after finish');
    this.#append(y);
    const L = this.frameLength;
    for (let i = 0; i < y.length; i++) {
      const v = y[i]!;
      const hp = v - this.#hpX + this.#hpR * this.#hpY;
      this.#hpX = v;
      this.#hpY = hp;
      this.#acc += hp * hp;
      if (++this.#accN === L) this.#closeFrame();
    }
    // Frame i's weight needs frames up to i + K (the quartile window) and i + 1 (its neighbour).
    while (this.#weighted + this.#K < this.#frames) this.#weightNext();
    return this.#emit();
  }

  /** The remaining weighted samples; after this `weights` covers every frame. */
  finish(): Float64Array {
    if (this.#finished) return new Float64Array(0);
    if (this.#accN > 0) this.#closeFrame();
    this.#finished = true;
    while (this.#weighted < this.#frames) this.#weightNext();
    return this.#emit();
  }

  #append(y: Float64Array): void {
    if (this.#pendingLen + y.length > this.#pending.length) {
      const p = new Float64Array(Math.max(this.#pendingLen + y.length, 2 * this.#pending.length));
      p.set(this.#pending.subarray(0, this.#pendingLen));
      this.#pending = p;
    }
    this.#pending.set(y, this.#pendingLen);
    this.#pendingLen += y.length;
  }

  #closeFrame(): void {
    const i = this.#frames;
    if (i >= this.#power.length) {
      const p = new Float64Array(2 * this.#power.length);
      p.set(this.#power);
      this.#power = p;
      const b = new Int32Array(2 * this.#bin.length);
      b.set(this.#bin);
      this.#bin = b;
    }
    const P = this.#acc / this.#accN;
    this.#power[i] = P;
    const db = 10 * Math.log10(Math.max(P, 1e-33));
    this.#bin[i] = Math.max(0, Math.min(BINS - 1, Math.floor((db - DB_LO) / BIN_DB)));
    this.#frames++;
    this.#acc = 0;
    this.#accN = 0;
  }

  #weightNext(): void {
    const i = this.#weighted;
    const K = this.#K, n = this.#frames;
    const lo = Math.max(0, i - K), hi = Math.min(n - 1, i + K);
    // Slide the histogram window to [lo, hi].
    while (this.#histHi <= hi) this.#hist[this.#bin[this.#histHi++]!]!++;
    while (this.#histLo < lo) this.#hist[this.#bin[this.#histLo++]!]!--;
    const count = this.#histHi - this.#histLo;
    const target = Math.max(1, Math.ceil(QUANTILE * count));
    let seen = 0, b = 0;
    for (; b < BINS; b++) {
      seen += this.#hist[b]!;
      if (seen >= target) break;
    }
    const Q = Math.pow(10, (DB_LO + (b + 1) * BIN_DB) / 10);
    const p = this.#power;
    const P = Math.max(p[i]!, i > 0 ? p[i - 1]! : 0, i + 1 < n ? p[i + 1]! : 0);
    if (i >= this.#weights.length) {
      const w = new Float32Array(2 * this.#weights.length);
      w.set(this.#weights);
      this.#weights = w;
    }
    this.#weights[i] = P > Q ? Q / P : 1;
    this.#weighted++;
  }

  /** Weighted samples of the frames whose weights are known; they leave the pending buffer. */
  #emit(): Float64Array {
    const L = this.frameLength;
    const readyEnd = this.#finished ? this.#pendingStart + this.#pendingLen : Math.min(this.#pendingStart + this.#pendingLen, this.#weighted * L);
    const m = readyEnd - this.#pendingStart;
    if (m <= 0) return this.#out.subarray(0, 0);
    if (this.#out.length < m) this.#out = new Float64Array(Math.max(m, 2 * this.#out.length));
    const out = this.#out.subarray(0, m);
    const w = this.#weights;
    const last = Math.max(0, this.#weighted - 1);
    for (let k = 0; k < m; k++) {
      const f = Math.min(last, Math.floor((this.#pendingStart + k) / L));
      out[k] = this.#pending[k]! * w[f]!;
    }
    this.#pending.copyWithin(0, m, this.#pendingLen);
    this.#pendingLen -= m;
    this.#pendingStart += m;
    return out;
  }
}

/** Applies known frame weights (from `QuietWeighting`) to a decimated stream, and gives the weights as a signal. */
export class QuietGain {
  readonly #weights: Float32Array;
  readonly #L: number;
  #n = 0;
  #y = new Float64Array(0);
  #g = new Float64Array(0);

  constructor(weights: Float32Array, frameLength: number) {
    this.#weights = weights;
    this.#L = frameLength;
  }

  /** Weighted samples and the weight of each sample (views, valid until the next call). */
  apply(y: Float64Array): { weighted: Float64Array; gain: Float64Array } {
    const n = y.length;
    if (this.#y.length < n) {
      this.#y = new Float64Array(n);
      this.#g = new Float64Array(n);
    }
    const out = this.#y.subarray(0, n), g = this.#g.subarray(0, n);
    const w = this.#weights, last = w.length - 1, L = this.#L;
    for (let k = 0; k < n; k++) {
      const f = Math.min(last, Math.floor((this.#n + k) / L));
      const v = f >= 0 ? w[f]! : 1;
      g[k] = v;
      out[k] = y[k]! * v;
    }
    this.#n += n;
    return { weighted: out, gain: g };
  }
}
