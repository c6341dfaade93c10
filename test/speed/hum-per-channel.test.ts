/**
 * Mains hum is the same line in each channel (it comes from the electrics); a note whose
 * time-mirror sits in the other channel (one channel reversed) can hold one level in the mono mix
 * while it decays in one channel and rises in the other. The hum search checks the fundamental in
 * each channel separately (dsp/speed/hum.ts, channelContradicts).
 *
 * Material (synthesised here): a harmonic line at F2 = 87.31 Hz (A4 = 440 Hz, ISO 16), fading
 * linearly out in the left channel and in, in phase, in the right (its mono mix is one steady
 * line, −40 dBFS); against it the same line at one level in both channels (what hum is).
 */
import { describe, expect, it } from 'vitest';
import { MemorySource } from '../../dsp/source.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { speed } from '../../dsp/ops/speed.ts';
import { hum, noteHz, pinkNoise, rmsFor } from './synth.ts';

const fs = 44100;
const n = 8 * fs;
const run = (l: Float64Array, r: Float64Array) => speed.run(new MemorySource([l, r], fs), validateParams(speed.params, {}), silentContext);
const line = hum(n, fs, noteHz(41), -40, (t) => t);

describe('hum is the same line in each channel', () => {
  it('a line fading out in one channel and in in the other (steady in the mono mix): no hum claimed', async () => {
    const l = new Float64Array(n), r = new Float64Array(n);
    const nl = pinkNoise(n, 5, rmsFor(-70)), nr = pinkNoise(n, 6, rmsFor(-70));
    for (let i = 0; i < n; i++) {
      const u = i / (n - 1);
      l[i] = 2 * (1 - u) * line[i]! + nl[i]!;
      r[i] = 2 * u * line[i]! + nr[i]!;
    }
    const res = await run(l, r);
    // Common practice: a line that changes level by 20 dB and more within a channel is not mains
    // hum. Source: the line is at 440·2^(−28/12) Hz (ISO 16), i.e. ×1.7462 of 50 Hz, ×1.4551 of 60.
    const f2 = noteHz(41);
    const readAsTheLine = res.candidates.some((c) => c.method === 'hum' && c.confidence >= 0.3 && [50, 60].some((m) => Math.abs(c.factor / (f2 / m) - 1) < 0.003));
    expect(readAsTheLine).toBe(false);
  });

  it('the same line at one level in both channels, independent noise in each: read as hum at F2/50 Hz', async () => {
    const l = new Float64Array(n), r = new Float64Array(n);
    const nl = pinkNoise(n, 5, rmsFor(-70)), nr = pinkNoise(n, 6, rmsFor(-70));
    for (let i = 0; i < n; i++) {
      l[i] = line[i]! + nl[i]!;
      r[i] = line[i]! + nr[i]!;
    }
    const res = await run(l, r);
    expect(res.method).toBe('hum');
    // Source: the line is synthesised at 440·2^(−28/12) Hz (ISO 16); as 50 Hz hum that is ×1.7462.
    expect(Math.abs(res.factor / (noteHz(41) / 50) - 1)).toBeLessThan(0.0005);
  });
});
