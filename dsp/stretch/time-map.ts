/**
 * The time map of a time-stretch: which input instant each output frame is taken from.
 *
 * A piecewise-linear, non-decreasing map from output time σ to input time α through anchors
 * (σ, α), starting at (0, 0) and ending at (R·N, N) for an input of N frames and a ratio R. Between
 * ordinary anchors the map is a straight line (on average σ = R·α). Around each accepted onset t₀ it
 * has a *transient zone*: for σ within ±Z of σ₀ = round(R·t₀) the map has slope 1, α = σ − (σ₀ − t₀),
 * so every analysis frame that contains the onset is taken with the synthesis hop (no stretch there)
 * and the onset lands exactly at R·t₀ in the output. The rest of the stretch is spread over the
 * stretches between zones. (This is the "time-scale only the stationary parts" idea of
 * Duxbury, Davies & Sandler 2002, "Improved time-scaling of musical audio using phase locking at
 * transients", AES 112th Convention, with hop adaptation instead of frame dropping.)
 *
 * All coordinates are in samples. The map never allocates once anchors are added.
 */
import { BugError } from '../errors.ts';

interface Zone {
  /** Onset in the input (sample index). */
  readonly t0: number;
  /** σ − α inside the zone: round(R·t₀) − t₀. */
  readonly offset: number;
}

export class TimeMap {
  readonly ratio: number;
  /** Half-width of a transient zone, samples. */
  readonly zoneHalfWidth: number;
  /** Smallest allowed step between consecutive anchors in both σ and α, samples. */
  readonly minGap: number;
  readonly #s: number[] = [0];
  readonly #a: number[] = [0];
  /** Zone of the segment starting at anchor i, or null. */
  readonly #zone: (Zone | null)[] = [null];
  #ended = false;
  #cursor = 0;
  /** Result of the last `locate`. */
  alpha = 0;
  /** Onset of the zone the last located σ lies in, or −1. */
  zoneOnset = -1;

  constructor(ratio: number, zoneHalfWidth: number, minGap: number) {
    this.ratio = ratio;
    this.zoneHalfWidth = Math.round(zoneHalfWidth);
    this.minGap = minGap;
  }

  get ended(): boolean {
    return this.#ended;
  }

  /** σ of the last anchor: frames up to here can be placed. */
  get lastOutput(): number {
    return this.#s[this.#s.length - 1]!;
  }

  get lastInput(): number {
    return this.#a[this.#a.length - 1]!;
  }

  /** Number of onsets accepted so far. */
  acceptedOnsetCount = 0;
  /** Called with each accepted onset's input sample (diagnostics, tests). */
  onAccept: ((t0: number) => void) | undefined;

  /**
   * Adds a transient zone around input sample t0 if it keeps the required gaps after the last
   * anchor. Returns whether it was accepted.
   */
  tryOnset(t0: number): boolean {
    if (this.#ended) throw new BugError('time map already ended');
    const z = this.zoneHalfWidth;
    const s0 = Math.round(this.ratio * t0);
    const sStart = s0 - z, aStart = t0 - z;
    if (sStart - this.lastOutput < this.minGap || aStart - this.lastInput < this.minGap) return false;
    const zone: Zone = { t0, offset: s0 - t0 };
    this.#push(sStart, aStart, zone);
    this.#push(s0 + z, t0 + z, null);
    this.acceptedOnsetCount++;
    this.onAccept?.(t0);
    return true;
  }

  /** Adds an ordinary anchor on the average line (R·t, t) if the gaps allow. */
  tryAnchor(t: number): boolean {
    if (this.#ended) throw new BugError('time map already ended');
    const s = this.ratio * t;
    if (s - this.lastOutput < this.minGap || t - this.lastInput < this.minGap) return false;
    this.#push(s, t, null);
    return true;
  }

  /** Closes the map at the input's end: the output is R·N long. */
  end(inputFrames: number): void {
    if (this.#ended) return;
    const s = this.ratio * inputFrames;
    if (s > this.lastOutput && inputFrames > this.lastInput) this.#push(s, inputFrames, null);
    this.#ended = true;
  }

  /** Whether σ can be placed now (it is before the last anchor, or the map has ended). */
  covers(sigma: number): boolean {
    return this.#ended || sigma <= this.lastOutput;
  }

  /**
   * Places output time σ (non-decreasing between calls): sets `alpha` (rounded to a sample) and
   * `zoneOnset`.
   */
  locate(sigma: number): void {
    const s = this.#s, a = this.#a;
    if (sigma < s[0]!) {
      // Before the first anchor (σ < 0, frames that only partly overlap the output): the average line.
      this.zoneOnset = -1;
      this.alpha = Math.round(a[0]! + (sigma - s[0]!) / this.ratio);
      return;
    }
    let i = this.#cursor;
    while (i + 1 < s.length && s[i + 1]! <= sigma) i++;
    this.#cursor = i;
    const zone = this.#zone[i]!;
    if (zone !== null && i + 1 < s.length) {
      this.alpha = sigma - zone.offset;
      this.zoneOnset = zone.t0;
      return;
    }
    this.zoneOnset = -1;
    if (i + 1 < s.length) {
      const s0 = s[i]!, s1 = s[i + 1]!, a0 = a[i]!, a1 = a[i + 1]!;
      this.alpha = Math.round(a0 + ((sigma - s0) * (a1 - a0)) / (s1 - s0));
    } else {
      // After the last anchor: continue at the average rate.
      this.alpha = Math.round(a[i]! + (sigma - s[i]!) / this.ratio);
    }
  }

  /**
   * α at output time σ on the map's segments (zones included), rounded to a sample, for other
   * readers (the low band); any σ from the oldest kept anchor on, and `locate` is not disturbed.
   */
  alphaAt(sigma: number): number {
    const s = this.#s, a = this.#a;
    if (sigma < s[0]!) return Math.round(a[0]! + (sigma - s[0]!) / this.ratio);
    let lo = 0, hi = s.length - 1; // last anchor with s ≤ σ
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (s[mid]! <= sigma) lo = mid;
      else hi = mid - 1;
    }
    const i = lo;
    const zone = this.#zone[i]!;
    if (zone !== null && i + 1 < s.length) return sigma - zone.offset;
    if (i + 1 < s.length) {
      const s0 = s[i]!, s1 = s[i + 1]!, a0 = a[i]!, a1 = a[i + 1]!;
      return Math.round(a0 + ((sigma - s0) * (a1 - a0)) / (s1 - s0));
    }
    return Math.round(a[i]! + (sigma - s[i]!) / this.ratio);
  }

  /** Drops anchors wholly before σ (keeps memory bounded on long inputs). */
  forgetBefore(sigma: number): void {
    let drop = 0;
    while (drop + 1 < this.#cursor && this.#s[drop + 1]! < sigma) drop++;
    if (drop > 64) {
      this.#s.splice(0, drop);
      this.#a.splice(0, drop);
      this.#zone.splice(0, drop);
      this.#cursor -= drop;
    }
  }

  #push(s: number, a: number, zone: Zone | null): void {
    this.#s.push(s);
    this.#a.push(a);
    this.#zone.push(zone);
  }
}
