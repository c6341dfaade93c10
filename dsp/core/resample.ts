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
 * The kernel's design (passband 0.45, stopband 0.5 of the lower rate; 'archive' and 'draft') is in
 * ./resample-kernel.ts; speed factors and curves become ratios in ./speed-curve.ts.
 *
 * Evaluation: the kernel g(t) = s·h(s·t) (t in input samples, s = min(1, ratio)) is tabulated as
 * cubic polynomials in the fractional position (a Farrow structure), L segments per input
 * sample, each fitted exactly through four points of the analytic kernel. Per output sample the
 * fractional position selects the segment and one Horner evaluation per tap gives the
 * coefficients. For a constant ratio that is an exact fraction a/b with a small enough b, a bank of
 * b exact phases is precomputed instead (plain polyphase FIR, no per-sample coefficient work).
 * The inner loops run as WebAssembly SIMD kernels (./simd-kernels.ts) when the engine has them,
 * else as plain loops; both give the same samples to rounding.
 *
 * Time-varying ratio (a speed curve): the position advances by 1/ratio(p) per output sample. A
 * curve whose ratio stays within 5 % of its lowest value is rendered with one kernel designed for
 * that lowest ratio (no aliasing at any point; the passband edge is 0.45 × the slowest point's
 * rate, e.g. 0.4455 for a ±0.5 % drift); wider curves rescale the kernel at every output sample.
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
import { BugError, ParameterError } from '../errors.ts';
import { createSimdKernels, type SimdKernels } from './simd-kernels.ts';
import { streamThrough, type AudioSource, type Block } from '../source.ts';
import { cubicThrough, kernelDesign, kernelValue, type KernelDesign, type ResampleQuality } from './resample-kernel.ts';

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

/** Smallest and largest ratio accepted (factor 0.25–4 combined with rate changes up to 16:1). */
export const MIN_RATIO = 1 / 64;
export const MAX_RATIO = 64;

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

/**
 * Upper bound on the bank size (coefficients = phases × taps) for the exact-phase polyphase path; a
 * constant ratio num/den uses the bank when den × taps fits, else the Farrow path (same result).
 */
export const MAX_BANK_COEFFICIENTS = 1 << 17;
const MAX_BANK = MAX_BANK_COEFFICIENTS;
/** Input frames handled per emission step (bounds the history buffer). */
const CHUNK = 8192;
/** Outputs one dot2Run call computes at most (the exact-phase bank, two channels). */
const RUN = 256;

export type ResampleEngine = 'auto' | 'simd' | 'js';

/** Index of coefficient c (0…3) of tap k in the pair-interleaved Farrow layout of one segment. */
const farrowIndex = (k: number, c: number) => 8 * (k >> 1) + 2 * c + (k & 1);

export class Resampler {
  readonly channelCount: number;
  readonly quality: ResampleQuality;
  readonly design: KernelDesign;
  /** Input frames the kernel reaches past the current output position (held back until flush). */
  readonly lookaheadFrames: number;
  /** 'simd' when the WebAssembly SIMD kernels run the inner loops, else 'js'. */
  readonly engine: 'simd' | 'js';

  readonly #constant: number | null;
  readonly #varying: TimeVaryingRatio | null;
  /** Time-varying ratio rendered with one kernel (see the constructor). */
  readonly #fixedKernel: boolean = false;
  /** Half-length in input samples of the largest kernel used. */
  readonly #kMax: number;
  readonly #segments: number;
  // Uniform Farrow table (constant kernel, or s = 1): [segment j][tap pair][c0 c0' c1 c1' c2 c2' c3 c3'].
  readonly #uniK: number;
  readonly #uniTaps: number;
  readonly #uni: Float64Array;
  readonly #uniAt: number; // byte offset in kernel memory (SIMD)
  // Exact-phase bank (constant rational step num/den): [phase j][tap k].
  readonly #bank: Float64Array | null;
  readonly #bankAt: number;
  readonly #bankNum: number;
  readonly #bankDen: number;
  // Symmetric table of h(u), u ≥ 0, for time-varying ratios below 1: [segment][4].
  readonly #symTable: Float64Array | null;
  readonly #symSegments: number;
  readonly #coef: Float64Array;
  readonly #coefAt: number;
  readonly #outSlot: Float64Array;
  /** dot2Run's output pairs, and their byte offset. */
  readonly #run: Float64Array;
  readonly #runAt: number;
  readonly #outAt: number;
  readonly #simd: SimdKernels | null;

