/**
 * Measures of a time-stretch or transposition against what it should give, for the tests and the
 * corrections section of `npm run eval`. Like test/eval/measures.ts they use fft.js (an
 * independent FFT library) and plain loops, not the project's own DSP.
 *
 * - Partials: the spectrum of a steady stretch of the output through a 4-term Blackman–Harris
 *   window (−92 dB side lobes; Harris 1978, "On the use of windows for harmonic analysis with the
 *   discrete Fourier transform", Proc. IEEE 66(1), table I), zero-padded 4×; each expected
 *   partial is the largest local maximum within half the distance to its nearest expected
 *   neighbour (at most ±100 cents), its frequency refined by a parabola through the log magnitudes
 *   of the three top bins (common practice), and reported as cents against where it belongs.
 * - Levels: a partial's amplitude is the parabola's vertex through the same three log-magnitude
 *   bins (common practice), divided by the window's sum (Σw, the coherent gain), so that windows
 *   of different lengths compare.
 * - Spurious lines: the largest local maximum outside ±6 bins of the unpadded window (the main
 *   lobe is ±4 bins) of every expected partial, in dB re the strongest partial.
 * - Onsets: the first sample at which the envelope (|x| through a 0.5 ms maximum) reaches half
 *   its peak near the expected time; pre-echo: the largest 2 ms RMS in the 50 ms before the onset
 *   (ending 1 ms before it) in dB re the largest 2 ms RMS of the hit in the 10 ms after it; the
 *   rise is that figure minus the input's at its own onset (what the stretch added).
 */
import FFT from 'fft.js';
import { powerSpectrum, thirdOctaveDb } from './measures.ts';

const plans = new Map<number, FFT>();
const planOf = (n: number) => {
  let p = plans.get(n);
  if (!p) plans.set(n, (p = new FFT(n)));
  return p;
};

/** 4-term Blackman–Harris window (Harris 1978, −92 dB). */
function blackmanHarris(n: number): Float64Array {
  const w = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const x = (2 * Math.PI * i) / n;
    w[i] = 0.35875 - 0.48829 * Math.cos(x) + 0.14128 * Math.cos(2 * x) - 0.01168 * Math.cos(3 * x);
  }
  return w;
}

export interface LineSpectrum {
  /** Power per bin of the padded transform. */
  power: Float64Array;
  /** Hz per padded bin. */
  binHz: number;
  /** Padding factor. */
  pad: number;
  /** Σw of the window (amplitude A·Σw/2 at a sinusoid's peak). */
  windowSum: number;
}

/** Blackman–Harris spectrum of x[from, from + length), zero-padded `pad`× to a power of two. */
export function lineSpectrum(x: Float64Array, rateHz: number, from: number, length: number, pad = 4): LineSpectrum {
  const size = 2 ** Math.ceil(Math.log2(length * pad));
  const fft = planOf(size);
  const w = blackmanHarris(length);
  const buf = new Array<number>(size).fill(0);
  for (let i = 0; i < length; i++) buf[i] = (x[from + i] ?? 0) * w[i]!;
  const out = fft.createComplexArray() as number[];
  fft.realTransform(out, buf);
  const power = new Float64Array(size / 2 + 1);
  for (let k = 0; k <= size / 2; k++) power[k] = out[2 * k]! ** 2 + out[2 * k + 1]! ** 2;
  let windowSum = 0;
  for (let i = 0; i < length; i++) windowSum += w[i]!;
  return { power, binHz: rateHz / size, pad: size / length, windowSum };
}

export interface PartialReading {
  expectedHz: number;
  /** Measured frequency, or NaN when no local maximum is found in the search range. */
  measuredHz: number;
  cents: number;
  /** Level re the strongest partial, dB. */
  levelDb: number;
  /** Amplitude of the sinusoid (peak), dB re 1 (NaN when not found). */
  amplitudeDb: number;
}

export interface LineReport {
  partials: PartialReading[];
  /** Largest line away from every expected partial, dB re the strongest partial. */
  spuriousDb: number;
  spuriousHz: number;
  /** Largest |cents| over the partials (Infinity when one is missing). */
  worstCents: number;
}

