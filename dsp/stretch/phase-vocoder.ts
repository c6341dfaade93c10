/**
 * Streaming time-stretch by phase vocoder: duration × ratio, pitch kept.
 *
 * Method
 *  - Analysis/synthesis: periodic Hann window of N samples (≈ 85 ms; 4096 at 44.1/48 kHz),
 *    synthesis hop H_s = N/4; analysis centres follow the time map (dsp/stretch/time-map.ts), on
 *    average α = σ/ratio. Weighted overlap-add with the same window: Σw² = 1.5 at hop N/4
 *    (J. O. Smith, Spectral Audio Signal Processing, "Overlap-add STFT processing"), so an
 *    unmodified STFT is rebuilt exactly (ratio 1 returns the input to rounding error).
 *  - Phase: identity phase locking (Laroche & Dolson 1999), one rotation θ = φ_out − φ_in per bin
 *    for all channels, so the stereo image passes unchanged: dsp/stretch/phase-lock.ts.
 *  - Transforms at the positions the time map gives, two channels per complex FFT:
 *    dsp/stretch/packed-stft.ts; input and overlap-add rings: dsp/stretch/rings.ts.
 *  - Transients: onsets from a spectral-flux detector (dsp/stretch/onsets.ts, run by
 *    dsp/stretch/transients.ts) become zones of the time map taken at hop ratio 1. On entering a zone, bins whose power rises by more than 6 dB
 *    between the last frame and a frame centred on the onset take the analysis phase (θ = 0, a
 *    phase reset), and all rotations are held through the zone, so the attack is copied unsmeared
 *    (phase reset at transients: Röbel 2003, "A new approach to transient processing in the phase
 *    vocoder", DAFx-03, there with bins classified by time reassignment, here by energy rise).
 *  - Stops: a frame whose window holds a sound that stops into (near) silence takes the analysis
 *    phase too, and the low band drops such frames, so the silence after it is not filled with the
 *    sound's smear (dsp/stretch/offsets.ts).
 *  - Optional spectral-envelope correction for a later resampling by `formantFactor`
 *    (transpose --keep-formants): see dsp/stretch/envelope.ts.
 *
 * Streaming: fixed-size input and output rings; memory does not grow with the input's length.
 * Output length is round(ratio × input frames).
 */
import { makeWindow } from '../core/windows.ts';
import { BugError, ParameterError } from '../errors.ts';
import { TimeMap } from './time-map.ts';
import { SpectralEnvelope } from './envelope.ts';
import { CHUNK, InputRing, OverlapAddRing } from './rings.ts';
import { PackedStft } from './packed-stft.ts';
import { PhaseLocker } from './phase-lock.ts';
import { TransientTracker } from './transients.ts';
import { BlockLevels } from './offsets.ts';
import { LowBand, lowBandEdges, lowBandWeight, LOW_BAND_F2_HZ } from './low-band.ts';

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
  /** Low band with a four times longer window (below 3.5–4 kHz, see `wideLowBand`; default true; off at ratio 1). */
  readonly lowBand?: boolean;
  /**
   * The long-window band reaches 3.5–4 kHz (close steady partials resolved there too), dropped
   * where partials move within its window (stationarity gate, see low-band.ts). Default true;
   * false keeps the band below 180–300 Hz (for comparison).
   */
  readonly wideLowBand?: boolean;
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

/** Smallest step between time-map anchors, samples (a shorter step would be a jump). */
const MIN_ANCHOR_GAP = 16;

export class TimeStretcher {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly ratio: number;
  readonly fftSize: number;
  readonly synthesisHop: number;

  readonly #n: number;
  readonly #hs: number;
  readonly #bins: number;
  readonly #input: InputRing;
  #ended = false;
  readonly #output: OverlapAddRing;
  #outputFrames = Infinity;
  readonly #stft: PackedStft;
  readonly #lock: PhaseLocker;

  // Spectra.
  #xw: Float64Array[]; // per channel Hann spectrum, N/2+1 bins interleaved
  #xwPrev: Float64Array[];
  readonly #y: Float64Array[]; // per channel modified spectrum
  #power: Float64Array;
  #powerPrev: Float64Array;
  readonly #gain: Float64Array | null; // formant gains
  #prevValid = false;
  #prevAlpha = 0;

  // Time map and transients.
  readonly #map: TimeMap;
  readonly #tracker: TransientTracker;
  readonly #levels: BlockLevels;
  #zone = -1;
  #frame = 0; // next synthesis frame; σ = (frame − 1)·H_s

