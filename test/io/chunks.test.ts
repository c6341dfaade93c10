import { afterAll, describe, expect, it } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';
import { codingHistoryLines, parseHistoryLine } from '../../dsp/formats/bext.ts';
import { fourcc, u32le } from '../../dsp/formats/bytes.ts';
import { readAll } from '../../dsp/source.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import type { OpenedAudio } from '../../main/io/types.ts';
import { FIXTURES, fileBytes, tempDir, tempLeftovers } from './helpers.ts';

const dir = tempDir('chunks');
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

const SOURCE = path.join(FIXTURES, 'chunks_bwf.wav');
const SOURCE_HISTORY = 'A=ANALOGUE,M=stereo,T=Revox A77; 19 cm/s; 1/4 in 2-track\r\nA=PCM,F=96000,W=24,M=stereo,T=ADC 1\r\n';

async function copy(from: OpenedAudio, out: string, historyText: string, rateHz = from.sampleRateHz) {
  return writeAudio(out, { sampleRateHz: rateHz, channelCount: from.channelCount, blocks: from.blocks({ blockFrames: 50 }) }, {
    bitsPerSample: 24, sampleFormat: 'int', dither: false, copyFrom: from, sourcePath: from.path, historyText,
  });
}

/** Walks the RIFF chunk list independently of the reader: [id, payload offset, size]. */
function walk(bytes: Uint8Array): [string, number, number][] {
  const out: [string, number, number][] = [];
  for (let p = 12; p + 8 <= bytes.length; ) {
    const size = u32le(bytes, p + 4);
    out.push([fourcc(bytes, p), p + 8, size]);
    p += 8 + size + (size & 1);
  }
  return out;
}

