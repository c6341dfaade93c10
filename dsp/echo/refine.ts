/**
 * Sub-sample refinement of a single reflection: cancel with the current estimate, measure the
 * echo in the cancelled signal with the cancellation undone in the log domain, update, repeat.
 *
 * Why iterate. In a frame of N samples the echo y = x + g·x(t − τ) is not an exact product
 * X(ω)(1 + g·e^{−jωτ}): near the frame edges a sound's direct part and its echo are weighted
 * differently by the window, and for bursty material (speech: syllables, pauses) a burst near the
 * start of a frame can be seen with an "echo" stronger than itself. For strong echoes (|g| → 1)
 * this pulls a direct fit well below the true gain, and more so the larger τ/N. The cancelled
 * signal x̂ = y/(1 + g'·e^{−jωτ'}) has no echo when (τ', g') is right, so at the solution there is
 * nothing for the frames to distort: the measurement is exact there, and near it the error is
 * proportional to the residual. The update is therefore a root search on
 * G(τ', g') = fit(τ', g') − (τ', g'), done as a fixed-point step with a secant correction on g.
 *
 * Framing. Hann frames several times longer than τ (longer for strong echoes) keep edge effects
 * small; when such frames would not fit twice into the excerpt, the whole excerpt is analysed as
 * one rectangular frame (exact convolution except at its two ends).
 *
 * Every pass streams the excerpt from the source block by block; only the whole-excerpt mode keeps
 * the (bounded) excerpt in memory.
 */