/** Reads the expected partials and the strongest other line of x[from, from + length). */
export function readLines(x: Float64Array, rateHz: number, expectedHz: readonly number[], from: number, length: number, maxHz = 0.45 * rateHz): LineReport {
  const s = lineSpectrum(x, rateHz, from, length);
  const p = s.power;
  const db = (v: number) => 10 * Math.log10(v + 1e-300);
  const sorted = [...expectedHz].sort((a, b) => a - b);
  const found: { hz: number; power: number; bin: number; ampDb: number }[] = [];
  for (const f of expectedHz) {
    const i = sorted.indexOf(f);
    const gapLo = i > 0 ? f - sorted[i - 1]! : Infinity, gapHi = i + 1 < sorted.length ? sorted[i + 1]! - f : Infinity;
    const lo = Math.max(f * 2 ** (-100 / 1200), f - gapLo / 2), hi = Math.min(f * 2 ** (100 / 1200), f + gapHi / 2);
    let best = -1;
    for (let k = Math.max(1, Math.ceil(lo / s.binHz)); k <= Math.min(p.length - 2, Math.floor(hi / s.binHz)); k++) {
      if (p[k]! >= p[k - 1]! && p[k]! >= p[k + 1]! && (best < 0 || p[k]! > p[best]!)) best = k;
    }
    if (best < 0) {
      found.push({ hz: NaN, power: 0, bin: -1, ampDb: NaN });
      continue;
    }
    const a = db(p[best - 1]!), b = db(p[best]!), c = db(p[best + 1]!);
    const den = a - 2 * b + c;
    const d = den < 0 ? (0.5 * (a - c)) / den : 0;
    // Vertex of the parabola (dB of |X|²); the amplitude is 2|X|/Σw.
    const peakDb = b - 0.25 * (a - c) * d;
    found.push({ hz: (best + d) * s.binHz, power: p[best]!, bin: best, ampDb: peakDb + 20 * Math.log10(2 / s.windowSum) });
  }
  const top = Math.max(...found.map((q) => q.power));
  const partials = expectedHz.map((f, i) => {
    const q = found[i]!;
    return { expectedHz: f, measuredHz: q.hz, cents: 1200 * Math.log2(q.hz / f), levelDb: db(q.power) - db(top), amplitudeDb: q.ampDb };
  });
  // Spurious: local maxima outside ±6 unpadded bins of every expected partial (and of the
  // partial actually found, in case it moved).
  const guard = Math.round(6 * s.pad);
  const near = new Uint8Array(p.length);
  for (const f of [...expectedHz, ...found.map((q) => q.hz).filter(Number.isFinite)]) {
    const c = Math.round(f / s.binHz);
    for (let k = Math.max(0, c - guard); k <= Math.min(p.length - 1, c + guard); k++) near[k] = 1;
  }
  for (let k = 0; k <= guard; k++) near[k] = 1; // DC
  let spur = 0, spurBin = 0;
  const last = Math.min(p.length - 2, Math.floor(maxHz / s.binHz));
  for (let k = 1; k <= last; k++) {
    if (near[k] || !(p[k]! >= p[k - 1]! && p[k]! >= p[k + 1]!)) continue;
    if (p[k]! > spur) {
      spur = p[k]!;
      spurBin = k;
    }
  }
  const worstCents = partials.reduce((m, q) => Math.max(m, Number.isFinite(q.cents) ? Math.abs(q.cents) : Infinity), 0);
  return { partials, spuriousDb: db(spur) - db(top), spuriousHz: spurBin * s.binHz, worstCents };
}

/** Envelope |x| through a running maximum of `span` samples (centred). */
function envelope(x: Float64Array, span: number): Float64Array {
  const e = new Float64Array(x.length);
  const h = Math.floor(span / 2);
  for (let i = 0; i < x.length; i++) {
    let m = 0;
    for (let j = Math.max(0, i - h); j <= Math.min(x.length - 1, i + h); j++) m = Math.max(m, Math.abs(x[j]!));
    e[i] = m;
  }
  return e;
}

