/**
 * `reelwright echo` and `reelwright unecho` through the generated command line: the contract's
 * JSON, before/after measurement, and bad input (exit 2, one line, nothing written).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readdirSync, rmSync, statSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { runCli } from '../helpers/cli.ts';
import { writeAudio } from '../../main/io/index.ts';
import { MemorySource } from '../../dsp/source.ts';
import { addEchoes } from '../helpers/delay.ts';
import { voiceLike } from '../helpers/voice.ts';

const fs = 48000;
let dir: string;
let mono: string;

beforeAll(async () => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'rw-echo-'));
  const { x } = voiceLike({ sampleRateHz: fs, seconds: 6, seed: 12 });
  const y = addEchoes(x, [{ delaySamples: 0.0234 * fs, gain: 0.5 }]);
  mono = path.join(dir, 'voice-desk.wav');
  const src = new MemorySource([y], fs);
  await writeAudio(mono, { sampleRateHz: fs, channelCount: 1, blocks: src.blocks() }, { bitsPerSample: 32, sampleFormat: 'float', dither: false });
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('reelwright echo', () => {
  it('prints { file, echo, printThrough } with the contract fields', async () => {
    // Source: ARCHITECTURE.md command-line contract (echo row).
    const r = await runCli('echo', mono, '--json', '--quiet');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    expect(Object.keys(j)).toEqual(['file', 'echo', 'printThrough']);
    expect(j.echo.present).toBe(true);
    expect(j.echo.delaySeconds).toBeCloseTo(0.0234, 5);
    expect(j.echo.gain).toBeCloseTo(0.5, 2);
    expect(j.printThrough.present).toBe(false);
  });

  it('refuses a range beyond the file and a channel it does not have: exit 2, one line', async () => {
    for (const args of [['--range', '0.001:3'], ['--channel', '2']]) {
      const r = await runCli('echo', mono, '--json', '--quiet', ...args);
      expect(r.code).toBe(2);
      expect(r.out).toBe('');
      expect(r.err.trim().split('\n')).toHaveLength(1);
      // Source: common practice (the product's bad-input rule) — the line names the file.
      expect(r.err).toContain(mono);
    }
  });
});

describe('reelwright unecho', () => {
  it('measures, cancels, and prints the echo before and after', async () => {
    const out = path.join(dir, 'clean.wav');
    const r = await runCli('unecho', mono, out, '--json', '--quiet');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    expect(j.unecho.parameters.delaySeconds).toBeCloseTo(0.0234, 5);
    expect(j.unecho.before.echo.present).toBe(true);
    expect(j.unecho.after.echo.present).toBe(false);
    expect(statSync(out).size).toBeGreaterThan(0);
  }, 60_000);

  const bad: Array<[string, string[], RegExp]> = [
    ['|g| ≥ 1 by hand', ['--delay', '0.0234', '--gain', '1.2'], /gain|allowed range|−1 < G < 1/],
    ['|g| = 1 exactly', ['--delay', '0.0234', '--gain', '1'], /−1 < G < 1/],
    ['a delay beyond the file', ['--delay', '9', '--gain', '0.5'], /\.wav: --delay 9: outside the file/],
    ['a range beyond the file', ['--range', '0.001:4'], /\.wav: .*can be searched|allowed range/],
    ['a channel a mono file does not have', ['--channel', '2', '--delay', '0.0234', '--gain', '0.5'], /\.wav: .*1 channel/],
  ];
  for (const [name, args, pattern] of bad) {
    it(`${name}: exit 2, one line, nothing written`, async () => {
      const out = path.join(dir, `bad-${name.replace(/[^a-z0-9]+/gi, '-')}.wav`);
      const r = await runCli('unecho', mono, out, '--quiet', ...args);
      expect(r.code).toBe(2);
      expect(r.out).toBe('');
      expect(r.err.trim().split('\n')).toHaveLength(1);
      expect(r.err).toMatch(pattern);
      expect(() => statSync(out)).toThrow();
      expect(readdirSync(dir).filter((f) => f.startsWith('.reelwright-tmp-'))).toEqual([]);
    });
  }
});
