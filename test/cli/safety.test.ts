/**
 * Clean exits (issue 17, items 5, 7 and 10): Ctrl+C and SIGTERM during a correction leave no
 * temporary file and exit 130/143; stale temporary files of killed runs are removed; an internal
 * error names the file (exit 3) and every exit code is documented; an existing OUT is replaced
 * only with --overwrite.
 */
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { CancelledError, ParameterError } from '../../dsp/errors.ts';
import { findOperation } from '../../dsp/ops/registry.ts';
import type { AnalysisOp } from '../../dsp/ops/types.ts';
import { MemorySource, type Block } from '../../dsp/source.ts';
import { seededRng } from '../../dsp/random.ts';
import { removeStaleTemporaryFiles, writeAudio } from '../../main/io/writer.ts';
import { tempDir, tempLeftovers } from '../io/helpers.ts';
import { demoPath, repoRoot, runCli } from '../helpers/cli.ts';

const dir = tempDir('safety');
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));
const opts = { bitsPerSample: 16 as const, sampleFormat: 'int' as const, dither: false };

/** Two minutes of stereo noise: long enough that a stretch is still writing when the signal comes. */
let long: string;
beforeAll(async () => {
  long = path.join(dir, 'long.wav');
  const rng = seededRng(3);
  async function* blocks(): AsyncGenerator<Block> {
    for (let s = 0; s < 120; s++) yield [Float64Array.from({ length: 48000 }, () => 0.2 * (rng() - 0.5)), Float64Array.from({ length: 48000 }, () => 0.2 * (rng() - 0.5))];
  }
  await writeAudio(long, { sampleRateHz: 48000, channelCount: 2, blocks: blocks() }, opts);
});

/** Starts `reelwright ARGS` in its own process; resolves with its exit code and stderr. */
function start(args: string[]) {
  const child = spawn(process.execPath, [path.join(repoRoot, 'bin/reelwright.mjs'), ...args], { stdio: ['ignore', 'ignore', 'pipe'] });
  let err = '';
  child.stderr.on('data', (d: Buffer) => (err += d.toString()));
  const done = new Promise<{ code: number | null; signal: string | null; err: string }>((resolve) => child.on('close', (code, signal) => resolve({ code, signal, err })));
  return { child, done };
}

async function until(test: () => boolean, seconds: number): Promise<boolean> {
  const t0 = Date.now();
  while (Date.now() - t0 < seconds * 1000) {
    if (test()) return true;
    await new Promise((r) => setTimeout(r, 50));
  }
  return test();
}

