/**
 * Transient tracking for the time-stretcher: runs the spectral-flux onset detector
 * (dsp/stretch/onsets.ts) on a decimated mix of the input as it arrives, refines each detected
 * onset to the sample, and commits onsets and regular anchors to the time map
 * (dsp/stretch/time-map.ts) once everything that could change them is known.
 *
 * - The detector sees the channel sum, boxcar-averaged over D samples (D = round(fs / 24 kHz),
 *   at least 1): onsets need no more bandwidth.
 * - Refinement (`refineOnset`): on a 0.5 ms grid, the boundary with the largest ratio of the
 *   channel sum's first-difference energy in the 2 ms after it to the 4 ms before it (the first
 *   difference favours the broadband attack over sustained low notes); then, from 1 ms before that
 *   boundary to the end of the 2 ms, the first sample whose first difference reaches half the
 *   largest there (the attack's first strong sample; exact for a click).
 * - Anchors: every `gridSpacing` samples an ordinary anchor, left out where an onset's zone needs
 *   the room; an anchor or onset is committed `commitDistance` samples before the detector's
 *   knowledge ends, so the zone it opens never has to be moved.
 */
import { ONSET_LOOKAHEAD_FRAMES, SpectralFluxOnsets } from './onsets.ts';
import type { InputRing } from './rings.ts';
import { CHUNK } from './rings.ts';
import type { TimeMap } from './time-map.ts';

export interface TransientTrackerOptions {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  /** Distance before the end of knowledge at which anchors are committed, samples. */
  readonly commitDistance: number;
  /** Spacing of ordinary anchors, samples. */
  readonly gridSpacing: number;
  /** Detect onsets (default true); without, only the regular anchors are placed. */
  readonly detect?: boolean;
}

export class TransientTracker {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly decimation: number;
  /** Input samples the detector needs to hold besides the frames (4 detector frames). */
  readonly span: number;
  readonly #det: SpectralFluxOnsets | null;
  readonly #monoMask: number;
  readonly #mono: Float64Array; // decimated channel mix
  #monoWritten = 0;
  readonly #candidates: number[] = [];
  readonly #commitDistance: number;
  readonly #gridSpacing: number;
  #gridNext: number;

  constructor(options: TransientTrackerOptions) {
    this.sampleRateHz = options.sampleRateHz;
    this.channelCount = options.channelCount;
    this.decimation = Math.max(1, Math.round(options.sampleRateHz / 24000));
    const det = (this.#det = options.detect === false ? null : new SpectralFluxOnsets({ sampleRateHz: options.sampleRateHz / this.decimation }));
    this.span = det ? 4 * det.frameSize * this.decimation : 0;
    const monoCap = det ? 2 ** Math.ceil(Math.log2(4 * det.frameSize + CHUNK)) : 1;
    this.#monoMask = monoCap - 1;
    this.#mono = new Float64Array(monoCap);
    this.#commitDistance = options.commitDistance;
    this.#gridSpacing = options.gridSpacing;
    this.#gridNext = options.gridSpacing;
  }

  /** Input sample where the refinement search for detector frame j begins (one hop before it). */
  #regionStart(j: number): number {
    return (j - 1) * this.#det!.hopSize * this.decimation;
  }

  /** Oldest input sample the tracker still reads (Infinity without a detector). */
  keepFrom(): number {
    const det = this.#det;
    return det ? this.#regionStart(det.frameCount - ONSET_LOOKAHEAD_FRAMES - 1) : Infinity;
  }

  /** Input position up to which every onset is known. */
  known(written: number, ended: boolean): number {
    if (ended) return Infinity;
    const det = this.#det;
    if (!det) return written;
    return this.#regionStart(det.frameCount - ONSET_LOOKAHEAD_FRAMES);
  }

  /** Runs the detector over everything written so far (and, once ended, to the end). */
  run(input: InputRing, ended: boolean): void {
    const det = this.#det;
    if (!det) return;
    // Extend the decimated mix (boxcar average of D samples of the channel sum).
    const d = this.decimation, channels = this.channelCount, inMask = input.mask, monoMask = this.#monoMask;
    const scale = 1 / (d * channels);
    const written = input.written;
    const limit = Math.floor(written / d) + (ended && written % d ? 1 : 0);
    const rings = input.rings, mono = this.#mono;
    for (let c = 0; c < channels; c++) {
      const r = rings[c]!;
      for (let m = this.#monoWritten; m < limit; m++) {
        const start = m * d, stop = start + d <= written ? start + d : written;
        let v = 0;
        if (d === 2 && stop === start + 2) v = 0 + r[start & inMask]! + r[(start + 1) & inMask]!; // the loop below, unrolled
        else for (let i = start; i < stop; i++) v += r[i & inMask]!;
        mono[m & monoMask] = c === 0 ? v * scale : mono[m & monoMask]! + v * scale;
      }
    }
    this.#monoWritten = Math.max(this.#monoWritten, limit);
    const size = det.frameSize, hop = det.hopSize;
    const buf = det.frameBuffer;
    for (;;) {
      const start = det.frameCount * hop;
      if (ended) {
        // Zero-padded frames until the peak picker has decided on every frame that has input.
        if (start >= this.#monoWritten + (ONSET_LOOKAHEAD_FRAMES + 1) * hop) break;
      } else if (start + size > this.#monoWritten) break;
      const have = this.#monoWritten;
      const from = start & monoMask;
      if (start + size <= have && from + size <= monoMask + 1) buf.set(mono.subarray(from, from + size));
      else {
        for (let i = 0; i < size; i++) {
          const t = start + i;
          buf[i] = t < have ? mono[t & monoMask]! : 0;
        }
      }
      det.analyze(buf);
      const j = det.decide();
      if (j >= 0) {
        const from = this.#regionStart(j);
        const t0 = this.#refineOnset(input, from, (j * hop + size) * d);
        const last = this.#candidates.length > 0 ? this.#candidates[this.#candidates.length - 1]! : -Infinity;
        if (t0 > last) this.#candidates.push(t0);
      }
    }
  }

  /** The onset inside [from, to) (see the header). */
  #refineOnset(input: InputRing, from: number, to: number): number {
    const fs = this.sampleRateHz;
    const b = Math.max(1, Math.round(0.0005 * fs));
    const before = 8, after = 4; // blocks: 4 ms and 2 ms
    const a = Math.max(1, from), end = Math.min(to, input.written);
    const blocks = Math.floor((end - a) / b);
    if (blocks < 2) return a;
    const diff = (t: number) => {
      let v = 0;
      for (let c = 0; c < this.channelCount; c++) v += input.sample(c, t) - input.sample(c, t - 1);
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

  /** Commits onsets and grid anchors that can no longer change to the map; ends it at the end. */
  commit(map: TimeMap, written: number, ended: boolean): void {
    const known = this.known(written, ended);
    const c = this.#commitDistance;
    const end = written;
    for (;;) {
      const onset = this.#candidates.length > 0 ? this.#candidates[0]! : Infinity;
      const grid = this.#gridNext;
      const t = Math.min(onset, grid);
      if (ended ? t >= end : t + c > known) break;
      if (onset <= grid) {
        this.#candidates.shift();
        // Near the end an onset needs room for its zone before the last anchor.
        if (ended && t + c > end) continue;
        map.tryOnset(onset);
      } else {
        this.#gridNext += this.#gridSpacing;
        if (onset - grid < c) continue; // leave the room to the onset's zone
        map.tryAnchor(grid);
      }
    }
    if (ended) map.end(end);
  }
}
