/**
 * Picks one channel of a planar block, or averages all channels when `channel` < 0. The block
 * belongs to the caller (AudioSource contract), so a single channel is returned as is, not
 * copied; callers may overwrite it.
 */
export function mixBlock(block: readonly Float64Array[], channel: number): Float64Array {
  if (channel >= 0) return block[channel]!;
  const n = block[0]!.length;
  if (block.length === 1) return block[0]!;
  const out = new Float64Array(n);
  const s = 1 / block.length;
  for (const ch of block) for (let i = 0; i < n; i++) out[i]! += ch[i]!;
  for (let i = 0; i < n; i++) out[i] = out[i]! * s;
  return out;
}
