/**
 * Spectral envelope for formant preservation in pitch shifting.
 *
 * Method: the "true envelope" (Röbel & Rodet 2005, "Efficient spectral envelope estimation and its
 * application to pitch shifting and envelope preservation", DAFx-05; after Imai & Abe 1979): the
 * cepstrally smoothed log spectrum (real cepstrum, low-quefrency lifter; Oppenheim & Schafer, DTSP,
 * ch. 13) is iterated as A_i = max(A_{i−1}, V_{i−1}), V_i = lifter(A_i) until it rides on the
 * harmonic peaks instead of through the valleys between them (at most 2 dB below any peak).
 *
 * The log spectrum is max-pooled over groups of 4 bins before the cepstrum, which makes the
 * transforms 4× shorter; with that pooling the quefrency index is still in samples (an N/4-point
 * IDFT of a spectrum sampled every 4·fs/N Hz), so the lifter cutoff is `cutoffSeconds·fs` samples.
 *
 * `gains(power, out)` returns, for every bin k of an N-point half spectrum, the real gain
 * E(k·f)/E(k): applied before a resampling that multiplies every frequency by f, it puts the
 * envelope back where it was (a component at bin k lands at k·f and then carries E(k·f)).
 */
import { FftPlan } from '../core/fft.ts';
import { ParameterError } from '../errors.ts';

export interface SpectralEnvelopeOptions {
  readonly fftSize: number;
  readonly sampleRateHz: number;
  /** Frequency factor of the resampling that follows (2^(semitones/12)). */
  readonly frequencyFactor: number;
  /**
   * Lifter cutoff. Default: half the pitch period where the frame's cepstrum shows one (the
   * order fs/(2·f0) Röbel & Rodet give for the true envelope), 2 … 3 ms, else 2 ms (keeps
   * formants, drops the harmonic ripple of voices up to ~250 Hz). A number fixes it.
   */
  readonly cutoffSeconds?: number;
  /** Largest boost or cut applied, dB (default 24). */
  readonly limitDb?: number;
}

const POOL = 4;
const MAX_ITERATIONS = 8;
const CONVERGED = Math.log(10 ** (2 / 20)); // 2 dB in natural-log magnitude
/** Cepstral peak (natural-log magnitude units) that counts as a pitch period. */
const CEPSTRAL_PEAK = 0.05;

export class SpectralEnvelope {
  readonly fftSize: number;
  readonly frequencyFactor: number;
  readonly #m: number; // pooled transform size N/4
  readonly #plan: FftPlan;
  #lifter: number;
  readonly #lifterMin: number;
  readonly #lifterMax: number;
  readonly #adaptive: boolean;
  readonly #periodLo: number; // quefrencies searched for the pitch period, samples
  readonly #periodHi: number;
  readonly #lowSpan: number; // pooled points up to 1 kHz
  readonly #limit: number;
  readonly #target: Float64Array; // log magnitude to cover (A)
  readonly #env: Float64Array; // envelope (V), M/2+1 points
  readonly #half: Float64Array;
  readonly #ceps: Float64Array;

