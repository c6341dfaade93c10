/**
 * The main process's file table: open sources (read-only handles), exports in progress (written
 * to a temporary file beside the target and moved into place at the end), sessions (written the
 * same way) and the session paths the user opened. Node only; Electron's dialogs stay in main.ts.
 * The source is never written: an export or a session whose target is an open source file — by
 * any spelling of its path, a symbolic link, or a hard link (same device and inode) — is refused.
 */
import fs from 'node:fs';
import path from 'node:path';
import { randomBytes } from 'node:crypto';
import type { Dropped, ExportDone, ExportTarget, OpenedFile, OpenedText } from '../bridge/contract.ts';
import { AUDIO_EXTENSIONS } from '../bridge/validate.ts';
import { InputError, ParameterError } from '../../dsp/errors.ts';
import { notOpenable, openableKind } from '../../dsp/formats/file-names.ts';

/** Largest session file read (bytes). */
export const MAX_SESSION_BYTES = 8 * 1024 * 1024;
/** What a session file says it is (renderer/src/lib/session-file.ts SESSION_KIND writes the same). */
export const SESSION_KIND = 'reelwright-session';

const id = (prefix: 'f' | 'x') => `${prefix}-${randomBytes(9).toString('hex')}`;

/** Resolves symbolic links and case so two spellings of one file compare equal. */
function canonical(p: string): string {
  const abs = path.resolve(p);
  try {
    return fs.realpathSync.native(abs);
  } catch {
    // A file that does not exist yet: canonicalise its folder.
    try { return path.join(fs.realpathSync.native(path.dirname(abs)), path.basename(abs)); } catch { return abs; }
  }
}

/** Refusing to write onto a source recording: a bad target, so a ParameterError (exit 2 on the command line). */
export class SourceRefusedError extends ParameterError {
  override name = 'SourceRefusedError';
}

interface OpenSource { path: string; fh: fs.promises.FileHandle; size: number; isDemo: boolean; dev: number; ino: number }

/**
 * Whether the first bytes are those of a file Reelwright reads: RIFF/RF64/BW64 + WAVE,
 * FORM + AIFF/AIFC, fLaC (after an optional ID3v2 tag).
 */
export function looksLikeAudio(head: Uint8Array): boolean {
  const id = (at: number) => String.fromCharCode(...head.subarray(at, at + 4));
  if (head.length >= 12 && ['RIFF', 'RF64', 'BW64'].includes(id(0)) && id(8) === 'WAVE') return true;
  if (head.length >= 12 && id(0) === 'FORM' && (id(8) === 'AIFF' || id(8) === 'AIFC')) return true;
  if (head.length >= 4 && id(0) === 'fLaC') return true;
  if (head.length >= 10 && id(0).startsWith('ID3')) {
    const size = ((head[6]! & 0x7f) << 21) | ((head[7]! & 0x7f) << 14) | ((head[8]! & 0x7f) << 7) | (head[9]! & 0x7f);
    const at = 10 + size + (head[5]! & 0x10 ? 10 : 0);
    return head.length >= at + 4 && id(at) === 'fLaC';
  }
  return false;
}

/** Writes `text` to `target` through a temporary file in the same folder, flushed and renamed. */
async function writeWhole(target: string, text: string): Promise<void> {
  const temp = path.join(path.dirname(target), `.${path.basename(target)}.${randomBytes(4).toString('hex')}.partial`);
  const fh = await fs.promises.open(temp, 'wx');
  try {
    await fh.writeFile(text, 'utf8');
    await fh.sync();
    await fh.close();
    await fs.promises.rename(temp, target);
  } catch (e) {
    await fh.close().catch(() => {});
    await fs.promises.rm(temp, { force: true });
    throw e;
  }
}
interface OpenExport { target: string; temp: string; fh: fs.promises.FileHandle; written: number }

export class FileTable {
  #sources = new Map<string, OpenSource>();
  #exports = new Map<string, OpenExport>();
  /** Paths named in sessions the user opened: the only ones reopenSource may open without a dialog. */
  readonly sessionPaths = new Set<string>();

  async open(filePath: string, isDemo = false): Promise<OpenedFile> {
    const real = canonical(filePath);
    const fh = await fs.promises.open(real, 'r');
    const { size, dev, ino } = await fh.stat();
    const handle = id('f');
    this.#sources.set(handle, { path: real, fh, size, isDemo, dev, ino });
    return { handle, name: path.basename(real), path: real, sizeBytes: size, isDemo };
  }

