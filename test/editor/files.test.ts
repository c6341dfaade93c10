/** The Electron main process's file table: the source is never overwritten, exports land whole. */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { FileTable, SourceRefusedError } from '../../main/electron/files.ts';

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-files-'));
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

describe('FileTable', () => {
  it('refuses to export onto the open source, by any spelling of its path', async () => {
    const src = path.join(dir, 'reel-14.wav');
    fs.writeFileSync(src, Buffer.from('RIFF-original'));
    fs.symlinkSync(src, path.join(dir, 'link.wav'));
    const t = new FileTable();
    const f = await t.open(src);
    for (const p of [src, path.join(dir, '.', 'reel-14.wav'), path.join(dir, 'sub', '..', 'reel-14.wav'), path.join(dir, 'link.wav')]) {
      await expect(t.beginExport(p), p).rejects.toThrow(SourceRefusedError);
    }
    expect(fs.readFileSync(src, 'utf8')).toBe('RIFF-original');
    expect(new TextDecoder().decode(await t.read(f.handle, 5, 100))).toBe('original');
    await t.close(f.handle);
  });

  it('writes to a temporary file, patches the header, and moves it into place only at the end', async () => {
    const t = new FileTable();
    const target = path.join(dir, 'out.wav');
    const x = await t.beginExport(target);
    await t.write(x.handle, new Uint8Array([0, 0, 0, 0]), null);
    await t.write(x.handle, new Uint8Array([5, 6, 7]), null);
    expect(fs.existsSync(target)).toBe(false);
    await t.write(x.handle, new Uint8Array([1, 2]), 1);
    await expect(t.write(x.handle, new Uint8Array([9, 9]), 6)).rejects.toThrow(/inside what was already written/);
    const done = await t.finish(x.handle);
    expect(done.bytes).toBe(7);
    expect([...fs.readFileSync(target)]).toEqual([0, 1, 2, 0, 5, 6, 7]);
    expect(fs.readdirSync(dir).filter((n) => n.endsWith('.partial'))).toEqual([]);
  });

  it('removes the temporary file when an export is abandoned', async () => {
    const t = new FileTable();
    const x = await t.beginExport(path.join(dir, 'gone.wav'));
    await t.write(x.handle, new Uint8Array(10), null);
    await t.abort(x.handle);
    expect(fs.readdirSync(dir).filter((n) => n.includes('gone'))).toEqual([]);
  });

  it('lets reopenSource open only paths named in a session the user opened', () => {
    const t = new FileTable();
    const p = path.join(dir, 'reel-14.wav');
    expect(t.isSessionSource(p)).toBe(false);
    t.allowSessionSource(JSON.stringify({ source: { path: p } }));
    t.allowSessionSource('not json');
    t.allowSessionSource(JSON.stringify({ source: { path: 'relative.wav' } }));
    expect(t.isSessionSource(p)).toBe(true);
    expect(t.sessionPaths.size).toBe(1);
  });
});
