/**
 * Between the stages of a long analysis (after the coarse search, between refinement passes) the
 * arrays of the stage before are garbage, but the JavaScript engine frees array memory only when
 * it next collects, which it schedules by its own heuristics: up to ~100 MB of dead arrays can
 * then sit beside the next stage's live ones. A host that can collect on demand (the command line
 * and the check processes; see main/io/reclaim.ts) registers that here, and the analyses call
 * reclaim() at their stage boundaries. Without a hook reclaim() does nothing, and results never
 * depend on it.
 */
let hook: (() => void) | null = null;

/** Registers (or, with null, removes) the host's collector. */
export function setReclaimHook(collect: (() => void) | null): void {
  hook = collect;
}

/** Asks the host to free the memory of arrays no longer referenced (a no-op without a hook). */
export function reclaim(): void {
  hook?.();
}
