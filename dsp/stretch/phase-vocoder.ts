/**
 * Streaming time-stretch by phase vocoder: duration × ratio, pitch kept.
 *
 * Method
 *  - Analysis/synthesis: periodic Hann window of N samples (≈ 85 ms; 4096 at 44.1/48 kHz),
 *    synthesis hop H_s = N/4; analysis centres follow the time map (dsp/stretch/time-map.ts), on
 *    average α = σ/ratio. Weighted overlap-add with the same window: Σw² = 1.5 at hop N/4
 *    (J. O. Smith, Spectral Audio Signal Processing, "Overlap-add STFT processing"), so an
 *    unmodified STFT is rebuilt exactly (ratio 1 returns the input to rounding error).
 *  - Phase: identity phase locking (Laroche & Dolson 1999, "Improved phase vocoder time-scale
 *    modification of audio", IEEE Trans. Speech Audio Process. 7(3):323–332, §IV). Peaks are bins
 *    larger than their two neighbours on each side in the channels' summed power; each peak's
 *    phase is advanced with its instantaneous frequency ω̂ and every bin of the peak's region
 *    (bounded by the lowest bin between two peaks) is turned by the same angle. Written as a
 *    rotation θ = φ_out − φ_in the propagation reads θ_m = θ_{m−1} + (H_s − H_a)·ω̂, so bins other
 *    than peaks need no trigonometry.
 *  - ω̂: the peak's phase advance over the analysis hop H_a (cross-spectrum with the previous
 *    frame, summed over channels), unwrapped with a coarse estimate from Grandke's interpolation
 *    for the Hann window, δ = ±(2a − 1)/(a + 1), a = |X[k±1]|/|X[k]| (Grandke 1983,
 *    "Interpolation algorithms for discrete Fourier transforms of weighted signals", IEEE Trans.
 *    Instrum. Meas. 32(2):350–355).
 *  - Channels: one rotation per bin for all channels, found from summed power and cross-spectra, so
 *    inter-channel phase and level differences (the stereo image) pass unchanged. Two channels share
 *    one complex FFT (x₁ + j·x₂), split by conjugate symmetry.
 *  - Transients: onsets from a spectral-flux detector (dsp/stretch/onsets.ts) become zones of the
 *    time map taken at hop ratio 1. On entering a zone, bins whose power rises by more than 6 dB
 *    between the last frame and a frame centred on the onset take the analysis phase (θ = 0, a
 *    phase reset), and all rotations are held through the zone, so the attack is copied unsmeared
 *    (phase reset at transients: Röbel 2003, "A new approach to transient processing in the phase
 *    vocoder", DAFx-03, there with bins classified by time reassignment, here by energy rise).
 *  - Optional spectral-envelope correction for a later resampling by `formantFactor`
 *    (transpose --keep-formants): see dsp/stretch/envelope.ts.
 *
 * Streaming: fixed-size input and output rings; memory does not grow with the input's length.
 * Output length is round(ratio × input frames).
 */
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';
import { BugError, ParameterError } from '../errors.ts';
import { ONSET_LOOKAHEAD_FRAMES, SpectralFluxOnsets } from './onsets.ts';
import { TimeMap } from './time-map.ts';
import { SpectralEnvelope } from './envelope.ts';

import { MAX_RATIO, MIN_RATIO } from './limits.ts';
export { MAX_RATIO, MIN_RATIO };

export interface TimeStretchOptions {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  /** Output duration ÷ input duration, 0.25…4. */
  readonly ratio: number;
  /** FFT size (power of two ≥ 256). Default: about 85 ms (4096 at 44.1/48 kHz). */
  readonly fftSize?: number;
  /** Keep onsets sharp (default true). */
  readonly transients?: boolean;
  /**
   * If set, the spectral envelope is pre-warped so that after a resampling that multiplies every
   * frequency by this factor the envelope (formants) is back where it was.
   */
  readonly formantFactor?: number;
  /** Diagnostics: called for every synthesis frame with the modified spectra (do not keep them). */
  readonly onFrame?: (frame: StretchFrame) => void;
  /** Diagnostics: called with each onset (input sample) that is kept sharp. */
  readonly onOnset?: (inputSample: number) => void;
}

export interface StretchFrame {
  /** Synthesis window centre, output samples. */
  readonly outputCenter: number;
  /** Analysis window centre, input samples. */
  readonly inputCenter: number;
  /** Per channel: the modified half spectrum (N/2+1 bins, interleaved re/im), Hann analysis scale. */
  readonly spectra: readonly Float64Array[];
  readonly fftSize: number;
}

/** Default FFT size: the power of two nearest to 85 ms. */
export function defaultStretchFftSize(sampleRateHz: number): number {
  return Math.max(256, 2 ** Math.round(Math.log2(0.085 * sampleRateHz)));
}

