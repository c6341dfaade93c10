/**
 * Long passes over a file are chains of promises that never give the event loop a turn (reads are
 * synchronous), so Ctrl+C and SIGTERM handlers would wait until the pass ends. The readers and the
 * writer call breathe() once per block: at most every 50 ms it waits for one macrotask, letting
 * signals (and timers) through at no measurable cost.
 */
let last = 0;

export function breathe(): Promise<void> | undefined {
  const now = performance.now();
  if (now - last < 50) return undefined;
  last = now;
  return new Promise<void>((resolve) => setImmediate(resolve));
}
