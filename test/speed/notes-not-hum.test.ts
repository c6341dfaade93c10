/**
 * A low note is not mains hum, and a note-like tone is not a line-up tone (analyses issue): hum
 * persists at one level through pauses and does not start and stop with notes; a line-up tone is
 * a steady sine, alone, for seconds. Where the evidence is weak the finding says "not determined"
 * with no correction attached.
 *
 * Material (synthesised here): plucked low notes at equal-tempered pitches (A4 = 440 Hz, ISO 16)
 * — A♯1 = 58.27 Hz and C2 = 65.41 Hz, 8 harmonics at 1/h, exponential decay — after half a second
 * of silence, as a sampled piano or bass note starts; with and without real 50 Hz hum under them.
 */
import { describe, expect, it } from 'vitest';
import { MemorySource } from '../../dsp/source.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { speed } from '../../dsp/ops/speed.ts';
import { add, hum, noteHz, pinkNoise, rmsFor } from './synth.ts';

const fs = 44100;

/** Notes (MIDI numbers) struck at the given times, each decaying with time constant tau. */
function notes(n: number, strikes: { at: number; midi: number; tau: number }[], amp = 0.3): Float64Array {
  const x = new Float64Array(n);
  for (const s of strikes) {
    const f = noteHz(s.midi);
    for (let i = Math.round(s.at * fs); i < n; i++) {
      const t = i / fs - s.at;
      const env = amp * Math.exp(-t / s.tau) * Math.min(1, t / 0.005);
      let v = 0;
      for (let h = 1; h <= 8; h++) v += Math.sin(2 * Math.PI * h * f * t + h) / h;
      x[i]! += env * v;
    }
  }
  return x;
}

const run = (x: Float64Array) => speed.run(new MemorySource([x], fs), validateParams(speed.params, {}), silentContext);
const facts = (x: Float64Array) => ({ sampleRateHz: fs, channelCount: 1, frames: x.length });

describe('low notes are not hum', () => {
  for (const [name, midi] of [['A♯1 (58.27 Hz)', 34], ['C2 (65.41 Hz)', 36]] as const) {
    it(`a sustained ${name} note: no speed claimed, no correction offered`, async () => {
      const n = 6 * fs;
      const x = add(notes(n, [{ at: 0.5, midi, tau: 2.5 }]), pinkNoise(n, 3, rmsFor(-80)));
      const r = await run(x);
      // Common practice: a line that starts with the note and decays is the note.
      expect(r.method === 'hum' && Math.abs(r.factor - 1) > 0.001).toBe(false);
      expect(r.method === 'tone').toBe(false);
      const f = speed.findings!(r, facts(x));
      expect(f.some((x) => x.suggestion !== undefined)).toBe(false);
      if (r.method === null) expect(f[0]!.title).toBe('Speed not determined');
    });
  }

  it('repeated bass notes (−30 dBFS) with pauses over real 50 Hz hum at −50 dBFS: the hum is read, not the notes', async () => {
    const n = 10 * fs;
    const strikes = [0.5, 2.5, 4.5, 6.5, 8.5].map((at, k) => ({ at, midi: k % 2 ? 34 : 36, tau: 0.6 }));
    const x = add(notes(n, strikes, 0.03), hum(n, fs, 50, -50, (t) => t), pinkNoise(n, 4, rmsFor(-80)));
    const r = await run(x);
    // Source: the hum is synthesised at exactly 50 Hz.
    expect(r.method).toBe('hum');
    expect(Math.abs(r.factor - 1)).toBeLessThan(5e-4);
    expect(speed.findings!(r, facts(x))[0]!.title).toBe('Right speed');
  });
});
