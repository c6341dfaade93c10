/**
 * Coarse search for a sharp cepstral peak: detrend the cepstrum with a local baseline that skips
 * the centre, estimate the noise robustly (median absolute deviation), and score each quefrency
 * with a matched filter for a peak at a fractional position (the shape a delay between two
 * samples takes: c(q) ≈ g·sinc(q − τ)). Broad bumps (the source's own smeared pitch and formant
 * structure) are removed by the baseline; only sharp, fixed peaks survive.
 */

export interface CepstralPeak {
  /** Quefrency in samples of the analysed stream (fractional). */
  quefrency: number;
  /** Signed amplitude of the peak (≈ g for an echo of gain g, before window effects). */
  amplitude: number;
  /** Peak amplitude over the robust noise level. */
  z: number;
  /** Robust local noise level of the detrended cepstrum around the peak. */
  noise: number;
}

const FRACTIONS = [0, 0.25, 0.5, 0.75] as const;
const SPAN = [-2, -1, 0, 1, 2, 3] as const;
const sinc = (x: number) => (x === 0 ? 1 : Math.sin(Math.PI * x) / (Math.PI * x));
/** Peak shape after the [¼, ½, ¼] smoothing: a fractional delay's sinc, smoothed. */
const shape = (x: number) => 0.25 * sinc(x - 1) + 0.5 * sinc(x) + 0.25 * sinc(x + 1);

/** Matched-filter weights for each fractional offset, normalised to unit energy. */
const WEIGHTS: number[][] = FRACTIONS.map((d) => {
  const w = SPAN.map((j) => shape(j - d));
  const e = Math.sqrt(w.reduce((a, b) => a + b * b, 0));
  return w.map((v) => v / e);
});

/**
 * Smooths a cepstrum with [¼, ½, ¼], the same as tapering its log spectrum with a Hann taper
 * (0.5 + 0.5·cos(2πk/N), zero at Nyquist). A delay between two samples leaks into the
 * cepstrum as a sinc with alternating sidelobes decaying like 1/k; the smoothing cancels the
 * alternation, so the leakage falls like 1/k³ and a strong echo no longer raises the noise
 * estimate around itself.
 */
export function smoothCepstrum(c: Float64Array): Float64Array {
  const n = c.length;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = 0.25 * c[(i - 1 + n) % n]! + 0.5 * c[i]! + 0.25 * c[(i + 1) % n]!;
  return out;
}

/**
 * Detrended cepstrum: c(q) minus a quadratic fitted to c over 3 ≤ |p − q| ≤ halfWidth (the centre
 * is left out so a sharp peak does not lift its own baseline; the quadratic follows the steep,
 * curved decay of the spectral envelope's cepstrum at short quefrencies). The cepstrum of a real
 * log spectrum is even, so indices below zero are mirrored. With `smooth`, c is first smoothed
 * with [¼, ½, ¼] (smoothCepstrum; the same numbers, made only where they are needed).
 * Returns the detrended values over [first, first + values.length) = [qLo − 4, qHi + 4] within
 * 0…N−1; elsewhere it is 0. (Only that stretch is made: a scorer around one candidate of a
 * 2^20-point cepstrum needs a few hundred values, not two arrays of 2^20.)
 */
