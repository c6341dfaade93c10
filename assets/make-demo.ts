/**
 * Writes the bundled demo recording (INVENTED data; see assets/demo/synth.ts for the scenario)
 * and its true parameters:
 *   assets/demo/thornbury-reel7.wav   24-bit 48 kHz stereo BWF
 *   assets/demo/thornbury-reel7.json  the parameters tests check against
 * Run: npm run demo
 */
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { MemorySource } from '../dsp/source.ts';
import { writeAudio } from '../main/io/writer.ts';
import { DEMO_NAME, synthesizeDemo } from './demo/synth.ts';

const here = path.dirname(new URL(import.meta.url).pathname);
const { parameters, channels } = synthesizeDemo();
const src = new MemorySource(channels, parameters.sampleRateHz);
const wavPath = path.join(here, 'demo', `${DEMO_NAME}.wav`);
const result = await writeAudio(
  wavPath,
  { sampleRateHz: src.sampleRateHz, channelCount: src.channelCount, blocks: src.blocks() },
  {
    bitsPerSample: 24,
    sampleFormat: 'int',
    dither: true,
    historyText: 'reelwright demo synthesis (invented recording; see thornbury-reel7.json)',
    rng: mulberry32(7),
  },
);
writeFileSync(path.join(here, 'demo', `${DEMO_NAME}.json`), JSON.stringify(parameters, null, 2) + '\n');
process.stdout.write(`wrote ${result.path} (${result.frames} frames) and ${DEMO_NAME}.json\n`);

function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
