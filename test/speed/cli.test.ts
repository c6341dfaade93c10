/** `reelwright speed` and `reelwright varispeed` end to end: files in, JSON out, exit codes. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { io, main } from '../../main/cli/index.ts';
import { openAudio, writeAudio } from '../../main/io/index.ts';
import { MemorySource, readAll } from '../../dsp/source.ts';
import { add, hum, programme } from './synth.ts';

const root = path.resolve(new URL('../..', import.meta.url).pathname);
const demo = path.join(root, 'assets/demo/thornbury-reel7.wav');
const demoTruth = JSON.parse(readFileSync(path.join(root, 'assets/demo/thornbury-reel7.json'), 'utf8')) as { speedFactor: number; mainsHz: number; toneHz: number };
let dir: string;

async function run(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '', err = '';
  const saved = { ...io };
  io.out = (s) => void (out += s.endsWith('\n') ? s : s + '\n');
  io.err = (s) => void (err += s.endsWith('\n') ? s : s + '\n');
  try {
    return { code: await main(argv), out, err };
  } finally {
    Object.assign(io, saved);
  }
}

/** The real command, as a user runs it. */
function spawnCli(...argv: string[]) {
  const r = spawnSync(process.execPath, [path.join(root, 'bin/reelwright.mjs'), ...argv], { encoding: 'utf8', cwd: root });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

async function writeWav(file: string, channels: Float64Array[], fs: number, bits: 16 | 24 | 32 = 24): Promise<void> {
  const src = new MemorySource(channels, fs);
  await writeAudio(file, { sampleRateHz: fs, channelCount: channels.length, blocks: src.blocks() }, { bitsPerSample: bits, sampleFormat: bits === 32 ? 'float' : 'int', dither: false });
}

beforeAll(async () => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'rw-speed-cli-'));
  const fs = 16000, n = 20 * fs, a = 1.03;
  const h = hum(n, fs, 50, -50, (t) => a * t);
  await writeWav(path.join(dir, 'hum103.wav'), [add(programme(n, fs, a, 41), h), add(programme(n, fs, a, 42), h)], fs, 32);
  await writeWav(path.join(dir, 'noise.wav'), [programme(8 * fs, fs, 1, 43)], fs);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('reelwright speed', () => {
  it('the demo recording: --json has the contract keys and the stored factor', async () => {
    const r = await run('speed', demo, '--json', '--quiet');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    for (const k of ['factor', 'cents', 'method', 'confidence', 'uncertaintyPercent', 'standardPair', 'candidates', 'curve']) expect(j.speed).toHaveProperty(k);
    expect(j.speed.curve).toHaveProperty('timesSeconds');
    expect(j.speed.curve).toHaveProperty('factors');
    expect(['hum', 'tone']).toContain(j.speed.method);
    expect(Math.abs(j.speed.factor / demoTruth.speedFactor - 1)).toBeLessThan(2e-4);
    expect(j.speed.confidence).toBeGreaterThanOrEqual(0.5);
    for (const c of j.speed.candidates) expect(Object.keys(c)).toEqual(expect.arrayContaining(['method', 'factor', 'confidence']));
  });
  it('--mains 60 on a file without hum: exit 2 and a one-line message', async () => {
    const r = await run('speed', path.join(dir, 'noise.wav'), '--mains', '60', '--json', '--quiet');
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/no 60 Hz mains hum found/);
  });
});

describe('reelwright varispeed', () => {
  it('--from-hum 50 --json: measured before, factor 1 after, within the estimator uncertainty (spawned CLI)', () => {
    const out = path.join(dir, 'fixed.wav');
    const r = spawnCli('varispeed', path.join(dir, 'hum103.wav'), out, '--from-hum', '50', '--json', '--quiet');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    expect(Math.abs(j.varispeed.parameters.measuredFactor / 1.03 - 1)).toBeLessThan(2e-4);
    expect(Math.abs(j.varispeed.before.speed.factor / 1.03 - 1)).toBeLessThan(2e-4);
    const after = j.varispeed.after.speed;
    expect(after.method).toBe('hum');
    expect(Math.abs(after.factor - 1) * 100).toBeLessThan(Math.max(0.01, 3 * after.uncertaintyPercent));
    // Undoing factor S makes the file S times as long (±1 frame).
    expect(Math.abs(j.varispeed.output.frames - 20 * 16000 * j.varispeed.parameters.measuredFactor)).toBeLessThanOrEqual(1);
  });
  it('--factor 2 --rate 8000 writes N/2·(8000/16000) frames; the source is untouched', async () => {
    const input = path.join(dir, 'noise.wav');
    const before = readFileSync(input);
    const out = path.join(dir, 'fast.wav');
    const r = await run('varispeed', input, out, '--factor', '2', '--rate', '8000', '--quality', 'draft', '--quiet');
    expect(r.code).toBe(0);
    expect(readFileSync(input).equals(before)).toBe(true);
    const f = await openAudio(out);
    try {
      expect(f.sampleRateHz).toBe(8000);
      expect(Math.abs(f.frames - (8 * 16000) / 2 / 2)).toBeLessThanOrEqual(1);
      expect(f.codingHistory).toMatch(/reelwright varispeed factor=2/);
      const y = await readAll(f);
      expect(y[0]!.some((v) => v !== 0)).toBe(true);
    } finally {
      await f.close();
    }
  });
  it('bad input: factor out of range, nothing to do, nothing measurable → exit 2, no file written (spawned CLI)', async () => {
    const input = path.join(dir, 'noise.wav');
    const cases: string[][] = [
      ['--factor', '5'],
      ['--factor', '0.1'],
      [],
      ['--factor', '3', '--semitones', '12'],
      ['--from-tone', '1000'],
    ];
    for (const [i, extra] of cases.entries()) {
      const out = path.join(dir, `bad${i}.wav`);
      const r = i === 0 ? spawnCli('varispeed', input, out, ...extra) : await run('varispeed', input, out, ...extra, '--quiet');
      expect(r.code).toBe(2);
      expect(r.out).toBe('');
      expect(r.err.trim().split('\n')).toHaveLength(1);
      expect(existsSync(out)).toBe(false);
    }
    // No temporary files left behind either.
    expect(readdirSync(dir).filter((f) => f.startsWith('.'))).toEqual([]);
  });
});
