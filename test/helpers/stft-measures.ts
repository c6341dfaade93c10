/**
 * Objective measures for time-scale modification tests.
 *
 *  - Spectral convergence (consistency of a modified STFT): the output x̂ is analysed again with
 *    the same window at the synthesis frame centres, and
 *      SC = 20·log10( ‖ |STFT(x̂)| − |Y| ‖_F / ‖ |Y| ‖_F ) dB,
 *    Y being the modified STFT that was overlap-added. Griffin & Lim (1984), "Signal estimation
 *    from modified short-time Fourier transform", IEEE TASSP 32(2):236–243, define the distance
 *    Σ|STFT(x̂) − Y|² that ISTFT minimises; the magnitude-only normalised form is the spectral
 *    convergence of Sturmel & Daudet (2011), DAFx. −∞ dB for a consistent STFT.
 *  - Log-spectral distance: per frame √(mean_k (10·log10 P₁[k]/P₂[k])²) dB, averaged over frames
 *    (Rabiner & Juang, Fundamentals of Speech Recognition (1993), §4.5.1; common practice).
 */
import { FftPlan } from '../../dsp/core/fft.ts';
import { makeWindow } from '../../dsp/core/windows.ts';

/** |STFT| at one centre (Hann, N samples, frame [centre − N/2, centre + N/2)), zero outside x. */
export function magnitudeAt(x: Float64Array, center: number, plan: FftPlan, window: Float64Array, out: Float64Array): void {
  const n = plan.size;
  const frame = new Float64Array(n);
  const start = center - n / 2;
  for (let i = 0; i < n; i++) {
    const t = start + i;
    frame[i] = t >= 0 && t < x.length ? x[t]! * window[i]! : 0;
  }
  const spec = new Float64Array(n + 2);
  plan.realForward(frame, spec);
  for (let k = 0; k <= n / 2; k++) out[k] = Math.hypot(spec[2 * k]!, spec[2 * k + 1]!);
}

export interface CapturedFrame {
  center: number;
  /** |Y| per bin for the channel measured. */
  magnitude: Float64Array;
}

/** Spectral convergence in dB of an output against the modified STFT that produced it. */
export function spectralConvergenceDb(output: Float64Array, frames: readonly CapturedFrame[], fftSize: number): number {
  const plan = new FftPlan(fftSize);
  const w = makeWindow('hann', fftSize);
  const m = new Float64Array(fftSize / 2 + 1);
  let num = 0, den = 0;
  for (const f of frames) {
    // Only frames whose window lies wholly inside the output.
    if (f.center - fftSize / 2 < 0 || f.center + fftSize / 2 > output.length) continue;
    magnitudeAt(output, f.center, plan, w, m);
    for (let k = 0; k < m.length; k++) {
      const d = m[k]! - f.magnitude[k]!;
      num += d * d;
      den += f.magnitude[k]! ** 2;
    }
  }
  return 10 * Math.log10(num / den);
}

/**
 * Log-spectral distance (dB) between two signals over their common length, Hann frames of
 * `fftSize` with hop fftSize/4; frames quieter than `gateDb` below the loudest are skipped and
 * powers are floored `floorDb` below each frame's peak.
 */
export function logSpectralDistanceDb(a: Float64Array, b: Float64Array, fftSize: number, gateDb = -40, floorDb = -60): number {
  const plan = new FftPlan(fftSize);
  const w = makeWindow('hann', fftSize);
  const len = Math.min(a.length, b.length);
  const ma = new Float64Array(fftSize / 2 + 1), mb = new Float64Array(fftSize / 2 + 1);
  const frames: { ea: number; d: number }[] = [];
  for (let c = fftSize / 2; c + fftSize / 2 <= len; c += fftSize / 4) {
    magnitudeAt(a, c, plan, w, ma);
    magnitudeAt(b, c, plan, w, mb);
    let peak = 0, energy = 0;
    for (let k = 0; k < ma.length; k++) {
      peak = Math.max(peak, ma[k]! ** 2, mb[k]! ** 2);
      energy += ma[k]! ** 2;
    }
    if (peak === 0) continue;
    const floor = peak * 10 ** (floorDb / 10);
    let s = 0;
    for (let k = 0; k < ma.length; k++) {
      const r = 10 * Math.log10((ma[k]! ** 2 + floor) / (mb[k]! ** 2 + floor));
      s += r * r;
    }
    frames.push({ ea: energy, d: Math.sqrt(s / ma.length) });
  }
  const loudest = Math.max(...frames.map((f) => f.ea));
  const kept = frames.filter((f) => f.ea >= loudest * 10 ** (gateDb / 10));
  return kept.reduce((s, f) => s + f.d, 0) / kept.length;
}
