/**
 * A long-term average spectrum from evenly spaced frames (4-term Blackman–Harris window, −92 dB sidelobes, power averaged over frames
 * and channels), and the effective bandwidth read from it. Frames are spaced `hopFrames` apart with
 * hop ≥ frame length, so an hour of audio costs a few thousand FFTs, not hundreds of thousands;
 * for a long-term average that is plenty. Scaling: a full-scale sine reads 0 dB at its bin.
 */
import { powerToDb } from '../units.ts';
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
    for (let k = 0; k < out.length; k++) out[k] = powerToDb(Math.max(this.#power[k]! * norm, 1e-30));
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
    out[k] = powerToDb(Math.max((prefix[b]! - prefix[a]!) / (b - a), 1e-30));
  }
  return out;
}

/**
 * Effective bandwidth: where the content stops.
 *  - the spectrum is smoothed over ±1/48 octave (power mean), so single bins do not decide;
 *  - floor = the 5th percentile of the smoothed levels between 1 kHz and 0.98·Nyquist (a
 *    percentile, not the minimum, so a notch, a dither shelf or bins of exact digital silence do
 *    not set it); top = the highest median level of the 1/6-octave bands from 200 Hz up (a
 *    median, so a line-up tone or a whistle does not count as programme);
 *  - when top − floor < 30 dB there is no band limit to find: the content reaches the top of the
 *    band and the answer is the Nyquist frequency;
 *  - otherwise the answer is the top of the highest run of smoothed levels at least
 *    floor + min(20 dB, (top − floor)/2) that is at least 1/12 octave wide (and 3 bins), so a lone
 *    whistle or pilot tone is not taken for programme, ending on the last unsmoothed bin that
 *    reaches the threshold; a run reaching 0.98·Nyquist means the Nyquist frequency.
 * Our own rule; on the real-material corpus it reads low-passed and band-limited speech within
 * 5 % of the cut-off (test/eval, bandwidth table). `levels` and `spectrum` both use it on the same
 * sparse Blackman–Harris spectrum (`bandwidthSpectrum`), so they agree.
 */
export function effectiveBandwidthHz(levelsDb: Float64Array, sampleRateHz: number): number {
  const n = levelsDb.length;
  if (n < 8) return sampleRateHz / 2;
  const binHz = sampleRateHz / 2 / (n - 1);
  const smooth = smoothSpectrumDb(levelsDb, Math.pow(2, 1 / 48) - 1);
  const lo = Math.max(1, Math.ceil(1000 / binHz));
  const hi = Math.min(n - 1, Math.floor((0.98 * sampleRateHz) / 2 / binHz));
  if (hi <= lo) return sampleRateHz / 2;
  const band = Float64Array.from(smooth.subarray(lo, hi + 1)).sort();
  const floor = band[Math.floor(0.05 * (band.length - 1))]!;
  const top = broadbandTopDb(levelsDb, binHz, hi);
  if (top - floor < 30) return sampleRateHz / 2;
  const threshold = floor + Math.min(20, (top - floor) / 2);
  let runEnd = -1;
  for (let k = hi; k >= 1; k--) {
    if (smooth[k]! >= threshold) {
      if (runEnd < 0) runEnd = k;
      const width = runEnd - k + 1;
      if (width >= Math.max(3, (Math.pow(2, 1 / 12) - 1) * runEnd)) {
        if (runEnd === hi) return sampleRateHz / 2;
        // The smoothing spreads the edge upwards by up to 1/48 octave: end on the last bin of
        // the unsmoothed spectrum that still reaches the threshold.
        let edge = runEnd;
        while (edge > k && levelsDb[edge]! < threshold) edge--;
        return edge * binHz;
      }
    } else {
      runEnd = -1;
    }
  }
  return 0;
}

/** Highest median level (dB) of the 1/6-octave bands from 200 Hz to bin `hi`. */
function broadbandTopDb(levelsDb: Float64Array, binHz: number, hi: number): number {
  let top = -Infinity;
  for (let fc = 200; fc / binHz <= hi; fc *= Math.pow(2, 1 / 6)) {
    const a = Math.max(1, Math.round((fc * Math.pow(2, -1 / 12)) / binHz));
    const b = Math.min(hi, Math.max(a + 2, Math.round((fc * Math.pow(2, 1 / 12)) / binHz)));
    const v = Float64Array.from(levelsDb.subarray(a, b + 1)).sort();
    top = Math.max(top, v[Math.floor(v.length / 2)]!);
  }
  return top;
}

/**
 * The sparse long-term spectrum both `levels` and `spectrum` read the bandwidth from: FFT size by
 * sample rate, at most about 3000 frames spread over the file.
 */
export function bandwidthSpectrum(sampleRateHz: number, channelCount: number, frames: number): SparseSpectrum {
  const fftSize = sampleRateHz > 64000 ? 8192 : sampleRateHz > 24000 ? 4096 : 2048;
  return new SparseSpectrum(sampleRateHz, channelCount, fftSize, Math.max(fftSize, Math.ceil(frames / 3000)));
}

/**
 * The bandwidth spectrum that `levels` is measuring on a source, for `spectrum` to take instead
 * of measuring the same thing again when both run over one source (diagnose, check). Keyed by
 * the source object; resolves to the spectrum's levels, or null when levels stopped early.
 */
const measuring = new WeakMap<object, Promise<Float64Array | null>>();

/** Announces that the bandwidth spectrum of `source` is being measured; call done() or fail(). */
export function announceBandwidthLevels(source: object): { done(levelsDb: Float64Array): void; fail(): void } {
  let settle!: (v: Float64Array | null) => void;
  measuring.set(source, new Promise((r) => (settle = r)));
  return { done: (levelsDb) => settle(levelsDb), fail: () => settle(null) };
}

/** The announced bandwidth spectrum of `source` (see announceBandwidthLevels), if any. */
export function announcedBandwidthLevels(source: object): Promise<Float64Array | null> | undefined {
  return measuring.get(source);
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
    out.push(Math.round(powerToDb(Math.max(s / (b - a + 1), 1e-30)) * 10) / 10);
  }
  return { frequenciesHz, levelsDb: out };
}
