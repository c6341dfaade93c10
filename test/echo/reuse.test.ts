/**
 * The memory-saving paths of the echo analysis give the same numbers as the plain ones: blocks
 * read into reused arrays, mixing into a scratch, cepstra computed into caller's arrays, and an
 * accumulator whose frame buffers were let go.
 */
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { sharedPlan } from '../../dsp/core/fft.ts';
import { cepstrumOf, LogSpectrumAccumulator } from '../../dsp/echo/log-spectrum.ts';
import { MixScratch, mixBlock } from '../../dsp/echo/mix.ts';
import { seededRng } from '../../dsp/random.ts';
import { openAudio } from '../../main/io/reader.ts';
import { FIXTURES } from '../io/helpers.ts';

describe('reused arrays give identical numbers', () => {
  it('a file read with `reusable` yields the same samples as fresh blocks, in the same arrays', async () => {
    // Source: wave_16bit.wav from Python's wave module (an independent writer); exact equality.
    const file = await openAudio(path.join(FIXTURES, 'wave_16bit.wav'));
    try {
      const fresh: number[][] = [], reused: number[][] = [];
      const seen = new Set<ArrayBufferLike>();
      for await (const b of file.blocks({ blockFrames: 100 })) fresh.push(...b.map((c) => Array.from(c)));
      for await (const b of file.blocks({ blockFrames: 100, reusable: true })) {
        reused.push(...b.map((c) => Array.from(c)));
        seen.add(b[0]!.buffer);
      }
      expect(reused).toEqual(fresh);
      expect(fresh.length).toBeGreaterThan(2 * file.channelCount);
      expect(seen.size).toBe(1);
    } finally {
      await file.close();
    }
  });

  it('mixing into a scratch equals mixing into new arrays', () => {
    // Source: exact identity (the same sums in the same order).
    const rng = seededRng(5);
    const scratch = new MixScratch();
    for (const n of [4096, 4096, 1000]) {
      const block = [0, 1, 2].map(() => Float64Array.from({ length: n }, () => rng() - 0.5));
      const plain = mixBlock(block, -1);
      expect(Array.from(mixBlock(block, -1, scratch))).toEqual(Array.from(plain));
    }
  });

  it('cepstra into given arrays, and means after release(), match the plain results', () => {
    // Source: exact identity; and the real cepstrum of a unit impulse's flat log spectrum is 0.
    const n = 4096;
    const rng = seededRng(9);
    const x = Float64Array.from({ length: 6 * n }, () => rng() - 0.5);
    const a = new LogSpectrumAccumulator({ fftSize: n, hopSize: n / 2, keepHalves: true });
    a.push(x);
    const before = a.meanLogSpectrum();
    const plain = cepstrumOf(before, sharedPlan(n));
    a.release();
    expect(Array.from(a.meanLogSpectrum())).toEqual(Array.from(before));
    expect(() => a.push(x)).toThrow(/after release/);
    const scratch = { into: new Float64Array(n), half: new Float64Array(n + 2), work: new Float64Array(n) };
    expect(Array.from(cepstrumOf(before, sharedPlan(n), scratch))).toEqual(Array.from(plain));
    expect(Array.from(a.halfMeanLogSpectrum(1, new Float64Array(n / 2 + 1))!)).toEqual(Array.from(a.halfMeanLogSpectrum(1)!));
    const flat = cepstrumOf(new Float64Array(n / 2 + 1), sharedPlan(n), scratch);
    expect(Math.max(...Array.from(flat, Math.abs))).toBe(0);
  });
});
