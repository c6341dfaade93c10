/**
 * Reading a piecewise-linear time map (`TimeSegment[]`, what a correction does to time): input
 * seconds to output seconds and back, and the output's length. Its own module, apart from the
 * composing and carrying in timing.ts, so the editor's page draws a corrected preview on its own
 * time line without carrying the chain rules in its first script. Pure.
 */
import type { TimeSegment } from './types.ts';

/** Output seconds per input second along a segment (1 for an empty one). */
export const slope = (s: TimeSegment) => (s.inEnd > s.inStart ? (s.outEnd - s.outStart) / (s.inEnd - s.inStart) : 1);
/** Output second of input second `t` along a segment. */
export const along = (s: TimeSegment, t: number) => s.outStart + (t - s.inStart) * slope(s);

/** Output seconds of input second `t` (beyond the ends, the first or last segment continues). */
export function mapTime(segments: readonly TimeSegment[], t: number): number {
  if (segments.length === 0) return t;
  for (const s of segments) if (t >= s.inStart && t < s.inEnd) return along(s, t);
  return t < segments[0]!.inStart ? along(segments[0]!, t) : along(segments[segments.length - 1]!, t);
}

/** Input seconds that map to output second `t`, the inverse of mapTime (the first match in input order). */
export function unmapTime(segments: readonly TimeSegment[], t: number): number {
  if (segments.length === 0) return t;
  let nearest = segments[0]!, gap = Infinity;
  for (const s of segments) {
    const lo = Math.min(s.outStart, s.outEnd), hi = Math.max(s.outStart, s.outEnd);
    if (t >= lo && t <= hi) return s.outEnd === s.outStart ? s.inStart : s.inStart + ((t - s.outStart) * (s.inEnd - s.inStart)) / (s.outEnd - s.outStart);
    const g = Math.min(Math.abs(t - lo), Math.abs(t - hi));
    if (g < gap) { gap = g; nearest = s; }
  }
  const k = slope(nearest);
  return nearest.inStart + (t - nearest.outStart) / (k === 0 ? 1 : k);
}

/** Length of the output: the largest output instant. */
export function outputDuration(segments: readonly TimeSegment[]): number {
  return segments.reduce((m, s) => Math.max(m, s.outStart, s.outEnd), 0);
}
