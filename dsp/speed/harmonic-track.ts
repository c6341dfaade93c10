/**
 * Frequency of a harmonic series measured from narrowband complex tracks (one per harmonic, each
 * heterodyned at h·f₀c, see ./heterodyne.ts), as a curve through the file and as one mean value.
 *
 * The model: track h holds a_h·e^{j2π·h·δ(t)·t} + noise, δ = f₀ − f₀c the common offset of the
 * series. For one window the maximum-likelihood δ maximises the harmonic-sum periodogram
 *   S(δ) = Σ_h w_h |Σ_k c_k z_h[k] e^{−j2π·h·δ·τ_k}|²,  w_h = 1/σ_h² (noise of track h), c_k a taper,
 * (Rife & Boorstyn 1974 for one tone; the harmonic sum is the ML detector/estimator for a
 * periodic signal in white noise, Quinn & Hannan 2001).
 *  - Curve: 4-s Hann windows every second; S on a grid (zero-padded FFT per harmonic, read at
 *    h·δ); a Viterbi path through the windows limits the change to 0.4 %/s so noise cannot make
 *    the curve jump; each window refined by golden-section search on the exact S.
 *  - Mean: when the curve shows no significant drift (line fit), one coherent S over the whole
 *    track is maximised near the curve's mean — its precision improves as T^{-3/2}; with drift the
 *    mean of the curve is used (the average speed). Uncertainty: standard error of the mean of the
 *    coherent estimates on 3–8 equal segments (coherent case), or window scatter ÷ √(independent
 *    windows) (drifting case).
 *  - Detection: D = S(δ̂)/E[S | noise only]; E per harmonic is Σ_k Σ_l c_k c_l ρ(k − l), ρ the
 *    tracks' noise correlation (known from their decimation filter), σ_h² from the windows'
 *    residuals after removing the fitted tone.
 */
import { FftPlan, nextPowerOfTwo } from '../core/fft.ts';
import { boxcarPowerKernel } from '../core/decimate.ts';

export type TrackArray = Float32Array | Float64Array;

export interface TrackSet {
  readonly fundamentalHz: number;
  readonly harmonics: readonly number[];
  /** Initial relative weights (1/noise floor) for the grid search. */
  readonly weights: readonly number[];
  readonly tracks: readonly { re: TrackArray; im: TrackArray; length: number }[];
  /**
   * The time weights the tracks were taken under, through the same filter (quiet-weighted tracks,
   * ./quiet-weight.ts); a line's level in a segment is then its weighted mean amplitude.
   */
  readonly gain?: TrackArray;
}

export interface TrackLayout {
  trackRateHz: number;
  /** Time in seconds (input time) at which track sample m is centred. */
  timeOf: (m: number) => number;
  /** First track sample not affected by the filters' start-up. */
  firstValid: number;
  /** Noise correlation of adjacent track samples, ρ[0] = 1. */
  correlation: Float64Array;
}

export interface SeriesMeasurement {
  meanFundamentalHz: number;
  uncertaintyHz: number;
  windowScatterHz: number;
  timesSeconds: number[];
  fundamentalsHz: number[];
  /** Coherent detection statistic ÷ its noise-only expectation, in dB (0 dB = noise). */
  detectionDb: number;
  /**
   * What noise alone typically reaches for detectionDb after searching this many cells and keeping
   * this many harmonics: 10·log10(1 + ln(cells)/H) (the largest of `cells` exponential variables is
   * about ln(cells) above its mean, shared among H harmonics).
   */
  noiseDetectionDb: number;
  /** Coherent SNR of each harmonic over the whole track (dB; ≈0 dB or below = noise only). */
  harmonicSnrDb: number[];
  /** Median ÷ mean of the windows' harmonic-sum statistic: ≈1 for a steady line, ≪1 for bursts. */
  steadiness: number;
  /** Harmonics kept for the final estimate. */
  harmonicsUsed: number[];
  drifting: boolean;
}

const WINDOW_SECONDS = 4;
const HOP_SECONDS = 1;
const MAX_DRIFT_PER_SECOND = 0.004;
const CURVE_HALF_WINDOWS = 4;
/** A playback machine's drift is slow: the curve is a local straight line over ±15 s. */
const CURVE_HALF_SECONDS = 15;
/** Up to this length a drifting series is one straight line, fitted coherently (fitChirp). */
const CHIRP_MAX_SECONDS = 2 * CURVE_HALF_SECONDS;
/** A window farther than this many scatters from the line through the others is set aside. */
const OUTLIER_SCATTERS = 5;
/** A window whose harmonic-sum statistic exceeds this many times the median one is flooded by a transient. */
const FLOOD_RATIO = 10;

/** Noise correlation between track samples ℓ apart for a boxcar(D)^R decimator. */
export function trackNoiseCorrelation(factor: number, order: number): Float64Array {
  const g = boxcarPowerKernel(factor, order);
  const out = new Float64Array(order + 1);
  for (let l = 0; l <= order; l++) {
    let s = 0;
    for (let n = 0; n + l * factor < g.length; n++) s += g[n]! * g[n + l * factor]!;
    out[l] = s;
  }
  const r0 = out[0]!;
  for (let l = 0; l <= order; l++) out[l]! /= r0;
  return out;
}

function hann(n: number): Float64Array {
  const w = new Float64Array(n);
  for (let k = 0; k < n; k++) w[k] = n === 1 ? 1 : 0.5 - 0.5 * Math.cos((2 * Math.PI * (k + 0.5)) / n);
  return w;
}

/** Σ_k Σ_l c_k c_l ρ(|k − l|): noise power of a tapered sum of correlated unit-variance samples. */
function taperNoise(c: Float64Array, rho: Float64Array): number {
  let s = 0;
  for (let k = 0; k < c.length; k++) {
    s += c[k]! * c[k]!;
    for (let l = 1; l < rho.length && k + l < c.length; l++) s += 2 * rho[l]! * c[k]! * c[k + l]!;
  }
  return s;
}

