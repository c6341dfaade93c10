/**
 * The low band of the time-stretcher, with four times the time span of the main analysis window
 * (≈ 340–370 ms at 44.1/48 kHz) and a low-side-lobe window, so that partials two main bins apart
 * (≈ 21–23 Hz) below 3.5–4 kHz are resolved and phase-locked each on its own: with the main window
 * a weak partial 2–3 bins from a strong one is no peak of its own, or one read through the strong
 * one's main lobe, and is turned with the strong one's frequency (pulled toward it, with stray
 * lines between: on real piano notes the unison strings' and inharmonic partials' pairs at 1–4 kHz
 * left lines 25–50 dB down when the band ended at 300 Hz). This is a two-band multi-resolution
 * phase vocoder (a longer window below a crossover; window length by band as in Bonada 2000,
 * "Automatic technique in frequency domain for near-lossless time-scale modification of audio",
 * ICMC 2000).
 *
 * - The input is low-passed and decimated by D (fs/D ≥ 2.4·f₂: 11.025/12 kHz at 44.1/48/96 kHz,
 *   D = 1 at 16 kHz and below; a zero-phase Kaiser-windowed sinc,
 *   100 dB stop band from fs/D − f₂, so every alias lands above the crossover), analysed with a
 *   4-term Blackman–Harris window (−92 dB side lobes, main lobe ±4 bins; Harris 1978, "On the use
 *   of windows for harmonic analysis with the DFT", Proc. IEEE 66(1)) of 4N/D points at hop
 *   N/(2D) (eight-fold overlap: the overlap-add of w² is exactly constant, w² having cosine terms up
 *   to the sixth), phase-locked like the main band (only the bins up to f₂ and the main lobe beyond
 *   it), weighted by the crossover, overlap-added, and interpolated back to fs with the same kernel.
 *   Its frames fall on every other main frame and take that frame's analysis position α.
 * - Crossover: m_L = 1 below f₁, 0 above f₂, a raised cosine between; f₂ = min(4 kHz, 0.4·fs),
 *   f₁ = f₂ − 500 Hz (`lowBandEdges`).
 * - Onsets: a long window would spread an attack over its whole length (pre-echo). A low-band frame
 *   with an onset within ¾ of its window (in the input or in the output; the start counts as one)
 *   is dropped (weight 0), and the main band carries the low band there: it is weighted by
 *   1 − m_L·G(σ), G the share of the low band the frames around σ carry. A dropped frame takes over
 *   the main band's rotations (at the bin of the same frequency), so that both bands give every
 *   partial the same phase when the low band comes back (no cancellation in the crossover).
 * - Stops: a frame with a sound that stops into (near) silence within ¾ of its window is dropped
 *   as at onsets (dsp/stretch/offsets.ts).
 * - Stationarity gate: a window this long smears partials that move (vibrato, glides) over their
 *   track. A frame is dropped as at onsets when its partials move within its window: four
 *   Blackman–Harris analyses a quarter of the window long across it, each peak's power centroid in
 *   each, and the median over the peaks of the shift between neighbouring ones (`movementCents`);
 *   vibrato shifts every partial the same way, a beating unresolved pair's centroid moves on its
 *   own (the median stays near 0 on steady notes).
 */
import { kaiserLowpass } from '../core/kaiser-sinc.ts';
import { makeWindow } from '../core/windows.ts';
import { polyphaseWasm, type PolyphaseWasm } from '../core/polyphase-wasm.ts';
import { PackedStft } from './packed-stft.ts';
import { PhaseLocker } from './phase-lock.ts';
import { InputRing, type OverlapAddRing } from './rings.ts';

/** The 4-term Blackman–Harris window's cosine coefficients (Harris 1978, −92 dB; dsp/core/windows.ts). */
const BLACKMAN_HARRIS = [0.35875, 0.48829, 0.14128, 0.01168] as const;

/** The stationarity gate reads peaks above this frequency (Hz): below it a short window's bin is too wide. */
export const GATE_FROM_HZ = 180;
/**
 * Frames whose partials move by more than this (cents, median over the peaks between neighbouring
 * short analyses) are dropped. Measured: steady notes (piano, organ, bass, synthetic) 0–4.5 c;
 * 220 Hz with ±10 / ±25 / ±50 c vibrato at 5.5 Hz, median 14 / 33 / 47 c.
 */
