/** Seeded random numbers for reproducible tests (the generator lives in dsp/random.ts). */
export { seededRng } from '../../dsp/random.ts';

/** Standard normal deviates from a uniform source (Box–Muller; common practice). */
export function gaussian(rng: () => number): () => number {
  return () => {
    const u = Math.max(rng(), 1e-300);
    const v = rng();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  };
}
