/**
 * Speed from mains hum.
 *
 * A recording made near mains wiring carries hum at the mains frequency M (50 or 60 Hz) and its
 * harmonics. Played at speed factor a, the hum sits at a·M, a·2M, … so a = f̂₀ / M.
 *
 * Method (two passes over a mono mix, both streaming):
 *  1. Search. The mix is decimated to ≈2 kHz (boxcar-power FIR, ../core/decimate.ts) and a long-window
 *     Welch spectrum (Hann, ≈0.03–0.06 Hz bins) is accumulated. Peaks ≥ 10 dB above a running-median
 *     floor are candidate fundamentals; each is scored by a harmonic comb (sum of the clipped SNRs in
 *     dB found at h·f₀, h = 1…12), and a fundamental must itself be a peak (so 100 Hz buzz is not
 *     mistaken for the 2nd harmonic of a missing 50 Hz line).
 *  2. Measure. For the best candidates, each usable harmonic is heterodyned to 0 Hz and decimated to
 *     a ≈25 Hz complex track (a narrowband receiver). In 2-s windows (1-s hop) the harmonic-sum
 *     periodogram S(δ) = Σ_h w_h |Σ_k taper_k z_h[k] e^{−j2π·h·δ·t_k}|² (w_h = 1/noise floor at h·f₀,
 *     i.e. the maximum-likelihood combination of harmonics for a common relative frequency offset;
 *     Quinn & Hannan, "The Estimation and Tracking of Frequency", 2001, ch. 5 harmonic models) is
 *     evaluated on a grid; a Viterbi path through the windows keeps the track continuous, and a
 *     parabola through log S refines each window's offset. The windows' f₀ give the speed curve; the
 *     mean of the curve is the speed (the average phase rate, which is what the recording's average
 *     speed is). Harmonics weigh by h² in the precision, so a buzz with harmonics is measured far
 *     more precisely than its fundamental alone.
 *  Uncertainty: the window-to-window scatter (median absolute first difference, robust to drift)
 *  divided by √(number of independent windows).
 *  Mains ambiguity: the same hum f₀ is 50·(f₀/50) or 60·(f₀/60); with --mains unset both are kept
 *  and the one whose factor is more plausible (closer to 1, or a ratio of standard speeds) is
 *  chosen, with the other reported.
 */
import { WelchAccumulator } from '../core/welch.ts';
import { Decimator } from '../core/decimate.ts';
import { HeterodyneTrack } from './heterodyne.ts';
import { QuietGain, QuietWeighting } from './quiet-weight.ts';
import { SteadySpectrum } from './steady-spectrum.ts';
import { speedPrior } from './standard.ts';
import { linePersistence, measureSeries, trackNoiseCorrelation, type LinePersistence, type SeriesMeasurement, type TrackLayout, type TrackSet } from './harmonic-track.ts';

interface TrackGroup {
  candidate: HumCandidate;
  harmonics: number[];
  weights: number[];
  tracks: HeterodyneTrack[];
  /** The fundamental's track of the side signal (L − R)/2 (two-channel streams only; quiet-weighted for a quiet candidate). */
  side?: HeterodyneTrack;
}

/** Frame weights from the search pass (see ./quiet-weight.ts). */
export interface QuietWeights {
  weights: Float32Array;
  frameLength: number;
}

export const HUM_MIN_FACTOR = 0.25;
export const HUM_MAX_FACTOR = 4;
const DECIM_TARGET_HZ = 2000;
const DECIM_ORDER = 5;
const TRACK_RATE_HZ = 25;
const TRACK_ORDER = 4;
const MAX_HARMONIC_HZ = 700;
const MAX_HARMONICS = 10;
/** Candidates measured in full (the best persisting at their coarse frequency). */
const MAX_MEASURED = 3;
/** Rounds of measuring again without the harmonics a measurement contradicts. */
const PRUNE_ROUNDS = 4;

export interface HumPeak {
  frequencyHz: number;
  snrDb: number;
}

export interface HumCandidate {
  /** Observed hum fundamental in the file (coarse, from the long spectrum). */
  fundamentalHz: number;
  /** Comb score: Σ over harmonics of the clipped SNR in dB. */
  score: number;
  /** SNR (dB) of each harmonic h = 1…H at h·f₀ (0 when absent). */
  harmonicSnrDb: number[];
  /** Found in the quiet-weighted spectrum, and measured on quiet-weighted tracks. */
  quiet?: boolean;
  /** Found in the spectrum of what is always there (./steady-spectrum.ts); measured on plain tracks. */
  steady?: boolean;
}

