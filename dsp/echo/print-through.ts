/**
 * Print-through search: a faint copy of loud passages a reel-turn (0.3–4 s) before or after them.
 *
 * The copy is 40–60 dB down, so it can only be seen where the tape is quiet. The autocorrelation
 * of the whole signal is symmetric in the lag and cannot tell a pre-echo from a post-echo; what
 * can is the arrangement in time: a pre-echo puts a copy of a loud passage into the quiet stretch
 * T seconds before it. So the search correlates the quiet parts q(t) with the loud parts l(t + k)
 * of the signal:
 *   C(k) = Σ_t q(t)·l(t + k),   D(k) = Σ_t m_q(t)·l(t + k)²,   ĝ(k) = C(k)/D(k),
 * with m_q the quiet mask. For y = x + g·x(t + T) the quiet stretches hold g·x(t + T), so C peaks
 * at k = +T with C/D ≈ g (a pre-echo, contract delay −T); a post-echo gives a peak at k = −T.
 * The source's own correlation between unrelated quiet and loud moments is small and shows up as
 * noise across all lags. Before correlating, the stream is whitened by a fixed linear predictor
 * (order 16), and each lag's correlation is divided by its null standard deviation √(Σ q²·l²)
 * (smoothed over neighbouring lags); the robust spread of that ratio across lags gives the
 * peak's significance z.
 *
 * Coarse search on a copy of the signal decimated to about 4 kHz (kept in memory as Float32:
 * ≈ 16 kB per second of audio, 58 MB per hour; 2 kHz folds too much of a voice onto itself), by
 * FFT correlation in overlapping segments with
 * the cross-spectra summed before one inverse transform. The delay is then refined at the full
 * rate from the cross-spectrum of quiet/loud frame pairs (a delay is a linear phase: the phase
 * slope gives the fraction of a sample) and the gain from their regression.
 */
