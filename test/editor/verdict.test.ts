/**
 * Re-measurement verdicts (renderer/src/lib/verdict.ts) and the programme a reflection fix is
 * judged on (renderer/src/worker/programme.ts). The words are checked on results shaped like the
 * analyses' own; the real analyses on the demo are checked in chain-order.test.ts.
 */
import { describe, expect, it } from 'vitest';
import type { EchoAnalysis } from '../../dsp/echo/detect.ts';
import type { SpeedResult } from '../../dsp/speed/estimate.ts';
import type { AzimuthResult } from '../../dsp/ops/azimuth.ts';
import { MemorySource } from '../../dsp/source.ts';
import {
  azimuthVerdict, durationVerdict, reflectionVerdict, reversedVerdicts, speedVerdict, verdictText,
} from '../../renderer/src/lib/verdict.ts';
import { programmeSpan } from '../../renderer/src/worker/programme.ts';
import { voiceLike } from '../helpers/voice.ts';

const speed = (factor: number, method: SpeedResult['method'] = 'hum'): SpeedResult => ({ factor, method, uncertaintyPercent: 0.002 } as SpeedResult);
const echo = (present: boolean, delaySeconds: number | null, gain: number | null): EchoAnalysis =>
  ({ reflection: { present, delaySeconds, gain }, printThrough: { present: false, delaySeconds: null, levelDb: null, gain: null } } as unknown as EchoAnalysis);
const az = (delaySeconds: number): AzimuthResult => ({ delaySeconds, coherence: 0.99 } as AzimuthResult);

describe('verdicts in words', () => {
  it('speed: fixed when the recorded speed is back within max(2σ, 0.1 %) (the "right speed" finding\'s own rule)', () => {
    expect(verdictText(speedVerdict(speed(1.0293), speed(1.00002), { undo: true }))).toBe('Speed factor 1.0293 → 1.0000: fixed');
    expect(speedVerdict(speed(1.0293), speed(1.0293), { undo: true }).outcome).toBe('not fixed');
    expect(speedVerdict(speed(1.0293), speed(1.06), { undo: true }).outcome).toBe('made worse');
    expect(speedVerdict(speed(1.0), speed(0.5), { undo: false, factor: 0.5 }).outcome).toBe('as set');
    expect(speedVerdict(speed(1.0, null), speed(1.0), { undo: true }).outcome).toBe('not determined');
  });

  it('a reflection: gone is fixed; a cancellation at the wrong delay is made worse; half left is partly fixed', () => {
    const before = echo(true, 0.012047, 0.41);
    expect(verdictText(reflectionVerdict(before, echo(false, 0.01204, -0.014), echo(false, null, null)))).toBe('Reflection at 12.05 ms, gain 0.41 → none found: fixed');
    // After a varispeed the reflection is at 12.40 ms; cancelling at 12.05 leaves it and adds an inverted copy.
    const moved = reflectionVerdict(echo(true, 0.0124, 0.41), echo(false, 0.012047, -0.33), echo(true, 0.0241, 0.08));
    expect(moved.outcome).toBe('made worse');
    expect(verdictText(moved)).toBe('Reflection at 12.40 ms, gain 0.41 → inverted copy at 12.05 ms, gain -0.33: made worse');
    expect(reflectionVerdict(before, echo(true, 0.012047, 0.2), echo(true, 0.012047, 0.2)).outcome).toBe('partly fixed');
    expect(reflectionVerdict(before, echo(true, 0.012047, 0.4), echo(true, 0.012047, 0.4)).outcome).toBe('not fixed');
    // A new strong reflection elsewhere is not "fixed", even when the old one is gone.
    expect(reflectionVerdict(before, echo(false, 0.012, 0.01), echo(true, 0.03, 0.3)).outcome).toBe('made worse');
    expect(reflectionVerdict(echo(false, null, null), null, echo(false, null, null)).outcome).toBe('not determined');
  });

  it('inter-channel delay: fixed within 2 µs (the "channels aligned" finding\'s rule)', () => {
    expect(verdictText(azimuthVerdict(az(12e-6), az(0.02e-6)))).toBe('Inter-channel delay 12.0 µs → 0.0 µs: fixed');
    expect(azimuthVerdict(az(12e-6), az(24e-6)).outcome).toBe('made worse');
    expect(azimuthVerdict(az(12e-6), az(11e-6)).outcome).toBe('not fixed');
  });

  it('reversal score per channel, and a length change as set', () => {
    const ch = (channel: number, score: number) => ({ channel, score, likely: score >= 0.3, activeSeconds: 10, abruptStarts: 1, abruptStops: 9 });
    const rows = reversedVerdicts({ channels: [ch(1, -0.5), ch(2, 0.62)] }, { channels: [ch(1, -0.5), ch(2, -0.62)] }, [2], true);
    expect(rows.map(verdictText)).toEqual(['Channel 2 reversal score 0.62 (plays backwards) → -0.62 (plays forwards): fixed']);
    expect(durationVerdict(24, 24 * 1.0293, 1.0293).outcome).toBe('as set');
    expect(durationVerdict(24, 30, 1.0293).outcome).toBe('not as set');
  });
});

