/**
 * Speed from a reference tone (a line-up tone at the head or tail of a reel: 1 kHz, 3150 Hz,
 * 10 kHz …). Played at factor a, a tone recorded at f sits at a·f.
 *
 * Method:
 *  1. Find (pass 1, streaming): in the first and last 60 s, consecutive Hann-windowed frames of
 *     ≈0.17 s; a frame is "tonal" when the strongest peak (±3 bins) holds ≥ 50 % of the frame's
 *     power between 20 Hz and 0.45·fs. A run of ≥ 1 s of tonal frames at one frequency is a tone.
 *  2. Measure (a ranged read of the run, trimmed at both ends): heterodyne at the coarse frequency,
 *     lowpass and decimate to ≈500 Hz (boxcar-power FIR), remove the mean phase rate found by the
 *     lag-one autocorrelation (Kay, "A fast and accurate single frequency estimator", IEEE TASSP
 *     37(12), 1989), unwrap the now slowly-varying phase and fit a straight line by least squares:
 *     its slope is the frequency offset. At high SNR this reaches the Cramér–Rao bound for a
 *     single tone (Rife & Boorstyn 1974). Standard error from the fit residuals; 1-s windows give
 *     the speed curve over the tone.
 *  Nominal frequency: --tone HZ, or (automatic) the standard line-up tone that makes the most
 *  plausible factor, with the alternatives reported.
 */
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';
import { HeterodyneTrack } from './heterodyne.ts';
import { speedPrior } from './standard.ts';

const REGION_SECONDS = 60;
const MIN_RUN_SECONDS = 1;
const TONALITY = 0.5;

/** Common line-up and test tones, with how often they are the head tone (relative). */
export const STANDARD_TONES: readonly { hz: number; weight: number }[] = [
  { hz: 1000, weight: 1 },
  { hz: 400, weight: 0.4 },
  { hz: 440, weight: 0.3 },
  { hz: 700, weight: 0.2 },
  { hz: 3150, weight: 0.4 },
  { hz: 3000, weight: 0.2 },
  { hz: 10000, weight: 0.3 },
  { hz: 100, weight: 0.1 },
  { hz: 15000, weight: 0.1 },
];

interface ToneFrame {
  startFrame: number;
  frequencyHz: number;
  tonality: number;
  levelDb: number;
}

export interface ToneRun {
  startFrame: number;
  endFrame: number;
  coarseHz: number;
  levelDb: number;
  tonality: number;
  /** Largest minus smallest frame level over the run (dB): a line-up tone holds its level. */
  levelSpreadDb: number;
}

export interface ToneMeasurement {
  frequencyHz: number;
  uncertaintyHz: number;
  startSeconds: number;
  endSeconds: number;
  levelDb: number;
  tonality: number;
  levelSpreadDb: number;
  timesSeconds: number[];
  frequenciesHz: number[];
}

/** Pass 1: frame-wise tonality in the head and tail regions. */
export class ToneScanner {
  readonly fftSize: number;
  readonly #fs: number;
  readonly #headEnd: number;
  readonly #tailStart: number;
  readonly #total: number;
  readonly #plan: FftPlan;
  readonly #window: Float64Array;
  readonly #buf: Float64Array;
  readonly #spec: Float64Array;
  readonly #bandLo: number;
  readonly #bandHi: number;
  #bufStart = -1;
  #filled = 0;
  readonly frames: ToneFrame[] = [];

  /** `searchHz`: restrict the peak to [lo, hi] (from --tone and the factor range). */
  constructor(sampleRateHz: number, totalFrames: number, searchHz?: [number, number]) {
    this.#fs = sampleRateHz;
    this.#total = totalFrames;
    let n = 1024;
    while (n < sampleRateHz / 6) n *= 2;
    this.fftSize = n;
    const region = Math.round(REGION_SECONDS * sampleRateHz);
    this.#headEnd = Math.min(totalFrames, region);
    this.#tailStart = Math.max(this.#headEnd, totalFrames - region);
    this.#plan = new FftPlan(n);
    this.#window = makeWindow('hann', n);
    this.#buf = new Float64Array(n);
    this.#spec = this.#plan.createHalfSpectrum();
    const lo = Math.max(20, searchHz?.[0] ?? 20);
    const hi = Math.min(0.45 * sampleRateHz, searchHz?.[1] ?? 0.45 * sampleRateHz);
    this.#bandLo = Math.max(3, Math.floor((lo * n) / sampleRateHz));
    this.#bandHi = Math.min(n / 2 - 4, Math.ceil((hi * n) / sampleRateHz));
  }

