/**
 * Band envelopes for reversed-channel detection: the level of each half-octave band every 10 ms,
 * and the onset/offset asymmetry of those levels combined across bands.
 *
 * Why bands: in music a new note or chord often arrives while the old one still sounds, so the
 * broadband level hardly moves at the change; in the bands of the new note's partials the level
 * jumps (an onset), and in those of the old one it falls away (a release, a decay). Played
 * forwards, onsets are sharp and releases and decays gradual — the partials of a struck or plucked
 * note die away exponentially, those of a blown or bowed note fade as the excitation stops —
 * while a reversed channel gets gradual onsets and sharp offsets (the positive part of the
 * spectral flux is the usual onset function: e.g. Bello et al., "A tutorial on onset detection in
 * music signals", IEEE Trans. Speech Audio Proc. 13(5), 2005; here its negative part is weighed
 * against it).
 *
 * Cue: over every band b and 10 ms step t with the louder side within 35 dB of that band's peak,
 * the 30 ms level changes d = L_b[t+3] − L_b[t]; the skew Sb = (Σ d₋³ − Σ d₊³)/(Σ d₊³ + Σ d₋³)
 * ∈ [−1, 1] (big changes count most) is negative when the big changes are rises (forwards) and
 * positive when they are falls. Time reversal maps every d to −d, so Sb(reversed) = −Sb(forward)
 * up to the framing. Agreement across the spectrum: Sb of each band on its own, their median and
 * the share of bands leaning each way (a real reversal turns every band round; one sound with a
 * hard edge — a line-up tone stopping — moves only the bands it occupies). Agreement over time: Sb
 * in 1 s segments and the t statistic of the segment scores.
 *
 * Frames: Hann windows of about 43 ms (the power of two nearest 0.043 s of samples), one every
 * 10 ms block; bands half an octave wide from 90 Hz up to 11.5 kHz or 0.45 × the sample rate.
 */
import { StftAnalyzer } from '../core/stft.ts';
import { powerToDb } from '../units.ts';

const LOW_HZ = 90;
const HIGH_HZ = 11500;
const LAG_BLOCKS = 3;
const ACTIVE_DB = 35;
const FLOOR_DB = 60;
const SEGMENT_BLOCKS = 100;

/** Half-octave band levels of one channel, one value per block (power, summed over the band's bins). */
export class BandEnvelopes {
  readonly bandCount: number;
  readonly #edges: Int32Array;
  readonly #stft: StftAnalyzer;
  #values: Float32Array;
  #frames = 0;
  #flushed = false;

  constructor(sampleRateHz: number, blockFrames: number, expectedBlocks: number) {
    const fftSize = 2 ** Math.max(6, Math.round(Math.log2(0.043 * sampleRateHz)));
    const top = Math.min(HIGH_HZ, 0.45 * sampleRateHz);
    const edges: number[] = [];
    for (let f = LOW_HZ; f <= top * 1.0001; f *= Math.SQRT2) edges.push(Math.max(1, Math.round((f * fftSize) / sampleRateHz)));
    // Bands of at least one bin each.
    const kept = edges.filter((e, i) => i === 0 || e > edges[i - 1]!);
    this.#edges = Int32Array.from(kept);
    this.bandCount = Math.max(0, kept.length - 1);
    this.#values = new Float32Array(Math.max(16, expectedBlocks + 8) * Math.max(1, this.bandCount));
    const hop = Math.min(blockFrames, fftSize);
    this.#stft = new StftAnalyzer({ fftSize, hopSize: hop, window: 'hann' }, (spec) => this.#frame(spec));
  }

  add(x: Float64Array): void {
    this.#stft.push(x);
  }

