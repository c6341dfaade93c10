import type { AudioLayout } from '../../dsp/formats/types.ts';
import type { FileInfo } from './types.ts';

/** The contract's `file` object for a parsed layout. */
export function fileInfoFor(path: string, layout: AudioLayout, frames: number): FileInfo {
  return {
    path,
    format: layout.container,
    sampleRateHz: layout.sampleRateHz,
    channels: layout.channels,
    bitsPerSample: layout.bitsPerSample,
    sampleFormat: layout.sampleFormat,
    durationSeconds: frames / layout.sampleRateHz,
    frames,
    chunks: layout.chunks.map((c) => c.id),
  };
}
