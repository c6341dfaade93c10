/**
 * Ctrl+C (SIGINT) and SIGTERM while a correction writes its output. Outside a write nothing needs
 * cleaning up, so no handler is installed and the signal stops the process at once, as it
 * normally does (the shell reports 130 or 143). During a write (whileWriting) the signal aborts the
 * operation through its context and the writer: the writer stops at its next block (it yields to
 * the event loop between blocks), deletes its temporary file, and the command exits 130 or 143
 * with one line saying so. A second signal, or a write that does not stop within five seconds,
 * deletes the temporary files synchronously and exits at once.
 */
import { removeActiveTemporaryFiles } from '../io/writer.ts';

const controller = new AbortController();
let code: number | undefined;

/** Aborted when SIGINT or SIGTERM arrives during a write (passed to the operation and the writer). */
export const interruption: AbortSignal = controller.signal;

/** 130 after SIGINT, 143 after SIGTERM (128 + signal number), undefined before either. */
export function interruptExitCode(): number | undefined {
  return code;
}

function onSignal(signal: 'SIGINT' | 'SIGTERM', exit: number): void {
  if (code !== undefined) {
    removeActiveTemporaryFiles();
    process.exit(code);
  }
  code = exit;
  controller.abort();
  setTimeout(() => {
    removeActiveTemporaryFiles();
    process.stderr.write(`\nreelwright: interrupted (${signal}); the unfinished output was removed\n`);
    process.exit(exit);
  }, 5000).unref();
}

const onInt = () => onSignal('SIGINT', 130);
const onTerm = () => onSignal('SIGTERM', 143);
let writes = 0;

/** Runs `write` with the signal handlers installed (removed again afterwards). */
export async function whileWriting<T>(write: () => Promise<T>): Promise<T> {
  if (writes++ === 0) {
    process.on('SIGINT', onInt);
    process.on('SIGTERM', onTerm);
  }
  try {
    return await write();
  } finally {
    if (--writes === 0) {
      process.off('SIGINT', onInt);
      process.off('SIGTERM', onTerm);
    }
  }
}
