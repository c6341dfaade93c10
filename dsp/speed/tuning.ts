/**
 * Speed from musical tuning: how far the music sits from equal temperament at A4 = 440 Hz
 * (ISO 16:1975; f = 440·2^((m − 69)/12)). Played at factor a, every pitch moves by 1200·log2(a)
 * cents, so the deviation of the notes from the 100-cent grid is the speed error — modulo a
 * semitone (a tape a whole semitone fast looks perfectly in tune) and assuming the musicians tuned
 * to A = 440.
 *
 * Method (pass 1, streaming, bounded cost): up to 1200 pairs of Hann frames (≈0.17 s, second frame
 * a quarter-frame later) spread evenly through the file. In each pair the strongest spectral peaks
 * between 60 Hz and 5 kHz that stand ≥ 10 dB above the frame's median get an exact frequency from
 * the phase advance between the two frames (the phase-vocoder frequency estimate; Flanagan & Golden
 * 1966), kept only when it agrees with the magnitude peak. Each peak's deviation from the nearest
 * equal-tempered pitch (−50…+50 cents) is a point on a circle of 100 cents, weighted by its level
 * above the floor; their circular mean is the tuning offset (see `result`). Octave partials
 * (h = 1, 2, 4) fall on the fundamental's deviation; h = 3, 6 sit 1.96 cents sharp and h = 5 13.7
 * cents flat, which bias the absolute reading by a few cents but not how it follows a speed
 * change.
 */
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';

const MAX_PAIRS = 1200;
const LO_HZ = 60;
const HI_HZ = 5000;
const PEAKS_PER_FRAME = 24;

export interface TuningMeasurement {
  /** Deviation from A4 = 440 Hz equal temperament, −50…+50 cents. */
  cents: number;
  /** Resultant length of the deviations on the 100-cent circle (0 random … 1 all at one offset). */
  concentration: number;
  /** Peaks that were used. */
  peaks: number;
  /** Standard error of the offset (cents), from the weighted spread near the peak. */
  uncertaintyCents: number;
}

export class TuningScanner {
  readonly fftSize: number;
  readonly hopSize: number;
  readonly #fs: number;
  readonly #spacing: number;
  readonly #plan: FftPlan;
  readonly #window: Float64Array;
  readonly #buf: Float64Array;
  readonly #a: Float64Array;
  readonly #b: Float64Array;
  readonly #sa: Float64Array;
  readonly #sb: Float64Array;
  #nextStart = 0;
  #filled = -1;
  readonly #dev: number[] = [];
  readonly #wt: number[] = [];

  constructor(sampleRateHz: number, totalFrames: number) {
    this.#fs = sampleRateHz;
    let n = 1024;
    while (n < sampleRateHz / 6) n *= 2;
    this.fftSize = n;
    this.hopSize = n / 4;
    this.#spacing = Math.max(n + this.hopSize, Math.floor(totalFrames / MAX_PAIRS));
    this.#plan = new FftPlan(n);
    this.#window = makeWindow('hann', n);
    this.#buf = new Float64Array(n + this.hopSize);
    this.#a = new Float64Array(n);
    this.#b = new Float64Array(n);
    this.#sa = this.#plan.createHalfSpectrum();
    this.#sb = this.#plan.createHalfSpectrum();
  }

