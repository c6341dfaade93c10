/**
 * Programme loudness per ITU-R BS.1770-4 (10/2015), Annex 1, and loudness range per EBU Tech 3342.
 *
 * Streaming: each channel is K-weighted (k-weighting.ts) and its energy integrated over 100 ms
 * sub-blocks; only those sub-block energies are kept (36 000 numbers per channel for an hour).
 * Afterwards:
 *  - gating blocks are 400 ms long with 75 % overlap (four consecutive sub-blocks);
 *  - block loudness l_j = −0.691 + 10·log10 Σ_i G_i·z_ij (z = mean square of the weighted channel);
 *  - absolute gate −70 LKFS; relative gate 10 LU below the loudness of the blocks that passed the
 *    absolute gate; integrated loudness = −0.691 + 10·log10 Σ_i G_i·mean_j(z_ij) over the blocks
 *    passing both gates;
 *  - momentary = 400 ms, short-term = 3 s windows (EBU R 128), evaluated every 100 ms;
 *  - loudness range (EBU Tech 3342): short-term values every 100 ms, absolute gate −70 LUFS,
 *    relative gate −20 LU, then the spread between the 10th and the 95th percentile.
 *
 * Channel weights G (BS.1770 Table 3): 1.0 for left, right, centre; 1.41 for the surrounds; the LFE
 * is left out. Channel order is taken as the WAV/SMPTE order L R C LFE Ls Rs for 6 channels and
 * L R C Ls Rs for 5; any other count weighs every channel 1.0.
 */
import { powerToDb } from '../units.ts';
import { KWeightingFilter } from './k-weighting.ts';

export const ABSOLUTE_GATE_LUFS = -70;
export const RELATIVE_GATE_LU = -10;
export const LRA_RELATIVE_GATE_LU = -20;

export function channelWeights(channelCount: number): number[] {
  if (channelCount === 5) return [1, 1, 1, 1.41, 1.41];
  if (channelCount === 6) return [1, 1, 1, 0, 1.41, 1.41];
  return Array.from({ length: channelCount }, () => 1);
}

export interface LoudnessResult {
  /** Integrated (gated) loudness, LUFS; −Infinity when no block passes the gates. */
  integratedLufs: number;
  /** Highest momentary (400 ms) loudness, LUFS. */
  maxMomentaryLufs: number;
  /** Highest short-term (3 s) loudness, LUFS. */
  maxShortTermLufs: number;
  /** Loudness range (EBU Tech 3342), LU; 0 when fewer than two short-term values pass the gates. */
  loudnessRangeLu: number;
}

const toLufs = (weightedMeanSquare: number): number => -0.691 + powerToDb(weightedMeanSquare);

export class LoudnessMeter {
  readonly #filters: (KWeightingFilter | null)[];
  readonly #weights: number[];
  readonly #subBlockFrames: number;
  /** Weighted energy Σ_i G_i Σ y² per 100 ms sub-block (channels already combined). */
  #energy: Float64Array;
  /** Frames in each sub-block (the last may be partial). */
  #count: Float64Array;
  #subBlocks = 0;
  #accEnergy = 0;
  #accFrames = 0;