describe('chunk copying and CodingHistory', () => {
  it('copies LIST/INFO, iXML, cue and an odd-sized unknown chunk byte-exact, in order; drops JUNK', async () => {
    // Source: RIFF (Microsoft/IBM 1991): chunks are word-aligned (odd sizes get one pad byte);
    // chunk payloads as assembled by make_fixtures.py.
    const src = await openAudio(SOURCE);
    const out = path.join(dir, 'run1.wav');
    await copy(src, out, 'run one');
    const srcBytes = fileBytes(SOURCE);
    const outBytes = fileBytes(out);
    const s = walk(srcBytes), o = walk(outBytes);
    expect(s.map((c) => c[0])).toEqual(['fmt ', 'bext', 'JUNK', 'LIST', 'iXML', 'cue ', 'data', 'zzzz', 'LIST']);
    expect(o.map((c) => c[0])).toEqual(['JUNK', 'fmt ', 'bext', 'LIST', 'iXML', 'cue ', 'data', 'zzzz', 'LIST']);
    const payload = (b: Uint8Array, c: [string, number, number]) => b.subarray(c[1], c[1] + c[2]);
    for (const i of [3, 4, 5, 7, 8]) expect(payload(outBytes, o[i]!), o[i]![0]).toEqual(payload(srcBytes, s[i]!));
    expect(Array.from(payload(outBytes, o[7]!))).toEqual([0x5a, 0x01, 0x02, 0x03, 0xfe]);
    // The odd chunk is followed by a zero pad byte, and the next chunk starts on the even offset.
    expect(outBytes[o[7]![1] + 5]).toBe(0);
    expect(o[8]![1] - 8).toBe(o[7]![1] + 6);
    expect(new TextDecoder().decode(payload(outBytes, o[4]!))).toBe('<?xml version="1.0"?><BWFXML><PROJECT>Northmoor</PROJECT></BWFXML>');
    // Our JUNK is the 28-byte RF64 placeholder, not the source's.
    expect(o[0]![2]).toBe(28);
    // The output reader sees the same layout, with positions.
    const back = await openAudio(out);
    expect(back.chunks.filter((c) => c.position === 'after-data').map((c) => c.id)).toEqual(['zzzz', 'LIST']);
    expect(await readAll(back)).toEqual(await readAll(src));
    await back.close();
    await src.close();
  });

  it('keeps every bext field and adds exactly one CodingHistory line per run', async () => {
    // Source: EBU Tech 3285 (bext fields), EBU R98 (one CR/LF-terminated line per stage,
    // A=,F=,W=,M=,T= fields); field values as assembled by make_fixtures.py.
    const src = await openAudio(SOURCE);
    expect(src.codingHistory).toBe(SOURCE_HISTORY);
    const out1 = path.join(dir, 'h1.wav');
    await copy(src, out1, 'reelwright unecho delay=0.0231s, gain=0.42');
    const a1 = await openAudio(out1);
    const out2 = path.join(dir, 'h2.wav');
    await copy(a1, out2, 'reelwright reverse channels=2');
    const a2 = await openAudio(out2);
    for (const a of [a1, a2]) {
      const b = a.bext!;
      expect(b.description).toBe('Reel 14 side A, Halvorsen family collection, transfer 1');
      expect(b.originator).toBe('Northmoor Sound Archive');
      expect(b.originatorReference).toBe('NSA-2019-0417-14A');
      expect(b.originationDate).toBe('2019-04-17');
      expect(b.originationTime).toBe('14:05:33');
      expect(b.timeReference).toBe(2 ** 32 + 123456789);
      expect(b.version).toBe(2);
      expect(b.umidHex).toBe(Array.from({ length: 64 }, (_, i) => (i + 1).toString(16).padStart(2, '0')).join(''));
      expect([b.loudnessValue, b.loudnessRange, b.maxTruePeakLevel, b.maxMomentaryLoudness, b.maxShortTermLoudness])
        .toEqual([-2300, 850, -150, -1800, -2000]);
      // The fixed 602 bytes are the source's, byte for byte.
      expect(b.fixed).toEqual(src.bext!.fixed);
    }
    const lines1 = codingHistoryLines(a1.codingHistory);
    const lines2 = codingHistoryLines(a2.codingHistory);
    expect(lines1.length).toBe(3);
    expect(lines2.length).toBe(4);
    expect(a1.codingHistory.startsWith(SOURCE_HISTORY)).toBe(true);
    expect(a2.codingHistory.startsWith(a1.codingHistory)).toBe(true);
    expect(a2.codingHistory.endsWith('\r\n')).toBe(true);
    expect(lines1[2]).toBe('A=PCM,F=48000,W=24,M=stereo,T=reelwright unecho delay=0.0231s; gain=0.42');
    expect(parseHistoryLine(lines2[3]!)).toEqual({ A: 'PCM', F: '48000', W: '24', M: 'stereo', T: 'reelwright reverse channels=2' });
    await Promise.all([src.close(), a1.close(), a2.close()]);
  });

  it('creates a bext for a source without one, recording the run', async () => {
    // Source: EBU Tech 3285 v2 layout (602-byte fixed part, version 2, loudness 0x7FFF when unset).
    const src = await openAudio(path.join(FIXTURES, 'wave_16bit.wav'));
    expect(src.bext).toBeUndefined();
    const out = path.join(dir, 'fresh.wav');
    await writeAudio(out, { sampleRateHz: 44100, channelCount: 2, blocks: src.blocks() }, {
      bitsPerSample: 16, sampleFormat: 'int', dither: false, copyFrom: src, historyText: 'reelwright align',
    });
    const a = await openAudio(out);
    expect(a.info.format).toBe('BWF');
    const b = a.bext!;
    expect(b.originator).toBe('Reelwright');
    expect(b.description).toBe('Processed by Reelwright from wave_16bit.wav');
    expect(b.version).toBe(2);
    expect(b.originationDate).toMatch(/^\d{4}-\d{2}-\d{2}$/);
    expect(b.originationTime).toMatch(/^\d{2}:\d{2}:\d{2}$/);
    expect(b.loudnessValue).toBe(0x7fff);
    expect(a.codingHistory).toBe('A=PCM,F=44100,W=16,M=stereo,T=reelwright align\r\n');
    const bextChunk = a.chunks.find((c) => c.id === 'bext')!;
    expect(bextChunk.size).toBe(602 + a.codingHistory.length);
    await Promise.all([src.close(), a.close()]);
  });

  it('rescales TimeReference when the output sample rate differs (same time of day)', async () => {
    // Source: EBU Tech 3285 — TimeReference counts samples at the file's own sample rate.
    const src = await openAudio(SOURCE);
    const out = path.join(dir, 'rate.wav');
    await copy(src, out, 'rate change', 96000);
    const a = await openAudio(out);
    expect(a.bext!.timeReference).toBe(2 * (2 ** 32 + 123456789));
    expect(parseHistoryLine(codingHistoryLines(a.codingHistory)[2]!).F).toBe('96000');
    await Promise.all([src.close(), a.close()]);
  });

  it('an odd-sized data chunk gets its pad byte and the chunks after it stay readable', async () => {
    // Source: RIFF word alignment — a 301-byte data chunk is followed by one pad byte.
    const src = await openAudio(SOURCE);
    const out = path.join(dir, 'odd.wav');
    const x = Float64Array.from({ length: 301 }, (_, i) => ((i % 17) - 8) / 16);
    async function* one() { yield [x]; }
    await writeAudio(out, { sampleRateHz: 8000, channelCount: 1, blocks: one() }, {
      bitsPerSample: 8, sampleFormat: 'int', dither: false, copyFrom: src, historyText: 'odd',
    });
    const bytes = fileBytes(out);
    const chunks = walk(bytes);
    const data = chunks.find((c) => c[0] === 'data')!;
    expect(data[2]).toBe(301);
    expect(bytes[data[1] + 301]).toBe(0);
    expect(chunks.map((c) => c[0]).slice(-2)).toEqual(['zzzz', 'LIST']);
    expect(u32le(bytes, 4)).toBe(bytes.length - 8);
    const a = await openAudio(out);
    expect((await readAll(a))[0]).toEqual(x);
    await Promise.all([src.close(), a.close()]);
    expect(tempLeftovers(dir)).toEqual([]);
  });
});