/** Tapered DFT of one track segment at harmonic offset h·δ (Hz), centred phase reference; (re, im) into out. */
function segmentDft(
  re: TrackArray, im: TrackArray, start: number, c: Float64Array, fb: number, hz: number, out: Float64Array,
): Float64Array {
  const K = c.length;
  const centre = (K - 1) / 2;
  // Rotation by recursion, re-anchored every 256 samples.
  let ar = 0, ai = 0;
  const dph = (-2 * Math.PI * hz) / fb;
  const dc = Math.cos(dph), ds = Math.sin(dph);
  let cr = 0, ci = 0;
  for (let k = 0; k < K; k++) {
    if ((k & 255) === 0) {
      const ph = dph * (k - centre);
      cr = Math.cos(ph);
      ci = Math.sin(ph);
    }
    const zr = c[k]! * re[start + k]!, zi = c[k]! * im[start + k]!;
    ar += zr * cr - zi * ci;
    ai += zr * ci + zi * cr;
    const t = cr * dc - ci * ds;
    ci = cr * ds + ci * dc;
    cr = t;
  }
  out[0] = ar;
  out[1] = ai;
  return out;
}

export function measureSeries(set: TrackSet, layout: TrackLayout, searchCells?: number): SeriesMeasurement | null {
  const fb = layout.trackRateHz;
  const H = set.harmonics.length;
  const n = set.tracks[0]!.length;
  const first = layout.firstValid, last = n - 1;
  const usable = last - first + 1;
  if (usable < Math.round(0.8 * fb)) return null;
  const f0c = set.fundamentalHz;
  const hMax = Math.max(...set.harmonics);
  const T = usable / fb;
  const dft = new Float64Array(2);
  // Shorter clips get shorter windows (down to 1.5 s, hop a quarter of it), so a drift through a
  // few seconds still has windows enough to show it.
  const winSeconds = Math.min(WINDOW_SECONDS, Math.max(1.5, T / 4));
  let winLen = Math.round(winSeconds * fb);
  let hop = Math.max(1, Math.round(winSeconds * (HOP_SECONDS / WINDOW_SECONDS) * fb));
  if (usable < winLen + 2 * hop) {
    winLen = usable;
    hop = usable;
  }
  const starts: number[] = [];
  for (let s = first; s + winLen - 1 <= last; s += hop) starts.push(s);
  const W = starts.length;
  const taper = hann(winLen);
  const qWin = taperNoise(taper, layout.correlation);
  const all = hann(usable);
  const qAll = taperNoise(all, layout.correlation);

  // Noise variance per track sample, from the density near the line: per window, the median of
  // the tapered, zero-padded periodogram over ±6 Hz of the track (each bin divided by the
  // tracks' own noise shape R(f) = Σ_ℓ ρ(ℓ)·cos(2πfℓ/fb) for white input, so that the decimation
  // filter's droop does not bias it), ÷ ln 2 (median ÷ mean of an exponential power) ÷ the taper's
  // noise gain; then the median over the windows. What the track band holds farther out — a
  // low note's partial a few hertz from the hum — leaks next to nothing into a 4-s fit at the
  // line, so it is not counted as noise there (the whole track power would count it in full).
  const sigma2 = new Float64Array(H);
  {
    const nfft = Math.max(64, nextPowerOfTwo(2 * winLen));
    const plan = new FftPlan(nfft);
    const buf = new Float64Array(2 * nfft), spec = new Float64Array(2 * nfft);
    const band = Math.min(6, 0.4 * fb);
    const bins: number[] = [];
    const shape: number[] = [];
    const rho = layout.correlation;
    for (let i = 0; i < nfft; i++) {
      const f = ((i + nfft / 2) % nfft) - nfft / 2;
      const hz = (f / nfft) * fb;
      if (Math.abs(hz) > band) continue;
      let r = rho[0]!;
      for (let l = 1; l < rho.length; l++) r += 2 * rho[l]! * Math.cos((2 * Math.PI * hz * l) / fb);
      bins.push(i);
      shape.push(Math.max(r, 1e-6));
    }
    const vals = new Float64Array(bins.length);
    for (let j = 0; j < H; j++) {
      const t = set.tracks[j]!;
      const pw: number[] = [];
      for (const st of starts) {
        buf.fill(0);
        for (let k = 0; k < winLen; k++) {
          buf[2 * k] = taper[k]! * t.re[st + k]!;
          buf[2 * k + 1] = taper[k]! * t.im[st + k]!;
        }
        plan.forward(buf, spec);
        for (let b = 0; b < bins.length; b++) vals[b] = (spec[2 * bins[b]!]! ** 2 + spec[2 * bins[b]! + 1]! ** 2) / shape[b]!;
        vals.sort();
        pw.push(vals[vals.length >> 1]! / Math.LN2 / qWin);
      }
      pw.sort((a, b) => a - b);
      sigma2[j] = Math.max(pw[pw.length >> 1]!, 1e-300);
    }
  }
  const wML = Array.from(sigma2, (s) => 1 / s);
  /** Harmonic-sum statistic with ML weights: Σ_h |Z_h|²/σ_h² (for refinement near a known peak). */
  const S = (start: number, c: Float64Array, delta: number) => {
    let v = 0;
    for (let j = 0; j < H; j++) {
      const t = set.tracks[j]!;
      const [ar, ai] = segmentDft(t.re, t.im, start, c, fb, set.harmonics[j]! * delta, dft);
      v += wML[j]! * (ar * ar + ai * ai);
    }
    return v;
  };
  // Offsets δ (Hz of f₀) searched: ±min(1.5 % of f₀, what the tracks pass at the top harmonic).
  const span = Math.min(0.015 * f0c, (0.3 * fb) / hMax);
  // Independent cells the search looked at (sets how high noise alone can reach), counted on the
  // first call, before harmonics were dropped.
  const cells = searchCells ?? Math.max(1, 2 * span * T * hMax * H);
  /**
   * Robust harmonic-sum rows on a grid: Σ_h log(1 + SNR_h(δ)) with SNR_h = |Z_h(h·δ)|²/(σ_h²·Q),
   * |Z_h|² read from a zero-padded FFT. The log keeps one strong passing partial (music near a
   * hum harmonic) from outweighing a steady line present on several harmonics.
   */
  const gridRows = (segStarts: number[], len: number, c: Float64Array, q: number, step: number, nGrid: number) => {
    const nfft = Math.max(64, nextPowerOfTwo(4 * len));
    const plan = new FftPlan(nfft);
    const buf = new Float64Array(2 * nfft), spec = new Float64Array(2 * nfft), pow = new Float64Array(nfft);
    const rows: Float64Array[] = [];
    for (const start of segStarts) {
      const row = new Float64Array(nGrid);
      for (let j = 0; j < H; j++) {
        const t = set.tracks[j]!, h = set.harmonics[j]!;
        buf.fill(0);
        for (let k = 0; k < len; k++) {
          buf[2 * k] = c[k]! * t.re[start + k]!;
          buf[2 * k + 1] = c[k]! * t.im[start + k]!;
        }
        plan.forward(buf, spec);
        for (let i = 0; i < nfft; i++) pow[i] = spec[2 * i]! ** 2 + spec[2 * i + 1]! ** 2;
        const norm = 1 / (sigma2[j]! * q);
        for (let i = 0; i < nGrid; i++) {
          let x = ((h * (-span + i * step)) / fb) * nfft;
          x = ((x % nfft) + nfft) % nfft;
          const b = Math.floor(x), f = x - b;
          row[i]! += Math.log1p(norm * (pow[b]! * (1 - f) + pow[(b + 1) % nfft]! * f));
        }
      }
      rows.push(row);
    }
    return rows;
  };

  // 1. Coherent search over the whole track (a steady line gains as T^{3/2} in precision).
  const gHalf = Math.max(1, Math.ceil(span / (1 / (4 * T * hMax))));
  const gStep = span / gHalf;
  const gRow = gridRows([first], usable, all, qAll, gStep, 2 * gHalf + 1)[0]!;
  let gAt = 0;
  for (let i = 1; i < gRow.length; i++) if (gRow[i]! > gRow[gAt]!) gAt = i;
  let dCoherent = goldenMax((d) => S(first, all, d), -span + (gAt - 1) * gStep, -span + (gAt + 1) * gStep, 30);

  // 2. Windowed curve: grid rows per window, Viterbi path, golden refinement.
  const seconds = winLen / fb;
  const half = Math.max(1, Math.ceil(span / (1 / (8 * seconds * hMax))));
  const nGrid = 2 * half + 1;
  const step = span / half;
  const rows = gridRows(starts, winLen, taper, qWin, step, nGrid);
  const J = Math.max(2, Math.ceil((MAX_DRIFT_PER_SECOND * f0c * (hop / fb)) / step));
  const score = Float64Array.from(rows[0]!);
  const next = new Float64Array(nGrid);
  const back: Int32Array[] = [];
  for (let w = 1; w < W; w++) {
    const bp = new Int32Array(nGrid);
    for (let i = 0; i < nGrid; i++) {
      let best = -Infinity, arg = i;
      const lo = Math.max(0, i - J), hi = Math.min(nGrid - 1, i + J);
      for (let q = lo; q <= hi; q++) {
        const v = score[q]! - 1e-3 * (q - i) * (q - i);
        if (v > best) {
          best = v;
          arg = q;
        }
      }
      next[i] = best + rows[w]![i]!;
      bp[i] = arg;
    }
    score.set(next);
    back.push(bp);
  }
  let at = 0;
  for (let i = 1; i < nGrid; i++) if (score[i]! > score[at]!) at = i;
  const path = new Int32Array(W);
  path[W - 1] = at;
  for (let w = W - 1; w > 0; w--) path[w - 1] = back[w - 1]![path[w]!]!;
  const deltas = new Float64Array(W);
  const reliable: boolean[] = [];
  const snrSums: number[] = [];
  for (let w = 0; w < W; w++) {
    const d0 = -span + path[w]! * step;
    deltas[w] = goldenMax((d) => S(starts[w]!, taper, d), d0 - step, d0 + step, 14);
    // Window evidence: z-score of Σ_h SNR_h against its noise-only mean H (sd √H).
    const snrSum = S(starts[w]!, taper, deltas[w]!) / qWin;
    snrSums.push(snrSum);
    reliable.push((snrSum - H) / Math.sqrt(H) >= 4);
  }
  const times = starts.map((s) => layout.timeOf(s + (winLen - 1) / 2));
  const f0s = Array.from(deltas, (d) => f0c + d);
  let scatter: number;
  if (W >= 3) {
    // Window-to-window scatter: the median absolute deviation of the first differences about
    // their median (× 1.4826, the normal consistency factor; ÷ √2, a difference of two windows),
    // so that a real trend (which shifts every difference alike) and a few windows a passing
    // note pulled off the line do not count as scatter (Rousseeuw & Croux 1993, the MAD).
    const d = f0s.slice(1).map((v, i) => v - f0s[i]!).sort((a, b) => a - b);
    const med = d[d.length >> 1]!;
    const dev = d.map((v) => Math.abs(v - med)).sort((a, b) => a - b);
    scatter = Math.max((1.4826 * dev[dev.length >> 1]!) / Math.SQRT2, 1e-9 * f0c);
  } else {
    scatter = step;
  }
  // Windows a passing note pulled off the curve (more than OUTLIER_SCATTERS scatters from the
  // local straight line through the windows within ±15 s, the one the curve follows) are set
  // aside, the farthest first, at most a quarter of them; each then reads the local line through
  // the others (so that the curve, its drift and its mean still weigh every second of the file
  // alike: a ramp's mean is not moved by which windows were set aside).
  const curveHalf = Math.max(CURVE_HALF_WINDOWS, Math.round((CURVE_HALF_SECONDS * fb) / hop));
  const kept: boolean[] = new Array<boolean>(W).fill(true);
  const reliableShare = reliable.filter(Boolean).length / W;
  const curveReliable = reliableShare >= 0.6;
  if (curveReliable && W >= 4) {
    for (let dropped = 0; dropped < Math.floor(W / 4); dropped++) {
      const fit = localLineFit(times, f0s, kept, curveHalf);
      let far = -1, farDist = 0;
      for (let w = 0; w < W; w++) {
        const dist = Math.abs(f0s[w]! - fit[w]!);
        if (kept[w] && dist > farDist) {
          farDist = dist;
          far = w;
        }
      }
      if (far < 0 || farDist <= OUTLIER_SCATTERS * scatter) break;
      kept[far] = false;
    }
    if (kept.includes(false)) {
      const fit = localLineFit(times, f0s, kept, curveHalf);
      for (let w = 0; w < W; w++) if (!kept[w] && Number.isFinite(fit[w]!)) f0s[w] = fit[w]!;
    }
  }
  let curveMean = f0s.reduce((a, b) => a + b, 0) / W;
  const independent = Math.max(1, (W * hop) / winLen);
  // Steadiness: a line that is there all the time has a median window statistic close to its mean;
  // a note that comes and goes has a median far below its mean. A window flooded by a transient
  // (a note's attack or a thump leaking onto the line: over FLOOD_RATIO × the median) is left out
  // of the mean, the largest first, at most a tenth of the windows: one burst says nothing about
  // whether the line is there in the others, while a note that comes and goes floods more
  // windows than that and still reads unsteady.
  const sortedSums = [...snrSums].sort((a, b) => a - b);
  const medianSum = sortedSums[sortedSums.length >> 1]!;
  const floods = Math.min(Math.floor(W / 10), sortedSums.filter((v) => v > FLOOD_RATIO * medianSum).length);
  const counted = sortedSums.slice(0, W - floods);
  const steadiness = Math.min(1, medianSum / (counted.reduce((a, b) => a + b, 0) / counted.length));

  // 3. Drift: a straight line through a reliable curve, significant against its scatter.
  let drifting = false;
  let line: { slope: number; tm: number; se: number } | null = null;
  if (curveReliable && W >= 4) {
    const tm = times.reduce((a, b) => a + b, 0) / W;
    let sxy = 0, sxx = 0;
    for (let w = 0; w < W; w++) {
      sxy += (times[w]! - tm) * (f0s[w]! - curveMean);
      sxx += (times[w]! - tm) ** 2;
    }
    const slope = sxy / sxx;
    // Overlapping windows are correlated: inflate the slope's standard error by √(winLen/hop).
    const se = (scatter / Math.sqrt(sxx)) * Math.sqrt(winLen / hop);
    const dur = times[W - 1]! - times[0]!;
    // Significant against the scatter, and large enough to matter: more than 0.02 % of f₀ over
    // the file (smaller drifts change the mean by less than the coherent estimate's own error).
    drifting = Math.abs(slope) > 4 * se && Math.abs(slope * dur) > Math.max(0.25 / (T * hMax), 2e-4 * f0c);
    line = { slope, tm, se };
  }
  // A drift through a short file is one straight line (the curve below would be one line through
  // all the windows): fit it to the whole track at once, as a linear chirp, instead of through
  // the windows' separate estimates. (Whether there is a drift stays the windows' verdict: under
  // music a steady hum also fits a chirp better than one frequency, by far more than noise would
  // make it.)
  const chirp =
    drifting && line && T <= CHIRP_MAX_SECONDS
      ? fitChirp(set, first, usable, fb, wML, layout.timeOf(first + (usable - 1) / 2), curveMean - f0c, line, T, hMax)
      : null;
  if (chirp) curveMean = f0c + chirp.offsetHz;
  if (drifting) dCoherent = curveMean - f0c;
  const coherentAt = drifting ? curveMean - f0c : dCoherent;

  // Per-harmonic coherent SNR at the estimate, and the overall detection statistic.
  // (Along the fitted chirp when there is one: a drifting line read at one frequency is smeared,
  // most at the upper harmonics.)
  const harmonicSnrDb = set.harmonics.map((h, j) => {
    const t = set.tracks[j]!;
    const [ar, ai] = chirp ? [Math.sqrt(chirp.harmonicPower[j]!), 0] : segmentDft(t.re, t.im, first, all, fb, h * coherentAt, dft);
    return 10 * Math.log10(Math.max((ar * ar + ai * ai) / (sigma2[j]! * qAll), 1e-12));
  });
  const detection = (chirp ? chirp.harmonicPower.reduce((a, p, j) => a + wML[j]! * p, 0) : S(first, all, coherentAt)) / (qAll * H);
  const detectionDb = 10 * Math.log10(Math.max(detection, 1e-12));

  let mean: number, uncertainty: number;
  if (drifting) {
    mean = curveMean;
    uncertainty = scatter / Math.sqrt(independent);
  } else {
    mean = f0c + dCoherent;
    const nseg = Math.max(3, Math.min(8, Math.floor(T / 2)));
    const segLen = Math.floor(usable / nseg);
    if (segLen >= Math.round(fb)) {
      const c = hann(segLen);
      const segLobe = 1 / ((segLen / fb) * hMax);
      const est: number[] = [];
      for (let s = 0; s < nseg; s++) {
        const st = first + s * segLen;
        est.push(goldenMax((d) => S(st, c, d), dCoherent - segLobe / 2, dCoherent + segLobe / 2, 30));
      }
      const m = est.reduce((a, b) => a + b, 0) / nseg;
      const sd = Math.sqrt(est.reduce((a, b) => a + (b - m) ** 2, 0) / (nseg - 1));
      // Standard error of the mean of the segment estimates: conservative (for a steady line in
      // white noise the whole-file estimate does better, as n^{-3/2}), but honest when music
      // partials sweeping through the hum perturb it segment by segment.
      uncertainty = sd / Math.sqrt(nseg);
    } else {
      uncertainty = scatter / Math.sqrt(independent);
    }
  }
  // Each harmonic on its own must tell the same story: the weighted spread of the per-harmonic
  // estimates (weights h²·SNR) bounds the uncertainty from below when interference hits some
  // harmonics and not others.
  if (!drifting && H >= 2) {
    const est: number[] = [], wts: number[] = [];
    for (let j = 0; j < H; j++) {
      const h = set.harmonics[j]!, t = set.tracks[j]!;
      const lobeH = 1 / (T * h);
      const one = (d: number) => {
        const [ar, ai] = segmentDft(t.re, t.im, first, all, fb, h * d, dft);
        return ar * ar + ai * ai;
      };
      est.push(goldenMax(one, dCoherent - lobeH / 2, dCoherent + lobeH / 2, 30));
      wts.push(h * h * Math.pow(10, harmonicSnrDb[j]! / 10));
    }
    const wsum = wts.reduce((a, b) => a + b, 0);
    const m = est.reduce((a, v, j) => a + wts[j]! * v, 0) / wsum;
    const spread = Math.sqrt(est.reduce((a, v, j) => a + wts[j]! * (v - m) ** 2, 0) / wsum / (H - 1));
    uncertainty = Math.max(uncertainty, spread);
  }
  // Floor: below 0.1 ppm the statistics only say "identical segments" (exactly periodic test data).
  uncertainty = Math.max(uncertainty, 1e-7 * f0c);
  // Keep only the harmonics that are clearly there (coherent SNR ≥ 6 dB) and measure again. The
  // fundamental always stays: a note's partial a few hertz away lifts its track's noise estimate
  // (the whole track band counts), so its coherent SNR can read low while the line is plainly
  // there, and without it the series cannot show itself as hum (persistenceEvidence judges it).
  const keep = harmonicSnrDb.map((v, j) => (v >= 6 || set.harmonics[j] === 1 ? j : -1)).filter((j) => j >= 0);
  if (keep.length > 0 && keep.length < H) {
    const again = measureSeries(
      {
        fundamentalHz: set.fundamentalHz,
        harmonics: keep.map((j) => set.harmonics[j]!),
        weights: keep.map((j) => set.weights[j]!),
        tracks: keep.map((j) => set.tracks[j]!),
      },
      layout,
      cells,
    );
    if (again) return again;
  }
  return {
    harmonicsUsed: [...set.harmonics],
    meanFundamentalHz: mean,
    uncertaintyHz: uncertainty,
    windowScatterHz: scatter,
    timesSeconds: curveReliable ? times : [],
    // The curve is what the windows show beyond their own scatter: a drift significant against
    // it is followed (local straight lines over ±15 s: a ramp passes unchanged and the scatter of
    // the windows averages out), and without one the curve is the steady mean (a window estimate
    // wandering with the speech is measurement noise, not the machine).
    fundamentalsHz: curveReliable
      ? chirp
        ? times.map((t) => f0c + chirp.offsetHz + chirp.slopeHzPerSecond * (t - chirp.centreSeconds))
        : drifting
        ? Array.from(localLineFit(times, f0s, new Array<boolean>(W).fill(true), curveHalf), (v, i) => (Number.isFinite(v) ? v : f0s[i]!))
        : times.map(() => mean)
      : [],
    detectionDb,
    noiseDetectionDb: 10 * Math.log10(1 + Math.log(cells) / H),
    harmonicSnrDb,
    steadiness,
    drifting,
  };
}

