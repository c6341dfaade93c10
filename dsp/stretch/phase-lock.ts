/**
 * Identity phase locking (Laroche & Dolson 1999, "Improved phase vocoder time-scale modification
 * of audio", IEEE Trans. Speech Audio Process. 7(3):323–332, §IV) for the time-stretcher.
 *
 * The state is one rotation e^{jθ} per bin, θ = φ_out − φ_in, shared by all channels (so
 * inter-channel phase and level differences pass unchanged). Peaks are bins larger than their
 * neighbour on each side in the channels' summed power (with two neighbours each side, as in the
 * paper, a weak partial 2–3 bins from a strong one is no peak and turns with the strong one's
 * frequency: pulled toward it on low piano notes); each peak's rotation advances by
 * (H_s − H_a)·ω̂ with ω̂ its instantaneous frequency, and every bin of the peak's region (bounded
 * by the lowest bin between two peaks) takes the peak's rotation, so bins other than peaks need no
 * trigonometry.
 *
 * ω̂: the peak's phase advance over the analysis hop H_a (cross-spectrum with the previous frame,
 * summed over channels), unwrapped with a coarse estimate from Grandke's interpolation for the
 * Hann window, δ = ±(2a − 1)/(a + 1), a = |X[k±1]|/|X[k]| (Grandke 1983, "Interpolation algorithms
 * for discrete Fourier transforms of weighted signals", IEEE Trans. Instrum. Meas.
 * 32(2):350–355). Peaks more than 50 dB below the frame's largest (the noise floor) advance by
 * table: Grandke's offset rounded to 1/64 bin, no trigonometry.
 *
 * With a Hann analysis window (the main band) each steady peak's leakage into its neighbours'
 * regions is turned by its own rotation (`#correctLeakage`).
 */

const TWO_PI = 2 * Math.PI;
const wrap = (x: number): number => x - TWO_PI * Math.round(x / TWO_PI);
/** Peaks this far below the frame's largest (power ratio, −50 dB) advance by table. */
const WEAK_PEAK = 1e-5;
/** Re and Im of B(x) = ½/sin(πx/N) − ¼e^{jπ/N}/sin(π(x−1)/N) − ¼e^{−jπ/N}/sin(π(x+1)/N) (see `#correctLeakage`). */
const hannBRe = (x: number, piN: number, cN: number): number => 0.5 / Math.sin(piN * x) - 0.25 * cN * (1 / Math.sin(piN * (x - 1)) + 1 / Math.sin(piN * (x + 1)));
const hannBIm = (x: number, piN: number, sN: number): number => -0.25 * sN * (1 / Math.sin(piN * (x - 1)) - 1 / Math.sin(piN * (x + 1)));
/** A maximum this much smaller (power ratio, 25 dB) than one within 3 bins is its side lobe. */
const SIDE_LOBE = 10 ** 2.5;
/** Resolution of the tabled frequency offset: 1/64 bin. */
const FRACTION_STEPS = 64;
/** Farthest bin a partial's leakage is corrected at (Hann leakage there ≈ −98 dB). */
const MAX_REACH = 24;

/**
 * Rotates bins lo…hi of every channel's packed spectrum (xw → y) by the unit phasor (nr, ni) and
 * records it in (rr, ri); two channels in one pass (the same products).
 */
function rotateRegion(xw: readonly Float64Array[], y: readonly Float64Array[], channels: number, rr: Float64Array, ri: Float64Array, lo: number, hi: number, nr: number, ni: number): void {
  if (channels === 2) {
    const x0 = xw[0]!, x1 = xw[1]!, o0 = y[0]!, o1 = y[1]!;
    for (let k = lo; k <= hi; k++) {
      rr[k] = nr;
      ri[k] = ni;
      const j = 2 * k;
      const re0 = x0[j]!, im0 = x0[j + 1]!, re1 = x1[j]!, im1 = x1[j + 1]!;
      o0[j] = re0 * nr - im0 * ni;
      o0[j + 1] = re0 * ni + im0 * nr;
      o1[j] = re1 * nr - im1 * ni;
      o1[j + 1] = re1 * ni + im1 * nr;
    }
    return;
  }
  for (let k = lo; k <= hi; k++) {
    rr[k] = nr;
    ri[k] = ni;
  }
  for (let c = 0; c < channels; c++) {
    const x = xw[c]!, out = y[c]!;
    for (let k = lo; k <= hi; k++) {
      const re = x[2 * k]!, im = x[2 * k + 1]!;
      out[2 * k] = re * nr - im * ni;
      out[2 * k + 1] = re * ni + im * nr;
    }
  }
}

