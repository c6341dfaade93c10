/**
 * Sessions (a recording's corrections and markers, saved as JSON; lib/session-file.ts): saving,
 * opening (picked, dropped, recent or the file the app was started with) and applying one once
 * its recording's checksum matches. Not needed to draw a recording, so not in the page's entry
 * script: the editor loads this module the first time a session is saved or opened.
 */
import type { Editor } from './editor.svelte.ts';
import type { OpenedText } from '../../../main/bridge/contract.ts';
import { parseSession, sessionText, type Session } from '../lib/session-file.ts';
import { rememberRecent } from '../lib/recent.ts';

export { parseSession };

export async function saveSession(ed: Editor): Promise<boolean> {
  const f = ed.file;
  if (!f) return false;
  if (!ed.checksum) { ed.note('The checksum is still being computed; try again in a moment.', 'warn'); return false; }
  const version = ed.steps.version;
  const text = sessionText({ name: f.name, path: f.path, sizeBytes: f.sizeBytes, audioMd5: ed.checksum }, ed.steps.steps, ed.markers.list);
  try {
    const saved = await ed.bridge.saveSession(text, f.name.replace(/\.[^.]+$/, '') + '.rwsession');
    if (!saved) return false;
    ed.note(`Session saved as ${saved.name}.`);
    ed.savedVersion = version;
    rememberRecent({ kind: 'session', name: saved.name, path: saved.path, sizeBytes: 0, text });
    return true;
  } catch (e) { ed.fail('Saving the session')(e); return false; }
}

/**
 * A session the user opened (picked, dropped or recent), already allowed to replace the
 * recording: in web mode it waits for the user to pick its recording (a picker needs a click);
 * in Electron its recording is reopened by path.
 */
export async function adopt(ed: Editor, s: Session): Promise<void> {
  if (ed.bridge.mode === 'web') ed.pendingSession = s;
  else await resumeSession(ed, s);
}

/** The session picked in the bridge's dialog. */
export async function openSession(ed: Editor): Promise<void> {
  try {
    const t = await ed.bridge.openSession();
    if (!t) return;
    const s = parseSession(t.text);
    rememberRecent({ kind: 'session', name: t.name, path: t.path, sizeBytes: 0, text: t.text });
    await adopt(ed, s);
  } catch (e) { ed.fail('Opening the session')(e); }
}

/**
 * A session dropped on the window (its text read by the bridge): a file that is not a session
 * is shown in place of the recording, as a recording that cannot be opened is.
 */
export async function openDropped(ed: Editor, t: OpenedText): Promise<void> {
  let s: Session;
  try { s = parseSession(t.text); } catch (e) { ed.openError = { name: t.name, message: e instanceof Error ? e.message : String(e) }; return; }
  if (!(await ed.mayDiscard('Opening a session'))) return;
  if (t.path) rememberRecent({ kind: 'session', name: t.name, path: t.path, sizeBytes: 0, text: t.text });
  await adopt(ed, s);
}

/** A recent session, from the text kept with it. */
export async function openRecent(ed: Editor, name: string, text: string): Promise<void> {
  try { await adopt(ed, parseSession(text)); } catch (e) { ed.openError = { name, message: e instanceof Error ? e.message : String(e) }; }
}

/**
 * Opens a session's recording; its steps and markers are applied only once the recording's
 * checksum matches the session's, or after the user says to apply them to a different one.
 */
export async function resumeSession(ed: Editor, s: Session): Promise<void> {
  ed.pendingSession = null;
  try {
    // The steps need the chain's rules (state/chain.ts) as soon as they are applied.
    const [f] = await Promise.all([ed.bridge.reopenSource(s.source.path, s.source.name), ed.loadChain()]);
    if (!f) return;
    if (!(await ed.open(f))) return;
    ed.sessionWaiting = s;
    const work = ed.work;
    if (f.sizeBytes !== s.source.sizeBytes) { void mismatch(ed, s, f.name, `its size differs (${f.sizeBytes} bytes; the session's recording had ${s.source.sizeBytes})`); return; }
    const check = setInterval(() => {
      if (ed.work !== work || ed.sessionWaiting !== s) { clearInterval(check); return; }
      if (!ed.checksum) return;
      clearInterval(check);
      if (ed.checksum !== s.source.audioMd5) void mismatch(ed, s, f.name, 'the checksum of its audio differs');
      else apply(ed, s, `Session reopened: ${s.steps.length} step${s.steps.length === 1 ? '' : 's'} on ${f.name}; checksum matches.`);
    }, 250);
  } catch (e) { ed.fail('Opening the session')(e); }
}

function apply(ed: Editor, s: Session, message: string): void {
  ed.sessionWaiting = null;
  ed.steps.reset(s.steps);
  ed.markers.reset(s.markers);
  ed.savedVersion = ed.steps.version;
  ed.note(message);
}

async function mismatch(ed: Editor, s: Session, name: string, why: string): Promise<void> {
  const work = ed.work;
  const a = await ed.ask({
    title: 'A different recording',
    text: `${name} is not the recording this session was made on: ${why}. Its ${s.steps.length} correction${s.steps.length === 1 ? '' : 's'} and ${s.markers.length} marker${s.markers.length === 1 ? '' : 's'} were measured on ${s.source.name} and may be wrong here.`,
    choices: [
      { label: 'Do not apply them', value: 'no' },
      { label: 'Apply them anyway', value: 'apply', primary: true },
    ],
    cancel: 'no',
    testid: 'mismatch-dialog',
  });
  if (ed.work !== work || ed.sessionWaiting !== s) return;
  if (a === 'apply') apply(ed, s, `Session applied to ${name}, which is not its recording.`);
  else { ed.sessionWaiting = null; ed.note(`The session's corrections were not applied to ${name}.`, 'warn'); }
}
