/**
 * Audio file names: the one list of extensions Reelwright opens (the readers in dsp/formats and
 * main/io), used by the command line's batch check, the desktop app's dialogs and file
 * associations and the editor's file picker; and the rule for a bare file name offered to save.
 */

/** Extensions of the files the readers open: the WAV family (BWF, RF64, BW64), AIFF/AIFF-C and FLAC. */
export const AUDIO_EXTENSIONS = ['.wav', '.wave', '.bwf', '.rf64', '.bw64', '.aif', '.aiff', '.aifc', '.flac'] as const;

/** Session files: `.rwsession` (what the editor saves), and the older `.session.json`/`.json`. */
export const SESSION_EXTENSIONS = ['.rwsession', '.json'] as const;

/** What a file is by the extension of its name (any case): a recording, a session, or neither (null). */
export function openableKind(name: string): 'audio' | 'session' | null {
  const n = name.toLowerCase();
  if (AUDIO_EXTENSIONS.some((e) => n.endsWith(e))) return 'audio';
  if (SESSION_EXTENSIONS.some((e) => n.endsWith(e))) return 'session';
  return null;
}

/** The one-line refusal of a dropped file that is neither a recording nor a session. */
export const notOpenable = (name: string): string =>
  `${name} is neither a recording (${AUDIO_EXTENSIONS.join(', ')}) nor a session (${SESSION_EXTENSIONS.join(', ')})`;

/**
 * Why `v` is not a bare file name (no folders, no control or reserved characters, not hidden,
 * ≤ 200 characters) with one of the allowed extensions; undefined when it is one.
 */
export function fileNameProblem(v: unknown, extensions: readonly string[]): string | undefined {
  if (typeof v !== 'string') return 'file name must be text';
  if (v.length === 0 || v.length > 200) return 'file name must have 1 to 200 characters';
  // eslint-disable-next-line no-control-regex
  if (/[\u0000-\u001f\u007f/\\:*?"<>|]/.test(v)) return `file name has a forbidden character: ${JSON.stringify(v)}`;
  if (v.startsWith('.') || v.trim() !== v) return `file name must not start with a dot or a space: ${JSON.stringify(v)}`;
  if (!extensions.some((e) => v.toLowerCase().endsWith(e))) return `file name must end with ${extensions.join(' or ')}`;
  return undefined;
}
