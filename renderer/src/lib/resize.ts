/**
 * Calls `onSize` with a key that changes whenever the element's CSS width or height changes
 * (width·10000 + height), so a canvas effect can depend on its size. Returns the teardown.
 */
export function watchSize(el: HTMLElement, onSize: (key: number) => void): () => void {
  const ro = new ResizeObserver(() => onSize(el.clientWidth * 10000 + el.clientHeight));
  ro.observe(el);
  return () => ro.disconnect();
}