export function detrendCepstrum(c: Float64Array, qLo: number, qHi: number, halfWidth = 12, smooth = false): { first: number; values: Float64Array } {
  const n = c.length;
  const lo = Math.max(0, qLo - 4), hi = Math.min(n - 1, qHi + 4);
  // Extended copy over [lo − W, hi + W] with mirroring at 0 (c(−p) = c(p)).
  const base = lo - halfWidth;
  const len = hi - lo + 1 + 2 * halfWidth;
  const at = (idx: number): number => {
    const i = ((idx % n) + n) % n;
    return smooth ? 0.25 * c[(i - 1 + n) % n]! + 0.5 * c[i]! + 0.25 * c[(i + 1) % n]! : c[i]!;
  };
  const p0 = new Float64Array(len + 1), p1 = new Float64Array(len + 1), p2 = new Float64Array(len + 1);
  for (let i = 0; i < len; i++) {
    const v = at(base + i);
    const t = i; // position relative to base
    p0[i + 1] = p0[i]! + v;
    p1[i + 1] = p1[i]! + v * t;
    p2[i + 1] = p2[i]! + v * t * t;
  }
  // Flank moments (symmetric: odd moments vanish).
  let n0 = 0, s2 = 0, s4 = 0;
  for (let u = 3; u <= halfWidth; u++) {
    n0 += 2;
    s2 += 2 * u * u;
    s4 += 2 * u ** 4;
  }
  const det = s4 * n0 - s2 * s2;
  const r = new Float64Array(Math.max(0, hi - lo + 1));
  const range = (a: number, b: number): [number, number, number] => [p0[b + 1]! - p0[a]!, p1[b + 1]! - p1[a]!, p2[b + 1]! - p2[a]!];
  for (let q = lo; q <= hi; q++) {
    const t = q - base;
    const [a0, a1, a2] = range(t - halfWidth, t - 3);
    const [b0, b1, b2] = range(t + 3, t + halfWidth);
    const sy = a0 + b0;
    // Σ y·u² with u = position − t: Σ y p² − 2t Σ y p + t² Σ y.
    const syu2 = a2 + b2 - 2 * t * (a1 + b1) + t * t * sy;
    const fitted = (s4 * sy - s2 * syu2) / det;
    r[q - lo] = at(q) - fitted;
  }
  return { first: lo, values: r };
}

/** Median of |values| × 1.4826 (a robust σ for Gaussian noise). */
export function robustSigma(values: ArrayLike<number>): number {
  const a = Float64Array.from(values, (v) => Math.abs(v)).sort();
  if (a.length === 0) return 0;
  const m = a.length >> 1;
  const med = a.length % 2 ? a[m]! : 0.5 * (a[m - 1]! + a[m]!);
  return 1.4826 * med;
}

/**
 * Scores every quefrency in [qLo, qHi] and returns the best peaks (up to `count`, best first,
 * at least `separation` samples apart). `exclude` lists quefrency intervals to skip.
 */
export interface SearchOptions {
  count?: number;
  separation?: number;
  exclude?: ReadonlyArray<[number, number]>;
}

/**
 * Scores a cepstrum over [qLo, qHi]: detrending, matched filtering for a (fractional) peak and a
 * local noise reference for every quefrency; see searchCepstrum.
 */
export class CepstrumScorer {
  readonly lo: number;
  readonly hi: number;
  readonly #eLo: number;
  readonly #eHi: number;
  /** The detrended smoothed cepstrum from index #rFirst on (0 outside it). */
  readonly #r: Float64Array;
  readonly #rFirst: number;
  readonly #ref: Float64Array;
  readonly #bestOut: Float64Array;
  readonly #bestFrac: Float64Array;
  readonly #blockNoise: Float64Array;
  readonly #globalNoise: number;
  static readonly NEAR_LO = 16;
  static readonly NEAR_HI = 26;
  static readonly BLOCK = 64;

  readonly #c: Float64Array;

