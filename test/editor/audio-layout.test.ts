/** The worker's asynchronous layout reading: the same answer as parsing the whole file at once. */
import { describe, expect, it } from 'vitest';
import wavefile from 'wavefile';
import { parseAudioLayoutFromBytes } from '../../dsp/formats/index.ts';
import { readLayout } from '../../renderer/src/worker/audio-layout.ts';

function fileWithTrailingChunk(frames: number): Uint8Array {
  // Written by the independent `wavefile` package, with a LIST/INFO chunk after the audio.
  const w = new wavefile.WaveFile();
  w.fromScratch(2, 48000, '24', [new Int32Array(frames), new Int32Array(frames)]);
  w.setTag('ICMT', 'reel 7, side A');
  return w.toBuffer();
}

describe('readLayout', () => {
  it('fetches the ranges the parser asks for, including chunks after a long data chunk', async () => {
    const bytes = fileWithTrailingChunk(200_000); // 1.2 MB: the LIST chunk lies past the first 64 KiB read
    const fetches: [number, number][] = [];
    const layout = await readLayout(async (o, l) => { fetches.push([o, l]); return bytes.slice(o, o + l); }, bytes.length, 'reel7.wav');
    const whole = parseAudioLayoutFromBytes(bytes, 'reel7.wav');
    expect(layout.chunks).toEqual(whole.chunks);
    expect([layout.frames, layout.dataOffset, layout.channels]).toEqual([200_000, whole.dataOffset, 2]);
    expect(layout.chunks.map((c) => c.id)).toContain('LIST');
    expect(fetches.length).toBeGreaterThan(1);
    expect(fetches.reduce((s, f) => s + f[1], 0)).toBeLessThan(bytes.length / 4);
  });

  it('passes the parser’s own errors through', async () => {
    const junk = new TextEncoder().encode('plain text, not audio at all');
    await expect(readLayout(async (o, l) => junk.slice(o, o + l), junk.length, 'notes.wav')).rejects.toThrow(/not a WAV, RF64, AIFF or FLAC/);
  });
});
