/**
 * Sounds that stop inside an analysis window, for the time-stretcher.
 *
 * A phase-vocoder frame whose window holds a sound and then (near) silence — a drum sample that
 * ends, a choked cymbal, a gate closing — spreads the sound over its whole window once its bins
 * are turned away from the analysis phase: the silence after the stop is filled with the sound's
 * smear, up to half a window (≈ 43 ms) later, and the long-window low band (≈ 340 ms) spreads it
 * further. Where another hit follows within that reach, the smear lies in the silence before the
 * hit and reads as its pre-echo, though it comes from the sound before. Measured on a General
 * MIDI kit (stretch 1.3): a kick sample cut 54 ms before a soft closed hi-hat left its 60 Hz tail
 * at −27 dB re the hi-hat across the silence before it; the two stretched frames just before the
 * hi-hat's transient zone, whose windows held the cut, put it there (the zone's own frames, at
 * slope 1 with held rotations, copy the silence exactly).
 *
 * The remedy is the offset's counterpart of the phase reset at onsets: a main-band frame whose
 * window holds a stop takes the analysis phase (θ = 0), so it is its own windowed input, shifted
 * (silence stays silent), and the low band drops a frame with a stop within ¾ of its half-window,
 * as it does at onsets (the main band carries the low band there).
 *
 * A stop: `STOP_RUN_BLOCKS` consecutive level blocks (N/32 each: N/8 ≈ 10.7 ms at 4096 and
 * 48 kHz) each at most `STOP_QUIET_RATIO` (−40 dB) of the loudest block before them in the analysis
 * window; why −40 dB: without the reset the smear after a cut into silence was measured at −11 …
 * −44 dB re the loudest 2 ms before the cut over the 5–45 ms after it (noise, decaying noise, a
 * 60 Hz kick, a 220 Hz tone with 8 harmonics; stretch 1.3 at 48 kHz, long band off), so a part
 * 40 dB or more under the sound before it is filled by the smear; above that the input's own
 * level covers most of it. (On the 16 drum clips of the evaluation every threshold from −30 to
 * −50 dB gave the same results.) Why N/8: the frames around a stop place it at positions up to
 * (R − 1)·N/2 apart whatever their phases (±13 ms at R 1.3), so a shorter pause is a fade in the
 * output either way.
 *
 * The level is the input's energy summed over the channels, in blocks on a fixed grid computed
 * once as the input arrives.
 */
import type { InputRing } from './rings.ts';

/** Energy ratio (quiet block ÷ loudest block before it) at or below which a block is quiet: −40 dB. */
export const STOP_QUIET_RATIO = 1e-4;
/** Quiet blocks in a row that make a stop. */
export const STOP_RUN_BLOCKS = 4;

export class BlockLevels {
  readonly blockSize: number;
  readonly #input: InputRing;
  readonly #mask: number;
  readonly #energy: Float64Array;
  /** Blocks computed so far (block b covers [b·size, (b + 1)·size)). */
  #done = 0;

  /**
   * `blockSize`: samples per block (the stretcher uses N/32); `span`: input samples back from the
   * newest that may still be asked about.
   */
  constructor(input: InputRing, blockSize: number, span: number) {
    this.#input = input;
    this.blockSize = blockSize;
    const cap = 2 ** Math.ceil(Math.log2(Math.ceil(span / blockSize) + 2));
    this.#mask = cap - 1;
    this.#energy = new Float64Array(cap);
  }

  /** Computes the blocks the input has completed. */
  update(): void {
    const input = this.#input, bs = this.blockSize, written = input.written, mask = input.mask, e = this.#energy;
    for (let b = this.#done; (b + 1) * bs <= written; b++) {
      let s = 0;
      for (const r of input.rings) {
        for (let t = b * bs; t < (b + 1) * bs; t++) {
          const v = r[t & mask]!;
          s += v * v;
        }
      }
      e[b & this.#mask] = s;
      this.#done = b + 1;
    }
  }

  /**
   * Whether the blocks that overlap [start, start + length) hold a stop: STOP_RUN_BLOCKS in a
   * row each at most STOP_QUIET_RATIO × the loudest block before them there (that one above 0).
   * Only complete blocks of the input count: the caller asks once the input covers the range and
   * one block beyond it; where the input ends there is no stop (the end of a file is not silence:
   * a tone that runs to it is not cut short).
   */
  stopInside(start: number, length: number): boolean {
    const bs = this.blockSize, energy = this.#energy, mask = this.#mask;
    const b0 = Math.floor(start / bs), b1 = Math.min(Math.floor((start + length - 1) / bs), this.#done - 1);
    let loud = 0, quiet = 0;
    for (let b = b0; b <= b1; b++) {
      const e = b < 0 ? 0 : energy[b & mask]!;
      if (loud > 0 && e <= STOP_QUIET_RATIO * loud) {
        if (++quiet >= STOP_RUN_BLOCKS) return true;
      } else {
        quiet = 0;
        if (e > loud) loud = e;
      }
    }
    return false;
  }
}
