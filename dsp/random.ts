/**
 * Seeded pseudo-random numbers, for dither in reproducible renders, test material and the demo.
 * mulberry32 (a 32-bit multiply–xorshift generator; common practice). Functions that need
 * randomness take an `rng: () => number` parameter; nothing here holds global state.
 */
export function seededRng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