/**
 * Coherent fit of a linear drift over the whole track: the series' phase is
 * 2π·h·(δ·τ + ½·α·τ²) about the track's centre (τ = 0 at `centreSeconds`), and (δ, α) maximise
 * S(δ, α) = Σ_h w_h |Σ_k c_k z_h[k] e^{−j2π·h·(δ·τ_k + ½·α·τ_k²)}|² (the harmonic-sum statistic of a
 * linear chirp; common practice: the maximum-likelihood estimate of a chirp in white noise,
 * whose precision grows as T^{−3/2} for δ and T^{−5/2} for α, against T^{−1/2} for an average of
 * window estimates). With τ centred, δ and α are nearly independent: a grid around the windows'
 * line (δ within ±2 lobes, α within ±max(4 standard errors, 30 %)), then alternating
 * golden-section refinement. δ is the mean offset of the line over the track.
 */
function fitChirp(
  set: TrackSet, first: number, usable: number, fb: number, w: readonly number[], centreSeconds: number,
  d0: number, line: { slope: number; tm: number; se: number }, T: number, hMax: number,
): { offsetHz: number; slopeHzPerSecond: number; centreSeconds: number; harmonicPower: number[] } {
  const c = hann(usable);
  const tau = new Float64Array(usable);
  for (let k = 0; k < usable; k++) tau[k] = (k - (usable - 1) / 2) / fb;
  const H = set.harmonics.length;
  /** |Z_j|² of harmonic j's track demodulated along the chirp (δ, α). */
  const power = (j: number, d: number, a: number) => {
    const t = set.tracks[j]!, h = set.harmonics[j]!;
    let ar = 0, ai = 0;
    for (let k = 0; k < usable; k++) {
      const ph = -2 * Math.PI * h * (d * tau[k]! + 0.5 * a * tau[k]! * tau[k]!);
      const cr = Math.cos(ph), ci = Math.sin(ph);
      const zr = c[k]! * t.re[first + k]!, zi = c[k]! * t.im[first + k]!;
      ar += zr * cr - zi * ci;
      ai += zr * ci + zi * cr;
    }
    return ar * ar + ai * ai;
  };
  const S = (d: number, a: number) => {
    let v = 0;
    for (let j = 0; j < H; j++) v += w[j]! * power(j, d, a);
    return v;
  };
  // The windows' line read at the track's centre.
  const dStart = d0 + line.slope * (centreSeconds - line.tm);
  const lobe = 1 / (T * hMax);
  const aHalf = Math.max(4 * line.se, 0.3 * Math.abs(line.slope));
  const nd = 9, na = 13;
  let bd = dStart, ba = line.slope, best = -Infinity;
  for (let i = 0; i < na; i++) {
    const a = line.slope - aHalf + (2 * aHalf * i) / (na - 1);
    for (let q = 0; q < nd; q++) {
      const d = dStart - 2 * lobe + (4 * lobe * q) / (nd - 1);
      const v = S(d, a);
      if (v > best) {
        best = v;
        bd = d;
        ba = a;
      }
    }
  }
  const dStep = (4 * lobe) / (nd - 1), aStep = (2 * aHalf) / (na - 1);
  for (let round = 0; round < 3; round++) {
    bd = goldenMax((d) => S(d, ba), bd - dStep, bd + dStep, 16);
    ba = goldenMax((a) => S(bd, a), ba - aStep, ba + aStep, 16);
  }
  return { offsetHz: bd, slopeHzPerSecond: ba, centreSeconds, harmonicPower: set.harmonics.map((_, j) => power(j, bd, ba)) };
}