describe('the programme apart from a line-up tone', () => {
  it('leaves out a steady reference-level tone at the head and keeps pauses with hum in the programme', async () => {
    // Common practice (REAL-MATERIAL.md): a line-up tone is alone, steady for seconds, at a reference level.
    const rate = 48000;
    const v = voiceLike({ sampleRateHz: rate, seconds: 10, seed: 5 });
    const n = 14 * rate, x = new Float64Array(n);
    const tone = 10 ** (-12 / 20);
    for (let i = 0; i < n; i++) {
      const t = i / rate;
      if (t >= 0.5 && t < 3.5) x[i] = tone * Math.sin(2 * Math.PI * 1000 * t);
      x[i] = x[i]! + 10 ** (-52 / 20) * Math.sin(2 * Math.PI * 60 * t); // hum through everything, pauses included
    }
    x.set(v.x.map((s, i) => s + x[4 * rate + i]!), 4 * rate);
    const span = await programmeSpan(new MemorySource([x], rate));
    expect(span.tones.length).toBe(1);
    expect(span.tones[0]![0] / rate).toBeGreaterThan(0.1);
    expect(span.tones[0]![0] / rate).toBeLessThan(0.5);
    expect(span.startFrame / rate).toBeGreaterThan(3.5);
    expect(span.startFrame / rate).toBeLessThan(4);
    expect(span.endFrame).toBe(n);
    // Voice alone: nothing is left out.
    const plain = await programmeSpan(new MemorySource([v.x], rate));
    expect(plain.tones).toEqual([]);
    expect([plain.startFrame, plain.endFrame]).toEqual([0, v.x.length]);
  });
});

describe('re-measuring a reverse with the real detector', () => {
  it('judges the reversed channel by its reversal score, forwards after the fix', async () => {
    // Plucked strings decay slowly after a sharp attack (Fletcher & Rossing §2–3): forwards in
    // channel 1, backwards in channel 2 (a quarter-track reel transferred in one pass).
    const { pluckPhrase } = await import('../helpers/plucks.ts');
    const { remeasure } = await import('../../renderer/src/worker/jobs.ts');
    const rate = 48000;
    const fwd = pluckPhrase(rate, 8);
    const src = new MemorySource([fwd, Float64Array.from(fwd).reverse()], rate);
    const [m] = await remeasure(src, 0, [{ op: 'reverse', params: { channels: [2] }, suggestedBy: 'reversed' }], { progress() {}, warn() {}, signal: { aborted: false } });
    expect(m!.rows.length).toBe(1);
    expect(m!.rows[0]!.outcome).toBe('fixed');
    expect(verdictText(m!.rows[0]!)).toMatch(/^Channel 2 reversal score 0\.\d\d \(plays backwards\) → -0\.\d\d \(plays forwards\): fixed$/);
    expect(m!.material).toMatch(/^channel 2/);
  });
});
