/** Keyboard shortcuts: Space play/stop, B original ⇄ corrected, L loop, + / − zoom, 0 whole view, arrows scroll, M marker, [ / ] previous / next marker, Ctrl+Z / Ctrl+Shift+Z undo/redo, Ctrl+O open. */
import type { Editor } from '../state/editor.svelte.ts';

export function shortcut(e: KeyboardEvent, ed: Editor): void {
  const t = e.target as HTMLElement | null;
  if (t && (t.tagName === 'INPUT' || t.tagName === 'SELECT' || t.tagName === 'TEXTAREA')) return;
  const tl = ed.timeline;
  const mod = e.ctrlKey || e.metaKey;
  let handled = true;
  if (mod && e.key.toLowerCase() === 'z') (e.shiftKey ? ed.steps.redo : ed.steps.undo)();
  else if (mod && e.key.toLowerCase() === 'y') ed.steps.redo();
  else if (mod && e.key.toLowerCase() === 'o') void ed.pickFile();
  else if (mod) handled = false;
  else if (e.key === ' ') ed.player.toggle();
  else if (e.key === 'b' || e.key === 'B') ed.player.swap();
  else if (e.key === 'l' || e.key === 'L') ed.player.loop = !ed.player.loop;
  else if (e.key === '+' || e.key === '=') tl.zoom(0.5);
  else if (e.key === '-' || e.key === '_') tl.zoom(2);
  else if (e.key === '0') tl.show({ start: 0, end: tl.duration });
  else if (e.key === 'ArrowLeft') tl.scroll(-tl.span / 4);
  else if (e.key === 'ArrowRight') tl.scroll(tl.span / 4);
  else if (e.key === 'Home') tl.playhead = tl.selection?.start ?? 0;
  else if (e.key === 'm' || e.key === 'M') ed.addMarker();
  else if (e.key === '[') ed.jumpNext(-1);
  else if (e.key === ']') ed.jumpNext(1);
  else handled = false;
  if (handled) e.preventDefault();
}
