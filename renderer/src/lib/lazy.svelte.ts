/**
 * A component the first paint does not need (a dialog, a panel opened on demand, a step's form),
 * kept out of the page's entry script and fetched as its own chunk the first time it is wanted.
 * `{#if X.wanted(open) && X.current}<X.current />{/if}`: asks for the chunk (once, shared by every
 * place that mounts the component) when `open` first turns true, and keeps the component mounted
 * once it has arrived, as it was when it sat in the entry script. `warm()` asks ahead, when the
 * page is idle, so a first open rarely waits.
 */
import type { Component } from 'svelte';

export interface Lazy<T> {
  /** The component once loaded, otherwise null. */
  readonly current: T | null;
  /** Loaded already, or start loading now when `open`. */
  wanted(open: boolean): boolean;
  /** Start loading now without waiting for a first use. */
  warm(): void;
}

export function lazy<T extends Component<any>>(load: () => Promise<{ default: T }>): Lazy<T> {
  let current = $state.raw<T | null>(null);
  let asked = false;
  const warm = () => {
    if (asked) return;
    asked = true;
    load().then(
      (m) => (current = m.default),
      (e: unknown) => {
        // The chunk did not arrive (the page's files replaced while it is open): ask again next time.
        asked = false;
        console.error('Reelwright: a part of the editor did not load', e);
      },
    );
  };
  return {
    get current() {
      return current;
    },
    wanted(open) {
      if (open && !current) warm();
      return current !== null;
    },
    warm,
  };
}

/** Warm these once the page is idle after its first paint. */
export function warmWhenIdle(parts: readonly Pick<Lazy<unknown>, 'warm'>[]): void {
  const go = () => parts.forEach((p) => p.warm());
  if (typeof requestIdleCallback === 'function') requestIdleCallback(go, { timeout: 3000 });
  else setTimeout(go, 1500);
}
