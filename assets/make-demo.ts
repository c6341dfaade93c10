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
import { seededRng } from '../dsp/random.ts';
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
    rng: seededRng(7),
    overwrite: true,
  },
);
writeFileSync(path.join(here, 'demo', `${DEMO_NAME}.json`), JSON.stringify(parameters, null, 2) + '\n');
process.stdout.write(`wrote ${result.path} (${result.frames} frames) and ${DEMO_NAME}.json\n`);