export interface HumHypothesis {
  mainsHz: 50 | 60;
  factor: number;
  /** Prior plausibility weight of this factor (see standard.ts speedPrior). */
  prior: number;
}

export interface HumMeasurement extends SeriesMeasurement {
  /** Coarse fundamental from the long spectrum. */
  fundamentalHz: number;
  /** Harmonics used in the measurement. */
  harmonics: number[];
  /** Comb score from the search. */
  score: number;
  /** How the line keeps its level through the file (hum persists; a note comes and goes). */
  persistence: LinePersistence;
  /** Measured on quiet-weighted tracks (./quiet-weight.ts). */
  quiet: boolean;
}

export function humDecimation(sampleRateHz: number): number {
  return Math.max(1, Math.floor(sampleRateHz / DECIM_TARGET_HZ));
}

/**
 * Pass 1: decimate a mono stream and accumulate two long-window spectra: the plain one, and one
 * of the stream weighted towards its quiet moments (./quiet-weight.ts), where a steady line buried
 * under bursts (a drum loop's kicks, a note's attacks) stands clear.
 */
export class HumSearch {
  readonly decimatedRateHz: number;
  readonly #dec: Decimator;
  readonly #welch: WelchAccumulator;
  readonly #welchQuiet: WelchAccumulator;
  readonly #quiet: QuietWeighting;
  readonly #steady: SteadySpectrum;
  #quietDone = false;

  constructor(sampleRateHz: number, totalFrames: number) {
    const D = humDecimation(sampleRateHz);
    this.decimatedRateHz = sampleRateHz / D;
    this.#dec = new Decimator(D, DECIM_ORDER);
    const len = Math.floor(totalFrames / D);
    let fft = 4096;
    while (fft * 2 <= Math.max(len, 4096) && fft < 65536) fft *= 2;
    this.#welch = new WelchAccumulator({ sampleRateHz: this.decimatedRateHz, channelCount: 1, fftSize: fft, window: 'hann' });
    this.#welchQuiet = new WelchAccumulator({ sampleRateHz: this.decimatedRateHz, channelCount: 1, fftSize: fft, window: 'hann' });
    this.#quiet = new QuietWeighting(this.decimatedRateHz);
    this.#steady = new SteadySpectrum(this.decimatedRateHz, len, Math.min(0.4 * this.decimatedRateHz, MAX_HARMONIC_HZ * 1.1));
  }

  push(mono: Float64Array): void {
    const y = this.#dec.process(mono);
    if (!y.length) return;
    this.#welch.push([y]);
    this.#steady.push(y);
    const q = this.#quiet.push(y);
    if (q.length) this.#welchQuiet.push([q]);
  }

  #finishQuiet(): void {
    if (this.#quietDone) return;
    this.#quietDone = true;
    const q = this.#quiet.finish();
    if (q.length) this.#welchQuiet.push([q]);
  }

