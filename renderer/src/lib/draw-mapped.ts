/**
 * Drawing one version on the other's time line (lib/timebase.ts): each linear piece of the time map
 * is drawn clipped to where it shows, with the time scale of that piece. Reversed pieces (a reverse
 * step) are left empty: an envelope drawn backwards would not be what is heard there.
 */
import type { PeakPyramid } from './peaks.ts';
import { drawEnvelope } from './draw.ts';
import type { Piece } from './timebase.ts';

export function drawEnvelopeVia(
  ctx: CanvasRenderingContext2D, p: PeakPyramid, channel: number, offsetSeconds: number, pieces: readonly Piece[] | null,
  t0: number, secondsPerPx: number, w: number, top: number, height: number, color: string,
): boolean {
  if (!pieces) return drawEnvelope(ctx, p, channel, offsetSeconds, t0, secondsPerPx, w, top, height, color);
  let ok = true;
  for (const q of pieces) {
    const span = q.viewEnd - q.viewStart, k = (q.srcEnd - q.srcStart) / (span || 1);
    if (!(span > 0) || !(k > 0)) continue;
    const x0 = Math.max(0, Math.floor((q.viewStart - t0) / secondsPerPx)), x1 = Math.min(w, Math.ceil((q.viewEnd - t0) / secondsPerPx));
    if (x1 <= x0) continue;
    ctx.save();
    ctx.beginPath();
    ctx.rect(x0, top, x1 - x0, height);
    ctx.clip();
    ok = drawEnvelope(ctx, p, channel, offsetSeconds, q.srcStart + k * (t0 - q.viewStart), k * secondsPerPx, w, top, height, color) && ok;
    ctx.restore();
  }
  return ok;
}
