/**
 * The main process's file table: open sources (read-only handles), exports in progress (written
 * to a temporary file beside the target and moved into place at the end) and the session paths
 * the user opened. Node only; Electron's dialogs stay in main.ts. The source is never written:
 * an export whose target resolves to an open source file is refused.
 */
import fs from 'node:fs';
import path from 'node:path';
import { randomBytes } from 'node:crypto';
import type { ExportDone, ExportTarget, OpenedFile } from '../bridge/contract.ts';

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

export class SourceRefusedError extends Error {
  override name = 'SourceRefusedError';
}

interface OpenSource { path: string; fh: fs.promises.FileHandle; size: number; isDemo: boolean }
interface OpenExport { target: string; temp: string; fh: fs.promises.FileHandle; written: number }

export class FileTable {
  #sources = new Map<string, OpenSource>();
  #exports = new Map<string, OpenExport>();
  /** Paths named in sessions the user opened: the only ones reopenSource may open without a dialog. */
  readonly sessionPaths = new Set<string>();

  async open(filePath: string, isDemo = false): Promise<OpenedFile> {
    const real = canonical(filePath);
    const fh = await fs.promises.open(real, 'r');
    const { size } = await fh.stat();
    const handle = id('f');
    this.#sources.set(handle, { path: real, fh, size, isDemo });
    return { handle, name: path.basename(real), path: real, sizeBytes: size, isDemo };
  }

  async read(handle: string, offset: number, length: number): Promise<Uint8Array> {
    const s = this.#sources.get(handle);
    if (!s) throw new Error(`no open file ${handle}`);
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
    if (!s) throw new Error(`no open file ${handle}`);
    return s.path;
  }

  /** Throws SourceRefusedError when `target` is any open source recording. */
  refuseSources(target: string): void {
    const t = canonical(target);
    for (const s of this.#sources.values()) {
      if (s.path === t) throw new SourceRefusedError(`${path.basename(t)} is the source recording: originals are never overwritten; choose another name`);
    }
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
    if (!x) throw new Error(`no export ${handle}`);
    if (atOffset !== null && atOffset + bytes.length > x.written) throw new Error('a patch must fall inside what was already written');
    const at = atOffset ?? x.written;
    let done = 0;
    while (done < bytes.length) done += (await x.fh.write(bytes, done, bytes.length - done, at + done)).bytesWritten;
    if (atOffset === null) x.written += bytes.length;
  }

  async finish(handle: string): Promise<ExportDone> {
    const x = this.#exports.get(handle);
    if (!x) throw new Error(`no export ${handle}`);
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
}
