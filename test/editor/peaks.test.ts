/** Peak caches: every level agrees with a direct min/max over the samples, for both input paths. */
import { describe, expect, it } from 'vitest';
import { BASE_BUCKET_FRAMES, PeakBuilder, columnsFromPyramid, pyramidFromParts } from '../../renderer/src/lib/peaks.ts';
import { seededRng } from '../helpers/rng.ts';

function direct(x: Float32Array, start: number, end: number) {
  let lo = Infinity, hi = -Infinity;
  for (let i = Math.max(0, start); i < Math.min(x.length, end); i++) { lo = Math.min(lo, x[i]!); hi = Math.max(hi, x[i]!); }
  return [lo, hi];
}

describe('peak pyramid', () => {
  const rng = seededRng(5);
  const frames = 300_001;
  const ints = Int16Array.from({ length: frames * 2 }, () => Math.floor((rng() * 2 - 1) * 32768));
  const planar = [0, 1].map((c) => Float32Array.from({ length: frames }, (_, i) => ints[2 * i + c]! / 32768));

  it('matches direct min/max at every level, fed in odd-sized blocks', () => {
    const b = new PeakBuilder(2, 1000, 48000); // a short hint forces the arrays to grow
    for (let at = 0; at < frames; at += 7919) b.push(planar.map((c) => c.subarray(at, Math.min(frames, at + 7919))));
    const p = b.finish();
    expect(p.frames).toBe(frames);
    expect(p.levels.at(-1)!.buckets).toBeLessThanOrEqual(512);
    for (const level of p.levels) {
      for (const k of [0, 1, Math.floor(level.buckets / 2), level.buckets - 1]) {
        const [lo, hi] = direct(planar[1]!, k * level.bucketFrames, (k + 1) * level.bucketFrames);
        expect(level.min[1]![k]).toBe(lo);
        expect(level.max[1]![k]).toBe(hi);
      }
    }
  });

  it('gives the same caches from the 16-bit fast path and from two joined halves', () => {
    const a = new PeakBuilder(2, frames, 48000);
    a.push(planar);
    const pa = a.finish();
    const half = 128 * BASE_BUCKET_FRAMES;
    const h1 = new PeakBuilder(2, half, 48000), h2 = new PeakBuilder(2, frames - half, 48000);
    h1.pushInterleavedInt16(ints.subarray(0, 2 * half), half);
    for (let at = half; at < frames; at += 10_000) {
      const n = Math.min(10_000, frames - at);
      h2.pushInterleavedInt16(ints.slice(2 * at, 2 * (at + n)), n);
    }
    const pb = pyramidFromParts([h1.level0(), h2.level0()], frames, 48000);
    expect(pb.levels.length).toBe(pa.levels.length);
    pa.levels.forEach((l, i) => {
      expect(pb.levels[i]!.min[0]).toEqual(l.min[0]);
      expect(pb.levels[i]!.max[1]).toEqual(l.max[1]);
    });
  });

  it('answers drawing columns from the right level, NaN outside the recording', () => {
    const b = new PeakBuilder(2, frames, 48000);
    b.push(planar);
    const p = b.finish();
    const w = 50, fpc = 4096;
    const mn = new Float32Array(w), mx = new Float32Array(w);
    expect(columnsFromPyramid(p, 0, -fpc, fpc, mn, mx)).toBe(true);
    expect(mn[0]).toBeNaN();
    const [lo, hi] = direct(planar[0]!, 3 * fpc, 4 * fpc);
    expect(mn[4]).toBe(lo);
    expect(mx[4]).toBe(hi);
    expect(columnsFromPyramid(p, 0, 0, 100, mn, mx)).toBe(false);
  });
});
