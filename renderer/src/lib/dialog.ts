/**
 * Modal dialogs: focus moves into the dialog when it opens (to `[data-autofocus]`, else the first
 * control), Tab stays inside it, Escape closes it, and focus returns where it was afterwards.
 * components/dialog-shell.svelte, the frame of every dialog, applies it.
 */
const FOCUSABLE = 'button:not([disabled]), input:not([disabled]), select:not([disabled]), textarea:not([disabled]), [tabindex]:not([tabindex="-1"])';

export function modal(node: HTMLElement, onEscape: () => void) {
  let escape = onEscape;
  const before = document.activeElement as HTMLElement | null;
  const first = () => (node.querySelector<HTMLElement>('[data-autofocus]') ?? node.querySelector<HTMLElement>(FOCUSABLE));
  queueMicrotask(() => first()?.focus());
  const key = (e: KeyboardEvent) => {
    if (e.key === 'Escape') { e.preventDefault(); e.stopPropagation(); escape(); return; }
    if (e.key !== 'Tab') return;
    const all = [...node.querySelectorAll<HTMLElement>(FOCUSABLE)].filter((x) => x.offsetParent !== null);
    if (all.length === 0) { e.preventDefault(); return; }
    const i = all.indexOf(document.activeElement as HTMLElement);
    if (e.shiftKey && i <= 0) { e.preventDefault(); all.at(-1)!.focus(); }
    else if (!e.shiftKey && i === all.length - 1) { e.preventDefault(); all[0]!.focus(); }
  };
  // Keys inside the dialog never reach the editor's shortcuts.
  const stop = (e: KeyboardEvent) => e.stopPropagation();
  node.addEventListener('keydown', key);
  node.addEventListener('keyup', stop);
  return {
    update(f: () => void) { escape = f; },
    destroy() {
      node.removeEventListener('keydown', key);
      node.removeEventListener('keyup', stop);
      if (before && document.contains(before)) before.focus();
    },
  };
}
