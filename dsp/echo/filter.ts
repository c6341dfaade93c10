/**
 * Frequency-dependent reflection: a short filter around τ instead of one gain (a wall or desk
 * that reflects the lows more than the highs), y = x + Σ_L h_L·x(t − L).
 *
 * After the single-echo refinement, the signal is cancelled with the single-echo kernel and the
 * cepstrum of what is left is read around τ: to first order, a residual reflection filter r adds
 * r_L to the cepstrum at quefrency L (log|1 + R|² ≈ 2·Re R), so the detrended cepstrum at
 * L = round(τ) − 8 … round(τ) + 8 *is* the misfit of the single-gain model, tap by tap. Its
 * energy against the local noise (a linear background and the spread taken from flanks 10…28
 * samples away) is a χ² statistic with 17 degrees of freedom; the filter is reported when it fits
 * clearly better: χ² > 60 (p ≈ 10⁻⁶ for pure noise), a misfit of at least 30 % of the single
 * echo's energy, and a reflection strong enough (RMS tap gain ≥ 0.2) that its shape, rather than
 * the source's own cepstral structure near τ (a voice's pitch peak can sit a few samples away),
 * dominates the window; it is then refined like the single echo: cancel with the current filter,
 * read the residual taps, add them, twice more.
 */
import type { AudioSource } from '../source.ts';
import { type EchoKernel, kernelMaxLag, kernelPeakGain, scaleKernel, singleEchoKernel } from './kernel.ts';
import { cancelledCepstrum, chooseFraming, combinedGate, MAX_CANCEL_GAIN, type RefineOptions } from './refine.ts';

export interface FilterFit {
  kernel: EchoKernel;
  /** χ² of the single-gain model's misfit (17 taps) at the first look. */
  chi2: number;
  /** Misfit energy over the reflection's energy at the first look. */
  misfitRatio: number;
}

const HALF = 8, FLANK_LO = 10, FLANK_HI = 28;

/** Residual taps (detrended cepstrum) at lags c−8 … c+8 and the flank noise. */
function residualTaps(cep: Float64Array, c: number): { taps: Float64Array; sigma: number } {
  const xs: number[] = [], ys: number[] = [];
  for (let d = FLANK_LO; d <= FLANK_HI; d++) {
    for (const L of [c - d, c + d]) {
      if (L > 2 && L < cep.length / 2) {
        xs.push(L - c);
        ys.push(cep[L]!);
      }
    }
  }
  let sx = 0, sy = 0, sxx = 0, sxy = 0;
  for (let i = 0; i < xs.length; i++) {
    sx += xs[i]!;
    sy += ys[i]!;
    sxx += xs[i]! ** 2;
    sxy += xs[i]! * ys[i]!;
  }
  const m = xs.length;
  const slope = (m * sxy - sx * sy) / (m * sxx - sx * sx || 1);
  const icpt = (sy - slope * sx) / m;
  let s2 = 0;
  for (let i = 0; i < m; i++) s2 += (ys[i]! - icpt - slope * xs[i]!) ** 2;
  const taps = new Float64Array(2 * HALF + 1);
  for (let i = 0; i < taps.length; i++) {
    const L = c - HALF + i;
    taps[i] = cep[L]! - icpt - slope * (L - c);
  }
  return { taps, sigma: Math.sqrt(s2 / Math.max(1, m - 2)) };
}

/** Adds residual taps (at lags from `firstLag`) to a kernel, widening its span as needed. */
function addTaps(k: EchoKernel, firstLag: number, r: Float64Array): EchoKernel {
  const lo = Math.max(1, Math.min(k.offset, firstLag));
  const hi = Math.max(kernelMaxLag(k), firstLag + r.length - 1);
  const taps = new Float64Array(hi - lo + 1);
  for (let i = 0; i < k.taps.length; i++) taps[k.offset + i - lo]! += k.taps[i]!;
  for (let i = 0; i < r.length; i++) if (firstLag + i >= 1) taps[firstLag + i - lo]! += r[i]!;
  return { offset: lo, taps };
}

