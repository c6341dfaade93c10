/**
 * The desktop shell's sessions (issue 17, item 8): a session saved under a hard link to the open
 * source is refused (device + inode, not only the path); sessions are written through a temporary
 * file renamed into place; a recording a session names is opened only if it is an audio file (and
 * the shell asks the user first).
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { FileTable, looksLikeAudio, SourceRefusedError } from '../../main/electron/files.ts';
// @ts-expect-error plain JavaScript build helper without type declarations
import { buildShell } from '../../bin/build-editor.mjs';
import { demoPath } from '../helpers/cli.ts';
import { FIXTURES } from '../io/helpers.ts';

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-sessions-'));
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

describe('sessions in the desktop shell', () => {
  it('a session or an export under a hard link to the open source is refused; the source is unchanged', async () => {
    const src = path.join(dir, 'reel-9.wav');
    fs.copyFileSync(demoPath, src);
    const hard = path.join(dir, 'reel-9-session.json');
    fs.linkSync(src, hard);
    const before = fs.readFileSync(src);
    const t = new FileTable();
    const f = await t.open(src);
    await expect(t.writeSession(hard, '{"steps":[]}')).rejects.toThrow(SourceRefusedError);
    await expect(t.beginExport(hard)).rejects.toThrow(SourceRefusedError);
    expect(fs.readFileSync(src).equals(before)).toBe(true);
    await t.close(f.handle);
  });

  it('writes a session through a temporary file renamed into place (a new inode; nothing left over)', async () => {
    const target = path.join(dir, 'session.json');
    fs.writeFileSync(target, 'the previous session');
    const inode = fs.statSync(target).ino;
    const t = new FileTable();
    const done = await t.writeSession(target, '{"source":{"path":"/x.wav"},"steps":[]}');
    expect(done.path).toBe(fs.realpathSync(target));
    expect(fs.readFileSync(target, 'utf8')).toBe('{"source":{"path":"/x.wav"},"steps":[]}');
    // Source: rename(2) replaces the name with the new file; writing in place would keep the inode.
    expect(fs.statSync(target).ino).not.toBe(inode);
    expect(fs.readdirSync(dir).filter((n) => n.endsWith('.partial'))).toEqual([]);
  });

  it('a recording named by a session must be an audio file: extension and WAV/AIFF/FLAC header', async () => {
    const t = new FileTable();
    const notes = path.join(dir, 'notes.txt');
    fs.writeFileSync(notes, 'private notes');
    const disguised = path.join(dir, 'disguised.wav');
    fs.writeFileSync(disguised, 'not audio at all, only a name');
    const folder = path.join(dir, 'folder.wav');
    fs.mkdirSync(folder);
    expect(await t.sessionSourceProblem(notes)).toMatch(/does not have an audio file's extension/);
    expect(await t.sessionSourceProblem(disguised)).toBe('disguised.wav is not a WAV, AIFF or FLAC file');
    expect(await t.sessionSourceProblem(folder)).toBe('folder.wav is not a regular file');
    expect(await t.sessionSourceProblem(path.join(dir, 'gone.wav'))).toBe('gone.wav cannot be read (ENOENT)');
    expect(await t.sessionSourceProblem('relative.wav')).toBe('the session names a relative path');
    for (const name of ['wave_16bit.wav', 'aifc_16bit.aiff', 'aifc_sowt_16bit.aifc', 'flac_16bit.flac']) {
      expect(await t.sessionSourceProblem(path.join(FIXTURES, name)), name).toBeNull();
    }
    expect(looksLikeAudio(new Uint8Array([0x49, 0x44, 0x33, 4, 0, 0, 0, 0, 0, 2, 0, 0, ...new TextEncoder().encode('fLaC')]))).toBe(true);
  });

  it('the shell asks before opening a session’s recording and checks it first', async () => {
    const out = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-shell-'));
    try {
      await (buildShell as (dir: string) => Promise<string>)(out);
      const main = fs.readFileSync(path.join(out, 'main.cjs'), 'utf8');
      for (const must of ['showMessageBox', 'sessionSourceProblem', 'writeSession', 'Referrer-Policy']) expect(main, must).toContain(must);
    } finally {
      fs.rmSync(out, { recursive: true, force: true });
    }
  });
});