  constructor(c: Float64Array, qLo: number, qHi: number) {
    const NEAR_HI = CepstrumScorer.NEAR_HI, BLOCK = CepstrumScorer.BLOCK;
    this.#c = c;
    this.lo = Math.max(3, Math.floor(qLo));
    this.hi = Math.min(c.length / 2 - 4, Math.ceil(qHi));
    const lo = this.lo, hi = Math.max(this.lo, this.hi);
    // Extended range: flanks for candidates near the ends.
    this.#eLo = Math.max(3, lo - NEAR_HI);
    this.#eHi = Math.max(this.#eLo, Math.min(c.length / 2 - 4, hi + NEAR_HI));
    const eLo = this.#eLo, eHi = this.#eHi;
    const detrended = detrendCepstrum(c, eLo, eHi, 12, true);
    this.#r = detrended.values;
    this.#rFirst = detrended.first;
    // Matched-filter outputs: for each quefrency the best of the fractional offsets, and the
    // δ = 0 output alone, whose spread is the noise reference (neighbouring values of the smoothed
    // cepstrum are correlated, so the spread of r itself would misstate the output noise).
    const ext = eHi - eLo + 1;
    this.#bestOut = new Float64Array(ext);
    this.#bestFrac = new Float64Array(ext);
    this.#ref = new Float64Array(ext);
    for (let q = eLo; q <= eHi; q++) {
      const [best, bestD, ref0] = this.#match(q);
      this.#bestOut[q - eLo] = best;
      this.#bestFrac[q - eLo] = bestD;
      this.#ref[q - eLo] = ref0;
    }
    const count = Math.max(0, hi - lo + 1);
    const inRange = this.#ref.subarray(lo - eLo, lo - eLo + count);
    this.#globalNoise = robustSigma(inRange) || 1e-12;
    const nb = Math.max(1, Math.ceil(count / BLOCK));
    this.#blockNoise = new Float64Array(nb);
    for (let b = 0; b < nb; b++) {
      const a = b * BLOCK, e = Math.min(count, a + BLOCK);
      let top = a;
      for (let i = a; i < e; i++) if (Math.abs(inRange[i]!) > Math.abs(inRange[top]!)) top = i;
      const kept: number[] = [];
      for (let i = a; i < e; i++) if (Math.abs(i - top) > 12) kept.push(inRange[i]!);
      this.#blockNoise[b] = Math.max(this.#globalNoise, robustSigma(kept.length >= 16 ? kept : inRange.subarray(a, e)));
    }
  }

  #match(q: number, only?: number): [number, number, number] {
    let best = 0, bestD = 0, ref0 = 0;
    for (let f = 0; f < WEIGHTS.length; f++) {
      if (only !== undefined && f !== only) continue;
      const w = WEIGHTS[f]!;
      let acc = 0;
      for (let j = 0; j < SPAN.length; j++) acc += w[j]! * (this.#r[q + SPAN[j]! - this.#rFirst] ?? 0);
      if (f === 0) ref0 = acc;
      if (Math.abs(acc) > Math.abs(best) || only !== undefined) {
        best = acc;
        bestD = FRACTIONS[f]!;
      }
    }
    return [best, bestD, ref0];
  }

  /**
   * Local noise, a CFAR-style reference: the largest of
   *  - the MAD of the matched output in blocks of 64 quefrencies (each block's strongest value
   *    and its surroundings left out, so a real peak does not raise its own reference), the
   *    larger of the candidate's block and the median of it and its two neighbours: the source's
   *    own structure (pitch rahmonics) raises it;
   *  - the RMS of the matched output 16…26 quefrencies either side, beyond the reach of the
   *    detrending and the matched filter: oscillating structure right next to a candidate (the
   *    cepstral ringing of a steep edge in the spectral envelope, strongest at the shortest
   *    quefrencies) counts as noise for it, while a lone sharp peak does not.
   */
  noiseAt(q: number): number {
    const nb = this.#blockNoise.length;
    const b = Math.max(0, Math.min(nb - 1, Math.floor((q - this.lo) / CepstrumScorer.BLOCK)));
    const bn = this.#blockNoise;
    const x = bn[Math.max(0, b - 1)]!, y = bn[b]!, z = bn[Math.min(nb - 1, b + 1)]!;
    const median = Math.max(Math.min(x, y), Math.min(Math.max(x, y), z));
    const blocky = Math.max(median, y);
    let s2 = 0, cnt = 0;
    for (let d = CepstrumScorer.NEAR_LO; d <= CepstrumScorer.NEAR_HI; d++) {
      for (let p = q - d; p <= q + d; p += 2 * d) {
        if (p >= this.#eLo && p <= this.#eHi) {
          s2 += this.#ref[p - this.#eLo]! ** 2;
          cnt++;
        }
      }
    }
    return Math.max(blocky, cnt ? Math.sqrt(s2 / cnt) : 0);
  }

