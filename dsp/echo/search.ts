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

/** Detrended cepstrum: c(q) minus the mean of c over 3 ≤ |p − q| ≤ halfWidth. */
export function detrendCepstrum(c: Float64Array, qLo: number, qHi: number, halfWidth = 12): Float64Array {
  const n = c.length;
  const prefix = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) prefix[i + 1] = prefix[i]! + c[i]!;
  const sum = (a: number, b: number) => {
    const lo = Math.max(0, a), hi = Math.min(n - 1, b);
    return hi >= lo ? [prefix[hi + 1]! - prefix[lo]!, hi - lo + 1] : [0, 0];
  };
  const r = new Float64Array(n);
  for (let q = Math.max(0, qLo - 4); q <= Math.min(n - 1, qHi + 4); q++) {
    const [s1, n1] = sum(q - halfWidth, q - 3);
    const [s2, n2] = sum(q + 3, q + halfWidth);
    const cnt = n1! + n2!;
    r[q] = c[q]! - (cnt > 0 ? (s1! + s2!) / cnt : 0);
  }
  return r;
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
export function searchCepstrum(
  c: Float64Array,
  qLo: number,
  qHi: number,
  options: { count?: number; separation?: number; exclude?: ReadonlyArray<[number, number]> } = {},
): CepstralPeak[] {
  const lo = Math.max(3, Math.floor(qLo));
  const hi = Math.min(c.length / 2 - 4, Math.ceil(qHi));
  if (hi <= lo) return [];
  const r = detrendCepstrum(smoothCepstrum(c), lo, hi);
  const globalNoise = robustSigma(r.subarray(lo, hi + 1)) || 1e-12;
  // Local noise (a CFAR-style reference): MAD in blocks of 64 quefrencies, the largest of each
  // block and its neighbours. The source's own structure (pitch rahmonics at low quefrencies)
  // raises the local level and so does not pass for an echo.
  const BLOCK = 64;
  const nb = Math.ceil((hi - lo + 1) / BLOCK);
  const blockNoise = new Float64Array(nb);
  for (let b = 0; b < nb; b++) {
    const a = lo + b * BLOCK;
    blockNoise[b] = Math.max(globalNoise, robustSigma(r.subarray(a, Math.min(hi + 1, a + BLOCK))));
  }
  const localNoise = (q: number) => {
    const b = Math.min(nb - 1, Math.floor((q - lo) / BLOCK));
    return Math.max(blockNoise[b]!, blockNoise[Math.max(0, b - 1)]!, blockNoise[Math.min(nb - 1, b + 1)]!);
  };
  const scores: Array<{ q: number; s: number; a: number; noise: number }> = [];
  for (let q = lo; q <= hi; q++) {
    if (options.exclude?.some(([a, b]) => q >= a && q <= b)) continue;
    let best = 0, bestD = 0;
    for (let f = 0; f < WEIGHTS.length; f++) {
      const w = WEIGHTS[f]!;
      let acc = 0;
      for (let j = 0; j < SPAN.length; j++) acc += w[j]! * r[q + SPAN[j]!]!;
      if (Math.abs(acc) > Math.abs(best)) {
        best = acc;
        bestD = FRACTIONS[f]!;
      }
    }
    // Amplitude for a unit-height sinc: Σ w·sinc = ‖sinc‖ over the span.
    const norm = Math.sqrt(SPAN.reduce((a: number, j) => a + shape(j - bestD) ** 2, 0));
    const noise = localNoise(q);
    scores.push({ q: q + bestD, s: Math.abs(best) / noise, a: best / norm, noise });
  }
  scores.sort((x, y) => y.s - x.s);
  const out: CepstralPeak[] = [];
  const sep = options.separation ?? 3;
  for (const s of scores) {
    if (out.length >= (options.count ?? 1)) break;
    if (out.some((p) => Math.abs(p.quefrency - s.q) < sep)) continue;
    out.push({ quefrency: s.q, amplitude: s.a, z: s.s, noise: s.noise });
  }
  return out;
}
