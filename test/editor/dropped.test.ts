/**
 * A file dropped on the editor's window (issue 13). The desktop shell gets only the path the
 * preload reads from the File (webUtils.getPathForFile) and checks the file itself before
 * opening it: a recording must pass the check a session's recording passes (audio extension,
 * regular file, WAV/AIFF/FLAC header), a session must be a Reelwright session file; anything else
 * is refused with one line and nothing is opened. The web bridge decides by the name alone (the
 * workers then read the header, as for a picked file). No Electron runtime here: FileTable is
 * the main process's file code in plain Node.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { FileTable, SESSION_KIND, audioFileProblem, sessionFileProblem } from '../../main/electron/files.ts';
import { SESSION_KIND as EDITOR_SESSION_KIND, sessionText } from '../../renderer/src/lib/session-file.ts';
import { createWebBridge } from '../../renderer/src/bridge/web-bridge.ts';
// @ts-expect-error plain JavaScript build helper without type declarations
import { buildShell } from '../../bin/build-editor.mjs';
import { FIXTURES } from '../io/helpers.ts';

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-dropped-'));
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));
const write = (name: string, data: string | Uint8Array) => { const p = path.join(dir, name); fs.writeFileSync(p, data); return p; };
const session = sessionText({ name: 'reel.wav', path: path.join(FIXTURES, 'wave_16bit.wav'), sizeBytes: 1, audioMd5: '0'.repeat(32) }, []);

describe('a file dropped on the desktop window', () => {
  it('opens a recording that passes the audio check, read-only, as a picked file is', async () => {
    const t = new FileTable();
    for (const name of ['wave_16bit.wav', 'aifc_16bit.aiff', 'flac_16bit.flac']) {
      const p = path.join(FIXTURES, name);
      const d = await t.openDropped(p);
      expect(d.kind, name).toBe('audio');
      if (d.kind !== 'audio') continue;
      expect(d.file.name).toBe(name);
      expect(d.file.path).toBe(fs.realpathSync(p));
      expect(d.file.sizeBytes).toBe(fs.statSync(p).size);
      expect(d.file.isDemo).toBe(false);
      // Its first bytes come back through the handle, as for any open source.
      const head = await t.read(d.file.handle, 0, 4);
      expect(Buffer.from(head).toString('latin1')).toBe(fs.readFileSync(p).subarray(0, 4).toString('latin1'));
      await t.close(d.file.handle);
    }
  });

  it('refuses anything that is not a recording or a session, with one line, and opens nothing', async () => {
    const t = new FileTable();
    const disguised = write('disguised.wav', 'not audio at all, only a name');
    fs.mkdirSync(path.join(dir, 'folder.flac'));
    const notes = write('notes.txt', 'private notes');
    const cases: [string, string][] = [
      [disguised, 'disguised.wav is not a WAV, AIFF or FLAC file'],
      [path.join(dir, 'folder.flac'), 'folder.flac is not a regular file'],
      [path.join(dir, 'gone.wav'), 'gone.wav cannot be read (ENOENT)'],
      [notes, 'notes.txt is neither a recording (.wav, .wave, .bwf, .rf64, .bw64, .aif, .aiff, .aifc, .flac) nor a session (.rwsession, .json)'],
      ['relative.wav', 'relative.wav was not given with its full path'],
    ];
    for (const [p, reason] of cases) {
      expect(await t.openDropped(p), p).toEqual({ kind: 'refused', name: path.basename(p), reason });
    }
    // Nothing was opened: no handle reads.
    await expect(t.read('f-0', 0, 1)).rejects.toThrow(/no open file/);
    // The same check as the recording a session names (one function for both).
    expect(await audioFileProblem(disguised)).toBe(await t.sessionSourceProblem(disguised));
  });

  it('opens a session file and lets its recording be reopened; any other JSON is not read out', async () => {
    // The main process recognises the editor's own session files by the same kind.
    expect(SESSION_KIND).toBe(EDITOR_SESSION_KIND);
    const t = new FileTable();
    const p = write('reel.rwsession', session);
    const d = await t.openDropped(p);
    expect(d).toEqual({ kind: 'session', session: { name: 'reel.rwsession', path: p, text: session } });
    // As with Open session: the recording it names may now be reopened (after the user agrees).
    expect(t.isSessionSource(path.join(FIXTURES, 'wave_16bit.wav'))).toBe(true);

    const other = write('settings.json', JSON.stringify({ token: 'secret' }));
    const broken = write('broken.rwsession', '{ not json');
    const big = write('big.json', JSON.stringify({ kind: SESSION_KIND, pad: 'x'.repeat(8 * 1024 * 1024) }));
    expect(await t.openDropped(other)).toEqual({ kind: 'refused', name: 'settings.json', reason: 'settings.json is not a Reelwright session file' });
    expect(await t.openDropped(broken)).toEqual({ kind: 'refused', name: 'broken.rwsession', reason: 'broken.rwsession is not a session file (not JSON)' });
    expect((await t.openDropped(big)).kind).toBe('refused');
    expect(await sessionFileProblem(big)).toMatch(/^big\.json is too large to be a session/);
    expect(await sessionFileProblem(path.join(dir, 'gone.rwsession'))).toBe('gone.rwsession cannot be read (ENOENT)');
  });

  it('the preload reads the dropped File’s path with webUtils.getPathForFile and sends only that', async () => {
    const out = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-shell-'));
    try {
      await (buildShell as (dir: string) => Promise<string>)(out);
      const preload = fs.readFileSync(path.join(out, 'preload.cjs'), 'utf8');
      expect(preload).toContain('getPathForFile');
      expect(preload).toContain('channelOf("dropped")');
      const main = fs.readFileSync(path.join(out, 'main.cjs'), 'utf8');
      expect(main).toContain('openDropped');
    } finally {
      fs.rmSync(out, { recursive: true, force: true });
    }
  });
});

describe('a file dropped on the web page', () => {
  it('is a recording or a session by its name, like the desktop window; anything else is refused', async () => {
    const b = createWebBridge();
    const wav = new File([fs.readFileSync(path.join(FIXTURES, 'wave_16bit.wav'))], 'take.WAV');
    const a = await b.dropped(wav);
    expect(a.kind).toBe('audio');
    if (a.kind === 'audio') {
      expect(a.file).toMatchObject({ name: 'take.WAV', path: null, sizeBytes: wav.size, isDemo: false });
      expect(b.blobOf(a.file.handle)).toBe(wav);
    }
    expect(await b.dropped(new File([session], 'reel.rwsession'))).toEqual({ kind: 'session', session: { name: 'reel.rwsession', path: null, text: session } });
    expect(await b.dropped(new File(['x'], 'notes.txt'))).toEqual({
      kind: 'refused', name: 'notes.txt',
      reason: 'notes.txt is neither a recording (.wav, .wave, .bwf, .rf64, .bw64, .aif, .aiff, .aifc, .flac) nor a session (.rwsession, .json)',
    });
  });
});
