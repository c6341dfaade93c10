/**
 * What an operation's algorithms receive from their caller: progress, warnings and a stop signal.
 * A plain shape (an AbortSignal fits `signal`), so dsp/ algorithms depend on it without reaching
 * up into dsp/ops.
 */
export interface OpContext {
  /** Fraction done 0–1 for this operation's whole run. */
  progress(fraction: number): void;
  /** A non-fatal problem worth telling the user (clamped gain, short material…). */
  warn(message: string): void;
  /** Set by the caller to stop work early (an AbortSignal fits this shape). */
  readonly signal?: { readonly aborted: boolean };
}

export const silentContext: OpContext = { progress() {}, warn() {} };