export class PhaseLocker {
  readonly fftSize: number;
  readonly synthesisHop: number;
  readonly channelCount: number;
  readonly #bins: number;
  /** Bins 0 … active − 1 are processed (a band-limited user needs no more). */
  readonly #active: number;
  readonly #omega: Float64Array; // last ω̂ of each peak bin (used when the analysis hop is 0)
  /** e^{jθ} per bin (held through a transient zone). */
  readonly rotRe: Float64Array;
  readonly rotIm: Float64Array;
  // e^{jΔω_k} for the current Δ = H_s − H_a, and e^{jΔ·2π(q/64)/N} for q = −64…64 (weak peaks).
  // Two sets of the tables (at a/b stretch ratios the rounded analysis hop alternates between
  // two values): the one in use and the other; `#stepDelta` is the advance the one in use is for.
  #stepRe: Float64Array;
  #stepIm: Float64Array;
  #fracRe: Float64Array;
  #fracIm: Float64Array;
  #stepDelta = NaN;
  #otherRe: Float64Array;
  #otherIm: Float64Array;
  #otherFracRe: Float64Array;
  #otherFracIm: Float64Array;
  #otherDelta = NaN;
  readonly #peaks: Int32Array;

  /** The Hann main band's rules: side lobes within 3 bins, the weak-peak refinement (see `lock`, `#refineWeak`). */
  readonly #hann: boolean;
  /**
   * Leakage correction (`#correctLeakage`) for a periodic cosine-sum window w = Σ (−1)^s a_s cos(2πsn/N):
   * c[S + s] = (−1)^s a_|s|/2 (c[S] = a₀), S the number of cosine terms after the first; null: none.
   */
  readonly #kernel: Float64Array | null;
  readonly #terms: number;
  /** A peak nearer than this (bins) to another overlaps its main lobe: its X(k_p) is not its own. */
  readonly #nearBins: number;
  readonly #peakFreq: Float64Array; // per peak: frequency (bins), NaN when not corrected
  readonly #regionLo: Int32Array;
  readonly #oldRe: Float64Array; // per peak: its rotation before this frame
  readonly #oldIm: Float64Array;
  readonly #regionHi: Int32Array;
  readonly #inv: Float64Array; // 1/sin(πx/N) over the bins one correction reaches