  async read(handle: string, offset: number, length: number): Promise<Uint8Array> {
    const s = this.#sources.get(handle);
    if (!s) throw new ParameterError(`no open file ${handle}`);
    const n = Math.max(0, Math.min(length, s.size - offset));
    const buf = Buffer.alloc(n);
    let got = 0;
    while (got < n) {
      const { bytesRead } = await s.fh.read(buf, got, n - got, offset + got);
      if (bytesRead === 0) break;
      got += bytesRead;
    }
    return got === n ? buf : buf.subarray(0, got);
  }

  async close(handle: string): Promise<void> {
    const s = this.#sources.get(handle);
    this.#sources.delete(handle);
    await s?.fh.close();
  }

  sourcePath(handle: string): string {
    const s = this.#sources.get(handle);
    if (!s) throw new ParameterError(`no open file ${handle}`);
    return s.path;
  }

  /**
   * Throws SourceRefusedError when `target` is any open source recording: the same canonical
   * path, or (when it exists) the same device and inode, which catches hard links.
   */
  refuseSources(target: string): void {
    const t = canonical(target);
    let st: fs.Stats | undefined;
    try {
      st = fs.statSync(t);
    } catch {
      // Does not exist yet: only the path can match.
    }
    for (const s of this.#sources.values()) {
      if (s.path === t || (st && st.dev === s.dev && st.ino === s.ino)) {
        throw new SourceRefusedError(`${path.basename(t)} is the source recording: originals are never overwritten; choose another name`);
      }
    }
  }

  /** Saves a session file: never onto an open source, and through a temporary file renamed into place. */
  async writeSession(target: string, text: string): Promise<{ name: string; path: string }> {
    this.refuseSources(target);
    const real = canonical(target);
    await writeWhole(real, text);
    return { name: path.basename(real), path: real };
  }

  async beginExport(target: string): Promise<ExportTarget> {
    this.refuseSources(target);
    const real = canonical(target);
    const temp = path.join(path.dirname(real), `.${path.basename(real)}.${randomBytes(4).toString('hex')}.partial`);
    const fh = await fs.promises.open(temp, 'wx');
    const handle = id('x');
    this.#exports.set(handle, { target: real, temp, fh, written: 0 });
    return { handle, name: path.basename(real), path: real };
  }

  async write(handle: string, bytes: Uint8Array, atOffset: number | null): Promise<void> {
    const x = this.#exports.get(handle);
    if (!x) throw new ParameterError(`no export ${handle}`);
    if (atOffset !== null && atOffset + bytes.length > x.written) throw new ParameterError('a patch must fall inside what was already written');
    const at = atOffset ?? x.written;
    let done = 0;
    while (done < bytes.length) done += (await x.fh.write(bytes, done, bytes.length - done, at + done)).bytesWritten;
    if (atOffset === null) x.written += bytes.length;
  }

  async finish(handle: string): Promise<ExportDone> {
    const x = this.#exports.get(handle);
    if (!x) throw new ParameterError(`no export ${handle}`);
    this.#exports.delete(handle);
    await x.fh.sync();
    await x.fh.close();
    this.refuseSources(x.target);
    await fs.promises.rename(x.temp, x.target);
    return { name: path.basename(x.target), path: x.target, bytes: x.written };
  }

  async abort(handle: string): Promise<void> {
    const x = this.#exports.get(handle);
    this.#exports.delete(handle);
    if (!x) return;
    await x.fh.close().catch(() => {});
    await fs.promises.rm(x.temp, { force: true });
  }

  /** Remembers the source path of a session the user opened (so reopenSource may open it). */
  allowSessionSource(text: string): void {
    try {
      const p = (JSON.parse(text) as { source?: { path?: unknown } }).source?.path;
      if (typeof p === 'string' && path.isAbsolute(p)) this.sessionPaths.add(canonical(p));
    } catch {
      // Not JSON: the editor reports it.
    }
  }

  isSessionSource(p: string): boolean {
    return this.sessionPaths.has(canonical(p));
  }