  /** The quiet weights by frame of the decimated stream (for the tracker's pass). */
  quietWeights(): QuietWeights {
    this.#finishQuiet();
    return { weights: this.#quiet.weights, frameLength: this.#quiet.frameLength };
  }

  /**
   * Candidates, best first, from the plain spectrum, then from the quiet-weighted one (marked
   * `quiet`), then from the spectrum of what is always there (marked `steady`; those the plain
   * spectrum already gave are left out). `mainsHz` restricts the fundamental range.
   * `floorAt(hz, quiet)` is the spectrum's noise floor at a frequency.
   */
  candidates(mainsHz?: 50 | 60, maxCount = 6): { candidates: HumCandidate[]; floorAt: (hz: number, quiet?: boolean) => number } {
    this.#finishQuiet();
    const fsd = this.decimatedRateHz;
    const w = this.#welch.result(), wq = this.#welchQuiet.result();
    const plain = spectrumCandidates(w.meanPower[0]!, w.binWidthHz, fsd, mainsHz, maxCount, {});
    // As many from the quiet spectrum: an exactly repeating drum loop puts steady lines of its own
    // there (at multiples of its repetition rate), and fewer candidates can leave only such a line
    // measured, with nothing to show that another line is as credible.
    const quiet = spectrumCandidates(wq.meanPower[0]!, wq.binWidthHz, fsd, mainsHz, maxCount, { quiet: true });
    const sp = this.#steady.result();
    // Ranked on what is always there, each bin counted in proportion to how steadily it is there:
    // weight clamp((low/mean − 0.25)/0.5) (1 for a line at one level, about 0.2 for a partial
    // decaying by 10 dB through the file, 0 for one that comes and goes).
    const steadyWeight = sp ? Float64Array.from(sp.low, (v, k) => clamp01((v / Math.max(sp.mean[k]!, 1e-300) - 0.25) / 0.5)) : null;
    const steady = sp
      ? spectrumCandidates(sp.low, this.#steady.binWidthHz, fsd, mainsHz, STEADY_CANDIDATES, { steady: true }, steadyWeight!).candidates.filter(
          (c) => !plain.candidates.some((p) => Math.abs(c.fundamentalHz / p.fundamentalHz - 1) < 0.003),
        )
      : [];
    return { candidates: [...plain.candidates, ...quiet.candidates, ...steady], floorAt: (hz, q) => (q ? quiet.floorAt(hz) : plain.floorAt(hz)) };
  }
}

/** Candidates taken from the spectrum of what is always there. */
const STEADY_CANDIDATES = 6;

function spectrumCandidates(
  p: Float64Array, bw: number, fsd: number, mainsHz: 50 | 60 | undefined, maxCount: number, mark: { quiet?: true; steady?: true },
  /** Per-bin weight of the SNR in the ranking (default 1). */
  binWeight?: Float64Array,
): { candidates: HumCandidate[]; floorAt: (hz: number) => number } {

  const kLo = Math.max(2, Math.floor(8 / bw));
  const kHi = Math.min(p.length - 3, Math.floor(Math.min(0.4 * fsd, MAX_HARMONIC_HZ * 1.1) / bw));
  // Running-median floor, computed every `stride` bins over ±(1.5 Hz, ≥ 12 bins), interpolated.
  const half = Math.max(12, Math.round(1.5 / bw));
  const stride = Math.max(1, Math.floor(half / 4));
  const floorKnots: number[] = [];
  const knotBins: number[] = [];
  const tmp: number[] = [];
  for (let k = kLo; k <= kHi + stride; k += stride) {
    tmp.length = 0;
    for (let j = Math.max(1, k - half); j <= Math.min(p.length - 1, k + half); j++) tmp.push(p[j]!);
    tmp.sort((a, b) => a - b);
    floorKnots.push(Math.max(tmp[tmp.length >> 1]!, 1e-300));
    knotBins.push(k);
  }
  const floorBin = (k: number): number => {
    const x = (k - kLo) / stride;
    const i = Math.max(0, Math.min(floorKnots.length - 2, Math.floor(x)));
    const t = Math.max(0, Math.min(1, x - i));
    return floorKnots[i]! * (1 - t) + floorKnots[i + 1]! * t;
  };
  const snrDb = (k: number) => 10 * Math.log10(p[k]! / floorBin(k));
  const interp = (k: number): number => {
    const a = Math.log(p[k - 1]! + 1e-300), b = Math.log(p[k]! + 1e-300), c = Math.log(p[k + 1]! + 1e-300);
    const den = a - 2 * b + c;
    const d = den < 0 ? (0.5 * (a - c)) / den : 0;
    return (k + Math.max(-0.5, Math.min(0.5, d))) * bw;
  };
  const fMin = (mainsHz ?? 50) * HUM_MIN_FACTOR * 0.995;
  const fMax = (mainsHz ?? 60) * HUM_MAX_FACTOR * 1.005;
  /** Power over floor at frequency f (largest of the two bins around it). */
  const ratioAt = (f: number): number => {
    const x = f / bw, k = Math.floor(x);
    if (k < kLo || k + 1 > kHi) return 0;
    return Math.max(p[k]! / floorBin(k), p[k + 1]! / floorBin(k + 1));
  };
  /** The ranking weight at frequency f (largest of the two bins around it). */
  const weightAt = (f: number): number => {
    const k = Math.floor(f / bw);
    return binWeight && k + 1 < binWeight.length ? Math.max(binWeight[k]!, binWeight[k + 1]!) : 0;
  };
  // Harmonic-sum statistic over the first H harmonics (H ∈ {3, 6, 12}): under noise alone each
  // term p/median is exponential with mean 1/ln 2, so the sum of H terms has mean H/ln 2 and
  // standard deviation √H/ln 2; candidates rank by the best z-score.
  const mu = 1 / Math.LN2;
  const found: HumCandidate[] = [];
  for (let k = Math.max(kLo + 2, Math.floor(fMin / bw)); k <= Math.min(kHi - 2, Math.ceil(fMax / bw)); k++) {
    if (!(p[k]! > p[k - 1]! && p[k]! >= p[k + 1]! && p[k]! > p[k - 2]! && p[k]! >= p[k + 2]!)) continue;
    const s1 = snrDb(k);
    if (s1 < 3) continue;
    const f0 = interp(k);
    if (f0 < fMin || f0 > fMax) continue;
    const hMax = Math.min(MAX_HARMONICS, Math.floor(Math.min(MAX_HARMONIC_HZ, kHi * bw) / f0));
    const harmonicSnrDb: number[] = [];
    let sum = 0, score = -Infinity;
    for (let h = 1; h <= hMax; h++) {
      const r = h === 1 ? p[k]! / floorBin(k) : ratioAt(h * f0);
      harmonicSnrDb.push(10 * Math.log10(Math.max(r, 1e-12)));
      sum += Math.min(r, 1000) * (binWeight ? weightAt(h * f0) : 1);
      if (h === 3 || h === 6 || h === 12 || h === hMax) score = Math.max(score, (sum - h * mu) / (Math.sqrt(h) * mu));
    }
    found.push({ fundamentalHz: f0, score, harmonicSnrDb, ...mark });
  }
  found.sort((a, b) => b.score - a.score);
  // Keep distinct fundamentals. Multiples and sub-multiples of a better candidate stay: the
  // measurement decides which of them is the series that persists (hum at half speed puts its
  // fundamental under what looks like a sub-harmonic of its second harmonic, and vice versa).
  const kept: HumCandidate[] = [];
  for (const c of found) {
    const dup = kept.some((k) => Math.abs(c.fundamentalHz / k.fundamentalHz - 1) < 0.003);
    if (!dup) kept.push(c);
    if (kept.length >= maxCount) break;
  }
  // A series that looks strong may be the sub-harmonic of the real one (hum at 50 Hz read as a
  // 25 Hz series whose even harmonics it is), or one of its harmonics (180 Hz of 60 Hz hum):
  // keep its double, half and third for the best two as well.
  for (const b of kept.slice(0, 2)) {
    for (const k of [2, 1 / 2, 1 / 3]) {
      const m = found.find((c) => Math.abs(c.fundamentalHz / (k * b.fundamentalHz) - 1) < 0.003);
      if (m && !kept.includes(m)) kept.push(m);
    }
  }
  const floorAt = (hz: number) => floorBin(Math.max(kLo, Math.min(kHi, Math.round(hz / bw))));
  return { candidates: kept, floorAt };
}

/** The mains hypotheses that explain a hum fundamental, most plausible first. */
export function humHypotheses(fundamentalHz: number, mainsHz?: 50 | 60): HumHypothesis[] {
  const out: HumHypothesis[] = [];
  for (const m of mainsHz ? [mainsHz] : ([50, 60] as const)) {
    const factor = fundamentalHz / m;
    if (factor >= HUM_MIN_FACTOR * 0.995 && factor <= HUM_MAX_FACTOR * 1.005) out.push({ mainsHz: m, factor, prior: speedPrior(factor) });
  }
  return out.sort((a, b) => b.prior - a.prior);
}

/**
 * Pass 2: narrowband tracks around the harmonics of one or more candidate fundamentals. A
 * candidate from the quiet-weighted spectrum is tracked on the weighted stream (the same frame
 * weights, `quiet`), with the weights themselves tracked alongside so that a line's level can be
 * read per segment as the weighted mean of its amplitude.
 */
export class HumTracker {
  readonly decimatedRateHz: number;
  readonly trackRateHz: number;
  readonly #dec: Decimator;
  readonly #groups: TrackGroup[] = [];
  readonly #trackDecim: number;
  readonly #gain: QuietGain | null;
  readonly #gainTrack: HeterodyneTrack | null;
  readonly #candidates: HumCandidate[];
  readonly #sideDec: Decimator | null;
  readonly #sideGain: QuietGain | null;

