/**
 * Wow-and-flutter figures from a test tone's frequency track, after the measuring chain of
 * AES6-2008 / IEC 60386: frequency deviation → weighting → statistical reading.
 *
 *  - deviation d(t) = f(t)/f̄ − 1 (f̄ = mean measured frequency); the mean itself is reported as
 *    the mean speed error against the nominal tone;
 *  - drift: d smoothed with a 2 s moving average (variations slower than ≈0.5 Hz); reported as
 *    its largest excursion from the mean, ± %;
 *  - weighted: d through the IEC 60386 weighting (weighting.ts); unweighted: d through the flat
 *    0.5–200 Hz band;
 *  - "peak" readings are two-sigma values (AES6-2008): the level |w(t)| exceeds 4.55 % of the time
 *    (2σ for Gaussian flutter; 0.9975 × the peak for sinusoidal flutter);
 *  - RMS readings are the plain RMS of w(t) (peak/√2 for sinusoidal flutter);
 *  - dominant rate: the strongest line of the unweighted deviation's spectrum (Hann window,
 *    zero-padded ×2, parabolic interpolation), 0.3–200 Hz.
 * Filters start from a mirror image of the first seconds of the track, so the whole observation is
 * used without start-up transients.
 */
import { FftPlan, nextPowerOfTwo } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';
import type { FrequencyTrack } from './demodulate.ts';
import { unweightedFilter, weightingFilter } from './weighting.ts';

export interface FlutterRate {
  rateHz: number;
  /** Peak deviation of this component, %. */
  peakPercent: number;
}

export interface FlutterFigures {
  measuredToneHz: number;
  meanSpeedErrorPercent: number;
  driftPercent: number;
  weightedPeakPercent: number;
  unweightedPeakPercent: number;
  weightedRmsPercent: number;
  unweightedRmsPercent: number;
  /** Null when the flutter is too small for a rate to mean anything (< 0.002 % unweighted). */
  dominantRateHz: number | null;
  rates: FlutterRate[];
  observationSeconds: number;
  /** Speed relative to the nominal tone, % (for plots), at most ~800 points. */
  curve: { timesSeconds: number[]; percent: number[] };
}

/** The fraction of time a two-sigma reading is exceeded: P(|N(0,1)| > 2). */
export const TWO_SIGMA_EXCEEDANCE = 0.0455;
const PAD_SECONDS = 4;

function mirrorFiltered(filter: { apply(x: Float64Array): Float64Array }, d: Float64Array, pad: number): Float64Array {
  const padded = new Float64Array(pad + d.length);
  for (let i = 0; i < pad; i++) padded[i] = d[Math.min(d.length - 1, pad - i)]!;
  padded.set(d, pad);
  return filter.apply(padded).subarray(pad);
}

function twoSigma(w: Float64Array): number {
  const a = Float64Array.from(w, Math.abs).sort();
  if (a.length === 0) return 0;
  const r = (1 - TWO_SIGMA_EXCEEDANCE) * (a.length - 1);
  const lo = Math.floor(r);
  return a[lo]! + (a[Math.min(a.length - 1, lo + 1)]! - a[lo]!) * (r - lo);
}

function rms(w: Float64Array): number {
  let s = 0;
  for (let i = 0; i < w.length; i++) s += w[i]! * w[i]!;
  return Math.sqrt(s / Math.max(1, w.length));
}