  constructor(readonly sampleRateHz: number, channelCount: number, expectedFrames = 0) {
    this.#weights = channelWeights(channelCount);
    this.#filters = this.#weights.map((g) => (g > 0 ? new KWeightingFilter(sampleRateHz) : null));
    this.#subBlockFrames = Math.max(1, Math.round(sampleRateHz / 10));
    const n = Math.ceil(expectedFrames / this.#subBlockFrames) + 2;
    this.#energy = new Float64Array(Math.max(16, n));
    this.#count = new Float64Array(Math.max(16, n));
  }

  /** Feeds one planar block (any length). */
  push(block: readonly Float64Array[]): void {
    const len = block[0]!.length;
    let at = 0;
    while (at < len) {
      const take = Math.min(len - at, this.#subBlockFrames - this.#accFrames);
      let e = 0;
      for (let c = 0; c < this.#filters.length; c++) {
        const f = this.#filters[c];
        if (f) e += this.#weights[c]! * f.energy(block[c]!, at, at + take);
      }
      this.#accEnergy += e;
      this.#accFrames += take;
      at += take;
      if (this.#accFrames === this.#subBlockFrames) this.#closeSubBlock();
    }
  }

  #closeSubBlock(): void {
    if (this.#subBlocks === this.#energy.length) {
      const grow = (a: Float64Array) => {
        const b = new Float64Array(a.length * 2);
        b.set(a);
        return b;
      };
      this.#energy = grow(this.#energy);
      this.#count = grow(this.#count);
    }
    this.#energy[this.#subBlocks] = this.#accEnergy;
    this.#count[this.#subBlocks] = this.#accFrames;
    this.#subBlocks++;
    this.#accEnergy = 0;
    this.#accFrames = 0;
  }

  /**
   * Weighted mean squares Σ_i G_i z_i of the windows of `length` sub-blocks starting at every
   * sub-block (only complete windows; a trailing partial sub-block is not used).
   */
  #windows(length: number): Float64Array {
    const n = this.#subBlocks - length + 1;
    if (n <= 0) return new Float64Array(0);
    const out = new Float64Array(n);
    // Direct sums (not a running difference) so quiet windows after loud ones stay exact.
    for (let j = 0; j < n; j++) {
      let e = 0, f = 0;
      for (let i = j; i < j + length; i++) {
        e += this.#energy[i]!;
        f += this.#count[i]!;
      }
      out[j] = e / f;
    }
    return out;
  }

  result(): LoudnessResult {
    const momentary = this.#windows(4);
    const shortTerm = this.#windows(30);
    return {
      integratedLufs: gatedLoudness(momentary, RELATIVE_GATE_LU),
      maxMomentaryLufs: momentary.length ? toLufs(max(momentary)) : -Infinity,
      maxShortTermLufs: shortTerm.length ? toLufs(max(shortTerm)) : -Infinity,
      loudnessRangeLu: loudnessRange(shortTerm),
    };
  }
}

function max(a: Float64Array): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) if (a[i]! > m) m = a[i]!;
  return m;
}

/** BS.1770 two-stage gating over block mean squares; returns LUFS. */
export function gatedLoudness(blocks: Float64Array, relativeGateLu: number): number {
  const absLimit = Math.pow(10, (ABSOLUTE_GATE_LUFS + 0.691) / 10);
  let sum = 0, n = 0;
  for (let j = 0; j < blocks.length; j++) {
    if (blocks[j]! > absLimit) {
      sum += blocks[j]!;
      n++;
    }
  }
  if (n === 0) return -Infinity;
  const relLimit = (sum / n) * Math.pow(10, relativeGateLu / 10);
  let sum2 = 0, n2 = 0;
  for (let j = 0; j < blocks.length; j++) {
    const z = blocks[j]!;
    if (z > absLimit && z > relLimit) {
      sum2 += z;
      n2++;
    }
  }
  return n2 ? toLufs(sum2 / n2) : -Infinity;
}

/**
 * EBU Tech 3342 loudness range from short-term mean squares: gate at −70 LUFS and 20 LU below the
 * power mean of what passed, then L95 − L10 (percentiles by linear interpolation between ranks).
 */
export function loudnessRange(shortTerm: Float64Array): number {
  const absLimit = Math.pow(10, (ABSOLUTE_GATE_LUFS + 0.691) / 10);
  let sum = 0, n = 0;
  for (const z of shortTerm) {
    if (z > absLimit) {
      sum += z;
      n++;
    }
  }
  if (n < 2) return 0;
  const relLimit = (sum / n) * Math.pow(10, LRA_RELATIVE_GATE_LU / 10);
  const kept: number[] = [];
  for (const z of shortTerm) if (z > absLimit && z > relLimit) kept.push(toLufs(z));
  if (kept.length < 2) return 0;
  kept.sort((a, b) => a - b);
  const pct = (p: number) => {
    const r = p * (kept.length - 1);
    const lo = Math.floor(r), hi = Math.min(kept.length - 1, lo + 1);
    return kept[lo]! + (kept[hi]! - kept[lo]!) * (r - lo);
  };
  return pct(0.95) - pct(0.1);
}
