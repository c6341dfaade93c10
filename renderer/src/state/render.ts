/**
 * Rendering the preview and comparing before and after: the worker renders the chain over the
 * part a preview covers, the samples go to the view worker (playback, drawing), then Compare
 * measures the same material on both versions and every step again on its own input and output.
 * Not in the page's entry script: loaded the first time a preview or Compare is asked for.
 */
import type { Editor } from './editor.svelte.ts';
import { toCorrected } from '../lib/timebase.ts';

/** Largest preview held in memory (samples over all channels): ≈ 5.8 min of 48 kHz stereo. */
export const PREVIEW_MAX_SAMPLES = 1 << 25;

/** The part of the recording a preview covers: all of it when it fits, else the selection or the view. */
export function previewRegion(ed: Editor): { startFrame: number; endFrame: number } {
  const rate = ed.sampleRateHz, frames = ed.opened?.layout.frames ?? 0;
  const maxFrames = Math.floor(PREVIEW_MAX_SAMPLES / ed.channelCount);
  if (frames <= maxFrames) return { startFrame: 0, endFrame: frames };
  const v = ed.timeline.selection ?? { start: ed.timeline.start, end: ed.timeline.end };
  const a = ed.toOriginal(v.start), b = ed.toOriginal(v.end);
  const r = { start: Math.max(0, Math.min(a, b)), end: Math.max(a, b) };
  const start = Math.round(r.start * rate);
  return { startFrame: start, endFrame: Math.min(frames, start + Math.min(maxFrames, Math.round((r.end - r.start) * rate))) };
}

export async function preview(ed: Editor): Promise<void> {
  const view = ed.view, work = ed.work;
  if (!view || !work || !ed.opened) return;
  ed.previewTask?.cancel();
  const version = ed.steps.version;
  const steps = ed.specs();
  const region = previewRegion(ed);
  try {
    const result = await ed.track('Preview', (p) => (ed.previewTask = work.run({ type: 'preview', steps, ...region }, { progress: p, warn: (m) => ed.note(m, 'warn') })));
    if (ed.work !== work) return;
    // The samples go on to the view worker (playback, drawing); the page keeps none of them.
    const channels = result.channels;
    const peaks = await view.run({ type: 'adoptProcessed', channels, sampleRateHz: result.sampleRateHz, startFrame: result.startFrame }, { transfer: channels.map((c) => c.buffer) }).promise;
    const offsetSeconds = result.startFrame / ed.sampleRateHz;
    const old = ed.corrected, from = ed.base;
    const next = { peaks, offsetSeconds, preview: { ...result, channels: [] }, version, placement: { offsetSeconds, segments: result.segments } };
    ed.corrected = next;
    // Listening to the corrected version: stay on the same programme on its new time line.
    ed.rebase(from, ed.base, old, next);
    for (const w of result.warnings) ed.note(w, 'warn');
    void compare(ed);
  } catch (e) { ed.fail('Preview')(e); }
}

/**
 * Spectra before and after over the same material (the selection, else the previewed part),
 * each on its own time line, then every step measured again on its own input and output.
 */
export async function compare(ed: Editor): Promise<void> {
  const work = ed.work;
  if (!work || !ed.opened) return;
  const rate = ed.sampleRateHz;
  const c = ed.corrected;
  const r = c ? { start: c.preview.startFrame / rate, end: c.preview.endFrame / rate } : { start: 0, end: ed.opened.layout.frames / rate };
  const sel = ed.timeline.selection;
  const selOrig = sel ? [ed.toOriginal(sel.start), ed.toOriginal(sel.end)].sort((x, y) => x - y) as [number, number] : null;
  const inside = selOrig !== null && selOrig[0] >= r.start - 1e-6 && selOrig[1] <= r.end + 1e-6;
  const original = inside ? { start: selOrig[0], end: selOrig[1] } : r;
  const m = c ? [toCorrected(c.placement, original.start), toCorrected(c.placement, original.end)].sort((x, y) => x - y) : null;
  const corrected = m ? { start: m[0]!, end: m[1]! } : null;
  ed.compared = { what: inside ? 'selection' : 'previewed part', original, corrected };
  const steps = ed.specs();
  try {
    ed.spectra = await ed.track('Spectra', (p) => work.run({
      type: 'spectra', startFrame: Math.round(original.start * rate), endFrame: Math.round(original.end * rate),
      ...(corrected ? { afterStartSeconds: corrected.start, afterEndSeconds: corrected.end } : {}),
    }, { progress: p }));
    // Each step is measured again over the whole preview, once per rendering (a new selection changes only the spectra).
    const c2 = ed.corrected;
    if (c2 && ed.remeasuredFor !== c2) {
      ed.remeasures = null;
      const r = await ed.track('Re-measuring', (p) => work.run({ type: 'remeasure', steps }, { progress: p }));
      if (ed.corrected === c2) { ed.remeasures = r; ed.remeasuredFor = c2; }
    }
  } catch (e) { ed.fail('Compare')(e); }
}
