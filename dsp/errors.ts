/**
 * Errors. `ParameterError` and `InputError` are expected failures caused by the user (bad
 * parameters, unreadable input): the command line prints their one-line message and exits 2.
 * `BugError` marks a broken internal invariant and is never thrown for user input.
 */
export class ParameterError extends Error {
  override name = 'ParameterError';
}

/** Unreadable or unsupported input. `where` names the file and, when known, the byte offset. */
export class InputError extends Error {
  override name = 'InputError';
  constructor(
    message: string,
    readonly file?: string,
    readonly byteOffset?: number,
  ) {
    super(message);
  }
  /** One line: "FILE: at byte N: problem". */
  oneLine(): string {
    const where = [this.file, this.byteOffset !== undefined ? `at byte ${this.byteOffset}` : undefined]
      .filter((s) => s !== undefined)
      .join(': ');
    return where ? `${where}: ${this.message}` : this.message;
  }
}

/** The analysis found nothing it can stand behind (e.g. no hum or tone to measure). */
export class NotFoundError extends Error {
  override name = 'NotFoundError';
}

export class BugError extends Error {
  override name = 'BugError';
}

export class CancelledError extends Error {
  override name = 'CancelledError';
}

export function assertParam(condition: unknown, message: string): asserts condition {
  if (!condition) throw new ParameterError(message);
}