export interface OnsetReading {
  expected: number;
  /** Measured onset, samples (NaN when no hit is found within the search range). */
  measured: number;
  errorMs: number;
  /** Largest 2 ms RMS before the onset re the hit's, dB. */
  preEchoDb: number;
  /** The same before the input's onset subtracted: the rise the stretch added, dB. */
  preEchoRiseDb: number;
  /** Largest 2 ms RMS of the hit re the same of the input's hit, dB (attack kept when ≈ 0). */
  attackDb: number;
}

function rms(x: Float64Array, from: number, len: number): number {
  let s = 0;
  for (let i = Math.max(0, from); i < Math.min(x.length, from + len); i++) s += x[i]! ** 2;
  return Math.sqrt(s / len);
}

/** First half-peak crossing of the envelope in [from, to). */
function halfPeakOnset(e: Float64Array, from: number, to: number): number {
  let peak = 0;
  for (let i = Math.max(0, from); i < Math.min(e.length, to); i++) peak = Math.max(peak, e[i]!);
  if (!(peak > 0)) return NaN;
  for (let i = Math.max(0, from); i < Math.min(e.length, to); i++) if (e[i]! >= 0.5 * peak) return i;
  return NaN;
}

/** Largest 2 ms RMS in [from, to). */
function maxRms(x: Float64Array, from: number, to: number, win: number): number {
  let m = 0;
  for (let s = from; s + win <= to; s += Math.max(1, win >> 2)) m = Math.max(m, rms(x, s, win));
  return m;
}

/**
 * Onsets of isolated hits: `inputOnsets` are the hits' onsets in the input (samples), each followed
 * by at least 60 ms without another; the output's are expected at round(ratio·t0).
 */
export function readOnsets(input: Float64Array, output: Float64Array, rateHz: number, inputOnsets: readonly number[], ratio: number): OnsetReading[] {
  const ms = rateHz / 1000;
  const ein = envelope(input, Math.round(0.5 * ms)), eout = envelope(output, Math.round(0.5 * ms));
  const win = Math.round(2 * ms);
  return inputOnsets.map((t0) => {
    const tin = halfPeakOnset(ein, t0 - Math.round(5 * ms), t0 + Math.round(10 * ms));
    const exp = Math.round(ratio * t0);
    const tout = halfPeakOnset(eout, exp - Math.round(30 * ms), exp + Math.round(10 * ms));
    const shift = Math.round(ratio * tin) - exp; // where the input's own crossing lands
    const hitIn = maxRms(input, tin, tin + Math.round(10 * ms), win);
    const preIn = maxRms(input, tin - Math.round(50 * ms), tin - Math.round(1 * ms), win);
    const at = Number.isFinite(tout) ? tout : exp;
    const hitOut = maxRms(output, at, at + Math.round(10 * ms), win);
    const preOut = maxRms(output, at - Math.round(50 * ms), at - Math.round(1 * ms), win);
    const rel = (a: number, b: number) => 20 * Math.log10((a + 1e-12) / (b + 1e-12));
    return {
      expected: exp + shift,
      measured: tout,
      errorMs: (tout - (exp + shift)) / ms,
      preEchoDb: rel(preOut, hitOut),
      preEchoRiseDb: rel(preOut, hitOut) - rel(preIn, hitIn),
      attackDb: rel(hitOut, hitIn),
    };
  });
}

// ------------------------------------------------------------------------------------------------
// Real material: the clip itself is the reference (its lines, its hits, its envelope).

export interface PartialsReport {
  /** Largest |cents| of the input's partials, found in the output at f·k. */
  worstCents: number;
  /** Largest |level change| of those partials, dB (output amplitude against the input's). */
  worstLevelDb: number;
  /** Partials compared. */
  partials: number;
  /** Strongest line in the output with none ≥ 10 dB louder (relative) in the input at f/k, dB re the strongest. */
  newLineDb: number;
  newLineHz: number;
}

/** Local maxima over ±`half` bins, as [bin, power]. */
function peaksOf(p: Float64Array, half: number, from: number, to: number): [number, number][] {
  const out: [number, number][] = [];
  for (let k = Math.max(half, from); k <= Math.min(p.length - 1 - half, to); k++) {
    const v = p[k]!;
    let ok = v > 0;
    for (let j = 1; ok && j <= half; j++) ok = v >= p[k - j]! && v > p[k + j]!;
    if (ok) out.push([k, v]);
  }
  return out;
}

