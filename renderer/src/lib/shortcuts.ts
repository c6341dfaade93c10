/** The editor's keys: one table, read by the handler and by the shortcut list (? shows it). */
import type { Editor } from '../state/editor.svelte.ts';
import { dialogOpen } from './dialog.ts';

export interface Shortcut {
  /** As shown in the list. */
  readonly keys: string;
  readonly does: string;
  readonly group: 'Listening' | 'Moving' | 'Selecting' | 'Working' | 'Files';
}

export const SHORTCUTS: readonly Shortcut[] = [
  { keys: 'Space', does: 'Play / stop', group: 'Listening' },
  { keys: 'B', does: 'Listen to the original or the corrected version', group: 'Listening' },
  { keys: 'L', does: 'Loop the selection', group: 'Listening' },
  { keys: '← / →', does: 'Play position 1 s back / on', group: 'Moving' },
  { keys: 'Alt + ← / →', does: 'Play position 10 ms back / on', group: 'Moving' },
  { keys: 'Home / End', does: 'Play position to the start (of the selection) / the end', group: 'Moving' },
  { keys: 'Page Up / Page Down', does: 'Scroll the view by half its width', group: 'Moving' },
  { keys: '+ / −', does: 'Zoom in / out', group: 'Moving' },
  { keys: '0', does: 'Show the whole recording', group: 'Moving' },
  { keys: 'Shift + ↑ / ↓', does: 'Waveform amplitude larger / smaller', group: 'Moving' },
  { keys: 'M', does: 'Marker at the play position', group: 'Moving' },
  { keys: '[ / ]', does: 'Previous / next marker', group: 'Moving' },
  { keys: 'Shift + ← / →', does: 'Stretch the selection from the play position by 1 s', group: 'Selecting' },
  { keys: 'I / O', does: 'Selection starts / ends at the play position', group: 'Selecting' },
  { keys: 'Ctrl + A', does: 'Select the whole recording', group: 'Selecting' },
  { keys: 'Esc', does: 'Clear the selection (or close a dialog)', group: 'Selecting' },
  { keys: 'R', does: 'Render the preview', group: 'Working' },
  { keys: 'C', does: 'Compare before and after', group: 'Working' },
  { keys: 'E', does: 'Export the corrected recording', group: 'Working' },
  { keys: 'Ctrl + Z / Ctrl + Shift + Z', does: 'Undo / redo a change to the corrections', group: 'Working' },
  { keys: 'Ctrl + O', does: 'Open a recording', group: 'Files' },
  { keys: 'Ctrl + S', does: 'Save the session', group: 'Files' },
  { keys: '?', does: 'This list', group: 'Files' },
];

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
