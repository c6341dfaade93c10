/** Wheel zoom/scroll, drag-to-select and click-to-place on a view of the timeline. */
import type { Timeline } from '../state/timeline.svelte.ts';
import { watchSize } from './resize.ts';

export function attachGestures(el: HTMLElement, tl: Timeline): () => void {
  let downX: number | null = null;
  let downT = 0;
  const timeAt = (clientX: number) => {
    const r = el.getBoundingClientRect();
    return tl.start + ((clientX - r.left) / r.width) * tl.span;
  };
  const onWheel = (e: WheelEvent) => {
    e.preventDefault();
    if (e.shiftKey || Math.abs(e.deltaX) > Math.abs(e.deltaY)) {
      const d = e.shiftKey ? e.deltaY : e.deltaX;
      tl.scroll((d / el.clientWidth) * tl.span);
    } else {
      tl.zoom(Math.exp(e.deltaY * 0.0025), timeAt(e.clientX));
    }
  };
  const onDown = (e: PointerEvent) => {
    if (e.button !== 0) return;
    el.setPointerCapture(e.pointerId);
    downX = e.clientX;
    downT = timeAt(e.clientX);
  };
  const onMove = (e: PointerEvent) => {
    if (downX === null || Math.abs(e.clientX - downX) < 3) return;
    tl.select(downT, timeAt(e.clientX));
  };
  const onUp = (e: PointerEvent) => {
    if (downX === null) return;
    if (Math.abs(e.clientX - downX) < 3) {
      tl.playhead = Math.max(0, Math.min(tl.duration, downT));
      if (!e.shiftKey) tl.selection = null;
    }
    downX = null;
  };
  el.addEventListener('wheel', onWheel, { passive: false });
  el.addEventListener('pointerdown', onDown);
  el.addEventListener('pointermove', onMove);
  el.addEventListener('pointerup', onUp);
  return () => {
    el.removeEventListener('wheel', onWheel);
    el.removeEventListener('pointerdown', onDown);
    el.removeEventListener('pointermove', onMove);
    el.removeEventListener('pointerup', onUp);
  };
}

/** Selection and playhead over a view. */
export function drawMarks(ctx: CanvasRenderingContext2D, tl: Timeline, w: number, h: number, accent: string, head: string): void {
  const spp = tl.span / w;
  if (tl.selection) {
    const x0 = (tl.selection.start - tl.start) / spp, x1 = (tl.selection.end - tl.start) / spp;
    ctx.fillStyle = 'rgba(240,190,99,0.16)';
    ctx.fillRect(x0, 0, x1 - x0, h);
    ctx.fillStyle = accent;
    ctx.fillRect(x0, 0, 1, h);
    ctx.fillRect(x1, 0, 1, h);
  }
  const xp = (tl.playhead - tl.start) / spp;
  if (xp >= 0 && xp <= w) { ctx.fillStyle = head; ctx.fillRect(xp, 0, 1.5, h); }
}

/**
 * A canvas that shows the timeline: reports its size (lib/resize.ts) and takes the gestures
 * above; returns one function that undoes both.
 */
export function attachTimelineCanvas(el: HTMLElement, tl: Timeline, onSize: (key: number) => void): () => void {
  const unwatch = watchSize(el, onSize);
  const off = attachGestures(el, tl);
  return () => {
    unwatch();
    off();
  };
}