export const GATE_CENTS = 8;

/** Crossover of the default low band: everything below F1, nothing above F2 (Hz). */
export const LOW_BAND_F1_HZ = 180;
export const LOW_BAND_F2_HZ = 300;
/** Top of the wide low band's crossover (Hz) at rates of 10 kHz and more, and its width. */
export const WIDE_LOW_BAND_TOP_HZ = 4000;
const WIDE_CROSSOVER_HZ = 500;

/** Crossover edges: the low band takes everything below f1, nothing above f2 (Hz). */
export interface LowBandEdges {
  readonly f1: number;
  readonly f2: number;
}

/** The default band's edges (180–300 Hz), or the wide band's (f₂ = min(4 kHz, 0.4·fs), f₁ = f₂ − 500 Hz). */
export function lowBandEdges(sampleRateHz: number, wide = false): LowBandEdges {
  if (!wide) return { f1: LOW_BAND_F1_HZ, f2: LOW_BAND_F2_HZ };
  const f2 = Math.min(WIDE_LOW_BAND_TOP_HZ, 0.4 * sampleRateHz);
  return { f1: f2 - WIDE_CROSSOVER_HZ, f2 };
}

export interface LowBandOptions {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly ratio: number;
  /** Main FFT size N. */
  readonly mainFftSize: number;
  /** Capacity of the main input ring (the decimated ring holds the same span). */
  readonly inputSpan: number;
  /** The wide band (up to 3.5–4 kHz) with the stationarity gate; default the band below 180–300 Hz. */
  readonly wide?: boolean;
  /**
   * Whether the full-rate input in [start, start + length) holds a sound that stops into
   * (near) silence (dsp/stretch/offsets.ts); such frames are dropped as at onsets.
   */
  readonly stopInside?: (start: number, length: number) => boolean;
}

/** Crossover weight of the low band at f (Hz). */
export function lowBandWeight(f: number, edges: LowBandEdges): number {
  const { f1, f2 } = edges;
  if (f <= f1) return 1;
  if (f >= f2) return 0;
  return 0.5 * (1 + Math.cos((Math.PI * (f - f1)) / (f2 - f1)));
}

export class LowBand {
  readonly decimation: number;
  readonly fftSize: number; // decimated points
  readonly hop: number; // decimated samples
  /** Hop in output samples at the full rate. */
  readonly hopFull: number;
  /** Half the window in full-rate samples. */
  readonly halfFull: number;
  readonly channelCount: number;
  readonly ratio: number;
  readonly sampleRateHz: number;
  /** The wide band, gated by stationarity. */
  readonly wide: boolean;
  readonly #taps: Float64Array; // lowpass, 2L+1 taps, Σ = 1
  readonly #half: number; // L
  readonly #input: InputRing; // decimated input
  readonly #stft: PackedStft;
  readonly #lock: PhaseLocker;
  readonly #active: number; // bins processed
  readonly #mask: Float64Array; // m_L per low-band bin
  readonly #olaWeights: Float64Array; // w² of the window
  readonly #gain: Float64Array; // per bin: crossover × frame weight (× formant gain)
  #xw: Float64Array[];
  #xwPrev: Float64Array[];
  readonly #y: Float64Array[];
  #power: Float64Array;
  #powerPrev: Float64Array;
  #prevValid = false;
  #prevA = 0;
  #j: number; // next frame: σ = j·hopFull
  #onsetFrom = 0;
  // Onsets accepted by the main map: t0 and σ0 − t0.
  readonly #onsetT: number[] = [];
  readonly #onsetOffset: number[] = [];
  // Decimated overlap-add ring.
  readonly #outMask: number;
  readonly #out: Float64Array[];
  #cleared = 0; // decimated output slots below this are consumed and zeroed
  /** Decimated output samples below this are final. */
  #finalQ = -Infinity;
  readonly #phaseStart: Int32Array; // per phase r: first j (q = ⌊t/D⌋ − j)
  readonly #phaseTaps: Float64Array[]; // per phase: D·h[r + jD + L] for j = jStart…
  readonly #jLow: number; // smallest jStart over the phases
  readonly #span: number; // values of v one output block reads
  readonly #win: Float64Array;
  readonly #flatTaps: Float64Array; // D × span: phase r's taps at win positions
  /** The same taps four phases at a time, interleaved: [(g·span + i)·4 + j] = phase 4g + j's tap i (D a multiple of 4; else empty). */
  readonly #quadTaps: Float64Array;
  /** The WebAssembly SIMD kernel for whole blocks of D outputs (same numbers), or null. */
  readonly #simd: PolyphaseWasm | null;
  /** The WebAssembly SIMD kernel decimating two channels at once (same numbers), or null. */
  readonly #simd2: PolyphaseWasm | null;
  // Stationarity gate: four short analyses, each a quarter of the long frame, across that frame.
  readonly #gateStft: PackedStft;
  readonly #gateSpectra: Float64Array[];
  readonly #gatePower: Float64Array[];
  readonly #gateBins: number;
  /** Per frame σ: 0 when its window holds a stop or its partials move, else 1 (the onset rule aside). */
  readonly #gateCache = new Map<number, number>();
  readonly #stopInside: ((start: number, length: number) => boolean) | null;
  readonly #gateShifts: number[][] = [[], [], []];

