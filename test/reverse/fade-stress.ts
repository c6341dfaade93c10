/**
 * Fade stress test of reversed-channel detection (dsp/reverse/detect.ts): every clean corpus clip
 * of a split cut into 1.5 s and 3 s excerpts at 5 start times, each faded in with 6 shapes
 * (test/reverse/fades.ts) and cut off — forwards (must never be called reversed) and played
 * backwards before the fade (how many are found). Counts by the rule that decided.
 *
 *   REELWRIGHT_CORPUS=/work/main/.cache node bin/run-ts.mjs test/reverse/fade-stress.ts [--split dev|holdout] [--match TEXT] [--list]
 */
import { loadCorpus } from '../corpus/index.ts';
import { openAudio } from '../../main/io/reader.ts';
import { MemorySource, readAll } from '../../dsp/source.ts';
import { detectReversedChannels } from '../../dsp/reverse/detect.ts';
import { FADE_NAMES, fadedExcerpt, startFrames } from './fades.ts';

const arg = (name: string) => {
  const i = process.argv.indexOf(name);
  return i >= 0 ? process.argv[i + 1] : undefined;
};
const split = arg('--split') ?? 'dev';
const match = arg('--match');
const list = process.argv.includes('--list');

const corpus = await loadCorpus({ quiet: true });
const clips = corpus.clips.filter((c) => c.set === 'clean' && c.split === split && (!match || c.id.includes(match)));
const tally = { forward: { n: 0, called: 0, byRule: new Map<string, number>() }, backwards: { n: 0, found: 0, wrong: 0, byRule: new Map<string, number>() } };
const bump = (m: Map<string, number>, k: string) => m.set(k, (m.get(k) ?? 0) + 1);
const byLength = new Map<string, { n: number; found: number }>();
const t0 = Date.now();
for (const clip of clips) {
  const a = await openAudio(clip.file);
  let channels: Float64Array[];
  try {
    channels = await readAll(a);
  } finally {
    await a.close();
  }
  const rate = clip.sampleRateHz;
  for (const seconds of [1.5, 3]) {
    const len = Math.round(seconds * rate);
    for (const at of startFrames(channels[0]!.length, len)) {
      for (const fade of FADE_NAMES) {
        for (const backwards of [false, true]) {
          const res = await detectReversedChannels(new MemorySource(fadedExcerpt(channels, rate, at, len, fade, backwards), rate));
          for (const c of res.channels) {
            const where = `${clip.id} ch${c.channel} ${seconds} s from ${(at / rate).toFixed(2)} s, ${fade}`;
            if (!backwards) {
              tally.forward.n++;
              if (c.likely === true) {
                tally.forward.called++;
                bump(tally.forward.byRule, c.basis ?? '?');
                if (list) console.log(`FALSE ${where}: ${c.basis} skew ${c.skew?.toFixed(2)} starts ${c.abruptStarts} stops ${c.abruptStops} swells ${c.swellsIntoStops} decays ${c.decaysAfterStarts} Sb ${c.bandSkew?.toFixed(2)} med ${c.bandMedian?.toFixed(2)} spread ${c.rampBandSpread?.toFixed(1)} tilt ${c.rampBandTilt?.toFixed(2)} rel ${c.rampRelativeSpread?.toFixed(2)}`);
              }
            } else {
              tally.backwards.n++;
              const k = `${clip.kind} ${seconds} s`;
              const e = byLength.get(k) ?? { n: 0, found: 0 };
              e.n++;
              byLength.set(k, e);
              if (c.likely === true) {
                tally.backwards.found++;
                e.found++;
                bump(tally.backwards.byRule, c.basis ?? '?');
              } else if (c.likely === false) {
                tally.backwards.wrong++;
                if (list) console.log(`WRONG ${where} (backwards, called forward): ${c.basis}`);
              }
            }
          }
        }
      }
    }
  }
}
const rules = (m: Map<string, number>) => [...m].sort((x, y) => y[1] - x[1]).map(([k, v]) => `${k} ${v}`).join(', ') || 'none';
console.log(`fade stress, split ${split}: ${clips.length} clean clips, ${((Date.now() - t0) / 1000).toFixed(0)} s`);
console.log(`forward excerpts: ${tally.forward.called}/${tally.forward.n} channels called reversed (${rules(tally.forward.byRule)})`);
console.log(`backwards excerpts: ${tally.backwards.found}/${tally.backwards.n} found, ${tally.backwards.wrong} called forward (${rules(tally.backwards.byRule)})`);
for (const [k, e] of [...byLength].sort()) console.log(`  ${k}: ${e.found}/${e.n} found`);
