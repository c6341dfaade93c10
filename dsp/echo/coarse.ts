/**
 * First, streaming pass of the reflection search: averaged log spectra at up to three frame
 * lengths, each covering its own band of delays, then a cepstral peak search in each.
 *
 * A frame must be several times longer than the delays it looks for (the echo has to land inside
 * the same frame), but long frames average the source's own structure (pitch rahmonics of a
 * voice, at 3–40 ms) less well. So short delays are searched in short frames and long delays in
 * long ones, each scale over lags up to a quarter of its frame:
 *   A: ≈ 85 ms frames (4096 at 48 kHz), lags from the range minimum to N_A/4;
 *   B: 4·N_A, lags N_A/4 … N_B/4;
 *   C: the next power of two ≥ 4·(longest lag), lags N_B/4 … longest.
 * On long files each scale analyses every k-th frame so that it handles at most a fixed number of
 * frames (the statistics of a few minutes are more than enough for a coarse search).
 */
import { nextPowerOfTwo, sharedPlan } from '../core/fft.ts';
import { cepstrumOf, LogSpectrumAccumulator } from './log-spectrum.ts';
import { deadBins, shiftGated } from './refine.ts';
import { type CepstralPeak, CepstrumScorer } from './search.ts';

export interface CoarseScale {
  fftSize: number;
  /** Lags searched in this scale, in samples: [lagLo, lagHi]. */
  lagLo: number;
  lagHi: number;
  accumulator: LogSpectrumAccumulator;
}

export interface CoarseCandidate extends CepstralPeak {
  /** Index of the scale that found it. */
  scale: number;
}

/** Frame budgets per scale (frames actually analysed on a long file). */
const BUDGET = [2000, 240, 48] as const;

export class CoarseEchoSearch {
  readonly scales: CoarseScale[] = [];
  readonly minLag: number;
  readonly maxLag: number;

  /**
   * @param minLag, maxLag  delay range in samples
   * @param totalFrames     expected input length, for the frame strides
   */
  constructor(sampleRateHz: number, minLag: number, maxLag: number, totalFrames: number) {
    this.minLag = minLag;
    this.maxLag = maxLag;
    const nA = Math.max(256, nextPowerOfTwo(Math.round(0.085 * sampleRateHz)));
    const nB = 4 * nA;
    const nC = nextPowerOfTwo(Math.ceil(4 * maxLag));
    const plan: Array<[number, number, number, number]> = [];
    if (minLag <= nA / 4) plan.push([nA, minLag, Math.min(maxLag, nA / 4), BUDGET[0]]);
    if (maxLag > nA / 4 && minLag <= nB / 4) plan.push([nB, Math.max(minLag, nA / 4), Math.min(maxLag, nB / 4), BUDGET[1]]);
    if (maxLag > nB / 4) plan.push([Math.max(nC, 2 * nB), Math.max(minLag, nB / 4), maxLag, BUDGET[2]]);
    for (const [n, lo, hi, budget] of plan) {
      const hop = n / 2;
      const frames = Math.max(1, Math.floor((totalFrames - n) / hop) + 1);
      const stride = Math.max(1, Math.ceil(frames / budget));
      this.scales.push({
        fftSize: n,
        lagLo: lo,
        lagHi: hi,
        accumulator: new LogSpectrumAccumulator({ fftSize: n, hopSize: hop, frameStride: stride, keepHalves: true }),
      });
    }
  }

  /** Longest frame used (the input must be at least this long). */
  get longestFrame(): number {
    return Math.max(0, ...this.scales.map((s) => s.fftSize));
  }

  push(samples: Float64Array): void {
    for (const s of this.scales) s.accumulator.push(samples);
  }

