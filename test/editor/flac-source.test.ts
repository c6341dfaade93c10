/**
 * FLAC in the editor's worker (renderer/src/lib/flac-source.ts), over asynchronous byte reads:
 * the samples equal the WAV the reference encoder was given, also read from the middle and
 * backwards, and the checksum is STREAMINFO's MD5 of the samples.
 */
import fs from 'node:fs';
import path from 'node:path';
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { parseAudioLayoutFromBytes } from '../../dsp/formats/index.ts';
import { collectBlocks, readAll } from '../../dsp/source.ts';
import { FlacSource } from '../../renderer/src/lib/flac-source.ts';
import { readLayout } from '../../renderer/src/worker/audio-layout.ts';
import { openAudio } from '../../main/io/index.ts';
import { InputError } from '../../dsp/errors.ts';

const dir = path.resolve(import.meta.dirname, '../fixtures/io');

async function open(name: string) {
  const bytes = new Uint8Array(fs.readFileSync(path.join(dir, name)));
  const read = async (o: number, l: number) => bytes.slice(o, Math.min(bytes.length, o + l));
  const layout = await readLayout(read, bytes.length, name);
  return { src: await FlacSource.open(read, layout, bytes.length, name), bytes };
}

describe('FlacSource', () => {
  for (const bits of [16, 24]) {
    it(`${bits}-bit: the same samples as the WAV the reference encoder read, forward, from the middle and backwards`, async () => {
      // Source: the fixture pair was made by Debian's flac 1.4.2 from the WAV (test/fixtures/io/make_fixtures.py).
      const { src } = await open(`flac_${bits}bit.flac`);
      const wav = await openAudio(path.join(dir, `flac_${bits}bit.wav`));
      try {
        const want = await readAll(wav);
        const got = await readAll(src, { blockFrames: 1000 });
        expect(src.frames).toBe(wav.frames);
        for (let c = 0; c < want.length; c++) expect(Array.from(got[c]!)).toEqual(Array.from(want[c]!));
        const mid = Math.floor(src.frames / 3);
        const part = await readAll(src, { startFrame: mid, endFrame: src.frames - 5 });
        expect(Array.from(part[0]!)).toEqual(Array.from(want[0]!.subarray(mid, src.frames - 5)));
        const back = await collectBlocks(src.blocks({ reverse: true, blockFrames: 777 }), src.channelCount);
        expect(Array.from(back[0]!)).toEqual(Array.from(want[0]!).reverse());
      } finally {
        await wav.close();
      }
    });
  }

  it('checksums the samples as STREAMINFO does (MD5 of the WAV’s little-endian PCM)', async () => {
    // Source: RFC 9639 §8.2, the MD5 of the samples as signed little-endian integers, interleaved = a PCM WAV's data chunk.
    const { src } = await open('flac_16bit.flac');
    const wavBytes = new Uint8Array(fs.readFileSync(path.join(dir, 'flac_16bit.wav')));
    const l = parseAudioLayoutFromBytes(wavBytes, 'flac_16bit.wav');
    const expected = createHash('md5').update(wavBytes.subarray(l.dataOffset, l.dataOffset + l.dataBytes)).digest('hex');
    expect(await src.audioMd5()).toBe(expected);
    expect(src.layout.flac!.md5).toBe(expected);
  });

  it('refuses a file whose audio was altered after encoding, naming the file', async () => {
    const { bytes } = await open('flac_16bit.flac');
    const layout0 = parseAudioLayoutFromBytes(bytes, 'x.flac');
    const bad = bytes.slice();
    // Change STREAMINFO's MD5 (its last 16 bytes): the audio no longer matches it.
    const md5At = layout0.chunks.find((c) => c.id === 'STREAMINFO')!.offset + 18;
    bad[md5At] ^= 0xff;
    const read = async (o: number, n: number) => bad.slice(o, o + n);
    const src = await FlacSource.open(read, await readLayout(read, bad.length, 'altered.flac'), bad.length, 'altered.flac');
    const e = await src.audioMd5().then(() => null, (x: unknown) => x as InputError);
    expect(e).toBeInstanceOf(InputError);
    expect(e!.oneLine()).toMatch(/^altered\.flac: at byte \d+: the decoded audio's MD5 .* differs from the one in STREAMINFO/);
  });
});
