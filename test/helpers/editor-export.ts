/** Running the editor's export (renderer/src/worker/export.ts) in Node: a WAV in memory as its source, the written bytes collected. */
import { readLayout } from '../../renderer/src/worker/audio-layout.ts';
import { FileSource } from '../../renderer/src/worker/file-source.ts';
import { exportFile } from '../../renderer/src/worker/export.ts';
import type { ExportFormat, Marker, StepSpec } from '../../renderer/src/worker/protocol.ts';

export const FORMAT_24: ExportFormat = { bitsPerSample: 24, sampleFormat: 'int', dither: false, container: 'auto', bwf: true };

/** The worker's file source over bytes in memory. */
export async function memoryFileSource(bytes: Uint8Array, name: string): Promise<FileSource> {
  const read = async (o: number, l: number) => bytes.slice(o, Math.min(bytes.length, o + l));
  return new FileSource(read, await readLayout(read, bytes.length, name));
}

/** Exports `steps` (and markers) from a WAV held in memory; returns the file's bytes as the bridge would have written them. */
export async function exportInMemory(bytes: Uint8Array, name: string, steps: StepSpec[], markers?: readonly Marker[], format = FORMAT_24) {
  const source = await memoryFileSource(bytes, name);
  let out = new Uint8Array(0);
  const write = async (_h: string, b: Uint8Array, at: number | null) => {
    const pos = at ?? out.length;
    if (pos + b.length > out.length) { const grown = new Uint8Array(pos + b.length); grown.set(out); out = grown; }
    out.set(b, pos);
  };
  const read = async (_h: string, o: number, l: number) => bytes.slice(o, o + l);
  const signal = { aborted: false };
  const result = await exportFile(source, 'src', read, write, { type: 'export', steps, format, target: 'out', description: 'test', ...(markers ? { markers } : {}) },
    { progress() {}, warn() {}, signal });
  return { bytes: out, result };
}