export function flutterFigures(track: FrequencyTrack, nominalHz: number): FlutterFigures {
  const f = track.frequencyHz;
  const fs = track.sampleRateHz;
  const n = f.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += f[i]!;
  mean /= Math.max(1, n);
  const d = Float64Array.from(f, (v) => v / mean - 1);
  const pad = Math.min(n - 1, Math.round(PAD_SECONDS * fs));

  const weighted = mirrorFiltered(weightingFilter(fs), d, pad);
  const unweighted = mirrorFiltered(unweightedFilter(fs), d, pad);

  // Drift: 2 s moving average (shorter when the track is short), largest excursion from the mean.
  const win = Math.max(1, Math.min(Math.round(2 * fs), Math.floor(n / 2)));
  let drift = 0, acc = 0;
  for (let i = 0; i < n; i++) {
    acc += d[i]!;
    if (i >= win) acc -= d[i - win]!;
    if (i >= win - 1) drift = Math.max(drift, Math.abs(acc / win));
  }

  const unweightedPeak = twoSigma(unweighted) * 100;
  const rates = dominantRates(unweighted, fs);
  return {
    measuredToneHz: mean,
    meanSpeedErrorPercent: (mean / nominalHz - 1) * 100,
    driftPercent: drift * 100,
    weightedPeakPercent: twoSigma(weighted) * 100,
    unweightedPeakPercent: unweightedPeak,
    weightedRmsPercent: rms(weighted) * 100,
    unweightedRmsPercent: rms(unweighted) * 100,
    dominantRateHz: unweightedPeak >= 0.002 && rates.length ? rates[0]!.rateHz : null,
    rates: unweightedPeak >= 0.002 ? rates : [],
    observationSeconds: n / fs,
    curve: speedCurve(f, fs, track.startSeconds, nominalHz),
  };
}

/** The strongest spectral lines of a deviation track, largest first (at most 3, each ≥ 10 % of the first). */
function dominantRates(x: Float64Array, fs: number): FlutterRate[] {
  if (x.length < 16) return [];
  const size = nextPowerOfTwo(2 * x.length);
  const plan = new FftPlan(size);
  const w = makeWindow('hann', x.length);
  let sw = 0;
  const buf = new Float64Array(size);
  for (let i = 0; i < x.length; i++) {
    buf[i] = x[i]! * w[i]!;
    sw += w[i]!;
  }
  const spec = plan.createHalfSpectrum();
  plan.realForward(buf, spec);
  const mag = new Float64Array(size / 2 + 1);
  for (let k = 0; k <= size / 2; k++) mag[k] = Math.hypot(spec[2 * k]!, spec[2 * k + 1]!);
  const kLo = Math.max(2, Math.ceil((0.3 * size) / fs)), kHi = Math.min(size / 2 - 2, Math.floor((200 * size) / fs));
  const peaks: FlutterRate[] = [];
  for (let k = kLo; k <= kHi; k++) {
    if (mag[k]! > mag[k - 1]! && mag[k]! >= mag[k + 1]!) {
      const a = Math.log(mag[k - 1]! + 1e-300), b = Math.log(mag[k]! + 1e-300), g = Math.log(mag[k + 1]! + 1e-300);
      const den = a - 2 * b + g;
      const delta = den < 0 ? (0.5 * (a - g)) / den : 0;
      const peakMag = Math.exp(b - 0.25 * (a - g) * delta);
      peaks.push({ rateHz: ((k + delta) * fs) / size, peakPercent: ((2 * peakMag) / sw) * 100 });
    }
  }
  peaks.sort((p, q) => q.peakPercent - p.peakPercent);
  const out: FlutterRate[] = [];
  for (const p of peaks) {
    if (out.length === 3 || (out.length && p.peakPercent < 0.1 * out[0]!.peakPercent)) break;
    // Skip the shoulders of a line already taken (within 4 bins).
    if (out.some((o) => Math.abs(o.rateHz - p.rateHz) < (4 * fs) / size)) continue;
    out.push({ rateHz: Math.round(p.rateHz * 1000) / 1000, peakPercent: Math.round(p.peakPercent * 1e5) / 1e5 });
  }
  return out;
}

/** Speed relative to the nominal tone in %, averaged into at most 800 points. */
function speedCurve(f: Float64Array, fs: number, startSeconds: number, nominalHz: number) {
  const points = Math.min(800, f.length);
  const timesSeconds: number[] = [], percent: number[] = [];
  for (let b = 0; b < points; b++) {
    const a = Math.floor((b * f.length) / points), e = Math.floor(((b + 1) * f.length) / points);
    let s = 0;
    for (let i = a; i < e; i++) s += f[i]!;
    timesSeconds.push(Math.round((startSeconds + (a + e) / 2 / fs) * 1000) / 1000);
    percent.push(Math.round((s / Math.max(1, e - a) / nominalHz - 1) * 1e7) / 1e5);
  }
  return { timesSeconds, percent };
}
