/**
 * A long-term average spectrum from evenly spaced frames (4-term Blackman–Harris window, −92 dB sidelobes, power averaged over frames
 * and channels), and the effective bandwidth read from it. Frames are spaced `hopFrames` apart with
 * hop ≥ frame length, so an hour of audio costs a few thousand FFTs, not hundreds of thousands;
 * for a long-term average that is plenty. Scaling: a full-scale sine reads 0 dB at its bin.
 */
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';

export class SparseSpectrum {
  readonly #plan: FftPlan;
  readonly #window: Float64Array;
  readonly #frame: Float64Array[];
  readonly #spec: Float64Array;
  readonly #power: Float64Array;
  #frames = 0;
  /** Absolute frame index of the next sample pushed. */
  #pos = 0;
  /** Start of the frame being filled (or the next one). */
  #nextStart = 0;

  constructor(
    readonly sampleRateHz: number,
    readonly channelCount: number,
    readonly fftSize: number,
    readonly hopFrames: number,
  ) {
    this.#plan = new FftPlan(fftSize);
    this.#window = makeWindow('blackman-harris', fftSize);
    this.#frame = Array.from({ length: channelCount }, () => new Float64Array(fftSize));
    this.#spec = new Float64Array(fftSize + 2);
    this.#power = new Float64Array(fftSize / 2 + 1);
  }

  push(block: readonly Float64Array[]): void {
    const len = block[0]!.length;
    const blockStart = this.#pos;
    const blockEnd = blockStart + len;
    while (this.#nextStart < blockEnd) {
      const s = this.#nextStart, e = s + this.fftSize;
      const from = Math.max(s, blockStart), to = Math.min(e, blockEnd);
      for (let c = 0; c < this.channelCount; c++) {
        this.#frame[c]!.set(block[c]!.subarray(from - blockStart, to - blockStart), from - s);
      }
      if (to < e) break; // frame continues in the next block
      this.#analyse();
      this.#nextStart += this.hopFrames;
    }
    this.#pos = blockEnd;
  }

  #analyse(): void {
    const n = this.fftSize, w = this.#window, spec = this.#spec, p = this.#power;
    for (let c = 0; c < this.channelCount; c++) {
      const x = this.#frame[c]!;
      for (let i = 0; i < n; i++) x[i]! *= w[i]!;
      this.#plan.realForward(x, spec);
      for (let k = 0; k <= n / 2; k++) p[k]! += spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2;
    }
    this.#frames++;
  }

  get framesAnalysed(): number {
    return this.#frames;
  }

  /** Level per bin, dB re a full-scale sine (bin k is at k·fs/N). Empty when no frame was complete. */
  levelsDb(): Float64Array {
    const out = new Float64Array(this.fftSize / 2 + 1);
    if (this.#frames === 0) return new Float64Array(0);
    let sw = 0;
    for (const v of this.#window) sw += v;
    const fullScale = (sw / 2) ** 2; // |X|² of a unit sine at its bin
    const norm = 1 / (this.#frames * this.channelCount * fullScale);
    for (let k = 0; k < out.length; k++) out[k] = 10 * Math.log10(Math.max(this.#power[k]! * norm, 1e-30));
    return out;
  }
}

/** Mean power over ±`fraction` of each bin's frequency (at least ±1 bin), in dB. */
export function smoothSpectrumDb(levelsDb: Float64Array, fraction: number): Float64Array {
  const n = levelsDb.length;
  const p = levelsDb.map((d) => Math.pow(10, d / 10));
  const prefix = new Float64Array(n + 1);
  for (let k = 0; k < n; k++) prefix[k + 1] = prefix[k]! + p[k]!;
  const out = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const half = Math.max(1, Math.round(k * fraction));
    const a = Math.max(0, k - half), b = Math.min(n, k + half + 1);
    out[k] = 10 * Math.log10(Math.max((prefix[b]! - prefix[a]!) / (b - a), 1e-30));
  }
  return out;
}

/**
 * Effective bandwidth: the highest frequency still at least 10 dB above the spectrum's floor.
 *  - floor = lowest level of the 1/24-octave-smoothed spectrum between 1 kHz and 0.98·Nyquist;
 *  - when the loudest smoothed level above 1 kHz is less than 30 dB over that floor, the content
 *    reaches the top of the band (no band limit to find) and the answer is the Nyquist frequency;
 *  - otherwise the answer is the top of the highest run of bins at least floor + 10 dB that is at
 *    least max(3 bins, 2 % of its frequency) wide (so a lone whistle or pilot tone is not taken
 *    for programme).
 * Our own rule, documented in the levels op; it answers "where does the content stop".
 */
export function effectiveBandwidthHz(levelsDb: Float64Array, sampleRateHz: number): number {
  const n = levelsDb.length;
  if (n < 8) return sampleRateHz / 2;
  const binHz = sampleRateHz / 2 / (n - 1);
  const smooth = smoothSpectrumDb(levelsDb, Math.pow(2, 1 / 48) - 1);
  const lo = Math.max(1, Math.ceil(1000 / binHz));
  const hi = Math.min(n - 1, Math.floor((0.98 * sampleRateHz) / 2 / binHz));
  if (hi <= lo) return sampleRateHz / 2;
  let floor = Infinity, loud = -Infinity;
  for (let k = lo; k <= hi; k++) {
    floor = Math.min(floor, smooth[k]!);
    loud = Math.max(loud, smooth[k]!);
  }
  if (loud - floor < 30) return sampleRateHz / 2;
  const threshold = floor + 10;
  let runEnd = -1;
  for (let k = n - 1; k >= 1; k--) {
    if (levelsDb[k]! >= threshold) {
      if (runEnd < 0) runEnd = k;
      const width = runEnd - k + 1;
      if (width >= Math.max(3, 0.02 * runEnd)) return runEnd * binHz;
    } else {
      runEnd = -1;
    }
  }
  return 0;
}

/** A compact log-spaced view of a spectrum for reports: mean power per 1/12-octave band from 20 Hz. */
export function compactSpectrum(levelsDb: Float64Array, sampleRateHz: number): { frequenciesHz: number[]; levelsDb: number[] } {
  const n = levelsDb.length;
  const frequenciesHz: number[] = [];
  const out: number[] = [];
  if (n < 2) return { frequenciesHz, levelsDb: out };
  const binHz = sampleRateHz / 2 / (n - 1);
  const step = Math.pow(2, 1 / 12);
  for (let f = 20; f < sampleRateHz / 2; f *= step) {
    const a = Math.max(1, Math.round(f / Math.sqrt(step) / binHz));
    const b = Math.min(n - 1, Math.max(a, Math.round((f * Math.sqrt(step)) / binHz)));
    let s = 0;
    for (let k = a; k <= b; k++) s += Math.pow(10, levelsDb[k]! / 10);
    frequenciesHz.push(Math.round(f * 10) / 10);
    out.push(Math.round(10 * Math.log10(Math.max(s / (b - a + 1), 1e-30)) * 10) / 10);
  }
  return { frequenciesHz, levelsDb: out };
}