/**
 * Partials of a steady stretch x[from, from + length) against y[yFrom, yFrom + length), every
 * frequency × `factor` (1 for a stretch, 2^(s/12) for a transposition): the input's local maxima
 * (over its main lobe, ±4 bins) within 50 dB of its strongest, 20 Hz … `maxHz`, at most `count`.
 * Levels: the output's window spans length/`ratio` of the input (a stretch by `ratio` slows every
 * partial's amplitude envelope by it: decays and beats), so each partial's amplitude in the output
 * is compared with the input's through a window of length/ratio about the same centre.
 */
export function comparePartials(x: Float64Array, y: Float64Array, rateHz: number, from: number, yFrom: number, length: number, factor: number, maxHz = 5000, count = 12, ratio = 1): PartialsReport {
  const a = lineSpectrum(x, rateHz, from, length), b = lineSpectrum(y, rateHz, yFrom, length);
  const lobe = Math.round(4 * a.pad);
  const db = (v: number) => 10 * Math.log10(v + 1e-300);
  const inPeaks = peaksOf(a.power, lobe, Math.ceil(20 / a.binHz), Math.floor(maxHz / a.binHz));
  const topIn = Math.max(...inPeaks.map(([, v]) => v), 1e-300);
  const chosen = inPeaks.filter(([, v]) => db(v) >= db(topIn) - 50).sort((p, q) => q[1] - p[1]).slice(0, count).map(([k]) => k * a.binHz);
  const expected = chosen.map((f) => f * factor);
  const lines = chosen.length ? readLines(y, rateHz, expected, yFrom, length) : null;
  const inLength = Math.round(length / ratio);
  const levelsIn = chosen.length ? readLines(x, rateHz, chosen, Math.round(from + length / 2 - inLength / 2), inLength) : null;
  let worstLevelDb = chosen.length ? 0 : NaN;
  if (lines && levelsIn) {
    for (let i = 0; i < chosen.length; i++) {
      const d = Math.abs(lines.partials[i]!.amplitudeDb - levelsIn.partials[i]!.amplitudeDb);
      worstLevelDb = Math.max(worstLevelDb, Number.isFinite(d) ? d : Infinity);
    }
  }
  // New lines: output maxima (over the main lobe) whose relative level beats the input's at f/k by 10 dB.
  const outPeaks = peaksOf(b.power, lobe, Math.ceil((20 * factor) / b.binHz), Math.floor((maxHz * factor) / b.binHz));
  const topOut = Math.max(...outPeaks.map(([, v]) => v), 1e-300);
  let newDb = -Infinity, newHz = NaN;
  for (const [k, v] of outPeaks) {
    const rel = db(v) - db(topOut);
    if (rel < -100 || rel <= newDb) continue;
    const kin = Math.round((k * b.binHz) / factor / a.binHz);
    let m = 0;
    for (let j = Math.max(0, kin - 2 * lobe); j <= Math.min(a.power.length - 1, kin + 2 * lobe); j++) m = Math.max(m, a.power[j]!);
    if (rel - (db(m) - db(topIn)) > 10) {
      newDb = rel;
      newHz = k * b.binHz;
    }
  }
  return { worstCents: lines ? lines.worstCents : NaN, worstLevelDb, partials: chosen.length, newLineDb: newDb, newLineHz: newHz };
}

/**
 * Hits of a drum clip: 1 ms blocks; a hit where the 2 ms RMS after a block boundary is ≥ 20 dB
 * above the largest 2 ms RMS of the 30 ms before and within 30 dB of the clip's loudest, at least
 * 60 ms after the last; its onset is the first sample within 10 ms reaching half the local peak.
 * (An independent, plain detector: common practice for isolated attacks.)
 */
