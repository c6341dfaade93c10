/** What each key of the editor does (the table the shortcut list shows is lib/shortcuts.ts). */
import type { Editor } from '../state/editor.svelte.ts';

/** Whether a modal dialog is open (components/dialog-shell.svelte marks it aria-modal): the keys then stay quiet. */
const dialogOpen = () => document.querySelector('[aria-modal="true"]') !== null;

/** Moves the play position to `t`, keeping it in view. */
function moveHead(ed: Editor, t: number): void {
  const tl = ed.timeline;
  tl.playhead = Math.max(0, Math.min(tl.duration, t));
  if (tl.playhead < tl.start || tl.playhead > tl.end) tl.centre(tl.playhead);
  if (ed.player.playing) { ed.player.stop(); ed.player.play(); }
}

export function shortcut(e: KeyboardEvent, ed: Editor): void {
  const t = e.target as HTMLElement | null;
  if (t && (t.tagName === 'INPUT' || t.tagName === 'SELECT' || t.tagName === 'TEXTAREA')) return;
  if (e.key === '?' ) { ed.shortcutsOpen = !ed.shortcutsOpen; e.preventDefault(); return; }
  if (dialogOpen()) return;
  const tl = ed.timeline;
  const mod = e.ctrlKey || e.metaKey;
  const k = e.key.length === 1 ? e.key.toLowerCase() : e.key;
  let handled = true;
  if (mod && k === 'z') (e.shiftKey ? ed.steps.redo : ed.steps.undo)();
  else if (mod && k === 'y') ed.steps.redo();
  else if (mod && k === 'o') void ed.pickFile();
  else if (mod && k === 's') void ed.saveSession();
  else if (mod && k === 'a') { if (tl.duration > 0) tl.select(0, tl.duration); }
  else if (mod) handled = false;
  else if (k === ' ') ed.player.toggle();
  else if (k === 'b') ed.player.swap();
  else if (k === 'l') ed.player.loop = !ed.player.loop;
  else if (k === '+' || k === '=') tl.zoom(0.5);
  else if (k === '-' || k === '_') tl.zoom(2);
  else if (k === '0') tl.show({ start: 0, end: tl.duration });
  else if ((k === 'ArrowUp' || k === 'ArrowDown') && e.shiftKey) ed.zoomAmplitude(k === 'ArrowUp' ? 2 : 0.5);
  else if ((k === 'ArrowLeft' || k === 'ArrowRight') && e.shiftKey) {
    const d = k === 'ArrowLeft' ? -1 : 1;
    const sel = tl.selection;
    // The end away from the play position moves; a new selection starts at the play position.
    const anchor = sel ? (Math.abs(sel.start - tl.playhead) < 1e-6 ? sel.start : sel.end === tl.playhead ? sel.end : sel.start) : tl.playhead;
    const free = sel ? (anchor === sel.start ? sel.end : sel.start) : tl.playhead;
    tl.select(anchor, Math.max(0, Math.min(tl.duration, free + d)));
  }
  else if (k === 'ArrowLeft' || k === 'ArrowRight') moveHead(ed, tl.playhead + (k === 'ArrowLeft' ? -1 : 1) * (e.altKey ? 0.01 : 1));
  else if (k === 'Home') moveHead(ed, tl.selection?.start ?? 0);
  else if (k === 'End') moveHead(ed, tl.selection?.end ?? tl.duration);
  else if (k === 'PageUp') tl.scroll(-tl.span / 2);
  else if (k === 'PageDown') tl.scroll(tl.span / 2);
  else if (k === 'i') tl.select(tl.playhead, tl.selection && tl.selection.end > tl.playhead ? tl.selection.end : tl.duration);
  else if (k === 'o') tl.select(tl.selection && tl.selection.start < tl.playhead ? tl.selection.start : 0, tl.playhead);
  else if (k === 'Escape') tl.selection = null;
  else if (k === 'm') ed.addMarker();
  else if (k === '[') ed.jumpNext(-1);
  else if (k === ']') ed.jumpNext(1);
  else if (k === 'r') { if (ed.ready) void ed.preview(); }
  else if (k === 'c') { if (ed.ready) { ed.compareOpen = true; void ed.compare(); } }
  else if (k === 'e') { if (ed.ready) ed.exportOpen = true; }
  else handled = false;
  if (handled) e.preventDefault();
}