  /** Signed peak amplitude at integer quefrency q: best fractional offset, or the given one. */
  amplitudeAt(q: number, fraction?: number): { amplitude: number; fraction: number } {
    if (q < this.#eLo || q > this.#eHi) return { amplitude: 0, fraction: 0 };
    let best: number, bestD: number;
    if (fraction === undefined) {
      best = this.#bestOut[q - this.#eLo]!;
      bestD = this.#bestFrac[q - this.#eLo]!;
    } else {
      const f = FRACTIONS.indexOf(fraction as (typeof FRACTIONS)[number]);
      [best, bestD] = this.#match(q, f < 0 ? 0 : f);
    }
    // Amplitude for a unit-height peak: Σ w·shape = ‖shape‖ over the span.
    const norm = Math.sqrt(SPAN.reduce((a: number, j) => a + shape(j - bestD) ** 2, 0));
    return { amplitude: best / norm, fraction: bestD };
  }

  /** Score (matched output over local noise) at integer q with its best fraction. */
  zAt(q: number): number {
    return Math.abs(this.#bestOut[q - this.#eLo] ?? 0) / this.noiseAt(q);
  }

  /**
   * Second-rahmonic check. An echo's cepstrum at 2τ is −g²/2, never positive; a periodic source
   * (a steady pitch, hum and its harmonics) puts a positive peak at twice its period too. A
   * candidate with a clearly positive value at twice its quefrency is such a source, not an echo.
   */
  periodicAt(q: number, amplitude: number): boolean {
    const q2 = Math.round(2 * q);
    if (q2 + CepstrumScorer.BLOCK > this.#c.length / 2 - 4) return false;
    // A small scorer around 2q (its own local noise reference).
    const local = new CepstrumScorer(this.#c, q2 - CepstrumScorer.BLOCK, q2 + CepstrumScorer.BLOCK);
    let a2 = 0;
    for (const p of [q2 - 1, q2, q2 + 1]) {
      const v = local.amplitudeAt(p).amplitude;
      if (Math.abs(v) > Math.abs(a2)) a2 = v;
    }
    const sigma2 = Math.max(this.#globalNoise, local.noiseAt(q2));
    return a2 > 3 * sigma2 && a2 > 0.1 * Math.abs(amplitude);
  }

  /** The best peaks in [lo, hi], best first, at least `separation` apart, periodic ones left out. */
  candidates(options: SearchOptions = {}): CepstralPeak[] {
    // Scores in typed arrays (10^5 quefrencies and more at high rates), ranked by an index
    // sort with ties in quefrency order (as a stable sort of the scores would leave them).
    const span = Math.max(0, this.hi - this.lo + 1);
    const qs = new Int32Array(span), ss = new Float64Array(span), noises = new Float64Array(span);
    let m = 0;
    for (let q = this.lo; q <= this.hi; q++) {
      if (options.exclude?.some(([a, b]) => q >= a && q <= b)) continue;
      const noise = this.noiseAt(q);
      qs[m] = q;
      ss[m] = Math.abs(this.#bestOut[q - this.#eLo]!) / noise;
      noises[m] = noise;
      m++;
    }
    const order = new Uint32Array(m);
    for (let i = 0; i < m; i++) order[i] = i;
    order.sort((x, y) => ss[y]! - ss[x]! || x - y);
    const out: CepstralPeak[] = [];
    const sep = options.separation ?? 3;
    for (const i of order) {
      if (out.length >= (options.count ?? 1)) break;
      const { amplitude, fraction } = this.amplitudeAt(qs[i]!);
      const q = qs[i]! + fraction;
      if (out.some((p) => Math.abs(p.quefrency - q) < sep)) continue;
      if (this.periodicAt(q, amplitude)) continue;
      out.push({ quefrency: q, amplitude, z: ss[i]!, noise: noises[i]! });
    }
    return out;
  }
}

/**
 * Scores every quefrency in [qLo, qHi] and returns the best peaks (up to `count`, best first,
 * at least `separation` samples apart). `exclude` lists quefrency intervals to skip.
 */
export function searchCepstrum(c: Float64Array, qLo: number, qHi: number, options: SearchOptions = {}): CepstralPeak[] {
  const scorer = new CepstrumScorer(c, qLo, qHi);
  if (scorer.hi <= scorer.lo) return [];
  return scorer.candidates(options);
}