export function findHits(x: Float64Array, rateHz: number): number[] {
  const b = Math.max(1, Math.round(0.001 * rateHz));
  const blocks = Math.floor(x.length / b);
  const e = new Float64Array(blocks);
  for (let i = 0; i < blocks; i++) {
    let s = 0;
    for (let t = i * b; t < (i + 1) * b; t++) s += x[t]! ** 2;
    e[i] = s / b;
  }
  const r2 = (i: number) => Math.sqrt(((e[i] ?? 0) + (e[i + 1] ?? 0)) / 2);
  let loud = 0;
  for (let i = 0; i < blocks; i++) loud = Math.max(loud, r2(i));
  const hits: number[] = [];
  let last = -Infinity;
  for (let i = 30; i < blocks - 12; i++) {
    let before = 0;
    for (let j = i - 30; j < i - 1; j++) before = Math.max(before, r2(j));
    const now = r2(i);
    if (now < loud * 10 ** (-30 / 20) || now < 10 * before || i * b - last < 0.06 * rateHz) continue;
    let peak = 0;
    for (let t = i * b - b; t < i * b + 10 * b; t++) peak = Math.max(peak, Math.abs(x[t]!));
    let t0 = i * b - b;
    while (Math.abs(x[t0]!) < 0.5 * peak) t0++;
    hits.push(t0);
    last = t0;
  }
  return hits;
}

/**
 * Voiced pitch of a recording, Hz: the `quantile` of the per-frame pitch over voiced frames.
 * Autocorrelation pitch (Rabiner 1977, "On the use of autocorrelation analysis for pitch
 * detection", IEEE Trans. ASSP 25(1)): the signal averaged over blocks of ⌊fs/8 kHz⌋ samples,
 * 40 ms frames every 10 ms, a frame voiced when its RMS is within 30 dB of the loudest frame's and
 * its normalised autocorrelation reaches 0.7 at a lag of 1/450 … 1/60 s; the period is the
 * shortest lag with a local maximum within 10 % of the largest. NaN when no frame is voiced.
 */
export function voicedPitchHz(x: Float64Array, rateHz: number, quantile = 0.9): number {
  const d = Math.max(1, Math.floor(rateHz / 8000));
  const rate = rateHz / d;
  const u = new Float64Array(Math.floor(x.length / d));
  for (let i = 0; i < u.length; i++) {
    let s = 0;
    for (let j = 0; j < d; j++) s += x[i * d + j]!;
    u[i] = s / d;
  }
  const w = Math.round(0.04 * rate), hop = Math.round(0.01 * rate);
  const lagLo = Math.floor(rate / 450), lagHi = Math.ceil(rate / 60);
  const energy: number[] = [];
  for (let s = 0; s + w + lagHi <= u.length; s += hop) {
    let e = 0;
    for (let i = 0; i < w; i++) e += u[s + i]! ** 2;
    energy.push(e);
  }
  const loud = Math.max(0, ...energy);
  const pitches: number[] = [];
  const r = new Float64Array(lagHi + 1);
  for (let f = 0; f < energy.length; f++) {
    const e0 = energy[f]!, s = f * hop;
    if (!(e0 > 0) || e0 < loud * 1e-3) continue;
    let best = 0;
    for (let l = lagLo; l <= lagHi; l++) {
      let c = 0, e1 = 0;
      for (let i = 0; i < w; i++) {
        c += u[s + i]! * u[s + i + l]!;
        e1 += u[s + i + l]! ** 2;
      }
      r[l] = c / Math.sqrt(e0 * e1 + 1e-300);
      if (r[l]! > best) best = r[l]!;
    }
    if (best < 0.7) continue;
    // The shortest lag with a maximum within 10 % of the largest: a periodic signal correlates as
    // well at two periods as at one, and better when two periods land nearer a whole sample.
    for (let l = lagLo + 1; l < lagHi; l++) {
      if (r[l]! >= 0.9 * best && r[l]! >= r[l - 1]! && r[l]! >= r[l + 1]!) {
        pitches.push(rate / l);
        break;
      }
    }
  }
  if (!pitches.length) return NaN;
  pitches.sort((a, b) => a - b);
  return pitches[Math.floor(quantile * (pitches.length - 1))]!;
}