  // Input history: #hist[c][i] is input frame #origin + i; #filled frames are valid.
  readonly #hist: Float64Array[];
  readonly #histAt: number[];
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

  constructor(options: ResamplerOptions & { engine?: ResampleEngine }) {
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
      const { minRatio, maxRatio } = options.ratio;
      // A curve that stays within 5 % (drift, slow wow) uses one kernel designed for its lowest
      // ratio: no aliasing anywhere, passband edge at 0.45 × the slowest point's rate, and the fast
      // fixed-kernel loops. Wider curves rescale the kernel at every output sample (exact, slower).
      this.#fixedKernel = maxRatio !== undefined && maxRatio / minRatio <= 1.05;
      sConst = this.#fixedKernel ? Math.min(1, minRatio) : 1;
    }
    const sMin = this.#varying ? Math.min(1, this.#varying.minRatio) : sConst;
    this.#kMax = Math.ceil(d.halfWidth / sMin) + 1;
    this.lookaheadFrames = this.#kMax;
    // Segments per input sample: the kernel stretched by 1/s is smoother by s, so the same accuracy
    // per lower-rate sample needs only s·L of them (keeps the table small at large ratios).
    const L = Math.max(4, Math.ceil(d.segmentsPerSample * sConst));
    this.#segments = L;
    const K = Math.ceil(d.halfWidth / sConst);
    const T = 2 * K;
    this.#uniK = K;
    this.#uniTaps = T;

    // Exact-phase bank for constant rational steps (decided first: it sizes the memory).
    let stepInt = 0, stepFrac = 0, num = 0, den = 0;
    if (this.#constant !== null) {
      const step = 1 / this.#constant;
      stepInt = Math.floor(step);
      stepFrac = step - stepInt;
      const frac = exactFraction(step, Math.floor(MAX_BANK / T));
      if (frac) [num, den] = frac;
    }
    this.#stepInt = stepInt;
    this.#stepFrac = stepFrac;
    this.#bankNum = num;
    this.#bankDen = den;

    // One memory for everything the inner loops touch (WebAssembly memory when SIMD is used).
    const coefLen = 2 * this.#kMax + 2;
    const histCap = CHUNK + 2 * this.#kMax + 8;
    const sizes = [L * T * 4, den * T, coefLen, 2 * channelCount, ...Array.from({ length: channelCount }, () => histCap), 2 * RUN];
    const offsets: number[] = [];
    let total = 0;
    for (const n of sizes) {
      offsets.push(total);
      total += n + (n & 1); // keep every region 16-byte aligned
    }
    const engine = options.engine ?? 'auto';
    this.#simd = engine === 'js' ? null : createSimdKernels(8 * total);
    if (engine === 'simd' && !this.#simd) throw new ParameterError('WebAssembly SIMD is not available here');
    this.engine = this.#simd ? 'simd' : 'js';
    const memory = this.#simd ? this.#simd.f64 : new Float64Array(total);
    const view = (i: number) => memory.subarray(offsets[i]!, offsets[i]! + sizes[i]!);
    this.#uni = view(0);
    this.#uniAt = 8 * offsets[0]!;
    this.#coef = view(2);
    this.#coefAt = 8 * offsets[2]!;
    this.#outSlot = view(3);
    this.#outAt = 8 * offsets[3]!;
    this.#hist = Array.from({ length: channelCount }, (_, c) => view(4 + c));
    this.#histAt = Array.from({ length: channelCount }, (_, c) => 8 * offsets[4 + c]!);
    this.#run = view(4 + channelCount);
    this.#runAt = 8 * offsets[4 + channelCount]!;

    // Uniform table: taps k = 0…T−1 sit at t = (k − K + 1) − frac for frac ∈ [0, 1); each segment a
    // cubic through four exact kernel values (shared with the neighbouring segments).
    const g = (t: number) => sConst * kernelValue(d, sConst * t);
    const col = new Float64Array(3 * L + 1);
    const cubic = new Float64Array(4);
    for (let k = 0; k < T; k++) {
      const t0 = k - K + 1;
      for (let q = 0; q <= 3 * L; q++) col[q] = g(t0 - q / (3 * L));
      for (let j = 0; j < L; j++) {
        const q = 3 * j;
        cubicThrough(col[q]!, col[q + 1]!, col[q + 2]!, col[q + 3]!, cubic, 0);
        for (let c = 0; c < 4; c++) this.#uni[j * T * 4 + farrowIndex(k, c)] = cubic[c]!;
      }
    }
    if (den > 0) {
      const bank = view(1);
      for (let j = 0; j < den; j++) this.#uniformCoefficientsJs(j / den, bank, j * T);
      this.#bank = bank;
      this.#bankAt = 8 * offsets[1]!;
    } else {
      this.#bank = null;
      this.#bankAt = 0;
    }

    // Symmetric table for time-varying ratios below 1.
    if (this.#varying && !this.#fixedKernel && this.#varying.minRatio < 1) {
      const segs = Math.ceil(d.halfWidth * L) + 1;
      const t = new Float64Array(segs * 4 + 8);
      const vals = new Float64Array(3 * segs + 1);
      for (let q = 0; q <= 3 * segs; q++) vals[q] = kernelValue(d, q / (3 * L));
      for (let j = 0; j < segs; j++) cubicThrough(vals[3 * j]!, vals[3 * j + 1]!, vals[3 * j + 2]!, vals[3 * j + 3]!, t, j * 4);
      this.#symTable = t;
      this.#symSegments = segs;
    } else {
      this.#symTable = null;
      this.#symSegments = 0;
    }

    // History starts with kMax frames of silence before input frame 0.
    this.#origin = -this.#kMax;
    this.#filled = this.#kMax;
  }