/**
 * line_i(t_i) for each point: line_i the least-squares straight line through the points marked
 * in `use` among the ±half neighbours of i (by index; prefix sums, O(n)); NaN where fewer than two
 * such points.
 */
export function localLineFit(t: readonly number[], y: readonly number[], use: readonly boolean[], half: number): Float64Array {
  const n = y.length;
  // Prefix sums of 1, t, y, t², t·y over the points in use, t and y taken about their first value
  // (better conditioned).
  const t0 = t[0] ?? 0, y0 = y[0] ?? 0;
  const P = new Float64Array(5 * (n + 1));
  for (let i = 0; i < n; i++) {
    const u = use[i] ? 1 : 0, a = t[i]! - t0, b = y[i]! - y0;
    P[5 * (i + 1)] = P[5 * i]! + u;
    P[5 * (i + 1) + 1] = P[5 * i + 1]! + u * a;
    P[5 * (i + 1) + 2] = P[5 * i + 2]! + u * b;
    P[5 * (i + 1) + 3] = P[5 * i + 3]! + u * a * a;
    P[5 * (i + 1) + 4] = P[5 * i + 4]! + u * a * b;
  }
  const out = new Float64Array(n).fill(NaN);
  for (let i = 0; i < n; i++) {
    const lo = Math.max(0, i - half), hi = Math.min(n - 1, i + half);
    const g = (k: number) => P[5 * (hi + 1) + k]! - P[5 * lo + k]!;
    const m = g(0);
    if (m < 2) continue;
    const tm = g(1) / m, ym = g(2) / m;
    const sxx = g(3) - m * tm * tm, sxy = g(4) - m * tm * ym;
    const slope = sxx > 0 ? sxy / sxx : 0;
    out[i] = y0 + ym + slope * (t[i]! - t0 - tm);
  }
  return out;
}

