import { afterAll, describe, expect, it } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';
import { crc16, crc8, findFlacFrame, parseFlacFrameHeader } from '../../dsp/formats/flac.ts';
import { parseAudioLayoutFromBytes } from '../../dsp/formats/layout.ts';
import { collectBlocks, readAll } from '../../dsp/source.ts';
import { InputError } from '../../dsp/errors.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import { FIXTURES, fileBytes, tempDir } from './helpers.ts';

const dir = tempDir('flac');
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

// Fixtures: flac_16bit.flac / flac_24bit.flac were made by the reference encoder (Debian flac
// 1.4.2, `flac -8 -b 256 --no-padding`) from the WAV files beside them (Python wave module); see
// test/fixtures/io/make_fixtures.py.
for (const [bits, channels, frames] of [[16, 2, 4000], [24, 1, 3000]] as const) {
  describe(`FLAC ${bits}-bit × ${channels} ch (reference encoder)`, () => {
    const flacPath = path.join(FIXTURES, `flac_${bits}bit.flac`);
    const wavPath = path.join(FIXTURES, `flac_${bits}bit.wav`);

    it('decodes sample-exactly to the WAV it was encoded from', async () => {
      // Source: FLAC is lossless (RFC 9639 §1); the WAV is the encoder's input.
      const flac = await openAudio(flacPath);
      const wav = await openAudio(wavPath);
      expect(flac.info).toMatchObject({ format: 'FLAC', sampleRateHz: 44100, channels, bitsPerSample: bits, sampleFormat: 'int', frames });
      expect(flac.info.chunks[0]).toBe('STREAMINFO');
      const a = await readAll(flac);
      const b = await readAll(wav);
      for (let c = 0; c < channels; c++) expect(a[c]).toEqual(b[c]);
      await flac.close();
      await wav.close();
    });

    it('audioMd5 equals the STREAMINFO MD5 written by the encoder', async () => {
      // Source: RFC 9639 §8.2 — STREAMINFO MD5 of the unencoded audio as little-endian signed
      // integers, interleaved; the reference encoder computes it.
      const flac = await openAudio(flacPath);
      const md5 = await flac.audioMd5();
      expect(md5).toBe(flac.layout.flac!.md5);
      expect(md5).not.toBe('0'.repeat(32));
      expect(flac.info.audioMd5).toBe(md5);
      // And it equals the MD5 of the source WAV's stored bytes (same little-endian integers).
      const wav = await openAudio(wavPath);
      expect(await wav.audioMd5()).toBe(md5);
      await flac.close();
      await wav.close();
    });

    it('seeks: ranges starting anywhere and reverse reading match the WAV', async () => {
      // Source: exact identity with the encoder's input; seeking is by CRC-verified frame headers.
      const flac = await openAudio(flacPath);
      const wav = await openAudio(wavPath);
      const ref = await readAll(wav);
      for (const start of [1, 255, 256, 257, 1000, 2047, frames - 300, frames - 1]) {
        const got = await readAll(flac, { startFrame: start, endFrame: Math.min(frames, start + 700) });
        expect(got[0], `start ${start}`).toEqual(ref[0]!.subarray(start, Math.min(frames, start + 700)));
      }
      const rev = await collectBlocks(flac.blocks({ reverse: true, blockFrames: 97, startFrame: 13, endFrame: frames - 5 }), channels);
      expect(rev[channels - 1]).toEqual(ref[channels - 1]!.slice(13, frames - 5).reverse());
      await flac.close();
      await wav.close();
    });
  });
}