  #frame(spec: Float64Array): void {
    const nb = this.bandCount;
    if ((this.#frames + 1) * nb > this.#values.length) {
      const grown = new Float32Array(this.#values.length * 2);
      grown.set(this.#values);
      this.#values = grown;
    }
    const e = this.#edges, base = this.#frames * nb;
    for (let b = 0; b < nb; b++) {
      let p = 0;
      for (let k = e[b]!; k < e[b + 1]!; k++) p += spec[2 * k]! * spec[2 * k]! + spec[2 * k + 1]! * spec[2 * k + 1]!;
      this.#values[base + b] = p;
    }
    this.#frames++;
  }

  /** Frames × bands, frame-major (call once the source has ended). */
  levels(): { frames: number; bands: number; power: Float32Array } {
    if (!this.#flushed) {
      this.#stft.flush();
      this.#flushed = true;
    }
    return { frames: this.#frames, bands: this.bandCount, power: this.#values.subarray(0, this.#frames * this.bandCount) };
  }
}

export interface BandAsymmetry {
  /** Sb (see the module comment): positive when the big level changes in the bands are falls. */
  readonly score: number;
  /** Band steps that counted (louder side within 35 dB of the band's peak). */
  readonly steps: number;
  /** t statistic of the 1 s segment scores (0 when fewer than 3 segments). */
  readonly segmentT: number;
  /** Number of 1 s segments scored. */
  readonly segments: number;
  /** Bands scored on their own (within 40 dB of the loudest band, with steps). */
  readonly bands: number;
  /** Median over those bands of each band's own Sb. */
  readonly bandMedian: number;
  /** Share of those bands whose own Sb is positive, and negative. */
  readonly positiveShare: number;
  readonly negativeShare: number;
}

/** The band skew of one channel's band levels (`levels`: the same in dB, when already at hand). */
export function bandAsymmetry(frames: number, bands: number, power: Float32Array, levels?: BandDb): BandAsymmetry {
  const none = { score: 0, steps: 0, segmentT: 0, segments: 0, bands: 0, bandMedian: 0, positiveShare: 0, negativeShare: 0 };
  if (frames <= LAG_BLOCKS || bands === 0) return none;
  const { db, used: use } = levels ?? bandDb(frames, bands, power);
  const steps = frames - LAG_BLOCKS;
  /** Up and down cubes over steps [from, to) of every used band, or of band `only`. */
  const skew = (from: number, to: number, only = -1) => {
    let up = 0, down = 0, n = 0;
    for (let t = from; t < to; t++) {
      for (let b = 0; b < bands; b++) {
        if (!use[b] || (only >= 0 && b !== only)) continue;
        const a = db[t * bands + b]!, c = db[(t + LAG_BLOCKS) * bands + b]!;
        if (Math.max(a, c) < -ACTIVE_DB) continue;
        n++;
        const d = c - a;
        if (d > 0) up += d * d * d;
        else down -= d * d * d;
      }
    }
    return { up, down, n };
  };
  const all = skew(0, steps);
  const total = all.up + all.down;
  const score = total > 0 ? (all.down - all.up) / total : 0;
  const { t: segmentT, segments } = segmentAgreement(steps, SEGMENT_BLOCKS, skew);
  // Each band on its own: does every part of the spectrum lean the same way?
  const own: number[] = [];
  for (let b = 0; b < bands; b++) {
    if (!use[b]) continue;
    const s = skew(0, steps, b);
    if (s.up + s.down > 0) own.push((s.down - s.up) / (s.up + s.down));
  }
  own.sort((x, y) => x - y);
  const m = own.length;
  const bandMedian = m === 0 ? 0 : m % 2 ? own[(m - 1) / 2]! : (own[m / 2 - 1]! + own[m / 2]!) / 2;
  const positiveShare = m === 0 ? 0 : own.filter((v) => v > 0).length / m;
  const negativeShare = m === 0 ? 0 : own.filter((v) => v < 0).length / m;
  return { score, steps: all.n, segmentT, segments, bands: m, bandMedian, positiveShare, negativeShare };
}

/**
 * Agreement of the skew over segments of `segmentBlocks` steps (centred in the file so that
 * reversal mirrors them as nearly as possible): Student's t of the per-segment scores
 * (down − up) / (down + up), over segments with at least 20 active steps; t = 0 with fewer than 3.
 */
export function segmentAgreement(steps: number, segmentBlocks: number, skew: (from: number, to: number) => { up: number; down: number; n: number }): { t: number; segments: number } {
  const lead = Math.floor((steps % segmentBlocks) / 2);
  const seg: number[] = [];
  for (let a = lead; a + segmentBlocks <= steps; a += segmentBlocks) {
    const s = skew(a, a + segmentBlocks);
    if (s.n >= 20 && s.up + s.down > 0) seg.push((s.down - s.up) / (s.up + s.down));
  }
  if (seg.length < 3) return { t: 0, segments: seg.length };
  const mean = seg.reduce((p, v) => p + v, 0) / seg.length;
  const sd = Math.sqrt(seg.reduce((p, v) => p + (v - mean) ** 2, 0) / (seg.length - 1));
  return { t: sd > 0 ? mean / (sd / Math.sqrt(seg.length)) : 0, segments: seg.length };
}

/** Band levels in dB relative to each band's robust peak (99th percentile), floored 60 dB down. */
export interface BandDb {
  readonly frames: number;
  readonly bands: number;
  /** Frames × bands, frame-major. */
  readonly db: Float32Array | Float64Array;
  /** Bands within 40 dB of the loudest band's peak. */
  readonly used: readonly boolean[];
}

/**
 * The band levels in dB relative to each band's 99th-percentile level, floored at −60 dB. With
 * `inPlace` they are written over `power` (single precision, as the powers were), which the caller
 * must not need afterwards: on a 1-hour 96 kHz file that saves 40 MB per channel.
 */
export function bandDb(frames: number, bands: number, power: Float32Array, inPlace = false): BandDb {
  const db = inPlace ? power.subarray(0, frames * bands) : new Float64Array(frames * bands);
  const peaks = new Float64Array(bands);
  const col = new Float64Array(frames), sorted = new Float64Array(frames);
  for (let b = 0; b < bands; b++) {
    for (let t = 0; t < frames; t++) col[t] = powerToDb(power[t * bands + b]! + 1e-30);
    sorted.set(col);
    sorted.sort();
    peaks[b] = sorted[Math.min(frames - 1, Math.floor(0.99 * (frames - 1)))]!;
    for (let t = 0; t < frames; t++) db[t * bands + b] = Math.max(col[t]! - peaks[b]!, -FLOOR_DB);
  }
  let loudest = -Infinity;
  for (let b = 0; b < bands; b++) loudest = Math.max(loudest, peaks[b]!);
  return { frames, bands, db, used: Array.from(peaks, (p) => p >= loudest - 40) };
}

/**
 * Do the bands' levels move apart over frames [from, to)? Each used band's level is fitted with a
 * straight line (dB against time); a gain (an editor's fade, whatever its curve) moves every band
 * by the same dB, so the slopes differ only by the material's own fluctuation, while a free decay
 * has a rate of its own in each band. Returns the heterogeneity Q/(m − 1) of the m slopes
 * (Cochran's Q: Σ (s_b − s̄)² / SE_b² with the inverse-variance mean s̄; e.g. Cochran, Biometrics
 * 10, 1954), each standard error widened for the residuals' lag-1 autocorrelation ρ by
 * √((1 + ρ)/(1 − ρ)) (the AR(1) effective sample size: common practice). About 1 for a gain on
 * stationary material; large when the bands decay at different rates.
 */
export function bandHeterogeneity(b: BandDb, from: number, to: number): { bands: number; ratio: number } {
  const lo = Math.max(0, from), hi = Math.min(b.frames, to);
  const s: number[] = [], w: number[] = [];
  const ys = new Float64Array(Math.max(0, hi - lo)), ts = new Float64Array(Math.max(0, hi - lo));
  for (let k = 0; k < b.bands; k++) {
    if (!b.used[k]) continue;
    let n = 0;
    for (let t = lo; t < hi; t++) {
      const y = b.db[t * b.bands + k]!;
      if (y <= -FLOOR_DB + 10) continue;
      ys[n] = y;
      ts[n] = t;
      n++;
    }
    if (n < 30) continue;
    let tm = 0, ym = 0;
    for (let i = 0; i < n; i++) { tm += ts[i]!; ym += ys[i]!; }
    tm /= n; ym /= n;
    let sxx = 0, sxy = 0;
    for (let i = 0; i < n; i++) { sxx += (ts[i]! - tm) ** 2; sxy += (ts[i]! - tm) * (ys[i]! - ym); }
    if (sxx <= 0) continue;
    const slope = sxy / sxx;
    let rss = 0, r1 = 0, prev = 0;
    for (let i = 0; i < n; i++) {
      const r = ys[i]! - ym - slope * (ts[i]! - tm);
      rss += r * r;
      if (i > 0) r1 += r * prev;
      prev = r;
    }
    const rho = rss > 0 ? Math.min(0.98, Math.max(0, r1 / rss)) : 0;
    const se2 = (rss / Math.max(1, n - 2) / sxx) * ((1 + rho) / (1 - rho));
    s.push(slope);
    w.push(1 / Math.max(se2, 1e-12));
  }
  const m = s.length;
  if (m < 3) return { bands: m, ratio: 0 };
  let sw = 0, swm = 0;
  for (let i = 0; i < m; i++) { sw += w[i]!; swm += w[i]! * s[i]!; }
  const mean = swm / sw;
  let q = 0;
  for (let i = 0; i < m; i++) q += w[i]! * (s[i]! - mean) ** 2;
  return { bands: m, ratio: q / (m - 1) };
}

/** Staggered edges (edgeStagger): the window on the loud side, a band's fall there, and how many bands. */
const STAGGER_NEAR_FRAMES = 4;
const STAGGER_FAR_FRAMES = 12;
const STAGGER_GONE_DB = 12;
const STAGGER_HELD_DB = 4;

/**
 * Is the hard edge at block `at` (a stop: blocks at … at + 2 fall by 15 dB or more; a start: they
 * rise) staggered across the spectrum, the way a natural attack is? A struck, blown or bowed sound
 * does not reach every partial at once — its bands arrive over tens of milliseconds (the low pipes
 * of an organ speak late, a bow's noise precedes the note) — while a gain step, a cut or a gate
 * moves every band at the same instant. Read on the loud side of the edge: for a start, from the
 * first band frame wholly after it (frame at + 5) to 40–120 ms later; for a stop, from the last
 * frame wholly before it (frame at) back to 40–120 ms earlier (so that time reversal maps one onto
 * the other). Staggered: at least 3 bands (and a quarter of those sounding there) stand 12 dB or more
 * below their level 40–120 ms away, while at least 2 bands are already within 4 dB of it.
 */
export function edgeStagger(b: BandDb, at: number, up: boolean): boolean {
  const ref = up ? at + 5 : at;
  if (ref < 0 || ref >= b.frames) return false;
  let sounding = 0, gone = 0, held = 0;
  for (let k = 0; k < b.bands; k++) {
    if (!b.used[k]) continue;
    let far = -Infinity;
    for (let q = STAGGER_NEAR_FRAMES; q <= STAGGER_FAR_FRAMES; q++) {
      const f = up ? ref + q : ref - q;
      if (f >= 0 && f < b.frames) far = Math.max(far, b.db[f * b.bands + k]!);
    }
    if (far < -40) continue;
    sounding++;
    const d = far - b.db[ref * b.bands + k]!;
    if (d >= STAGGER_GONE_DB) gone++;
    else if (d <= STAGGER_HELD_DB) held++;
  }
  return gone >= 3 && gone >= 0.25 * sounding && held >= 2;
}

/**
 * Which way the bands' rates lean across the spectrum over frames [from, to): each used band's
 * level fitted with a straight line (dB against time, as in bandHeterogeneity), and Spearman's rank
 * correlation of the slopes with the bands' frequencies (−1 … 1; 0 with fewer than 4 bands).
 * A gain — an editor's fade of any curve — adds the same dB to every band and leaves this order
 * alone. The higher partials of a struck or plucked string die away faster than the lower ones
 * (from memory: Fletcher & Rossing, The Physics of Musical Instruments, §2 and §12 — losses grow
 * with frequency), so a free decay has the slopes falling with frequency (correlation near −1),
 * and the same decay played backwards has them rising (near +1) — however it was faded.
 * `relativeSpread`: the mean rate of the top third of the bands less that of the bottom third,
 * over the size of the mean rate of all (signed as the correlation is).
 */
export function bandRateTilt(b: BandDb, from: number, to: number): { bands: number; correlation: number; relativeSpread: number } {
  const lo = Math.max(0, from), hi = Math.min(b.frames, to);
  const slopes: number[] = [];
  for (let k = 0; k < b.bands; k++) {
    if (!b.used[k]) continue;
    let n = 0, st = 0, sy = 0, stt = 0, sty = 0;
    for (let t = lo; t < hi; t++) {
      const y = b.db[t * b.bands + k]!;
      if (y <= -FLOOR_DB + 10) continue;
      n++; st += t; sy += y; stt += t * t; sty += t * y;
    }
    if (n < 30) continue;
    const sxx = stt - (st * st) / n;
    if (sxx <= 0) continue;
    slopes.push((sty - (st * sy) / n) / sxx);
  }
  const m = slopes.length;
  if (m < 4) return { bands: m, correlation: 0, relativeSpread: 0 };
  // Ranks of the slopes (ties share their mean rank) against ranks 0 … m − 1 of the bands.
  const order = slopes.map((v, i) => [v, i] as const).sort((x, y) => x[0] - y[0]);
  const rank = new Float64Array(m);
  for (let i = 0; i < m; ) {
    let j = i;
    while (j + 1 < m && order[j + 1]![0] === order[i]![0]) j++;
    for (let q = i; q <= j; q++) rank[order[q]![1]] = (i + j) / 2;
    i = j + 1;
  }
  const mean = (m - 1) / 2;
  let sxy = 0, sxx = 0, syy = 0;
  for (let i = 0; i < m; i++) {
    sxy += (i - mean) * (rank[i]! - mean);
    sxx += (i - mean) ** 2;
    syy += (rank[i]! - mean) ** 2;
  }
  // How far apart the rates of the top and bottom thirds of the bands lie, relative to the rate
  // of the whole: small when a fade carries the ramp (it adds the same rate to every band).
  const third = Math.max(1, Math.floor(m / 3));
  const meanOf = (xs: number[]) => xs.reduce((p, v) => p + v, 0) / xs.length;
  const overall = meanOf(slopes);
  const relativeSpread = overall !== 0 ? (meanOf(slopes.slice(m - third)) - meanOf(slopes.slice(0, third))) / Math.abs(overall) : 0;
  return { bands: m, correlation: syy > 0 ? sxy / Math.sqrt(sxx * syy) : 0, relativeSpread };
}

/** The attack at an edge (attackAtEdge): frames left out of the ramp's fit beside the edge, and the fewest frames a band's fit needs. */
const ATTACK_GAP_FRAMES = 6;
const ATTACK_MIN_FIT_FRAMES = 20;

/**
 * Does the hard edge at block `at` carry a struck or plucked sound's attack, read against the
 * ramp beside it (blocks `first` … `last`: the swell before a stop, or the decay after a start)?
 * A hammer, a stick or a pick excites the upper partials most at the first instant, and that
 * excess dies away within a fraction of a second (the prompt sound of a struck string, before the
 * slower aftersound; losses grow with frequency — from memory: Fletcher & Rossing, The Physics of
 * Musical Instruments, §2 and §12), so the upper bands decay in two stages: their level in dB is
 * convex in time (a sum of exponentials with different rates always is: log-sum-exp of straight
 * lines is convex, an exact identity), and at the attack they stand well above the line of the
 * decay that follows, the lower bands barely. Each
 * used band's level is fitted with a straight line in dB over the ramp's frames (leaving out the
 * 60 ms beside the edge), and the level of the frame at the edge (as in edgeStagger: for a stop the
 * last frame wholly before it, for a start the first wholly after it) is compared with that line
 * carried to it. Returned: the mean excess (dB) of the top third of the bands and of the bottom
 * third, and their difference `tilt`. A gain — an editor's fade of any curve — adds the same dB to
 * every band, in the frame and in the fit alike, so it cancels from `tilt`; and the usual fade
 * curves are straight or concave in dB, so over a fade-in the last frame lies on or below the
 * line, never above it. Time reversal maps a stop onto a start frame for frame.
 */
export function attackAtEdge(b: BandDb, at: number, up: boolean, first: number, last: number): { bands: number; high: number; low: number; tilt: number } {
  const ref = up ? at + 5 : at;
  // The ramp's band frames (wholly inside it: frame k spans about blocks k − 3 … k), less the gap.
  const lo = up ? Math.max(first + 3, at + 7 + ATTACK_GAP_FRAMES) : first + 3;
  const hi = up ? last : Math.min(last, at - 2 - ATTACK_GAP_FRAMES);
  const none = { bands: 0, high: 0, low: 0, tilt: 0 };
  if (ref < 0 || ref >= b.frames || hi - lo + 1 < ATTACK_MIN_FIT_FRAMES) return none;
  const excess: number[] = [];
  for (let k = 0; k < b.bands; k++) {
    if (!b.used[k]) continue;
    let n = 0, st = 0, sy = 0, stt = 0, sty = 0;
    for (let t = Math.max(0, lo); t <= Math.min(b.frames - 1, hi); t++) {
      const y = b.db[t * b.bands + k]!;
      if (y <= -FLOOR_DB + 10) continue;
      n++; st += t; sy += y; stt += t * t; sty += t * y;
    }
    if (n < ATTACK_MIN_FIT_FRAMES) continue;
    const sxx = stt - (st * st) / n;
    if (sxx <= 0) continue;
    const slope = (sty - (st * sy) / n) / sxx;
    excess.push(b.db[ref * b.bands + k]! - (sy / n + slope * (ref - st / n)));
  }
  const m = excess.length;
  if (m < 4) return { ...none, bands: m };
  const third = Math.max(1, Math.floor(m / 3));
  const meanOf = (xs: number[]) => xs.reduce((p, v) => p + v, 0) / xs.length;
  const high = meanOf(excess.slice(m - third)), low = meanOf(excess.slice(0, third));
  return { bands: m, high, low, tilt: high - low };
}