/** Golden-section search for the maximum of f on [lo, hi]. */
export function goldenMax(f: (x: number) => number, lo: number, hi: number, iterations: number): number {
  const g = (Math.sqrt(5) - 1) / 2;
  let x1 = hi - g * (hi - lo), x2 = lo + g * (hi - lo);
  let f1 = f(x1), f2 = f(x2);
  for (let i = 0; i < iterations; i++) {
    if (f1 > f2) {
      hi = x2;
      x2 = x1;
      f2 = f1;
      x1 = hi - g * (hi - lo);
      f1 = f(x1);
    } else {
      lo = x1;
      x1 = x2;
      f1 = f2;
      x2 = lo + g * (hi - lo);
      f2 = f(x2);
    }
  }
  return (lo + hi) / 2;
}

/** Σ_k c_k·z_k·e^{−jω(k − centre)} over one segment. */
function segmentAt(re: TrackArray, im: TrackArray, start: number, c: Float64Array, centre: number, w: number): [number, number] {
  let zr = 0, zi = 0;
  const dc = Math.cos(w), ds = -Math.sin(w);
  let cr = Math.cos(w * centre), ci = Math.sin(w * centre);
  for (let k = 0; k < c.length; k++) {
    const a = re[start + k]!, b = im[start + k]!;
    zr += c[k]! * (a * cr - b * ci);
    zi += c[k]! * (a * ci + b * cr);
    const t = cr * dc - ci * ds;
    ci = cr * ds + ci * dc;
    cr = t;
  }
  return [zr, zi];
}

