/**
 * Export: renders the enabled steps over the whole recording block by block, encodes PCM and
 * writes through the bridge. Keeps the source's bext fields and other chunks, appends one
 * CodingHistory line per step (EBU R98 form: A=PCM,F=…,W=…,M=…,T=…), and switches to RF64 when
 * the file would pass 4 GiB.
 */
import { CancelledError } from '../../../dsp/errors.ts';
import { MemorySource, readAll } from '../../../dsp/source.ts';
import type { Rendering } from '../../../dsp/ops/types.ts';
import type { FileSource } from './file-source.ts';
import { correctionOf, renderInMemory, streamingRendering, type Progress } from './pipeline.ts';
import type { Job, JobResults } from './protocol.ts';
import { buildBext, buildWavHeader, codingHistoryOf, encodePcm, type HeaderSpec } from './wav-format.ts';

type ExportJob = Extract<Job, { type: 'export' }>;
type Write = (handle: string, bytes: Uint8Array, atOffset: number | null) => Promise<void>;
type Read = (handle: string, offset: number, length: number) => Promise<Uint8Array>;

/** Chunks never copied: rebuilt by the writer or meaningless after processing. */
const REBUILT = new Set(['fmt ', 'data', 'bext', 'ds64', 'JUNK', 'junk', 'fact', 'PAD ', 'FLLR', 'md5 ']);
/** Files up to this many samples (all channels) are rendered in memory. */
const IN_MEMORY_SAMPLES = 1 << 25;
const RIFF_LIMIT = 0xffffffff - 65536;

const mode = (channels: number) => (channels === 1 ? 'mono' : channels === 2 ? 'stereo' : `${channels}-channel`);

export async function exportFile(source: FileSource, sourceHandle: string, read: Read, write: Write, job: ExportJob, p: Progress): Promise<JobResults['export']> {
  const layout = source.layout;
  let rendering: Rendering;
  let resolved: Record<string, unknown>[];
  const renderProgress: Progress = { progress: (f, l) => p.progress(0.5 * f, l), warn: p.warn, signal: p.signal };
  if (layout.frames * layout.channelCount <= IN_MEMORY_SAMPLES) {
    const whole = new MemorySource(await readAll(source), source.sampleRateHz);
    const r = await renderInMemory(whole, job.steps, renderProgress);
    resolved = r.resolved;
    rendering = { sampleRateHz: r.out.sampleRateHz, channelCount: r.out.channelCount, framesHint: r.out.frames, blocks: r.out.blocks(), resolved: {} };
  } else {
    const r = await streamingRendering(source, job.steps, renderProgress);
    resolved = r.resolved;
    rendering = r.rendering;
  }
  const fmt = job.format;
  const frameBytes = rendering.channelCount * (fmt.bitsPerSample / 8);
  const frames = rendering.framesHint ?? 0;

  // Metadata: the source's bext fields and CodingHistory, extended; other chunks copied as they are.
  const bextChunk = layout.chunks.find((c) => c.id === 'bext');
  const sourceBext = bextChunk && bextChunk.size < 1 << 20 ? await read(sourceHandle, bextChunk.offset, bextChunk.size) : null;
  let history = codingHistoryOf(sourceBext);
  if (history && !history.endsWith('\r\n')) history += '\r\n';
  if (!history) history += `A=PCM,F=${layout.sampleRateHz},W=${layout.bitsPerSample},M=${mode(layout.channelCount)},T=source as received\r\n`;
  let added = '';
  job.steps.forEach((s, k) => {
    const op = correctionOf(s.op);
    const text = op.history({ ...s.params, ...resolved[k] } as never).replace(/[\r\n,]/g, ' ');
    added += `A=PCM,F=${rendering.sampleRateHz},W=${fmt.bitsPerSample},M=${mode(rendering.channelCount)},T=${text}\r\n`;
  });
  if (job.steps.length > 0 || fmt.bitsPerSample !== layout.bitsPerSample) {
    added += `A=PCM,F=${rendering.sampleRateHz},W=${fmt.bitsPerSample},M=${mode(rendering.channelCount)},T=reelwright export${fmt.dither && fmt.sampleFormat === 'int' ? ' TPDF dither' : ''}\r\n`;
  }
  const extra: { id: string; payload: Uint8Array }[] = [];
  for (const c of layout.chunks) {
    if (REBUILT.has(c.id) || c.size > 8 << 20) continue;
    extra.push({ id: c.id, payload: await read(sourceHandle, c.offset, c.size) });
  }
  const bext = fmt.bwf || sourceBext ? buildBext(sourceBext, history + added, new Date(), job.description) : null;
  const spec = (n: number, rf64: boolean): HeaderSpec => ({
    sampleRateHz: rendering.sampleRateHz, channelCount: rendering.channelCount,
    format: fmt, frames: n, bext, extra, rf64,
  });
  const rf64 = fmt.container === 'rf64' || buildWavHeader(spec(frames, false)).length + frames * frameBytes > RIFF_LIMIT;
  const header = buildWavHeader(spec(frames, rf64));
  await write(job.target, header, null);

  // Samples, in writes of about 4 MB.
  let seed = 0x2545f491;
  const rng = () => {
    seed ^= seed << 13; seed ^= seed >>> 17; seed ^= seed << 5;
    return (seed >>> 0) / 4294967296;
  };
  let written = 0;
  let pending: Uint8Array[] = [];
  let pendingBytes = 0;
  const flush = async () => {
    if (pendingBytes === 0) return;
    const buf = new Uint8Array(pendingBytes);
    let at = 0;
    for (const b of pending) { buf.set(b, at); at += b.length; }
    pending = [];
    pendingBytes = 0;
    await write(job.target, buf, null);
  };
  for await (const block of rendering.blocks) {
    if (p.signal.aborted) throw new CancelledError('cancelled');
    const bytes = encodePcm(block, fmt, rng);
    pending.push(bytes);
    pendingBytes += bytes.length;
    written += block[0]?.length ?? 0;
    if (pendingBytes >= 4 << 20) await flush();
    if (frames > 0) p.progress(0.5 + 0.5 * Math.min(1, written / frames), 'Writing');
  }
  await flush();
  const dataBytes = written * frameBytes;
  if (dataBytes & 1) await write(job.target, new Uint8Array(1), null);
  if (written !== frames) {
    const patched = buildWavHeader(spec(written, rf64));
    if (patched.length !== header.length) throw new Error('header length changed while patching');
    await write(job.target, patched, 0);
  }
  return { frames: written, bytes: header.length + dataBytes + (dataBytes & 1), container: rf64 ? 'RF64' : 'RIFF', historyAdded: added };
}