  readonly #envelope: SpectralEnvelope | null;
  // Low band (longer window below the crossover) and the main band's weight 1 − m_L.
  readonly #low: LowBand | null;
  readonly #lowMask: Float64Array; // m_L at the main band's bins below the crossover
  readonly #lookahead: number; // the main band waits until the map covers this far beyond σ
  readonly #reach: number; // input read beyond α by a frame at α
  readonly #tail: number; // frames continue until σ − tail reaches the output's end
  readonly #alphaOf = (s: number): number => this.#map.alphaAt(s);
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
    const hann = makeWindow('hann', n);
    // Σw² = 1.5 at hop N/4; the synthesis window carries that and the inverse FFT's 1/N.
    this.#stft = new PackedStft(n, channelCount, hann, hann.map((w) => w / (1.5 * n))); // rejects sizes that are not powers of two
    if (n < 256) throw new ParameterError(`fftSize=${n} must be ≥ 256`);
    this.fftSize = this.#n = n;
    this.synthesisHop = this.#hs = n / 4;
    const bins = (this.#bins = n / 2 + 1);
    this.#lock = new PhaseLocker(n, this.#hs, channelCount, n / 2 + 1, 'hann');

    const hs = this.#hs;
    const zoneHalf = n / 2 + n / 16; // frames containing the onset, plus 1/16 N for its uncertainty
    const slow = Math.max(1, 1 / ratio);
    const commitDistance = Math.ceil((zoneHalf + hs) * slow) + 2;
    const gridSpacing = Math.max(4 * n, 2 * commitDistance);
    this.#map = new TimeMap(ratio, zoneHalf, MIN_ANCHOR_GAP);
    this.#tracker = new TransientTracker({ sampleRateHz, channelCount, commitDistance, gridSpacing, detect: options.transients !== false });

    const lowReach = ratio !== 1 ? Math.ceil(4 * (4 * n) * Math.max(1, 1 / ratio)) : 0; // the low band's look-ahead, input samples
    this.#input = new InputRing(channelCount, n + 2 + gridSpacing + 2 * commitDistance + 2 * zoneHalf + this.#tracker.span + CHUNK + lowReach);
    const levels = (this.#levels = new BlockLevels(this.#input, n / 32, 2 * this.#input.capacity));
    const wide = options.wideLowBand !== false;
    // The low band needs ratio ≠ 1 (ratio 1 is the identity) and a crossover below fs/2.
    const low = (this.#low =
      options.lowBand !== false && ratio !== 1 && sampleRateHz > (wide ? 4000 : 8 * LOW_BAND_F2_HZ)
        ? new LowBand({ sampleRateHz, channelCount, ratio, mainFftSize: n, inputSpan: this.#input.capacity, wide, stopInside: (start, length) => levels.stopInside(start, length) })
        : null);
    const onOnset = options.onOnset;
    this.#map.onAccept = low
      ? (t0: number) => {
          low.addOnset(t0, Math.round(ratio * t0) - t0);
          onOnset?.(t0);
        }
      : onOnset;
    this.#output = new OverlapAddRing(channelCount, low ? 2 * n + 4 * low.halfFull + 4 * low.hopFull : 2 * n);
    // The low band's stationarity gate and stop test read the input around the α of frames up to
    // half its window ahead of σ; the stop test reads whole level blocks (one beyond the window's end).
    this.#reach = low ? Math.max(n / 2, low.reachFull + Math.ceil(low.halfFull * Math.max(1, 1 / ratio)) + low.hopFull) : n / 2 + this.#levels.blockSize;
    this.#tail = low ? Math.max(n / 2, low.halfFull + low.hopFull) : n / 2;
    let highBins = 0;
    const edges = lowBandEdges(sampleRateHz, wide);
    while (low && highBins < bins && (highBins * sampleRateHz) / n < edges.f2) highBins++;
    this.#lowMask = Float64Array.from({ length: highBins }, (_, k) => lowBandWeight((k * sampleRateHz) / n, edges));
    this.#lookahead = low ? 2 * low.halfFull + low.decimation : 0;

    const perChannel = () => Array.from({ length: channelCount }, () => new Float64Array(n + 2));
    this.#xw = perChannel();
    this.#xwPrev = perChannel();
    this.#y = perChannel();
    this.#power = new Float64Array(bins);
    this.#powerPrev = new Float64Array(bins);

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
    return this.pushShared(block, false);
  }

  /**
   * `push`, with `shared` (default true) returning views of the stretcher's output staging
   * instead of copies: valid only until the next push or flush (for a caller that copies them at
   * once, such as the transposer's resampler).
   */
  pushShared(block: readonly Float64Array[], shared = true): Float64Array[] {
    if (this.#ended) throw new BugError('push after flush');
    if (block.length !== this.channelCount) throw new ParameterError(`expected ${this.channelCount} channels, got ${block.length}`);
    const len = block[0]?.length ?? 0;
    const input = this.#input;
    let at = 0;
    while (at < len) {
      const room = input.capacity - (input.written - this.#keepFrom());
      if (room <= 0) throw new BugError('time-stretch input ring overflow');
      const take = Math.min(room, len - at, CHUNK);
      input.write(block, at, take);
      at += take;
      this.#advance();
    }
    return this.#output.take(shared);
  }

  /** Ends the input and returns the rest of the output. */
  flush(): Float64Array[] {
    return this.flushShared(false);
  }

  /** `flush`, with `shared` (default true) returning views as `pushShared` does. */
  flushShared(shared = true): Float64Array[] {
    if (!this.#ended) {
      this.#ended = true;
      this.#outputFrames = Math.round(this.ratio * this.#input.written);
      this.#advance();
    }
    return this.#output.take(shared);
  }

  // ---------------------------------------------------------------------------------------------

  /** Oldest input sample still needed. */
  #keepFrom(): number {
    const written = this.#input.written;
    let keep = Math.min(this.#frame > 0 ? this.#prevAlpha - this.#n / 2 : 0, this.#tracker.keepFrom());
    if (this.#low) keep = Math.min(keep, this.#low.keepFrom());
    return Math.max(0, Math.min(keep, written));
  }

  #advance(): void {
    const written = this.#input.written;
    this.#tracker.run(this.#input, this.#ended);
    this.#tracker.commit(this.#map, written, this.#ended);
    this.#low?.decimate(this.#input, this.#ended);
    this.#levels.update();
    this.#processFrames();
  }

  #processFrames(): void {
    const map = this.#map;
    const n = this.#n, hs = this.#hs;
    const out = this.#output;
    for (;;) {
      const sigma = (this.#frame - 1) * hs;
      if (this.#ended) {
        if (sigma - this.#tail >= this.#outputFrames) break;
      } else if (!map.covers(sigma + this.#lookahead)) break;
      map.locate(sigma);
      const alpha = map.alpha;
      if (!this.#ended && alpha + this.#reach > this.#input.written) break; // wait for input
      this.#frameAt(sigma, alpha, map.zoneOnset);
      const low = this.#low;
      if (low) {
        // Low-band frames up to this σ; the one at σ takes this frame's α and rotations.
        while (low.nextSigma <= sigma) {
          const at = low.nextSigma;
          if (at === sigma) low.frame(alpha, this.#lock.rotRe, this.#lock.rotIm, n, this.#gain);
          else low.frame(map.alphaAt(at), null, null, n, this.#gain);
        }
      }
      this.#frame++;
      this.#emit(sigma + hs - n / 2);
      map.forgetBefore(low ? sigma - n - 2 * low.halfFull - low.hopFull : sigma - n);
    }
    if (this.#ended) {
      this.#low?.finish();
      this.#emit(this.#outputFrames);
    }
  }

  /** Hands out the output up to `upTo` (main band final there), as far as the low band is final too. */
  #emit(upTo: number): void {
    const out = this.#output, low = this.#low;
    if (low) {
      const limit = Math.min(upTo, low.finalUpTo(this.#outputFrames), this.#outputFrames);
      if (limit <= out.emitted) return;
      low.addTo(out, out.emitted, limit);
      out.emitUpTo(limit, this.#outputFrames);
    } else out.emitUpTo(upTo, this.#outputFrames);
  }

  /** One synthesis frame centred at output σ from the analysis frame centred at input α. */
  #frameAt(sigma: number, alpha: number, zoneOnset: number): void {
    const lock = this.#lock, n = this.#n;
    if (zoneOnset >= 0) {
      if (zoneOnset !== this.#zone) this.#enterZone(zoneOnset);
    } else {
      this.#zone = -1;
    }
    this.#stft.analyze(this.#input, alpha, this.#xw, this.#power);
    if (zoneOnset >= 0) lock.rotateHeld(this.#xw, this.#y);
    else if (!this.#prevValid || this.#levels.stopInside(alpha - n / 2, n)) {
      // The first frame, or a sound stops inside this window: the analysis phase (see offsets.ts).
      lock.reset();
      lock.rotateHeld(this.#xw, this.#y);
    } else if (!lock.lock(this.#power, this.#xw, this.#xwPrev, this.#y, alpha - this.#prevAlpha)) lock.rotateHeld(this.#xw, this.#y);
    if (this.#gain) this.#applyEnvelope();
    if (this.#onFrame) this.#onFrame({ outputCenter: sigma, inputCenter: alpha, spectra: this.#y, fftSize: this.#n });
    const lm = this.#lowMask;
    if (lm.length > 0) {
      // The main band's weight 1 − m_L·G, G the share the low band carries here.
      const cover = this.#low!.coverage(sigma, this.#alphaOf);
      for (let c = 0; c < this.channelCount; c++) {
        const out = this.#y[c]!;
        for (let k = 0; k < lm.length; k++) {
          const g = 1 - lm[k]! * cover;
          out[2 * k]! *= g;
          out[2 * k + 1]! *= g;
        }
      }
    }
    this.#stft.synthesize(this.#y, this.#output, sigma);
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
   * Entering a transient zone: every bin takes the analysis phase (θ = 0) except the regions of
   * steady partials (peaks in the last frame and in a frame centred on the onset, their power
   * within 1 dB); the rotation is then held through the zone.
   */
  #enterZone(t0: number): void {
    this.#zone = t0;
    if (this.#prevValid) {
      // #powerPrev is the last frame's power; the onset frame is analysed into the current buffers,
      // which the zone's first frame overwrites next.
      this.#stft.analyze(this.#input, t0, this.#xw, this.#power);
      this.#lock.resetUnstable(this.#power, this.#powerPrev);
    } else {
      this.#lock.reset();
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
