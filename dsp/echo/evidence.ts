/**
 * Is a cepstral peak at τ a reflection, or the programme's own structure? A reflection delays the
 * whole programme by one τ whatever is played: every frame carries the same ripple. A pitch
 * period changes with the note, and a repeated note, hit or bar puts a copy at τ only where it
 * repeats. Averaged over the file, either can give a peak at τ as sharp as an echo's; frame by
 * frame they differ. This module looks at the frames one by one (common practice in cepstral
 * pitch analysis: Noll 1967, "Cepstrum pitch determination", JASA 41(2); the echo's rahmonic
 * signs from the series of log(1 + z), Oppenheim & Schafer, DTSP, ch. 13).
 *
 *  - Pitch lock. A frame is locked to τ when its own periodicity explains a peak at τ: with the
 *    echo's cepstrum (at the measured gain) taken out, its strongest cepstral peak over the pitch
 *    range (1–40 ms) sits at τ, τ/k or k·τ (k = 2…8). (Without taking it out, a peak at τ counts
 *    only with a positive second rahmonic at 2τ: a periodic source has one, an echo's is −g²/2.)
 *    Locked frames hold no evidence for or against a reflection at τ: their harmonics sample the
 *    ripple only at its crests. The refinement leaves them out (refine.ts, `accept`), and when
 *    nearly all frames are locked the reflection is not determined.
 *  - Spread. Over the unlocked frames that carry programme (within 40 dB of the loudest), the
 *    median of the frame's cepstrum at τ must reach a fair share of the echo expected there
 *    (ĝ times the window's overlap with itself shifted by τ): an echo is in every frame, a repeat in
 *    a few (the mean follows those few, the median does not).
 *  - Share. The same frames after cancelling (τ, ĝ): a reflection is in every frame, so they
 *    read ≈ 0 at τ; a repeat is in a few, and the cancellation puts an inverse echo (−ĝ) into
 *    the others; a rhythm at τ is still there. m_y / (m_y − m_x̂) of the two medians is ≈ 1, ≈ 0
 *    and > 1 in those cases, whatever share of the ripple a frame resolves.
 *  - For long delays (τ ≥ 40 ms) also pairs of short frames τ apart: with a reflection the later
 *    frame holds g times the earlier one, so the regression of one on the other (at the phase of
 *    the fractional delay), taken bin by bin and then the median over the bins, reads about g in
 *    most pairs; an exact repeat (a loop at its bar) reads about 1.
 */
