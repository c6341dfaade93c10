/**
 * A stop asked for during the echo analysis's passes is a CancelledError, never a null ("nothing
 * found") or a result from part of the excerpt.
 */
import { describe, expect, it } from 'vitest';
import { CancelledError } from '../../dsp/errors.ts';
import { frameEvidence } from '../../dsp/echo/evidence.ts';
import { makeMasks, refinePrintThrough } from '../../dsp/echo/print-through.ts';
import { quietFrames, refineSingleEcho } from '../../dsp/echo/refine.ts';
import { analyseEcho } from '../../dsp/echo/detect.ts';
import { MemorySource } from '../../dsp/source.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

const fs = 16000;
/** 4 s of noise with a reflection 12.5 ms later at gain 0.4: y = x + 0.4·x(t − 200). */
function echoed(): Float64Array {
  const g = gaussian(seededRng(7));
  const x = Float64Array.from({ length: 4 * fs }, () => 0.1 * g());
  const y = Float64Array.from(x);
  for (let i = 200; i < y.length; i++) y[i]! += 0.4 * x[i - 200]!;
  return y;
}

/** A stop signal that turns on after `reads` looks (so the pass is stopped part-way). */
function stopAfter(reads: number): { readonly aborted: boolean } {
  let n = 0;
  return {
    get aborted() {
      return ++n > reads;
    },
  };
}

describe('cancellation in dsp/echo', () => {
  // Source: common practice (a cancelled computation reports the cancellation, it does not
  // return a value); the same signal without the stop gives a result, so each check can fail.
  const y = echoed();
  const source = new MemorySource([y], fs);
  const excerpt = { start: 0, end: y.length, warmup: 0 };

  it('quietFrames and refineSingleEcho throw CancelledError when stopped', async () => {
    await expect(quietFrames(source, { channel: 0, excerpt, signal: stopAfter(0) }, 1024)).rejects.toBeInstanceOf(CancelledError);
    await expect(refineSingleEcho(source, { delaySamples: 200, gain: 0.3 }, { channel: 0, excerpt, signal: stopAfter(1) })).rejects.toBeInstanceOf(CancelledError);
    const r = await refineSingleEcho(source, { delaySamples: 200, gain: 0.3 }, { channel: 0, excerpt, signal: { aborted: false } });
    expect(r.fit.delaySamples).toBeCloseTo(200, 1);
  });

  it('frameEvidence throws instead of returning the evidence of the blocks read so far', async () => {
    const opts = { channel: 0, start: 0, end: y.length };
    await expect(frameEvidence(source, 200, 0.4, { ...opts, signal: stopAfter(0) })).rejects.toBeInstanceOf(CancelledError);
    await expect(frameEvidence(source, 200, 0.4, { ...opts, signal: { aborted: false } })).resolves.toBeDefined();
  });

  it('refinePrintThrough throws CancelledError when stopped', async () => {
    const masks = makeMasks(Float32Array.from(y), fs);
    await expect(refinePrintThrough(source, 0, 200, masks, 1, { signal: stopAfter(0) })).rejects.toBeInstanceOf(CancelledError);
  });

  it('the whole analysis stopped part-way throws CancelledError', async () => {
    for (const reads of [1, 3, 8]) {
      await expect(analyseEcho(source, { signal: stopAfter(reads) })).rejects.toBeInstanceOf(CancelledError);
    }
  });
});
