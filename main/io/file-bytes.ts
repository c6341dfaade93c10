/**
 * A read-only file opened for positioned reads (fs.readSync on a file descriptor): the byte source
 * behind openAudio(). Reads return exactly the requested bytes unless the file ends first.
 */
import fs from 'node:fs';
import { BugError, InputError } from '../../dsp/errors.ts';

export class FileBytes {
  private fd: number | undefined;
  readonly size: number;

  private constructor(
    readonly path: string,
    fd: number,
    size: number,
  ) {
    this.fd = fd;
    this.size = size;
  }

  /** Opens `path` read-only. Missing files, folders and unreadable files are InputErrors. */
  static open(path: string): FileBytes {
    let fd: number;
    try {
      fd = fs.openSync(path, 'r');
    } catch (e) {
      throw new InputError(describeFsError(e, 'cannot open the file'), path);
    }
    try {
      const st = fs.fstatSync(fd);
      if (st.isDirectory()) throw new InputError('is a folder, not an audio file', path);
      if (!st.isFile()) throw new InputError('is not a regular file', path);
      return new FileBytes(path, fd, st.size);
    } catch (e) {
      fs.closeSync(fd);
      throw e;
    }
  }

  get closed(): boolean {
    return this.fd === undefined;
  }

  private handle(): number {
    if (this.fd === undefined) throw new BugError(`${this.path} has been closed`);
    return this.fd;
  }

  /** Reads up to `length` bytes at `offset` into `into` (from its start); returns the bytes read. */
  readInto(offset: number, length: number, into: Uint8Array): number {
    const fd = this.handle();
    const want = Math.max(0, Math.min(length, this.size - offset, into.length));
    let got = 0;
    while (got < want) {
      const n = fs.readSync(fd, into, got, want - got, offset + got);
      if (n === 0) break;
      got += n;
    }
    return got;
  }

  /** Reads up to `length` bytes at `offset` into a new array (shorter at the end of the file). */
  read(offset: number, length: number): Uint8Array {
    const buf = new Uint8Array(Math.max(0, Math.min(length, this.size - offset)));
    const n = this.readInto(offset, buf.length, buf);
    return n === buf.length ? buf : buf.subarray(0, n);
  }

  close(): void {
    if (this.fd !== undefined) {
      const fd = this.fd;
      this.fd = undefined;
      fs.closeSync(fd);
    }
  }
}

/** One line for a Node file-system error: "cannot open the file: no such file or folder (ENOENT)". */
export function describeFsError(e: unknown, what: string): string {
  const code = (e as { code?: string }).code;
  const reason: Record<string, string> = {
    ENOENT: 'no such file or folder',
    EACCES: 'permission denied',
    EPERM: 'operation not permitted',
    EISDIR: 'is a folder',
    ENOTDIR: 'a part of the path is not a folder',
    ENOSPC: 'no space left on the device',
    EROFS: 'read-only file system',
    EMFILE: 'too many open files',
  };
  return code ? `${what}: ${reason[code] ?? (e as Error).message} (${code})` : `${what}: ${(e as Error).message}`;
}