/**
 * Looks for, and refines, a reflection filter around a refined single echo. Returns null when
 * the single gain explains the reflection (the usual case).
 */
export async function fitReflectionFilter(
  source: AudioSource,
  single: { delaySamples: number; gain: number },
  options: RefineOptions & { onFirstLook?(chi2: number, misfitRatio: number): void },
): Promise<FilterFit | null> {
  const length = options.excerpt.end - options.excerpt.start;
  const framing = chooseFraming(single.delaySamples, single.gain, length);
  const c = Math.round(single.delaySamples);
  if (c - FLANK_HI < 3 || c + FLANK_HI >= framing.fftSize / 2) return null;
  const g = Math.max(-MAX_CANCEL_GAIN, Math.min(MAX_CANCEL_GAIN, single.gain));
  let kernel = singleEchoKernel(single.delaySamples, g);
  const reflectionEnergy = kernel.taps.reduce((a, t) => a + t * t, 0);
  let first: { chi2: number; misfitRatio: number } | null = null;
  // With noise added after the reflection (gateNoise, as in the refinement), the cells near the
  // floor are left out here too: cancelled, that floor carries the inverse ripple, which would
  // read as a misfit of the single gain and pass for a coloured reflection.
  // The bins a band-limited recording leaves empty (refine.ts deadBins) are left out too: they
  // hold rounding noise, which carries no echo and, cancelled, the inverse one (16 kHz speech
  // at 96 kHz with an exact 61.8 ms / 0.2 read it as a 32-tap "filter"). Filled from their
  // neighbours they are flat, and the residual is read from the bins with programme alone: its
  // cepstrum is then the taps' over that share of the band, about the share times the taps.
  const gate = await combinedGate(source, framing, options, options.gateNoise ?? false, single.delaySamples);
  let live = 1;
  if (gate) {
    let dead = 0;
    for (let k = 0; k < gate.length; k++) if (gate[k] === Infinity) dead++;
    live = Math.max(1 / 8, 1 - dead / gate.length);
  }
  for (let pass = 0; pass < 3; pass++) {
    const cep = await cancelledCepstrum(source, kernel, framing, options, undefined, false, gate);
    if (!cep) return null;
    const { taps, sigma } = residualTaps(cep, c);
    if (live < 1) {
      for (let i = 0; i < taps.length; i++) taps[i] = taps[i]! / live;
    }
    const energy = taps.reduce((a, t) => a + t * t, 0);
    if (!first) {
      first = { chi2: (energy * live * live) / Math.max(sigma * sigma, 1e-30), misfitRatio: energy / Math.max(reflectionEnergy, 1e-30) };
      options.onFirstLook?.(first.chi2, first.misfitRatio);
      const strength = Math.sqrt(reflectionEnergy + energy);
      if (!(first.chi2 > 60 && first.misfitRatio >= 0.3 && strength >= 0.2)) return null;
    }
    kernel = addTaps(kernel, c - HALF, taps);
  }
  // Keep the recursion stable: the filter's gain must stay below 1 at every frequency.
  const peak = kernelPeakGain(kernel);
  if (peak > MAX_CANCEL_GAIN) kernel = scaleKernel(kernel, MAX_CANCEL_GAIN / peak);
  // The filter must explain the reflection better than the single gain did: cancelled with it,
  // what is left around τ must be well under the single echo's misfit. Added tap by tap, the
  // residual can also run away (a trombone melody's −0.445 at 15.3 ms became 32 taps of the
  // other sign, clamped at the stability limit, and its cancellation added 12.6 dB of echo
  // where the single gain took 35 dB out); such a filter is not used.
  const check = await cancelledCepstrum(source, kernel, framing, options, undefined, false, gate);
  if (!check) return null;
  const left = residualTaps(check, c).taps;
  if (live < 1) for (let i = 0; i < left.length; i++) left[i] = left[i]! / live;
  const leftEnergy = left.reduce((a, t) => a + t * t, 0);
  if (!(leftEnergy < 0.5 * first!.misfitRatio * reflectionEnergy)) return null;
  return { kernel, ...first! };
}
