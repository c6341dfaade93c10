/**
 * Exporting the corrected recording: the worker renders and encodes the whole chain into the
 * target the bridge gives (a save dialog in Electron, a download in web mode). Part of the export
 * dialog's chunk, not of the page's entry script.
 */
import type { Editor } from './editor.svelte.ts';
import { JobError } from '../lib/engine.ts';
import type { ExportFormat } from '../worker/protocol.ts';

export async function exportTo(ed: Editor, name: string, format: ExportFormat): Promise<boolean> {
  const work = ed.work, f = ed.file;
  if (!work || !f) return false;
  let target;
  try {
    target = await ed.bridge.beginExport(name, f.handle);
  } catch (e) { ed.fail('Export')(e); return false; }
  if (!target) return false;
  const steps = ed.specs();
  const markers = ed.markers.list;
  try {
    const r = await ed.track('Export', (p) => (ed.exportTask = work.run({ type: 'export', steps, format, target: target.handle, description: `Restored from ${f.name}`, markers }, { progress: p })));
    ed.exportTask = null;
    const done = await ed.bridge.finishExport(target.handle);
    const cues = r.cuePoints ? `, ${r.cuePoints} marker${r.cuePoints === 1 ? '' : 's'} as cue points` : '';
    ed.note(`Exported ${done.name} (${r.container}, ${(done.bytes / 1e6).toFixed(1)} MB, ${steps.length} step${steps.length === 1 ? '' : 's'} in its history${cues}).`);
    return true;
  } catch (e) {
    ed.exportTask = null;
    await ed.bridge.abortExport(target.handle).catch(() => {});
    if (e instanceof JobError && e.cancelled && !e.superseded) ed.note('Export cancelled: nothing was written.');
    else ed.fail('Export')(e);
    return false;
  }
}