import { nextPowerOfTwo, sharedPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';
import { CancelledError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import { EchoCanceller } from './canceller.ts';
import { echoCepstrumInto } from './fit.ts';
import { singleEchoKernel } from './kernel.ts';
import { MixScratch, mixBlock } from './mix.ts';

/**
 * Detrended cepstrum value at quefrency q: with `signed` ±1 the extreme of that sign over ±w
 * (w = 2 % of q unless given), with 0 the value at q itself; the mean of the flanks w + 3 … w + 12
 * away is removed.
 */
function peakAt(c: Float64Array, q: number, signed: 1 | -1 | 0, halfWidth?: number): number {
  const n = c.length;
  const q0 = Math.round(q);
  const w = halfWidth ?? Math.max(1, Math.round(0.02 * q));
  if (q0 + w + 12 >= n / 2) return 0;
  // The cepstrum of a real log spectrum is even: c(−p) = c(p).
  const at = (p: number) => c[Math.abs(p)]!;
  let base = 0, cnt = 0;
  for (let d = w + 3; d <= w + 12; d++) {
    base += at(q0 - d) + at(q0 + d);
    cnt += 2;
  }
  base /= cnt;
  if (signed === 0) return at(q0) - base;
  let best = -Infinity;
  for (let p = q0 - w; p <= q0 + w; p++) best = Math.max(best, signed * (at(p) - base));
  return signed * best;
}

/** Threshold (natural-log power cepstrum units) for a frame's own pitch peak. */
const PITCH_PEAK = 0.1;

/** Two quefrencies (samples) that are the same period: within 1.5 samples or 2 %. */
const nearQuefrency = (a: number, b: number) => Math.abs(a - b) <= Math.max(1.5, 0.02 * b);

/** k when q ≈ τ/k, −k when q ≈ k·τ (k = 2…8), else 0. */
export function periodMultiple(q: number, tau: number): number {
  for (let k = 2; k <= 8; k++) {
    if (nearQuefrency(q, tau / k)) return k;
    if (nearQuefrency(q, k * tau)) return -k;
  }
  return 0;
}

/**
 * A frame's pitch candidate: the strongest peak of its cepstrum over 1–40 ms after a short local
 * baseline (the mean of the values 3–6 samples either side) is taken off, with its detrended
 * value; quefrencies within `skipHalfWidth` samples of `skip` are not looked at. Null when the
 * range is empty.
 */
export function strongestPitchPeak(c: Float64Array, fs: number, skip = -Infinity, skipHalfWidth = 0): { quefrency: number; detrended: number } | null {
  const n2 = c.length / 2;
  const lo = Math.max(8, Math.floor(0.001 * fs)), hi = Math.min(Math.floor(0.04 * fs), n2 - 20);
  if (hi <= lo) return null;
  let best = -Infinity, bestQ = -1;
  for (let q = lo; q <= hi; q++) {
    if (Math.abs(q - skip) <= skipHalfWidth) continue;
    const v = c[q]! - 0.125 * (c[q - 6]! + c[q - 5]! + c[q - 4]! + c[q - 3]! + c[q + 3]! + c[q + 4]! + c[q + 5]! + c[q + 6]!);
    if (v > best) {
      best = v;
      bestQ = q;
    }
  }
  return bestQ < 0 ? null : { quefrency: bestQ, detrended: best };
}

/**
 * Whether a frame's cepstrum `c` (length N, of the log power spectrum) shows a periodicity that
 * puts a peak at `tau` by itself (see the module comment). `fs` sets the pitch range.
 */
export function pitchLocked(c: Float64Array, tau: number, fs: number, echoRemoved = false): boolean {
  return pitchLock(c, tau, fs, echoRemoved) !== null;
}

/** As pitchLocked, saying how: the frame's pitch period in samples and k (τ = k·P, or P = k·τ as −k), or null. */
export function pitchLock(c: Float64Array, tau: number, fs: number, echoRemoved = false): { periodSamples: number; k: number } | null {
  const n2 = c.length / 2;
  // The frame's pitch: the strongest detrended peak over the range (with a short local baseline).
  const bestQ = strongestPitchPeak(c, fs)?.quefrency ?? -1;
  if (bestQ < 0) return null;
  const strength = peakAt(c, bestQ, 1);
  if (!(strength > PITCH_PEAK)) return null;
  if (nearQuefrency(bestQ, tau)) {
    // With the echo's own cepstrum taken out (echoRemoved), a peak left at τ is the source's.
    if (echoRemoved) return { periodSamples: bestQ, k: 1 };
    // Otherwise: a source periodic at τ has a positive rahmonic at 2τ, an echo −g²/2.
    if (2 * tau + 20 >= n2) return { periodSamples: bestQ, k: 1 };
    // Within a sample of 2τ: a maximum over a wider span would be biased upwards by the noise.
    const second = peakAt(c, 2 * tau, 1, 1);
    const first = peakAt(c, tau, 0);
    // The echo's own second rahmonic is −g²/2, so second + first²/2 ≈ 0 for an echo alone; a
    // note's is positive and comparable to its first (about half of it on sustained bass notes).
    if (second + 0.5 * first * first > Math.max(0.06, 0.25 * Math.abs(first))) return { periodSamples: bestQ, k: 1 };
  }
  const k = periodMultiple(bestQ, tau);
  if (k !== 0) return { periodSamples: bestQ, k };
  return null;
}

export interface FrameEvidence {
  /** Frames with programme (within 40 dB of the loudest). */
  frames: number;
  /** Of those, frames whose own periodicity explains a peak at τ. */
  locked: number;
  /** Median over the unlocked frames of the frame cepstrum at τ, divided by the window's overlap at τ (≈ g for an echo). */
  medianGain: number | null;
  /**
   * For τ ≥ 40 ms: median over frame pairs τ apart (the earlier frame within 30 dB of the loudest)
   * of the later frame's regression on the earlier one, the median over bins of
   * Re(B_k·conj(A_k)) / |A_k|² (≈ g for an echo, whatever the later frame holds besides); else null.
   */
  pairGain: number | null;
  pairs: number;
  /** Median over the louder half of those frames of the cepstrum at τ after cancelling (τ, ĝ), over the overlap (≈ 0 for an echo). */
  cancelledGain: number | null;
  /**
   * On the louder half of the unlocked frames, m_y / (m_y − m_x̂) with m the medians of the
   * frame cepstra at τ before and after cancelling: the share of the frames' peak at τ that the
   * cancellation takes away without putting an inverse echo in. About 1 for a reflection (every
   * frame carries it, so cancelling leaves ≈ 0), about 0 for a peak from a few moments (most
   * frames carry nothing, so cancelling puts −ĝ into them). A ratio of two frame readings, it does
   * not depend on how much of the ripple a frame resolves (a held low note inside a frame a few τ
   * long shows only part of it).
   */
  share: number | null;
  /**
   * The echo read band by band: for each band of at least six ripple periods (octaves from
   * 125 Hz, merged where narrower; up to 0.45·fs), the median over the unlocked frames with
   * programme in that band (within 40 dB of the frame's strongest band) of the frame's log power
   * projected on cos(ωτ) over the band (a Hann taper across it), halved and divided by the window's
   * overlap at τ: ≈ g in every band for a reflection, which delays the whole programme. Null for a
   * band with programme in fewer than half of those frames (or fewer than 5). gainStd: the
   * median's standard error from the frames' spread (1.2533 · 1.4826 · MAD / √m, over the overlap).
   */
  bands: Array<{ loHz: number; hiHz: number; gain: number | null; gainStd: number | null; frames: number }>;
  /** Frame length used for the cepstral look. */
  fftSize: number;
}

/**
 * Bands for the band-by-band reading at τ samples with frames of n: octaves from 125 Hz up to
 * 0.45·fs, each merged with the next until it spans at least six periods of the echo's ripple
 * (fs/τ Hz); the last one absorbs a remainder narrower than that.
 */
export function echoBands(n: number, tau: number, fs: number): Array<{ kLo: number; kHi: number }> {
  const top = Math.floor((0.45 * fs * n) / fs);
  const minWidth = Math.max(8, Math.ceil((6 * n) / Math.max(1, tau)));
  const out: Array<{ kLo: number; kHi: number }> = [];
  let lo = Math.max(1, Math.round((125 * n) / fs));
  let edge = lo;
  while (lo < top) {
    let hi = lo;
    while (hi < top && hi - lo < minWidth) {
      edge *= 2;
      hi = Math.min(top, Math.round(edge));
    }
    if (hi - lo < minWidth) {
      if (out.length) out[out.length - 1]!.kHi = hi;
      else if (hi - lo >= 8) out.push({ kLo: lo, kHi: hi });
      break;
    }
    out.push({ kLo: lo, kHi: hi });
    lo = hi;
  }
  return out;
}

/** Median of the first m values of a (reordered in place). */
function medianOf(a: Float64Array, m: number): number {
  const v = a.subarray(0, m).sort();
  return m % 2 ? v[m >> 1]! : 0.5 * (v[m / 2 - 1]! + v[m / 2]!);
}

/** Σ w[n]·w[n + τ] / Σ w[n]²: how much of a frame's direct sound has its echo inside the same frame. */
export function windowOverlap(w: Float64Array, tau: number): number {
  const t = Math.round(tau);
  let a = 0, b = 0;
  for (let i = 0; i < w.length; i++) {
    b += w[i]! * w[i]!;
    if (i + t < w.length) a += w[i]! * w[i + t]!;
  }
  return b > 0 ? a / b : 0;
}

/**
 * Frame-by-frame evidence for a reflection at `tau` samples over [start, end) of the source
 * (see the module comment). One streaming pass over the excerpt.
 */
export async function frameEvidence(
  source: AudioSource,
  tau: number,
  gain: number,
  options: { channel: number; start: number; end: number; signal?: { readonly aborted: boolean }; fftSize?: number },
): Promise<FrameEvidence> {
  const fs = source.sampleRateHz;
  // Frames of about 4·τ by default; `fftSize` (a power of two, at least that) for longer ones.
  const n = Math.max(4096, nextPowerOfTwo(Math.ceil(4 * (tau + 16))), options.fftSize ?? 0);
  const hop = n / 2;
  const plan = sharedPlan(n);
  const win = makeWindow('hann', n);
  const rho = windowOverlap(win, tau);
  // The echo's own cepstrum in a frame (the closed form of fit.ts at the frame's effective gain
  // ĝ·ρ), taken out before the frame's pitch is read: what is left at τ, 2τ, … is the source's.
  const model = new Float64Array(n);
  echoCepstrumInto(Float64Array.from({ length: n }, (_, q) => q), tau, Math.max(-0.95, Math.min(0.95, gain * rho)), n, model);
  const cx = new Float64Array(n);
  // The same echo's log ripple bin by bin, for the bins a frame's programme does not reach (see
  // below).
  const aFrame = Math.max(-0.95, Math.min(0.95, gain * rho));
  const ripple = new Float64Array(n / 2 + 1);
  for (let k = 0; k <= n / 2; k++) ripple[k] = Math.log(1 + aFrame * aFrame + 2 * aFrame * Math.cos((2 * Math.PI * k * tau) / n));
  const lockLogs = new Float64Array(n + 2), clampLogs = new Float64Array(n + 2);
  // Band-by-band reading: per band a Hann taper times cos(ω_k·τ), normalised so that a ripple
  // 2a·cos(ω_k·τ) projects to a (the cepstrum's value at τ for a log power spectrum).
  const bandDefs = echoBands(n, tau, fs);
  const nb = bandDefs.length;
  const bandKernel = bandDefs.map(({ kLo, kHi }) => {
    const w = new Float64Array(kHi - kLo);
    let norm = 0, wsum = 0;
    for (let i = 0; i < w.length; i++) {
      const t = 0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / w.length);
      const c = Math.cos((2 * Math.PI * (kLo + i) * tau) / n);
      w[i] = t * c;
      norm += t * c * c;
      wsum += t;
    }
    for (let i = 0; i < w.length; i++) w[i] = w[i]! / (2 * norm);
    // Taking the band's tapered mean out first (the projection of a constant is not exactly 0).
    let leak = 0;
    for (let i = 0; i < w.length; i++) leak += w[i]!;
    return { w, leak, wsum };
  });
  const bandLevels = new Float64Array(nb);
  // Pair frames: short (≈ 40 ms, ≤ τ), so that a frame and the one τ later do not overlap.
  const pairN = tau >= 0.04 * fs ? Math.min(nextPowerOfTwo(Math.round(0.04 * fs)) / 2, 1 << Math.floor(Math.log2(tau))) : 0;
  const pairPlan = pairN ? sharedPlan(pairN) : null;
  const pairWin = pairN ? makeWindow('hann', pairN) : null;
  const ti = Math.round(tau), frac = tau - ti;

  // Keep the excerpt in one buffer when it is short enough; otherwise stream with a ring of n + τ.
  const { start, end } = options;
  const length = end - start;
  const keep = Math.max(n, ti + pairN) + 1;
  let buf = new Float64Array(Math.min(length, keep + (1 << 17)));
  // The same excerpt with the echo cancelled at (τ, ĝ), frame for frame beside y.
  let bufX = new Float64Array(buf.length);
  // (8 taps a side: accurate to about −60 dB below 2/5 of the sample rate, enough for a reading
  // of the frames at τ.)
  const canceller = Math.abs(gain) > 0 && tau >= 1 ? new EchoCanceller(singleEchoKernel(tau, Math.max(-0.98, Math.min(0.98, gain)), 8)) : null;
  let bufStart = start, bufLen = 0;
  const values: Array<{ level: number; value: number; valueShare: number; cancelled: number; locked: boolean; band: Float64Array | null }> = [];
  const pairVals: Array<{ level: number; rho: number }> = [];
  const frame = new Float64Array(n), spec = new Float64Array(n + 2), logs = new Float64Array(n + 2), cep = new Float64Array(n);
  const pf = new Float64Array(pairN), pg = new Float64Array(pairN), ps = new Float64Array(pairN + 2), pt = new Float64Array(pairN + 2);
  const ratios = new Float64Array(pairN / 2 + 1);
  let nextFrame = start, nextPair = start, frameIndex = 0;
  const analyse = () => {
    while (nextFrame + n <= bufStart + bufLen) {
      const o = nextFrame - bufStart;
      let e = 0;
      for (let i = 0; i < n; i++) {
        const v = buf[o + i]! * win[i]!;
        frame[i] = v;
        e += v * v;
      }
      if (e > 1e-24 * n) {
        plan.realForward(frame, spec);
        const floor = (e / n) * 1e-20;
        for (let k = 0; k <= n / 2; k++) {
          logs[2 * k] = Math.log(spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2 + floor);
          logs[2 * k + 1] = 0;
        }
        plan.realInverse(logs, cep);
        let value = peakAt(cep, tau, 0);
        // The frame's reading band by band (NaN where the band holds no programme in this frame).
        let band: Float64Array | null = null;
        if (nb >= 2) {
          band = new Float64Array(nb);
          let strongest = -Infinity;
          for (let b = 0; b < nb; b++) {
            const { kLo, kHi } = bandDefs[b]!;
            let sum = 0;
            for (let k = kLo; k < kHi; k++) sum += Math.exp(logs[2 * k]!);
            bandLevels[b] = Math.log(sum / (kHi - kLo) + 1e-300);
            strongest = Math.max(strongest, bandLevels[b]!);
          }
          for (let b = 0; b < nb; b++) {
            if (bandLevels[b]! < strongest - 40 * (Math.LN10 / 10)) {
              band[b] = NaN;
              continue;
            }
            const { kLo, kHi } = bandDefs[b]!;
            const { w, leak, wsum } = bandKernel[b]!;
            let mean = 0, proj = 0;
            for (let k = kLo; k < kHi; k++) mean += (0.5 - 0.5 * Math.cos((2 * Math.PI * (k - kLo + 0.5)) / (kHi - kLo))) * logs[2 * k]!;
            mean /= wsum;
            for (let k = kLo; k < kHi; k++) proj += w[k - kLo]! * logs[2 * k]!;
            band[b] = proj - leak * mean;
          }
        }
        // Bins more than 80 dB under the frame's strongest (the empty band of a resampled
        // recording: rounding noise, added after any echo) carry none of the echo's ripple, so
        // taking the whole model out would leave its opposite at τ there, which reads as a
        // period at τ (16 kHz speech at 96 kHz with 13 ms / −0.45 measured exactly: 300 of 336
        // frames "locked"). For the pitch reading they also get the model's ripple, so that
        // taking it out leaves them flat; a frame is locked when either reading says so (a low
        // held note's spectrum also falls 80 dB, and with only its lowest harmonics left the
        // model then explains its period away: a held bass C2 at 15.3 ms read 0 of 71 locked
        // that way, 69 the other; 16 kHz speech at 96 kHz is then not determined again).
        let top = -Infinity;
        for (let k = 0; k <= n / 2; k++) top = Math.max(top, logs[2 * k]!);
        const low = top - 80 * (Math.LN10 / 10);
        let empty = 0;
        for (let k = 0; k <= n / 2; k++) {
          const v = logs[2 * k]!;
          lockLogs[2 * k] = v < low ? (empty++, low + ripple[k]!) : v;
          lockLogs[2 * k + 1] = 0;
        }
        cx.set(cep);
        for (let q = 0; q < n; q++) cx[q] = cx[q]! - model[q]!;
        let locked = pitchLocked(cx, tau, fs, true);
        if (locked && empty) {
          // The echo's share of the frame's cepstrum is that of the bins that carry it: where the
          // bins far under the strongest are rounding noise added after the reflection, about
          // the bins with programme only, so taking the whole model out leaves −(its rest) at τ,
          // a peak of the opposite sign (Festival voices at 44.1 kHz with 13 ms / −0.45: 427 of
          // 437 frames locked so, 0 with the model scaled). Where those bins do carry the echo
          // (a low note's weak upper partials), the whole model is right. The frame is locked
          // only when its period is at τ either way.
          const share = 1 - empty / (n / 2 + 1);
          for (let q = 0; q < n; q++) cx[q] = cep[q]! - share * model[q]!;
          locked = pitchLocked(cx, tau, fs, true);
        }
        if (empty && !locked) {
          plan.realInverse(lockLogs, cx);
          for (let q = 0; q < n; q++) cx[q] = cx[q]! - model[q]!;
          locked = pitchLocked(cx, tau, fs, true);
        }
        // The frame's reading at τ with those bins held flat, and so carrying nothing, comes
        // from the bins with programme alone: divided by their share of the band it reads the
        // echo at full strength (g·ρ), as the refinement measures it. (Left as they were, the
        // empty two thirds of 16 kHz speech at 48 kHz read a 17.5 ms / 0.9 reflection, measured
        // exactly, at a median of 0.15, under the spread check's 0.2·ĝ.)
        let clampedValue = value;
        if (empty) {
          for (let k = 0; k <= n / 2; k++) {
            clampLogs[2 * k] = Math.max(low, logs[2 * k]!);
            clampLogs[2 * k + 1] = 0;
          }
          plan.realInverse(clampLogs, cep);
          clampedValue = peakAt(cep, tau, 0);
          value = clampedValue / Math.max(1 / 8, 1 - empty / (n / 2 + 1));
        }
        // The cancelled frame at τ: about 0 where the frame carries the echo, about −ĝ·ρ where
        // it did not and the cancellation put an inverse echo in. For the share both frames are
        // read with bins more than 80 dB under the frame's strongest held at that level: the
        // empty band of a resampled recording holds only rounding noise, which carries no echo
        // and after the cancellation the inverse one (Festival voices at 44.1 kHz, 30.2 ms /
        // 0.5 measured exactly, read a share of 0.4 with it left in).
        // (Every other frame: with the Hann window's 50 % overlap those are nearly independent,
        // and the share costs three more transforms a frame.)
        let cancelled = NaN, valueShare = NaN;
        if (canceller && (frameIndex++ & 1) === 0) {
          valueShare = clampedValue;
          let ex = 0;
          for (let i = 0; i < n; i++) {
            const v = bufX[o + i]! * win[i]!;
            frame[i] = v;
            ex += v * v;
          }
          if (ex > 1e-24 * n) {
            plan.realForward(frame, spec);
            const fl = (ex / n) * 1e-20;
            let topX = -Infinity;
            for (let k = 0; k <= n / 2; k++) {
              logs[2 * k] = Math.log(spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2 + fl);
              logs[2 * k + 1] = 0;
              topX = Math.max(topX, logs[2 * k]!);
            }
            const lowX = topX - 80 * (Math.LN10 / 10);
            for (let k = 0; k <= n / 2; k++) if (logs[2 * k]! < lowX) logs[2 * k] = lowX;
            plan.realInverse(logs, cep);
            cancelled = peakAt(cep, tau, 0);
          } else cancelled = 0;
        }
        values.push({ level: 10 * Math.log10(e / n), value, valueShare, cancelled, locked, band });
      }
      nextFrame += hop;
    }
    if (pairPlan && pairWin) {
      while (nextPair + ti + pairN <= bufStart + bufLen) {
        const a = nextPair - bufStart, b = a + ti;
        let ea = 0, eb = 0;
        for (let i = 0; i < pairN; i++) {
          pf[i] = buf[a + i]! * pairWin[i]!;
          pg[i] = buf[b + i]! * pairWin[i]!;
          ea += pf[i]! ** 2;
          eb += pg[i]! ** 2;
        }
        if (ea > 1e-24 * pairN && eb > 1e-24 * pairN) {
          pairPlan.realForward(pf, ps);
          pairPlan.realForward(pg, pt);
          // Per bin, Re(B_k·conj(A_k)·e^{+jω_k·frac}) / |A_k|²: the later frame holds g·A delayed by
          // the fraction, so each bin reads g plus what the later frame holds besides. The median
          // over the bins (those within 40 dB of the frame's strongest) is taken, not the ratio of
          // sums: a sustained note's partials are in both frames with a phase turn 2π·f·τ that
          // differs from partial to partial, and a sum is ruled by the strongest one (on real
          // guitar, piano and pads with a true reflection of 0.2–0.45 at 61–304 ms the sums read
          // anything from −0.37 to 0.92), while an exact repeat (a loop at its bar) reads 1 in
          // nearly every bin.
          let amax = 0;
          for (let k = 1; k < pairN / 2; k++) amax = Math.max(amax, ps[2 * k]! ** 2 + ps[2 * k + 1]! ** 2);
          let m = 0;
          for (let k = 1; k < pairN / 2; k++) {
            const ar = ps[2 * k]!, ai = ps[2 * k + 1]!, br = pt[2 * k]!, bi = pt[2 * k + 1]!;
            const sa = ar * ar + ai * ai;
            if (!(sa >= amax * 1e-4)) continue;
            const cr = br * ar + bi * ai, ci = bi * ar - br * ai;
            const w = (2 * Math.PI * k * frac) / pairN;
            ratios[m++] = (cr * Math.cos(w) - ci * Math.sin(w)) / sa;
          }
          if (m >= 8) pairVals.push({ level: 10 * Math.log10(ea / pairN), rho: medianOf(ratios, m) });
        }
        nextPair += pairN / 2;
      }
    }
  };
  const mix = new MixScratch();
  for await (const block of source.blocks({ startFrame: start, endFrame: end, reusable: true })) {
    if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
    const mono = mixBlock(block, options.channel, mix);
    const needFrom = Math.min(nextFrame, nextPair);
    const drop = Math.max(0, Math.min(bufLen, needFrom - bufStart));
    if (drop > 0) {
      buf.copyWithin(0, drop, bufLen);
      bufX.copyWithin(0, drop, bufLen);
      bufStart += drop;
      bufLen -= drop;
    }
    if (bufLen + mono.length > buf.length) {
      const bigger = new Float64Array(Math.max(2 * buf.length, bufLen + mono.length));
      bigger.set(buf.subarray(0, bufLen));
      buf = bigger;
      const biggerX = new Float64Array(bigger.length);
      biggerX.set(bufX.subarray(0, bufLen));
      bufX = biggerX;
    }
    buf.set(mono, bufLen);
    if (canceller) canceller.process(mono, bufX.subarray(bufLen, bufLen + mono.length));
    bufLen += mono.length;
    analyse();
  }
  const top = values.reduce((m, v) => Math.max(m, v.level), -Infinity);
  const loud = values.filter((v) => v.level >= top - 40);
  const kept = loud.filter((v) => !v.locked);
  const unlocked = kept.map((v) => v.value).sort((a, b) => a - b);
  const median = (a: number[]) => (a.length ? (a.length % 2 ? a[a.length >> 1]! : 0.5 * (a[a.length / 2 - 1]! + a[a.length / 2]!)) : null);
  const m = median(unlocked);
  // The share is read on the louder half of those frames: noise added after the reflection (tape
  // hiss in the pauses) carries none, and after the cancellation carries the inverse one, so
  // quiet frames would read as frames without the echo (the demo reel, hiss 45 dB under the
  // voice: 0.53 over all frames).
  const levels = kept.map((v) => v.level).sort((a, b) => a - b);
  const louder = kept.filter((v) => v.level >= (levels[Math.floor(levels.length / 2)] ?? -Infinity) && Number.isFinite(v.cancelled));
  const my = median(louder.map((v) => v.valueShare).sort((a, b) => a - b));
  const mx = canceller ? median(louder.map((v) => v.cancelled).sort((a, b) => a - b)) : null;
  const share = my !== null && mx !== null && Math.abs(my - mx) > 1e-9 ? my / (my - mx) : null;
  const bands = bandDefs.map(({ kLo, kHi }, b) => {
    const vals = kept.map((v) => v.band?.[b] ?? NaN).filter((x) => Number.isFinite(x)).sort((x, y) => x - y);
    const enough = vals.length >= 5 && vals.length >= 0.5 * kept.length;
    const md = median(vals);
    // Standard error of the median: 1.2533·σ/√m, σ from the median absolute deviation (1.4826·MAD).
    let se: number | null = null;
    if (enough && md !== null && rho > 0) {
      const dev = vals.map((x) => Math.abs(x - md)).sort((x, y) => x - y);
      se = (1.2533 * 1.4826 * median(dev)!) / Math.sqrt(vals.length) / rho;
    }
    return { loHz: (kLo * fs) / n, hiHz: (kHi * fs) / n, gain: enough && md !== null && rho > 0 ? md / rho : null, gainStd: se, frames: vals.length };
  });
  const ptop = pairVals.reduce((mm, v) => Math.max(mm, v.level), -Infinity);
  const pl = pairVals.filter((v) => v.level >= ptop - 30).map((v) => v.rho).sort((a, b) => a - b);
  const pm = median(pl);
  return {
    frames: loud.length,
    locked: loud.length - unlocked.length,
    medianGain: m === null || rho <= 0 ? null : m / rho,
    cancelledGain: mx === null || rho <= 0 ? null : mx / rho,
    share,
    pairGain: pairN && pm !== null ? pm : null,
    pairs: pl.length,
    bands,
    fftSize: n,
  };
}

/**
 * A frame filter for LogSpectrumAccumulator (`accept`): leaves out frames locked to τ (see
 * pitchLocked), from their log power spectrum (k = 0…N/2).
 */
export function unlockedFrames(n: number, tau: number, fs: number): { accept(frameLog: Float64Array): boolean; seen: number; left: number } {
  const plan = sharedPlan(n);
  const half = new Float64Array(n + 2), cep = new Float64Array(n);
  const state = {
    seen: 0,
    left: 0,
    accept(fl: Float64Array): boolean {
      for (let k = 0; k <= n / 2; k++) {
        half[2 * k] = fl[k]!;
        half[2 * k + 1] = 0;
      }
      plan.realInverse(half, cep);
      state.seen++;
      // These frames come from the signal cancelled with the current estimate: the echo is out.
      if (pitchLocked(cep, tau, fs, true)) {
        state.left++;
        return false;
      }
      return true;
    },
  };
  return state;
}
