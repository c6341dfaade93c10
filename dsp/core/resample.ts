/**
 * Varispeed and sample-rate conversion by band-limited interpolation.
 *
 * Method: each output sample is the value of the band-limited input at a fractional input
 * position p, computed with a Kaiser-windowed sinc kernel (Smith & Gossett, "A flexible
 * sampling-rate conversion method", ICASSP 1984; Kaiser, "Nonrecursive digital filter design
 * using the I0-sinh window function", 1974). The kernel is designed at the LOWER of the two rates
 * (input rate, or the output rate expressed in input time), so it both removes images when the
 * signal is slowed down / upsampled and removes aliases when it is sped up / downsampled.
 *
 * Design (in cycles per sample of the lower rate):
 *   passband edge 0.45, stopband edge 0.50 (no component anywhere above the lower Nyquist
 *   survives: alias and image rejection hold across the whole band, not only in the passband);
 *   cutoff fc = 0.475; Kaiser β and half-width from the attenuation A by Kaiser's formulas.
 *   - 'archive': A = 147 dB design (measured ≥ 140 dB; passband ripple ≈ 1e-6 dB);
 *   - 'draft':   A = 95 dB design (measured ≥ 90 dB), about 60 % of the taps.
 *
 * Evaluation: the kernel g(t) = s·h(s·t) (t in input samples, s = min(1, ratio)) is tabulated as
 * cubic polynomials in the fractional position (a Farrow structure), L segments per input
 * sample, each fitted exactly through four points of the analytic kernel. Per output sample the
 * fractional position selects the segment and one Horner evaluation per tap gives the
 * coefficients. For a constant ratio that is an exact fraction a/b with a small enough b, a bank of
 * b exact phases is precomputed instead (plain polyphase FIR, no per-sample coefficient work).
 *
 * Alignment (latency handling): output frame n is the band-limited input at input position
 * p_n (p_0 = 0, p_{n+1} = p_n + 1/ratio(p_n)), so output frame 0 lines up with input frame 0 and
 * there is no delay to remove. Input before frame 0 and after the last frame is taken as silence.
 * `process()` holds back outputs whose kernel reaches past the input received so far (about
 * `lookaheadFrames` input frames); `flush()` releases them. The run produces exactly the output
 * frames with p_n < N (N = total input frames): ⌈N·ratio⌉ for a constant ratio.
 *
 * Ratio convention: ratio = output frames per input frame = (outRate / inRate) / factor, where
 * factor is the varispeed factor (played speed ÷ recorded speed; 2 plays twice as fast).
 */
import { ParameterError } from '../errors.ts';
import type { AudioSource, Block } from '../source.ts';
import { besselI0, kaiserBeta } from './window.ts';

export type ResampleQuality = 'archive' | 'draft';

/** A ratio (output frames per input frame) that changes with the input position. */
export interface TimeVaryingRatio {
  /** Ratio at input position `inputFrame` (fractional frames from the start of the input). */
  ratioAt(inputFrame: number): number;
  /** Smallest ratio the function returns over the run (sizes the anti-alias kernel and history). */
  readonly minRatio: number;
  /** Largest ratio over the run (for output-length hints; optional). */
  readonly maxRatio?: number;
}

export interface ResamplerOptions {
  channelCount: number;
  /** Output frames per input frame: a constant, or a smooth function of the input position. */
  ratio: number | TimeVaryingRatio;
  quality?: ResampleQuality;
}

/** Published design figures of one quality (cycles per sample of the lower rate). */
export interface KernelDesign {
  readonly quality: ResampleQuality;
  readonly passbandEdge: number;
  readonly stopbandEdge: number;
  readonly cutoff: number;
  /** Kaiser design attenuation A in dB. */
  readonly designAttenuationDb: number;
  readonly beta: number;
  /** Kernel half-width in samples of the lower rate. */
  readonly halfWidth: number;
  /** Farrow segments per input sample. */
  readonly segmentsPerSample: number;
}

/** Smallest and largest ratio accepted (factor 0.25–4 combined with rate changes up to 16:1). */
export const MIN_RATIO = 1 / 64;
export const MAX_RATIO = 64;

