/**
 * Inter-channel delay below one sample, from the cross-spectrum phase.
 *
 * For x2(t) = x1(t − τ) the cross-spectrum G12(f) = E[X1*(f)·X2(f)] = G11(f)·e^{−j2πfτ}: a delay
 * is a linear phase, τ = −(1/2π)·dφ/df (Bendat & Piersol, *Random Data*; Knapp & Carter 1976;
 * REFERENCES.md §5). Steps:
 *  1. Welch-averaged G11, G22, G12 over Hann frames (50 % overlap; at most 4000 frames spread
 *     evenly over long files, each read on its own), magnitude-squared coherence
 *     γ² = |G12|²/(G11·G22);
 *  2. coarse delay: peak of the GCC-PHAT correlation (IFFT of G12/|G12|, Knapp & Carter 1976),
 *     refined by a parabola through the peak, searched within ±N/4;
 *  3. fine delay: weighted least squares of the residual phase φ_k = arg(G12[k]·e^{+jω_kτ}) against
 *     ω_k through the origin, over the coherent band (γ² ≥ 0.5, 100 Hz … min(20 kHz, 0.45·fs)),
 *     weights γ²/(1 − γ²) (inverse phase variance, Bendat & Piersol), repeated three times.
 * Positive delay: channel 2 lags channel 1 (ARCHITECTURE.md).
 */
import type { AudioSource } from '../source.ts';
import type { OpContext } from '../context.ts';
import { CancelledError, NotFoundError } from '../errors.ts';
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';

export interface CrossSpectrum {
  fftSize: number;
  sampleRateHz: number;
  frames: number;
  g11: Float64Array;
  g22: Float64Array;
  /** Interleaved re/im, bins 0…N/2. */
  g12: Float64Array;
  /** The same sums over the first and the second half of the frames (for a delay that stays put). */
  halves?: [CrossSpectrum, CrossSpectrum];
}

export interface DelayEstimate {
  delaySeconds: number;
  delaySamples: number;
  /** Power-weighted mean magnitude-squared coherence over the analysed band (0–1). */
  coherence: number;
  /** Bins used in the phase fit and the band they span. */
  binsUsed: number;
  bandHz: [number, number];
  /** Standard error of the fit from the weights (seconds). */
  standardErrorSeconds: number;
  /**
   * How well one delay explains the phase: the RMS of the fitted phase residuals over their
   * expected spread (from the coherence). About 1 for two tracks of the same signal with a time
   * offset; much more for stereo programme, spaced microphones or processing.
   */
  phaseFitRatio: number;
  /** Delays fitted on the lower and upper halves of the coherent band separately (seconds). */
  bandDelaysSeconds: [number, number];
  /** Share of the analysed band's bins coherent enough (γ² ≥ 0.5) to enter the fit. */
  coherentShare: number;
  /** Delays measured on the first and second half of the file on their own (null: too little). */
  halfDelaysSeconds: [number | null, number | null];
}

const MAX_FRAMES = 4000;
const MIN_COHERENCE = 0.5;

export function frameSizeFor(sampleRateHz: number): number {
  return sampleRateHz > 50000 ? 8192 : 4096;
}

