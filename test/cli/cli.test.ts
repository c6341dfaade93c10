/** The command line: contract keys, help, exit codes, and refusal to harm the source. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync, copyFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { runCli, repoRoot, demoPath, dataChunkBytes } from '../helpers/cli.ts';
import { operations } from '../../dsp/ops/registry.ts';

const root = repoRoot;
const demo = demoPath;
let dir: string;

beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'rw-cli-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('reelwright info', () => {
  it('prints the contract `file` object with the audio MD5 (fixity)', async () => {
    const r = await runCli('info', demo, '--json');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    for (const k of ['path', 'format', 'sampleRateHz', 'channels', 'bitsPerSample', 'sampleFormat', 'durationSeconds', 'frames', 'chunks', 'audioMd5']) {
      expect(j.file).toHaveProperty(k);
    }
    // Source: MD5 (RFC 1321) of the data chunk bytes, located by an independent RIFF walk.
    expect(j.file.audioMd5).toBe(createHash('md5').update(dataChunkBytes(demo)).digest('hex'));
    expect(j.file.frames).toBe(dataChunkBytes(demo).length / (2 * 3));
    expect(j.info.channels).toHaveLength(2);
  });

  it('prints exactly one JSON object on stdout', async () => {
    const r = await runCli('spectrum', demo, '--json', '--quiet');
    expect(r.code).toBe(0);
    expect(() => JSON.parse(r.out)).not.toThrow();
    const j = JSON.parse(r.out);
    expect(Object.keys(j)).toEqual(['file', 'spectrum']);
    expect(j.spectrum.levelsDb).toHaveLength(2);
    expect(j.spectrum.frequenciesHz).toHaveLength(j.spectrum.levelsDb[0].length);
  });
});

describe('help', () => {
  it('lists every registered verb and gives --help for each', async () => {
    const r = await runCli('--help');
    expect(r.code).toBe(0);
    for (const op of operations) {
      expect(r.out).toContain(op.name);
      const h = await runCli(op.name, '--help');
      expect(h.code).toBe(0);
      for (const p of op.params) expect(h.out).toContain(`--${p.flag}`);
    }
  });
  it('rejects an unknown verb or option with exit 2', async () => {
    expect((await runCli('frobnicate')).code).toBe(2);
    const r = await runCli('info', demo, '--frobnicate');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/unknown option --frobnicate/);
  });
});

describe('bad input: one line naming the file, exit 2', () => {
  const cases: [string, (p: string) => void, RegExp][] = [
    ['missing file', () => {}, /cannot open|no such/i],
    ['not audio', (p) => writeFileSync(p, 'this is a text file, not a recording\n'), /RIFF|AIFF|FLAC|not an? /i],
    ['empty file', (p) => writeFileSync(p, Buffer.alloc(0)), /empty|truncated|too short|0 bytes/i],
    ['truncated header', (p) => writeFileSync(p, readFileSync(demo).subarray(0, 30)), /truncated|past the end|expected/i],
  ];
  for (const [name, make, pattern] of cases) {
    it(name, async () => {
      const p = path.join(dir, `${name.replace(/\s/g, '-')}.wav`);
      make(p);
      const r = await runCli('info', p);
      expect(r.code).toBe(2);
      expect(r.err.trim().split('\n')).toHaveLength(1);
      expect(r.err).toContain(p);
      expect(r.err).toMatch(pattern);
    });
  }
});

/** A 32-bit float mono WAV built byte by byte (RIFF/fmt/data per the WAVE spec), one sample NaN. */
function floatWavWithNaN(file: string): void {
  const n = 4800;
  const data = Buffer.alloc(n * 4);
  for (let i = 0; i < n; i++) data.writeFloatLE(0.25 * Math.sin((2 * Math.PI * 440 * i) / 48000), i * 4);
  data.writeFloatLE(NaN, 100 * 4);
  const fmt = Buffer.alloc(16);
  fmt.writeUInt16LE(3, 0); // WAVE_FORMAT_IEEE_FLOAT
  fmt.writeUInt16LE(1, 2);
  fmt.writeUInt32LE(48000, 4);
  fmt.writeUInt32LE(48000 * 4, 8);
  fmt.writeUInt16LE(4, 12);
  fmt.writeUInt16LE(32, 14);
  const chunk = (id: string, b: Buffer) => Buffer.concat([Buffer.from(id, 'latin1'), Buffer.from(Uint32Array.of(b.length).buffer), b]);
  const body = Buffer.concat([Buffer.from('WAVE'), chunk('fmt ', fmt), chunk('data', data)]);
  writeFileSync(file, Buffer.concat([Buffer.from('RIFF'), Buffer.from(Uint32Array.of(body.length).buffer), body]));
}

describe('NaN / infinite float samples', () => {
  it('analyses report them in one line; corrections refuse the file', async () => {
    const p = path.join(dir, 'nan.wav');
    floatWavWithNaN(p);
    const r = await runCli('info', p, '--json');
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/1 samples are NaN or infinite/);
    expect(r.err).toContain(p);
    for (const op of operations.filter((o) => o.kind === 'correction')) {
      const out = path.join(dir, `nan-${op.name}.wav`);
      const c = await runCli(op.name, p, out);
      expect(c.code).toBe(2);
      expect(c.err).toMatch(/NaN or infinite/);
      expect(() => statSync(out)).toThrow();
    }
  });
});

describe('corrections never touch the source', () => {
  const corrections = operations.filter((o) => o.kind === 'correction');
  for (const op of corrections) {
    it(`${op.name}: refuses OUT = IN and leaves nothing behind on bad input`, async () => {
      const src = path.join(dir, `src-${op.name}.wav`);
      copyFileSync(demo, src);
      const before = createHash('md5').update(readFileSync(src)).digest('hex');
      const same = await runCli(op.name, src, src);
      expect(same.code).toBe(2);
      expect(same.err).toMatch(/refusing to write onto the source/);
      expect(createHash('md5').update(readFileSync(src)).digest('hex')).toBe(before);

      const bad = path.join(dir, `bad-${op.name}.wav`);
      writeFileSync(bad, readFileSync(demo).subarray(0, 100));
      const out = path.join(dir, `out-${op.name}.wav`);
      const r = await runCli(op.name, bad, out);
      expect(r.code).toBe(2);
      expect(() => statSync(out)).toThrow();
      expect(readdirSync(dir).filter((f) => f.startsWith('.reelwright-tmp-'))).toEqual([]);
    });
  }
});

describe('the installed bin', () => {
  it('runs the built command line (build/cli) with exit 2 on bad usage', () => {
    // Source: the command-line contract (exit 2 = bad usage).
    const ok = spawnSync(process.execPath, [path.join(root, 'bin/reelwright.mjs'), '--help'], { encoding: 'utf8' });
    expect(ok.status).toBe(0);
    expect(ok.stdout).toContain('reelwright');
    const bad = spawnSync(process.execPath, [path.join(root, 'bin/reelwright.mjs'), 'info'], { encoding: 'utf8' });
    expect(bad.status).toBe(2);
    expect(bad.stdout).toBe('');
    expect(bad.stderr.trim().split('\n')).toHaveLength(1);
  });
});
