/**
 * RF64 past 4 GiB, written and read back for real. A long test, outside `npm test` because it
 * writes ~4.3 GB (the 4 GiB boundary in `npm test` is covered by test/io/wav-writer.test.ts, the
 * header upgrade, and test/io/roundtrip.test.ts, a sparse 4.3 GB file):
 *
 *   npm run test:long
 *
 * Needs about 5 GB free in the temp folder (checked first); takes 2–3 minutes here (disk-bound: the
 * writer fsyncs 4.3 GB before renaming).
 */
import { afterAll, describe, expect, it } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';
import { fourcc, u32le, u64le } from '../../dsp/formats/bytes.ts';
import { readAll, type Block } from '../../dsp/source.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import { tempDir, tempLeftovers } from './helpers.ts';

const CHANNELS = 2;
// 16-bit stereo: 4 bytes per frame; 2^30 frames are exactly 4 GiB of audio, so this passes it.
const FRAMES = 2 ** 30 + 3_000_001;

/** A deterministic 16-bit code for frame i, channel c (exactly representable). */
const code = (i: number, c: number) => ((i * 7919 + c * 104729) % 65536) - 32768;

async function* rendering(blockFrames = 1 << 18): AsyncGenerator<Block> {
  for (let lo = 0; lo < FRAMES; lo += blockFrames) {
    const n = Math.min(blockFrames, FRAMES - lo);
    const block: Block = [];
    for (let c = 0; c < CHANNELS; c++) {
      const x = new Float64Array(n);
      let v = ((lo * 7919 + c * 104729) % 65536);
      for (let i = 0; i < n; i++) {
        x[i] = (v - 32768) / 32768;
        v = (v + 7919) % 65536;
      }
      block.push(x);
    }
    yield block;
  }
}

describe('RF64 over 4 GiB', () => {
  const dir = tempDir('rf64-big');
  afterAll(() => {
    if (dir) fs.rmSync(dir, { recursive: true, force: true });
  });

  it('writes RF64 automatically, with ds64 sizes, and reads back the start, the 4 GiB boundary and the end', async () => {
    const needBytes = FRAMES * 4 + 100e6;
    const fsStats = fs.statfsSync(dir);
    const freeBytes = fsStats.bavail * fsStats.bsize;
    expect(freeBytes, `need ${(needBytes / 1e9).toFixed(1)} GB free in ${dir}`).toBeGreaterThan(needBytes);

    const out = path.join(dir, 'long-transfer.wav');
    const res = await writeAudio(out, { sampleRateHz: 48000, channelCount: CHANNELS, blocks: rendering() }, {
      bitsPerSample: 16, sampleFormat: 'int', dither: false, historyText: 'rf64 test',
    });
    // Source: EBU Tech 3306 — RF64 replaces RIFF when sizes pass 32 bits; ds64 holds them as 64-bit.
    expect(res.container).toBe('RF64');
    const size = fs.statSync(out).size;
    expect(res.bytes).toBe(size);
    const fd = fs.openSync(out, 'r');
    const head = new Uint8Array(48);
    fs.readSync(fd, head, 0, 48, 0);
    fs.closeSync(fd);
    expect(fourcc(head, 0)).toBe('RF64');
    expect(u32le(head, 4)).toBe(0xffffffff);
    expect(fourcc(head, 12)).toBe('ds64');
    expect(u64le(head, 20)).toBe(size - 8);
    expect(u64le(head, 28)).toBe(FRAMES * 4);
    expect(u64le(head, 36)).toBe(FRAMES);

    const audio = await openAudio(out);
    expect(audio.info.format).toBe('RF64');
    expect(audio.frames).toBe(FRAMES);
    expect(audio.layout.dataBytes).toBe(FRAMES * 4);
    // The frame whose bytes straddle file offset 2^32, and the 4 GiB-of-audio frame 2^30.
    const fileBoundaryFrame = Math.floor((2 ** 32 - audio.layout.dataOffset) / 4);
    for (const [lo, hi] of [[0, 1000], [fileBoundaryFrame - 500, fileBoundaryFrame + 500], [2 ** 30 - 500, 2 ** 30 + 500], [FRAMES - 1000, FRAMES]]) {
      const got = await readAll(audio, { startFrame: lo, endFrame: hi });
      for (let c = 0; c < CHANNELS; c++) {
        for (let i = 0; i < hi - lo; i++) {
          if (got[c]![i] !== code(lo + i, c) / 32768) expect(got[c]![i], `frame ${lo + i} ch ${c}`).toBe(code(lo + i, c) / 32768);
        }
      }
    }
    expect(audio.codingHistory).toBe('A=PCM,F=48000,W=16,M=stereo,T=rf64 test\r\n');
    await audio.close();
    expect(tempLeftovers(dir)).toEqual([]);
    fs.rmSync(out);
  }, 900_000);
});
