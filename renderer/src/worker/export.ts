/**
 * Export: renders the enabled steps over the whole recording block by block, encodes PCM with
 * dsp/formats' streaming WAV encoder and writes through the bridge. Keeps the source's bext fields
 * and other chunks, appends one CodingHistory line per step (EBU R98), and becomes RF64 by itself
 * when the file passes 4 GiB (the final header, written last, has the same length).
 */
import { CancelledError } from '../../../dsp/errors.ts';
import {
  appendCodingHistory, buildBext, codingHistoryLine, copiesChunk, newBextFixed, WavStreamEncoder,
  type RawChunk,
} from '../../../dsp/formats/index.ts';
import { carryMetadata } from '../../../dsp/formats/info-list.ts';
import { buildAdtlList, buildCueChunk, isAdtlList, type CuePoint } from '../../../dsp/formats/cue.ts';
import { mapTime } from '../../../dsp/ops/timing.ts';
import { MemorySource } from '../../../dsp/source.ts';
import type { Rendering, TimeSegment } from '../../../dsp/ops/types.ts';
import type { AudioSource } from '../../../dsp/source.ts';
import type { AudioLayout } from '../../../dsp/formats/index.ts';
import { renderInMemory, streamingRendering, type Progress, type StepReport } from './pipeline.ts';
import type { Job, JobResults } from './protocol.ts';

type ExportJob = Extract<Job, { type: 'export' }>;
type Write = (handle: string, bytes: Uint8Array, atOffset: number | null) => Promise<void>;
type Read = (handle: string, offset: number, length: number) => Promise<Uint8Array>;

/** Files up to this many samples (all channels) are rendered in memory. */
const IN_MEMORY_SAMPLES = 1 << 25;
/** Bytes per bridge write. */
const WRITE_BYTES = 4 << 20;

/** The whole source into memory, stopping at once when the export is cancelled. */
async function readStoppable(source: AudioSource, p: Progress): Promise<Float64Array[]> {
  const out = Array.from({ length: source.channelCount }, () => new Float64Array(source.frames));
  let at = 0;
  for await (const b of source.blocks()) {
    if (p.signal.aborted) throw new CancelledError('cancelled');
    for (let c = 0; c < out.length; c++) out[c]!.set(b[c]!, at);
    at += b[0]!.length;
    p.progress(0.1 * (at / Math.max(1, source.frames)), 'reading');
  }
  return at === source.frames ? out : out.map((c) => c.subarray(0, at));
}