/**
 * `p` (a half spectrum, bins of `binHz`) smoothed along frequency by a Hann kernel `widthHz` wide
 * (full width; cut at 0 Hz and at the top, each output bin divided by the kernel weight it kept).
 * A harmonic comb with spacing Δ ≤ widthHz/2 sums through it to the same value wherever the comb
 * lies (exactly when widthHz is a whole multiple ≥ 2 of Δ, within ±6 % between: Poisson
 * summation; the Hann transform is sinc(νW)/(1 − (νW)²), zero at νW = 2, 3, …, at most 0.027
 * beyond 2).
 */
export function hannSmoothed(p: Float64Array, binHz: number, widthHz: number): Float64Array {
  const half = widthHz / 2 / binHz;
  if (!(half > 1)) return p.slice();
  const reach = Math.floor(half);
  const k = Float64Array.from({ length: 2 * reach + 1 }, (_, i) => 0.5 + 0.5 * Math.cos((Math.PI * (i - reach)) / half));
  const out = new Float64Array(p.length);
  for (let b = 0; b < p.length; b++) {
    let s = 0, sw = 0;
    for (let j = Math.max(0, b - reach); j <= Math.min(p.length - 1, b + reach); j++) {
      const wt = k[j - b + reach]!;
      s += wt * p[j]!;
      sw += wt;
    }
    out[b] = s / sw;
  }
  return out;
}

/** Third-octave long-term spectrum (dB), bands 315 Hz … 3.15 kHz (IEC 61260 base-2 centres), Welch with 8192-point Hann frames. */
const ltas = (x: Float64Array, rateHz: number) => thirdOctaveDb(powerSpectrum(x, 8192), rateHz, 300, 3500);

/**
 * The band the original occupies, Hz: 100 Hz blocks of its long-term spectrum (Welch, 8192-point
 * Hann) within 40 dB of the loudest block, from the lowest such block's lower edge to the highest
 * one's upper edge (a telephone recording stored at 16 or 44.1 kHz ends near 3.9 kHz).
 */
export function occupiedBandHz(x: Float64Array, rateHz: number): [number, number] {
  const p = powerSpectrum(x, 8192);
  const binHz = rateHz / 8192, per = Math.max(1, Math.round(100 / binHz));
  const blocks: number[] = [];
  for (let k = 1; k + per <= p.length; k += per) {
    let e = 0;
    for (let j = k; j < k + per; j++) e += p[j]!;
    blocks.push(e / per);
  }
  const top = Math.max(...blocks);
  let lo = 0, hi = blocks.length - 1;
  while (lo < hi && blocks[lo]! < top * 1e-4) lo++;
  while (hi > lo && blocks[hi]! < top * 1e-4) hi--;
  return [(1 + lo * per) * binHz, (1 + (hi + 1) * per) * binHz];
}

/** Bands judged for a transposition by `factor`: the source [lo/factor, hi/factor] within the band `x` occupies. */
function judgedBands(x: Float64Array, rateHz: number, factor: number, centresHz: readonly number[]): boolean[] {
  const [occLo, occHi] = occupiedBandHz(x, rateHz);
  return centresHz.map((c) => (c * 2 ** (-1 / 6)) / factor >= occLo && (c * 2 ** (1 / 6)) / factor <= occHi);
}

/**
 * The measure used before 2026-12-04, kept for comparison: third-octave long-term spectra of input
 * and output from 315 Hz to 3.15 kHz (bands 300 Hz–3.5 kHz), their difference over the judged
 * bands with its mean removed; the largest |deviation|, dB. It reads where the harmonics fall, not
 * the envelope, wherever a band is narrower than f0 (see `envelopeDeviationDb`).
 */
export function longTermEnvelopeDeviationDb(x: Float64Array, y: Float64Array, rateHz: number, factor = 1): number {
  const a0 = ltas(x, rateHz), b0 = ltas(y, rateHz);
  const judged = judgedBands(x, rateHz, factor, a0.map((b) => b.centreHz));
  const a = a0.filter((_, i) => judged[i]), b = b0.filter((_, i) => judged[i]);
  const d = a.map((band, i) => b[i]!.db - band.db);
  const mean = d.reduce((s, v) => s + v, 0) / d.length;
  return Math.max(...d.map((v) => Math.abs(v - mean)));
}