  constructor(
    sampleRateHz: number, candidates: { candidate: HumCandidate; floorAt: (hz: number) => number }[], quiet?: QuietWeights,
    /** Two channels: the side signal is pushed too, for the per-channel check of the fundamental. */
    stereo = false,
  ) {
    const D = humDecimation(sampleRateHz);
    this.#dec = new Decimator(D, DECIM_ORDER);
    this.#sideDec = stereo ? new Decimator(D, DECIM_ORDER) : null;
    this.decimatedRateHz = sampleRateHz / D;
    this.#trackDecim = Math.max(1, Math.round(this.decimatedRateHz / TRACK_RATE_HZ));
    this.trackRateHz = this.decimatedRateHz / this.#trackDecim;
    this.#candidates = candidates.map((c) => c.candidate);
    const anyQuiet = candidates.some((c) => c.candidate.quiet);
    this.#gain = anyQuiet && quiet ? new QuietGain(quiet.weights, quiet.frameLength) : null;
    this.#gainTrack = this.#gain ? new HeterodyneTrack(0, this.#trackDecim, TRACK_ORDER) : null;
    this.#sideGain = this.#sideDec && anyQuiet && quiet ? new QuietGain(quiet.weights, quiet.frameLength) : null;
    for (const { candidate, floorAt } of candidates) {
      if (candidate.quiet && !this.#gain) continue;
      const f0 = candidate.fundamentalHz;
      const harmonics: number[] = [];
      const weights: number[] = [];
      candidate.harmonicSnrDb.forEach((s, i) => {
        if (i === 0 || s >= 3) {
          harmonics.push(i + 1);
          weights.push(1 / floorAt((i + 1) * f0));
        }
      });
      // Relative weights only matter; normalise to the largest.
      const wMax = Math.max(...weights);
      const tracks = harmonics.map((h) => new HeterodyneTrack((h * f0) / this.decimatedRateHz, this.#trackDecim, TRACK_ORDER));
      const side = this.#sideDec ? new HeterodyneTrack(f0 / this.decimatedRateHz, this.#trackDecim, TRACK_ORDER) : undefined;
      this.#groups.push({ candidate, harmonics, weights: weights.map((w) => w / wMax), tracks, ...(side ? { side } : {}) });
    }
  }

  /** `side`: (L − R)/2 of a two-channel stream, beside its mono mix (L + R)/2. */
  push(mono: Float64Array, side?: Float64Array): void {
    if (side && this.#sideDec) {
      const ys = this.#sideDec.process(side);
      if (ys.length) {
        const qs = this.#sideGain?.apply(ys).weighted;
        for (const g of this.#groups) g.side?.push(g.candidate.quiet && qs ? qs : ys);
      }
    }
    const y = this.#dec.process(mono);
    if (!y.length) return;
    const q = this.#gain?.apply(y);
    if (q) this.#gainTrack!.push(q.gain);
    for (const g of this.#groups) {
      const x = g.candidate.quiet && q ? q.weighted : y;
      for (const t of g.tracks) t.push(x);
    }
  }

  /** Measurement per candidate given to the constructor (null when not measured). */
  measure(sampleRateHz: number): (HumMeasurement | null)[] {
    // A cheap look first, at each candidate's coarse frequency: a series whose fundamental is not
    // at one level through the file, or that can hardly be seen anywhere, cannot be hum
    // (persistenceEvidence), so the costly measurement is spared; of the rest the MAX_MEASURED
    // that persist best are measured from each of the three searches (plain, quiet-weighted, steady).
    const coarse = this.#groups.map((g) => {
      const { set, layout } = this.#setAndLayout(g, sampleRateHz);
      const lp = linePersistence(set, layout, () => g.candidate.fundamentalHz);
      return persistenceEvidence(g.harmonics, lp);
    });
    const chosen = new Set<number>();
    const kind = (c: HumCandidate) => (c.quiet ? 'quiet' : c.steady ? 'steady' : 'plain');
    for (const k of ['plain', 'quiet', 'steady']) {
      coarse
        .map((e, i) => ({ e, i }))
        .filter((x) => x.e > 0 && kind(this.#groups[x.i]!.candidate) === k)
        .sort((a, b) => b.e - a.e || a.i - b.i)
        .slice(0, MAX_MEASURED)
        .forEach((x) => chosen.add(x.i));
    }
    const byCandidate = new Map(this.#groups.map((g, i) => [g.candidate, chosen.has(i) ? this.#measureGroup(g, sampleRateHz) : null]));
    return this.#candidates.map((c) => byCandidate.get(c) ?? null);
  }

  #setAndLayout(g: TrackGroup, sampleRateHz: number): { set: TrackSet; layout: TrackLayout } {
    const D2 = this.#trackDecim;
    const delay2 = g.tracks[0]!.delaySamples;
    const D1 = sampleRateHz / this.decimatedRateHz;
    return {
      set: {
        fundamentalHz: g.candidate.fundamentalHz, harmonics: g.harmonics, weights: g.weights, tracks: g.tracks,
        ...(g.candidate.quiet && this.#gainTrack ? { gain: this.#gainTrack.re } : {}),
      },
      layout: {
        trackRateHz: this.trackRateHz,
        timeOf: (k: number) => ((k * D2 - delay2) * D1 - this.#dec.delaySamples) / sampleRateHz,
        firstValid: Math.ceil((2 * delay2) / D2) + 1,
        correlation: trackNoiseCorrelation(D2, TRACK_ORDER),
      },
    };
  }


  #measureGroup(g: TrackGroup, sampleRateHz: number): HumMeasurement | null {
    let m = this.#measureOnce(g, sampleRateHz);
    // Each harmonic of hum tells the same story (one level through the file, one frequency ratio).
    // A harmonic the segment check contradicts (judged in ≥ 30 % of the segments and off its level
    // in > 30 % of those) is a note's partial sitting on it: measured with the others, its h²
    // weight would pull the frequency. The series is measured again without it (the fundamental
    // always stays: persistenceEvidence judges it), and again while the new measurement (along
    // its own curve) contradicts another harmonic it used, at most PRUNE_ROUNDS times.
    let cur = g;
    for (let round = 0; m && round < PRUNE_ROUNDS; round++) {
      const mm: HumMeasurement = m;
      const bad = mm.harmonicsUsed.filter((h, j) => {
        const x = mm.persistence.perHarmonic[j]!;
        return h !== 1 && x.coverage >= 0.3 && x.inconsistentShare > 0.3;
      });
      if (bad.length === 0) break;
      const keep = cur.harmonics.map((h, j) => (bad.includes(h) ? -1 : j)).filter((j) => j >= 0);
      if (!keep.some((j) => cur.harmonics[j] === 1)) break;
      const next: TrackGroup = {
        candidate: cur.candidate, harmonics: keep.map((j) => cur.harmonics[j]!), weights: keep.map((j) => cur.weights[j]!), tracks: keep.map((j) => cur.tracks[j]!),
      };
      const again = this.#measureOnce(next, sampleRateHz);
      if (!again) break;
      cur = next;
      m = again;
    }
    return m;
  }

  #measureOnce(g: TrackGroup, sampleRateHz: number): HumMeasurement | null {
    const { set, layout } = this.#setAndLayout(g, sampleRateHz);
    const m = measureSeries(set, layout);
    if (!m) return null;
    // Persistence over the harmonics the measurement kept, demodulated along its curve.
    const used = m.harmonicsUsed.map((h) => g.harmonics.indexOf(h));
    const times = m.timesSeconds, f0s = m.fundamentalsHz;
    const f0At = (t: number) => (m.drifting && times.length >= 2 ? interpolateHeld(times, f0s, t) : m.meanFundamentalHz);
    const persistence = linePersistence(
      { ...set, harmonics: used.map((j) => g.harmonics[j]!), weights: used.map((j) => g.weights[j]!), tracks: used.map((j) => g.tracks[j]!) },
      layout,
      f0At,
    );
    if (g.side && g.harmonics[0] === 1 && channelContradicts(set, layout, g.tracks[0]!, g.side, f0At)) return null;
    return { ...m, fundamentalHz: g.candidate.fundamentalHz, harmonics: g.harmonics, score: g.candidate.score, persistence, quiet: !!g.candidate.quiet };
  }
}

/**
 * Mains hum comes from the electrics: the same line, at one level, in each channel. A note whose
 * time-mirror sits in the other channel (one channel reversed) holds one level in the mono mix
 * (decay plus rise) but rises or decays in each channel. The fundamental's track of each channel
 * (mono ± side, the tracks being linear) is checked segment by segment (`linePersistence`): a
 * channel where the line is judged in ≥ 30 % of the segments and off its level in > 15 % of them
 * contradicts hum. A channel without the line (hum in one channel only) is not judged, so says
 * nothing.
 */
function channelContradicts(
  set: TrackSet, layout: TrackLayout, mono: HeterodyneTrack, side: HeterodyneTrack, f0At: (t: number) => number,
): boolean {
  const n = Math.min(mono.length, side.length);
  for (const sign of [1, -1]) {
    const re = new Float32Array(n), im = new Float32Array(n);
    for (let i = 0; i < n; i++) {
      re[i] = mono.re[i]! + sign * side.re[i]!;
      im[i] = mono.im[i]! + sign * side.im[i]!;
    }
    const p = linePersistence({ fundamentalHz: set.fundamentalHz, harmonics: [1], weights: [1], tracks: [{ re, im, length: n }], ...(set.gain ? { gain: set.gain } : {}) }, layout, f0At);
    const x = p.perHarmonic[0]!;
    if (x.coverage >= 0.3 && x.inconsistentShare > 0.15) return true;
  }
  return false;
}

const gcd = (a: number, b: number): number => (b === 0 ? a : gcd(b, a % b));

/**
 * Hum persists at one level through pauses and under the programme; a note starts, decays and
 * stops (REAL-MATERIAL.md). From the segment-by-segment check (`linePersistence`): a harmonic is
 * established when it was judged in ≥ 30 % of the segments and kept its level in ≥ 85 % of them,
 * contradicted when judged as often and off its level in > 30 %. The series must show itself as
 * this series: its fundamental established, or (fundamental masked) established harmonics with no
 * common factor (3 and 5 imply the fundamental; 2, 4, 6 are another series at twice the
 * frequency). A contradicted fundamental, or fewer than 6 judged segments, is no hum evidence.
 */
export function persistenceEvidence(harmonics: readonly number[], p: LinePersistence): number {
  const per = p.perHarmonic;
  const est: number[] = [];
  let judgedCells = 0, badCells = 0;
  harmonics.forEach((h, j) => {
    const x = per[j]!;
    if (x.coverage < 0.3) return;
    judgedCells += x.coverage;
    badCells += x.coverage * x.inconsistentShare;
    if (x.inconsistentShare <= 0.15) est.push(h);
  });
  const fundamental = per[harmonics.indexOf(1)];
  if (fundamental && fundamental.coverage >= 0.3 && fundamental.inconsistentShare > 0.15) return 0;
  if (!est.includes(1) && (est.length === 0 || est.reduce(gcd) !== 1)) return 0;
  if (p.coverage * p.segments < 6) return 0;
  const badShare = judgedCells > 0 ? badCells / judgedCells : 1;
  return clamp01((0.25 - badShare) / 0.1) * clamp01((p.coverage - 0.3) / 0.3);
}

/**
 * Of the cells of the harmonics judged in ≥ 30 % of the segments (those `persistenceEvidence`
 * weighs), the share off the line's level; 1 when none is judged that often. A harmonic glimpsed
 * in a segment or two (a drum's ringing passing over it) says nothing about the series' level.
 */
export function judgedInconsistentShare(p: LinePersistence): number {
  let judged = 0, bad = 0;
  for (const x of p.perHarmonic) {
    if (x.coverage < 0.3) continue;
    judged += x.coverage;
    bad += x.coverage * x.inconsistentShare;
  }
  return judged > 0 ? bad / judged : 1;
}

/** The harmonics `persistenceEvidence` counts as established (judged in ≥ 30 % of the segments, at their level in ≥ 85 %). */
export function establishedHarmonics(harmonics: readonly number[], p: LinePersistence): number[] {
  return harmonics.filter((_, j) => p.perHarmonic[j]!.coverage >= 0.3 && p.perHarmonic[j]!.inconsistentShare <= 0.15);
}

const clamp01 = (x: number) => Math.max(0, Math.min(1, x));

/** Piecewise-linear interpolation through (t, y), holding the end values outside. */
function interpolateHeld(t: readonly number[], y: readonly number[], x: number): number {
  if (x <= t[0]!) return y[0]!;
  const n = t.length;
  if (x >= t[n - 1]!) return y[n - 1]!;
  let lo = 0, hi = n - 1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (t[mid]! <= x) lo = mid;
    else hi = mid;
  }
  const u = (x - t[lo]!) / (t[hi]! - t[lo]!);
  return y[lo]! + u * (y[hi]! - y[lo]!);
}
