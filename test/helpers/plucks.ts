/**
 * Plucked and percussive test material.
 *
 * Plucks: the Karplus–Strong string (Karplus & Strong 1983, "Digital synthesis of plucked-string
 * and drum timbres", Computer Music Journal 7(2):43–55): a burst of noise P samples long circulates
 * through a delay line with a two-point average, y[n] = x[n] + ρ·½(y[n−P] + y[n−P−1]); the pitch is
 * fs/(P + ½) and every note starts at once and decays exponentially — the shape of a natural
 * percussive sound.
 */
import { seededRng } from './rng.ts';

export interface PluckNote {
  /** Start, seconds. */
  readonly atSeconds: number;
  readonly frequencyHz: number;
  /** Peak level, linear. */
  readonly amplitude: number;
}

/** Sums Karplus–Strong notes into a mono signal of the given length. */
export function plucks(notes: readonly PluckNote[], sampleRateHz: number, durationSeconds: number, seed = 7, decay = 0.996): Float64Array {
  const n = Math.round(durationSeconds * sampleRateHz);
  const out = new Float64Array(n);
  const rng = seededRng(seed);
  for (const note of notes) {
    const p = Math.max(2, Math.round(sampleRateHz / note.frequencyHz - 0.5));
    const start = Math.round(note.atSeconds * sampleRateHz);
    const y = new Float64Array(n - start);
    let peak = 0;
    for (let i = 0; i < y.length; i++) {
      const x = i < p ? rng() * 2 - 1 : 0;
      const a = i >= p ? y[i - p]! : 0;
      const b = i >= p + 1 ? y[i - p - 1]! : 0;
      y[i] = x + decay * 0.5 * (a + b);
      peak = Math.max(peak, Math.abs(y[i]!));
    }
    const g = note.amplitude / (peak || 1);
    for (let i = 0; i < y.length; i++) out[start + i]! += g * y[i]!;
  }
  return out;
}

/** A simple plucked phrase: `count` notes on a pentatonic scale, `spacingSeconds` apart. */
export function pluckPhrase(sampleRateHz: number, durationSeconds: number, spacingSeconds = 0.3, seed = 11): Float64Array {
  const scale = [196, 220, 247, 294, 330, 392, 440];
  const rng = seededRng(seed);
  const notes: PluckNote[] = [];
  for (let t = 0.1; t < durationSeconds - 0.2; t += spacingSeconds * (0.8 + 0.4 * rng())) {
    notes.push({ atSeconds: t, frequencyHz: scale[Math.floor(rng() * scale.length)]!, amplitude: 0.25 + 0.2 * rng() });
  }
  return plucks(notes, sampleRateHz, durationSeconds, seed);
}

/** A train of single-sample clicks; returns the signal and the click positions (samples). */
export function clickTrain(sampleRateHz: number, durationSeconds: number, firstSeconds: number, spacingSeconds: number, amplitude = 0.8): { signal: Float64Array; clicks: number[] } {
  const n = Math.round(durationSeconds * sampleRateHz);
  const signal = new Float64Array(n);
  const clicks: number[] = [];
  for (let t = firstSeconds; t < durationSeconds - spacingSeconds / 2; t += spacingSeconds) {
    const i = Math.round(t * sampleRateHz);
    signal[i] = amplitude;
    clicks.push(i);
  }
  return { signal, clicks };
}
