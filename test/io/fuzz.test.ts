/**
 * Fuzzing every reader: 20,000 deterministic mutations of WAV, BWF, RF64, BW64, AIFF, AIFF-C and
 * FLAC files (test/fuzz/corpus.ts; `npm run fuzz` runs 200,000). Every case must either read
 * consistently (the file's channel count, finite samples, reads that add up to its length) or be
 * refused with one line naming the file — never a crash, a hang or a read above the memory bound.
 * And on FLAC the verdicts are checked against the reference decoder.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { openAudio } from '../../main/io/reader.ts';
import { buildSeeds, mutate } from '../fuzz/corpus.ts';
import { fuzz, scratchRoot, table } from '../fuzz/fuzz.ts';
import { ensureTool, FLAC_TOOL } from '../setup/system-tools.ts';

describe('fuzzing the readers', () => {
  it('20,000 mutated files: no crash, hang, inconsistent read, bad refusal or read above the memory bound', async () => {
    // Source: common practice (mutation fuzzing; the seeds are files from independent writers).
    const r = await fuzz({ cases: 20_000, seed: 1, jobs: 2, cliEvery: 400 });
    process.stdout.write(`fuzz: 20000 cases in ${r.seconds.toFixed(1)} s\n${table(r)}\n`);
    expect(r.bad, r.bad.map((b) => `case ${b.i} ${b.base}: ${b.outcome}: ${b.what}: ${b.detail}`).join('\n')).toEqual([]);
    // Every family was exercised and both outcomes occur (the corpus and the mutations work).
    for (const family of ['WAV', 'BWF', 'RF64', 'BW64', 'AIFF', 'AIFF-C', 'FLAC']) {
      expect(r.counts[family]?.ok ?? 0, family).toBeGreaterThan(50);
      expect(r.counts[family]?.refused ?? 0, family).toBeGreaterThan(50);
    }
    const cli = Object.entries(r.counts).filter(([k]) => k.endsWith('(command line)')).reduce((n, [, c]) => n + (c.ok ?? 0) + (c.refused ?? 0), 0);
    expect(cli).toBe(50);
  }, 300_000);
});

describe('FLAC verdicts against the reference decoder', () => {
  const dir = fs.mkdtempSync(path.join(scratchRoot, 'reelwright-flacref-'));
  afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

  it('every mutated FLAC file the reference decoder rejects is refused; stricter only where documented', async () => {
    // Source: Xiph.Org's reference decoder, `flac -t` (Debian package flac 1.4.2): exit 0 when the
    // file decodes with matching CRCs and MD5, 1 otherwise.
    const flac = ensureTool(FLAC_TOOL);
    const seeds = (await buildSeeds(dir)).filter((s) => s.family === 'FLAC');
    const tally = { bothAccept: 0, bothReject: 0, onlyReferenceRejects: [] as string[], onlyWeRefuse: [] as string[] };
    for (let i = 0; i < 400; i++) {
      const m = mutate(seeds, 5, i);
      const file = path.join(dir, `case-${i}.flac`);
      fs.writeFileSync(file, m.bytes);
      const reference = spawnSync(flac, ['-t', '-s', file], { encoding: 'utf8' }).status === 0;
      let refusal: string | null = null;
      try {
        const a = await openAudio(file);
        try {
          for await (const block of a.blocks()) void block;
          await a.audioMd5();
        } finally {
          await a.close();
        }
      } catch (e) {
        refusal = (e as Error).message;
      }
      if (reference && refusal === null) tally.bothAccept++;
      else if (!reference && refusal !== null) tally.bothReject++;
      else if (!reference) tally.onlyReferenceRejects.push(`case ${i}: ${m.what}`);
      else tally.onlyWeRefuse.push(`case ${i}: ${m.what}: ${refusal}`);
    }
    expect(tally.onlyReferenceRejects).toEqual([]);
    // Deliberately stricter than the reference (DEVELOPERS.md, "Audio files"): a comment count
    // that cannot fit its block, frames beyond STREAMINFO's total (which would be cut off
    // silently), a frame larger than STREAMINFO's largest block.
    for (const r of tally.onlyWeRefuse) expect(r).toMatch(/comments in the \d+ bytes left|past the \d+ STREAMINFO gives|more than the largest block/);
    expect(tally.bothAccept).toBeGreaterThan(20);
    expect(tally.bothReject).toBeGreaterThan(300);
  }, 120_000);
});
