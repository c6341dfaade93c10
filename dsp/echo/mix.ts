/**
 * Picks one channel of a planar block, or averages all channels when `channel` < 0. The block
 * belongs to the caller (AudioSource contract), so a single channel is returned as is, not
 * copied; callers may overwrite it. With `scratch` (a MixScratch of the caller's), the mean of
 * several channels is written into the scratch's array instead of a new one each block: the
 * result is then only good until the next call with the same scratch.
 */
export function mixBlock(block: readonly Float64Array[], channel: number, scratch?: MixScratch): Float64Array {
  if (channel >= 0) return block[channel]!;
  const n = block[0]!.length;
  if (block.length === 1) return block[0]!;
  const out = scratch ? scratch.take(n) : new Float64Array(n);
  const s = 1 / block.length;
  const first = block[0]!;
  for (let i = 0; i < n; i++) out[i] = first[i]!;
  for (let c = 1; c < block.length; c++) {
    const ch = block[c]!;
    for (let i = 0; i < n; i++) out[i]! += ch[i]!;
  }
  for (let i = 0; i < n; i++) out[i] = out[i]! * s;
  return out;
}

/** One reusable mixing buffer, for a loop that consumes each mixed block before the next. */
export class MixScratch {
  #buf = new Float64Array(0);
  take(n: number): Float64Array {
    if (this.#buf.length < n) this.#buf = new Float64Array(n);
    return this.#buf.length === n ? this.#buf : this.#buf.subarray(0, n);
  }
}