describe('item 5: interrupted corrections', () => {
  for (const [signal, code] of [['SIGINT', 130], ['SIGTERM', 143]] as const) {
    it(`${signal} while the output is being written: the temporary file is removed, exit ${code}`, async () => {
      // Source: POSIX shells report 128 + signal number (SIGINT 2, SIGTERM 15) for an interrupted command.
      const outDir = fs.mkdtempSync(path.join(dir, `${signal}-`));
      const out = path.join(outDir, 'fit.wav');
      const { child, done } = start(['stretch', long, out, '--ratio', '1.1', '--quiet']);
      expect(await until(() => tempLeftovers(outDir).length > 0, 90), 'the temporary output appears').toBe(true);
      child.kill(signal);
      const r = await done;
      expect(r.code).toBe(code);
      expect(r.err).toBe(`reelwright stretch: ${out}: interrupted; the unfinished output was removed\n`);
      expect(fs.readdirSync(outDir)).toEqual([]);
    }, 120_000);
  }

  it('the writer stops at the next block when its abort signal is set, and removes its temporary file', async () => {
    const out = path.join(dir, 'aborted.wav');
    const signal = { aborted: false };
    async function* blocks(): AsyncGenerator<Block> {
      for (let i = 0; i < 10; i++) {
        if (i === 3) signal.aborted = true;
        yield [new Float64Array(1000)];
      }
    }
    const err = await writeAudio(out, { sampleRateHz: 48000, channelCount: 1, blocks: blocks() }, { ...opts, signal }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(CancelledError);
    expect(fs.existsSync(out)).toBe(false);
    expect(tempLeftovers(dir)).toEqual([]);
  });

  it('stale temporary files of killed runs are removed when writing into their folder; live or recent ones are kept', async () => {
    const folder = fs.mkdtempSync(path.join(dir, 'stale-'));
    // Linux pid_max is at most 2^22 (proc(5)), so this process id never exists.
    const dead = 4194305;
    const old = path.join(folder, `.reelwright-tmp-${dead}-0123abcd-reel.wav`);
    const recent = path.join(folder, `.reelwright-tmp-${dead}-89abcdef-reel.wav`);
    const live = path.join(folder, `.reelwright-tmp-${process.ppid}-00112233-reel.wav`);
    const notOurs = path.join(folder, '.reelwright-tmp-notes.txt');
    for (const f of [old, recent, live, notOurs]) fs.writeFileSync(f, 'x');
    const hourAgo = new Date(Date.now() - 3600_000);
    for (const f of [old, live, notOurs]) fs.utimesSync(f, hourAgo, hourAgo);
    const r = await runCli('reverse', demoPath, path.join(folder, 'reversed.wav'), '--quiet');
    expect(r.code).toBe(0);
    expect(fs.readdirSync(folder).sort()).toEqual([path.basename(live), path.basename(notOurs), path.basename(recent), 'reversed.wav'].sort());
    expect(removeStaleTemporaryFiles(folder)).toEqual([]);
  });
});

describe('item 7: exit codes and internal errors', () => {
  it('an internal error is one line naming the file, exit 3', async () => {
    const levels = findOperation('levels') as AnalysisOp;
    const spy = vi.spyOn(levels, 'run').mockRejectedValue(new TypeError("Cannot read properties of undefined (reading '0')"));
    try {
      const r = await runCli('levels', demoPath, '--json');
      expect(r.code).toBe(3);
      expect(r.out).toBe('');
      expect(r.err).toBe(`reelwright levels: ${demoPath}: internal error: Cannot read properties of undefined (reading '0')\n`);
    } finally {
      spy.mockRestore();
    }
  });

  it('the help and the documentation list every exit code', async () => {
    const help = (await runCli('--help')).out;
    for (const code of ['0 ok', '1 a check threshold', '2 bad usage', '3 internal error', '130/143 interrupted']) expect(help).toContain(code);
    for (const doc of ['README.md', 'DEVELOPERS.md']) {
      const text = fs.readFileSync(path.join(repoRoot, doc), 'utf8');
      for (const code of ['`3`', '`130`', '`143`', '--overwrite']) expect(text, `${doc} ${code}`).toContain(code);
    }
  });
});

describe('item 10: an existing OUT is replaced only with --overwrite', () => {
  it('refused with exit 2 and left untouched; replaced with --overwrite; the source never', async () => {
    const out = path.join(dir, 'existing.wav');
    fs.writeFileSync(out, 'an unrelated take');
    const r = await runCli('reverse', demoPath, out, '--quiet');
    expect(r.code).toBe(2);
    expect(r.err).toBe(`reelwright reverse: ${out} already exists; nothing was written (pass --overwrite to replace it)\n`);
    expect(fs.readFileSync(out, 'utf8')).toBe('an unrelated take');
    expect((await runCli('reverse', demoPath, out, '--quiet', '--overwrite')).code).toBe(0);
    expect(fs.readFileSync(out).subarray(0, 4).toString()).toBe('RIFF');
    // A hard link to the source is the source, --overwrite or not.
    const src = path.join(dir, 'source.wav');
    fs.copyFileSync(demoPath, src);
    const link = path.join(dir, 'source-link.wav');
    fs.linkSync(src, link);
    const before = fs.readFileSync(src);
    const h = await runCli('reverse', src, link, '--quiet', '--overwrite');
    expect(h.code).toBe(2);
    expect(h.err).toContain('refusing to write onto the source file');
    expect(fs.readFileSync(src).equals(before)).toBe(true);
    expect(tempLeftovers(dir)).toEqual([]);
  });

  it('a file that appears at OUT while the output is rendered is not replaced either', async () => {
    const out = path.join(dir, 'appears.wav');
    const src = new MemorySource([new Float64Array(48000)], 48000);
    async function* blocks(): AsyncGenerator<Block> {
      let first = true;
      for await (const b of src.blocks({ blockFrames: 4800 })) {
        if (first) fs.writeFileSync(out, 'written by someone else meanwhile');
        first = false;
        yield b;
      }
    }
    const err = await writeAudio(out, { sampleRateHz: 48000, channelCount: 1, blocks: blocks() }, opts).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ParameterError);
    expect((err as Error).message).toBe(`${out} already exists; nothing was written (pass --overwrite to replace it)`);
    expect(fs.readFileSync(out, 'utf8')).toBe('written by someone else meanwhile');
    expect(tempLeftovers(dir)).toEqual([]);
  });
});