const TWO_PI = 2 * Math.PI;
const wrap = (x: number): number => x - TWO_PI * Math.round(x / TWO_PI);
/** Largest piece of a pushed block copied into the ring at once. */
const CHUNK = 8192;
/** Smallest step between time-map anchors, samples (a shorter step would be a jump). */
const MIN_ANCHOR_GAP = 16;
/** Peaks this far below the frame's largest (power ratio, −50 dB) advance by table. */
const WEAK_PEAK = 1e-5;
/** Resolution of the tabled frequency offset: 1/64 bin. */
const FRACTION_STEPS = 64;

export class TimeStretcher {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly ratio: number;
  readonly fftSize: number;
  readonly synthesisHop: number;

  readonly #n: number;
  readonly #hs: number;
  readonly #bins: number;
  readonly #pairs: number;
  readonly #plan: FftPlan;
  readonly #window: Float64Array;
  readonly #olaWindow: Float64Array; // window / (Σw² · N): synthesis window, OLA and 1/N scaling

  // Input ring.
  readonly #inMask: number;
  readonly #inRings: Float64Array[];
  #written = 0;
  #ended = false;

  // Output ring (overlap-add) and staging for what is handed out.
  readonly #outMask: number;
  readonly #outRings: Float64Array[];
  #emitted = 0;
  #outputFrames = Infinity;
  #stage: Float64Array[];
  #staged = 0;

  // Spectra and phase state.
  readonly #z: Float64Array; // packed complex frame, 2N
  readonly #zt: Float64Array; // its transform, 2N
  #xw: Float64Array[]; // per channel Hann spectrum, N/2+1 bins interleaved
  #xwPrev: Float64Array[];
  readonly #y: Float64Array[]; // per channel modified spectrum
  #power: Float64Array;
  #powerPrev: Float64Array;
  readonly #omega: Float64Array; // last ω̂ of each peak bin (used when the analysis hop is 0)
  readonly #rotRe: Float64Array; // e^{jθ} per bin, θ = φ_out − φ_in (held through a transient zone)
  readonly #rotIm: Float64Array;
  // e^{jΔω_k} for the current Δ = H_s − H_a, and e^{jΔ·2π(q/64)/N} for q = −64…64 (weak peaks).
  readonly #stepRe: Float64Array;
  readonly #stepIm: Float64Array;
  readonly #fracRe: Float64Array;
  readonly #fracIm: Float64Array;
  #stepDelta = NaN;
  readonly #gain: Float64Array | null; // formant gains
  readonly #peaks: Int32Array;
  #prevValid = false;
  #prevAlpha = 0;

  // Time map and transients.
  readonly #map: TimeMap;
  readonly #onsets: SpectralFluxOnsets | null;
  readonly #decimation: number;
  readonly #monoMask: number;
  readonly #mono: Float64Array; // decimated channel mix for the detector
  #monoWritten = 0;
  readonly #candidates: number[] = [];
  readonly #commitDistance: number;
  readonly #gridSpacing: number;
  #gridNext: number;
  #zone = -1;
  #frame = 0; // next synthesis frame; σ = (frame − 1)·H_s

  readonly #envelope: SpectralEnvelope | null;
  readonly #onFrame: ((frame: StretchFrame) => void) | undefined;

