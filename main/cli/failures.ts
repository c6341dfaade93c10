/** How a command's problems reach the user: held warnings, and internal errors that name the file. */

/**
 * Warnings of the command under way: printed just before its result (release), dropped when it
 * fails (drop), so a refusal is one line and not a warning or two followed by the error.
 */
export class WarningHold {
  #held: string[] | null = null;
  constructor(private readonly print: (message: string) => void) {}

  hold(): void {
    this.#held = [];
  }

  /** Keeps `message` for later; false when nothing is held (the caller prints it now). */
  add(message: string): boolean {
    if (!this.#held) return false;
    this.#held.push(message);
    return true;
  }

  release(): void {
    const held = this.#held ?? [];
    this.#held = null;
    for (const m of held) this.print(m);
  }

  drop(): void {
    this.#held = null;
  }
}

/** An unexpected failure while working on a file (a bug, not the user's input): exit 3, the file named. */
export class InternalFailure extends Error {
  override name = 'InternalFailure';
  constructor(
    readonly file: string,
    readonly failure: unknown,
  ) {
    super((failure as Error)?.message ?? String(failure));
  }
}
