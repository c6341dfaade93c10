/**
 * Fixed-size rings of the streaming time-stretcher: the input history that analysis frames are
 * read from, and the overlap-add accumulator that synthesis frames are added into, with the staging
 * buffers the finished output is handed out from. Sizes are powers of two (index = position & mask)
 * and do not grow with the input's length; only the staging grows to the largest block handed out.
 */

/** Largest piece of a pushed block copied into the input ring at once. */
export const CHUNK = 8192;

/** Planar input history, addressed by absolute sample position. */
export class InputRing {
  readonly mask: number;
  readonly rings: Float64Array[];
  /** Samples written so far (absolute position of the next one). */
  written = 0;

  constructor(channelCount: number, capacity: number) {
    const cap = 2 ** Math.ceil(Math.log2(capacity));
    this.mask = cap - 1;
    this.rings = Array.from({ length: channelCount }, () => new Float64Array(cap));
  }

  get capacity(): number {
    return this.mask + 1;
  }

  /** Copies block[c][at … at + take) to the ring (the caller checks the room). */
  write(block: readonly Float64Array[], at: number, take: number): void {
    const mask = this.mask, from = this.written;
    for (let c = 0; c < this.rings.length; c++) {
      const src = block[c]!, ring = this.rings[c]!;
      // At most two contiguous pieces of the ring.
      for (let done = 0; done < take; ) {
        const idx = (from + done) & mask, len = Math.min(take - done, mask + 1 - idx);
        ring.set(src.subarray(at + done, at + done + len), idx);
        done += len;
      }
    }
    this.written += take;
  }

  /** Sample i of channel c; 0 before the start and after the last written sample. */
  sample(c: number, i: number): number {
    if (i < 0 || i >= this.written) return 0;
    return this.rings[c]![i & this.mask]!;
  }

  /** True when [start, start + n) is written and does not wrap around the ring's end. */
  contiguous(start: number, n: number): boolean {
    return start >= 0 && start + n <= this.written && (start & this.mask) + n <= this.mask + 1;
  }
}

/**
 * Overlap-add accumulator. Frames add into positions ≥ `emitted`; `emitUpTo` moves finished
 * samples to the staging buffers (and clears their slots), `take` hands the staged samples out.
 */
export class OverlapAddRing {
  readonly mask: number;
  readonly rings: Float64Array[];
  /** Output samples moved to staging so far. */
  emitted = 0;
  #stage: Float64Array[];
  #staged = 0;

  constructor(channelCount: number, capacity: number) {
    const cap = 2 ** Math.ceil(Math.log2(capacity));
    this.mask = cap - 1;
    this.rings = Array.from({ length: channelCount }, () => new Float64Array(cap));
    this.#stage = Array.from({ length: channelCount }, () => new Float64Array(CHUNK));
  }

  /** Moves final output samples [emitted, min(upTo, end)) to staging. */
  emitUpTo(upTo: number, end: number): void {
    const stop = Math.min(upTo, end);
    if (stop <= this.emitted) return;
    const count = stop - this.emitted;
    this.#ensureStage(this.#staged + count);
    const mask = this.mask;
    for (let c = 0; c < this.rings.length; c++) {
      const ring = this.rings[c]!, st = this.#stage[c]!;
      // At most two contiguous pieces of the ring: copied out, then cleared.
      for (let done = 0; done < count; ) {
        const idx = (this.emitted + done) & mask, len = Math.min(count - done, mask + 1 - idx);
        st.set(ring.subarray(idx, idx + len), this.#staged + done);
        ring.fill(0, idx, idx + len);
        done += len;
      }
    }
    this.#staged += count;
    this.emitted = stop;
  }

  /**
   * The staged output, emptying the staging: copies, or with `shared` views of the staging
   * buffers, valid only until the next `emitUpTo`.
   */
  take(shared = false): Float64Array[] {
    const out = this.#stage.map((s) => (shared ? s.subarray(0, this.#staged) : s.slice(0, this.#staged)));
    this.#staged = 0;
    return out;
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
}