  constructor(options: SpectralEnvelopeOptions) {
    const { fftSize, sampleRateHz, frequencyFactor } = options;
    if (!(frequencyFactor > 0)) throw new ParameterError(`frequencyFactor=${frequencyFactor} must be > 0`);
    if (fftSize < 64) throw new ParameterError(`fftSize=${fftSize} too small for an envelope`);
    this.fftSize = fftSize;
    this.frequencyFactor = frequencyFactor;
    this.#m = fftSize / POOL;
    this.#plan = new FftPlan(this.#m);
    const lift = (seconds: number) => Math.max(2, Math.min(this.#m / 2 - 1, Math.round(seconds * sampleRateHz)));
    this.#adaptive = options.cutoffSeconds === undefined;
    this.#lifter = this.#lifterMin = lift(options.cutoffSeconds ?? 0.002);
    this.#lifterMax = lift(0.003);
    // Periods 2.5 … 12.5 ms (400 … 80 Hz), within the cepstrum's span.
    this.#lowSpan = Math.floor((1000 * fftSize) / (POOL * sampleRateHz));
    this.#periodLo = Math.round(0.0025 * sampleRateHz);
    this.#periodHi = Math.min(this.#m / 2 - 2, Math.round(0.0125 * sampleRateHz));
    this.#limit = Math.log(10 ** ((options.limitDb ?? 24) / 20));
    const points = this.#m / 2 + 1;
    this.#target = new Float64Array(points);
    this.#env = new Float64Array(points);
    this.#half = new Float64Array(this.#m + 2);
    this.#ceps = new Float64Array(this.#m);
  }

  /** Natural-log magnitude envelope at pooled points (index j ↔ bin 4j of the N-point spectrum). */
  get envelope(): Float64Array {
    return this.#env;
  }

  /** Estimates the envelope of a power spectrum (N/2+1 bins, |X|²). */
  estimate(power: Float64Array): void {
    const points = this.#m / 2 + 1;
    const bins = this.fftSize / 2 + 1;
    let peak = 0;
    for (let k = 0; k < bins; k++) if (power[k]! > peak) peak = power[k]!;
    const floor = peak * 1e-10 + 1e-300;
    const a = this.#target;
    for (let j = 0; j < points; j++) {
      let p = 0;
      for (let k = Math.max(0, POOL * j - POOL / 2); k < Math.min(bins, POOL * j + POOL / 2); k++) if (power[k]! > p) p = power[k]!;
      a[j] = 0.5 * Math.log(p + floor);
    }
    // Below the lowest partial the spectrum holds no envelope, only its absence: a hole there
    // (hum-free voices have nothing below f0) drags the smoothed envelope down over the first
    // few hundred hertz. Points below the first within 20 dB of the largest under 1 kHz take
    // its value.
    const upTo = Math.min(points - 1, this.#lowSpan);
    let low = -Infinity;
    for (let j = 0; j <= upTo; j++) if (a[j]! > low) low = a[j]!;
    const near = low - Math.log(10); // 20 dB in natural-log magnitude
    let first = 0;
    while (first < upTo && a[first]! < near) first++;
    for (let j = 0; j < first; j++) a[j] = a[first]!;
    if (this.#adaptive) this.#chooseLifter(a);
    const v = this.#env;
    for (let it = 0; it < MAX_ITERATIONS; it++) {
      this.#smooth(a, v, it === 0 && this.#adaptive); // the first cepstrum is #chooseLifter's
      let worst = 0;
      for (let j = 0; j < points; j++) {
        const d = a[j]! - v[j]!;
        if (d > worst) worst = d;
        if (d < 0) a[j] = v[j]!;
      }
      if (worst < CONVERGED) break;
    }
  }

  /** Per-bin gains E(k·f)/E(k) for the last estimated envelope, limited to ±limitDb. */
  gains(power: Float64Array, out: Float64Array): void {
    this.estimate(power);
    const v = this.#env;
    const top = this.#m / 2;
    const bins = this.fftSize / 2 + 1;
    const f = this.frequencyFactor;
    const lim = this.#limit;
    for (let k = 0; k < bins; k++) {
      // Linear interpolation of the pooled envelope at k/4 and at k·f/4 (clamped at the top).
      const x = k / POOL;
      const i = Math.floor(x);
      const here = i >= top ? v[top]! : v[i]! + (x - i) * (v[i + 1]! - v[i]!);
      const xf = x * f;
      const j = Math.floor(xf);
      const there = j >= top ? v[top]! : v[j]! + (xf - j) * (v[j + 1]! - v[j]!);
      let d = there - here;
      if (d > lim) d = lim;
      else if (d < -lim) d = -lim;
      out[k] = Math.exp(d);
    }
  }

  /**
   * Lifter for this frame: half the pitch period when the real cepstrum has a clear peak at
   * 2.5–12.5 ms (larger than CEPSTRAL_PEAK, and the largest there), within 2 … 3 ms; else 2 ms.
   */
  #chooseLifter(logMag: Float64Array): void {
    const m = this.#m, half = this.#half, c = this.#ceps;
    const points = m / 2 + 1;
    for (let j = 0; j < points; j++) {
      half[2 * j] = logMag[j]!;
      half[2 * j + 1] = 0;
    }
    this.#plan.realInverse(half, c);
    let best = -1, top = 0;
    for (let q = this.#periodLo; q <= this.#periodHi; q++) {
      const v = c[q]!;
      if (v > top && v >= c[q - 1]! && v >= c[q + 1]!) {
        top = v;
        best = q;
      }
    }
    this.#lifter = best > 0 && top > CEPSTRAL_PEAK ? Math.max(this.#lifterMin, Math.min(this.#lifterMax, Math.round(best / 2))) : this.#lifterMin;
  }

  /**
   * Cepstral smoothing: log magnitude → real cepstrum → lifter → log magnitude (`haveCepstrum`:
   * the cepstrum of `logMag` is already in #ceps).
   */
  #smooth(logMag: Float64Array, out: Float64Array, haveCepstrum: boolean): void {
    const m = this.#m, half = this.#half, c = this.#ceps;
    const points = m / 2 + 1;
    if (!haveCepstrum) {
      for (let j = 0; j < points; j++) {
        half[2 * j] = logMag[j]!;
        half[2 * j + 1] = 0;
      }
      this.#plan.realInverse(half, c);
    }
    const l = this.#lifter;
    for (let q = l + 1; q < m - l; q++) c[q] = 0;
    this.#plan.realForward(c, half);
    for (let j = 0; j < points; j++) out[j] = half[2 * j]!;
  }
}
