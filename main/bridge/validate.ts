/**
 * Validation of every bridge call's arguments, shared by the Electron main process (which must
 * not trust the renderer) and the tests. Pure: no Node, no Electron. Each validator takes the raw
 * argument list and returns it typed, or throws BridgeArgumentError with a one-line message.
 */
import type { BridgeCall, BridgeChannel, BridgeIpcArgs } from './contract.ts';
import { AUDIO_EXTENSIONS, fileNameProblem, notOpenable, openableKind } from '../../dsp/formats/file-names.ts';

export { AUDIO_EXTENSIONS } from '../../dsp/formats/file-names.ts';

export class BridgeArgumentError extends Error {
  override name = 'BridgeArgumentError';
}

/** Largest single read or write over the bridge (bytes). */
export const MAX_CHUNK_BYTES = 64 * 1024 * 1024;
/** Largest session file (characters). */
export const MAX_SESSION_CHARS = 8 * 1024 * 1024;
/** Largest file offset accepted (2^53 − 1 is exact in a double; RF64 files stay far below). */
const MAX_OFFSET = Number.MAX_SAFE_INTEGER;

const fail = (call: string, why: string): never => {
  throw new BridgeArgumentError(`${call}: ${why}`);
};

function count(call: string, args: readonly unknown[], n: number): void {
  if (!Array.isArray(args)) fail(call, 'arguments must be a list');
  if (args.length !== n) fail(call, `expected ${n} argument${n === 1 ? '' : 's'}, got ${args.length}`);
}

function handle(call: string, v: unknown, prefix: 'f' | 'x'): string {
  if (typeof v !== 'string' || !new RegExp(`^${prefix}-[a-z0-9]{1,40}$`).test(v)) {
    fail(call, `not a ${prefix === 'f' ? 'file' : 'export'} handle: ${JSON.stringify(v)?.slice(0, 60)}`);
  }
  return v as string;
}

function integer(call: string, what: string, v: unknown, min: number, max: number): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < min || v > max) {
    fail(call, `${what} must be a whole number from ${min} to ${max}, got ${String(v).slice(0, 40)}`);
  }
  return v as number;
}

/**
 * A bare file name: no folders, no control or reserved characters, not hidden, ≤ 200 characters,
 * with one of the allowed extensions.
 */
export function fileName(call: string, v: unknown, extensions: readonly string[]): string {
  const why = fileNameProblem(v, extensions);
  if (why !== undefined) fail(call, why);
  return v as string;
}

function bytes(call: string, v: unknown): ArrayBuffer {
  let out: ArrayBuffer | undefined;
  if (v instanceof ArrayBuffer) out = v;
  else if (ArrayBuffer.isView(v)) {
    const view = new Uint8Array(v.buffer, v.byteOffset, v.byteLength);
    out = view.slice().buffer;
  } else fail(call, 'bytes must be an ArrayBuffer');
  if (out!.byteLength > MAX_CHUNK_BYTES) fail(call, `at most ${MAX_CHUNK_BYTES} bytes per write`);
  return out!;
}

function text(call: string, what: string, v: unknown, max: number): string {
  if (typeof v !== 'string') fail(call, `${what} must be text`);
  if ((v as string).length > max) fail(call, `${what} is longer than ${max} characters`);
  return v as string;
}

/**
 * An absolute path the page says was dropped on the window: text without NUL of at most 4096
 * characters, absolute (a POSIX path, or a Windows drive or UNC path), whose name has a
 * recording's or a session's extension. The main process then checks the file itself.
 */
export function droppedPath(call: string, v: unknown): string {
  if (typeof v !== 'string' || v.length === 0 || v.length > 4096 || v.includes('\u0000')) fail(call, 'path must be a non-empty path of at most 4096 characters');
  const p = v as string;
  if (!(p.startsWith('/') || /^[A-Za-z]:[\\/]/.test(p) || p.startsWith('\\\\'))) fail(call, `not an absolute path: ${JSON.stringify(p).slice(0, 80)}`);
  const name = p.slice(Math.max(p.lastIndexOf('/'), p.lastIndexOf('\\')) + 1);
  if (!openableKind(name)) fail(call, notOpenable(name || p));
  return p;
}