/**
 * The line at angular offset w0 fitted together with the strongest component between 1.25 and
 * 4.5 bins from it, when that component is a clear peak (≥ 10 × the median of the offsets
 * searched). Least squares with taper weights c (symmetric about the centre, so the basis
 * products γ(Δ) = Σ c·cos(Δ·(k − centre)) are real): a·Σc + b·γ = Z₁, a·γ + b·Σc = Z₂. Returns
 * the line's amplitude a and the probes' summed power on the residual, or null.
 */
function jointWithNeighbour(
  re: TrackArray, im: TrackArray, start: number, c: Float64Array, sc: number, centre: number, segLen: number, w0: number,
  probes: readonly number[], fitRe: Float64Array, fitIm: Float64Array,
): { re: number; im: number; probe: number } | null {
  const binW = (2 * Math.PI) / segLen;
  const offs: number[] = [], pows: number[] = [];
  for (let b = -4.5; b <= 4.5 + 1e-9; b += 0.25) {
    if (Math.abs(b) < 1.25) continue;
    const [zr, zi] = segmentAt(re, im, start, c, centre, w0 + b * binW);
    offs.push(b);
    pows.push(zr * zr + zi * zi);
  }
  let at = 0;
  for (let i = 1; i < pows.length; i++) if (pows[i]! > pows[at]!) at = i;
  const sorted = [...pows].sort((x, y) => x - y);
  if (!(pows[at]! >= 10 * sorted[sorted.length >> 1]!)) return null;
  // Parabolic refinement in log power between grid neighbours on the same side.
  let b2 = offs[at]!;
  if (at > 0 && at < pows.length - 1 && Math.abs(offs[at + 1]! - offs[at - 1]!) < 0.51) {
    const l = Math.log(pows[at - 1]! + 1e-300), m = Math.log(pows[at]! + 1e-300), r = Math.log(pows[at + 1]! + 1e-300);
    const den = l - 2 * m + r;
    if (den < 0) b2 += Math.max(-0.5, Math.min(0.5, (0.5 * (l - r)) / den)) * 0.25;
  }
  const w2 = w0 + b2 * binW;
  const gamma = (d: number) => {
    let v = 0;
    for (let k = 0; k < c.length; k++) v += c[k]! * Math.cos(d * (k - centre));
    return v;
  };
  const [z1r, z1i] = [fitRe[0]!, fitIm[0]!];
  const [z2r, z2i] = segmentAt(re, im, start, c, centre, w2);
  const g12 = gamma(w2 - w0);
  const det = sc * sc - g12 * g12;
  if (!(det > 1e-6 * sc * sc)) return null;
  const ar = (sc * z1r - g12 * z2r) / det, ai = (sc * z1i - g12 * z2i) / det;
  const br = (sc * z2r - g12 * z1r) / det, bi = (sc * z2i - g12 * z1i) / det;
  let probe = 0;
  for (let p = 0; p < probes.length; p++) {
    const wp = w0 + probes[p]! * binW;
    const ga = gamma(w0 - wp), gb = gamma(w2 - wp);
    const rr = fitRe[p + 1]! - ar * ga - br * gb, ri = fitIm[p + 1]! - ai * ga - bi * gb;
    probe += rr * rr + ri * ri;
  }
  return { re: ar, im: ai, probe };
}