/** Averages the cross-spectrum of channels `a` and `b` over evenly spaced frames of the source. */
export async function crossSpectrum(
  source: AudioSource,
  ctx: OpContext,
  channels: [number, number] = [0, 1],
  fftSize = frameSizeFor(source.sampleRateHz),
): Promise<CrossSpectrum> {
  const n = fftSize;
  if (source.frames < n) throw new NotFoundError(`the file is shorter than one analysis frame (${n} samples)`);
  const plan = new FftPlan(n);
  const w = makeWindow('hann', n);
  const count = Math.min(MAX_FRAMES, Math.floor((source.frames - n) / (n / 2)) + 1);
  const span = source.frames - n;
  const g11 = new Float64Array(n / 2 + 1), g22 = new Float64Array(n / 2 + 1), g12 = new Float64Array(n + 2);
  const part = () => ({ fftSize: n, sampleRateHz: source.sampleRateHz, frames: 0, g11: new Float64Array(n / 2 + 1), g22: new Float64Array(n / 2 + 1), g12: new Float64Array(n + 2) });
  const halves: [CrossSpectrum, CrossSpectrum] = [part(), part()];
  const a = new Float64Array(n), b = new Float64Array(n);
  const sa = plan.createHalfSpectrum(), sb = plan.createHalfSpectrum();
  for (let f = 0; f < count; f++) {
    if (ctx.signal?.aborted) throw new CancelledError('azimuth cancelled');
    const start = count === 1 ? 0 : Math.round((f * span) / (count - 1));
    let at = 0;
    for await (const block of source.blocks({ startFrame: start, endFrame: start + n, blockFrames: n })) {
      a.set(block[channels[0]]!, at);
      b.set(block[channels[1]]!, at);
      at += block[0]!.length;
    }
    for (let i = 0; i < n; i++) {
      a[i]! *= w[i]!;
      b[i]! *= w[i]!;
    }
    plan.realForward(a, sa);
    plan.realForward(b, sb);
    const h = halves[f < count / 2 ? 0 : 1];
    h.frames++;
    for (let k = 0; k <= n / 2; k++) {
      const ar = sa[2 * k]!, ai = sa[2 * k + 1]!, br = sb[2 * k]!, bi = sb[2 * k + 1]!;
      const p11 = ar * ar + ai * ai, p22 = br * br + bi * bi, re = ar * br + ai * bi, im = ar * bi - ai * br; // conj(A)·B
      g11[k]! += p11;
      g22[k]! += p22;
      g12[2 * k]! += re;
      g12[2 * k + 1]! += im;
      h.g11[k]! += p11;
      h.g22[k]! += p22;
      h.g12[2 * k]! += re;
      h.g12[2 * k + 1]! += im;
    }
    ctx.progress((f + 1) / count);
  }
  return { fftSize: n, sampleRateHz: source.sampleRateHz, frames: count, g11, g22, g12, halves };
}

