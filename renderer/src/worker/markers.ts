/** A file's own cue points (BWF markers) as the editor's markers. */
import type { AudioLayout } from '../../../dsp/formats/index.ts';
import { isAdtlList, parseCuePoints } from '../../../dsp/formats/cue.ts';
import type { JobResults } from './protocol.ts';

/** The file's cue points and their labels as markers (a damaged cue chunk is skipped: the audio still opens). */
export async function fileMarkers(l: AudioLayout, read: (o: number, n: number) => Promise<Uint8Array>, name: string): Promise<JobResults['open']['markers']> {
  const cue = l.chunks.find((c) => c.id === 'cue ');
  if (!cue || cue.size > 1 << 20) return [];
  let adtl: Uint8Array | null = null;
  for (const c of l.chunks.filter((x) => x.id === 'LIST' && x.size <= 1 << 20)) {
    const data = await read(c.offset, c.size);
    if (isAdtlList(data)) adtl = data;
  }
  try {
    return parseCuePoints(await read(cue.offset, cue.size), adtl, name).map((p, i) => ({ id: `m${i + 1}`, name: p.label || `Cue ${p.id}`, seconds: p.frame / l.sampleRateHz }));
  } catch {
    return [];
  }
}