  push(mono: Float64Array, offset: number): void {
    const need = this.#buf.length;
    let i = 0;
    while (i < mono.length) {
      if (this.#filled < 0) {
        if (this.#nextStart >= offset + mono.length) return;
        i = Math.max(i, this.#nextStart - offset);
        this.#filled = 0;
        continue;
      }
      const take = Math.min(need - this.#filled, mono.length - i);
      this.#buf.set(mono.subarray(i, i + take), this.#filled);
      this.#filled += take;
      i += take;
      if (this.#filled === need) {
        this.#analyse();
        this.#filled = -1;
        this.#nextStart += this.#spacing;
      }
    }
  }

  #analyse(): void {
    const n = this.fftSize, h = this.hopSize, w = this.#window;
    for (let i = 0; i < n; i++) {
      this.#a[i] = this.#buf[i]! * w[i]!;
      this.#b[i] = this.#buf[i + h]! * w[i]!;
    }
    this.#plan.realForward(this.#a, this.#sa);
    this.#plan.realForward(this.#b, this.#sb);
    const sa = this.#sa, sb = this.#sb;
    const binHz = this.#fs / n;
    const k0 = Math.max(3, Math.floor(LO_HZ / binHz)), k1 = Math.min(n / 2 - 3, Math.ceil(HI_HZ / binHz));
    const p = new Float64Array(k1 + 3);
    for (let k = k0 - 2; k <= k1 + 2; k++) p[k] = sa[2 * k]! ** 2 + sa[2 * k + 1]! ** 2;
    const sorted = Array.from(p.subarray(k0, k1 + 1)).sort((x, y) => x - y);
    const median = sorted[sorted.length >> 1]!;
    const pMax = sorted[sorted.length - 1]!;
    const threshold = Math.max(10 * median, pMax * 1e-5);
    if (!(pMax > 0)) return;
    const peaks: number[] = [];
    for (let k = k0; k <= k1; k++) {
      const v = p[k]!;
      if (v > threshold && v > p[k - 1]! && v >= p[k + 1]! && v > p[k - 2]! && v >= p[k + 2]!) peaks.push(k);
    }
    peaks.sort((x, y) => p[y]! - p[x]!);
    const hopPhase = (2 * Math.PI * h) / n;
    for (const k of peaks.slice(0, PEAKS_PER_FRAME)) {
      const pa = Math.atan2(sa[2 * k + 1]!, sa[2 * k]!), pb = Math.atan2(sb[2 * k + 1]!, sb[2 * k]!);
      let d = pb - pa - hopPhase * k;
      d -= 2 * Math.PI * Math.round(d / (2 * Math.PI));
      const bin = k + d / hopPhase;
      // Parabolic magnitude peak as a sanity check on the phase estimate.
      const la = Math.log(p[k - 1]!), lb = Math.log(p[k]!), lc = Math.log(p[k + 1]!);
      const den = la - 2 * lb + lc;
      const par = k + (den < 0 ? (0.5 * (la - lc)) / den : 0);
      if (Math.abs(bin - par) > 0.4) continue;
      const f = bin * binHz;
      const c = 1200 * Math.log2(f / 440);
      const dev = c - 100 * Math.round(c / 100);
      this.#dev.push(dev);
      this.#wt.push(Math.min(40, 10 * Math.log10(p[k]! / threshold)) + 1);
    }
  }

  result(): TuningMeasurement | null {
    const m = this.#dev.length;
    if (m < 12) return null;
    // Weighted circular mean of the deviations on the 100-cent circle (Mardia & Jupp, "Directional
    // Statistics", 2000, §2.2): a uniform speed change of c cents turns every deviation by c, so
    // the mean turns by exactly c (the histogram's peak can hop between the modes of inharmonic
    // or mistuned partials). Its resultant length R (0 random … 1 all at one offset) is the
    // concentration.
    let sc = 0, ss = 0, total = 0;
    for (let i = 0; i < m; i++) {
      const a = (2 * Math.PI * this.#dev[i]!) / 100;
      sc += this.#wt[i]! * Math.cos(a);
      ss += this.#wt[i]! * Math.sin(a);
      total += this.#wt[i]!;
    }
    const R = Math.hypot(sc, ss) / total;
    let cents = (100 * Math.atan2(ss, sc)) / (2 * Math.PI);
    // Refine on the partials within ±10 cents of the mean (twice): the 5th and 7th harmonics sit
    // 13.7 and 31.2 cents flat of equal temperament and would pull a plain mean. The window moves
    // with the mean, so a speed change still turns the result by exactly its cents.
    for (let it = 0; it < 2; it++) {
      let rc = 0, rs = 0;
      for (let i = 0; i < m; i++) {
        let d = this.#dev[i]! - cents;
        d -= 100 * Math.round(d / 100);
        if (Math.abs(d) > 10) continue;
        const a = (2 * Math.PI * this.#dev[i]!) / 100;
        rc += this.#wt[i]! * Math.cos(a);
        rs += this.#wt[i]! * Math.sin(a);
      }
      if (rc === 0 && rs === 0) break;
      cents = (100 * Math.atan2(rs, rc)) / (2 * Math.PI);
    }
    if (cents <= -50) cents += 100;
    // Circular standard deviation √(−2 ln R) (in cents); peaks in one frame are not independent
    // notes: count frames' worth of evidence conservatively.
    const sd = (100 / (2 * Math.PI)) * Math.sqrt(-2 * Math.log(Math.max(R, 1e-9)));
    const nEff = Math.max(1, m / 6);
    return { cents, concentration: R, peaks: m, uncertaintyCents: sd / Math.sqrt(nEff) };
  }
}