/** How a line behaves through the file, segment by segment (see `linePersistence`). */
export interface LinePersistence {
  /** Segments looked at (they tile the whole track). */
  segments: number;
  /** Share of segments where at least one harmonic could be seen clearly enough to judge. */
  coverage: number;
  /** Of the judged (segment, harmonic) cells, the share where the line was not at its usual level. */
  inconsistentShare: number;
  /** Judged cells. */
  judged: number;
  /** Per harmonic (in the order given): share of segments judged, and share of those inconsistent. */
  perHarmonic: { coverage: number; inconsistentShare: number }[];
}

/**
 * Does the line persist at one level through the file? Mains hum is there all the time at a
 * nearly constant level, through pauses and under the programme; a note starts and stops with the
 * playing and decays (REAL-MATERIAL.md, common practice). Each harmonic's track is cut into
 * segments (Hann, 0.5–2 s) tiling the whole file, head and tail included; in each the line's
 * amplitude A is fitted at the measured frequency (least squares: A = |Σ c·z·e^{−jφ}|/Σc) and what
 * else is near it gives its noise: the same fit 2 and 3 bins either side (σ_A² = mean |Z_probe|²/
 * (2·(Σc)²)), i.e. whatever would have leaked into the line's estimate. The usual level L is the
 * median of A over the half of the segments where the probes are quietest. A cell is judged when
 * σ_A ≤ L/4 (the line would stand clear of what else is there) and is inconsistent when A lies
 * outside L·[0.7, 1.4] (±3 dB) widened by 3σ_A: silence where the line should show, a note's
 * attack or its decay. `f0At(t)` gives the fundamental to demodulate at time t (a drifting hum).
 */
