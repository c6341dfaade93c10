/**
 * Excerpts faded in and cut off, as transfers and edits begin and end (common practice: a fade-in
 * at the head of a transfer, a cut at its tail). Shared by the fade stress script
 * (test/reverse/fade-stress.ts) and its vitest slice (test/reverse/fades.test.ts).
 */
import { REVERSED_BLOCK_SECONDS } from '../../dsp/reverse/detect.ts';

/** Fade-in shapes, gain as a function of x = position ÷ fade length in [0, 1]. */
export const FADES = {
  // Source: common practice — the usual fade curves of editing: linear in amplitude, linear in dB
  // (an exponential fade), cubic, raised cosine; over the whole excerpt or over its start.
  'linear-whole': { over: 1, gain: (x: number) => x },
  'linear-0.5s': { over: 0.5, gain: (x: number) => x },
  'db-linear-40dB-whole': { over: 1, gain: (x: number) => 10 ** ((-40 * (1 - x)) / 20) },
  'db-linear-60dB-half': { over: 0.5, gain: (x: number) => 10 ** ((-60 * (1 - x)) / 20) },
  'cubic-whole': { over: 1, gain: (x: number) => x ** 3 },
  'cosine-third': { over: 1 / 3, gain: (x: number) => 0.5 - 0.5 * Math.cos(Math.PI * x) },
} as const satisfies Record<string, { over: number; gain: (x: number) => number }>;
export type FadeName = keyof typeof FADES;
export const FADE_NAMES = Object.keys(FADES) as FadeName[];

/** `over` < 1 is a share of the excerpt except for 'linear-0.5s' (half a second). */
function fadeFrames(name: FadeName, len: number, rateHz: number): number {
  if (name === 'linear-0.5s') return Math.min(len, Math.round(0.5 * rateHz));
  return Math.max(1, Math.round(FADES[name].over * len));
}

/**
 * The excerpt [at, at + len) of each channel (played backwards first when `backwards`), faded in
 * with `fade`, cut off at its end, with 0.5 s of silence either side (so that the cut is an edge).
 * Whole 10 ms blocks.
 */
export function fadedExcerpt(channels: readonly Float64Array[], rateHz: number, at: number, len: number, fade: FadeName, backwards: boolean): Float64Array[] {
  const block = Math.round(REVERSED_BLOCK_SECONDS * rateHz);
  const pad = 50 * block;
  const n = Math.floor(len / block) * block;
  const f = fadeFrames(fade, n, rateHz), g = FADES[fade].gain;
  return channels.map((c) => {
    const src = c.subarray(at, at + n);
    const y = new Float64Array(n + 2 * pad);
    for (let i = 0; i < n; i++) {
      const v = backwards ? src[n - 1 - i]! : src[i]!;
      y[pad + i] = v * (i < f ? g(i / f) : 1);
    }
    return y;
  });
}

/** Five start times spread over the clip (0, ¼, ½, ¾ and all of the room left), in frames. */
export function startFrames(totalFrames: number, len: number): number[] {
  const room = totalFrames - len;
  if (room < 0) return [];
  return [0, 0.25, 0.5, 0.75, 1].map((q) => Math.floor(q * room));
}