describe('FLAC frame recognition (pure)', () => {
  it('CRC-8 and CRC-16 match the FLAC check values', () => {
    // Source: RFC 9639 §9.1.8/§9.3 polynomials; check values for "123456789" are the catalogued
    // CRC-8 (poly 0x07, init 0) = 0xF4 and CRC-16/UMTS = CRC-16/BUYPASS (poly 0x8005, init 0) = 0xFEE8
    // (Greg Cook, "Catalogue of parametrised CRC algorithms").
    const s = Uint8Array.from('123456789', (c) => c.charCodeAt(0));
    expect(crc8(s, 0, s.length)).toBe(0xf4);
    expect(crc16(s, 0, s.length)).toBe(0xfee8);
  });

  it('finds every frame of the fixture with the right first sample', () => {
    // Source: the encoder used a fixed block size of 256 (RFC 9639 §9.1: frame number × block size).
    const bytes = fileBytes(path.join(FIXTURES, 'flac_16bit.flac'));
    const layout = parseAudioLayoutFromBytes(bytes, 'flac_16bit.flac');
    const si = layout.flac!;
    expect([si.minBlockSize, si.maxBlockSize, si.totalSamples, si.channels, si.bitsPerSample]).toEqual([256, 256, 4000, 2, 16]);
    const audio = bytes.subarray(layout.dataOffset);
    const firsts: number[] = [];
    let from = 0;
    for (;;) {
      const f = findFlacFrame(audio, from, si, true);
      if (!f) break;
      firsts.push(f.header.firstSample);
      from = f.offset + 1;
    }
    expect(firsts).toEqual(Array.from({ length: Math.ceil(4000 / 256) }, (_, i) => i * 256));
    expect(parseFlacFrameHeader(audio, 0, si)!.blockSize).toBe(256);
    expect(parseFlacFrameHeader(audio, 1, si)).toBeNull();
  });
});

describe('FLAC with an ID3v2 tag in front', () => {
  it('skips the tag and decodes the same samples', async () => {
    // Source: ID3v2.4 §3.1 (10-byte header, syncsafe size); some taggers put ID3v2 before 'fLaC'.
    const bytes = fileBytes(path.join(FIXTURES, 'flac_24bit.flac'));
    const tag = new Uint8Array(10 + 300);
    tag.set([0x49, 0x44, 0x33, 4, 0, 0, 0, 0, 2, 300 - 256]); // size 300 = 0b10_0101100 → 02 2C
    const file = path.join(dir, 'tagged.flac');
    fs.writeFileSync(file, Buffer.concat([tag, bytes]));
    const a = await openAudio(file);
    const b = await openAudio(path.join(FIXTURES, 'flac_24bit.wav'));
    expect(a.layout.chunks[0]!.offset).toBe(310 + 8);
    expect((await readAll(a))[0]).toEqual((await readAll(b))[0]);
    await Promise.all([a.close(), b.close()]);
  });
});

describe('FLAC bad input', () => {
  it('a truncated FLAC file reports where the stream ends', async () => {
    const bytes = fileBytes(path.join(FIXTURES, 'flac_16bit.flac'));
    const file = path.join(dir, 'cut.flac');
    fs.writeFileSync(file, bytes.subarray(0, Math.floor(bytes.length * 0.6)));
    const audio = await openAudio(file);
    const err = await readAll(audio).then(() => undefined, (e: unknown) => e);
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).oneLine()).toMatch(new RegExp(`^${file.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: at byte \\d+: truncated: the FLAC stream ends after \\d+ of 4000 samples`));
    await audio.close();
  });

  it('a FLAC file cut inside its metadata is refused at open', async () => {
    const bytes = fileBytes(path.join(FIXTURES, 'flac_16bit.flac'));
    const file = path.join(dir, 'cut-meta.flac');
    fs.writeFileSync(file, bytes.subarray(0, 20));
    const err = await openAudio(file).then(() => undefined, (e: unknown) => e);
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).oneLine()).toMatch(/cut-meta\.flac: at byte 4: FLAC metadata block STREAMINFO claims 34 bytes from byte 8 but the file ends at byte 20$/);
  });

  it('FLAC → WAV through writeAudio keeps every sample', async () => {
    const flac = await openAudio(path.join(FIXTURES, 'flac_24bit.flac'));
    const out = path.join(dir, 'from-flac.wav');
    await writeAudio(out, { sampleRateHz: flac.sampleRateHz, channelCount: 1, blocks: flac.blocks() }, {
      bitsPerSample: 24, sampleFormat: 'int', dither: false, copyFrom: flac, historyText: 'from flac',
    });
    const wav = await openAudio(out);
    const src = await openAudio(path.join(FIXTURES, 'flac_24bit.wav'));
    // Source: lossless chain — the decoded FLAC written as 24-bit WAV equals the encoder's input.
    expect(await wav.audioMd5()).toBe(await src.audioMd5());
    await Promise.all([flac.close(), wav.close(), src.close()]);
  });
});