import { nextPowerOfTwo, sharedPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';
import { CancelledError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import { EchoCanceller } from './canceller.ts';
import { Decimator } from '../core/decimate.ts';
import type { EchoKernel } from './kernel.ts';
import { MixScratch, mixBlock } from './mix.ts';
import { robustSigma } from './search.ts';

/**
 * Decimated copy of the analysed signal, kept for the print-through search: one Float32Array
 * (sized from the expected length when given, so it is never copied), viewed by stream().
 */
export class PrintThroughCollector {
  readonly factor: number;
  readonly rateHz: number;
  #decimator: Decimator;
  #buf: Float32Array;
  #length = 0;

  /** @param expectedFrames input frames to come (0: unknown; the buffer then grows as needed) */
  constructor(sampleRateHz: number, expectedFrames = 0) {
    this.factor = Math.max(1, Math.round(sampleRateHz / 4000));
    this.rateHz = sampleRateHz / this.factor;
    this.#decimator = new Decimator(this.factor);
    this.#buf = new Float32Array(expectedFrames > 0 ? Math.ceil(expectedFrames / this.factor) + 1 : 65536);
  }

  push(samples: Float64Array): void {
    const d = this.#decimator.process(samples);
    if (!d.length) return;
    if (this.#length + d.length > this.#buf.length) {
      const bigger = new Float32Array(Math.max(2 * this.#buf.length, this.#length + d.length));
      bigger.set(this.#buf.subarray(0, this.#length));
      this.#buf = bigger;
    }
    this.#buf.set(d, this.#length);
    this.#length += d.length;
  }

  /** The decimated stream so far (a view: searchPrintThrough whitens it in place). */
  stream(): Float32Array {
    return this.#buf.subarray(0, this.#length);
  }

  /** Starts collecting again from the beginning of the stream, reusing the memory. */
  restart(): void {
    this.#decimator = new Decimator(this.factor);
    this.#length = 0;
  }
}

export interface Masks {
  /** Samples per mask block. */
  blockSamples: number;
  /** Per block: 1 = quiet (print-through would show), 0 otherwise. */
  quiet: Uint8Array;
  /** Per block: 1 = loud passage. */
  loud: Uint8Array;
  /**
   * Per block: 1 = between quiet and loud (15–30 dB under the loud reference). A copy from the
   * tape is in these blocks too, at the same gain as in the quiet ones; used to test that.
   */
  middle: Uint8Array;
  /** Level of the loud reference (95th percentile of block RMS), dBFS-like (RMS re 1). */
  referenceDb: number;
  quietFraction: number;
  loudFraction: number;
}

/**
 * Quiet and loud masks on 10 ms blocks: loud = within 12 dB of the 95th-percentile block level;
 * quiet = 30 dB or more below it, with both neighbours quiet too (so the decay of a loud sound
 * does not count as quiet); middle = 15–30 dB below it.
 */
export function makeMasks(x: Float32Array, rateHz: number): Masks {
  const bs = Math.max(1, Math.round(0.01 * rateHz));
  const nb = Math.floor(x.length / bs);
  const levels = new Float64Array(nb);
  for (let b = 0; b < nb; b++) {
    let s = 0;
    for (let i = b * bs; i < (b + 1) * bs; i++) s += x[i]! * x[i]!;
    levels[b] = 10 * Math.log10(s / bs + 1e-30);
  }
  const sorted = Float64Array.from(levels).sort();
  const ref = nb ? sorted[Math.min(nb - 1, Math.floor(0.95 * nb))]! : -300;
  const loud = new Uint8Array(nb), quietRaw = new Uint8Array(nb), quiet = new Uint8Array(nb), middle = new Uint8Array(nb);
  let nl = 0, nq = 0;
  for (let b = 0; b < nb; b++) {
    if (levels[b]! >= ref - 12 && levels[b]! > -200) loud[b] = 1;
    if (levels[b]! <= ref - 30) quietRaw[b] = 1;
    else if (levels[b]! <= ref - 15) middle[b] = 1;
  }
  // Quiet only well inside a quiet stretch: the soft onsets and decays of the sounds around it
  // would otherwise correlate with loud sounds of similar pitch elsewhere.
  const guard = 1;
  let run = 0;
  const ok = new Uint8Array(nb);
  for (let b = 0; b < nb; b++) {
    run = quietRaw[b] ? run + 1 : 0;
    if (run > 2 * guard) ok[b - guard] = 1;
  }
  for (let b = 0; b < nb; b++) quiet[b] = ok[b]!;
  for (let b = 0; b < nb; b++) {
    nl += loud[b]!;
    nq += quiet[b]!;
  }
  return { blockSamples: bs, quiet, loud, middle, referenceDb: ref, quietFraction: nb ? nq / nb : 0, loudFraction: nb ? nl / nb : 0 };
}

export interface LagCandidate {
  /** Lag k in decimated samples (fractional): + = quiet before loud (pre-echo). */
  lag: number;
  /** Regression gain C/D at that lag (signed). */
  gain: number;
  /** |C| over its robust spread across lags. */
  z: number;
  /**
   * Other local peaks of |C| within ±35 ms of this one, of at least 0.6 of its height (strongest
   * first, at most 3). On periodic programme (held chords) the copy's correlation repeats every
   * period of the notes, and the decimated search can put its top one period off the true lag;
   * the full-rate refinement looks at these too and keeps the one that holds best.
   */
  neighbours?: Array<{ lag: number; gain: number; z: number }>;
}

/** How far from the coarse top peak (s) and how high (share of it) other peaks are looked at again. */
const NEIGHBOUR_SECONDS = 0.035;
const NEIGHBOUR_SHARE = 0.6;

export interface PrintThroughSearch {
  pre: LagCandidate | null;
  post: LagCandidate | null;
  masks: Masks;
}

/**
 * Masked cross-correlation over lags ±[minLag, maxLag] (decimated samples). `exclude` lists
 * lag magnitudes to skip (a reflection found elsewhere and its multiple).
 */
export function searchPrintThrough(
  input: Float32Array,
  rateHz: number,
  minLag: number,
  maxLag: number,
  exclude: ReadonlyArray<[number, number]> = [],
): PrintThroughSearch {
  let x: Float32Array = input;
  const masks = makeMasks(x, rateHz);
  const K = Math.ceil(maxLag) + 2;
  const total = x.length;
  if (total < 4 * minLag || masks.quietFraction === 0 || masks.loudFraction === 0) return { pre: null, post: null, masks };
  const bs = masks.blockSamples;
  // A fixed whitening filter (order 16; in place, so `input` is whitened too) sharpens the correlation peaks and takes away most of the
  // chance correlation between voiced sounds of similar spectrum at unrelated times.
  x = whiten(x, 16);
  // Full-resolution cross-correlation C(k) = Σ q(t)·l(t + k), segment by segment (overlap-save,
  // cross-spectra summed before one inverse transform); the masked signals are formed from x and
  // the block masks as each segment is filled.
  const quiet = masks.quiet, loud = masks.loud, nbm = quiet.length;
  // Segments of a transform size the fast (WebAssembly) FFT kernels cover when the lag range allows.
  const maxN = 2 * K <= (1 << 15) ? 1 << 16 : 1 << 18;
  const n = nextPowerOfTwo(Math.min(total, maxN - 2 * K) + 2 * K);
  const seg = n - 2 * K;
  const plan = sharedPlan(n);
  const accC = new Float64Array(n + 2);
  const a = new Float64Array(n);
  const Q = new Float64Array(n + 2), L = new Float64Array(n + 2);
  const fill = (mask: Uint8Array, start: number, lead: number, len: number, out: Float64Array) => {
    a.fill(0);
    for (let j = 0; j < len; j++) {
      const t = start - lead + j;
      if (t >= 0 && t < total && mask[Math.min(nbm - 1, Math.floor(t / bs))]) a[j] = x[t]!;
    }
    plan.realForward(a, out);
  };
  for (let start = 0; start < total; start += seg) {
    fill(quiet, start, 0, seg, Q);
    fill(loud, start, K, seg + 2 * K, L);
    for (let k = 0; k <= n / 2; k++) {
      const ar = Q[2 * k]!, ai = -Q[2 * k + 1]!, br = L[2 * k]!, bi = L[2 * k + 1]!;
      accC[2 * k]! += ar * br - ai * bi;
      accC[2 * k + 1]! += ar * bi + ai * br;
    }
  }
  const c = new Float64Array(n);
  plan.realInverse(accC, c);

  // The denominator D(k) = Σ m_q(t)·l²(t + k) and the null variance V(k) = Σ q²(t)·l²(t + k) vary
  // with the lag only as slowly as the masks and the envelope do, so they are computed on block
  // energies (exact for D at lags that are whole blocks, interpolated between):
  //   D(b·bs) = Σ_j [quiet j]·E_l(j + b),  V(b·bs) ≈ Σ_j E_q(j)·E_l(j + b)/bs.
  const Kb = Math.ceil(K / bs) + 2;
  const nb2 = nextPowerOfTwo(nbm + 2 * Kb);
  const bplan = sharedPlan(nb2);
  const eq = new Float64Array(nb2), mq = new Float64Array(nb2), el = new Float64Array(nb2);
  for (let b = 0; b < nbm; b++) {
    let e = 0;
    for (let t = b * bs; t < (b + 1) * bs && t < total; t++) e += x[t]! * x[t]!;
    if (quiet[b]) {
      eq[b] = e;
      mq[b] = 1;
    }
    if (loud[b]) el[(b + Kb) % nb2] = e; // shifted by Kb so that negative lags land at j < Kb
  }
  const blockCorrelation = (first: Float64Array): Float64Array => {
    const F = new Float64Array(nb2 + 2), E = new Float64Array(nb2 + 2), P = new Float64Array(nb2 + 2);
    bplan.realForward(first, F);
    bplan.realForward(el, E);
    for (let k = 0; k <= nb2 / 2; k++) {
      const ar = F[2 * k]!, ai = -F[2 * k + 1]!, br = E[2 * k]!, bi = E[2 * k + 1]!;
      P[2 * k] = ar * br - ai * bi;
      P[2 * k + 1] = ar * bi + ai * br;
    }
    const out = new Float64Array(nb2);
    bplan.realInverse(P, out);
    return out; // out[j] = Σ_b first(b)·l_energy(b + j − Kb)
  };
  const dBlocks = blockCorrelation(mq), vBlocks = blockCorrelation(eq);
  const atBlocks = (arr: Float64Array, k: number): number => {
    const u = k / bs + Kb;
    const j0 = Math.floor(u), f = u - j0;
    return (1 - f) * (arr[j0] ?? 0) + f * (arr[j0 + 1] ?? 0);
  };
  // Normalise each lag by its null standard deviation √V (the variance of a sum of products of
  // independent terms), so lags with more quiet/loud overlap do not stand out. V is smoothed over
  // ±4 blocks (median): a real copy inflates V at its own lag, which must not hide it.
  const floorV = 1e-30;
  const vSmooth = new Float64Array(nb2);
  for (let j = 0; j < nb2; j++) {
    const near: number[] = [];
    for (let o = -4; o <= 4; o++) if (j + o >= 0 && j + o < nb2) near.push(vBlocks[j + o]! / bs);
    near.sort((p1, p2) => p1 - p2);
    vSmooth[j] = Math.max(near[near.length >> 1]!, floorV);
  }
  const zc = new Float64Array(n);
  for (let j = 0; j < n; j++) zc[j] = c[j]! / Math.sqrt(Math.max(atBlocks(vSmooth, j - K), floorV));
  const d = new Float64Array(n);
  for (let j = 0; j < n; j++) d[j] = atBlocks(dBlocks, j - K);
  // r(j) = Σ first(t)·second(t + j − K): lag k = j − K.
  const at = (arr: Float64Array, k: number) => arr[k + K]!;
  const lagOk = (k: number) => {
    const m = Math.abs(k);
    return m >= minLag && m <= maxLag && !exclude.some(([lo, hi]) => m >= lo && m <= hi);
  };
  const values: number[] = [];
  for (let k = -Math.floor(maxLag); k <= Math.floor(maxLag); k++) if (lagOk(k)) values.push(at(zc, k));
  const sigma = robustSigma(values) || 1e-30;
  const best = (sign: 1 | -1): LagCandidate | null => {
    let bk = 0, bv = -1;
    for (let m = Math.ceil(minLag); m <= Math.floor(maxLag); m++) {
      const k = sign * m;
      if (!lagOk(k)) continue;
      const v = Math.abs(at(zc, k));
      if (v > bv) {
        bv = v;
        bk = k;
      }
    }
    if (bv < 0) return null;
    // Parabolic interpolation of |C| around a peak.
    const peakAt = (k: number) => {
      const y0 = Math.abs(at(zc, k - 1)), y1 = Math.abs(at(zc, k)), y2 = Math.abs(at(zc, k + 1));
      const den = y0 - 2 * y1 + y2;
      const frac = den < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (y0 - y2)) / den)) : 0;
      const dd = at(d, k);
      return { lag: k + frac, gain: dd > 0 ? at(c, k) / dd : 0, z: y1 / sigma };
    };
    const neighbours: Array<{ lag: number; gain: number; z: number }> = [];
    const reach = Math.round(NEIGHBOUR_SECONDS * rateHz);
    for (let k = bk - reach; k <= bk + reach; k++) {
      if (Math.abs(k - bk) <= 2 || !lagOk(k) || !lagOk(k - 1) || !lagOk(k + 1)) continue;
      const v = Math.abs(at(zc, k));
      if (v >= NEIGHBOUR_SHARE * bv && v >= Math.abs(at(zc, k - 1)) && v > Math.abs(at(zc, k + 1))) neighbours.push(peakAt(k));
    }
    neighbours.sort((p1, p2) => p2.z - p1.z);
    return { ...peakAt(bk), neighbours: neighbours.slice(0, 3) };
  };
  return { pre: best(1), post: best(-1), masks };
}

export interface RefinedLag {
  /** Lag in full-rate samples (+ = pre-echo). */
  lagSamples: number;
  /** Least-squares gain over the whole band (what cancels the copy best with one coefficient). */
  gain: number;
  /**
   * The gain below 2 kHz, or `gain` where the loud frames hold under 2 % of their energy there:
   * the copy's level as printed. Tape prints its highs less (the copy is low-passed), so the
   * whole-band gain of programme with much energy above a few kHz (cymbals) reads the copy lower:
   * a −40 dB copy under a rock kit read −43.1 dB whole-band and −40.0 dB here.
   */
  levelGain: number;
  /** Frame pairs used. */
  pairs: number;
  /**
   * The coherent sum at the refined lag over its null standard deviation: Re Σ_k S_k·e^{−jω_kδ}
   * against √(½·Σ_k Σ_pairs |Q_k|²·|L_k|²), the spread it has when the quiet frames hold nothing
   * of the loud ones (a sum of products of independent terms; Knapp & Carter 1976 for the
   * cross-spectrum's variance).
   */
  z: number;
  /**
   * Gains in three bands (100–700 Hz, 0.7–2 kHz, 2–5 kHz, each clipped to 0.45·fs) at the common
   * lag, null where the loud frames hold under 2 % of their energy there. A copy from the tape is broadband (its
   * highs somewhat reduced) and reads the same sign in each; the tail of a note correlates with
   * its own attack only at its partials, with their own phases.
   */
  bandGains: Array<number | null>;
  /**
   * The gain at the common lag from the earlier and the later half of the frame pairs (in time
   * order), with each half's z: a copy from the tape is there at one level through the file; a
   * likeness between two moments of the programme is in one place.
   */
  halves: Array<{ gain: number; z: number }> | null;
  /**
   * The gain at the common lag where the earlier frame is not quiet but 15–30 dB under the loud
   * reference (`Masks.middle`; at most MIDDLE_PAIRS pairs, evenly spread), with its null standard
   * deviation; null with fewer than 8 such pairs. A copy from the tape lies under those passages
   * at the same gain as under the quiet ones (the programme there only adds spread); a sound that
   * repeats itself while it fades (a sampled sustain loop, a decaying drone) reads a gain that
   * follows the level of the passage instead.
   */
  middle: { gain: number; std: number; pairs: number } | null;
}

/** Most middle pairs used per lag (the rest are skipped evenly): enough for a 5 % reading of a copy's gain. */
export const MIDDLE_PAIRS = 400;

/**
 * Full-rate refinement of a print-through lag from the cross-spectrum of frame pairs: a quiet
 * frame at t and a loud frame at t + T0 (T0 the rounded coarse lag). For the copy,
 * F_q(ω) ≈ g·e^{jωδ}·F_l(ω) with δ = T − T0, so S(ω) = Σ F_q·conj(F_l) ≈ g·e^{jωδ}·Σ|F_l|²:
 * δ maximises |Σ_ω S(ω)·e^{−jωδ}| (scanned on a 0.02-sample grid, then parabola), and
 * g = Re Σ S·e^{−jωδ} / Σ|F_l|². Frames are used only when every mask block they touch is quiet
 * (resp. loud).
 */
export async function refinePrintThrough(
  source: AudioSource,
  channel: number,
  coarseLagSamples: number,
  masks: Masks,
  factor: number,
  options: { signal?: { readonly aborted: boolean }; searchSamples?: number; cancel?: EchoKernel | null } = {},
): Promise<RefinedLag | null> {
  return (await refinePrintThroughLags(source, channel, [coarseLagSamples], masks, factor, options))[0] ?? null;
}

/** Per-lag sums of the refinement (one set per coarse lag looked at). */
interface LagSums {
  t0: number;
  /** Pairs there will be, from the masks alone (to split them into two halves in time). */
  total: number;
  /** Next frame position (start of the quiet frame). */
  pos: number;
  pairs: number;
  S: Float64Array;
  E: Float64Array;
  V: Float64Array;
  /** The later half of the pairs also on its own (the earlier half is the whole less this). */
  S2: Float64Array;
  E2: Float64Array;
  V2: Float64Array;
  /** Middle pairs (quiet frame replaced by a middle one): every `stride`-th of them is used. */
  stride: number;
  seenMiddle: number;
  pairsM: number;
  SM: Float64Array;
  EM: Float64Array;
  VM: Float64Array;
}

/**
 * `refinePrintThrough` at several coarse lags in one streaming pass (the top of the coarse search
 * and its neighbouring peaks); one result per lag, in order.
 */
export async function refinePrintThroughLags(
  source: AudioSource,
  channel: number,
  coarseLagsSamples: readonly number[],
  masks: Masks,
  factor: number,
  options: { signal?: { readonly aborted: boolean }; searchSamples?: number; cancel?: EchoKernel | null } = {},
): Promise<Array<RefinedLag | null>> {
  const canceller = options.cancel ? new EchoCanceller(options.cancel) : null;
  const fs = source.sampleRateHz;
  const n = nextPowerOfTwo(Math.round(0.04 * fs));
  const hop = n / 2;
  const win = makeWindow('hann', n);
  const plan = sharedPlan(n);
  const fq = new Float64Array(n), fl = new Float64Array(n);
  const Q = new Float64Array(n + 2), L = new Float64Array(n + 2);
  const blockFull = masks.blockSamples * factor;
  const allSet = (mask: Uint8Array, from: number, to: number) => {
    const b0 = Math.floor(from / blockFull), b1 = Math.floor((to - 1) / blockFull);
    if (b0 < 0 || b1 >= mask.length) return false;
    for (let b = b0; b <= b1; b++) if (!mask[b]) return false;
    return true;
  };
  const lags: LagSums[] = coarseLagsSamples.map((lag) => {
    const t0 = Math.round(lag);
    let total = 0, totalM = 0;
    for (let p = 0; ; p += hop) {
      if (Math.min(p, p + t0) < 0) continue;
      if (Math.max(p, p + t0) + n > source.frames) break;
      if (!allSet(masks.loud, p + t0, p + t0 + n)) continue;
      if (allSet(masks.quiet, p, p + n)) total++;
      else if (allSet(masks.middle, p, p + n)) totalM++;
    }
    return {
      t0, total, pos: 0, pairs: 0,
      S: new Float64Array(n + 2), E: new Float64Array(n / 2 + 1), V: new Float64Array(n / 2 + 1),
      S2: new Float64Array(n + 2), E2: new Float64Array(n / 2 + 1), V2: new Float64Array(n / 2 + 1),
      stride: Math.max(1, Math.ceil(totalM / MIDDLE_PAIRS)), seenMiddle: 0, pairsM: 0,
      SM: new Float64Array(n + 2), EM: new Float64Array(n / 2 + 1), VM: new Float64Array(n / 2 + 1),
    };
  });
  // Sliding buffer of full-rate samples.
  const span = Math.max(0, ...lags.map((l) => Math.abs(l.t0))) + n;
  let buf = new Float64Array(span + 131072);
  let bufStart = 0, bufLen = 0;
  const transformPair = (pos: number, t0: number) => {
    for (let i = 0; i < n; i++) {
      fq[i] = buf[pos - bufStart + i]! * win[i]!;
      fl[i] = buf[pos + t0 - bufStart + i]! * win[i]!;
    }
    plan.realForward(fq, Q);
    plan.realForward(fl, L);
  };
  const process = (st: LagSums) => {
    const { t0, S, E, V, S2, E2, V2, SM, EM, VM } = st;
    for (;;) {
      const pos = st.pos;
      const lo = Math.min(pos, pos + t0), hi = Math.max(pos, pos + t0) + n;
      if (lo < 0) {
        st.pos += hop;
        continue;
      }
      if (hi > bufStart + bufLen) break;
      const loudAfter = allSet(masks.loud, pos + t0, pos + t0 + n);
      if (loudAfter && allSet(masks.middle, pos, pos + n)) {
        // (Middle and quiet blocks are disjoint.)
        if (st.seenMiddle++ % st.stride === 0) {
          transformPair(pos, t0);
          for (let k = 0; k <= n / 2; k++) {
            const qr = Q[2 * k]!, qi = Q[2 * k + 1]!, lr = L[2 * k]!, li = L[2 * k + 1]!;
            const el = lr * lr + li * li;
            SM[2 * k]! += qr * lr + qi * li;
            SM[2 * k + 1]! += qi * lr - qr * li;
            EM[k]! += el;
            VM[k]! += (qr * qr + qi * qi) * el;
          }
          st.pairsM++;
        }
      } else if (loudAfter && allSet(masks.quiet, pos, pos + n)) {
        transformPair(pos, t0);
        // Every pair adds to the sums; the later half of the pairs to the second set too.
        const later = st.pairs >= st.total / 2;
        for (let k = 0; k <= n / 2; k++) {
          const qr = Q[2 * k]!, qi = Q[2 * k + 1]!, lr = L[2 * k]!, li = L[2 * k + 1]!;
          const cr = qr * lr + qi * li, ci = qi * lr - qr * li, el = lr * lr + li * li, v = (qr * qr + qi * qi) * el;
          S[2 * k]! += cr;
          S[2 * k + 1]! += ci;
          E[k]! += el;
          V[k]! += v;
          if (later) {
            S2[2 * k]! += cr;
            S2[2 * k + 1]! += ci;
            E2[k]! += el;
            V2[k]! += v;
          }
        }
        st.pairs++;
      }
      st.pos += hop;
    }
  };
  const mix = new MixScratch();
  for await (const block of source.blocks({ reusable: true })) {
    if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
    const mono = mixBlock(block, channel, mix);
    if (canceller) canceller.process(mono, mono);
    // Drop what no future frame needs.
    let keepFrom = Infinity;
    for (const st of lags) keepFrom = Math.min(keepFrom, st.pos, st.pos + st.t0);
    const drop = Math.max(0, Math.min(bufLen, keepFrom - bufStart));
    if (drop > 0) {
      buf.copyWithin(0, drop, bufLen);
      bufStart += drop;
      bufLen -= drop;
    }
    if (bufLen + mono.length > buf.length) {
      const bigger = new Float64Array(Math.max(buf.length * 2, bufLen + mono.length));
      bigger.set(buf.subarray(0, bufLen));
      buf = bigger;
    }
    buf.set(mono, bufLen);
    bufLen += mono.length;
    for (const st of lags) process(st);
  }
  return lags.map((st) => finishRefinement(st, n, fs, factor, options.searchSamples));
}

/** The refined lag, gain, z, band gains and halves from one lag's sums. */
function finishRefinement(st: LagSums, n: number, fs: number, factor: number, searchSamples: number | undefined): RefinedLag | null {
  const { t0, pairs, S, E, V, S2, E2, V2 } = st;
  if (pairs < 4) return null;
  let eSum = 0;
  for (let k = 0; k <= n / 2; k++) eSum += E[k]!;
  if (!(eSum > 0)) return null;
  const coherent = (delta: number): [number, number] => {
    let re = 0, im = 0;
    for (let k = 0; k <= n / 2; k++) {
      const w = (2 * Math.PI * k) / n;
      const c = Math.cos(w * delta), s = Math.sin(w * delta);
      const sr = S[2 * k]!, si = S[2 * k + 1]!;
      // S·e^{−jωδ}
      re += sr * c + si * s;
      im += si * c - sr * s;
    }
    return [re, im];
  };
  const range = searchSamples ?? factor * 1.5;
  let bestD = 0, bestV = -1;
  const step = 0.02;
  for (let dlt = -range; dlt <= range + 1e-9; dlt += step) {
    const [re, im] = coherent(dlt);
    const v = Math.hypot(re, im);
    if (v > bestV) {
      bestV = v;
      bestD = dlt;
    }
  }
  const v0 = Math.hypot(...coherent(bestD - step)), v2 = Math.hypot(...coherent(bestD + step));
  const den = v0 - 2 * bestV + v2;
  if (den < 0) bestD += step * Math.max(-0.5, Math.min(0.5, (0.5 * (v0 - v2)) / den));
  const [re] = coherent(bestD);
  let vSum = 0;
  for (let k = 0; k <= n / 2; k++) vSum += V[k]!;
  const bandGains: Array<number | null> = [];
  let lowRe = 0, lowE = 0;
  for (const [fLo, fHi] of [[100, 700], [700, 2000], [2000, 5000]] as const) {
    const kLo = Math.max(1, Math.round((fLo * n) / fs)), kHi = Math.min(n / 2, Math.round((Math.min(fHi, 0.45 * fs) * n) / fs));
    let br = 0, be = 0;
    for (let k = kLo; k < kHi; k++) {
      const w = (2 * Math.PI * k) / n;
      br += S[2 * k]! * Math.cos(w * bestD) + S[2 * k + 1]! * Math.sin(w * bestD);
      be += E[k]!;
    }
    bandGains.push(kHi > kLo && be > 0.02 * eSum ? br / be : null);
  }
  // The copy's level where the tape prints it fully (below 2 kHz; it prints the highs less).
  const kLevel = Math.min(n / 2, Math.round((2000 * n) / fs));
  for (let k = 1; k < kLevel; k++) {
    const w = (2 * Math.PI * k) / n;
    lowRe += S[2 * k]! * Math.cos(w * bestD) + S[2 * k + 1]! * Math.sin(w * bestD);
    lowE += E[k]!;
  }
  const levelGain = lowE > 0.02 * eSum ? lowRe / lowE : re / eSum;
  // The two halves at the common lag: the later from S2, the earlier as the whole less the later.
  let re2 = 0, e2 = 0, var2 = 0;
  for (let k = 0; k <= n / 2; k++) {
    const w = (2 * Math.PI * k) / n;
    re2 += S2[2 * k]! * Math.cos(w * bestD) + S2[2 * k + 1]! * Math.sin(w * bestD);
    e2 += E2[k]!;
    var2 += V2[k]!;
  }
  const e1 = eSum - e2, re1 = re - re2, var1 = vSum - var2;
  const halves = e1 > 0 && e2 > 0 && var1 > 0 && var2 > 0
    ? [{ gain: re1 / e1, z: re1 / Math.sqrt(0.5 * var1) }, { gain: re2 / e2, z: re2 / Math.sqrt(0.5 * var2) }]
    : null;
  // The middle pairs at the same lag.
  let reM = 0, eM = 0, varM = 0;
  for (let k = 0; k <= n / 2; k++) {
    const w = (2 * Math.PI * k) / n;
    reM += st.SM[2 * k]! * Math.cos(w * bestD) + st.SM[2 * k + 1]! * Math.sin(w * bestD);
    eM += st.EM[k]!;
    varM += st.VM[k]!;
  }
  const middle = st.pairsM >= 8 && eM > 0 && varM > 0 ? { gain: reM / eM, std: Math.sqrt(0.5 * varM) / eM, pairs: st.pairsM } : null;
  return { lagSamples: t0 + bestD, gain: re / eSum, levelGain, pairs, z: vSum > 0 ? re / Math.sqrt(0.5 * vSum) : 0, bandGains, halves, middle };
}

/**
 * Whitening by linear prediction of order p fitted to the whole stream (autocorrelation method,
 * Levinson–Durbin recursion; Makhoul 1975, "Linear prediction: a tutorial review", Proc. IEEE
 * 63(4)). A fixed (time-invariant) filter, so a copy of the signal stays a copy after it.
 * Overwrites `x` (the stream is 58 MB per hour of audio; a second copy is not needed) and returns it.
 */
export function whiten(x: Float32Array, order: number): Float32Array {
  // The autocorrelation from at most about 2¹⁹ samples (every k-th stretch of 4096 on long
  // streams): plenty for 16 coefficients.
  const r = new Float64Array(order + 1);
  const stretch = 4096;
  const every = Math.max(1, Math.ceil(x.length / (1 << 19)));
  for (let s0 = 0; s0 < x.length; s0 += stretch * every) {
    const e = Math.min(x.length, s0 + stretch);
    for (let k = 0; k <= order; k++) {
      let s = 0;
      for (let i = s0 + k; i < e; i++) s += x[i]! * x[i - k]!;
      r[k]! += s;
    }
  }
  if (!(r[0]! > 0)) return x;
  r[0] = r[0]! * (1 + 1e-9);
  const a = new Float64Array(order + 1);
  a[0] = 1;
  let err = r[0]!;
  const tmp = new Float64Array(order + 1);
  for (let i = 1; i <= order; i++) {
    let acc = r[i]!;
    for (let j = 1; j < i; j++) acc += a[j]! * r[i - j]!;
    const k = -acc / err;
    tmp.set(a);
    for (let j = 1; j < i; j++) a[j] = tmp[j]! + k * tmp[i - j]!;
    a[i] = k;
    err *= 1 - k * k;
    if (!(err > 0)) break;
  }
  // In place, from the end backwards: sample i needs only samples ≤ i, not yet overwritten.
  for (let i = x.length - 1; i >= 0; i--) {
    let s = 0;
    for (let j = 0; j <= order && j <= i; j++) s += a[j]! * x[i - j]!;
    x[i] = s;
  }
  return x;
}
