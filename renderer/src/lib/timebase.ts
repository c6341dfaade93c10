/**
 * The two time lines of the editor. The original recording has its own; a corrected preview that
 * changes length (a varispeed, a stretch) has its own too, so the whole result can be seen and
 * heard. They are linked by the chain's time map (dsp/ops/timing.ts): the same programme moment
 * is at t on the original and at toCorrected(t) on the corrected time line. A preview of part of a
 * long recording starts at its region's start on both. Pure.
 */
import { mapTime, outputDuration, unmapTime } from '../../../dsp/ops/time-map.ts';
import type { TimeSegment } from '../../../dsp/ops/types.ts';

export interface Placement {
  /** Where the preview starts, in seconds of the original (and of the corrected time line). */
  readonly offsetSeconds: number;
  /** Original seconds (absolute) → seconds of the preview from its start. */
  readonly segments: readonly TimeSegment[];
}

export const toCorrected = (p: Placement, originalSeconds: number) => p.offsetSeconds + mapTime(p.segments, originalSeconds);
export const toOriginal = (p: Placement, correctedSeconds: number) => unmapTime(p.segments, correctedSeconds - p.offsetSeconds);
/** End of the preview on the corrected time line. */
export const correctedEnd = (p: Placement) => p.offsetSeconds + outputDuration(p.segments);

/** Whether the preview keeps every moment where it was (then both time lines are one). */
export function keepsTime(p: Placement): boolean {
  return p.segments.every((s) => Math.abs(s.inStart - (p.offsetSeconds + s.outStart)) < 1e-7 && Math.abs(s.inEnd - (p.offsetSeconds + s.outEnd)) < 1e-7);
}

/** A linear piece of what a view shows: view seconds [viewStart, viewEnd] show source seconds [srcStart, srcEnd]. */
export interface Piece {
  readonly viewStart: number;
  readonly viewEnd: number;
  readonly srcStart: number;
  readonly srcEnd: number;
}

/**
 * How a view on one time line shows the other version: 'corrected' pieces say where the
 * corrected preview is seen on the original time line, 'original' where the original is seen on
 * the corrected one. Null when the two time lines are one.
 */
export function piecesFor(p: Placement, show: 'original' | 'corrected'): Piece[] | null {
  if (keepsTime(p)) return null;
  return p.segments.map((s) => {
    const o0 = p.offsetSeconds + s.outStart, o1 = p.offsetSeconds + s.outEnd;
    if (show === 'corrected') return { viewStart: s.inStart, viewEnd: s.inEnd, srcStart: o0, srcEnd: o1 };
    // Seen on the corrected line: view in increasing order, the source running as it must.
    return o1 >= o0 ? { viewStart: o0, viewEnd: o1, srcStart: s.inStart, srcEnd: s.inEnd } : { viewStart: o1, viewEnd: o0, srcStart: s.inEnd, srcEnd: s.inStart };
  });
}

/** Source seconds at view second t (null when no piece shows it). */
export function srcAt(pieces: readonly Piece[], t: number): number | null {
  for (const q of pieces) {
    if (t >= q.viewStart && t <= q.viewEnd && q.viewEnd > q.viewStart) return q.srcStart + ((t - q.viewStart) * (q.srcEnd - q.srcStart)) / (q.viewEnd - q.viewStart);
  }
  return null;
}

/** View seconds where source second t is shown (null when no piece shows it). */
export function viewAt(pieces: readonly Piece[], t: number): number | null {
  for (const q of pieces) {
    const lo = Math.min(q.srcStart, q.srcEnd), hi = Math.max(q.srcStart, q.srcEnd);
    if (t >= lo && t <= hi && hi > lo) return q.viewStart + ((t - q.srcStart) * (q.viewEnd - q.viewStart)) / (q.srcEnd - q.srcStart);
  }
  return null;
}

/**
 * Where source seconds [s0, s1] are shown on the view, through the piece that holds s0 (extended
 * past its end with its own scale), as [v0, v1] increasing; null when no forward piece holds s0.
 */
export function viewSpan(pieces: readonly Piece[], s0: number, s1: number): [number, number] | null {
  for (const q of pieces) {
    const k = (q.srcEnd - q.srcStart) / Math.max(1e-12, q.viewEnd - q.viewStart);
    if (!(k > 0) || s0 < q.srcStart - 1e-9 || s0 > q.srcEnd) continue;
    return [q.viewStart + (s0 - q.srcStart) / k, q.viewStart + (s1 - q.srcStart) / k];
  }
  return null;
}