const PASS = 0.45;
const STOP = 0.5;

export function kernelDesign(quality: ResampleQuality): KernelDesign {
  if (quality !== 'archive' && quality !== 'draft') {
    throw new ParameterError(`quality "${String(quality)}" must be archive or draft`);
  }
  const a = quality === 'archive' ? 147 : 95;
  const dw = 2 * Math.PI * (STOP - PASS);
  // Kaiser: length M + 1 with M = (A − 7.95)/(2.285·Δω); half-width M/2.
  const halfWidth = (a - 7.95) / (2.285 * dw) / 2;
  return {
    quality,
    passbandEdge: PASS,
    stopbandEdge: STOP,
    cutoff: (PASS + STOP) / 2,
    designAttenuationDb: a,
    beta: kaiserBeta(a),
    halfWidth,
    segmentsPerSample: quality === 'archive' ? 128 : 64,
  };
}

/**
 * The continuous kernel h(u) (u in samples of the lower rate): 2fc·sinc(2fc·u)·w(u), with a Kaiser
 * window w of half-width W. ∫h du = 1 (unity gain in the passband).
 */
export function kernelValue(d: KernelDesign, u: number): number {
  const au = Math.abs(u);
  if (au > d.halfWidth) return 0;
  const r = au / d.halfWidth;
  const w = besselI0(d.beta * Math.sqrt(Math.max(0, 1 - r * r))) / besselI0(d.beta);
  const x = 2 * d.cutoff * au;
  const sinc = x < 1e-9 ? 1 : Math.sin(Math.PI * x) / (Math.PI * x);
  return 2 * d.cutoff * sinc * w;
}

/** Monomial coefficients of the cubic through (0,y0), (1/3,y1), (2/3,y2), (1,y3). */
function cubicThrough(y0: number, y1: number, y2: number, y3: number, out: Float64Array, at: number): void {
  // Newton divided differences on nodes 0, 1/3, 2/3, 1 (spacing h = 1/3).
  const d1 = (y1 - y0) * 3;
  const d2 = (y2 - y1) * 3;
  const d3 = (y3 - y2) * 3;
  const e1 = ((d2 - d1) * 3) / 2;
  const e2 = ((d3 - d2) * 3) / 2;
  const f1 = e2 - e1; // third divided difference (÷ (1 − 0) = 1)
  // P(μ) = y0 + d1·μ + e1·μ(μ − 1/3) + f1·μ(μ − 1/3)(μ − 2/3)
  out[at] = y0;
  out[at + 1] = d1 - e1 / 3 + (f1 * 2) / 9;
  out[at + 2] = e1 - f1;
  out[at + 3] = f1;
}

/** Best rational approximation a/b of x with b ≤ maxDen, by continued fractions; null if not exact. */
export function exactFraction(x: number, maxDen: number): [number, number] | null {
  let h0 = 0, h1 = 1, k0 = 1, k1 = 0;
  let v = x;
  for (let i = 0; i < 40; i++) {
    const a = Math.floor(v);
    const h2 = a * h1 + h0, k2 = a * k1 + k0;
    if (k2 > maxDen) return null;
    h0 = h1; h1 = h2; k0 = k1; k1 = k2;
    if (Math.abs(h1 / k1 - x) <= 1e-13 * Math.abs(x)) return [h1, k1];
    const f = v - a;
    if (f < 1e-15) return null;
    v = 1 / f;
  }
  return null;
}

/** Upper bound on the bank size (coefficients) for the exact-phase polyphase path. */
const MAX_BANK = 1 << 16;

export class Resampler {
  readonly channelCount: number;
  readonly quality: ResampleQuality;
  readonly design: KernelDesign;
  /** Input frames the kernel reaches past the current output position (held back until flush). */
  readonly lookaheadFrames: number;

