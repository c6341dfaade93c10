/**
 * Echo analysis: one strong reflection (0.5–500 ms after the direct sound) and print-through
 * (a faint copy 0.3–4 s before or after loud passages).
 *
 * Pass 1 (whole file, streaming): averaged log spectra at three frame lengths (coarse.ts). The
 * decimated copy (≈ 4 kHz) for the print-through search (print-through.ts) is collected in a
 * pass of its own after the reflection's refinement, so the two never hold memory at once.
 * Reflection: cepstral peak search → closed-form fit of the echo ripple on the coarse scale →
 * iterative cancel-and-measure refinement on an excerpt of at most `refineSeconds` (refine.ts) →
 * a check for a frequency-dependent reflection (a short filter around τ, filter.ts).
 * Print-through: masked quiet/loud cross-correlation → full-rate phase-slope refinement (one more
 * streaming pass, only when something was found).
 *
 * Confidence. Each search scores its best peak by z = peak / robust local noise (the noise being
 * the spread of the detrended cepstrum, or of the correlation across lags). Among the ~10⁴ lags
 * searched, material without an echo produces maxima of z ≈ 3–5 (the expected maximum of that many
 * Gaussian values is about √(2·ln 10⁴) ≈ 4.3), and the voice's own structure left after the
 * checks in search.ts and coarse.ts (second rahmonic, split halves) reaches z = 7.0 at most on 60
 * clips of 10 s of the synthetic voice used in the tests, while a reflection of g = 0.1 scored
 * z ≥ 10.3 on 6 clips × 3 delays (1.3, 7.77, 23.4 ms). The confidence is the logistic
 * 1/(1 + e^{−(z − 8.5)/0.5}): z = 7 → 0.05, z = 8 → 0.27, z = 8.5 → 0.5, z = 9.2 → 0.8,
 * z = 10.3 → 0.97. `present` means confidence ≥ 0.5. Calibration: test/echo/detect.test.ts.
 * When the noise floor was left out of the refinement (see analyseEcho), z is scaled by the
 * programme's share of the peak: |g without the floor| / |g with it|, at most 1.
 */