  /** Output frames a constant-ratio run over `inputFrames` produces: ⌈N·ratio⌉ (p_n < N). */
  outputFramesFor(inputFrames: number): number {
    if (this.#constant === null) {
      throw new ParameterError('outputFramesFor needs a constant ratio');
    }
    if (this.#bank) return Math.ceil((inputFrames * this.#bankDen) / this.#bankNum - 1e-9);
    return Math.ceil(inputFrames * this.#constant - 1e-9);
  }

  /** Coefficients of the uniform kernel at fractional position `frac` into out[at…at+T) (plain loop). */
  #uniformCoefficientsJs(frac: number, out: Float64Array, at: number): void {
    const T = this.#uniTaps;
    const x = frac * this.#segments;
    let j = Math.floor(x);
    if (j >= this.#segments) j = this.#segments - 1;
    const mu = x - j;
    const tab = this.#uni;
    let o = j * T * 4;
    for (let k = 0; k < T; k += 2, o += 8) {
      out[at + k] = tab[o]! + mu * (tab[o + 2]! + mu * (tab[o + 4]! + mu * tab[o + 6]!));
      out[at + k + 1] = tab[o + 1]! + mu * (tab[o + 3]! + mu * (tab[o + 5]! + mu * tab[o + 7]!));
    }
  }

  /** Uniform-kernel coefficients at `frac` into the coefficient scratch. */
  #uniformCoefficients(frac: number): void {
    if (!this.#simd) {
      this.#uniformCoefficientsJs(frac, this.#coef, 0);
      return;
    }
    const x = frac * this.#segments;
    let j = Math.floor(x);
    if (j >= this.#segments) j = this.#segments - 1;
    this.#simd.farrow(this.#uniAt + 32 * j * this.#uniTaps, x - j, this.#uniTaps, this.#coefAt);
  }

  /**
   * One output frame at `count` from T coefficients (in `h` at element `hOff`, byte `hAt` for SIMD)
   * applied to history index `start` of every channel.
   */
  #apply(h: Float64Array, hOff: number, hAt: number, T: number, start: number, out: Float64Array[], count: number): void {
    const C = this.channelCount;
    const k = this.#simd;
    if (k) {
      if (C === 2) {
        k.dot2(hAt, this.#histAt[0]! + 8 * start, this.#histAt[1]! + 8 * start, T, this.#outAt);
        out[0]![count] = this.#outSlot[0]!;
        out[1]![count] = this.#outSlot[1]!;
      } else {
        for (let c = 0; c < C; c++) {
          k.dot1(hAt, this.#histAt[c]! + 8 * start, T, this.#outAt);
          out[c]![count] = this.#outSlot[0]!;
        }
      }
      return;
    }
    if (C === 2) dot2(h, hOff, T, this.#hist[0]!, this.#hist[1]!, start, out[0]!, out[1]!, count);
    else for (let c = 0; c < C; c++) out[c]![count] = dot1(h, hOff, T, this.#hist[c]!, start);
  }

  #acc: Collector | null = null;
  /** The output collector, emptied, with room for `capacity` frames. */
  #collector(capacity: number): Collector {
    this.#acc ??= new Collector(this.channelCount, capacity);
    return this.#acc.begin(capacity);
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
    const acc = this.#collector(this.#estimate(n));
    for (let i = 0; i < n; i += CHUNK) {
      const m = Math.min(CHUNK, n - i);
      this.#append(block, i, m);
      this.#inputFrames += m;
      this.#emit(Infinity, acc);
    }
    return acc.result();
  }

  /** Ends the input: pads with silence and returns the remaining output frames. */
  flush(): Float64Array[] {
    if (this.#finished) return emptyBlock(this.channelCount, 0);
    const acc = this.#collector(this.#estimate(this.#kMax + 2));
    let pad = this.#kMax + 2;
    const zeros = Array.from({ length: this.channelCount }, () => new Float64Array(Math.min(pad, CHUNK)));
    while (pad > 0) {
      const m = Math.min(pad, CHUNK);
      this.#append(zeros, 0, m);
      pad -= m;
      this.#emit(this.#inputFrames, acc);
    }
    this.#finished = true;
    return acc.result();
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

  #estimate(inputFrames: number): number {
    const r = this.#constant ?? Math.max(this.#varying!.maxRatio ?? 1, 1);
    return Math.min(1 << 24, Math.ceil((inputFrames + this.#kMax + 2) * r) + 16);
  }

  #append(block: Block, from: number, n: number): void {
    const cap = this.#hist[0]!.length;
    if (this.#filled + n > cap) {
      // Drop history no future output can reach.
      const keepFrom = Math.max(this.#origin, this.#base - this.#kMax - 1);
      const drop = keepFrom - this.#origin;
      const keep = this.#filled - drop;
      if (keep + n > cap) throw new BugError('resampler history overflow');
      for (const h of this.#hist) h.copyWithin(0, drop, drop + keep);
      this.#origin = keepFrom;
      this.#filled = keep;
    }
    for (let c = 0; c < this.channelCount; c++) this.#hist[c]!.set(block[c]!.subarray(from, from + n), this.#filled);
    this.#filled += n;
  }

  /** Emits outputs whose kernel is covered by the history; with `limit`, only positions < limit. */
  #emit(limit: number, acc: Collector): void {
    const lastIndex = this.#origin + this.#filled - 1; // newest input frame held
    const K = this.#kMax;
    const origin = this.#origin;
    if (this.#bank) {
      const bank = this.#bank, bankAt = this.#bankAt;
      const T = this.#uniTaps, Ku = this.#uniK;
      const num = this.#bankNum, den = this.#bankDen;
      const advInt = Math.floor(num / den), advRem = num - advInt * den;
      let base = this.#base, phase = this.#phase;
      const k = this.channelCount === 2 ? this.#simd : null;
      if (k) {
        // Runs of outputs in one call (the same sums as #apply's dot2, in the same order).
        const run = this.#run, x0 = this.#histAt[0]!, x1 = this.#histAt[1]!;
        for (;;) {
          let b = base, ph = phase, count = 0;
          while (count < RUN && b + K <= lastIndex && b + ph / den < limit) {
            count++;
            b += advInt;
            ph += advRem;
            if (ph >= den) {
              ph -= den;
              b++;
            }
          }
          if (count === 0) break;
          const start = base - Ku + 1 - origin;
          k.dot2Run(bankAt, T, den, advInt, advRem, phase, x0 + 8 * start, x1 + 8 * start, count, this.#runAt);
          const out = acc.reserve(count), o0 = out[0]!, o1 = out[1]!, at = acc.count;
          for (let i = 0; i < count; i++) {
            o0[at + i] = run[2 * i]!;
            o1[at + i] = run[2 * i + 1]!;
          }
          acc.count = at + count;
          base = b;
          phase = ph;
        }
      }
      while (base + K <= lastIndex && base + phase / den < limit) {
        const out = acc.slot();
        this.#apply(bank, phase * T, bankAt + 8 * phase * T, T, base - Ku + 1 - origin, out, acc.count++);
        base += advInt;
        phase += advRem;
        if (phase >= den) {
          phase -= den;
          base++;
        }
      }
      this.#base = base;
      this.#phase = phase;
    } else if (this.#constant !== null || this.#fixedKernel) {
      const T = this.#uniTaps, Ku = this.#uniK;
      let base = this.#base, frac = this.#frac;
      const si = this.#stepInt, sf = this.#stepFrac;
      const v = this.#varying;
      const fused = this.#simd && this.channelCount === 2 ? this.#simd : null;
      const L = this.#segments;
      while (base + K <= lastIndex && base + frac < limit) {
        const out = acc.slot();
        const start = base - Ku + 1 - origin;
        if (fused) {
          // Coefficients and both channels' sums in one pass over the table.
          const x = frac * L;
          let j = Math.floor(x);
          if (j >= L) j = L - 1;
          fused.farrowDot2(this.#uniAt + 32 * j * T, x - j, this.#histAt[0]! + 8 * start, this.#histAt[1]! + 8 * start, T, this.#outAt);
          out[0]![acc.count] = this.#outSlot[0]!;
          out[1]![acc.count++] = this.#outSlot[1]!;
        } else {
          this.#uniformCoefficients(frac);
          this.#apply(this.#coef, 0, this.#coefAt, T, start, out, acc.count++);
        }
        if (v) {
          const r = v.ratioAt(base + frac);
          if (!(r >= v.minRatio * (1 - 1e-9) && r <= (v.maxRatio ?? MAX_RATIO) * (1 + 1e-9))) {
            throw new ParameterError(`ratio ${r} at input frame ${base + frac} is outside the declared range`);
          }
          frac += 1 / r;
          const carry = Math.floor(frac);
          frac -= carry;
          base += carry;
        } else {
          frac += sf;
          const carry = Math.floor(frac);
          frac -= carry;
          base += si + carry;
        }
      }
      this.#base = base;
      this.#frac = frac;
    } else {
      const v = this.#varying!;
      const d = this.design;
      let base = this.#base, frac = this.#frac;
      while (base + K <= lastIndex && base + frac < limit) {
        const r = v.ratioAt(base + frac);
        if (!(r >= MIN_RATIO && r <= MAX_RATIO) || r < v.minRatio * (1 - 1e-9)) {
          throw new ParameterError(`ratio ${r} at input frame ${base + frac} is outside the declared range`);
        }
        let T: number, Kc: number;
        if (r >= 1) {
          Kc = this.#uniK;
          T = this.#uniTaps;
          this.#uniformCoefficients(frac);
        } else {
          Kc = Math.ceil(d.halfWidth / r);
          T = 2 * Kc;
          this.#scaledCoefficients(r, frac, Kc, T, this.#coef);
        }
        const out = acc.slot();
        this.#apply(this.#coef, 0, this.#coefAt, T, base - Kc + 1 - origin, out, acc.count++);
        frac += 1 / r;
        const carry = Math.floor(frac);
        frac -= carry;
        base += carry;
      }
      this.#base = base;
      this.#frac = frac;
    }
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

/** Growable planar output for one process()/flush() call. */
/** A collector's arrays are kept from call to call up to this many frames (2 MB a channel). */
const KEEP_FRAMES = 1 << 18;

class Collector {
  count = 0;
  #out: Float64Array[];
  constructor(readonly channelCount: number, capacity: number) {
    this.#out = emptyBlock(channelCount, Math.max(16, capacity));
  }
  /** Starts a new call's output (the arrays are kept from call to call), room for `capacity` frames. */
  begin(capacity: number): this {
    this.count = 0;
    if (capacity > this.#out[0]!.length) this.#out = emptyBlock(this.channelCount, capacity);
    return this;
  }
  /** The arrays to write frame `count` into (grown when full). */
  slot(): Float64Array[] {
    if (this.count === this.#out[0]!.length) this.#grow(2 * this.count);
    return this.#out;
  }
  /** The arrays to write frames `count` … `count + n − 1` into (grown when needed). */
  reserve(n: number): Float64Array[] {
    if (this.count + n > this.#out[0]!.length) this.#grow(Math.max(2 * this.#out[0]!.length, this.count + n));
    return this.#out;
  }
  #grow(cap: number): void {
    this.#out = this.#out.map((o) => {
      const g = new Float64Array(cap);
      g.set(o.subarray(0, this.count));
      return g;
    });
  }
  /** Copies of the frames written since `begin` (arrays longer than KEEP_FRAMES are let go). */
  result(): Float64Array[] {
    const r = this.#out.map((o) => o.slice(0, this.count));
    if (this.#out[0]!.length > KEEP_FRAMES) this.#out = emptyBlock(this.channelCount, 16);
    return r;
  }
}

function emptyBlock(channelCount: number, frames: number): Float64Array[] {
  return Array.from({ length: channelCount }, () => new Float64Array(frames));
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

/** Streams a source through a resampler: yields output blocks, then the flushed tail. */
export async function* resampleSource(
  source: AudioSource,
  opts: Omit<ResamplerOptions, 'channelCount'> & { blockFrames?: number },
): AsyncIterable<Float64Array[]> {
  const r = new Resampler({ ...opts, channelCount: source.channelCount });
  yield* streamThrough(source, opts.blockFrames, (block) => r.process(block), () => r.flush());
}