/**
 * Spectral envelope deviation of a transposed voice, dB, frame by frame (a transposition keeps
 * the time line, so the output's frame t holds the input's frame t):
 *
 * - Hann frames of the power of two nearest 0.1 s, every half frame; a frame counts when the
 *   input's energy in it is within 20 dB of its loudest frame's.
 * - Each frame's power spectrum, input and output alike, is smoothed along frequency over
 *   2·f0·max(1, factor) (`hannSmoothed`; f0 the input's 90th-percentile voiced pitch,
 *   `voicedPitchHz`), then summed into third-octave bands 315 Hz … 3.15 kHz (IEC 61260 base-2
 *   centres; 300 Hz–3.5 kHz). A voice's envelope is only sampled at its harmonics, every f0; a band
 *   narrower than that reads whether a harmonic falls in it, and the transposition moves every
 *   harmonic by design: unsmoothed long-term bands read 6–10 dB on a perfect transposition of a
 *   synthetic voice around 200 Hz. After the smoothing a band's level does not depend on where
 *   the harmonics lie.
 * - Per frame, output dB − input dB over the judged bands (`judgedBands`: a band whose source
 *   lies outside the band the original occupies has nothing to be made from, e.g. the top band of
 *   a telephone recording transposed down), with the frame's mean removed (a level change is no
 *   envelope change).
 * - Per band, the median over the frames of |deviation|: how far the envelope typically is; the
 *   result is the largest over the bands. (A long-term spectrum instead averages a moved envelope
 *   over the vowels: a formant shift of 4 semitones read 1.5–2.3 dB on telephone prompts.)
 */
export function envelopeDeviationDb(x: Float64Array, y: Float64Array, rateHz: number, factor = 1): number {
  const size = 2 ** Math.round(Math.log2(0.1 * rateHz));
  const f0 = voicedPitchHz(x, rateHz);
  const smoothHz = Number.isFinite(f0) ? 2 * f0 * Math.max(1, factor) : 0;
  const fft = planOf(size);
  const w = Float64Array.from({ length: size }, (_, i) => 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / size));
  const buf = new Array<number>(size).fill(0);
  const spec = fft.createComplexArray() as number[];
  const p = new Float64Array(size / 2 + 1);
  const bandsOf = (u: Float64Array, at: number) => {
    for (let i = 0; i < size; i++) buf[i] = (u[at + i] ?? 0) * w[i]!;
    fft.realTransform(spec, buf);
    for (let k = 0; k <= size / 2; k++) p[k] = spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2 + 1e-30;
    return thirdOctaveDb(smoothHz > 0 ? hannSmoothed(p, rateHz / size, smoothHz) : p, rateHz, 300, 3500);
  };
  const starts: number[] = [], energy: number[] = [];
  for (let s = 0; s + size <= x.length; s += size / 2) {
    let e = 0;
    for (let i = 0; i < size; i++) e += x[s + i]! ** 2;
    starts.push(s);
    energy.push(e);
  }
  const loud = Math.max(0, ...energy);
  let judged: boolean[] | null = null;
  let perBand: number[][] = [];
  for (let f = 0; f < starts.length; f++) {
    if (!(energy[f]! > 0) || energy[f]! < loud * 0.01) continue;
    const a = bandsOf(x, starts[f]!), b = bandsOf(y, starts[f]!);
    if (!judged) {
      judged = judgedBands(x, rateHz, factor, a.map((q) => q.centreHz));
      perBand = a.map(() => []);
    }
    const d = a.map((q, i) => b[i]!.db - q.db);
    let mean = 0, n = 0;
    for (let i = 0; i < d.length; i++) if (judged[i]) { mean += d[i]!; n++; }
    mean /= n;
    for (let i = 0; i < d.length; i++) if (judged[i]) perBand[i]!.push(Math.abs(d[i]! - mean));
  }
  let worst = NaN;
  for (const v of perBand) {
    if (!v.length) continue;
    v.sort((q, r) => q - r);
    const m = v.length % 2 ? v[(v.length - 1) / 2]! : 0.5 * (v[v.length / 2 - 1]! + v[v.length / 2]!);
    worst = Number.isNaN(worst) ? m : Math.max(worst, m);
  }
  return worst;
}