  readonly #constant: number | null;
  readonly #varying: TimeVaryingRatio | null;
  /** Half-length in input samples for the largest kernel used (history kept behind the position). */
  readonly #kMax: number;
  // Uniform Farrow table for the constant / s = 1 kernel: [segment j][tap k][4].
  readonly #uniK: number;
  readonly #uniTaps: number;
  readonly #uniTable: Float64Array;
  readonly #segments: number;
  // Exact-phase bank (constant rational ratio): [phase j][tap k].
  readonly #bank: Float64Array | null;
  readonly #bankNum: number; // step = num/den input frames per output frame
  readonly #bankDen: number;
  // Symmetric table of h(u), u ≥ 0, for the time-varying path with s < 1: [segment][4].
  readonly #symTable: Float64Array | null;
  readonly #symSegments: number;
  readonly #coef: Float64Array;

  // Input history: #hist[c][i] is input frame #origin + i; #filled frames are valid.
  #hist: Float64Array[];
  #origin: number;
  #filled = 0;
  // Position of the next output: #base + #frac (or #base + #phase/#bankDen in bank mode).
  #base = 0;
  #frac = 0;
  #phase = 0;
  #inputFrames = 0;
  #finished = false;
  readonly #stepInt: number;
  readonly #stepFrac: number;