  /**
   * Cepstrum of each scale (null when it saw no frames). The bins the programme never reaches
   * (refine.ts deadBins: the empty top of a resampled recording) are moved up as a whole to
   * join the last bins that have programme: the edge between programme and rounding noise,
   * some 100 dB (23 in natural-log units) within a few bins, rings through the cepstrum like
   * 23/(π·q) and made the noise reference at 1–5 ms several times what the programme gives
   * (16 kHz speech at 44.1 kHz: a 2.93 ms / −0.45 reflection at z 5.8 under the edge's
   * ringing). Their own ripple is kept: where the rounding noise was in the recording before
   * the reflection it carries it (filling them flat instead took a 13 ms / −0.45 reflection on
   * such a file at 96 kHz from z 21.9 to 4.7).
   */
  cepstra(): Array<Float64Array | null> {
    // The input has ended: the frame buffers go first (they are the largest arrays here).
    for (const s of this.scales) s.accumulator.release();
    const largest = this.longestFrame;
    const half = new Float64Array(largest + 2), work = new Float64Array(largest);
    this.#empty = [];
    return this.scales.map((s, i) => {
      if (s.accumulator.frames === 0) {
        this.#empty[i] = null;
        return null;
      }
      const meanLog = s.accumulator.meanLogSpectrum();
      this.#empty[i] = deadBins(meanLog, false);
      return cepstrumOf(this.#filled(meanLog, i), sharedPlan(s.fftSize), { half, work });
    });
  }

  /** Per scale, the empty bins found by cepstra() (a +∞ gate), or null. */
  #empty: Array<Float64Array | null> = [];

  #filled(meanLog: Float64Array, scale: number): Float64Array {
    const gate = this.#empty[scale];
    if (gate) shiftGated(meanLog, gate);
    return meanLog;
  }

  /**
   * The best peaks of every scale, `perScale` each, with their scale index, ranked by a
   * split-half score: each peak is also scored in the averages of the even and of the odd frames
   * (two independent halves of the material) and its z becomes min(z, √2·min(z_even, z_odd)),
   * with a half that disagrees in sign counting as 0. An echo is in every frame and keeps its
   * score; a coincidence in the source (two similar syllables a fixed time apart inside one
   * long frame) is in one half and loses it.
   */
  candidates(cepstra: Array<Float64Array | null>, perScale = 3, exclude: ReadonlyArray<[number, number]> = []): CoarseCandidate[] {
    const out: CoarseCandidate[] = [];
    const largest = this.longestFrame;
    const scratch = { log: new Float64Array(largest / 2 + 1), half: new Float64Array(largest + 2), into: new Float64Array(largest), work: new Float64Array(largest) };
    this.scales.forEach((s, i) => {
      const c = cepstra[i];
      if (!c) return;
      const scorer = new CepstrumScorer(c, s.lagLo, s.lagHi);
      if (scorer.hi <= scorer.lo) return;
      const found = scorer.candidates({ count: perScale + 3, exclude });
      // One frame only (the long-delay scale on a file of a few seconds): there are no halves
      // to compare, so the peak keeps its score and the frame-by-frame look (evidence.ts,
      // with frames a few τ long) decides. Scoring it 0 hid a 148 ms / 0.9 reflection on a
      // 3.9 s bass note behind the note's own 15.3 ms period.
      const bothHalves = s.accumulator.hasBothHalves;
      const zHalf = found.map((p) => (bothHalves ? Infinity : s.accumulator.frames <= 1 ? p.z / Math.SQRT2 : 0));
      // The halves one after the other, in the same arrays (2^20-point cepstra at 384 kHz).
      for (const which of [0, 1] as const) {
        const m = s.accumulator.halfMeanLogSpectrum(which, scratch.log);
        if (!m) continue;
        const hc = cepstrumOf(this.#filled(m, i), sharedPlan(s.fftSize), scratch);
        found.forEach((p, j) => {
          const qi = Math.floor(p.quefrency);
          const frac = p.quefrency - qi;
          // A scorer around the candidate only (its noise reference is local anyway).
          const h = new CepstrumScorer(hc, qi - 2 * CepstrumScorer.BLOCK, qi + 2 * CepstrumScorer.BLOCK);
          const a = h.amplitudeAt(qi, frac).amplitude;
          zHalf[j] = Math.min(zHalf[j]!, (Math.sign(p.amplitude) * a) / h.noiseAt(qi));
        });
      }
      found.forEach((p, j) => {
        const z = Math.max(0, Math.min(p.z, Math.SQRT2 * zHalf[j]!));
        out.push({ ...p, z, scale: i });
      });
    });
    // Keep the best `perScale` of each scale after re-scoring.
    const kept: CoarseCandidate[] = [];
    for (let i = 0; i < this.scales.length; i++) {
      kept.push(...out.filter((c) => c.scale === i).sort((a, b) => b.z - a.z).slice(0, perScale));
    }
    return kept;
  }
}