  constructor(options: LowBandOptions) {
    const fs = options.sampleRateHz, n = options.mainFftSize;
    this.channelCount = options.channelCount;
    this.ratio = options.ratio;
    this.sampleRateHz = fs;
    const wide = (this.wide = options.wide === true);
    this.#stopInside = options.stopInside ?? null;
    const edges = lowBandEdges(fs, wide), f2 = edges.f2;
    // fs/D ≈ 3 kHz for the default band; fs/D ≥ 2.4·f₂ for the wide one.
    const d = (this.decimation = Math.min(n / 8, Math.max(1, wide ? 2 ** Math.floor(Math.log2(fs / (2.4 * f2))) : 2 ** Math.round(Math.log2(fs / 3000)))));
    const nl = (this.fftSize = (4 * n) / d);
    this.hop = nl / 8;
    this.hopFull = n / 2;
    this.halfFull = (nl * d) / 2;
    // Lowpass: pass to F2, stop from fs/D − F2 (Kaiser design, 100 dB).
    const stopHz = fs / d - f2;
    const taps = d === 1 ? new Float64Array([1]) : kaiserLowpass(fs, f2, stopHz, 100);
    const len = taps.length;
    const l = (this.#half = (len - 1) / 2);
    this.#taps = taps;
    // Polyphase interpolation: y[t] = Σ_j D·h[r + jD + L]·v[⌊t/D⌋ − j], r = t mod D.
    this.#phaseStart = new Int32Array(d);
    this.#phaseTaps = [];
    for (let r = 0; r < d; r++) {
      const j0 = Math.ceil((-l - r) / d), j1 = Math.floor((l - r) / d);
      this.#phaseStart[r] = j0;
      const t = new Float64Array(j1 - j0 + 1);
      for (let j = j0; j <= j1; j++) t[j - j0] = d * taps[r + j * d + l]!;
      this.#phaseTaps.push(t);
    }
    let jLow = 0, jHigh = 0;
    for (let r = 0; r < d; r++) {
      jLow = Math.min(jLow, this.#phaseStart[r]!);
      jHigh = Math.max(jHigh, this.#phaseStart[r]! + this.#phaseTaps[r]!.length - 1);
    }
    this.#jLow = jLow;
    this.#span = jHigh - jLow + 1;
    this.#win = new Float64Array(this.#span);
    this.#flatTaps = new Float64Array(d * this.#span);
    for (let r = 0; r < d; r++) {
      const tp = this.#phaseTaps[r]!, off = this.#phaseStart[r]! - jLow;
      for (let i = 0; i < tp.length; i++) this.#flatTaps[r * this.#span + off + i] = tp[i]!;
    }
    this.#quadTaps = new Float64Array(d % 4 === 0 ? d * this.#span : 0);
    for (let r = 0; r < this.#quadTaps.length / this.#span; r++) {
      const g = r >> 2, j = r & 3;
      for (let i = 0; i < this.#span; i++) this.#quadTaps[(g * this.#span + i) * 4 + j] = this.#flatTaps[r * this.#span + i]!;
    }
    this.#simd = this.#quadTaps.length > 0 ? polyphaseWasm() : null;
    this.#simd2 = d > 1 && options.channelCount === 2 ? polyphaseWasm() : null;
    this.#input = new InputRing(options.channelCount, options.inputSpan / d + 2 * nl + 4 * this.hop);
    // Blackman–Harris for analysis and synthesis; at hop N/8 the overlap-add of w² is constant.
    // (Hop N/4 with a Hann²/Blackman–Harris synthesis window would halve the frames but leaves
    // frame-rate side bands near −65 dB on two partials 2 main bins apart.)
    const bh = makeWindow('blackman-harris', nl);
    let olaSum = 0;
    for (let i = 0; i < nl; i += this.hop) olaSum += bh[i]! * bh[i]!;
    // Only bins up to the crossover (and the ±4-bin main lobe beyond it) are processed.
    const active = (this.#active = Math.min(nl / 2 + 1, Math.ceil((f2 * d * nl) / fs) + 8));
    this.#stft = new PackedStft(nl, options.channelCount, bh, bh.map((w) => w / (olaSum * nl)), active);
    this.#olaWeights = bh.map((w) => w * w);
    this.#lock = new PhaseLocker(nl, this.hop, options.channelCount, active, BLACKMAN_HARRIS);
    const ng = nl / 4;
    const bhShort = makeWindow('blackman-harris', ng);
    this.#gateBins = Math.min(ng / 2 + 1, Math.ceil((edges.f2 * d * ng) / fs) + 4);
    this.#gateStft = new PackedStft(ng, options.channelCount, bhShort, bhShort, this.#gateBins);
    this.#gateSpectra = Array.from({ length: options.channelCount }, () => new Float64Array(ng + 2));
    this.#gatePower = Array.from({ length: 4 }, () => new Float64Array(ng / 2 + 1));
    const bins = nl / 2 + 1;
    this.#mask = new Float64Array(bins);
    this.#gain = new Float64Array(bins);
    for (let k = 0; k < bins; k++) this.#mask[k] = lowBandWeight((k * fs) / d / nl, edges);
    const perChannel = () => Array.from({ length: options.channelCount }, () => new Float64Array(nl + 2));
    this.#xw = perChannel();
    this.#xwPrev = perChannel();
    this.#y = perChannel();
    this.#power = new Float64Array(bins);
    this.#powerPrev = new Float64Array(bins);
    const outCap = 2 ** Math.ceil(Math.log2(2 * nl + 4 * this.hop + 64));
    this.#outMask = outCap - 1;
    this.#out = Array.from({ length: options.channelCount }, () => new Float64Array(outCap));
    // First frame whose window reaches output sample 0.
    this.#j = -Math.floor(this.halfFull / this.hopFull) + 1;
    // The start counts as an onset: the main band carries the first ¾ window, and the low band
    // takes over the main band's phases meanwhile (both bands then agree on every partial's phase).
    this.addOnset(0, 0);
  }

  /** An onset accepted by the main map. */
  addOnset(t0: number, offset: number): void {
    this.#onsetT.push(t0);
    this.#onsetOffset.push(offset);
  }

  /** Oldest full-rate input sample the decimator still reads. */
  keepFrom(): number {
    return this.#input.written * this.decimation - this.#half - 1;
  }

  /** Decimates what the full-rate input holds (zero-phase: sample m is centred at m·D). */
  decimate(full: InputRing, ended: boolean): void {
    const d = this.decimation, l = this.#half, taps = this.#taps;
    const dec = this.#input, fm = full.mask, written = full.written;
    const decMask = dec.mask;
    const simd = this.#simd2;
    if (simd) {
      // Runs of outputs whose taps lie within the written input, both channels in the two lanes
      // of the WebAssembly kernel (each sum in the same order as below).
      for (;;) {
        const m = dec.written, centre = m * d;
        if (centre - l < 0) break;
        const count = Math.min(1024, Math.floor((written - 1 - l - centre) / d) + 1);
        if (count <= 0) break;
        const at = simd.decimate2(taps, full.rings[0]!, full.rings[1]!, fm, centre - l, d, count);
        const heap = simd.heap, o0 = dec.rings[0]!, o1 = dec.rings[1]!;
        for (let i = 0; i < count; i++) {
          o0[(m + i) & decMask] = heap[at + 2 * i]!;
          o1[(m + i) & decMask] = heap[at + 2 * i + 1]!;
        }
        dec.written = m + count;
      }
    }
    for (;;) {
      const m = dec.written, centre = m * d;
      if (ended ? centre - l >= written : centre + l >= written) break;
      const lo = centre - l;
      const inside = lo >= 0 && centre + l < written;
      if (inside && this.channelCount === 2 && (lo & fm) + taps.length <= fm + 1) {
        // Both channels in one pass over the taps (each sum in the same order as below).
        const r0 = full.rings[0]!, r1 = full.rings[1]!, at = centre & fm;
        let v0 = taps[l]! * r0[at]!, v1 = taps[l]! * r1[at]!;
        for (let i = 1; i <= l; i++) {
          const h = taps[l + i]!;
          v0 += h * (r0[at + i]! + r0[at - i]!);
          v1 += h * (r1[at + i]! + r1[at - i]!);
        }
        dec.rings[0]![m & decMask] = v0;
        dec.rings[1]![m & decMask] = v1;
        dec.written = m + 1;
        continue;
      }
      for (let c = 0; c < this.channelCount; c++) {
        const r = full.rings[c]!;
        let v = 0;
        if (inside && (lo & fm) + taps.length <= fm + 1) {
          // Symmetric taps (h[L − i] = h[L + i]), the span not wrapping around the ring.
          const at = centre & fm;
          v = taps[l]! * r[at]!;
          for (let i = 1; i <= l; i++) v += taps[l + i]! * (r[at + i]! + r[at - i]!);
        } else if (inside) {
          v = taps[l]! * r[centre & fm]!;
          for (let i = 1; i <= l; i++) v += taps[l + i]! * (r[(centre + i) & fm]! + r[(centre - i) & fm]!);
        } else for (let i = 0; i < taps.length; i++) v += taps[i]! * full.sample(c, lo + i);
        dec.rings[c]![m & decMask] = v;
      }
      dec.written = m + 1;
    }
  }

  /** Output samples (full rate) below this are final in the low band. */
  finalUpTo(outputFrames: number): number {
    if (this.#finalQ === Infinity) return outputFrames;
    const jMax = 1 - this.#phaseStart[0]!; // furthest q ahead of ⌊t/D⌋ the interpolation reads
    return Math.max(0, (this.#finalQ - jMax) * this.decimation - this.decimation);
  }

  /** Input samples beyond α a frame at α reads (the window and the decimation filter). */
  get reachFull(): number {
    return this.halfFull + this.#half + 2 * this.decimation;
  }

  /** The next frame's output time (frames are every `hopFull`, from before the output starts). */
  get nextSigma(): number {
    return this.#j * this.hopFull;
  }

  /**
   * Weight of the low-band frame at output σ taken from input α: 0 when an onset lies within
   * three quarters of its window, in the input or in the output (the long window would disperse
   * the attack over its length: pre-echo), else 1; the main band takes over what the low band
   * drops. (Blackman–Harris at ¾ of the half-window: w² ≈ −66 dB.) Also 0 when a sound stops
   * into (near) silence within the same reach of α (`stopInside`: the long window would spread it
   * over the silence after the stop, dsp/stretch/offsets.ts), and where the partials move within
   * the window (`movementCents` above GATE_CENTS); one decision per frame, cached.
   */
  frameWeight(sigma: number, alpha: number): number {
    const on = this.#onsetT, off = this.#onsetOffset, reach = 0.75 * this.halfFull;
    for (let i = this.#onsetFrom; i < on.length; i++) {
      const t0 = on[i]!, s0 = t0 + off[i]!;
      if (Math.abs(s0 - sigma) <= reach || Math.abs(t0 - alpha) <= reach) return 0;
      if (t0 > alpha + reach && s0 > sigma + reach) break;
    }
    const stop = this.#stopInside;
    if (!this.wide && !stop) return 1;
    const cache = this.#gateCache;
    let g = cache.get(sigma);
    if (g === undefined) {
      g = stop && stop(alpha - reach, 2 * reach) ? 0 : !this.wide || this.movementCents(alpha) <= GATE_CENTS ? 1 : 0;
      cache.set(sigma, g);
      if (cache.size > 64) for (const key of cache.keys()) if (key < sigma - 8 * this.halfFull) cache.delete(key);
    }
    return g;
  }

  /**
   * How far the partials move within the window of a frame at input α (cents): four
   * Blackman–Harris analyses a quarter of the window long, centred at α ± ⅛ and ± ⅜ of the window;
   * each peak (above GATE_FROM_HZ, within 50 dB of the strongest) gets its power centroid (±3 bins)
   * in each; for each of the three neighbouring pairs the median over the peaks of the centroid's
   * shift in cents; the largest of the three. Fewer than three peaks: 0 (nothing to judge by).
   */
  movementCents(alpha: number): number {
    const d = this.decimation, nl = this.fftSize, a = Math.round(alpha / d);
    const bins = this.#gateBins, pw = this.#gatePower;
    for (let i = 0; i < 4; i++) this.#gateStft.analyze(this.#input, a + ((2 * i - 3) * nl) / 8, this.#gateSpectra, pw[i]!);
    let top = 0;
    for (let k = 1; k < bins - 1; k++) {
      const m = pw[0]![k]! + pw[1]![k]! + pw[2]![k]! + pw[3]![k]!;
      if (m > top) top = m;
    }
    if (!(top > 0)) return 0;
    const kLow = Math.max(4, Math.ceil((GATE_FROM_HZ * d * nl) / 4 / this.sampleRateHz));
    const shifts = this.#gateShifts;
    for (let i = 0; i < 3; i++) shifts[i]!.length = 0;
    for (let k = kLow; k < bins - 4; k++) {
      const m = pw[0]![k]! + pw[1]![k]! + pw[2]![k]! + pw[3]![k]!;
      if (m < top * 1e-5) continue;
      const ml = pw[0]![k - 1]! + pw[1]![k - 1]! + pw[2]![k - 1]! + pw[3]![k - 1]!;
      const mr = pw[0]![k + 1]! + pw[1]![k + 1]! + pw[2]![k + 1]! + pw[3]![k + 1]!;
      if (!(m > ml && m >= mr)) continue;
      let prev = 0;
      for (let i = 0; i < 4; i++) {
        const p = pw[i]!;
        let sw = 0, sk = 0;
        for (let b = k - 3; b <= k + 3; b++) {
          sw += p[b]!;
          sk += b * p[b]!;
        }
        const c = sw > 0 ? sk / sw : k;
        if (i > 0) shifts[i - 1]!.push(((1200 / Math.LN2) * (c - prev)) / k);
        prev = c;
      }
    }
    // Vibrato moves every partial the same way; a beating pair's centroid moves on its own.
    let worst = 0;
    if (shifts[0]!.length >= 3) {
      for (let i = 0; i < 3; i++) {
        const v = shifts[i]!.sort((x, y) => x - y);
        const med = v.length & 1 ? v[v.length >> 1]! : 0.5 * (v[v.length / 2 - 1]! + v[v.length / 2]!);
        worst = Math.max(worst, Math.abs(med));
      }
    }
    return worst;
  }

  /** Forgets onsets wholly before output σ − 2 analysis lengths. */
  #prune(sigma: number): void {
    const on = this.#onsetT, off = this.#onsetOffset;
    while (this.#onsetFrom < on.length && on[this.#onsetFrom]! + off[this.#onsetFrom]! < sigma - 4 * this.halfFull) this.#onsetFrom++;
    if (this.#onsetFrom > 64) {
      on.splice(0, this.#onsetFrom);
      off.splice(0, this.#onsetFrom);
      this.#onsetFrom = 0;
    }
  }

  /**
   * How much of the low band the low-band frames carry at output σ (0…1): the weights of the
   * frames whose window holds σ, averaged with their overlap-add weights w²; `alphaOf` gives each
   * frame's input position.
   */
  coverage(sigma: number, alphaOf: (s: number) => number): number {
    const hf = this.hopFull, w = this.#olaWeights;
    const j0 = Math.ceil((sigma - this.halfFull) / hf), j1 = Math.floor((sigma + this.halfFull) / hf);
    let num = 0, den = 0;
    for (let j = j0; j <= j1; j++) {
      const pos = Math.round((sigma - j * hf) / this.decimation) + this.fftSize / 2;
      if (pos < 0 || pos >= this.fftSize) continue;
      const v = w[pos]!;
      if (v === 0) continue;
      den += v;
      num += v * this.frameWeight(j * hf, alphaOf(j * hf));
    }
    return den > 0 ? num / den : 1;
  }

  /**
   * The next low-band frame, at output σ = nextSigma from input α. `mainRotRe/Im` are the main
   * band's rotations at this σ (N/2+1 bins): a frame the low band drops takes them over, so that
   * when it comes back its partials have the phases the main band gave them (no cancellation in
   * the crossover).
   */
  frame(alpha: number, mainRotRe: Float64Array | null, mainRotIm: Float64Array | null, mainFftSize: number, mainGain: Float64Array | null = null): void {
    const sigma = this.nextSigma;
    this.#prune(sigma);
    const weight = this.frameWeight(sigma, alpha);
    const a = Math.round(alpha / this.decimation);
    const lock = this.#lock, xw = this.#xw, y = this.#y;
    this.#stft.analyze(this.#input, a, xw, this.#power);
    const dropped = weight === 0 && mainRotRe !== null && mainRotIm !== null;
    if (!this.#prevValid) {
      lock.reset();
      if (!dropped) lock.rotateHeld(xw, y);
    } else if (!dropped && !lock.lock(this.#power, xw, this.#xwPrev, y, a - this.#prevA)) lock.rotateHeld(xw, y);
    if (dropped) {
      // Take over the main band's rotations (bin of the same frequency), corrected for the
      // rounding of α to the decimated grid: φ_in here is the phase at a·D, not at α.
      const bins = this.#active, rr = lock.rotRe, ri = lock.rotIm;
      const scale = (mainFftSize / this.fftSize) / this.decimation; // main bin per low bin
      const shift = a * this.decimation - alpha;
      for (let k = 0; k < bins && this.#mask[k]! > 0; k++) {
        const km = Math.min(mainFftSize / 2, Math.round(k * scale));
        const ph = (-2 * Math.PI * k * shift) / (this.fftSize * this.decimation);
        const cr = Math.cos(ph), ci = Math.sin(ph);
        const mr = mainRotRe[km]!, mi = mainRotIm[km]!;
        rr[k] = mr * cr - mi * ci;
        ri[k] = mr * ci + mi * cr;
      }
    }
    if (weight === 0) {
      // Nothing of this frame is heard (its weight is 0): only its spectrum (the next frame's
      // previous one) and rotations carry on.
      this.#finishFrame(sigma, a, xw);
      return;
    }
    const m = this.#mask, bins = this.#active;
    const g = this.#gain;
    for (let k = 0; k < bins; k++) g[k] = m[k]! * weight;
    if (mainGain) {
      // The main band's formant gains (keep-formants), read at this bin's frequency.
      const scale = mainFftSize / this.fftSize / this.decimation;
      for (let k = 0; k < bins; k++) {
        const x = k * scale, i = Math.floor(x);
        g[k]! *= i + 1 < mainGain.length ? mainGain[i]! + (x - i) * (mainGain[i + 1]! - mainGain[i]!) : mainGain[mainGain.length - 1]!;
      }
    }
    for (let c = 0; c < this.channelCount; c++) {
      const out = y[c]!;
      for (let k = 0; k < bins; k++) {
        out[2 * k]! *= g[k]!;
        out[2 * k + 1]! *= g[k]!;
      }
    }
    this.#synthesize(sigma / this.decimation);
    this.#finishFrame(sigma, a, xw);
  }

  /** This frame becomes the previous one. */
  #finishFrame(sigma: number, a: number, xw: Float64Array[]): void {
    const t = this.#xwPrev;
    this.#xwPrev = xw;
    this.#xw = t;
    const p = this.#powerPrev;
    this.#powerPrev = this.#power;
    this.#power = p;
    this.#prevValid = true;
    this.#prevA = a;
    this.#j++;
    this.#finalQ = sigma / this.decimation + this.hop - this.fftSize / 2;
  }

  /** After the input has ended and every frame is done: everything is final. */
  finish(): void {
    this.#finalQ = Infinity;
  }

  #synthesize(s: number): void {
    // The packed synthesis adds into an OverlapAddRing-shaped target.
    this.#stft.synthesize(this.#y, { mask: this.#outMask, rings: this.#out, emitted: this.#cleared } as unknown as OverlapAddRing, s);
  }

  /** Adds the interpolated low band for output samples [from, to) to the main overlap-add ring. */
  addTo(out: OverlapAddRing, from: number, to: number): void {
    if (to <= from) return;
    const d = this.decimation, shift = Math.log2(d), mask = this.#outMask, omask = out.mask;
    const span = this.#span, flat = this.#flatTaps, quad = this.#quadTaps, win = this.#win;
    // For one q = ⌊t/D⌋ the values v[q − jLow − i], i < span, are shared by the D outputs of that
    // q; each phase's taps are laid out over the same span.
    const jLow = this.#jLow;
    for (let c = 0; c < this.channelCount; c++) {
      const v = this.#out[c]!, o = out.rings[c]!;
      let t = from;
      const simd = this.#simd;
      while (t < to) {
        const qb = t >> shift;
        if (simd && t === qb << shift && (qb + 1) << shift <= to) {
          // Whole blocks of D outputs in the WebAssembly kernel (the sums below, in the same order).
          const blocks = Math.min(1024, (to >> shift) - qb);
          const at = simd.interpolate(quad, span, v, mask, qb - jLow - span + 1, blocks);
          const heap = simd.heap, count = blocks << shift;
          for (let done = 0; done < count; ) {
            // At most two contiguous pieces of the ring.
            const base = (t + done) & omask, len = Math.min(count - done, omask + 1 - base), from = at + done;
            for (let i = 0; i < len; i++) o[base + i]! += heap[from + i]!;
            done += len;
          }
          t += count;
          continue;
        }
        const base = qb - jLow;
        // v[q − jLow − i] is src[off − i]: read in place, or gathered into `win` where the span wraps.
        let src = v, off = base & mask;
        if (off < span - 1) {
          for (let i = 0; i < span; i++) win[span - 1 - i] = v[(base - i) & mask]!;
          src = win;
          off = span - 1;
        }
        const end = (qb + 1) << shift, stop = Math.min(to, end);
        if (quad.length > 0 && t === qb << shift && stop === end) {
          // The D outputs of this q four phases at a time (each sum in the same order as below).
          for (let g = 0, at = 0; g < d; g += 4, at += 4 * span) {
            let a0 = 0, a1 = 0, a2 = 0, a3 = 0;
            for (let i = 0, b = at; i < span; i++, b += 4) {
              const x = src[off - i]!;
              a0 += quad[b]! * x;
              a1 += quad[b + 1]! * x;
              a2 += quad[b + 2]! * x;
              a3 += quad[b + 3]! * x;
            }
            o[(t + g) & omask]! += a0;
            o[(t + g + 1) & omask]! += a1;
            o[(t + g + 2) & omask]! += a2;
            o[(t + g + 3) & omask]! += a3;
          }
          t = stop;
          continue;
        }
        for (; t < stop; t++) {
          const at = (t & (d - 1)) * span;
          let acc = 0;
          for (let i = 0; i < span; i++) acc += flat[at + i]! * src[off - i]!;
          o[t & omask]! += acc;
        }
      }
    }
    // Slots no later sample reads are cleared for the frames still to come.
    const keep = (to >> shift) - (span + 1);
    for (let q = this.#cleared; q < keep; q++) for (let c = 0; c < this.channelCount; c++) this.#out[c]![q & mask] = 0;
    if (keep > this.#cleared) this.#cleared = keep;
  }
}