type Validators = { readonly [K in BridgeCall]: (args: readonly unknown[]) => BridgeIpcArgs<K> };

/** One validator per bridge call; the mapped type makes a missing one a compile error. */
export const validators: Validators = {
  openDemo: (a) => (count('openDemo', a, 0), []),
  pickAudioFile: (a) => (count('pickAudioFile', a, 0), []),
  reopenSource: (a) => {
    count('reopenSource', a, 2);
    const p = a[0];
    if (p !== null && (typeof p !== 'string' || p.length === 0 || p.length > 4096 || p.includes('\u0000'))) {
      fail('reopenSource', 'path must be null or a non-empty path of at most 4096 characters');
    }
    return [p as string | null, fileName('reopenSource', a[1], AUDIO_EXTENSIONS)];
  },
  readBytes: (a) => {
    count('readBytes', a, 3);
    return [
      handle('readBytes', a[0], 'f'),
      integer('readBytes', 'offset', a[1], 0, MAX_OFFSET),
      integer('readBytes', 'length', a[2], 1, MAX_CHUNK_BYTES),
    ];
  },
  closeFile: (a) => (count('closeFile', a, 1), [handle('closeFile', a[0], 'f')]),
  beginExport: (a) => {
    count('beginExport', a, 2);
    return [fileName('beginExport', a[0], ['.wav']), handle('beginExport', a[1], 'f')];
  },
  writeExport: (a) => {
    count('writeExport', a, 3);
    const at = a[2] === null ? null : integer('writeExport', 'atOffset', a[2], 0, MAX_OFFSET);
    return [handle('writeExport', a[0], 'x'), bytes('writeExport', a[1]), at];
  },
  finishExport: (a) => (count('finishExport', a, 1), [handle('finishExport', a[0], 'x')]),
  abortExport: (a) => (count('abortExport', a, 1), [handle('abortExport', a[0], 'x')]),
  saveSession: (a) => {
    count('saveSession', a, 2);
    return [text('saveSession', 'session', a[0], MAX_SESSION_CHARS), fileName('saveSession', a[1], ['.rwsession', '.json'])];
  },
  openSession: (a) => (count('openSession', a, 0), []),
  launched: (a) => (count('launched', a, 0), []),
  dropped: (a) => (count('dropped', a, 1), [droppedPath('dropped', a[0])]),
};


export const bridgeCalls = Object.keys(validators) as BridgeCall[];

export const channelOf = <K extends BridgeCall>(call: K): BridgeChannel<K> => `reelwright:${call}`;

/** Validates the arguments of a named call; unknown names are refused. */
export function validateCall(call: string, args: readonly unknown[]): { call: BridgeCall; args: unknown[] } {
  if (!Object.prototype.hasOwnProperty.call(validators, call)) throw new BridgeArgumentError(`unknown call ${JSON.stringify(call).slice(0, 60)}`);
  const k = call as BridgeCall;
  return { call: k, args: (validators[k] as (a: readonly unknown[]) => unknown[])(args) };
}

/** A page the main process serves the editor from: a scheme and host ("reelwright:", "editor"). */
export interface TrustedPlace {
  readonly protocol: string;
  readonly host: string;
}

/**
 * IPC is accepted only from a main frame showing the editor's own page: the app's private scheme
 * (reelwright://editor/…) or, while developing, the local Vite server. Anything else — another
 * scheme, another host, a malformed URL — is refused.
 */
export function isTrustedSenderUrl(url: string, trusted: readonly TrustedPlace[]): boolean {
  let u: URL;
  try {
    u = new URL(url);
  } catch {
    return false;
  }
  return trusted.some((t) => u.protocol === t.protocol && u.host === t.host && u.username === '' && u.password === '');
}