  /**
   * `window`: 'hann' (the main band: Hann leakage correction and its rules), the coefficients
   * a₀…a_S of another periodic cosine-sum analysis window (its leakage corrected; Blackman–Harris
   * in the low band), or null (no correction).
   */
  constructor(fftSize: number, synthesisHop: number, channelCount: number, activeBins = fftSize / 2 + 1, window: 'hann' | readonly number[] | null = null) {
    const hannLeakage = window === 'hann';
    const coefs = window === 'hann' ? [0.5, 0.5] : window;
    this.fftSize = fftSize;
    this.synthesisHop = synthesisHop;
    this.channelCount = channelCount;
    const bins = (this.#bins = fftSize / 2 + 1);
    this.#active = Math.max(5, Math.min(bins, activeBins));
    this.#stepRe = new Float64Array(bins);
    this.#stepIm = new Float64Array(bins);
    this.#fracRe = new Float64Array(2 * FRACTION_STEPS + 1);
    this.#fracIm = new Float64Array(2 * FRACTION_STEPS + 1);
    this.#otherRe = new Float64Array(bins);
    this.#otherIm = new Float64Array(bins);
    this.#otherFracRe = new Float64Array(2 * FRACTION_STEPS + 1);
    this.#otherFracIm = new Float64Array(2 * FRACTION_STEPS + 1);
    this.#omega = new Float64Array(bins);
    this.rotRe = new Float64Array(bins).fill(1);
    this.rotIm = new Float64Array(bins);
    this.#peaks = new Int32Array(bins);
    this.#hann = hannLeakage;
    const terms = (this.#terms = coefs ? coefs.length - 1 : 0);
    this.#kernel = coefs ? Float64Array.from({ length: 2 * terms + 1 }, (_, i) => (i === terms ? coefs[0]! : ((i - terms) % 2 ? -1 : 1) * 0.5 * coefs[Math.abs(i - terms)]!)) : null;
    this.#nearBins = hannLeakage ? 4 : terms + 2; // Hann 4 (main lobe ±2), Blackman–Harris 5 (±4)
    const leak = coefs !== null;
    this.#peakFreq = new Float64Array(leak ? bins : 0);
    this.#regionLo = new Int32Array(leak ? bins : 0);
    this.#oldRe = new Float64Array(leak ? bins : 0);
    this.#oldIm = new Float64Array(leak ? bins : 0);
    this.#regionHi = new Int32Array(leak ? bins : 0);
    this.#inv = new Float64Array(2 * MAX_REACH + 2 * terms + 5);
  }

  /** Every rotation back to 1 (the output takes the analysis phases). */
  reset(): void {
    this.rotRe.fill(1);
    this.rotIm.fill(0);
  }

  /**
   * Phase reset at a transient, sparing steady partials: every bin takes the analysis phase
   * (θ = 0) except the regions (out to the lowest bin on either side) of peaks of `after` that are
   * peaks of `before` too (at the same bin or the next) with a power no more than 1 dB higher
   * (and not 6 dB lower): a partial that goes on through the onset keeps its phase, everything else
   * (the attack, and the decaying tails it lands on) restarts from the analysis phase, so the
   * attack is not spread over the window (resetting only bins that rise by 6 dB leaves the parts of
   * an attack that land on a louder tail rotated: pre-echo on real drum loops).
   */
  resetUnstable(after: Float64Array, before: Float64Array): void {
    const bins = this.#active, last = bins - 1;
    const rr = this.rotRe, ri = this.rotIm;
    let k = 0;
    while (k < last) {
      // The next peak of `after` and its region [lo, hi].
      let p = -1;
      for (let j = Math.max(k, 2); j < last - 1; j++) {
        const v = after[j]!;
        if (v > after[j - 1]! && v >= after[j + 1]! && v >= after[j - 2]! && v >= after[j + 2]! && v > 0) {
          p = j;
          break;
        }
      }
      if (p < 0) {
        for (let j = k; j <= last; j++) {
          rr[j] = 1;
          ri[j] = 0;
        }
        break;
      }
      let hi = p;
      while (hi + 1 < last && after[hi + 1]! < after[hi]!) hi++;
      let b = -1;
      for (let j = p - 1; j <= p + 1; j++) if (before[j]! >= before[j - 1]! && before[j]! >= before[j + 1]! && (b < 0 || before[j]! > before[b]!)) b = j;
      const steady = b >= 0 && after[p]! <= 1.26 * before[b]! && after[p]! >= 0.25 * before[b]!;
      if (!steady) {
        for (let j = k; j <= hi; j++) {
          rr[j] = 1;
          ri[j] = 0;
        }
      } else {
        // Only the bins before the region's lower edge are reset.
        let lo = p;
        while (lo - 1 >= k && after[lo - 1]! < after[lo]!) lo--;
        for (let j = k; j < lo; j++) {
          rr[j] = 1;
          ri[j] = 0;
        }
      }
      k = hi + 1;
    }
    rr[0] = rr[this.#bins - 1] = 1;
    ri[0] = ri[this.#bins - 1] = 0;
  }

  /** Y = X·(held rotation), per channel. */
  rotateHeld(x: readonly Float64Array[], y: readonly Float64Array[]): void {
    const bins = this.#active, rr = this.rotRe, ri = this.rotIm;
    for (let c = 0; c < this.channelCount; c++) {
      const xc = x[c]!, out = y[c]!;
      for (let k = 0; k < bins; k++) {
        const re = xc[2 * k]!, im = xc[2 * k + 1]!, cr = rr[k]!, ci = ri[k]!;
        out[2 * k] = re * cr - im * ci;
        out[2 * k + 1] = re * ci + im * cr;
      }
    }
  }

  /**
   * Advances each peak's rotation over an analysis hop `hopIn`, gives its region the same
   * rotation and writes Y = X·e^{jθ}. `pw` is the summed power of `xw`; `xp` the previous frame.
   * Returns false when there is no peak (nothing written).
   */
  lock(pw: Float64Array, xw: readonly Float64Array[], xp: readonly Float64Array[], y: readonly Float64Array[], hopIn: number): boolean {
    const bins = this.#active, last = bins - 1, full = bins === this.#bins;
    const peaks = this.#peaks;
    // A peak is larger than its neighbour on each side, except: below the weak-peak level (the
    // noise floor) it must be larger than two neighbours on each side, as in the paper (noise has
    // a maximum every third bin, and its locking gains nothing from more peaks); and a maximum
    // with a bin 2–3 bins away more than 25 dB larger is a side lobe of that partial (Hann: −31 dB
    // and below), not a partial of its own: it joins the partial's region.
    let count = 0, top = 0;
    const hann = this.#hann, leak = this.#kernel !== null;
    for (let k = 2; k < last - 1; k++) if (pw[k]! > top) top = pw[k]!;
    const weakLevel = top * WEAK_PEAK;
    // pw[k − 1] and pw[k] carried from bin to bin (`before`, `v`).
    let before = pw[1]!, v = pw[2]!;
    for (let k = 2; k < last - 1; k++) {
      const after = pw[k + 1]!, here = v;
      const max = here > before && here >= after && here > 0;
      before = here;
      v = after;
      if (!max) continue;
      const l2 = pw[k - 2]!, r2 = pw[k + 2]!;
      if (here < weakLevel && (here < l2 || here < r2)) continue;
      if (hann) {
        const lobe = SIDE_LOBE * here;
        if (l2 > lobe || r2 > lobe || (k >= 3 && pw[k - 3]! > lobe) || (k + 3 <= last && pw[k + 3]! > lobe)) continue;
      }
      peaks[count++] = k;
    }
    if (count === 0) return false;
    const hs = this.synthesisHop, n = this.fftSize;
    const omega = this.#omega, rr = this.rotRe, ri = this.rotIm;
    const channels = this.channelCount;
    const binRad = TWO_PI / n;
    const advance = hs - hopIn;
    if (advance !== this.#stepDelta) this.#useSteps(advance);
    const stepRe = this.#stepRe, stepIm = this.#stepIm, fracRe = this.#fracRe, fracIm = this.#fracIm;
    const weak = top * WEAK_PEAK;
    let regionStart = 0;
    for (let p = 0; p < count; p++) {
      const kp = peaks[p]!;
      // Coarse frequency offset (bins): Grandke's Hann interpolation on the larger neighbour;
      // other windows: a parabola through the three log powers (common practice).
      let delta: number;
      if (hann) {
        const up = pw[kp + 1]! >= pw[kp - 1]!;
        const a = Math.sqrt((up ? pw[kp + 1]! : pw[kp - 1]!) / pw[kp]!);
        delta = (up ? 1 : -1) * ((2 * a - 1) / (a + 1));
      } else {
        const l = Math.log(pw[kp - 1]! + 1e-300), c0 = Math.log(pw[kp]!), r = Math.log(pw[kp + 1]! + 1e-300);
        const den = l - 2 * c0 + r;
        delta = den < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (l - r)) / den)) : 0;
      }
      let cr: number, ci: number;
      if (pw[kp]! >= weak) {
        let w: number;
        if (hopIn > 0) {
          const coarse = (kp + delta) * binRad;
          // Fine: the phase advance over the hop (cross-spectrum with the previous frame).
          let hr = 0, hi = 0;
          for (let c = 0; c < channels; c++) {
            const cur = xw[c]!, prev = xp[c]!;
            const ar = cur[2 * kp]!, ai = cur[2 * kp + 1]!, br = prev[2 * kp]!, bi = prev[2 * kp + 1]!;
            hr += ar * br + ai * bi;
            hi += ai * br - ar * bi;
          }
          if (hr === 0 && hi === 0) w = coarse;
          else {
            const dphi = Math.atan2(hi, hr);
            w = (dphi + TWO_PI * Math.round((hopIn * coarse - dphi) / TWO_PI)) / hopIn;
          }
        } else {
          w = omega[kp]!; // the same analysis frame again: keep the last estimate
        }
        omega[kp] = w;
        // A steady partial (the fine and coarse offsets agree) is corrected for leakage.
        if (leak) this.#peakFreq[p] = Math.abs(w / binRad - kp - delta) < 0.25 ? w / binRad : NaN;
        const phi = wrap(advance * w);
        cr = Math.cos(phi);
        ci = Math.sin(phi);
      } else {
        // e^{jΔ(ω_k + 2π·q/(64N))} from the two tables.
        let q = Math.round(delta * FRACTION_STEPS);
        q = q > FRACTION_STEPS ? FRACTION_STEPS : q < -FRACTION_STEPS ? -FRACTION_STEPS : q;
        const fr = fracRe[q + FRACTION_STEPS]!, fi = fracIm[q + FRACTION_STEPS]!;
        const sr = stepRe[kp]!, si = stepIm[kp]!;
        cr = sr * fr - si * fi;
        ci = sr * fi + si * fr;
        omega[kp] = (kp + q / FRACTION_STEPS) * binRad;
        if (leak) this.#peakFreq[p] = NaN;
      }
      if (leak) {
        this.#oldRe[p] = rr[kp]!;
        this.#oldIm[p] = ri[kp]!;
      }
      // New rotation of the peak, renormalised to unit length (first-order correction).
      let nr = rr[kp]! * cr - ri[kp]! * ci, ni = rr[kp]! * ci + ri[kp]! * cr;
      const g = 1.5 - 0.5 * (nr * nr + ni * ni);
      nr *= g;
      ni *= g;
      // The region reaches the lowest bin between this peak and the next.
      let regionEnd = last;
      if (p + 1 < count) {
        const next = peaks[p + 1]!;
        regionEnd = kp;
        let low = pw[kp]!;
        for (let k = kp + 1; k < next; k++) {
          const e = pw[k]!;
          if (e < low) {
            low = e;
            regionEnd = k;
          }
        }
      }
      rotateRegion(xw, y, channels, rr, ri, regionStart, regionEnd, nr, ni);
      if (leak) {
        this.#regionLo[p] = regionStart;
        this.#regionHi[p] = regionEnd;
      }
      regionStart = regionEnd + 1;
    }
    if (leak && advance !== 0) {
      if (hann && hopIn > 0) this.#refineWeak(pw, xw, xp, y, count, hopIn, advance, top * WEAK_PEAK);
      this.#correctLeakage(pw, xw, y, count, top);
    }
    // DC and Nyquist stay real (the two-channels-per-FFT packing needs real spectra there).
    rr[0] = 1;
    ri[0] = 0;
    if (full) {
      rr[last] = 1;
      ri[last] = 0;
    }
    for (let c = 0; c < channels; c++) {
      const x = xw[c]!, out = y[c]!;
      out[0] = x[0]!;
      out[1] = 0;
      if (full) {
        out[2 * last] = x[2 * last]!;
        out[2 * last + 1] = 0;
      }
    }
    return true;
  }

  /**
   * Leakage between regions. A partial at f (bins) puts a_p·W(f − k) into every bin k, W the
   * transform of the analysis window; phase locking turns the bins of another peak's region by
   * that peak's rotation R(k), so the partial's leakage there is turned wrongly, and since the
   * rotations of two partials drift apart frame by frame, the overlap-add makes a line one frame
   * rate from the partial (about −50 dB re a partial 5 bins away). Each steady peak's leakage
   * outside its region is turned to its own rotation: Y(k) += (R_p − R(k))·X(k_p)·W(f − k)/W(f − k_p)
   * (X(k_p) = a_p·W(f − k_p) to within the other partials' leakage at k_p).
   *
   * W for the periodic Hann window, from the Dirichlet kernel D(δ) = Σₙ e^{j2πδn/N}
   * = e^{jπδ(N−1)/N}·sin(πδ)/sin(πδ/N) and w = ½ − ½cos(2πn/N): W(δ) = ½D(δ) − ¼D(δ−1) − ¼D(δ+1)
   * = e^{jπδ(N−1)/N}·sin(πδ)·B(δ), B(δ) = ½/sin(πδ/N) − ¼e^{jπ/N}/sin(π(δ−1)/N) − ¼e^{−jπ/N}/sin(π(δ+1)/N)
   * (exact; Harris 1978 gives the same kernel sum). For k = k_p + m the ratio is
   * W(δ₀ − m)/W(δ₀) = e^{jπm/N}·B(δ₀ − m)/B(δ₀), δ₀ = f − k_p.
   * The reach is where the leakage (|W(d)/W(0)| ≈ 1/(πd³)) falls below −80 dB of the frame's
   * largest peak, at most MAX_REACH bins.
   */
  /**
   * A peak (above the noise floor) 10 dB or more below a steady neighbouring peak 4–12 bins away: that partial's leakage
   * at this peak's bin, ρ·X(k_q) with ρ = W(f_q − k_p)/W(f_q − k_q) (the same in both frames, the
   * frame position cancelling), is taken out of both frames before the phase advance is read, and
   * the rotation of the peak's region is redone. (Left in, it beats with the weak partial and
   * leaves a line one beat, as the frames sample it, from the weak partial.)
   */
  #refineWeak(pw: Float64Array, xw: readonly Float64Array[], xp: readonly Float64Array[], y: readonly Float64Array[], count: number, hopIn: number, advance: number, weak: number): void {
    const peaks = this.#peaks, freq = this.#peakFreq, omega = this.#omega, rr = this.rotRe, ri = this.rotIm;
    const channels = this.channelCount, binRad = TWO_PI / this.fftSize;
    for (let p = 0; p < count; p++) {
      const kp = peaks[p]!;
      if (pw[kp]! < weak) continue; // tabled peaks (the noise floor) have no phase-derived frequency
      const rho = this.#rho;
      rho[0] = 0;
      rho[1] = 0;
      let any = false, two = false, q0 = 0, q1 = 0;
      for (let side = -1; side <= 1; side += 2) {
        const q = p + side;
        if (q < 0 || q >= count) continue;
        const kq = peaks[q]!, d = Math.abs(kq - kp), fq = freq[q]!;
        if (d < 4 || d > 12 || !(fq === fq) || pw[kq]! < 10 * pw[kp]!) continue;
        // A maximum whose own frequency is the neighbour's is that partial's side lobe.
        if (Math.abs(omega[kp]! / binRad - fq) < 2) continue;
        this.#kernelRatio(fq - kq, kp - kq);
        if (!any) {
          q0 = kq;
          rho[0] = this.#kr[0]!;
          rho[1] = this.#kr[1]!;
        } else {
          q1 = kq;
          two = true;
          rho[2] = this.#kr[0]!;
          rho[3] = this.#kr[1]!;
        }
        any = true;
      }
      if (!any) continue;
      let hr = 0, hi = 0;
      for (let c = 0; c < channels; c++) {
        const cur = xw[c]!, prev = xp[c]!;
        let ar = cur[2 * kp]! - (rho[0]! * cur[2 * q0]! - rho[1]! * cur[2 * q0 + 1]!);
        let ai = cur[2 * kp + 1]! - (rho[0]! * cur[2 * q0 + 1]! + rho[1]! * cur[2 * q0]!);
        let br = prev[2 * kp]! - (rho[0]! * prev[2 * q0]! - rho[1]! * prev[2 * q0 + 1]!);
        let bi = prev[2 * kp + 1]! - (rho[0]! * prev[2 * q0 + 1]! + rho[1]! * prev[2 * q0]!);
        if (two) {
          ar -= rho[2]! * cur[2 * q1]! - rho[3]! * cur[2 * q1 + 1]!;
          ai -= rho[2]! * cur[2 * q1 + 1]! + rho[3]! * cur[2 * q1]!;
          br -= rho[2]! * prev[2 * q1]! - rho[3]! * prev[2 * q1 + 1]!;
          bi -= rho[2]! * prev[2 * q1 + 1]! + rho[3]! * prev[2 * q1]!;
        }
        hr += ar * br + ai * bi;
        hi += ai * br - ar * bi;
      }
      if (hr === 0 && hi === 0) continue;
      const dphi = Math.atan2(hi, hr);
      const w = (dphi + TWO_PI * Math.round((hopIn * omega[kp]! - dphi) / TWO_PI)) / hopIn;
      omega[kp] = w;
      if (freq[p]! === freq[p]!) freq[p] = w / binRad;
      const phi = wrap(advance * w), cr = Math.cos(phi), ci = Math.sin(phi);
      const or = this.#oldRe[p]!, oi = this.#oldIm[p]!;
      let nr = or * cr - oi * ci, ni = or * ci + oi * cr;
      const g = 1.5 - 0.5 * (nr * nr + ni * ni);
      nr *= g;
      ni *= g;
      rotateRegion(xw, y, channels, rr, ri, this.#regionLo[p]!, this.#regionHi[p]!, nr, ni);
    }
  }

  /** W(δ₀ − m)/W(δ₀) for the periodic Hann window (see `#correctLeakage`), into #kr. */
  #kernelRatio(d0: number, m: number): void {
    const n = this.fftSize, piN = Math.PI / n, cN = Math.cos(piN), sN = Math.sin(piN);
    const frac = d0 - Math.round(d0);
    if (Math.abs(frac) < 1e-6) d0 += frac >= 0 ? 1e-6 : -1e-6;
    const ar = hannBRe(d0 - m, piN, cN), ai = hannBIm(d0 - m, piN, sN), br = hannBRe(d0, piN, cN), bi = hannBIm(d0, piN, sN);
    const bn = br * br + bi * bi;
    const qr = (ar * br + ai * bi) / bn, qi = (ai * br - ar * bi) / bn;
    const er = Math.cos(piN * m), ei = Math.sin(piN * m);
    this.#kr[0] = er * qr - ei * qi;
    this.#kr[1] = er * qi + ei * qr;
  }

  readonly #kr = new Float64Array(2);
  readonly #rho = new Float64Array(4);

  #correctLeakage(pw: Float64Array, xw: readonly Float64Array[], y: readonly Float64Array[], count: number, top: number): void {
    const n = this.fftSize, last = this.#active - 1;
    const peaks = this.#peaks, freq = this.#peakFreq, lo = this.#regionLo, hi = this.#regionHi;
    const rr = this.rotRe, ri = this.rotIm, inv = this.#inv, channels = this.channelCount;
    const piN = Math.PI / n, cN = Math.cos(piN), sN = Math.sin(piN);
    for (let p = 0; p < count; p++) {
      const f = freq[p]!;
      if (!(f === f)) continue;
      const kp = peaks[p]!;
      // X(k_p) must be this partial's: no peak within 3 bins that is less than 40 dB below it (a closer
      // one's main lobe overlaps, and neither amplitude nor frequency can be read at k_p).
      const near = pw[kp]! * 1e-4;
      const nb = this.#nearBins, terms = this.#terms;
      if ((p > 0 && kp - peaks[p - 1]! < nb && pw[peaks[p - 1]!]! > near) || (p + 1 < count && peaks[p + 1]! - kp < nb && pw[peaks[p + 1]!]! > near)) continue;
      // Reach: Hann (1/(πd³))²·pw < 1e-8·top (−80 dB); other windows (side lobes ≤ −92 dB: Blackman–Harris)
      // the main lobe and one bin.
      const reach = terms === 1 ? Math.min(MAX_REACH, Math.ceil(Math.pow((1e8 * pw[kp]!) / top, 1 / 6) / Math.cbrt(Math.PI))) : terms + 2;
      const from = Math.max(1, kp - reach), to = Math.min(last - 1, kp + reach);
      const rlo = lo[p]!, rhi = hi[p]!;
      if (from >= rlo && to <= rhi) continue;
      let d0 = f - kp;
      const frac = d0 - Math.round(d0);
      if (Math.abs(frac) < 1e-6) d0 += frac >= 0 ? 1e-6 : -1e-6; // B has removable poles at whole δ
      // inv[i] = 1/sin(π(δ₀ − m)/N) for m = from − kp − S + i (S = 1 for Hann).
      const m0 = from - kp - terms;
      // y = π(δ₀ − m)/N: |y| < 0.05 for N ≥ 2048, where sin y = y − y³/6 + y⁵/120 to double
      // precision (next term y⁷/5040); |y| < 0.34 at N = 256, relative error < 3e-7.
      for (let i = 0, m = m0; m <= to - kp + terms; i++, m++) {
        const a = piN * (d0 - m), a2 = a * a;
        inv[i] = 1 / (a * (1 - a2 * (1 / 6 - a2 / 120)));
      }
      // B(x) = ½t(x) − ¼e^{jπ/N}t(x − 1) − ¼e^{−jπ/N}t(x + 1), t = 1/sin(π·/N); x = δ₀ − m is
      // inv[m − m0], x − 1 the next entry, x + 1 the one before. B(δ₀) at m = 0:
      if (terms !== 1) {
        this.#correctCosineSum(xw, y, kp, d0, from, to, m0, lo[p]!, hi[p]!);
        continue;
      }
      const i0 = -m0;
      const b0r = 0.5 * inv[i0]! - 0.25 * cN * (inv[i0 + 1]! + inv[i0 - 1]!);
      const b0i = -0.25 * sN * (inv[i0 + 1]! - inv[i0 - 1]!);
      const b0n = b0r * b0r + b0i * b0i;
      const qr = b0r / b0n, qi = -b0i / b0n; // 1/B(δ₀)
      const pr = rr[kp]!, pi = ri[kp]!;
      // e^{jπm/N}, advanced by e^{jπ/N} per bin.
      let er = Math.cos(piN * (from - kp)), ei = Math.sin(piN * (from - kp));
      for (let k = from; k <= to; k++) {
        if (k < rlo || k > rhi) {
          const i = k - from + 1;
          const br = 0.5 * inv[i]! - 0.25 * cN * (inv[i + 1]! + inv[i - 1]!), bi = -0.25 * sN * (inv[i + 1]! - inv[i - 1]!);
          // ρ = e^{jπm/N}·B(δ₀ − m)/B(δ₀); then (R_p − R(k))·ρ.
          const ar = br * qr - bi * qi, ai = br * qi + bi * qr;
          const rhoR = er * ar - ei * ai, rhoI = er * ai + ei * ar;
          const dr = pr - rr[k]!, di = pi - ri[k]!;
          const gr = dr * rhoR - di * rhoI, gi = dr * rhoI + di * rhoR;
          for (let c = 0; c < channels; c++) {
            const x = xw[c]!, out = y[c]!;
            const xr = x[2 * kp]!, xi = x[2 * kp + 1]!;
            out[2 * k]! += xr * gr - xi * gi;
            out[2 * k + 1]! += xr * gi + xi * gr;
          }
        }
        const t = er * cN - ei * sN;
        ei = er * sN + ei * cN;
        er = t;
      }
    }
  }