import { CancelledError, NotFoundError, ParameterError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import { EchoCanceller } from './canceller.ts';
import { CoarseEchoSearch, type CoarseCandidate } from './coarse.ts';
import { echoCramerRao } from './crb.ts';
import { type FrameEvidence, frameEvidence } from './evidence.ts';
import { fitReflectionFilter } from './filter.ts';
import { fitSingleEcho, releaseFitScratch } from './fit.ts';
import { type EchoKernel, singleEchoKernel } from './kernel.ts';
import { nextPowerOfTwo, releaseSharedPlans } from '../core/fft.ts';
import { reclaim } from '../core/reclaim.ts';
import { MixScratch, mixBlock } from './mix.ts';
import { PrintThroughCollector, refinePrintThroughLags, searchPrintThrough, type LagCandidate, type RefinedLag } from './print-through.ts';
import { type Excerpt, MAX_CANCEL_GAIN, quietAndLoudGains, refineSingleEcho } from './refine.ts';
import { tailGain, tailGainAgrees } from './tail-gain.ts';

export const DEFAULT_RANGE_SECONDS: readonly [number, number] = [0.0005, 0.5];
export const PRINT_THROUGH_RANGE_SECONDS: readonly [number, number] = [0.3, 4];
/**
 * Levels a tape's print-through can have relative to the passage it copies: about −40 to −65 dB
 * (REFERENCES.md §4; common practice), with margin. A copy at −10 or −20 dB is the music
 * repeating itself; one under −80 dB is below what a transfer can show reliably. The upper cap
 * leaves 4 dB over the strongest print-through: on the real-material corpus true copies at −40 dB
 * read −39.8 … −41.0 dB, while a pad's, a clarinet melody's and a band loop's own repetition read
 * −31.7 … −35.9 dB (−30 let them through).
 */
export const PRINT_THROUGH_MAX_DB = -36;
export const PRINT_THROUGH_MIN_DB = -80;

/**
 * Longest refinement excerpt in frames (2^21: 21.8 s at 96 kHz, so the default 20 s up to there;
 * 10.9 s at 192 kHz, 5.5 s at 384 kHz). The refinement's transforms grow with the excerpt (one
 * frame of the whole excerpt for long delays and strong echoes; frames up to half of it
 * otherwise), so this bounds the echo analysis's memory at any sample rate: at 2^21 the largest
 * transform is 2^21 points. At 384 kHz a 20 s excerpt took a 2^23-point transform and `diagnose`
 * 582 MB.
 */
export const MAX_REFINE_FRAMES = 1 << 21;

export interface EchoAnalysisOptions {
  /** Reflection search range in seconds (positive delays). Default 0.5–500 ms, shortened with a warning on short files. */
  rangeSeconds?: readonly [number, number];
  /** Channel to analyse, 0-based; −1 (default) analyses the mean of all channels. */
  channel?: number;
  /** Search for print-through too (default true). */
  printThrough?: boolean;
  /** Longest excerpt used by the refinement passes (default 20 s). */
  refineSeconds?: number;
  signal?: { readonly aborted: boolean };
  progress?(fraction: number): void;
  warn?(message: string): void;
}

export interface ReflectionResult {
  /** true: found; false: none; null: a peak was seen but the evidence does not decide (see `reason`). */
  present: boolean | null;
  /** Why a peak was set aside or left undetermined (null when found, or when nothing stood out). */
  reason: string | null;
  /** The frame-by-frame look at the peak (evidence.ts), when it ran. */
  evidence: FrameEvidence | null;
  /** Delay of the reflection after the direct sound (null when nothing could be measured). */
  delaySeconds: number | null;
  /** Signed linear gain g of y = x + g·x(t − τ). */
  gain: number | null;
  confidence: number;
  /** Detection score (peak over robust noise). */
  z: number;
  /** Standard errors of the final fit (local curvature; they do not include the source's own structure). */
  delayStdSeconds: number | null;
  gainStd: number | null;
  /**
   * A frequency-dependent reflection: taps h_L at lags firstTapSamples + i, reported only when it
   * fits clearly better than the single gain (dsp/echo/filter.ts); null otherwise.
   */
  filter: { firstTapSamples: number; firstTapDelaySeconds: number; taps: number[] } | null;
  /**
   * The gain at the same delay in the quietest frames (the noise floor), when it disagreed with
   * the programme's and the floor was left out of the measurement (hiss added after the
   * reflection; or, after a cancellation, the inverse echo that hiss then carries); else null.
   */
  floorGain: number | null;
}

export interface PrintThroughResult {
  /** true: found; false: none; null: a copy was seen but the evidence does not decide (see `reason`). */
  present: boolean | null;
  /** Why a copy was set aside or left undetermined (null when found, or when nothing stood out). */
  reason: string | null;
  /** Signed delay of the copy (negative = before the loud passage), null when nothing could be measured. */
  delaySeconds: number | null;
  /**
   * Level of the copy relative to the passage it copies, dB, read below 2 kHz where the
   * refinement ran (tape prints the highs less; `gain` is the whole band's).
   */
  levelDb: number | null;
  /** Signed linear gain of the copy over the whole band (least squares: for cancellation). */
  gain: number | null;
  confidence: number;
  z: number;
  /** Whether the full-rate refinement ran (otherwise the values come from the ≈4 kHz search). */
  refined: boolean;
  /** The refinement's band gains and the two halves' gains and scores (print-through.ts), when it ran. */
  detail: { bandGains: Array<number | null>; halves: Array<{ gain: number; z: number }> | null; middle: { gain: number; std: number; pairs: number } | null } | null;
}

export interface EchoAnalysis {
  sampleRateHz: number;
  reflection: ReflectionResult;
  printThrough: PrintThroughResult;
  /** The reflection search range actually used, seconds. */
  rangeSeconds: [number, number];
}

/** Logistic map from a detection score to a 0–1 confidence (see the module comment). */
export const confidenceFromZ = (z: number): number => 1 / (1 + Math.exp(-(z - 8.5) / 0.5));

/** Longest delay (in seconds) that a file of `frames` can be searched for: a quarter of its length. */
export const longestSearchableDelay = (frames: number, sampleRateHz: number): number => frames / sampleRateHz / 4;

/** Checks and completes the reflection search range. Throws ParameterError for impossible ranges. */
export function resolveRange(
  source: { frames: number; sampleRateHz: number },
  range: readonly [number, number] | undefined,
  warn: (m: string) => void,
): [number, number] {
  const fs = source.sampleRateHz;
  const duration = source.frames / fs;
  const longest = longestSearchableDelay(source.frames, fs);
  const minDelay = 2 / fs;
  if (range) {
    const [lo, hi] = range;
    if (!(lo >= 0) || !(hi > lo)) throw new ParameterError(`--range ${lo}:${hi}: expected 0 ≤ MIN < MAX seconds`);
    if (hi > longest) {
      throw new ParameterError(
        `--range ${lo}:${hi}: the file is ${duration.toFixed(3)} s long, so delays up to ${longest.toFixed(3)} s (a quarter of its length) can be searched`,
      );
    }
    if (hi < minDelay) throw new ParameterError(`--range ${lo}:${hi}: delays shorter than 2 samples (${(minDelay * 1000).toFixed(3)} ms) cannot be measured`);
    return [Math.max(lo, minDelay), hi];
  }
  let [lo, hi] = DEFAULT_RANGE_SECONDS;
  lo = Math.max(lo, minDelay);
  if (hi > longest) {
    if (longest <= lo * 2) throw new NotFoundError(`the file is too short (${duration.toFixed(3)} s) to search for a reflection`);
    warn(`the file is ${duration.toFixed(2)} s long: searching delays up to ${(longest * 1000).toFixed(0)} ms only`);
    hi = longest;
  }
  return [lo, hi];
}

const notMeasured = (): ReflectionResult => ({ present: false, reason: null, evidence: null, delaySeconds: null, gain: null, confidence: 0, z: 0, delayStdSeconds: null, gainStd: null, filter: null, floorGain: null });

/**
 * Whether the floor's gain q disagrees with the programme's g (quietest and loudest fifth of the
 * frames): by more than 30 % of the larger of the two and by more than 0.05 (the spread of
 * either, from a fifth of the frames, on material whose floor does carry the echo).
 */
export const floorDisagrees = (q: number, g: number): boolean => Math.abs(q - g) > Math.max(0.3 * Math.max(Math.abs(q), Math.abs(g)), 0.05);

/**
 * Range of the frames' share of the peak at τ that a cancellation takes away (evidence.ts,
 * `share`) for a reflection. On the real-material corpus, true reflections of 0.1–0.45 at
 * 30–304 ms on voice, guitar, piano, pads and a music box read 0.96–1.06; peaks of the
 * programme's own (sustained chords at 450–500 ms, a melody at 30 ms) 0.32–0.55, band loops at
 * their beat (250, 300 ms) 1.3–1.8, held organ notes 1.19.
 */
export const SHARE_RANGE: readonly [number, number] = [0.75, 1.25];

/**
 * Frame length, in multiples of τ, of the second frame-by-frame reading (LONG_FRAMES_MAX_FFT the
 * most), and the median it must reach, as a share of |ĝ|. The default frames of about 4·τ put
 * the echo's ripple at a period of about 4 bins, the width of the Hann window's main lobe: a
 * tonal partial's leakage carries the ripple's value at the partial over a whole period, so a
 * sparse tonal frame reads a true reflection at a fraction of ĝ (celesta 30.3 ms / 0.9: median
 * 0.20·ĝ at 8192 points, 0.46 at 16384, 0.86 at 32768; celesta 37.9 ms / 0.66: 0.24 → 0.88;
 * jazz guitar 31.0 ms / 0.46: 0.16 → 0.64), while the programme's own repeat stays where it was
 * (a clean trombone chord's 25.8 ms: 0.09 → 0.06, share 0.33 → 0.09).
 */
export const LONG_FRAMES_FACTOR = 16;
export const LONG_FRAMES_MAX_FFT = 65536;
export const LONG_FRAMES_MIN_MEDIAN = 0.5;

/**
 * Whether a peak the frames of about 4·τ refuse as a few moments' repeat reads as a reflection in
 * frames of about 16·τ: at least FEW_FRAMES frames with programme, four unlocked ones, the median
 * of the same sign as ĝ and at least LONG_FRAMES_MIN_MEDIAN·|ĝ|, the share inside SHARE_RANGE.
 * Where 16·τ would exceed LONG_FRAMES_MAX_FFT it is not tried (too few frames in a clip).
 */
async function holdsInLongFrames(
  source: AudioSource,
  delaySamples: number,
  gain: number,
  options: { channel: number; start: number; end: number; signal?: { readonly aborted: boolean } },
): Promise<boolean> {
  const fftSize = nextPowerOfTwo(Math.ceil(LONG_FRAMES_FACTOR * (delaySamples + 16)));
  if (fftSize > LONG_FRAMES_MAX_FFT) return false;
  const e = await frameEvidence(source, delaySamples, gain, { ...options, fftSize });
  if (e.frames < FEW_FRAMES || e.frames - e.locked < 4 || e.medianGain === null || e.share === null) return false;
  return Math.sign(e.medianGain) === Math.sign(gain) && Math.abs(e.medianGain) >= LONG_FRAMES_MIN_MEDIAN * Math.abs(gain) && e.share >= SHARE_RANGE[0] && e.share <= SHARE_RANGE[1];
}

/**
 * Largest band reading allowed against the gain ĝ measured on the whole programme: |b| ≤
 * BAND_OVER·|ĝ| + 0.05. A frame reads a reflection at most at its full gain (less for strong
 * ones: the window keeps only part of the echo, and the log compresses it); on the corpus true
 * reflections of 0.2–0.9 read at most 1.15·|ĝ| + 0.03 in any band. A drone's or a held chord's
 * partials that happen to fall on the ripple's crests read far more (a sitar's 12.2 ms: 0.97
 * against 0.22; an organ note held twice, 28 ms: −0.59 against −0.30; a held bass C2 whose period
 * 15.3 ms passed for a reflection beside a true one at 148 ms: 2.0 against 0.59). It costs a true
 * reflection on a held organ B1 (9.0 ms / −0.3 read −1.18 below 1 kHz): held harmonic notes leave
 * deep valleys between their partials, and where they fall on the ripple is chance.
 */
export const BAND_OVER = 1.5;
/**
 * Smallest band reading, as a share of the largest, in the bands above the lowest one with
 * programme (where a low note's few partials sample the ripple only at their own frequencies, so
 * that band can read anything: a piano B1 with a true 30.8 ms / 0.9 reflection read −0.56 there).
 * True reflections read 0.26 and more; a rhythm or chord read as one has bands at 0 or of the
 * other sign (a funk loop's half beat, 227 ms: +0.28…+0.48 in the middle, −0.99 at the top).
 */
export const BAND_MIN_SHARE = 0.2;
/**
 * How far a band above the lowest may read on the other side of zero, as a share of |ĝ|: a
 * reflection has the sign of ĝ in every band. On the corpus, 129 true reflections read at worst
 * −0.034·|ĝ| in any such band; a brass melody's own 30.2 ms peak (ĝ = −0.082) read +0.021 at
 * 0.5–1 kHz (+0.26·|ĝ|) and a saxophone's chords −0.8·|ĝ|.
 */
export const BAND_OPPOSITE = 0.15;
/**
 * With three or more bands read, the largest band reading (two standard errors up) must reach
 * this share of |ĝ|, or of the frames' median gain where that is smaller (see bandVerdict).
 */
export const BAND_ALL_LOW = 0.5;

/**
 * The band-by-band test of a reflection at gain ĝ (evidence.ts, `bands`): one gain in every band
 * with programme, of the sign of ĝ and not far above it (that part also with one band only).
 * Null when it holds, else the verdict with its reason.
 */
export function bandVerdict(
  bands: FrameEvidence['bands'],
  gain: number,
  ms: string,
  /** The median of the frames' gains (evidence.ts), when known: the bands are read from the same frames. */
  frameGain: number | null = null,
): { present: boolean | null; reason: string } | null {
  const b = bands.filter((x): x is typeof x & { gain: number; gainStd: number } => x.gain !== null && x.gainStd !== null);
  const hz = (x: (typeof b)[number]) => `${Math.round(x.loHz)}–${Math.round(x.hiHz)} Hz`;
  // Each band's reading is taken at its median's lower (upper) end, two standard errors away.
  const over = b.find((x) => Math.abs(x.gain) - 2 * x.gainStd > BAND_OVER * Math.abs(gain) + 0.05);
  if (over) {
    return {
      present: false,
      reason: `at ${ms} ms the ${hz(over)} band reads ${over.gain.toFixed(3)}, far more than the ${gain.toFixed(3)} measured over the whole programme: the partials of a held note or drone, not a reflection (which has one gain in every band)`,
    };
  }
  // Every band the frames can read holds far less than the frames do as a whole: what peaks at
  // τ lies outside those bands (on the corpus a band loop's hi-hat eighth notes, 305 ms apart,
  // above 8 kHz where too few frames hold programme for a band reading: frame median 0.351, ĝ
  // 0.324, the bands 125 Hz–8 kHz at most 0.077), not in the whole programme as a reflection
  // would be. The bands are read from the same frames as the median, so the comparison is with
  // the smaller of the two (the frames' readings of a strong reflection run low: trombone chords
  // with 37.8 ms / 0.65 read a median of 0.205 and bands up to 0.212).
  const reference = frameGain !== null && Math.sign(frameGain) === Math.sign(gain) ? Math.min(Math.abs(gain), Math.abs(frameGain)) : Math.abs(gain);
  if (b.length >= 3) {
    const most = b.reduce((m, x) => (Math.abs(x.gain) + 2 * x.gainStd > Math.abs(m.gain) + 2 * m.gainStd ? x : m));
    if (Math.abs(most.gain) + 2 * most.gainStd < BAND_ALL_LOW * reference) {
      return {
        present: false,
        reason: `at ${ms} ms every band with programme reads far less than the ${gain.toFixed(3)} measured over the whole programme (at most ${most.gain.toFixed(3)}, ${hz(most)}): a repeat in a part of the spectrum the bands do not hold, not a reflection, which delays the whole programme with one gain`,
      };
    }
  }
  if (b.length < 2) return null;
  const upper = b.length >= 3 ? b.slice(1) : b;
  const top = Math.max(...upper.map((x) => Math.abs(x.gain) - 2 * x.gainStd));
  const off = upper.find((x) => x.gain * Math.sign(gain) + 2 * x.gainStd < BAND_MIN_SHARE * top || x.gain * Math.sign(gain) < -BAND_OPPOSITE * Math.abs(gain));
  if (off) {
    return {
      present: false,
      reason: `at ${ms} ms the bands disagree (${upper.map((x) => `${hz(x)}: ${x.gain.toFixed(3)}`).join(', ')}; overall ${gain.toFixed(3)}): a rhythm, chord or repeat in part of the spectrum, not a reflection, which delays the whole programme with one gain`,
    };
  }
  return null;
}

/**
 * Below this many frames with programme the frame evidence is thin (long delays in short files:
 * frames are 4·τ long), and a reflection found is reported with at most FEW_FRAMES_CONFIDENCE.
 * On the corpus a contrabass's chords read 453.6 ms / 0.047 from 5 frames at confidence 1.
 */
export const FEW_FRAMES = 10;
export const FEW_FRAMES_CONFIDENCE = 0.8;
/**
 * Below FEW_FRAMES frames, the smallest |ĝ| reported at all: a handful of frames can vouch for a
 * strong reflection, not for a weak one. On the corpus, 16 true reflections found from 5–9 frames
 * had |ĝ| ≥ 0.098; the programme's own peaks read from so few (contrabass and cello chords,
 * 390–482 ms; a pad; saxophone chords) had |ĝ| ≤ 0.048.
 */
export const FEW_FRAMES_MIN_GAIN = 0.07;

const noPrintThrough = (): PrintThroughResult => ({ present: false, reason: null, delaySeconds: null, levelDb: null, gain: null, confidence: 0, z: 0, refined: false, detail: null });

/**
 * The coarse candidates in the order they are looked at: significant peaks strongest first, then
 * (when none is significant) the most significant one alone.
 */
function orderCandidates(cands: readonly CoarseCandidate[], fs: number): CoarseCandidate[] {
  if (!cands.length) return [];
  // Peaks under 1 ms (where the spectral envelope lives) go last: they are not determined anyway.
  const short = (c: CoarseCandidate) => (c.quefrency < 0.001 * fs ? 1 : 0);
  const significant = cands
    .filter((c) => confidenceFromZ(c.z) >= 0.5)
    .sort((a, b) => short(a) - short(b) || Math.abs(b.amplitude) - Math.abs(a.amplitude));
  if (significant.length) return significant;
  return [cands.reduce((a, b) => (b.z > a.z ? b : a))];
}

/**
 * Smallest score a peak needs to be taken as the root of another (rootOf): well above what chance
 * gives at one given lag (a maximum over 10⁴ lags reaches 3–5, one lag rarely 3), below the 8.5
 * that reports a peak by itself. A root is taken only where the two scores together exceed its own.
 */
export const ROOT_MIN_Z = 5;

/**
 * The candidate at τ of which `c` is the k-th rahmonic (k = 2…8), or null. An echo's cepstrum
 * is (−1)^{k+1}·g^k/k at k·τ (the series of log(1 + g·z^−τ); Oppenheim & Schafer, DTSP, ch. 13):
 * the sign at k·τ is that of g for odd k and negative for even k, while a periodic source puts
 * positive peaks at every multiple of its period. A strong reflection's first peak can score
 * under 8.5 in the short frames (the programme's own structure at a few ms raises the noise
 * there) while its rahmonics, in the longer frames, score more (a jazz guitar's 17.5 ms / 0.9:
 * z 7.3 at τ, 11.0 at 2τ). The root comes back with the score of the two peaks together, (z_τ +
 * z_kτ)/√2 (two independent matched-filter outputs added, so unit noise stays unit noise), and
 * must then pass every check a peak does on its own. Roots under 1 ms are not looked for, nor
 * roots whose rahmonic would need a gain of 1 or more.
 */
export function rootOf(c: CoarseCandidate, all: readonly CoarseCandidate[], fs: number): CoarseCandidate | null {
  let best: CoarseCandidate | null = null;
  for (const p of all) {
    if (p.z < ROOT_MIN_Z || (p.z + c.z) / Math.SQRT2 <= p.z || p.quefrency < 0.001 * fs) continue;
    const k = Math.round(c.quefrency / p.quefrency);
    if (k < 2 || k > 8 || Math.abs(c.quefrency - k * p.quefrency) > Math.max(2, 0.005 * c.quefrency)) continue;
    const sign = k % 2 ? Math.sign(p.amplitude) : -1;
    if (Math.sign(c.amplitude) !== sign) continue;
    // The gain the peak at k·τ implies, (k·|a_k|)^{1/k}, must be that of a reflection, under 1
    // (accordion chords: −0.34 at four periods of the notes' 7.6 ms would need 1.08).
    if (!((k * Math.abs(c.amplitude)) ** (1 / k) < 1)) continue;
    if (!best || p.z > best.z) best = p;
  }
  return best ? { ...best, z: (best.z + c.z) / Math.SQRT2 } : null;
}

/** The most active stretch of at most `length` frames, from per-second energies. */
function chooseExcerpt(energies: readonly number[], fs: number, frames: number, length: number): { start: number; end: number } {
  if (frames <= length) return { start: 0, end: frames };
  const w = Math.max(1, Math.floor(length / fs));
  const peak = Math.max(...energies, 1e-300);
  const active = energies.map((e) => (e > peak * 1e-3 ? 1 : 0) as number);
  let best = 0, bestStart = 0, sum = 0;
  for (let i = 0; i < active.length; i++) {
    sum += active[i]!;
    if (i >= w) sum -= active[i - w]!;
    if (i >= w - 1 && sum > best) {
      best = sum;
      bestStart = i - w + 1;
    }
  }
  const start = Math.min(bestStart * fs, frames - length);
  return { start, end: start + length };
}

/**
 * Largest level difference, dB, between the copy's readings in the low and middle bands
 * (100–700 Hz, 0.7–2 kHz), and between the two halves of the frame pairs. On the corpus true
 * print-through at −40…−60 dB read within 1 dB across those bands and 2.4 dB between the halves;
 * the programme's own likeness at 2–4 s (a sitar's chords, a pad's sweep, a sea sound played
 * twice) read 11–18 dB apart.
 */
export const PT_LEVEL_SPREAD_DB = 6;
/** How far the high band (2–5 kHz) may read above the louder of the two others, dB: tape prints its highs less, not more. */
export const PT_HIGH_OVER_DB = 3;

const levelOf = (g: number) => 20 * Math.log10(Math.max(1e-12, Math.abs(g)));

/** Why the print-through band gains (low, mid, high; null where empty) are not one copy's, or null. */
export function ptBandsDisagree(bandGains: ReadonlyArray<number | null>): string | null {
  const [lo, mid, hi] = bandGains;
  if (lo != null && mid != null && Math.abs(levelOf(lo) - levelOf(mid)) > PT_LEVEL_SPREAD_DB) {
    return `reads ${levelOf(lo).toFixed(1)} dB at 100–700 Hz and ${levelOf(mid).toFixed(1)} dB at 0.7–2 kHz`;
  }
  const ref = Math.max(lo != null ? levelOf(lo) : -Infinity, mid != null ? levelOf(mid) : -Infinity);
  if (hi != null && Number.isFinite(ref) && levelOf(hi) > ref + PT_HIGH_OVER_DB) {
    return `reads ${levelOf(hi).toFixed(1)} dB at 2–5 kHz, above the ${ref.toFixed(1)} dB below 2 kHz`;
  }
  return null;
}

/** Why the two halves' readings of a copy at gain g are not one copy's, or null. */
export function ptHalvesDisagree(halves: ReadonlyArray<{ gain: number; z: number }>, g: number): string | null {
  const [a, b] = halves;
  if (!a || !b) return null;
  if (Math.sign(a.gain) !== Math.sign(g) || Math.sign(b.gain) !== Math.sign(g) || Math.abs(levelOf(a.gain) - levelOf(b.gain)) > PT_LEVEL_SPREAD_DB) {
    const read = (h: { gain: number }) => `${levelOf(h.gain).toFixed(1)} dB${h.gain * g < 0 ? ' of the opposite polarity' : ''}`;
    return `reads ${read(a)} in the earlier half of the passages compared and ${read(b)} in the later one`;
  }
  return null;
}

/** Standard deviations and ratio beyond which the middle passages' gain is not the quiet passages' one. */
export const PT_MIDDLE_SIGMAS = 4;
export const PT_MIDDLE_RATIO = 1.4;

/**
 * Why the gain read under the middle passages (15–30 dB under the loud ones) is not that of a copy
 * at gain g read under the quiet ones, or null. A copy from the tape lies under every passage at
 * one gain; a sound that repeats itself while it fades (a sampled sustain loop) reads more where
 * its repeat is louder. On the corpus a looped applause sample read 1.78 times its quiet gain at
 * 7.2 standard deviations (its backwards copy 1.66 at 5.8); true copies read within 1 deviation.
 */
export function ptMiddleDisagrees(middle: { gain: number; std: number; pairs: number } | null, g: number): string | null {
  if (!middle || !(middle.std > 0) || g === 0) return null;
  const ratio = middle.gain / g;
  const off = Math.abs(middle.gain - g) / middle.std;
  if (off > PT_MIDDLE_SIGMAS && (ratio > PT_MIDDLE_RATIO || ratio < 1 / PT_MIDDLE_RATIO)) {
    return `reads ${ratio.toFixed(2)} times as strong under the louder passages (${off.toFixed(1)} standard deviations off, ${middle.pairs} passages)`;
  }
  return null;
}

/** Runs the whole analysis. */
export async function analyseEcho(source: AudioSource, options: EchoAnalysisOptions = {}): Promise<EchoAnalysis> {
  const fs = source.sampleRateHz;
  const warn = options.warn ?? (() => {});
  const channel = options.channel ?? -1;
  if (channel >= source.channelCount) {
    throw new ParameterError(`--channel ${channel + 1}: the file has ${source.channelCount} channel${source.channelCount === 1 ? '' : 's'}`);
  }
  const [rangeLo, rangeHi] = resolveRange(source, options.rangeSeconds, warn);
  const minLag = rangeLo * fs, maxLag = rangeHi * fs;
  let coarse: CoarseEchoSearch | null = new CoarseEchoSearch(fs, minLag, maxLag, source.frames);
  const duration = source.frames / fs;
  const wantPt = (options.printThrough ?? true) && duration >= 4 * PRINT_THROUGH_RANGE_SECONDS[0];
  const energies: number[] = [];
  let secondAcc = 0, secondFill = 0;
  const secondLen = Math.round(fs);

  // --- Pass 1.
  let done = 0;
  const mix = new MixScratch();
  for await (const block of source.blocks({ readOnly: true })) {
    if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
    const mono = mixBlock(block, channel, mix);
    coarse!.push(mono);
    for (let i = 0; i < mono.length; i++) {
      secondAcc += mono[i]! * mono[i]!;
      if (++secondFill === secondLen) {
        energies.push(secondAcc);
        secondAcc = 0;
        secondFill = 0;
      }
    }
    done += mono.length;
    options.progress?.(0.5 * (done / Math.max(1, source.frames)));
  }
  if (secondFill > 0) energies.push((secondAcc * secondLen) / secondFill);

  // --- Reflection. The significant peaks are looked at in turn, strongest first, until one is
  // a reflection (a voice's fixed colouring under 1 ms, a note's period or a repeat can be the
  // strongest peak and still be none); if none is, the first one's verdict is reported.
  const cepstra = coarse!.cepstra();
  const all = coarse!.candidates(cepstra);
  const scaleSizes = coarse!.scales.map((s) => s.fftSize);
  coarse = null; // its frame buffers and windows (up to 44 MB) go before the refinement's transforms come
  reclaim();
  const order = orderCandidates(all, fs);
  const measure = async (cand: CoarseCandidate): Promise<ReflectionResult> => {
    const first = fitSingleEcho(cepstra[cand.scale]!, scaleSizes[cand.scale]!, { delaySamples: cand.quefrency, gain: cand.amplitude }, { searchSamples: 1.5 });
    let delay = first.delaySamples, gain = first.gain, delayStd = first.delayStdSamples, gainStd = first.gainStd;
    let filter: ReflectionResult['filter'] = null;
    let z = cand.z;
    let floorGain: number | null = null;
    let verdict: { present: boolean | null; reason: string } | null = null;
    let evidence: FrameEvidence | null = null;
    if (confidenceFromZ(cand.z) >= 0.5) {
      const cap = Math.max(1, Math.min(MAX_REFINE_FRAMES, Math.round((options.refineSeconds ?? 20) * fs)));
      const { start, end } = chooseExcerpt(energies, fs, source.frames, cap);
      const decay = Math.log(1e-4) / Math.log(Math.max(0.05, Math.min(MAX_CANCEL_GAIN, Math.abs(gain))));
      const excerpt: Excerpt = { start, end, warmup: Math.min(start, Math.ceil(delay * Math.max(1, decay))) };
      let refined = await refineSingleEcho(source, { delaySamples: delay, gain }, { channel, excerpt, signal: options.signal });
      reclaim();
      // Noise added after the reflection (hiss, hum) does not share the programme's echo: it is
      // echo-free in the original, and after a cancellation it carries the inverse echo instead.
      // That shows in the quiet frames (the floor); when their gain disagrees with the loud
      // frames' (the programme), the refinement is redone leaving cells near the floor out
      // (refine.ts, levelGate), so the programme's reflection is what is measured, and the
      // detection score is scaled by the programme's share of the peak it came from.
      const ungatedGain = refined.fit.gain;
      const split = await quietAndLoudGains(source, refined.fit.delaySamples, ungatedGain, { channel, excerpt, signal: options.signal });
      const gateNoise = split !== null && floorDisagrees(split.quiet, split.loud);
      if (gateNoise) {
        refined = await refineSingleEcho(source, { delaySamples: refined.fit.delaySamples, gain: ungatedGain }, { channel, excerpt, signal: options.signal, gateNoise });
        z = cand.z * Math.min(1, Math.abs(refined.fit.gain) / Math.max(1e-9, Math.abs(ungatedGain)));
        floorGain = split.quiet;
      }
      delay = refined.fit.delaySamples;
      gain = refined.fit.gain;
      delayStd = refined.fit.delayStdSamples;
      gainStd = refined.fit.gainStd;
      // Is it a reflection? (evidence.ts) The refinement must confirm the peak it started from,
      // and the frames one by one must show it: in notes of other pitches and in unvoiced
      // sounds, not only where a note's period or a repeat lands on τ.
      if (confidenceFromZ(z) >= 0.5) {
        const ms = ((delay / fs) * 1000).toFixed(1);
        if (delay < 0.001 * fs) {
          verdict = {
            present: null,
            reason: `a peak at ${ms} ms: under 1 ms a reflection cannot be told from the fixed colouring of the voice, instrument or microphone (the spectral envelope lives at those quefrencies)`,
          };
        } else {
          reclaim();
          evidence = await frameEvidence(source, delay, gain, { channel, start: excerpt.start, end: excerpt.end, signal: options.signal });
          reclaim();
          const unlocked = evidence.frames - evidence.locked;
          if (evidence.frames >= 5 && unlocked >= 4 && evidence.locked > 0.02 * evidence.frames) {
            // Measure again without the frames whose own period lands on τ.
            refined = await refineSingleEcho(source, { delaySamples: delay, gain }, { channel, excerpt, signal: options.signal, gateNoise, lockTau: delay });
            delay = refined.fit.delaySamples;
            gain = refined.fit.gain;
            delayStd = refined.fit.delayStdSamples;
            gainStd = refined.fit.gainStd;
          }
          // Five standard deviations of the Cramér–Rao bound on the excerpt (crb.ts): a smaller
          // gain is not distinguishable from the programme's own chance structure.
          const minGain = 5 * echoCramerRao(excerpt.end - excerpt.start, delay, gain, [0, 0.5], Math.max(20000, Math.ceil(40 * delay))).gainStd;
          const spread = evidence.medianGain;
          const pair = evidence.pairGain;
          if (Math.abs(gain) < minGain) {
            verdict = { present: false, reason: `the gain measured at ${ms} ms (${gain.toFixed(4)}) is within the measurement's own spread (±${(minGain / 5).toFixed(4)})` };
          } else if (Math.sign(gain) !== Math.sign(cand.amplitude) || Math.abs(gain) < 0.35 * Math.abs(cand.amplitude)) {
            verdict = { present: false, reason: `the peak at ${ms} ms does not hold when it is cancelled (gain ${gain.toFixed(3)} against ${cand.amplitude.toFixed(3)} in the first look): the programme's own structure, not a reflection` };
          } else if (evidence.frames < 5) {
            verdict = { present: null, reason: `a peak at ${ms} ms, but the sound is too short (${evidence.frames} frames with programme) to tell a reflection from its own structure` };
          } else if (unlocked < 4) {
            verdict = {
              present: null,
              reason: `${ms} ms is a whole number of periods of the note${evidence.locked > 1 ? 's' : ''} played in ${Math.round((100 * evidence.locked) / evidence.frames)} % of the frames; a pitch period is not evidence of a reflection, and too little else is played to tell`,
            };
          } else if (evidence.frames < FEW_FRAMES && Math.abs(gain) < FEW_FRAMES_MIN_GAIN) {
            verdict = {
              present: null,
              reason: `a peak at ${ms} ms of gain ${gain.toFixed(3)}, but only ${evidence.frames} frames with programme: too few to tell so weak a reflection from the sound's own structure`,
            };
          } else if (spread !== null && Math.sign(spread) === Math.sign(gain) && evidence.share !== null && evidence.share > SHARE_RANGE[1]) {
            // Cancelling at ĝ leaves the frames' peak at τ in place: a rhythm or repeat at τ, or a
            // reflection stronger than measured (Festival speech with 61.8 ms / 0.2 measured
            // 0.11 reads 1.76; a band loop at its beat 1.5–1.8). Either way nothing to act on.
            // Also where noise was added after the reflection (gateNoise): that noise carries the
            // inverse echo once cancelled and lowers the share, never raises it (a held organ
            // note at 3 periods, 25.6 ms, read 4.9 there and passed for a reflection).
            verdict = {
              present: null,
              reason: `the peak at ${ms} ms is still there after cancelling it at ${gain.toFixed(3)}: a rhythm or repeat at that interval, or a reflection stronger than measured; not determined`,
            };
          } else if (
            (spread === null || Math.sign(spread) !== Math.sign(gain) || Math.abs(spread) < (unlocked < 0.2 * evidence.frames ? 0.5 : gateNoise ? 0.35 : 0.2) * Math.abs(gain) ||
              (!gateNoise && (evidence.share === null || !(evidence.share >= SHARE_RANGE[0] && evidence.share <= SHARE_RANGE[1])))) &&
            !(await holdsInLongFrames(source, delay, gain, { channel, start: excerpt.start, end: excerpt.end, signal: options.signal }))
          ) {
            // A reflection is in every frame, so cancelling it leaves the frames without a peak
            // at τ (share ≈ 1); a repeat is in a few, and cancelling puts an inverse echo into
            // the others (share ≈ 0); a rhythm at τ is still there after cancelling (share > 1).
            // Not where noise was added after the reflection (gateNoise): the cancellation puts
            // the inverse echo into the bins the hiss holds in every frame (the demo reel read
            // 0.55), so there the older rule, the median's size against ĝ, decides.
            // (Where most frames are locked the few others must show the echo more clearly.)
            verdict = { present: false, reason: `the peak at ${ms} ms comes from a few moments (a repeated note, hit or phrase), not from the whole programme as a reflection would` };
          } else if (bandVerdict(evidence.bands, gain, ms, spread) !== null) {
            verdict = bandVerdict(evidence.bands, gain, ms, spread);
          } else if (pair !== null && (pair * Math.sign(gain) < 0.4 * Math.abs(gain) - 0.2 || pair * Math.sign(gain) > 2 * Math.abs(gain) + 0.05)) {
            // (The later frame's own new sounds dilute the pair regression, most for weak echoes
            // on sparse notes: a music box's 61.7 ms / 0.35 reads −0.035; a strong one must
            // show: a band loop's beat at 250 ms read as −0.68 has pairs at 0.0001.)
            verdict = { present: false, reason: `sounds ${ms} ms apart are alike only in some places (a rhythm or repeated phrase), not throughout as with a reflection` };
          }
          z *= Math.sqrt(unlocked / Math.max(1, evidence.frames));
        }
      }
      if (verdict === null && confidenceFromZ(z) >= 0.5) {
        // Where the programme stops into silence, its copy is alone for τ: the gain that empties
        // those stretches does not share the programme's own likeness at τ (tail-gain.ts). A
        // single gain that empties them by 30 dB is the reflection's, so no filter is fitted then.
        reclaim();
        const tail = await tailGain(source, { delaySamples: delay, gain }, { channel, excerpt, signal: options.signal });
        if (tail !== null && tailGainAgrees(tail, gain)) {
          gain = tail.gain;
        } else {
          const f = await fitReflectionFilter(source, { delaySamples: delay, gain }, { channel, excerpt, signal: options.signal, gateNoise });
          if (f) filter = { firstTapSamples: f.kernel.offset, firstTapDelaySeconds: f.kernel.offset / fs, taps: Array.from(f.kernel.taps) };
        }
      }
    }
    // With fewer than FEW_FRAMES frames the frame-by-frame checks are medians of a handful of
    // readings: the claim may stand, but not with a confidence of 0.9 or more.
    const confidence = Math.min(confidenceFromZ(z), evidence !== null && evidence.frames < FEW_FRAMES ? FEW_FRAMES_CONFIDENCE : 1);
    return {
      present: verdict ? verdict.present : confidence >= 0.5,
      reason: verdict ? verdict.reason : null,
      evidence,
      delaySeconds: delay / fs,
      gain,
      confidence: verdict ? Math.min(confidence, 0.49) : confidence,
      z,
      delayStdSeconds: Number.isFinite(delayStd) ? delayStd / fs : null,
      gainStd: Number.isFinite(gainStd) ? gainStd : null,
      filter,
      floorGain,
    };
  };
  let reflection = notMeasured();
  // A candidate at the delay of one already looked at (from another frame length), or at a
  // whole multiple k·τ of it, is that peak again, or its rahmonic
  // (an echo's cepstrum has (−1)^{k+1}·g^k/k there) or the same note's period again:
  // it is skipped (a 61.7 ms / 0.35 reflection set aside on a music box came back as one at
  // 185.2 ms with g = 0.015 = g³/3, and a 9.1 ms / 0.9 one on a voice as 91.2 ms, −0.035).
  // Not skipped, though, is a negative peak at k·τ (k ≥ 2) far stronger than the rahmonic an echo
  // at τ puts there (|a|^k/k, a the first look's gain): a note's period puts positive peaks at its
  // multiples, so that is neither (accordion chords with a true 30.5 ms / −0.3 reflection at
  // four periods, 7.6 ms, of the notes: −0.34 against 0.44⁴/4 = 0.01).
  const seen: Array<{ q: number; a: number }> = [];
  const isMultiple = (c: CoarseCandidate) => seen.some(({ q: t, a }) => {
    const k = Math.round(c.quefrency / t);
    if (!(k >= 1 && Math.abs(c.quefrency - k * t) <= Math.max(2, 0.005 * c.quefrency))) return false;
    return k === 1 || !(c.amplitude < 0 && -c.amplitude > (2 * Math.abs(a) ** k) / k);
  });
  const roots: number[] = [];
  for (let i = 0, looked = 0; i < order.length && looked < 3; i++) {
    // A peak that is a rahmonic of another is looked at from that one first, with the two scores
    // together (see rootOf); also when the root was looked at on its own before (the rules give
    // it the same verdict, only its score can differ).
    const root = rootOf(order[i]!, all, fs);
    if (root && !roots.some((q) => Math.abs(q - root.quefrency) <= 2)) {
      roots.push(root.quefrency);
      const r = await measure(root);
      if (r.present === true) {
        reflection = r;
        break;
      }
    }
    if (isMultiple(order[i]!) || roots.some((q) => Math.abs(q - order[i]!.quefrency) <= 2)) continue;
    seen.push({ q: order[i]!.quefrency, a: order[i]!.amplitude });
    looked++;
    const r = await measure(order[i]!);
    if (looked === 1) reflection = r;
    if (r.present === true) {
      reflection = r;
      break;
    }
    if (confidenceFromZ(order[i + 1]?.z ?? 0) < 0.5) break;
  }
  options.progress?.(0.75);
  releaseFitScratch(); // the reflection's transforms are done
  releaseSharedPlans(1 << 19); // and their plans (a 2^21-point one holds about 40 MB)
  reclaim();

  // --- Print-through.
  let printThrough = noPrintThrough();
  if (wantPt) {
    // The decimated copy (≈ 4 kHz, Float32: 58 MB per hour) is collected here, in one more
    // streaming pass, not during pass 1: kept through the reflection's refinement it added to
    // that stage's transforms (the peak of `check` on a 1-hour file). The copy is the same.
    const pt = new PrintThroughCollector(fs, source.frames);
    const rate = pt.rateHz;
    // A reflection found above is cancelled first, at the full rate, in the same pass
    // (cancelling on the decimated stream instead leaves aliased copies that pass for
    // print-through), so that its copy of the loud passages in the quiet ones does not pass for
    // print-through; multiples k·τ, where a slightly imperfect cancellation leaves a decaying
    // train, are left out of the search below. The kernels are shorter than for the final
    // cancellation: the search only looks below ≈ 2 kHz (8 taps are accurate to −60 dB there) and
    // the refinement mostly where the voice is (16 taps).
    let fullRateCancel: EchoKernel | null = null;
    let canceller: EchoCanceller | null = null;
    if (reflection.present && reflection.delaySeconds !== null && reflection.gain !== null) {
      const filterKernel = reflection.filter ? { offset: reflection.filter.firstTapSamples, taps: Float64Array.from(reflection.filter.taps) } : null;
      fullRateCancel = filterKernel ?? reflectionKernel(reflection.delaySeconds * fs, reflection.gain, 8);
      canceller = new EchoCanceller(filterKernel ?? reflectionKernel(reflection.delaySeconds * fs, reflection.gain, 4));
    }
    const mix = new MixScratch();
    for await (const block of source.blocks({ reusable: true })) {
      if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
      const mono = mixBlock(block, channel, mix);
      pt.push(canceller ? canceller.process(mono, mono) : mono);
    }
    const stream = pt.stream();
    const maxPt = Math.min(PRINT_THROUGH_RANGE_SECONDS[1], duration / 4);
    const exclude: Array<[number, number]> = [];
    if (reflection.present && reflection.delaySeconds !== null && reflection.gain !== null) {
      // Multiples k·τ while the cancellation's tail |g|^(k−1) still matters (at least 3).
      const a = Math.min(0.99, Math.abs(reflection.gain));
      const kMax = Math.max(3, Math.ceil(1 + Math.log(0.05) / Math.log(Math.max(a, 1e-3))));
      for (let k = 1; k <= kMax && k * reflection.delaySeconds <= maxPt + 0.01; k++) {
        exclude.push([(k * reflection.delaySeconds - 0.005) * rate, (k * reflection.delaySeconds + 0.005) * rate]);
      }
    }
    const found = searchPrintThrough(stream, rate, PRINT_THROUGH_RANGE_SECONDS[0] * rate, maxPt * rate, exclude);
    const pick = [found.pre, found.post].filter((c): c is LagCandidate => c !== null).sort((a, b) => b.z - a.z)[0];
    /** A coarse peak and its neighbours, the lags refined together. */
    const lagsOf = (c: LagCandidate) => [{ lag: c.lag, gain: c.gain, z: c.z }, ...(c.neighbours ?? [])];
    /** Judges a coarse peak from its full-rate refinements (its own first, then its neighbours'; none: not refined). */
    const judge = (cand: LagCandidate, refined: ReadonlyArray<RefinedLag | null>): PrintThroughResult => {
      let confidence = confidenceFromZ(cand.z);
      let lagSamples = cand.lag * pt.factor, gain = cand.gain, levelGain = cand.gain, refinedOk = false;
      let verdict: { present: boolean | null; reason: string } | null = null;
      let detail: PrintThroughResult['detail'] = null;
      if (refined.length) {
        // Print-through is a faint copy of the loud passages in the quiet ones (about −40 to
        // −65 dB, highs reduced): the full-rate look must confirm the copy the coarse search saw,
        // at its lag and strength, in every band, and at a level a tape can print.
        // The top coarse peak and its neighbours within ±35 ms are refined in one pass: on held chords
        // the copy's correlation repeats every period of the notes and the decimated top can sit
        // one period off. One period off, the harmonics still line up but the rest of the sound
        // (bow and breath noise, inharmonic partials) does not, and that lives mostly high up: so
        // a neighbour replaces the top only where it holds better at the full rate overall (z and
        // level) and in the 2–5 kHz band, by at least 0.5 dB there. Where no band that high has
        // programme (a held bass note) nothing tells the periods apart and the top stays.
        const coarse = lagsOf(cand);
        const confirmed = (i: number) => {
          const ri = refined[i];
          return ri && Math.abs(ri.lagSamples - coarse[i]!.lag * pt.factor) <= 1.5 * pt.factor && ri.gain !== 0 ? ri : null;
        };
        const top = confirmed(0);
        let r = top, coarseGain = cand.gain;
        for (let i = 1; top && i < coarse.length; i++) {
          const ri = confirmed(i);
          const hiTop = r!.bandGains[2], hi = ri?.bandGains[2];
          if (!ri || hiTop == null || hi == null || Math.sign(hi) !== Math.sign(ri.gain) || Math.sign(ri.gain) !== Math.sign(r!.gain)) continue;
          if (Math.abs(ri.z) > Math.abs(r!.z) && Math.abs(ri.gain) > Math.abs(r!.gain) && 20 * Math.log10(Math.abs(hi) / Math.abs(hiTop)) >= 0.5) {
            r = ri;
            coarseGain = coarse[i]!.gain;
            lagSamples = coarse[i]!.lag * pt.factor;
          }
        }
        const coarseDb = 20 * Math.log10(Math.max(1e-12, Math.abs(coarseGain)));
        if (!r) {
          verdict = { present: false, reason: 'the copy seen in the coarse search is not confirmed at the full rate' };
        } else {
          detail = { bandGains: r.bandGains, halves: r.halves, middle: r.middle };
          lagSamples = r.lagSamples;
          gain = r.gain;
          levelGain = r.levelGain;
          refinedOk = true;
          const db = 20 * Math.log10(Math.abs(gain));
          const when = `${(Math.abs(lagSamples) / fs).toFixed(2)} s ${lagSamples > 0 ? 'before' : 'after'}`;
          // Bands where the loud passages have energy (with one band only there is nothing to compare).
          const bands = r.bandGains.filter((b): b is number => b !== null);
          const agree = bands.filter((b) => Math.sign(b) === Math.sign(gain) && Math.abs(b) >= 0.25 * Math.abs(gain)).length;
          if (Math.sign(gain) !== Math.sign(coarseGain) || Math.abs(db - coarseDb) > 6) {
            verdict = { present: false, reason: `the copy ${when} reads ${db.toFixed(1)} dB at the full rate against ${coarseDb.toFixed(1)} dB in the coarse search: not one consistent copy` };
          } else if (db > PRINT_THROUGH_MAX_DB) {
            verdict = { present: false, reason: `a copy ${when} at ${db.toFixed(1)} dB is far too strong for print-through (about −40 to −65 dB): the programme repeating itself` };
          } else if (bands.length >= 2 && agree < bands.length) {
            verdict = { present: false, reason: `the likeness ${when} is not broadband (${agree} of ${bands.length} bands agree): a sound's own tail or a repeated note, not a copy from the tape` };
          } else if (ptBandsDisagree(r.bandGains) !== null) {
            verdict = { present: false, reason: `the copy ${when} ${ptBandsDisagree(r.bandGains)}: a copy from the tape has one level in every band (its highs at most somewhat lower), this is the programme's own likeness` };
          } else if (r.halves !== null && ptHalvesDisagree(r.halves, gain) !== null) {
            verdict = { present: false, reason: `the copy ${when} ${ptHalvesDisagree(r.halves, gain)}: a copy from the tape is there at one level through the file, this likeness is in one place (a sound or texture repeated)` };
          } else if (ptMiddleDisagrees(r.middle, gain) !== null) {
            verdict = { present: false, reason: `the copy ${when} ${ptMiddleDisagrees(r.middle, gain)}: a copy from the tape has one level under quiet and louder passages alike, this is a sound repeating itself as it fades` };
          } else if (db < PRINT_THROUGH_MIN_DB) {
            verdict = { present: null, reason: `a copy ${when} at ${db.toFixed(1)} dB is too faint to stand behind` };
          }
          // The top's own full-rate score caps it too: picking the best of several lags must not
          // make the finding more certain than the first look.
          confidence = Math.min(confidence, confidenceFromZ(r.z), confidenceFromZ(top!.z));
        }
      }
      return {
        present: verdict ? verdict.present : confidence >= 0.5,
        reason: verdict ? verdict.reason : null,
        delaySeconds: -lagSamples / fs,
        levelDb: levelGain !== 0 ? 20 * Math.log10(Math.abs(levelGain)) : null,
        gain,
        confidence: verdict ? Math.min(confidence, 0.49) : confidence,
        z: cand.z,
        refined: refinedOk,
        detail,
      };
    };
    if (pick) {
      // Refined only when the coarse score alone would report it (confidence ≥ 0.5).
      let refined: Array<RefinedLag | null> = [];
      if (confidenceFromZ(pick.z) >= 0.5) {
        reclaim();
        refined = await refinePrintThroughLags(source, channel, lagsOf(pick).map((c) => c.lag * pt.factor), found.masks, pt.factor, { signal: options.signal, cancel: fullRateCancel });
      }
      printThrough = judge(pick, refined);
    }
  }
  options.progress?.(1);
  return { sampleRateHz: fs, reflection, printThrough, rangeSeconds: [rangeLo, rangeHi] };
}

/** Cancellation kernel for a measured or given reflection (|g| clamped below 1). */
export function reflectionKernel(delaySamples: number, gain: number, halfTaps?: number): EchoKernel {
  const g = Math.max(-MAX_CANCEL_GAIN, Math.min(MAX_CANCEL_GAIN, gain));
  return singleEchoKernel(delaySamples, g, halfTaps);
}