export async function exportFile(source: AudioSource & { readonly layout: AudioLayout }, sourceHandle: string, read: Read, write: Write, job: ExportJob, p: Progress): Promise<JobResults['export']> {
  const layout = source.layout;
  let rendering: Rendering;
  let reports: StepReport[];
  let segments: readonly TimeSegment[];
  const renderProgress: Progress = { progress: (f, l) => p.progress(0.5 * f, l), warn: p.warn, signal: p.signal };
  if (layout.frames * layout.channels <= IN_MEMORY_SAMPLES) {
    const whole = new MemorySource(await readStoppable(source, renderProgress), source.sampleRateHz);
    const r = await renderInMemory(whole, job.steps, renderProgress);
    reports = r.reports;
    segments = r.segments;
    rendering = { sampleRateHz: r.out.sampleRateHz, channelCount: r.out.channelCount, framesHint: r.out.frames, blocks: r.out.blocks(), resolved: {} };
  } else {
    const r = await streamingRendering(source, job.steps, renderProgress);
    reports = r.reports;
    segments = r.segments;
    rendering = r.rendering;
  }
  const fmt = job.format;
  const out = { sampleRateHz: rendering.sampleRateHz, bitsPerSample: fmt.bitsPerSample, sampleFormat: fmt.sampleFormat, channels: rendering.channelCount };

  // The record of what was done: one line per step, then the export itself.
  let added = '';
  for (const r of reports) added += codingHistoryLine({ ...out, text: r.history });
  added += codingHistoryLine({ ...out, text: `reelwright export${fmt.dither && fmt.sampleFormat === 'int' ? ' with TPDF dither' : ''}` });
  let history = layout.bext?.codingHistory ?? '';
  if (!history) history = codingHistoryLine({ sampleRateHz: layout.sampleRateHz, bitsPerSample: layout.bitsPerSample, sampleFormat: layout.sampleFormat, channels: layout.channels, text: 'source as received' });
  for (const line of added.split('\r\n').filter(Boolean)) history = appendCodingHistory(history, `${line}\r\n`);
  const now = new Date();
  const fixed = layout.bext?.fixed ?? newBextFixed({
    description: job.description, originator: 'Reelwright', originatorReference: '',
    originationDate: now.toISOString().slice(0, 10), originationTime: now.toISOString().slice(11, 19),
  });
  const bext = fmt.bwf || layout.bext ? buildBext(fixed, history) : undefined;

  // Other chunks (LIST, iXML, axml …) copied as they are, in their places. The markers (which
  // began as the source's own cue points) are written anew at their places in the output's time.
  const before: RawChunk[] = [], after: RawChunk[] = [];
  const writeMarkers = job.markers !== undefined;
  const foreign = layout.container === 'FLAC' || layout.container === 'AIFF' || layout.container === 'AIFC';
  if (foreign) {
    // FLAC tags and AIFF text chunks become a RIFF INFO list, as the command line does (main/io/writer.ts).
    const chunks = [];
    for (const c of layout.chunks) if (c.size <= 8 << 20 && c.id !== 'SSND') chunks.push({ id: c.id, data: await read(sourceHandle, c.offset, c.size) });
    const carried = carryMetadata(layout.container as 'FLAC' | 'AIFF' | 'AIFC', chunks);
    if (carried.list) before.push({ id: 'LIST', data: carried.list });
    for (const what of carried.notCarried) p.warn(`not carried into the WAV: ${what}`);
  }
  for (const c of foreign ? [] : layout.chunks) {
    if (!copiesChunk(c.id) || c.id === 'SSND' || c.id === 'COMM' || c.id === 'FORM' || c.size > 8 << 20) continue;
    if (writeMarkers && c.id === 'cue ') continue;
    const data = await read(sourceHandle, c.offset, c.size);
    if (writeMarkers && c.id === 'LIST' && isAdtlList(data)) continue;
    (c.position === 'after-data' ? after : before).push({ id: c.id, data });
  }
  const cues = writeMarkers ? markerCues(job.markers!, segments, rendering.sampleRateHz, rendering.framesHint ?? Infinity) : [];
  if (cues.length) before.push({ id: 'cue ', data: buildCueChunk(cues) }, { id: 'LIST', data: buildAdtlList(cues) });
  const enc = new WavStreamEncoder(
    { format: { sampleFormat: fmt.sampleFormat, bitsPerSample: fmt.bitsPerSample, channels: rendering.channelCount, sampleRateHz: rendering.sampleRateHz }, bext, chunksBefore: before, chunksAfter: after, container: fmt.container },
    { dither: fmt.dither },
  );
  await write(job.target, enc.provisionalHeader, null);

  const frames = rendering.framesHint ?? 0;
  const perWrite = Math.max(1, Math.floor(WRITE_BYTES / enc.bytesPerFrame));
  const bufBytes = perWrite * enc.bytesPerFrame;
  let buf = new Uint8Array(bufBytes);
  let used = 0;
  for await (const block of rendering.blocks) {
    if (p.signal.aborted) throw new CancelledError('cancelled');
    const n = block[0]?.length ?? 0;
    for (let at = 0; at < n;) {
      const take = Math.min(n - at, (bufBytes - used) / enc.bytesPerFrame);
      used += enc.encodeInto(block.map((c) => c.subarray(at, at + take)), buf, used);
      at += take;
      if (used === bufBytes) {
        // The write hands the buffer over to the page (transferred), so each write gets a new one.
        await write(job.target, buf, null);
        buf = new Uint8Array(bufBytes);
        used = 0;
      }
    }
    if (frames > 0) p.progress(0.5 + 0.5 * Math.min(1, enc.frames / frames), 'Writing');
  }
  if (used > 0) await write(job.target, buf.subarray(0, used), null);
  const done = enc.finish();
  if (done.trailer.length > 0) await write(job.target, done.trailer, null);
  await write(job.target, done.header, 0);
  return { frames: done.frames, bytes: done.totalBytes, container: done.container, historyAdded: added, cuePoints: cues.length };
}

/** Markers (original seconds) as cue points of the output: through the chain's time map, in order. */
export function markerCues(markers: readonly { seconds: number; name: string }[], segments: readonly TimeSegment[], rateHz: number, frames: number): CuePoint[] {
  return markers
    .map((m) => ({ frame: Math.max(0, Math.min(frames, Math.round(mapTime(segments, m.seconds) * rateHz))), label: m.name }))
    .sort((a, b) => a.frame - b.frame)
    .map((m, i) => ({ id: i + 1, ...m }));
}
