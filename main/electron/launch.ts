/**
 * The file the desktop app was started with: a double-click on an associated file (the installer
 * registers .wav/.bwf/.rf64/.aif/.aiff/.aifc/.flac and .rwsession, electron-builder.yml), or a path
 * on the command line. Windows and Linux pass it as an argument; macOS sends an `open-file` event
 * (main.ts). Node only, no Electron, so it is tested in plain Node.
 */
import fs from 'node:fs';
import path from 'node:path';
import { AUDIO_EXTENSIONS } from '../bridge/validate.ts';
import { SESSION_EXTENSIONS } from '../../dsp/formats/file-names.ts';

export { SESSION_EXTENSIONS };

export type LaunchKind = 'audio' | 'session';

/** What a path is by its extension, or null when the app does not open it. */
export function launchKind(p: string): LaunchKind | null {
  const ext = path.extname(p).toLowerCase();
  if ((AUDIO_EXTENSIONS as readonly string[]).includes(ext)) return 'audio';
  if ((SESSION_EXTENSIONS as readonly string[]).includes(ext)) return 'session';
  return null;
}

/**
 * The first argument that names an existing file the app opens. `argv` is process.argv: the
 * packaged app's is [exe, …args]; in development (`electron .`) it is [electron, appDir, …args].
 */
export function launchPath(argv: readonly string[], isPackaged: boolean, cwd = process.cwd()): string | null {
  for (const a of argv.slice(isPackaged ? 1 : 2)) {
    if (a.startsWith('-')) continue;
    const p = path.resolve(cwd, a);
    if (launchKind(p) && fs.statSync(p, { throwIfNoEntry: false })?.isFile()) return p;
  }
  return null;
}
