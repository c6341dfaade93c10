/** Test files written through the project's streaming writer (no dither, so samples are exact to the word length). */
import fs from 'node:fs';
import path from 'node:path';
import { writeAudio } from '../../main/io/writer.ts';

/** Writes channels (full scale ±1) as integer PCM (or 32-bit float), creating the folder; replaces an existing file. */
export async function writeTestWav(file: string, channels: Float64Array[], sampleRateHz: number, bits: 16 | 24 | 32 = 24): Promise<void> {
  fs.mkdirSync(path.dirname(file), { recursive: true });
  const n = channels[0]!.length;
  async function* blocks() {
    for (let i = 0; i < n; i += 65536) yield channels.map((c) => c.slice(i, i + 65536));
  }
  await writeAudio(file, { sampleRateHz, channelCount: channels.length, blocks: blocks() }, { bitsPerSample: bits, sampleFormat: bits === 32 ? 'float' : 'int', dither: false, overwrite: true });
}
