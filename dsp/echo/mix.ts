/** Picks one channel of a planar block (a copy), or averages all channels when `channel` < 0. */
export function mixBlock(block: readonly Float64Array[], channel: number): Float64Array {
  if (channel >= 0) return Float64Array.from(block[channel]!);
  const n = block[0]!.length;
  if (block.length === 1) return Float64Array.from(block[0]!);
  const out = new Float64Array(n);
  const s = 1 / block.length;
  for (const ch of block) for (let i = 0; i < n; i++) out[i]! += ch[i]!;
  for (let i = 0; i < n; i++) out[i] = out[i]! * s;
  return out;
}