  /** Frame start positions: consecutive frames from 0 in the head, aligned to the tail start after. */
  #frameStartAtOrAfter(pos: number): number {
    const n = this.fftSize;
    if (pos < this.#headEnd) {
      const s = Math.ceil(pos / n) * n;
      if (s + n <= this.#headEnd) return s;
      pos = this.#headEnd;
    }
    const t = Math.max(pos, this.#tailStart);
    const s = this.#tailStart + Math.ceil((t - this.#tailStart) / n) * n;
    return s + n <= this.#total ? s : Infinity;
  }

  push(mono: Float64Array, offset: number): void {
    let i = 0;
    while (i < mono.length) {
      const pos = offset + i;
      if (this.#bufStart < 0) {
        const s = this.#frameStartAtOrAfter(pos);
        if (s === Infinity) return;
        if (s >= offset + mono.length) return;
        this.#bufStart = s;
        this.#filled = 0;
        i = s - offset;
        continue;
      }
      const take = Math.min(this.fftSize - this.#filled, mono.length - i);
      this.#buf.set(mono.subarray(i, i + take), this.#filled);
      this.#filled += take;
      i += take;
      if (this.#filled === this.fftSize) {
        this.#analyse(this.#bufStart);
        this.#bufStart = -1;
      }
    }
  }

  #analyse(start: number): void {
    const n = this.fftSize, w = this.#window, b = this.#buf, s = this.#spec;
    for (let i = 0; i < n; i++) b[i]! *= w[i]!;
    this.#plan.realForward(b, s);
    const pw = (k: number) => s[2 * k]! * s[2 * k]! + s[2 * k + 1]! * s[2 * k + 1]!;
    const k20 = Math.max(2, Math.floor((20 * n) / this.#fs));
    const kTop = Math.floor((0.45 * this.#fs * n) / this.#fs);
    let total = 0;
    for (let k = k20; k <= kTop; k++) total += pw(k);
    let best = -1, at = -1;
    for (let k = this.#bandLo; k <= this.#bandHi; k++) {
      const p = pw(k);
      if (p > best) {
        best = p;
        at = k;
      }
    }
    if (at < 1 || total <= 0) return;
    let near = 0;
    for (let k = at - 3; k <= at + 3; k++) near += pw(k);
    const a = Math.log(pw(at - 1) + 1e-300), c0 = Math.log(best + 1e-300), c = Math.log(pw(at + 1) + 1e-300);
    const den = a - 2 * c0 + c;
    const d = den < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (a - c)) / den)) : 0;
    let sw = 0;
    for (const v of w) sw += v;
    const amp = (2 * Math.sqrt(near / 1.5)) / sw; // Hann: ENBW 1.5 bins
    this.frames.push({
      startFrame: start,
      frequencyHz: ((at + d) * this.#fs) / n,
      tonality: near / total,
      levelDb: 20 * Math.log10(Math.max(amp, 1e-12)),
    });
  }

  /** Steady tone runs, longest first. */
  runs(): ToneRun[] {
    const n = this.fftSize, binHz = this.#fs / n;
    const out: ToneRun[] = [];
    let run: ToneFrame[] = [];
    const close = () => {
      if (run.length >= 3) {
        // Trim one frame at each end (ramps, partial frames), keep the steady middle.
        const core = run.length > 4 ? run.slice(1, -1) : run;
        const seconds = (core.length * n) / this.#fs;
        if (seconds >= MIN_RUN_SECONDS) {
          const fs = core.map((f) => f.frequencyHz).sort((x, y) => x - y);
          out.push({
            startFrame: core[0]!.startFrame,
            endFrame: core[core.length - 1]!.startFrame + n,
            coarseHz: fs[fs.length >> 1]!,
            levelDb: core.reduce((s, f) => s + f.levelDb, 0) / core.length,
            tonality: core.reduce((s, f) => s + f.tonality, 0) / core.length,
            levelSpreadDb: Math.max(...core.map((f) => f.levelDb)) - Math.min(...core.map((f) => f.levelDb)),
          });
        }
      }
      run = [];
    };
    for (const f of this.frames) {
      const prev = run[run.length - 1];
      const ok = f.tonality >= TONALITY;
      const joins =
        ok && prev !== undefined && f.startFrame === prev.startFrame + n &&
        Math.abs(f.frequencyHz - run[0]!.frequencyHz) <= Math.max(2 * binHz, 0.003 * run[0]!.frequencyHz);
      if (!joins) close();
      if (ok) run.push(f);
    }
    close();
    return out.sort((x, y) => y.endFrame - y.startFrame - (x.endFrame - x.startFrame) || y.tonality - x.tonality);
  }
}

/** Pass 2 for one run: a narrowband track around the coarse frequency, fitted. */
export class ToneRefiner {
  readonly #track: HeterodyneTrack;
  readonly #fs: number;
  readonly #decim: number;
  readonly run: ToneRun;

  constructor(sampleRateHz: number, run: ToneRun) {
    this.#fs = sampleRateHz;
    this.run = run;
    this.#decim = Math.max(1, Math.round(sampleRateHz / 500));
    this.#track = new HeterodyneTrack(run.coarseHz / sampleRateHz, this.#decim, 3);
  }

  push(mono: Float64Array): void {
    this.#track.push(mono);
  }

  measure(): ToneMeasurement | null {
    const t = this.#track;
    const rate = this.#fs / this.#decim;
    const skip = Math.ceil((2 * t.delaySamples) / this.#decim) + 1;
    const n = t.length - skip;
    if (n < 16) return null;
    const re = t.re.subarray(skip, t.length), im = t.im.subarray(skip, t.length);
    // Mean phase rate from the lag-one product, then unwrap the residual phase.
    let ar = 0, ai = 0;
    for (let k = 1; k < n; k++) {
      ar += re[k]! * re[k - 1]! + im[k]! * im[k - 1]!;
      ai += im[k]! * re[k - 1]! - re[k]! * im[k - 1]!;
    }
    const w0 = Math.atan2(ai, ar); // rad per track sample
    const phase = new Float64Array(n);
    let prev = 0;
    for (let k = 0; k < n; k++) {
      const c = Math.cos(-w0 * k), s = Math.sin(-w0 * k);
      const zr = re[k]! * c - im[k]! * s, zi = re[k]! * s + im[k]! * c;
      let p = Math.atan2(zi, zr);
      if (k > 0) p += 2 * Math.PI * Math.round((prev - p) / (2 * Math.PI));
      phase[k] = p;
      prev = p;
    }
    const fit = lineFit(phase, 0, n);
    const dfHz = ((w0 + fit.slope) * rate) / (2 * Math.PI);
    const seHz = (fit.slopeStdErr * rate) / (2 * Math.PI);
    // 1-s windows for the curve.
    const win = Math.max(8, Math.round(rate));
    const times: number[] = [], freqs: number[] = [];
    const t0 = (this.run.startFrame + (skip * this.#decim - t.delaySamples)) / this.#fs;
    if (n >= 2 * win) {
      for (let s = 0; s + win <= n; s += win) {
        const f = lineFit(phase, s, s + win);
        times.push(t0 + (s + (win - 1) / 2) / rate);
        freqs.push(this.run.coarseHz + ((w0 + f.slope) * rate) / (2 * Math.PI));
      }
    } else {
      times.push(t0 + (n - 1) / 2 / rate);
      freqs.push(this.run.coarseHz + dfHz);
    }
    let amp = 0;
    for (let k = 0; k < n; k++) amp += Math.hypot(re[k]!, im[k]!);
    amp = (2 * amp) / n;
    return {
      frequencyHz: this.run.coarseHz + dfHz,
      uncertaintyHz: seHz,
      startSeconds: t0,
      endSeconds: t0 + n / rate,
      levelDb: 20 * Math.log10(Math.max(amp, 1e-12)),
      tonality: this.run.tonality,
      levelSpreadDb: this.run.levelSpreadDb,
      timesSeconds: times,
      frequenciesHz: freqs,
    };
  }
}

/** Least-squares line through y[i], i ∈ [from, to): slope per sample and its standard error. */
function lineFit(y: Float64Array, from: number, to: number): { slope: number; slopeStdErr: number } {
  const n = to - from;
  const xm = (n - 1) / 2;
  let ym = 0;
  for (let i = from; i < to; i++) ym += y[i]!;
  ym /= n;
  let sxy = 0, sxx = 0;
  for (let i = 0; i < n; i++) {
    const dx = i - xm;
    sxy += dx * (y[from + i]! - ym);
    sxx += dx * dx;
  }
  const slope = sxy / sxx;
  let rss = 0;
  for (let i = 0; i < n; i++) {
    const e = y[from + i]! - ym - slope * (i - xm);
    rss += e * e;
  }
  const slopeStdErr = n > 2 ? Math.sqrt(rss / (n - 2) / sxx) : Infinity;
  return { slope, slopeStdErr };
}

export interface ToneHypothesis {
  toneHz: number;
  factor: number;
  prior: number;
}

/** Nominal tones that explain an observed frequency, most plausible first. */
export function toneHypotheses(observedHz: number, nominalHz?: number): ToneHypothesis[] {
  if (nominalHz) return [{ toneHz: nominalHz, factor: observedHz / nominalHz, prior: 1 }];
  const out: ToneHypothesis[] = [];
  for (const t of STANDARD_TONES) {
    const factor = observedHz / t.hz;
    if (factor >= 0.25 && factor <= 4) out.push({ toneHz: t.hz, factor, prior: t.weight * speedPrior(factor) });
  }
  return out.sort((a, b) => b.prior - a.prior);
}