  constructor(options: ResamplerOptions) {
    const { channelCount } = options;
    if (!Number.isInteger(channelCount) || channelCount < 1) {
      throw new ParameterError(`channelCount=${channelCount} must be a whole number ≥ 1`);
    }
    this.channelCount = channelCount;
    this.quality = options.quality ?? 'archive';
    this.design = kernelDesign(this.quality);
    const d = this.design;
    const checkRatio = (r: number, what: string) => {
      if (!(Number.isFinite(r) && r >= MIN_RATIO && r <= MAX_RATIO)) {
        throw new ParameterError(`${what}=${r} is outside ${MIN_RATIO.toFixed(6)} … ${MAX_RATIO}`);
      }
    };
    let sConst: number;
    if (typeof options.ratio === 'number') {
      checkRatio(options.ratio, 'ratio');
      this.#constant = options.ratio;
      this.#varying = null;
      sConst = Math.min(1, options.ratio);
    } else {
      checkRatio(options.ratio.minRatio, 'minRatio');
      this.#constant = null;
      this.#varying = options.ratio;
      sConst = 1;
    }
    const sMin = this.#varying ? Math.min(1, this.#varying.minRatio) : sConst;
    this.#kMax = Math.ceil(d.halfWidth / sMin) + 1;
    this.lookaheadFrames = this.#kMax;

    // Uniform table: taps k = 0…T−1 sit at t = (k − K + 1) − frac for frac ∈ [0, 1).
    const L = d.segmentsPerSample;
    this.#segments = L;
    const K = Math.ceil(d.halfWidth / sConst);
    const T = 2 * K;
    this.#uniK = K;
    this.#uniTaps = T;
    this.#uniTable = new Float64Array(L * T * 4);
    const g = (t: number) => sConst * kernelValue(d, sConst * t);
    // Values at frac = j/L + i/(3L), i = 0…3, shared between neighbouring segments.
    const col = new Float64Array(3 * L + 1);
    for (let k = 0; k < T; k++) {
      const t0 = k - K + 1;
      for (let q = 0; q <= 3 * L; q++) col[q] = g(t0 - q / (3 * L));
      for (let j = 0; j < L; j++) {
        const q = 3 * j;
        cubicThrough(col[q]!, col[q + 1]!, col[q + 2]!, col[q + 3]!, this.#uniTable, (j * T + k) * 4);
      }
    }

    // Exact-phase bank for constant rational steps.
    this.#bank = null;
    this.#bankNum = 0;
    this.#bankDen = 0;
    let stepInt = 0, stepFrac = 0;
    if (this.#constant !== null) {
      const step = 1 / this.#constant;
      stepInt = Math.floor(step);
      stepFrac = step - stepInt;
      const frac = exactFraction(step, Math.floor(MAX_BANK / T));
      if (frac) {
        const [num, den] = frac;
        this.#bankNum = num;
        this.#bankDen = den;
        const bank = new Float64Array(den * T);
        for (let j = 0; j < den; j++) this.#uniformCoefficients(j / den, bank, j * T);
        this.#bank = bank;
      }
    }
    this.#stepInt = stepInt;
    this.#stepFrac = stepFrac;

    // Symmetric table for time-varying ratios below 1.
    if (this.#varying && this.#varying.minRatio < 1) {
      const Ls = L;
      const segs = Math.ceil(d.halfWidth * Ls) + 1;
      const t = new Float64Array(segs * 4 + 8);
      const vals = new Float64Array(3 * segs + 1);
      for (let q = 0; q <= 3 * segs; q++) vals[q] = kernelValue(d, q / (3 * Ls));
      for (let j = 0; j < segs; j++) cubicThrough(vals[3 * j]!, vals[3 * j + 1]!, vals[3 * j + 2]!, vals[3 * j + 3]!, t, j * 4);
      this.#symTable = t;
      this.#symSegments = segs;
    } else {
      this.#symTable = null;
      this.#symSegments = 0;
    }
    this.#coef = new Float64Array(2 * this.#kMax + 2);

    // History starts with kMax frames of silence before input frame 0.
    this.#origin = -this.#kMax;
    this.#filled = this.#kMax;
    const cap = Math.max(8192, 4 * this.#kMax);
    this.#hist = Array.from({ length: channelCount }, () => new Float64Array(cap));
  }

  /** Output frames a constant-ratio run over `inputFrames` produces: ⌈N·ratio⌉ (p_n < N). */
  outputFramesFor(inputFrames: number): number {
    if (this.#constant === null) {
      throw new ParameterError('outputFramesFor needs a constant ratio');
    }
    if (this.#bank) return Math.ceil((inputFrames * this.#bankDen) / this.#bankNum - 1e-9);
    return Math.ceil(inputFrames * this.#constant - 1e-9);
  }

  /** Coefficients of the uniform kernel at fractional position `frac` into out[at…at+T). */
  #uniformCoefficients(frac: number, out: Float64Array, at: number): void {
    const T = this.#uniTaps;
    const x = frac * this.#segments;
    let j = Math.floor(x);
    if (j >= this.#segments) j = this.#segments - 1;
    const mu = x - j;
    const tab = this.#uniTable;
    let o = j * T * 4;
    for (let k = 0; k < T; k++, o += 4) {
      out[at + k] = tab[o]! + mu * (tab[o + 1]! + mu * (tab[o + 2]! + mu * tab[o + 3]!));
    }
  }

  /** Feeds one planar block; returns the output frames that are complete so far. */
  process(block: Block): Float64Array[] {
    if (this.#finished) throw new ParameterError('Resampler.process after flush; call reset() first');
    if (block.length !== this.channelCount) {
      throw new ParameterError(`block has ${block.length} channels, the resampler ${this.channelCount}`);
    }
    const n = block[0]!.length;
    for (const ch of block) {
      if (ch.length !== n) throw new ParameterError('all channels of a block must have the same length');
    }
    this.#append(block, n);
    this.#inputFrames += n;
    return this.#emit(Infinity);
  }

  /** Ends the input: pads with silence and returns the remaining output frames. */
  flush(): Float64Array[] {
    if (this.#finished) return emptyBlock(this.channelCount, 0);
    const pad = this.#kMax + 2;
    const zeros = Array.from({ length: this.channelCount }, () => new Float64Array(pad));
    this.#append(zeros, pad);
    this.#finished = true;
    return this.#emit(this.#inputFrames);
  }

  /** Starts a new run (same ratio and quality). */
  reset(): void {
    this.#origin = -this.#kMax;
    this.#filled = this.#kMax;
    for (const h of this.#hist) h.fill(0, 0, this.#kMax);
    this.#base = 0;
    this.#frac = 0;
    this.#phase = 0;
    this.#inputFrames = 0;
    this.#finished = false;
  }

  #append(block: Block, n: number): void {
    let hist = this.#hist;
    const cap = hist[0]!.length;
    if (this.#filled + n > cap) {
      // Drop history no future output can reach.
      const keepFrom = Math.max(this.#origin, this.#base - this.#kMax - 1);
      const drop = keepFrom - this.#origin;
      const keep = this.#filled - drop;
      const need = keep + n;
      if (need > cap) {
        const newCap = Math.max(need, 2 * cap);
        hist = hist.map((h) => {
          const g = new Float64Array(newCap);
          g.set(h.subarray(drop, drop + keep));
          return g;
        });
        this.#hist = hist;
      } else {
        for (const h of hist) h.copyWithin(0, drop, drop + keep);
      }
      this.#origin = keepFrom;
      this.#filled = keep;
    }
    for (let c = 0; c < this.channelCount; c++) hist[c]!.set(block[c]!, this.#filled);
    this.#filled += n;
  }

  /** Emits outputs whose kernel is covered by the history; with `limit`, only positions < limit. */
  #emit(limit: number): Float64Array[] {
    const lastIndex = this.#origin + this.#filled - 1; // newest input frame held
    const K = this.#kMax;
    // Estimate how many outputs can come out, for allocation.
    const avail = lastIndex - K - this.#base;
    if (avail < 0) return emptyBlock(this.channelCount, 0);
    const maxRatio = this.#constant ?? Math.max(this.#varying!.maxRatio ?? MAX_RATIO, 1);
    let cap = Math.ceil((avail + 2) * maxRatio) + 2;
    if (!Number.isFinite(cap) || cap > 1 << 24) cap = 1 << 24;
    let out = emptyBlock(this.channelCount, cap);
    let count = 0;
    const C = this.channelCount;
    const hist = this.#hist;
    const origin = this.#origin;
    const x0 = hist[0]!;
    const x1 = C > 1 ? hist[1]! : x0;

    if (this.#bank) {
      const bank = this.#bank;
      const T = this.#uniTaps, Ku = this.#uniK;
      const num = this.#bankNum, den = this.#bankDen;
      const advInt = Math.floor(num / den), advRem = num - advInt * den;
      let base = this.#base, phase = this.#phase;
      while (base + K <= lastIndex && base + phase / den < limit) {
        if (count === cap) out = grow(out, (cap *= 2));
        const start = base - Ku + 1 - origin;
        const off = phase * T;
        if (C === 2) dot2(bank, off, T, x0, x1, start, out[0]!, out[1]!, count);
        else for (let c = 0; c < C; c++) out[c]![count] = dot1(bank, off, T, hist[c]!, start);
        count++;
        base += advInt;
        phase += advRem;
        if (phase >= den) {
          phase -= den;
          base++;
        }
      }
      this.#base = base;
      this.#phase = phase;
    } else if (this.#constant !== null) {
      const T = this.#uniTaps, Ku = this.#uniK, coef = this.#coef;
      let base = this.#base, frac = this.#frac;
      const si = this.#stepInt, sf = this.#stepFrac;
      while (base + K <= lastIndex && base + frac < limit) {
        if (count === cap) out = grow(out, (cap *= 2));
        const start = base - Ku + 1 - origin;
        this.#uniformCoefficients(frac, coef, 0);
        if (C === 2) dot2(coef, 0, T, x0, x1, start, out[0]!, out[1]!, count);
        else for (let c = 0; c < C; c++) out[c]![count] = dot1(coef, 0, T, hist[c]!, start);
        count++;
        frac += sf;
        const carry = Math.floor(frac);
        frac -= carry;
        base += si + carry;
      }
      this.#base = base;
      this.#frac = frac;
    } else {
      const v = this.#varying!;
      const coef = this.#coef;
      const d = this.design;
      let base = this.#base, frac = this.#frac;
      while (base + K <= lastIndex && base + frac < limit) {
        if (count === cap) out = grow(out, (cap *= 2));
        const r = v.ratioAt(base + frac);
        if (!(r >= MIN_RATIO && r <= MAX_RATIO) || r < v.minRatio * (1 - 1e-9)) {
          throw new ParameterError(`ratio ${r} at input frame ${base + frac} is outside the declared range`);
        }
        let T: number, Kc: number;
        if (r >= 1) {
          Kc = this.#uniK;
          T = this.#uniTaps;
          this.#uniformCoefficients(frac, coef, 0);
        } else {
          Kc = Math.ceil(d.halfWidth / r);
          T = 2 * Kc;
          this.#scaledCoefficients(r, frac, Kc, T, coef);
        }
        const start = base - Kc + 1 - origin;
        if (C === 2) dot2(coef, 0, T, x0, x1, start, out[0]!, out[1]!, count);
        else for (let c = 0; c < C; c++) out[c]![count] = dot1(coef, 0, T, hist[c]!, start);
        count++;
        frac += 1 / r;
        const carry = Math.floor(frac);
        frac -= carry;
        base += carry;
      }
      this.#base = base;
      this.#frac = frac;
    }
    return out.map((o) => o.slice(0, count));
  }

  /** Coefficients s·h(s·t) for taps t = (k − K + 1) − frac, from the symmetric table. */
  #scaledCoefficients(s: number, frac: number, K: number, T: number, out: Float64Array): void {
    const tab = this.#symTable!;
    const L = this.#segments;
    const segs = this.#symSegments;
    const scale = s * L;
    for (let k = 0; k < T; k++) {
      const t = k - K + 1 - frac;
      const x = Math.abs(t) * scale;
      const j = Math.floor(x);
      if (j >= segs) {
        out[k] = 0;
        continue;
      }
      const mu = x - j;
      const o = j * 4;
      out[k] = s * (tab[o]! + mu * (tab[o + 1]! + mu * (tab[o + 2]! + mu * tab[o + 3]!)));
    }
  }
}

function emptyBlock(channelCount: number, frames: number): Float64Array[] {
  return Array.from({ length: channelCount }, () => new Float64Array(frames));
}

function grow(out: Float64Array[], cap: number): Float64Array[] {
  return out.map((o) => {
    const g = new Float64Array(cap);
    g.set(o);
    return g;
  });
}

/** Σ h[off+k]·x[start+k], two independent partial sums. */
function dot1(h: Float64Array, off: number, T: number, x: Float64Array, start: number): number {
  let a = 0, b = 0, k = 0;
  const T2 = T & ~1;
  for (; k < T2; k += 2) {
    a += h[off + k]! * x[start + k]!;
    b += h[off + k + 1]! * x[start + k + 1]!;
  }
  if (k < T) a += h[off + k]! * x[start + k]!;
  return a + b;
}

/** Two channels sharing coefficient loads. */
function dot2(
  h: Float64Array, off: number, T: number,
  x0: Float64Array, x1: Float64Array, start: number,
  y0: Float64Array, y1: Float64Array, at: number,
): void {
  let a0 = 0, a1 = 0, b0 = 0, b1 = 0, k = 0;
  const T2 = T & ~1;
  for (; k < T2; k += 2) {
    const h0 = h[off + k]!, h1 = h[off + k + 1]!;
    const i = start + k;
    a0 += h0 * x0[i]!;
    a1 += h0 * x1[i]!;
    b0 += h1 * x0[i + 1]!;
    b1 += h1 * x1[i + 1]!;
  }
  if (k < T) {
    const h0 = h[off + k]!;
    a0 += h0 * x0[start + k]!;
    a1 += h0 * x1[start + k]!;
  }
  y0[at] = a0 + b0;
  y1[at] = a1 + b1;
}

/** Output frames per input frame for varispeed `factor` (played ÷ recorded speed) and a rate change. */
export function ratioForFactor(factor: number, inputRateHz: number, outputRateHz = inputRateHz): number {
  if (!(factor > 0) || !Number.isFinite(factor)) throw new ParameterError(`factor=${factor} must be a positive number`);
  return outputRateHz / inputRateHz / factor;
}

/** A speed curve: factor (played ÷ recorded) at times in seconds of the input. */
export interface SpeedCurve {
  readonly timesSeconds: readonly number[];
  readonly factors: readonly number[];
}

/**
 * A smooth interpolant through (t, y) points: monotone piecewise cubic (Fritsch & Carlson, "Monotone
 * piecewise cubic interpolation", SIAM J. Numer. Anal. 17(2), 1980), so no overshoot between points;
 * held constant outside the first and last point.
 */
export function smoothCurve(times: readonly number[], values: readonly number[]): (t: number) => number {
  const n = times.length;
  if (n === 0 || values.length !== n) throw new ParameterError('a curve needs matching, non-empty time and value lists');
  for (let i = 1; i < n; i++) {
    if (!(times[i]! > times[i - 1]!)) throw new ParameterError('curve times must increase');
  }
  if (n === 1) return () => values[0]!;
  const h = new Float64Array(n - 1), delta = new Float64Array(n - 1), m = new Float64Array(n);
  for (let i = 0; i < n - 1; i++) {
    h[i] = times[i + 1]! - times[i]!;
    delta[i] = (values[i + 1]! - values[i]!) / h[i]!;
  }
  m[0] = delta[0]!;
  m[n - 1] = delta[n - 2]!;
  for (let i = 1; i < n - 1; i++) {
    const d0 = delta[i - 1]!, d1 = delta[i]!;
    if (d0 * d1 <= 0) m[i] = 0;
    else {
      const w1 = 2 * h[i]! + h[i - 1]!, w2 = h[i]! + 2 * h[i - 1]!;
      m[i] = (w1 + w2) / (w1 / d0 + w2 / d1);
    }
  }
  let last = 0;
  return (t: number) => {
    if (t <= times[0]!) return values[0]!;
    if (t >= times[n - 1]!) return values[n - 1]!;
    let i = last;
    if (!(times[i]! <= t && t < times[i + 1]!)) {
      let lo = 0, hi = n - 1;
      while (hi - lo > 1) {
        const mid = (lo + hi) >> 1;
        if (times[mid]! <= t) lo = mid;
        else hi = mid;
      }
      i = lo;
      last = i;
    }
    const hh = h[i]!, u = (t - times[i]!) / hh;
    const u2 = u * u, u3 = u2 * u;
    return (
      (2 * u3 - 3 * u2 + 1) * values[i]! +
      (u3 - 2 * u2 + u) * hh * m[i]! +
      (-2 * u3 + 3 * u2) * values[i + 1]! +
      (u3 - u2) * hh * m[i + 1]!
    );
  };
}

/**
 * The time-varying ratio that plays a recording along a speed curve.
 * - mode 'undo': the curve is a measured speed factor S(t) of the input; the output plays the input
 *   at 1/S(t), which brings every moment back to its recorded speed (ratio = rateRatio·S).
 * - mode 'play': the curve is the factor to apply (ratio = rateRatio / F).
 */
export function ratioFromSpeedCurve(
  curve: SpeedCurve,
  opts: { inputRateHz: number; outputRateHz?: number; mode: 'undo' | 'play' },
): TimeVaryingRatio {
  const { inputRateHz } = opts;
  const rate = (opts.outputRateHz ?? inputRateHz) / inputRateHz;
  for (const f of curve.factors) {
    if (!(f > 0) || !Number.isFinite(f)) throw new ParameterError(`speed curve factor ${f} must be positive`);
  }
  const f = smoothCurve(curve.timesSeconds, curve.factors);
  const undo = opts.mode === 'undo';
  const minF = Math.min(...curve.factors), maxF = Math.max(...curve.factors);
  return {
    ratioAt: (frame: number) => {
      const v = f(frame / inputRateHz);
      return undo ? rate * v : rate / v;
    },
    minRatio: undo ? rate * minF : rate / maxF,
    maxRatio: undo ? rate * maxF : rate / minF,
  };
}

/** Streams a source through a resampler: yields output blocks, then the flushed tail. */
export async function* resampleSource(
  source: AudioSource,
  opts: Omit<ResamplerOptions, 'channelCount'> & { blockFrames?: number },
): AsyncIterable<Float64Array[]> {
  const r = new Resampler({ ...opts, channelCount: source.channelCount });
  for await (const block of source.blocks({ blockFrames: opts.blockFrames })) {
    const out = r.process(block);
    if (out[0]!.length > 0) yield out;
  }
  const tail = r.flush();
  if (tail[0]!.length > 0) yield tail;
}
