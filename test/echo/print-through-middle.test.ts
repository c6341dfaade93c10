/**
 * Print-through against a sound that repeats itself while it fades: a copy from the tape lies under
 * quiet and louder passages at one gain; a repeat whose strength follows the level of the passage
 * it lands in (a sampled sustain loop under its release) does not, and is not print-through.
 */
import { describe, expect, it } from 'vitest';
import { analyseEcho, ptMiddleDisagrees } from '../../dsp/echo/detect.ts';
import { MemorySource } from '../../dsp/source.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

const fs = 44100;
const T = 1.0; // seconds between the copy and the burst it copies (before it)
const bursts = [2, 4, 6, 8, 10, 12, 14, 16];

/**
 * 18 s of hiss 80 dB down; eight 0.4 s bursts of white noise at −20 dBFS every 2 s; before every
 * other burst, T earlier, a 0.4 s bed of unrelated noise 22 dB under the bursts (a passage
 * between quiet and loud); then a copy of each burst T before it at `quietGain` where the tape
 * is quiet and `middleGain` over the bed.
 */
function programme(quietGain: number, middleGain: number): Float64Array {
  const n = Math.round(18 * fs), len = Math.round(0.4 * fs), lag = Math.round(T * fs);
  const g = gaussian(seededRng(21));
  const x = Float64Array.from({ length: n }, () => 1e-4 * g());
  const burst = new Float64Array(n);
  for (const s of bursts) {
    const i0 = Math.round(s * fs);
    for (let i = 0; i < len; i++) burst[i0 + i] = 0.1 * g();
  }
  for (let i = 0; i < n; i++) x[i]! += burst[i]!;
  for (const [j, s] of bursts.entries()) {
    const i0 = Math.round(s * fs) - lag;
    const bed = j % 2 === 1;
    for (let i = 0; i < len; i++) {
      if (bed) x[i0 + i]! += 0.1 * Math.pow(10, -22 / 20) * g();
      x[i0 + i]! += (bed ? middleGain : quietGain) * burst[i0 + lag + i]!;
    }
  }
  return x;
}

describe('print-through under quiet and louder passages', () => {
  // Source: exact identity — y = x + g·x(t + T) is one linear copy, so the regression gain of the
  // passages T before the bursts on the bursts is g whatever else those passages hold (the bed is
  // independent noise and only adds spread); truth by construction, −40 dB = 0.01.
  const g40 = 0.01;

  it('a tape copy at −40 dB under quiet and louder passages alike is found, at its lag and level', async () => {
    const r = await analyseEcho(new MemorySource([programme(g40, g40)], fs));
    const pt = r.printThrough;
    console.info(`one copy: ${JSON.stringify({ d: pt.delaySeconds, db: pt.levelDb, c: pt.confidence, middle: pt.detail?.middle, reason: pt.reason })}`);
    expect(pt.present).toBe(true);
    expect(Math.abs(pt.delaySeconds! - -T)).toBeLessThanOrEqual(0.002);
    expect(Math.abs(pt.levelDb! - -40)).toBeLessThanOrEqual(1);
    const m = pt.detail!.middle!;
    expect(m.pairs).toBeGreaterThanOrEqual(20);
    expect(Math.abs(m.gain - g40)).toBeLessThanOrEqual(4 * m.std);
  }, 60_000);

  it('a repeat 5 dB stronger under the louder passages is not print-through, and says why', async () => {
    const r = await analyseEcho(new MemorySource([programme(g40, g40 * Math.pow(10, 5 / 20))], fs));
    const pt = r.printThrough;
    console.info(`fading repeat: ${JSON.stringify({ d: pt.delaySeconds, db: pt.levelDb, c: pt.confidence, middle: pt.detail?.middle, reason: pt.reason })}`);
    expect(pt.present).toBe(false);
    expect(pt.reason).toMatch(/louder passages/);
    // The quiet passages alone still read the copy's lag and level.
    expect(Math.abs(pt.delaySeconds! - -T)).toBeLessThanOrEqual(0.002);
    expect(Math.abs(pt.levelDb! - -40)).toBeLessThanOrEqual(1);
    const m = pt.detail!.middle!;
    expect(m.gain / pt.gain!).toBeGreaterThan(1.6);
    expect(m.gain / pt.gain!).toBeLessThan(2.0);
  }, 60_000);

  it('the rule needs both a clear difference and a large ratio', () => {
    // Source: common practice — a difference is evidence only beyond a few standard deviations.
    expect(ptMiddleDisagrees({ gain: 0.0178, std: 0.001, pairs: 100 }, 0.01)).not.toBeNull();
    expect(ptMiddleDisagrees({ gain: 0.0178, std: 0.003, pairs: 100 }, 0.01)).toBeNull(); // 2.6 σ
    expect(ptMiddleDisagrees({ gain: 0.0125, std: 0.0001, pairs: 100 }, 0.01)).toBeNull(); // ratio 1.25
    expect(ptMiddleDisagrees({ gain: -0.01, std: 0.001, pairs: 100 }, 0.01)).not.toBeNull(); // opposite sign
    expect(ptMiddleDisagrees(null, 0.01)).toBeNull();
  });
});