/** Delay of channel b relative to channel a from an averaged cross-spectrum. */
export function estimateDelay(cs: CrossSpectrum): DelayEstimate {
  const { fftSize: n, sampleRateHz: fs, g11, g22, g12 } = cs;
  const half = n / 2;
  const kLo = Math.max(1, Math.ceil((100 * n) / fs));
  const kHi = Math.min(half - 1, Math.floor((Math.min(20000, 0.45 * fs) * n) / fs));
  const coh = new Float64Array(half + 1);
  let cohNum = 0, cohDen = 0;
  let peakPower = 0;
  for (let k = kLo; k <= kHi; k++) peakPower = Math.max(peakPower, Math.sqrt(g11[k]! * g22[k]!));
  for (let k = kLo; k <= kHi; k++) {
    const p = g11[k]! * g22[k]!;
    const c = p > peakPower * peakPower * 1e-24 ? (g12[2 * k]! ** 2 + g12[2 * k + 1]! ** 2) / p : 0;
    coh[k] = Math.min(1, c);
    cohNum += coh[k]! * Math.sqrt(p);
    cohDen += Math.sqrt(p);
  }
  const coherence = cohDen > 0 ? cohNum / cohDen : 0;

  // Coarse: GCC-PHAT over the analysed band.
  const plan = new FftPlan(n);
  const phat = new Float64Array(n + 2);
  for (let k = kLo; k <= kHi; k++) {
    const re = g12[2 * k]!, im = g12[2 * k + 1]!;
    const m = Math.hypot(re, im);
    if (m > 0 && coh[k]! > 0.1) {
      phat[2 * k] = re / m;
      phat[2 * k + 1] = im / m;
    }
  }
  const r = new Float64Array(n);
  plan.realInverse(phat, r);
  const maxLag = n / 4;
  let best = 0, bestV = -Infinity;
  for (let lag = -maxLag; lag <= maxLag; lag++) {
    const v = r[(lag + n) % n]!;
    if (v > bestV) {
      bestV = v;
      best = lag;
    }
  }
  if (!(bestV > 0)) throw new NotFoundError('the channels share too little signal to measure a delay between them');
  const ym = r[(best - 1 + n) % n]!, y0 = bestV, yp = r[(best + 1 + n) % n]!;
  const den = ym - 2 * y0 + yp;
  let tau = best + (den < 0 ? (0.5 * (ym - yp)) / den : 0); // samples

  // Fine: weighted least squares on the residual phase, iterated.
  let used = 0, bandLo = Infinity, bandHi = 0;
  let se = Infinity;
  for (let iter = 0; iter < 3; iter++) {
    let swx = 0, sww = 0;
    used = 0;
    for (let k = kLo; k <= kHi; k++) {
      const c = coh[k]!;
      if (c < MIN_COHERENCE) continue;
      const omega = (2 * Math.PI * k) / n; // rad/sample
      const cr = Math.cos(omega * tau), ci = Math.sin(omega * tau);
      const re = g12[2 * k]! * cr - g12[2 * k + 1]! * ci; // G12·e^{+jωτ}
      const im = g12[2 * k]! * ci + g12[2 * k + 1]! * cr;
      const phi = Math.atan2(im, re);
      const wk = Math.min(c / (1 - c + 1e-12), 1e6);
      swx += wk * omega * phi;
      sww += wk * omega * omega;
      used++;
      if (iter === 2) {
        bandLo = Math.min(bandLo, (k * fs) / n);
        bandHi = Math.max(bandHi, (k * fs) / n);
      }
    }
    if (used < 8) throw new NotFoundError('the channels share too little signal to measure a delay between them');
    tau += -swx / sww;
    // Phase variance per bin ≈ (1 − γ²)/(2·n_d·γ²) (Bendat & Piersol): var(τ) = 1/(2·n_d·Σ w ω²).
    se = Math.sqrt(1 / (2 * cs.frames * sww)) / fs;
  }
  // Residuals after the final delay: their weighted spread against the expected one, and the delay
  // each half of the band would give on its own.
  const bins: { omega: number; phi: number; w: number }[] = [];
  for (let k = kLo; k <= kHi; k++) {
    const c = coh[k]!;
    if (c < MIN_COHERENCE) continue;
    const omega = (2 * Math.PI * k) / n;
    const cr = Math.cos(omega * tau), ci = Math.sin(omega * tau);
    const re = g12[2 * k]! * cr - g12[2 * k + 1]! * ci;
    const im = g12[2 * k]! * ci + g12[2 * k + 1]! * cr;
    bins.push({ omega, phi: Math.atan2(im, re), w: Math.min(c / (1 - c + 1e-12), 1e6) });
  }
  let chi2 = 0;
  for (const b of bins) chi2 += 2 * cs.frames * b.w * b.phi * b.phi;
  const halfDelay = (part: typeof bins) => {
    let sx = 0, sw = 0;
    for (const b of part) {
      sx += b.w * b.omega * b.phi;
      sw += b.w * b.omega * b.omega;
    }
    return sw > 0 ? (tau + sx / sw) / fs : tau / fs;
  };
  const mid = Math.floor(bins.length / 2);
  return {
    delaySeconds: tau / fs,
    delaySamples: tau,
    coherence,
    binsUsed: used,
    bandHz: [bandLo, bandHi],
    standardErrorSeconds: se,
    phaseFitRatio: Math.sqrt(chi2 / Math.max(1, bins.length)),
    bandDelaysSeconds: [halfDelay(bins.slice(0, mid)), halfDelay(bins.slice(mid))],
    coherentShare: bins.length / Math.max(1, kHi - kLo + 1),
    halfDelaysSeconds: cs.halves ? [delayOrNull(cs.halves[0]), delayOrNull(cs.halves[1])] : [null, null],
  };
}

function delayOrNull(cs: CrossSpectrum): number | null {
  if (cs.frames < 2) return null;
  try {
    return estimateDelay(cs).delaySeconds;
  } catch (e) {
    if (e instanceof NotFoundError) return null;
    throw e;
  }
}

/**
 * Azimuth error equivalent to an inter-channel delay: Δt = d·tan θ / v, so θ = atan(v·Δt / d)
 * (d = track-centre spacing, v = tape speed; McKnight, "Azimuth in a Magnetic Tape Recorder",
 * Magnetic Reference Laboratory, rev. 2000; REFERENCES.md §3). Returns arc-minutes, signed like Δt.
 */
export function azimuthArcMinutes(delaySeconds: number, tapeSpeedIps: number, trackSpacingMm: number): number {
  const v = tapeSpeedIps * 25.4; // mm/s
  return (Math.atan((v * delaySeconds) / trackSpacingMm) * 180 * 60) / Math.PI;
}

/** First null of the mono sum L + R for a delay τ: |H(f)| = 2|cos(π f τ)| → f = 1/(2|τ|). */
export const monoNullHz = (delaySeconds: number): number | null =>
  Math.abs(delaySeconds) > 1e-12 ? 1 / (2 * Math.abs(delaySeconds)) : null;
