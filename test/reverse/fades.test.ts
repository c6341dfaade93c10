/**
 * Forward recordings faded in and cut off are never called reversed (dsp/reverse/detect.ts): a
 * deterministic slice of the fade stress test (test/reverse/fade-stress.ts) on the quick-slice
 * clean clips of the real-material corpus (read from the full corpus when REELWRIGHT_CORPUS is
 * set, else built by `loadCorpus({ fast: true })`).
 */
import { describe, expect, it } from 'vitest';
import { loadCorpus } from '../corpus/index.ts';
import { openAudio } from '../../main/io/reader.ts';
import { MemorySource, readAll } from '../../dsp/source.ts';
import { detectReversedChannels } from '../../dsp/reverse/detect.ts';
import { FADE_NAMES, fadedExcerpt, startFrames } from './fades.ts';

describe('reversed channels: faded-in, cut-off forward excerpts', () => {
  it('calls no forward excerpt reversed, whatever the fade curve', async () => {
    // Source: common practice — transfers and edits begin with a fade-in (linear, linear in dB,
    // cubic, raised cosine) and end with a cut; that is forward programme, so "reversed" is false.
    const corpus = await loadCorpus({ fast: !process.env.REELWRIGHT_CORPUS, quiet: true });
    const clips = corpus.clips.filter((c) => c.set === 'clean' && c.fast);
    expect(clips.length).toBeGreaterThanOrEqual(9);
    let judged = 0;
    const claims: string[] = [];
    for (const clip of clips) {
      const a = await openAudio(clip.file);
      const channels = await readAll(a).finally(() => a.close());
      const rate = clip.sampleRateHz;
      for (const seconds of [1.5, 3]) {
        const len = Math.round(seconds * rate);
        // Three of the stress test's five start times: the head, the middle and the tail.
        for (const at of startFrames(channels[0]!.length, len).filter((_, i) => i % 2 === 0)) {
          for (const fade of FADE_NAMES) {
            for (const c of (await detectReversedChannels(new MemorySource(fadedExcerpt(channels, rate, at, len, fade, false), rate))).channels) {
              judged++;
              if (c.likely === true) claims.push(`${clip.id} ch${c.channel} ${seconds} s from ${(at / rate).toFixed(2)} s, ${fade}: ${c.basis}`);
            }
          }
        }
      }
    }
    expect(judged).toBeGreaterThan(300);
    expect(claims).toEqual([]);
  }, 120_000);
});