import { type FftPlan, nextPowerOfTwo, sharedPlan } from '../core/fft.ts';
import { CancelledError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import { EchoCanceller } from './canceller.ts';
import { type FitResult, fitSingleEcho, fitWindows, scratchFor, undoCancellationCepstrum } from './fit.ts';
import { type EchoKernel, kernelCentroid, singleEchoKernel } from './kernel.ts';
import { LogSpectrumAccumulator } from './log-spectrum.ts';
import { MixScratch, mixBlock } from './mix.ts';
import { periodMultiple, strongestPitchPeak } from './evidence.ts';

export interface Excerpt {
  /** First frame analysed. */
  start: number;
  /** One past the last frame analysed. */
  end: number;
  /** Frames before `start` run through the canceller (to settle its state) but not analysed. */
  warmup: number;
}

export interface RefineOptions {
  /** Channel to analyse (0-based), or −1 for the mean of all channels. */
  channel: number;
  excerpt: Excerpt;
  /** Largest number of cancel-and-measure passes (default 10; most converge in 2–4). */
  maxPasses?: number;
  /** Scan the delay ±this many samples in the first pass (when the start is only roughly known). */
  searchSamples?: number;
  /** Leave out cells near the noise floor (default false; see levelGate). */
  gateNoise?: boolean;
  /** Frames to leave out (quietFrames(), for the framing in use), or null for none. */
  quiet?: { fftSize: number; frames: Uint8Array | null };
  /**
   * Leave out frames whose own periodicity puts a peak at this delay (samples;
   * lockedAwayFromTau): a note whose period is τ, τ/k or k·τ samples the ripple only at its crests and
   * pulls the fit. Unused when fewer than four frames would remain.
   */
  lockTau?: number;
  signal?: { readonly aborted: boolean };
  onPass?(pass: number, fit: FitResult, fftSize: number): void;
}

/**
 * Frames (Hann, N, hop N/2 from the excerpt's start) whose energy is more than `belowDb` under the
 * loudest frame's: pauses, digital silence and the ends of a recording. What they hold is mostly
 * not the programme — the edge of a sound, the ringing of a band-limited delay into digital
 * silence, rounding noise — and it does not carry the reflection as the model says: left in,
 * Festival speech with 0.35 s pauses and 13.1 ms / 0.35 read 0.323 (without the pauses 0.349; with
 * these frames left out 0.348, and resampled to 48 kHz 0.302 → 0.349).
 * The refinement leaves them out. Returns 1 per frame to leave out, or null when none is.
 */
export async function quietFrames(source: AudioSource, options: Pick<RefineOptions, 'channel' | 'excerpt' | 'signal'>, n: number, belowDb = 35): Promise<Uint8Array | null> {
  const { start, end } = options.excerpt;
  const hop = n / 2;
  const count = Math.max(0, Math.floor((end - start - n) / hop) + 1);
  if (count < 2) return null;
  // Energies of hop-long pieces; a frame is two of them (the Hann weighting is left aside: this
  // only ranks frames by level).
  const pieces = new Float64Array(count + 1);
  let at = 0;
  const mix = new MixScratch();
  for await (const block of source.blocks({ startFrame: start, endFrame: Math.min(end, start + (count + 1) * hop), reusable: true })) {
    if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
    const mono = mixBlock(block, options.channel, mix);
    for (let i = 0; i < mono.length; i++, at++) {
      const j = Math.floor(at / hop);
      if (j <= count) pieces[j]! += mono[i]! * mono[i]!;
    }
  }
  const e = new Float64Array(count);
  let top = 0;
  for (let j = 0; j < count; j++) {
    e[j] = pieces[j]! + pieces[j + 1]!;
    top = Math.max(top, e[j]!);
  }
  const limit = top * Math.pow(10, -belowDb / 10);
  const out = new Uint8Array(count);
  let any = false;
  for (let j = 0; j < count; j++) {
    if (e[j]! < limit) {
      out[j] = 1;
      any = true;
    }
  }
  return any ? out : null;
}

/** Largest |g| used for cancelling: keeps the inverse recursion well inside its stability region. */
export const MAX_CANCEL_GAIN = 0.98;

export interface Framing {
  /** Transform size. */
  fftSize: number;
  /** True: the whole excerpt is one rectangular frame (zero-padded to fftSize). */
  whole: boolean;
}

/**
 * Frames of N ≥ max(8, 8/(1 − |g|))·τ (≥ 4096) if two of them fit in the excerpt, else the whole
 * excerpt as one frame. Strong echoes need the longer frames: the cancelled signal's residual
 * decays like |g|^k over k·τ, and frame-edge effects scale with that length over N. Shorter frames
 * average the source's own structure (pitch, formants) better, so N is no longer than that. The
 * constants were chosen on synthetic voice (test/echo/accuracy.test.ts): with 32 instead of 8 the
 * delay error at g = 0.1 doubles, with 6/(1 − |g|) strong echoes at 23 ms lose 0.04 in gain.
 */
export function chooseFraming(delaySamples: number, gain: number, excerptLength: number): Framing {
  const ratio = Math.max(8, 8 / Math.max(0.02, 1 - Math.abs(gain)));
  const n = Math.max(4096, nextPowerOfTwo(Math.ceil(ratio * (delaySamples + 16))));
  if (2 * n <= excerptLength) return { fftSize: n, whole: false };
  return { fftSize: nextPowerOfTwo(Math.max(excerptLength, 2 * (delaySamples + 64))), whole: true };
}

/**
 * One pass: the cepstrum of the mean log spectrum of the excerpt after cancelling with `kernel`,
 * with the cancellation added back in the log domain (so it estimates the cepstrum of y), or,
 * with `undo` false, of the cancelled signal itself (what is left of the echo).
 */
export async function cancelledCepstrum(
  source: AudioSource,
  kernel: EchoKernel | null,
  framing: Framing,
  options: RefineOptions,
  plan: FftPlan = sharedPlan(framing.fftSize),
  undo = true,
  yGate: Float64Array | null = null,
  work?: PassArrays,
  estimate?: { delaySamples: number; gain: number },
): Promise<Float64Array | null> {
  const { start, end, warmup } = options.excerpt;
  const from = Math.max(0, start - warmup);
  const n = framing.fftSize;
  const canceller = kernel ? new EchoCanceller(kernel) : null;
  let meanLog: Float64Array;
  /** Whole framing: the excerpt's array, which then holds its mean log spectrum, then the cepstrum. */
  let whole: Float64Array | null = null;
  if (framing.whole) {
    const buf = work?.samples?.length === n ? work.samples.fill(0) : new Float64Array(n);
    if (work) work.samples = buf;
    whole = buf;
    let at = -(start - from);
    const mix = new MixScratch();
    for await (const block of source.blocks({ startFrame: from, endFrame: end, reusable: true })) {
      if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
      const mono = mixBlock(block, options.channel, mix);
      if (canceller) canceller.process(mono, mono);
      for (let i = 0; i < mono.length; i++, at++) if (at >= 0 && at < n) buf[at] = mono[i]!;
    }
    let energy = 0;
    for (let i = 0; i < n; i++) energy += buf[i]! * buf[i]!;
    if (!(energy > 1e-24 * n)) return null;
    // The spectrum's array is reused (up to 2^21 points here; fit.ts scratchFor; taken only
    // now, after the last await, since the scratch is shared by all callers in this thread).
    const spec = scratchFor(plan).spectrum;
    plan.realForward(buf, spec);
    // The mean log spectrum goes where the excerpt was (each pass fills it anew): 8 MB less at 2^21.
    meanLog = buf.subarray(0, n / 2 + 1);
    const floor = (energy / n) * 1e-20;
    for (let k = 0; k <= n / 2; k++) meanLog[k] = Math.log(spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2 + floor);
  } else {
    // The noise gate measured on y is used as it is, not moved through the cancellation, and
    // each cell is compared with it by its level averaged over one period of the echo's ripple
    // (N/τ bins; LogSpectrumAccumulator's gateSmoothBins). Either way of letting the ripple into
    // the choice (a threshold that ripples with log|1 + K|², or each cell's own rippled level)
    // selects cells by the very ripple being measured — the mean of the cells above a threshold
    // rises with the threshold — and biases the fit towards whatever ripple the floor carries:
    // on the demo reel (g = 0.42) cells chosen by their own level read 0.404, and after
    // cancelling, the hiss's inverse echo read as a reflection of −0.05; chosen by the smoothed
    // level, 0.406 and −0.008.
    const gate = yGate ?? undefined;
    const gateSmoothBins = gate && kernel ? Math.round(n / Math.max(1, kernelCentroid(kernel))) : 1;
    const quiet = options.quiet?.fftSize === n ? options.quiet.frames : null;
    const acceptAt = quiet ? (at: number) => !quiet[Math.round(at / (n / 2))] : undefined;
    const run = async (lockTau?: number, skipSilent = true): Promise<LogSpectrumAccumulator> => {
      const lock = lockTau !== undefined ? lockedByPeriod(n, lockTau, source.sampleRateHz) : null;
      // Which frames are locked is decided once, in the first pass, and kept for the later ones
      // (work.locked): decided again on each pass's cancelled signal, the set changed with the
      // estimate and the passes went round a cycle (2.9 ms / −0.45 on a voice: −0.460, −0.475,
      // −0.478, −0.471, −0.470, −0.478, … never settling).
      const memo = lock && work ? (work.locked ??= new Map<number, boolean>()) : null;
      let frameAt = -1;
      const acc = new LogSpectrumAccumulator({
        fftSize: n,
        hopSize: n / 2,
        skipSamples: start - from,
        gate,
        gateSmoothBins,
        accept: lock
          ? (fl) => {
              if (!memo) return lock.accept(fl);
              const known = memo.get(frameAt);
              if (known !== undefined) return known;
              const ok = lock.accept(fl);
              memo.set(frameAt, ok);
              return ok;
            }
          : undefined,
        acceptAt: skipSilent || memo
          ? (at: number) => {
              frameAt = at;
              return skipSilent && acceptAt ? acceptAt(at) : true;
            }
          : undefined,
      });
      const cancel = kernel ? new EchoCanceller(kernel) : null;
      const mix = new MixScratch();
      for await (const block of source.blocks({ startFrame: from, endFrame: end, reusable: true })) {
        if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
        const mono = mixBlock(block, options.channel, mix);
        if (cancel) cancel.process(mono, mono);
        acc.push(mono);
      }
      return acc;
    };
    let acc = await run(options.lockTau);
    if (options.lockTau !== undefined || acceptAt) {
      // Too few frames left: measure on more of them.
      const all = Math.max(1, Math.floor((end - start - n) / (n / 2)) + 1);
      if (acc.frames < Math.min(4, all) && options.lockTau !== undefined) acc = await run(undefined, true);
      if (acc.frames < Math.min(4, all)) acc = await run(undefined, false);
    }
    if (acc.frames === 0) return null;
    meanLog = acc.meanLogSpectrum();
  }
  // (undoCancellationCepstrum reads the mean log spectrum whole before it writes the cepstrum, so
  // in the whole framing the cepstrum can take the excerpt's array: 16 MB less at 2^21. It is
  // read before the next pass fills that array again.)
  const cep = whole ?? (work?.cepstrum?.length === n ? work.cepstrum : undefined);
  // Bins without programme (deadBins): in frames they were left out and filled from their
  // neighbours (LogSpectrumAccumulator); the whole excerpt's single transform is filled the
  // same way here (its rounding noise, added after the echo, carries the inverse ripple once
  // cancelled). Either way they then get the current estimate's exact ripple (fit.ts).
  let deadGate = framing.whole ? null : yGate;
  if (framing.whole && undo && estimate) {
    deadGate = deadBinsOfPeriodogram(meanLog);
    if (deadGate) fillGated(meanLog, deadGate);
  }
  const dead = undo && estimate && deadGate ? { gate: deadGate, ...estimate } : null;
  if (work) work.reach = dead ? programmeReach(deadGate!) : null;
  const out = undoCancellationCepstrum(meanLog, undo ? kernel : null, plan, cep, dead);
  if (work && !whole) work.cepstrum = out;
  return out;
}

/**
 * Whether a frame's own period puts a peak at τ, judged without the quefrencies within 3 samples
 * of τ: the frame's strongest detrended peak over 1–40 ms away from τ (the detrending and the
 * 0.1 threshold of evidence.ts, pitchLock) lies at τ/k or k·τ, k = 2…8 (a note of period τ
 * shows its second rahmonic at 2τ).
 */
export function lockedAwayFromTau(c: Float64Array, tau: number, fs: number): boolean {
  const peak = strongestPitchPeak(c, fs, tau, 3);
  return peak !== null && peak.detrended > 0.1 && periodMultiple(peak.quefrency, tau) !== 0;
}

/**
 * Frames to keep when leaving out those whose own period puts a peak at τ, judged on the frames
 * of the signal cancelled with the current estimate, without looking at the cepstrum near τ
 * (lockedAwayFromTau). What is left of the echo in a cancelled frame sits at τ, so any test that
 * reads the frame's peak at τ chooses frames by the very residual being measured: leaving out
 * those where it came out high takes the rest low. Asking for the note's positive second rahmonic
 * as well (evidence.ts, pitchLock) reduced that but did not remove it: on Festival voices 2.9 ms /
 * −0.45 read −0.454, 13.2 ms / 0.65 read 0.642, 37.7 ms / −0.45 read −0.455, and a trumpet's
 * 4.1 ms / 0.5 read 0.492; with τ left out of the test, −0.447, 0.653, −0.4503 and 0.4955 (a
 * voice at 30.2 ms / 0.5: 0.4999 → 0.5010). A frame of period τ still goes: its strongest peak
 * away from τ is its second rahmonic at 2τ.
 */
export function lockedByPeriod(n: number, tau: number, fs: number): { accept(frameLog: Float64Array): boolean } {
  const plan = sharedPlan(n);
  const half = new Float64Array(n + 2), cep = new Float64Array(n);
  return {
    accept(fl: Float64Array): boolean {
      for (let k = 0; k <= n / 2; k++) {
        half[2 * k] = fl[k]!;
        half[2 * k + 1] = 0;
      }
      plan.realInverse(half, cep);
      return !lockedAwayFromTau(cep, tau, fs);
    },
  };
}

/**
 * Arrays one caller's successive passes reuse (each pass's result replaces the last): the
 * excerpt (whole framing; then its mean log spectrum) and the cepstrum, up to 2^21 points (16 MB)
 * each.
 */
export interface PassArrays {
  samples?: Float64Array;
  cepstrum?: Float64Array;
  /** How much of the fit the bins with programme carry (programmeReach), or null when all do. */
  reach?: { gain: number; delay: number } | null;
  /** Lock decisions by frame start (frames whose own period lands on lockTau), from the first pass. */
  locked?: Map<number, boolean>;
}

/**
 * With the empty bins holding the current estimate's ripple (fit.ts, DeadBinEstimate), a fit
 * reads estimate + w·(truth − estimate): the bins with programme pull it by their share of the
 * fit's sensitivity. The gain's sensitivity is the same in every bin (the ripple's amplitude),
 * so w is their share of the bins; the delay's grows with frequency (the ripple's phase is ωτ),
 * so w is their share of Σk². The refinement divides each step by its w, which makes it the step
 * a fit over the bins with programme alone would take (on 16 kHz speech at 44.1 kHz, a third of
 * the band, the delay's w is about 1/27 and without it six passes left 0.9 read as 0.874).
 */
export function programmeReach(gate: Float64Array): { gain: number; delay: number } {
  let bins = 0, live = 0, k2 = 0, liveK2 = 0;
  for (let k = 1; k < gate.length - 1; k++) {
    bins++;
    k2 += k * k;
    if (gate[k] !== Infinity) {
      live++;
      liveK2 += k * k;
    }
  }
  return { gain: Math.max(1 / 64, live / Math.max(1, bins)), delay: Math.max(1 / 1024, liveK2 / Math.max(1, k2)) };
}

const clampCancel = (g: number) => Math.max(-MAX_CANCEL_GAIN, Math.min(MAX_CANCEL_GAIN, g));

/**
 * Noise gate for the refinement frames, measured on y with the same framing: per band, the 20th
 * percentile of the cell levels + 20 dB (LogSpectrumAccumulator.noiseGate). Cells under it are
 * left out of the averages. Why: noise added after the reflection (tape hiss, mains hum) carries
 * no echo, and once the signal is cancelled it carries the *inverse* ripple; left in, it pulls
 * the fit towards a gain between 0 and the true one (the demo reel, whose voice alone has the
 * reflection, read g ≈ 0.035 instead of 0.42). With the gate the averages come from cells where
 * the signal stands well above the noise. It is only used when the quiet frames' echo disagrees
 * with the loud frames' (quietAndLoudGains): a level gate also selects cells by their level, which
 * costs accuracy on material whose noise does carry the echo.
 */
export async function levelGate(source: AudioSource, framing: Framing, options: RefineOptions): Promise<Float64Array | null> {
  if (framing.whole) return null;
  const { start, end } = options.excerpt;
  const n = framing.fftSize;
  const acc = new LogSpectrumAccumulator({ fftSize: n, hopSize: n / 2, collectLevels: true });
  const mix = new MixScratch();
  for await (const block of source.blocks({ startFrame: start, endFrame: end, reusable: true })) {
    if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
    acc.push(mixBlock(block, options.channel, mix));
  }
  return acc.noiseGate();
}

/**
 * Bins the programme never reaches: mean log power of y more than 70 dB under the level that 5 %
 * of the bins exceed (the empty top of a resampled or low-passed recording). There a file holds
 * only its own rounding noise (about 98 dB under full scale at 16 bits, 144 dB at 24 bits), added
 * after any reflection: left in, it carries no ripple and pulls the gain towards 0 (Festival
 * speech resampled from 16 to 44.1 kHz, 24 bits, 17.5 ms / 0.9: 0.49–0.53). Their gate is +∞:
 * they are left out of the averages, meanLogSpectrum fills them from the nearest bins that have
 * programme, and the cancellation added back gives them the model's ripple. Null when every bin
 * is reached.
 */
export function deadBins(meanLog: Float64Array, withEdges = true): Float64Array | null {
  const sorted = Float64Array.from(meanLog).sort();
  const top = sorted[Math.floor(0.95 * (sorted.length - 1))]!;
  const limit = top - (70 * Math.LN10) / 10;
  let dead = 0;
  const gate = new Float64Array(meanLog.length);
  for (let k = 0; k < meanLog.length; k++) {
    if (meanLog[k]! < limit) {
      gate[k] = Infinity;
      dead++;
    } else gate[k] = -Infinity;
  }
  // The steep edge down into an empty band (a resampler's transition, some 40 dB within 1–2 %
  // of the band) is left out with it: kept, the cepstrum rings at that edge's frequency, a
  // ±0.01 wobble of period fs/f_edge samples that pulled 3 ms reflections on 16 kHz speech at
  // 44.1 kHz 0.23 sample off. Walking down from each empty run, bins go too while the level
  // (over ±4 bins) is more than 15 dB under the level 1 % of the band lower (a programme's own
  // roll-off is far gentler).
  if (dead > 0 && withEdges) {
    const w = Math.max(4, Math.round(0.01 * meanLog.length));
    const drop = (15 * Math.LN10) / 10;
    const level = (k: number) => {
      let s = 0, c = 0;
      for (let j = Math.max(0, k - 4); j <= Math.min(meanLog.length - 1, k + 4); j++) {
        s += meanLog[j]!;
        c++;
      }
      return s / c;
    };
    for (let k = meanLog.length - 1; k > 0; k--) {
      if (gate[k] === Infinity && gate[k - 1] !== Infinity) {
        for (let j = k - 1; j > w && gate[j] !== Infinity && level(j) < level(j - w) - drop; j--) {
          gate[j] = Infinity;
          dead++;
        }
      }
    }
  }
  // At least an eighth of the band must hold programme (16 kHz speech resampled to 96 kHz has a
  // sixth; its empty five sixths left in read 13 ms / −0.45 as −0.24).
  return dead > 0 && dead <= (7 * meanLog.length) / 8 ? gate : null;
}

/**
 * Moves each run of bins with a +∞ gate by one constant so that it starts at the level of the
 * bin below it (its shape, and any ripple it holds, kept).
 */
export function shiftGated(logPower: Float64Array, gate: Float64Array): void {
  const m = logPower.length;
  for (let k = 0; k < m; ) {
    if (gate[k] !== Infinity) {
      k++;
      continue;
    }
    let e = k;
    while (e < m && gate[e] === Infinity) e++;
    let mean = 0;
    for (let j = k; j < e; j++) mean += logPower[j]!;
    mean /= e - k;
    const to = k > 0 ? logPower[k - 1]! : e < m ? logPower[e]! : mean;
    for (let j = k; j < e; j++) logPower[j] = logPower[j]! - mean + to;
    k = e;
  }
}

/** Replaces the bins with a +∞ gate by linear interpolation between the nearest others (constant beyond the ends). */
export function fillGated(logPower: Float64Array, gate: Float64Array): void {
  const m = logPower.length;
  let prev = -1;
  for (let k = 0; k <= m; k++) {
    if (k < m && gate[k] === Infinity) continue;
    // Bins prev+1 … k−1 are gated.
    if (k - prev > 1) {
      const a = prev >= 0 ? logPower[prev]! : k < m ? logPower[k]! : 0;
      const b = k < m ? logPower[k]! : a;
      for (let j = prev + 1; j < k; j++) logPower[j] = prev >= 0 && k < m ? a + ((b - a) * (j - prev)) / (k - prev) : prev >= 0 ? a : b;
    }
    prev = k;
  }
}

/**
 * deadBins for one whole-excerpt periodogram, whose cells scatter by several dB: the log power
 * is first averaged over 65 neighbouring bins (the 70 dB margin is far larger than what is left
 * of the scatter).
 */
export function deadBinsOfPeriodogram(logPower: Float64Array): Float64Array | null {
  const m = logPower.length, half = 32;
  const smooth = new Float64Array(m);
  let sum = 0, count = 0;
  for (let k = 0; k < Math.min(m, half); k++) {
    sum += logPower[k]!;
    count++;
  }
  for (let k = 0; k < m; k++) {
    const add = k + half, drop = k - half - 1;
    if (add < m) {
      sum += logPower[add]!;
      count++;
    }
    if (drop >= 0) {
      sum -= logPower[drop]!;
      count--;
    }
    smooth[k] = sum / count;
  }
  return deadBins(smooth);
}

async function deadBinGate(source: AudioSource, framing: Framing, options: RefineOptions, delaySamples?: number): Promise<Float64Array | null> {
  if (framing.whole) return null;
  const { start, end } = options.excerpt;
  const n = framing.fftSize;
  const acc = new LogSpectrumAccumulator({ fftSize: n, hopSize: n / 2 });
  const mix = new MixScratch();
  for await (const block of source.blocks({ startFrame: start, endFrame: end, reusable: true })) {
    if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
    acc.push(mixBlock(block, options.channel, mix));
  }
  if (!acc.frames) return null;
  const meanLog = acc.meanLogSpectrum();
  // Judged on y's level averaged over one period of the echo's ripple (N/τ bins), not bin by
  // bin: y's own ripple dips each notch up to 20·log10((1 + g)/(1 − g)) dB (25 dB at g = 0.9)
  // under its crests, so near the threshold the notches went out and the crests stayed, the
  // bins were chosen by the very ripple being measured, and the gain came out low: from the
  // truth, a trombone's chords at 30.9 ms / 0.9 read 0.847 (0.899 with the smoothed level), a
  // picked bass at 4.1 ms / 0.9 read 0.807 (0.869).
  const period = delaySamples ? Math.round(n / Math.max(1, delaySamples)) : 1;
  return deadBins(period > 1 ? smoothOverBins(meanLog, period) : meanLog);
}

/** Mean of log power over `width` neighbouring bins (centred; fewer at the ends). */
export function smoothOverBins(logPower: Float64Array, width: number): Float64Array {
  const m = logPower.length, half = Math.floor(width / 2);
  const prefix = new Float64Array(m + 1);
  for (let k = 0; k < m; k++) prefix[k + 1] = prefix[k]! + logPower[k]!;
  const out = new Float64Array(m);
  for (let k = 0; k < m; k++) {
    const a = Math.max(0, k - half), b = Math.min(m - 1, k + half);
    out[k] = (prefix[b + 1]! - prefix[a]!) / (b - a + 1);
  }
  return out;
}

/**
 * The noise gate (when asked for) and the dead-bin gate together: a cell must pass both. With
 * `delaySamples` the empty bins are found on the level smoothed over one period of that delay's
 * ripple (deadBinGate).
 */
export async function combinedGate(source: AudioSource, framing: Framing, options: RefineOptions, noise: boolean, delaySamples?: number): Promise<Float64Array | null> {
  const dead = await deadBinGate(source, framing, options, delaySamples);
  const level = noise ? await levelGate(source, framing, options) : null;
  if (!dead) return level;
  if (!level) return dead;
  return level.map((v, k) => Math.max(v, dead[k]!));
}

/**
 * The echo's gain at a known delay, from y without cancellation, in the quietest fifth of the
 * frames (the noise floor, in pauses) and in the loudest fifth (the programme). When the floor
 * carries the echo (room noise that was reflected too) the two agree; when the floor was added
 * after the reflection (tape hiss, hum) it reads close to 0, and after a cancellation it reads
 * the inverse echo — then the gated refinement is the right one for the programme.
 */
export async function quietAndLoudGains(
  source: AudioSource,
  delaySamples: number,
  gain: number,
  options: RefineOptions,
): Promise<{ quiet: number; loud: number } | null> {
  const length = options.excerpt.end - options.excerpt.start;
  // Frames as short as for a weak echo (8τ): this only has to tell a floor that shares the echo
  // from one that does not, and the quietest frames have to fit inside the pauses.
  const framing = chooseFraming(delaySamples, 0, length);
  if (framing.whole) return null;
  const n = framing.fftSize, hop = n / 2;
  const { start, end } = options.excerpt;
  // Frame energies first (no transforms), for the 20th and 80th percentile thresholds.
  const energies: number[] = [];
  let acc = 0, filled = 0;
  const ring = new Float64Array(n);
  let pos = 0;
  const mix = new MixScratch();
  for await (const block of source.blocks({ startFrame: start, endFrame: end, reusable: true })) {
    const mono = mixBlock(block, options.channel, mix);
    for (let i = 0; i < mono.length; i++) {
      ring[pos] = mono[i]! * mono[i]!;
      pos = (pos + 1) % n;
      filled++;
      if (filled >= n && (filled - n) % hop === 0) {
        acc = 0;
        for (let j = 0; j < n; j++) acc += ring[j]!;
        energies.push(acc);
      }
    }
  }
  if (energies.length < 10) return null;
  const sorted = [...energies].sort((a, b) => a - b);
  const quietMax = sorted[Math.floor(0.2 * sorted.length)]!, loudMin = sorted[Math.floor(0.8 * sorted.length)]!;
  if (!(quietMax > 0)) return null;
  const plan = sharedPlan(n);
  // Σ over the half spectrum ≈ (N/2)·Σ(w·x)² ≈ (N/2)·(3/8)·Σx² for a Hann frame (Parseval);
  // 20 % slack for the window's weighting of an uneven frame.
  const frameEnergy = (l: Float64Array) => {
    let e = 0;
    for (let k = 0; k < l.length; k++) e += Math.exp(l[k]!);
    return e / ((n / 2) * 0.375);
  };
  const quiet = new LogSpectrumAccumulator({ fftSize: n, hopSize: hop, accept: (l) => frameEnergy(l) <= quietMax * 1.2 });
  const loud = new LogSpectrumAccumulator({ fftSize: n, hopSize: hop, accept: (l) => frameEnergy(l) >= loudMin * 0.8 });
  for await (const block of source.blocks({ startFrame: start, endFrame: end, reusable: true })) {
    const mono = mixBlock(block, options.channel, mix);
    quiet.push(mono);
    loud.push(mono);
  }
  if (quiet.frames < 3 || loud.frames < 3) return null;
  const fit = (a: LogSpectrumAccumulator) =>
    fitSingleEcho(undoCancellationCepstrum(a.meanLogSpectrum(), null, plan), n, { delaySamples, gain: gain * 0.5 }, { windows: fitWindows(delaySamples, gain, n) }).gain;
  return { quiet: fit(quiet), loud: fit(loud) };
}

/**
 * Refines (delay, gain) from a starting estimate. Returns the last fit (made on the signal
 * cancelled with the previous estimate), the framing used and the number of passes.
 */
export async function refineSingleEcho(
  source: AudioSource,
  initial: { delaySamples: number; gain: number },
  options: RefineOptions,
): Promise<{ fit: FitResult; framing: Framing; passes: number }> {
  const length = options.excerpt.end - options.excerpt.start;
  let framing = chooseFraming(initial.delaySamples, initial.gain, length);
  let plan = sharedPlan(framing.fftSize);
  const gateOn = options.gateNoise ?? false;
  const leaveQuiet = async (f: Framing) => {
    if (!f.whole && options.quiet?.fftSize !== f.fftSize) options = { ...options, quiet: { fftSize: f.fftSize, frames: await quietFrames(source, options, f.fftSize) } };
  };
  await leaveQuiet(framing);
  let gate = await combinedGate(source, framing, options, gateOn, initial.delaySamples);
  let work: PassArrays = {}; // each pass's data is used before the next pass starts
  const maxPasses = options.maxPasses ?? 10;
  let tau = initial.delaySamples, g = initial.gain;
  let fit: FitResult | null = null;
  let prev: { g: number; measured: number } | null = null;
  let passes = 0;
  for (let pass = 0; pass < maxPasses; pass++) {
    const f = chooseFraming(tau, g, length);
    if (f.fftSize !== framing.fftSize || f.whole !== framing.whole) {
      framing = f;
      plan = sharedPlan(f.fftSize);
      work = {}; // the other framing's arrays go
      prev = null; // a different framing measures a slightly different G
      await leaveQuiet(f);
      gate = await combinedGate(source, framing, options, gateOn, tau);
    }
    const gc = clampCancel(g);
    const kernel = singleEchoKernel(tau, gc);
    const data = await cancelledCepstrum(source, kernel, framing, options, plan, true, gate, work, { delaySamples: tau, gain: gc });
    passes++;
    if (!data) break;
    const windows = fitWindows(tau, g, framing.fftSize);
    fit = fitSingleEcho(data, framing.fftSize, { delaySamples: tau, gain: g }, { windows, searchSamples: pass === 0 ? (options.searchSamples ?? 0) : 0 });
    if (work.reach) {
      // The bins with programme carry only part of the fit (programmeReach): the full step.
      // (Divided by a small share, a step can run far off: no more than a sample per pass, or
      // the first pass's search span. Unbounded, the noise-gated refinement of a sub-millisecond
      // peak on a spoken prompt went to −18 samples and stopped the analysis with an error.)
      const span = Math.max(1, pass === 0 ? (options.searchSamples ?? 0) : 0);
      const step = Math.max(-span, Math.min(span, (fit.delaySamples - tau) / work.reach.delay));
      fit = { ...fit, gain: gc + (fit.gain - gc) / work.reach.gain, delaySamples: tau + step };
    }
    options.onPass?.(pass, fit, framing.fftSize);
    // Fixed-point step on τ; secant step on g for G(g') = fit(g') − g' = 0.
    let nextG = fit.gain;
    if (prev && Math.abs(gc - prev.g) > 1e-6) {
      const slope = (fit.gain - prev.measured) / (gc - prev.g);
      if (Number.isFinite(slope) && slope < 0.9 && slope > -3) {
        const secant = gc + (fit.gain - gc) / (1 - slope);
        if (Math.abs(secant - fit.gain) < 0.15) nextG = secant;
      }
    }
    prev = { g: gc, measured: fit.gain };
    const dTau = Math.abs(fit.delaySamples - tau), dG = Math.abs(nextG - g);
    tau = fit.delaySamples;
    g = Math.max(-0.99, Math.min(0.99, nextG));
    if (pass >= 1 && dTau < 0.004 && dG < 5e-4) break;
  }
  if (!fit) {
    fit = { delaySamples: tau, gain: g, rss: 0, points: 0, delayStdSamples: Infinity, gainStd: Infinity, windows: [] };
  }
  return { fit: { ...fit, delaySamples: tau, gain: g }, framing, passes };
}