  /**
   * `#correctLeakage` for a cosine-sum window of S > 1 terms after the first: with
   * w = Σ_s (−1)^s a_s cos(2πsn/N) and D the Dirichlet kernel, W(δ) = Σ_s c_s D(δ − s) (c as in
   * #kernel), and since D(δ − s) = e^{jπδ(N−1)/N} sin(πδ)·e^{jπs/N}/sin(π(δ − s)/N) (the signs
   * (−1)^s of sin and of e^{−jπs} cancel), W(δ) = e^{jπδ(N−1)/N} sin(πδ)·B(δ) with
   * B(δ) = Σ_s c_s e^{jπs/N}/sin(π(δ − s)/N) (Hann: the kernel in `#correctLeakage`). `inv` holds
   * 1/sin(π(δ₀ − m)/N) from m0 = from − k_p − S.
   */
  #correctCosineSum(xw: readonly Float64Array[], y: readonly Float64Array[], kp: number, d0: number, from: number, to: number, m0: number, rlo: number, rhi: number): void {
    const n = this.fftSize, c = this.#kernel!, terms = this.#terms, inv = this.#inv, channels = this.channelCount;
    const rr = this.rotRe, ri = this.rotIm;
    const piN = Math.PI / n;
    const bAt = (i: number, out: Float64Array) => {
      let re = 0, im = 0;
      for (let s = -terms; s <= terms; s++) {
        const t = c[s + terms]! * inv[i + s]!;
        re += t * Math.cos(piN * s);
        im += t * Math.sin(piN * s);
      }
      out[0] = re;
      out[1] = im;
    };
    const b = this.#kr;
    bAt(-m0, b); // B(δ₀): m = 0
    const b0n = b[0]! * b[0]! + b[1]! * b[1]!;
    const qr = b[0]! / b0n, qi = -b[1]! / b0n; // 1/B(δ₀)
    const pr = rr[kp]!, pi = ri[kp]!;
    for (let k = from; k <= to; k++) {
      if (k >= rlo && k <= rhi) continue;
      const m = k - kp;
      bAt(m - m0, b);
      // ρ = e^{jπm/N}·B(δ₀ − m)/B(δ₀); then (R_p − R(k))·ρ.
      const ar = b[0]! * qr - b[1]! * qi, ai = b[0]! * qi + b[1]! * qr;
      const er = Math.cos(piN * m), ei = Math.sin(piN * m);
      const rhoR = er * ar - ei * ai, rhoI = er * ai + ei * ar;
      const dr = pr - rr[k]!, di = pi - ri[k]!;
      const gr = dr * rhoR - di * rhoI, gi = dr * rhoI + di * rhoR;
      for (let ch = 0; ch < channels; ch++) {
        const x = xw[ch]!, out = y[ch]!;
        const xr = x[2 * kp]!, xi = x[2 * kp + 1]!;
        out[2 * k]! += xr * gr - xi * gi;
        out[2 * k + 1]! += xr * gi + xi * gr;
      }
    }
  }

  /** Swaps in the other set of tables, built for `advance` unless it already is. */
  #useSteps(advance: number): void {
    const re = this.#stepRe, im = this.#stepIm, fr = this.#fracRe, fi = this.#fracIm, delta = this.#stepDelta;
    this.#stepRe = this.#otherRe;
    this.#stepIm = this.#otherIm;
    this.#fracRe = this.#otherFracRe;
    this.#fracIm = this.#otherFracIm;
    this.#stepDelta = this.#otherDelta;
    this.#otherRe = re;
    this.#otherIm = im;
    this.#otherFracRe = fr;
    this.#otherFracIm = fi;
    this.#otherDelta = delta;
    if (advance !== this.#stepDelta) this.#buildSteps(advance);
  }

  /** Tables e^{jΔω_k} (by recurrence) and e^{jΔ·2π(q/64)/N} for the advance Δ = H_s − H_a. */
  #buildSteps(advance: number): void {
    this.#stepDelta = advance;
    const n = this.fftSize, bins = this.#active; // only bins below `active` are read
    const a = (TWO_PI * advance) / n;
    const ur = Math.cos(a), ui = Math.sin(a);
    const sr = this.#stepRe, si = this.#stepIm;
    let r = 1, i = 0;
    for (let k = 0; k < bins; k++) {
      if ((k & 255) === 0) {
        // Restart from exact values now and then so rounding cannot accumulate.
        r = Math.cos(a * k);
        i = Math.sin(a * k);
      }
      sr[k] = r;
      si[k] = i;
      const t = r * ur - i * ui;
      i = r * ui + i * ur;
      r = t;
    }
    for (let q = -FRACTION_STEPS; q <= FRACTION_STEPS; q++) {
      this.#fracRe[q + FRACTION_STEPS] = Math.cos((a * q) / FRACTION_STEPS);
      this.#fracIm[q + FRACTION_STEPS] = Math.sin((a * q) / FRACTION_STEPS);
    }
  }
}