  /**
   * Why the recording a session names cannot be opened without the user choosing it (null when
   * it can, after the user confirms): an absolute path to an audio file (audioFileProblem).
   */
  async sessionSourceProblem(p: string): Promise<string | null> {
    if (!path.isAbsolute(p)) return 'the session names a relative path';
    return audioFileProblem(p);
  }

  /** Reads a session file the user chose; its recording may then be reopened (allowSessionSource). */
  async readSession(p: string): Promise<OpenedText> {
    if ((await fs.promises.stat(p)).size > MAX_SESSION_BYTES) throw new InputError('that file is too large to be a session', p);
    const text = await fs.promises.readFile(p, 'utf8');
    this.allowSessionSource(text);
    return { name: path.basename(p), path: p, text };
  }

  /**
   * A file dropped on the window, by the path the preload read from it: a recording is opened
   * when it passes the same check as a recording a session names (audioFileProblem); a session
   * when it is a regular file of at most 8 MiB that says it is a Reelwright session. Anything
   * else is refused with the reason, and nothing is opened.
   */
  async openDropped(p: string): Promise<Dropped> {
    const name = path.basename(p);
    const refused = (reason: string): Dropped => ({ kind: 'refused', name, reason });
    if (!path.isAbsolute(p)) return refused(`${name} was not given with its full path`);
    const kind = openableKind(name);
    if (!kind) return refused(notOpenable(name));
    if (kind === 'audio') {
      const problem = await audioFileProblem(p);
      return problem ? refused(problem) : { kind, file: await this.open(p) };
    }
    const problem = await sessionFileProblem(p);
    return problem ? refused(problem) : { kind, session: await this.readSession(p) };
  }

}

/** Why `p` is not a regular file (null when it is one), or why it cannot be read. */
async function regularFileProblem(p: string): Promise<string | null> {
  try {
    return (await fs.promises.stat(p)).isFile() ? null : `${path.basename(p)} is not a regular file`;
  } catch (e) {
    return `${path.basename(p)} cannot be read (${(e as { code?: string }).code ?? (e as Error).message})`;
  }
}

/**
 * Why `p` is not an audio file Reelwright opens (null when it is): it must have an audio
 * extension, be a regular file and start with a WAV, AIFF or FLAC header. The check for the
 * recording a session names and for a dropped recording.
 */
export async function audioFileProblem(p: string): Promise<string | null> {
  if (!(AUDIO_EXTENSIONS as readonly string[]).includes(path.extname(p).toLowerCase())) {
    return `${path.basename(p)} does not have an audio file's extension (${AUDIO_EXTENSIONS.join(', ')})`;
  }
  const notFile = await regularFileProblem(p);
  if (notFile) return notFile;
  let fh: fs.promises.FileHandle | undefined;
  try {
    fh = await fs.promises.open(p, 'r');
    const head = new Uint8Array(4096);
    const { bytesRead } = await fh.read(head, 0, head.length, 0);
    if (!looksLikeAudio(head.subarray(0, bytesRead))) return `${path.basename(p)} is not a WAV, AIFF or FLAC file`;
    return null;
  } catch (e) {
    return `${path.basename(p)} cannot be read (${(e as { code?: string }).code ?? (e as Error).message})`;
  } finally {
    await fh?.close();
  }
}

/**
 * Why a dropped `p` is not a session file (null when it is): a regular file of at most 8 MiB,
 * JSON whose `kind` is a Reelwright session's. Its text goes to the page only then, so a path the
 * page names cannot read any other file.
 */
export async function sessionFileProblem(p: string): Promise<string | null> {
  const name = path.basename(p);
  const notFile = await regularFileProblem(p);
  if (notFile) return notFile;
  try {
    if ((await fs.promises.stat(p)).size > MAX_SESSION_BYTES) return `${name} is too large to be a session (over ${MAX_SESSION_BYTES} bytes)`;
    let j: unknown;
    try { j = JSON.parse(await fs.promises.readFile(p, 'utf8')); } catch (e) {
      if ((e as { code?: string }).code) throw e;
      return `${name} is not a session file (not JSON)`;
    }
    return (j as { kind?: unknown } | null)?.kind === SESSION_KIND ? null : `${name} is not a Reelwright session file`;
  } catch (e) {
    return `${name} cannot be read (${(e as { code?: string }).code ?? (e as Error).message})`;
  }
}
