/** The file the desktop app was started with (file associations, electron-builder.yml). */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { launchKind, launchPath } from '../../main/electron/launch.ts';

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'rw-launch-'));
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));
const touch = (name: string) => (fs.writeFileSync(path.join(dir, name), ''), path.join(dir, name));

describe('launch file', () => {
  it('knows the associated types by extension, in any case', () => {
    for (const n of ['a.wav', 'a.BWF', 'a.rf64', 'a.aif', 'a.AIFF', 'a.aifc', 'a.flac']) expect(launchKind(n), n).toBe('audio');
    for (const n of ['take.rwsession', 'take.session.json']) expect(launchKind(n), n).toBe('session');
    for (const n of ['a.mp3', 'notes.txt', 'noext']) expect(launchKind(n), n).toBeNull();
  });

  it('takes the first existing file argument: after the executable when packaged, after the app folder in development', () => {
    const wav = touch('reel 7.wav'), ses = touch('reel.rwsession');
    touch('readme.txt');
    expect(launchPath(['/opt/Reelwright/reelwright', '--no-sandbox', wav], true)).toBe(wav);
    expect(launchPath(['/usr/bin/electron', '/src/reelwright', ses], false)).toBe(ses);
    // Development: the app folder itself is not a launch file, even if it looked like one.
    expect(launchPath(['/usr/bin/electron', wav], false)).toBeNull();
    expect(launchPath(['exe', path.join(dir, 'missing.wav'), path.join(dir, 'readme.txt')], true)).toBeNull();
    expect(launchPath(['exe', 'reel 7.wav'], true, dir)).toBe(wav);
    expect(launchPath(['exe', dir], true)).toBeNull();
  });
});