  constructor(options: TimeStretchOptions) {
    const { sampleRateHz, channelCount, ratio } = options;
    if (!(sampleRateHz > 0) || !Number.isFinite(sampleRateHz)) throw new ParameterError(`sampleRateHz=${sampleRateHz} must be > 0`);
    if (!Number.isInteger(channelCount) || channelCount < 1) throw new ParameterError(`channelCount=${channelCount} must be a whole number ≥ 1`);
    if (!(ratio >= MIN_RATIO && ratio <= MAX_RATIO)) {
      throw new ParameterError(`ratio ${ratio} is outside ${MIN_RATIO} … ${MAX_RATIO}`);
    }
    this.sampleRateHz = sampleRateHz;
    this.channelCount = channelCount;
    this.ratio = ratio;
    const n = options.fftSize ?? defaultStretchFftSize(sampleRateHz);
    this.#plan = new FftPlan(n); // rejects sizes that are not powers of two
    if (n < 256) throw new ParameterError(`fftSize=${n} must be ≥ 256`);
    this.fftSize = this.#n = n;
    this.synthesisHop = this.#hs = n / 4;
    const bins = (this.#bins = n / 2 + 1);
    this.#pairs = Math.ceil(channelCount / 2);
    const hann = makeWindow('hann', n);
    this.#window = hann;
    this.#olaWindow = hann.map((w) => w / (1.5 * n));

    const hs = this.#hs;
    const zoneHalf = n / 2 + n / 16; // frames containing the onset, plus 1/16 N for its uncertainty
    const slow = Math.max(1, 1 / ratio);
    this.#commitDistance = Math.ceil((zoneHalf + hs) * slow) + 2;
    this.#gridSpacing = Math.max(4 * n, 2 * this.#commitDistance);
    this.#gridNext = this.#gridSpacing;
    this.#map = new TimeMap(ratio, zoneHalf, MIN_ANCHOR_GAP);
    this.#map.onAccept = options.onOnset;

    // Detector on the channel mix, decimated to 24 kHz or below (onsets need no more bandwidth).
    this.#decimation = Math.max(1, Math.round(sampleRateHz / 24000));
    this.#onsets = options.transients === false ? null : new SpectralFluxOnsets({ sampleRateHz: sampleRateHz / this.#decimation });
    const detectorSpan = this.#onsets ? 4 * this.#onsets.frameSize * this.#decimation : 0;
    const monoCap = this.#onsets ? 2 ** Math.ceil(Math.log2(4 * this.#onsets.frameSize + CHUNK)) : 1;
    this.#monoMask = monoCap - 1;
    this.#mono = new Float64Array(monoCap);

    const inCap = 2 ** Math.ceil(Math.log2(n + 2 + this.#gridSpacing + 2 * this.#commitDistance + 2 * zoneHalf + detectorSpan + CHUNK));
    this.#inMask = inCap - 1;
    this.#inRings = Array.from({ length: channelCount }, () => new Float64Array(inCap));
    const outCap = 2 ** Math.ceil(Math.log2(2 * n));
    this.#outMask = outCap - 1;
    this.#outRings = Array.from({ length: channelCount }, () => new Float64Array(outCap));
    this.#stage = Array.from({ length: channelCount }, () => new Float64Array(CHUNK));

    this.#z = new Float64Array(2 * n);
    this.#zt = new Float64Array(2 * n);
    const perChannel = () => Array.from({ length: channelCount }, () => new Float64Array(n + 2));
    this.#xw = perChannel();
    this.#xwPrev = perChannel();
    this.#y = perChannel();
    this.#power = new Float64Array(bins);
    this.#powerPrev = new Float64Array(bins);
    this.#stepRe = new Float64Array(bins);
    this.#stepIm = new Float64Array(bins);
    this.#fracRe = new Float64Array(2 * FRACTION_STEPS + 1);
    this.#fracIm = new Float64Array(2 * FRACTION_STEPS + 1);
    this.#omega = new Float64Array(bins);
    this.#rotRe = new Float64Array(bins).fill(1);
    this.#rotIm = new Float64Array(bins);
    this.#peaks = new Int32Array(bins);

    const f = options.formantFactor;
    if (f !== undefined && f !== 1) {
      if (!(f > 0)) throw new ParameterError(`formantFactor=${f} must be > 0`);
      this.#envelope = new SpectralEnvelope({ fftSize: n, sampleRateHz, frequencyFactor: f });
      this.#gain = new Float64Array(bins);
    } else {
      this.#envelope = null;
      this.#gain = null;
    }
    this.#onFrame = options.onFrame;
  }

  /** Output frames this input produces (known after `flush`). */
  get outputFrames(): number {
    return this.#outputFrames;
  }

  /** Onsets kept sharp so far. */
  get onsetCount(): number {
    return this.#map.acceptedOnsetCount;
  }

  /** Feeds planar input; returns the output that became final (possibly zero-length). */
  push(block: readonly Float64Array[]): Float64Array[] {
    if (this.#ended) throw new BugError('push after flush');
    if (block.length !== this.channelCount) throw new ParameterError(`expected ${this.channelCount} channels, got ${block.length}`);
    const len = block[0]?.length ?? 0;
    const mask = this.#inMask;
    let at = 0;
    while (at < len) {
      const room = mask + 1 - (this.#written - this.#keepFrom());
      if (room <= 0) throw new BugError('time-stretch input ring overflow');
      const take = Math.min(room, len - at, CHUNK);
      for (let c = 0; c < this.channelCount; c++) {
        const src = block[c]!, ring = this.#inRings[c]!, from = this.#written;
        for (let i = 0; i < take; i++) ring[(from + i) & mask] = src[at + i]!;
      }
      this.#written += take;
      at += take;
      this.#advance();
    }
    return this.#takeStaged();
  }

  /** Ends the input and returns the rest of the output. */
  flush(): Float64Array[] {
    if (!this.#ended) {
      this.#ended = true;
      this.#outputFrames = Math.round(this.ratio * this.#written);
      this.#advance();
    }
    return this.#takeStaged();
  }

  // ---------------------------------------------------------------------------------------------

  /** Oldest input sample still needed. */
  #keepFrom(): number {
    let keep = this.#frame > 0 ? this.#prevAlpha - this.#n / 2 : 0;
    const det = this.#onsets;
    if (det) {
      const region = this.#refineRegionStart(det.frameCount - ONSET_LOOKAHEAD_FRAMES - 1);
      keep = Math.min(keep, region);
    }
    return Math.max(0, Math.min(keep, this.#written));
  }

  #sample(c: number, i: number): number {
    if (i < 0 || i >= this.#written) return 0;
    return this.#inRings[c]![i & this.#inMask]!;
  }

  #advance(): void {
    this.#runDetector();
    this.#commitAnchors();
    this.#processFrames();
  }

  /** Input sample where the refinement search for detector frame j begins (one hop before it). */
  #refineRegionStart(j: number): number {
    const det = this.#onsets!;
    return (j - 1) * det.hopSize * this.#decimation;
  }

  /** Input position up to which every onset is known. */
  #known(): number {
    if (this.#ended) return Infinity;
    const det = this.#onsets;
    if (!det) return this.#written;
    return this.#refineRegionStart(det.frameCount - ONSET_LOOKAHEAD_FRAMES);
  }

  #runDetector(): void {
    const det = this.#onsets;
    if (!det) return;
    // Extend the decimated mix (boxcar average of D samples of the channel sum).
    const d = this.#decimation, channels = this.channelCount, inMask = this.#inMask, monoMask = this.#monoMask;
    const scale = 1 / (d * channels);
    const limit = Math.floor(this.#written / d) + (this.#ended && this.#written % d ? 1 : 0);
    const rings = this.#inRings, mono = this.#mono, written = this.#written;
    for (let c = 0; c < channels; c++) {
      const r = rings[c]!;
      for (let m = this.#monoWritten; m < limit; m++) {
        const start = m * d, stop = start + d <= written ? start + d : written;
        let v = 0;
        for (let i = start; i < stop; i++) v += r[i & inMask]!;
        mono[m & monoMask] = c === 0 ? v * scale : mono[m & monoMask]! + v * scale;
      }
    }
    this.#monoWritten = Math.max(this.#monoWritten, limit);
    const size = det.frameSize, hop = det.hopSize;
    const buf = det.frameBuffer;
    for (;;) {
      const start = det.frameCount * hop;
      if (this.#ended) {
        // Zero-padded frames until the peak picker has decided on every frame that has input.
        if (start >= this.#monoWritten + (ONSET_LOOKAHEAD_FRAMES + 1) * hop) break;
      } else if (start + size > this.#monoWritten) break;
      const have = this.#monoWritten;
      for (let i = 0; i < size; i++) {
        const t = start + i;
        buf[i] = t < have ? mono[t & monoMask]! : 0;
      }
      det.analyze(buf);
      const j = det.decide();
      if (j >= 0) {
        const from = this.#refineRegionStart(j);
        const t0 = this.#refineOnset(from, (j * hop + size) * d);
        const last = this.#candidates.length > 0 ? this.#candidates[this.#candidates.length - 1]! : -Infinity;
        if (t0 > last) this.#candidates.push(t0);
      }
    }
  }

  /**
   * The onset inside [from, to): on a 0.5 ms grid, the boundary with the largest ratio of the
   * channel sum's first-difference energy (which favours the broadband attack over sustained low
   * notes) in the 2 ms after it to the 4 ms before it; then, from 1 ms before that boundary to the
   * end of the 2 ms, the first sample whose first difference reaches half the largest there (the
   * attack's first strong sample; exact for a click).
   */
  #refineOnset(from: number, to: number): number {
    const fs = this.sampleRateHz;
    const b = Math.max(1, Math.round(0.0005 * fs));
    const before = 8, after = 4; // blocks: 4 ms and 2 ms
    const a = Math.max(1, from), end = Math.min(to, this.#written);
    const blocks = Math.floor((end - a) / b);
    if (blocks < 2) return a;
    const diff = (t: number) => {
      let v = 0;
      for (let c = 0; c < this.channelCount; c++) v += this.#sample(c, t) - this.#sample(c, t - 1);
      return v;
    };
    const e = new Float64Array(blocks);
    let total = 0;
    for (let i = 0; i < blocks; i++) {
      let s = 0;
      for (let t = a + i * b; t < a + (i + 1) * b; t++) s += diff(t) ** 2;
      e[i] = s;
      total += s;
    }
    const eps = 1e-9 * total + 1e-300;
    let best = 0, bestRatio = -Infinity;
    for (let i = 1; i < blocks; i++) {
      let pre = 0, post = 0;
      for (let k = Math.max(0, i - before); k < i; k++) pre += e[k]!;
      for (let k = i; k < Math.min(blocks, i + after); k++) post += e[k]!;
      const r = (post / after + eps) / (pre / Math.min(i, before) + eps);
      if (r > bestRatio) {
        bestRatio = r;
        best = i;
      }
    }
    const lo = Math.max(a, a + (best - 2) * b), hi = Math.min(end, a + (best + after) * b);
    let peak = 0;
    for (let t = lo; t < hi; t++) peak = Math.max(peak, Math.abs(diff(t)));
    for (let t = lo; t < hi; t++) if (Math.abs(diff(t)) >= 0.5 * peak) return t;
    return a + best * b;
  }

  #commitAnchors(): void {
    const known = this.#known();
    const c = this.#commitDistance;
    const map = this.#map;
    const end = this.#written;
    for (;;) {
      const onset = this.#candidates.length > 0 ? this.#candidates[0]! : Infinity;
      const grid = this.#gridNext;
      const t = Math.min(onset, grid);
      if (this.#ended ? t >= end : t + c > known) break;
      if (onset <= grid) {
        this.#candidates.shift();
        // Near the end an onset needs room for its zone before the last anchor.
        if (this.#ended && t + c > end) continue;
        map.tryOnset(onset);
      } else {
        this.#gridNext += this.#gridSpacing;
        if (onset - grid < c) continue; // leave the room to the onset's zone
        map.tryAnchor(grid);
      }
    }
    if (this.#ended) map.end(end);
  }

  #processFrames(): void {
    const map = this.#map;
    const n = this.#n, hs = this.#hs;
    for (;;) {
      const sigma = (this.#frame - 1) * hs;
      if (this.#ended) {
        if (sigma - n / 2 >= this.#outputFrames) break;
      } else if (!map.covers(sigma)) break;
      map.locate(sigma);
      const alpha = map.alpha;
      if (!this.#ended && alpha + n / 2 > this.#written) break; // wait for input
      this.#frameAt(sigma, alpha, map.zoneOnset);
      this.#frame++;
      this.#emitUpTo(sigma + hs - n / 2);
      map.forgetBefore(sigma - n);
    }
    if (this.#ended) this.#emitUpTo(this.#outputFrames);
  }

  /** One synthesis frame centred at output σ from the analysis frame centred at input α. */
  #frameAt(sigma: number, alpha: number, zoneOnset: number): void {
    if (zoneOnset >= 0) {
      if (zoneOnset !== this.#zone) this.#enterZone(zoneOnset);
    } else {
      this.#zone = -1;
    }
    this.#analyze(alpha);
    if (zoneOnset >= 0) this.#rotateHeld();
    else if (!this.#prevValid) this.#resetRotation();
    else if (!this.#lockPhases(alpha - this.#prevAlpha)) this.#rotateHeld();
    if (this.#gain) this.#applyEnvelope();
    if (this.#onFrame) this.#onFrame({ outputCenter: sigma, inputCenter: alpha, spectra: this.#y, fftSize: this.#n });
    this.#synthesize(sigma);
    // This frame becomes the previous one.
    const t = this.#xwPrev;
    this.#xwPrev = this.#xw;
    this.#xw = t;
    const p = this.#powerPrev;
    this.#powerPrev = this.#power;
    this.#power = p;
    this.#prevValid = true;
    this.#prevAlpha = alpha;
  }

  /**
   * Entering a transient zone: bins whose power rises by more than 6 dB from the last frame to a
   * frame centred on the onset take the analysis phase (θ = 0); the rotation is then held.
   */
  #enterZone(t0: number): void {
    this.#zone = t0;
    const bins = this.#bins;
    const rr = this.#rotRe, ri = this.#rotIm;
    if (this.#prevValid) {
      // #powerPrev is the last frame's power; the onset frame is analysed into the current buffers,
      // which the zone's first frame overwrites next.
      this.#analyze(t0);
      const pc = this.#power, pp = this.#powerPrev;
      for (let k = 0; k < bins; k++) {
        if (pc[k]! > 4 * pp[k]! + 1e-30) {
          rr[k] = 1;
          ri[k] = 0;
        }
      }
      rr[0] = rr[bins - 1] = 1;
      ri[0] = ri[bins - 1] = 0;
    } else {
      rr.fill(1);
      ri.fill(0);
    }
  }

  /** Hann spectra of the frame centred at input sample α for every channel, and their summed power. */
  #analyze(alpha: number): void {
    const n = this.#n, half = n / 2, wrapN = n - 1;
    const start = alpha - half;
    const z = this.#z, zt = this.#zt, w = this.#window;
    const mask = this.#inMask;
    const contiguous = start >= 0 && start + n <= this.#written && (start & mask) + n <= mask + 1;
    const power = this.#power;
    for (let p = 0; p < this.#pairs; p++) {
      const c0 = 2 * p, c1 = 2 * p + 1;
      const hasSecond = c1 < this.channelCount;
      const r0 = this.#inRings[c0]!, r1 = hasSecond ? this.#inRings[c1]! : null;
      if (contiguous) {
        const base = start & mask;
        if (r1) {
          for (let i = 0; i < n; i++) {
            const g = w[i]!;
            z[2 * i] = r0[base + i]! * g;
            z[2 * i + 1] = r1[base + i]! * g;
          }
        } else {
          for (let i = 0; i < n; i++) {
            z[2 * i] = r0[base + i]! * w[i]!;
            z[2 * i + 1] = 0;
          }
        }
      } else {
        for (let i = 0; i < n; i++) {
          z[2 * i] = this.#sample(c0, start + i) * w[i]!;
          z[2 * i + 1] = hasSecond ? this.#sample(c1, start + i) * w[i]! : 0;
        }
      }
      this.#plan.forward(z, zt);
      // Unpack: X₀[k] = (Z[k] + Z*[N−k])/2, X₁[k] = (Z[k] − Z*[N−k])/(2j).
      const x0 = this.#xw[c0]!;
      if (hasSecond) {
        const x1 = this.#xw[c1]!;
        for (let k = 0; k <= half; k++) {
          const m = (n - k) & wrapN;
          const ar = zt[2 * k]!, ai = zt[2 * k + 1]!, br = zt[2 * m]!, bi = -zt[2 * m + 1]!;
          const pr = 0.5 * (ar + br), pi = 0.5 * (ai + bi);
          const qr = 0.5 * (ai - bi), qi = -0.5 * (ar - br);
          x0[2 * k] = pr;
          x0[2 * k + 1] = pi;
          x1[2 * k] = qr;
          x1[2 * k + 1] = qi;
          const pk = pr * pr + pi * pi + qr * qr + qi * qi;
          power[k] = p === 0 ? pk : power[k]! + pk;
        }
      } else {
        for (let k = 0; k <= half; k++) {
          const re = zt[2 * k]!, im = zt[2 * k + 1]!;
          x0[2 * k] = re;
          x0[2 * k + 1] = im;
          const pk = re * re + im * im;
          power[k] = p === 0 ? pk : power[k]! + pk;
        }
      }
    }
  }

  /**
   * Identity phase locking around the peaks of the summed power: advances each peak's rotation,
   * gives its region the same rotation and writes Y = X·e^{jθ}. Returns false when there is no peak.
   * Peaks within 50 dB of the frame's largest get the exact hop-phase frequency; weaker ones (the
   * noise floor) advance by table: Grandke's offset rounded to 1/64 bin, no trigonometry.
   */
  #lockPhases(hopIn: number): boolean {
    const bins = this.#bins, last = bins - 1;
    const pw = this.#power, peaks = this.#peaks;
    let count = 0, top = 0;
    for (let k = 2; k < last - 1; k++) {
      const v = pw[k]!;
      if (v > pw[k - 1]! && v > pw[k + 1]! && v >= pw[k - 2]! && v >= pw[k + 2]! && v > 0) {
        peaks[count++] = k;
        if (v > top) top = v;
      }
    }
    if (count === 0) return false;
    const hs = this.#hs, n = this.#n;
    const omega = this.#omega, rr = this.#rotRe, ri = this.#rotIm;
    const channels = this.channelCount;
    const xw = this.#xw, xp = this.#xwPrev, y = this.#y;
    const binRad = TWO_PI / n;
    const advance = hs - hopIn;
    if (advance !== this.#stepDelta) this.#buildSteps(advance);
    const stepRe = this.#stepRe, stepIm = this.#stepIm, fracRe = this.#fracRe, fracIm = this.#fracIm;
    const weak = top * WEAK_PEAK;
    let regionStart = 0;
    for (let p = 0; p < count; p++) {
      const kp = peaks[p]!;
      // Coarse frequency offset (bins): Grandke's Hann interpolation on the larger neighbour.
      const up = pw[kp + 1]! >= pw[kp - 1]!;
      const a = Math.sqrt((up ? pw[kp + 1]! : pw[kp - 1]!) / pw[kp]!);
      const delta = (up ? 1 : -1) * ((2 * a - 1) / (a + 1));
      let cr: number, ci: number;
      if (pw[kp]! >= weak) {
        let w: number;
        if (hopIn > 0) {
          const coarse = (kp + delta) * binRad;
          // Fine: the phase advance over the hop (cross-spectrum with the previous frame).
          let hr = 0, hi = 0;
          for (let c = 0; c < channels; c++) {
            const cur = xw[c]!, prev = xp[c]!;
            const ar = cur[2 * kp]!, ai = cur[2 * kp + 1]!, br = prev[2 * kp]!, bi = prev[2 * kp + 1]!;
            hr += ar * br + ai * bi;
            hi += ai * br - ar * bi;
          }
          if (hr === 0 && hi === 0) w = coarse;
          else {
            const dphi = Math.atan2(hi, hr);
            w = (dphi + TWO_PI * Math.round((hopIn * coarse - dphi) / TWO_PI)) / hopIn;
          }
        } else {
          w = omega[kp]!; // the same analysis frame again: keep the last estimate
        }
        omega[kp] = w;
        const phi = wrap(advance * w);
        cr = Math.cos(phi);
        ci = Math.sin(phi);
      } else {
        // e^{jΔ(ω_k + 2π·q/(64N))} from the two tables.
        let q = Math.round(delta * FRACTION_STEPS);
        q = q > FRACTION_STEPS ? FRACTION_STEPS : q < -FRACTION_STEPS ? -FRACTION_STEPS : q;
        const fr = fracRe[q + FRACTION_STEPS]!, fi = fracIm[q + FRACTION_STEPS]!;
        const sr = stepRe[kp]!, si = stepIm[kp]!;
        cr = sr * fr - si * fi;
        ci = sr * fi + si * fr;
        omega[kp] = (kp + q / FRACTION_STEPS) * binRad;
      }
      // New rotation of the peak, renormalised to unit length (first-order correction).
      let nr = rr[kp]! * cr - ri[kp]! * ci, ni = rr[kp]! * ci + ri[kp]! * cr;
      const g = 1.5 - 0.5 * (nr * nr + ni * ni);
      nr *= g;
      ni *= g;
      // The region reaches the lowest bin between this peak and the next.
      let regionEnd = last;
      if (p + 1 < count) {
        const next = peaks[p + 1]!;
        regionEnd = kp;
        for (let k = kp + 1; k < next; k++) if (pw[k]! < pw[regionEnd]!) regionEnd = k;
      }
      for (let k = regionStart; k <= regionEnd; k++) {
        rr[k] = nr;
        ri[k] = ni;
      }
      for (let c = 0; c < channels; c++) {
        const x = xw[c]!, out = y[c]!;
        for (let k = regionStart; k <= regionEnd; k++) {
          const re = x[2 * k]!, im = x[2 * k + 1]!;
          out[2 * k] = re * nr - im * ni;
          out[2 * k + 1] = re * ni + im * nr;
        }
      }
      regionStart = regionEnd + 1;
    }
    // DC and Nyquist stay real (the two-channels-per-FFT packing needs real spectra there).
    rr[0] = rr[last] = 1;
    ri[0] = ri[last] = 0;
    for (let c = 0; c < channels; c++) {
      const x = xw[c]!, out = y[c]!;
      out[0] = x[0]!;
      out[1] = 0;
      out[2 * last] = x[2 * last]!;
      out[2 * last + 1] = 0;
    }
    return true;
  }

  /** Tables e^{jΔω_k} (by recurrence) and e^{jΔ·2π(q/64)/N} for the advance Δ = H_s − H_a. */
  #buildSteps(advance: number): void {
    this.#stepDelta = advance;
    const n = this.#n, bins = this.#bins;
    const a = (TWO_PI * advance) / n;
    const ur = Math.cos(a), ui = Math.sin(a);
    const sr = this.#stepRe, si = this.#stepIm;
    let r = 1, i = 0;
    for (let k = 0; k < bins; k++) {
      if ((k & 255) === 0) {
        // Restart from exact values now and then so rounding cannot accumulate.
        r = Math.cos(a * k);
        i = Math.sin(a * k);
      }
      sr[k] = r;
      si[k] = i;
      const t = r * ur - i * ui;
      i = r * ui + i * ur;
      r = t;
    }
    for (let q = -FRACTION_STEPS; q <= FRACTION_STEPS; q++) {
      this.#fracRe[q + FRACTION_STEPS] = Math.cos((a * q) / FRACTION_STEPS);
      this.#fracIm[q + FRACTION_STEPS] = Math.sin((a * q) / FRACTION_STEPS);
    }
  }

  /** First frame: the output takes the analysis phases (rotation 1). */
  #resetRotation(): void {
    this.#rotRe.fill(1);
    this.#rotIm.fill(0);
    this.#rotateHeld();
  }

  /** Y = X·(held rotation). */
  #rotateHeld(): void {
    const bins = this.#bins, rr = this.#rotRe, ri = this.#rotIm;
    for (let c = 0; c < this.channelCount; c++) {
      const x = this.#xw[c]!, out = this.#y[c]!;
      for (let k = 0; k < bins; k++) {
        const re = x[2 * k]!, im = x[2 * k + 1]!, cr = rr[k]!, ci = ri[k]!;
        out[2 * k] = re * cr - im * ci;
        out[2 * k + 1] = re * ci + im * cr;
      }
    }
  }

  /** Multiplies Y by the formant-keeping gains E(k·f)/E(k). */
  #applyEnvelope(): void {
    const g = this.#gain!;
    this.#envelope!.gains(this.#power, g);
    const bins = this.#bins;
    for (let c = 0; c < this.channelCount; c++) {
      const out = this.#y[c]!;
      for (let k = 0; k < bins; k++) {
        out[2 * k]! *= g[k]!;
        out[2 * k + 1]! *= g[k]!;
      }
    }
  }

  /** Inverse FFT of the modified spectra, synthesis window, overlap-add at σ − N/2. */
  #synthesize(sigma: number): void {
    const n = this.#n, half = n / 2;
    const z = this.#z, zt = this.#zt;
    const w = this.#olaWindow;
    const start = sigma - half;
    const mask = this.#outMask;
    const first = Math.max(0, this.#emitted - start);
    for (let p = 0; p < this.#pairs; p++) {
      const c0 = 2 * p, c1 = 2 * p + 1;
      const hasSecond = c1 < this.channelCount;
      const y0 = this.#y[c0]!;
      // Z = Y₀ + jY₁ over the whole circle (Z[N−k] = Y₀*[k] + jY₁*[k]), conjugated so that a
      // forward FFT gives the inverse: IDFT(Z) = conj(DFT(conj Z))/N (1/N is in the window).
      if (hasSecond) {
        const y1 = this.#y[c1]!;
        z[0] = y0[0]!;
        z[1] = -y1[0]!;
        z[n] = y0[n]!;
        z[n + 1] = -y1[n]!;
        for (let k = 1; k < half; k++) {
          const ar = y0[2 * k]!, ai = y0[2 * k + 1]!, br = y1[2 * k]!, bi = y1[2 * k + 1]!;
          z[2 * k] = ar - bi;
          z[2 * k + 1] = -(ai + br);
          const m = 2 * (n - k);
          z[m] = ar + bi;
          z[m + 1] = ai - br;
        }
      } else {
        z[0] = y0[0]!;
        z[1] = 0;
        z[n] = y0[n]!;
        z[n + 1] = 0;
        for (let k = 1; k < half; k++) {
          const ar = y0[2 * k]!, ai = y0[2 * k + 1]!;
          z[2 * k] = ar;
          z[2 * k + 1] = -ai;
          const m = 2 * (n - k);
          z[m] = ar;
          z[m + 1] = ai;
        }
      }
      this.#plan.forward(z, zt);
      const o0 = this.#outRings[c0]!;
      const o1 = hasSecond ? this.#outRings[c1]! : null;
      let i = first;
      while (i < n) {
        const idx = (start + i) & mask;
        const len = Math.min(n - i, mask + 1 - idx);
        if (o1) {
          for (let j = 0; j < len; j++) {
            const g = w[i + j]!;
            o0[idx + j]! += zt[2 * (i + j)]! * g;
            o1[idx + j]! -= zt[2 * (i + j) + 1]! * g;
          }
        } else {
          for (let j = 0; j < len; j++) o0[idx + j]! += zt[2 * (i + j)]! * w[i + j]!;
        }
        i += len;
      }
    }
  }

  /** Moves final output samples [emitted, upTo) to the staging buffers. */
  #emitUpTo(upTo: number): void {
    const end = Math.min(upTo, this.#outputFrames);
    if (end <= this.#emitted) return;
    const count = end - this.#emitted;
    this.#ensureStage(this.#staged + count);
    const mask = this.#outMask;
    for (let c = 0; c < this.channelCount; c++) {
      const ring = this.#outRings[c]!, st = this.#stage[c]!;
      const base = this.#staged, from = this.#emitted;
      for (let i = 0; i < count; i++) {
        const idx = (from + i) & mask;
        st[base + i] = ring[idx]!;
        ring[idx] = 0;
      }
    }
    this.#staged += count;
    this.#emitted = end;
  }

  #ensureStage(size: number): void {
    if (size <= this.#stage[0]!.length) return;
    let cap = this.#stage[0]!.length;
    while (cap < size) cap *= 2;
    this.#stage = this.#stage.map((old) => {
      const a = new Float64Array(cap);
      a.set(old.subarray(0, this.#staged));
      return a;
    });
  }

  #takeStaged(): Float64Array[] {
    const out = this.#stage.map((s) => s.slice(0, this.#staged));
    this.#staged = 0;
    return out;
  }
}

/** Stretches whole planar arrays in memory (tests and short previews). */
export function stretchArrays(channels: readonly Float64Array[], options: Omit<TimeStretchOptions, 'channelCount'>): Float64Array[] {
  const ts = new TimeStretcher({ ...options, channelCount: channels.length });
  const parts = [ts.push(channels), ts.flush()];
  const total = parts.reduce((s, p) => s + p[0]!.length, 0);
  return channels.map((_, c) => {
    const out = new Float64Array(total);
    let at = 0;
    for (const p of parts) {
      out.set(p[c]!, at);
      at += p[c]!.length;
    }
    return out;
  });
}