export function linePersistence(set: TrackSet, layout: TrackLayout, f0At: (t: number) => number): LinePersistence {
  const fb = layout.trackRateHz;
  const n = set.tracks[0]!.length;
  const T = n / fb;
  // Segments of T/16 within 0.5–2 s (0.25 s in a clip shorter than 4 s, so that it still has
  // eight of them).
  const segLen = Math.max(4, Math.round(Math.min(2, Math.max(T < 4 ? 0.25 : 0.5, T / 16)) * fb));
  const S = Math.floor(n / segLen);
  const H = set.harmonics.length;
  const none = { segments: S, coverage: 0, inconsistentShare: 1, judged: 0, perHarmonic: set.harmonics.map(() => ({ coverage: 0, inconsistentShare: 1 })) };
  if (S < 4) return none;
  const c = hann(segLen);
  let sc = 0;
  for (const v of c) sc += v;
  const centre = (segLen - 1) / 2;
  const amp = new Float64Array(S * H), sig = new Float64Array(S * H);
  const PROBES = [-3, -2, 2, 3];
  const fitRe = new Float64Array(1 + PROBES.length), fitIm = new Float64Array(1 + PROBES.length);
  const gainRe = new Float64Array(1 + PROBES.length), gainIm = new Float64Array(1 + PROBES.length);
  const cg = new Float64Array(segLen);
  for (let s = 0; s < S; s++) {
    // The last segment ends at the last track sample (it may overlap the one before).
    const start = s === S - 1 ? n - segLen : s * segLen;
    const delta = f0At(layout.timeOf(start + centre)) - set.fundamentalHz;
    // Under time weights g (quiet-weighted tracks) the track holds g·(line + programme): the line
    // is fitted with the regressor g·e^{jφ} (least squares, coefficients c·g: A = Σ c·g·z·e^{−jφ} /
    // Σ c·g²), and the probes are read on what is left after it, since the weights spread the
    // line itself into sidebands at the rates the programme's bursts come at.
    const g = set.gain;
    if (g) {
      for (let k = 0; k < segLen; k++) cg[k] = c[k]! * g[start + k]!;
      for (let p = 0; p <= PROBES.length; p++) {
        const w = p === 0 ? 0 : -(2 * Math.PI * PROBES[p - 1]!) / segLen;
        let gr = 0, gi = 0;
        for (let k = 0; k < segLen; k++) {
          const v = cg[k]! * g[start + k]!;
          gr += v * Math.cos(w * (k - centre));
          gi += v * Math.sin(w * (k - centre));
        }
        gainRe[p] = gr;
        gainIm[p] = gi;
      }
    }
    const coef = g ? cg : c;
    for (let j = 0; j < H; j++) {
      const t = set.tracks[j]!;
      const w0 = (2 * Math.PI * set.harmonics[j]! * delta) / fb;
      for (let p = 0; p <= PROBES.length; p++) {
        // Angular frequency of the fit: the line, or a probe `PROBES[p − 1]` bins away.
        const w = -(w0 + (p === 0 ? 0 : (2 * Math.PI * PROBES[p - 1]!) / segLen));
        let zr = 0, zi = 0;
        const dc = Math.cos(w), ds = Math.sin(w);
        let cr = Math.cos(w * -centre), ci = Math.sin(w * -centre);
        for (let k = 0; k < segLen; k++) {
          const re = t.re[start + k]!, im = t.im[start + k]!;
          zr += coef[k]! * (re * cr - im * ci);
          zi += coef[k]! * (re * ci + im * cr);
          const tr = cr * dc - ci * ds;
          ci = cr * ds + ci * dc;
          cr = tr;
        }
        fitRe[p] = zr;
        fitIm[p] = zi;
      }
      if (g) {
        const g0 = Math.max(gainRe[0]!, 1e-12 * sc);
        const ar = fitRe[0]! / g0, ai = fitIm[0]! / g0;
        let probe = 0;
        for (let p = 1; p <= PROBES.length; p++) {
          const rr = fitRe[p]! - (ar * gainRe[p]! - ai * gainIm[p]!);
          const ri = fitIm[p]! - (ar * gainIm[p]! + ai * gainRe[p]!);
          probe += rr * rr + ri * ri;
        }
        amp[s * H + j] = Math.hypot(ar, ai);
        sig[s * H + j] = Math.sqrt(probe / PROBES.length / 2) / g0;
      } else {
        let probe = 0;
        for (let p = 1; p <= PROBES.length; p++) probe += fitRe[p]! ** 2 + fitIm[p]! ** 2;
        let ar = fitRe[0]! / sc, ai = fitIm[0]! / sc;
        // A strong partial beside the line (a low note a few hertz from the hum) lifts the probes
        // far more than it leaks into the line's fit. When the probes would hide the line, the
        // strongest component off the line (±1.25…4.5 bins) is found and fitted jointly with the
        // line (weighted least squares with two exponentials), and the probes are read on what is
        // left: the note's partial is subtracted, not counted as noise.
        if (probe / PROBES.length > (fitRe[0]! ** 2 + fitIm[0]! ** 2) / 16) {
          const two = jointWithNeighbour(t.re, t.im, start, c, sc, centre, segLen, w0, PROBES, fitRe, fitIm);
          if (two) {
            ar = two.re;
            ai = two.im;
            probe = two.probe;
          }
        }
        amp[s * H + j] = Math.hypot(ar, ai);
        sig[s * H + j] = Math.sqrt(probe / PROBES.length / 2) / sc;
      }
    }
  }
  // The usual level: the median amplitude over the half of the segments where least else is
  // there (programme passing near the line lifts or cancels it; the quiet half shows the line).
  const level = new Float64Array(H);
  const order: number[] = [];
  for (let j = 0; j < H; j++) {
    order.length = 0;
    for (let s = 0; s < S; s++) order.push(s);
    order.sort((x, y) => sig[x * H + j]! - sig[y * H + j]!);
    const quiet = order.slice(0, Math.max(2, Math.ceil(S / 2))).map((s) => amp[s * H + j]!).sort((x, y) => x - y);
    level[j] = quiet[quiet.length >> 1]!;
  }
  let judged = 0, bad = 0, covered = 0;
  const hJudged = new Float64Array(H), hBad = new Float64Array(H);
  for (let s = 0; s < S; s++) {
    let any = false;
    for (let j = 0; j < H; j++) {
      const L = level[j]!, a = amp[s * H + j]!, e = sig[s * H + j]!;
      if (!(L > 0) || e > L / 4) continue;
      any = true;
      judged++;
      hJudged[j]!++;
      if (a < 0.7 * L - 3 * e || a > 1.4 * L + 3 * e) {
        bad++;
        hBad[j]!++;
      }
    }
    if (any) covered++;
  }
  return {
    segments: S,
    coverage: covered / S,
    inconsistentShare: judged ? bad / judged : 1,
    judged,
    perHarmonic: Array.from(hJudged, (m, j) => ({ coverage: m / S, inconsistentShare: m ? hBad[j]! / m : 1 })),
  };
}

