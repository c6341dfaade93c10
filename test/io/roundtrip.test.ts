import { afterAll, describe, expect, it } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';
import { aiffEncoding, aiffTrailer, buildAiffHeader, type AiffFlavour } from '../../dsp/formats/aiff.ts';
import { buildBext, newBextFixed } from '../../dsp/formats/bext.ts';
import { concatBytes, fourcc, u32le, u64le } from '../../dsp/formats/bytes.ts';
import { decodeSamples, encodeSamples, wavEncoding, type SampleFormat } from '../../dsp/formats/codec.ts';
import type { WavLayoutSpec } from '../../dsp/formats/wav-writer.ts';
import { collectBlocks, readAll } from '../../dsp/source.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import { seededRng } from '../helpers/rng.ts';
import { fileBytes, firstDifference, randomStored, tempDir, tempLeftovers, wavFile } from './helpers.ts';

const dir = tempDir('roundtrip');
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

const FORMATS: [SampleFormat, number][] = [
  ['int', 8], ['int', 16], ['int', 24], ['int', 32], ['float', 32], ['float', 64],
];
type WavKind = 'WAV' | 'EXTENSIBLE' | 'BWF' | 'RF64';
const KINDS: WavKind[] = ['WAV', 'EXTENSIBLE', 'BWF', 'RF64'];

function specFor(kind: WavKind, sampleFormat: SampleFormat, bitsPerSample: number, channels: number): WavLayoutSpec {
  return {
    format: {
      sampleFormat, bitsPerSample, channels, sampleRateHz: 44100,
      extensible: kind === 'EXTENSIBLE', channelMask: kind === 'EXTENSIBLE' ? (channels === 3 ? 0x7 : 0x3) : undefined,
    },
    bext: kind === 'BWF'
      ? buildBext(newBextFixed({ description: 'round trip', originator: 'test', originatorReference: 'rt-1', originationDate: '2020-01-02', originationTime: '03:04:05' }), 'A=PCM,F=44100,W=16,M=stereo\r\n')
      : undefined,
    container: kind === 'RF64' ? 'rf64' : 'auto',
  };
}

/** Re-encodes decoded planar samples with the file's own encoding. */
function reencode(planar: Float64Array[], enc: ReturnType<typeof wavEncoding>): Uint8Array {
  const frames = planar[0]!.length;
  const out = new Uint8Array(frames * planar.length * enc.bytesPerSample);
  encodeSamples(planar, 0, frames, enc, out, 0);
  return out;
}

describe('WAV family: decode → encode is bit-exact for every sample format × container', () => {
  for (const kind of KINDS) {
    for (const [sampleFormat, bits] of FORMATS) {
      const channels = kind === 'EXTENSIBLE' ? 3 : 2;
      it(`${kind} ${sampleFormat}${bits} × ${channels} ch (odd frame count)`, async () => {
        // Source: exact identity (lossless decoding); container layout per Microsoft RIFF/WAVE,
        // WAVEFORMATEXTENSIBLE, EBU Tech 3285 (bext) and EBU Tech 3306 (RF64).
        const frames = 1237;
        const enc = wavEncoding(sampleFormat, bits);
        const stored = randomStored(enc, frames * channels, seededRng(bits * 31 + KINDS.indexOf(kind)));
        const spec = specFor(kind, sampleFormat, bits, channels);
        const file = path.join(dir, `${kind}-${sampleFormat}${bits}.wav`);
        fs.writeFileSync(file, wavFile(spec, stored));
        const audio = await openAudio(file);
        try {
          expect(audio.info.format).toBe(kind === 'EXTENSIBLE' ? 'WAV' : kind);
          expect(audio.layout.extensible).toBe(kind === 'EXTENSIBLE');
          if (kind === 'EXTENSIBLE') expect(audio.layout.channelMask).toBe(0x7);
          expect([audio.bitsPerSample, audio.sampleFormat, audio.channelCount, audio.frames, audio.sampleRateHz])
            .toEqual([bits, sampleFormat, channels, frames, 44100]);
          const planar = await readAll(audio);
          expect(firstDifference(reencode(planar, enc), stored)).toBe('equal');
          // Odd block sizes, a sub-range and reverse reading agree with the whole read.
          const parts = await collectBlocks(audio.blocks({ blockFrames: 100, startFrame: 7, endFrame: 1200 }), channels);
          expect(parts[channels - 1]).toEqual(planar[channels - 1]!.subarray(7, 1200));
          const rev = await collectBlocks(audio.blocks({ blockFrames: 333, reverse: true }), channels);
          expect(rev[0]).toEqual(planar[0]!.slice().reverse());
          // Through the Node writer: same format out, no dither → identical sample bytes.
          const out = path.join(dir, `${kind}-${sampleFormat}${bits}-copy.wav`);
          const res = await writeAudio(out, { sampleRateHz: audio.sampleRateHz, channelCount: channels, blocks: audio.blocks({ blockFrames: 500 }) }, {
            bitsPerSample: bits as 8 | 16 | 24 | 32 | 64, sampleFormat, dither: false, copyFrom: audio, forceRf64: kind === 'RF64',
          });
          expect(res.container).toBe(kind === 'RF64' ? 'RF64' : 'RIFF');
          expect(res.bytes).toBe(fs.statSync(out).size);
          const copy = await openAudio(out);
          expect(firstDifference(fileBytes(out, copy.layout.dataOffset, copy.layout.dataBytes), stored)).toBe('equal');
          expect(copy.layout.dataBytes).toBe(stored.length);
          expect(await copy.audioMd5()).toBe(await audio.audioMd5());
          await copy.close();
        } finally {
          await audio.close();
        }
      });
    }
  }

  it('RF64 header fields follow EBU Tech 3306 (ds64 sizes, 0xFFFFFFFF markers)', async () => {
    // Source: EBU Tech 3306 §3: "RF64", RIFF size −1, "WAVE", ds64 first with 64-bit riffSize,
    // dataSize and sampleCount; the data chunk's 32-bit size is −1.
    const enc = wavEncoding('int', 16);
    const stored = randomStored(enc, 2 * 101, seededRng(1));
    const bytes = wavFile(specFor('RF64', 'int', 16, 2), stored);
    expect(fourcc(bytes, 0)).toBe('RF64');
    expect(u32le(bytes, 4)).toBe(0xffffffff);
    expect(fourcc(bytes, 8)).toBe('WAVE');
    expect(fourcc(bytes, 12)).toBe('ds64');
    expect(u32le(bytes, 16)).toBe(28);
    expect(u64le(bytes, 20)).toBe(bytes.length - 8);
    expect(u64le(bytes, 28)).toBe(stored.length);
    expect(u64le(bytes, 36)).toBe(101);
    const dataAt = bytes.length - stored.length - 8;
    expect(fourcc(bytes, dataAt)).toBe('data');
    expect(u32le(bytes, dataAt + 4)).toBe(0xffffffff);
    // A plain RIFF file reserves the same 36 bytes as a JUNK chunk (EBU Tech 3306 §3.5 upgrade path).
    const riff = wavFile(specFor('WAV', 'int', 16, 2), stored);
    expect(fourcc(riff, 12)).toBe('JUNK');
    expect(u32le(riff, 16)).toBe(28);
    expect(riff.length).toBe(bytes.length);
  });

  it('WAVE_FORMAT_EXTENSIBLE with 20 valid bits in a 24-bit container (left-justified)', async () => {
    // Source: Microsoft WAVEFORMATEXTENSIBLE docs: wValidBitsPerSample ≤ wBitsPerSample, valid bits
    // left-justified (the low container bits are zero).
    const frames = 500, channels = 2;
    const enc = wavEncoding('int', 24);
    const stored = randomStored(enc, frames * channels, seededRng(20));
    for (let i = 0; i < stored.length; i += 3) stored[i]! &= 0xf0;
    const bytes = wavFile(specFor('EXTENSIBLE', 'int', 24, channels), stored);
    // wValidBitsPerSample sits at fmt payload + 18; fmt payload starts after RIFF(12) + JUNK(36) + 8.
    bytes[12 + 36 + 8 + 18] = 20;
    const file = path.join(dir, 'ext-20in24.wav');
    fs.writeFileSync(file, bytes);
    const audio = await openAudio(file);
    expect(audio.bitsPerSample).toBe(20);
    expect(audio.layout.bytesPerSample).toBe(3);
    const planar = await readAll(audio);
    expect(firstDifference(reencode(planar, enc), stored)).toBe('equal');
    // Every value lies on the 20-bit grid.
    for (const v of planar[0]!) expect(Number.isInteger(v * 2 ** 19)).toBe(true);
    await audio.close();
  });
});

describe('a plain RIFF file past 4 GiB whose 32-bit sizes wrapped around', () => {
  it('is read to its true length when the audio runs to the end of the file (sparse test file)', async () => {
    // Source: RIFF stores sizes in 32 bits (Microsoft/IBM 1991); some recorders keep writing past
    // 4 GiB and store size mod 2^32. A sparse file gives the 4.3 GB shape without using the disk.
    const frames = 2 ** 30 + 1000; // 16-bit stereo: 4 bytes per frame
    const dataBytes = frames * 4;
    const header = wavFile(specFor('WAV', 'int', 16, 2), new Uint8Array(4 * 4)).subarray(0, 12 + 36 + 24 + 8);
    header.set([0x52, 0x49, 0x46, 0x46], 0);
    new DataView(header.buffer, header.byteOffset).setUint32(4, (header.length + dataBytes - 8) % 2 ** 32, true);
    new DataView(header.buffer, header.byteOffset).setUint32(header.length - 4, dataBytes % 2 ** 32, true);
    const file = path.join(dir, 'wrapped.wav');
    const fd = fs.openSync(file, 'w');
    fs.writeSync(fd, header, 0, header.length, 0);
    const last = Uint8Array.from([0xff, 0x7f, 0x00, 0x80]); // final frame: 32767, −32768
    fs.writeSync(fd, last, 0, 4, header.length + dataBytes - 4);
    fs.closeSync(fd);
    expect(fs.statSync(file).size).toBe(header.length + dataBytes);
    const audio = await openAudio(file);
    expect(audio.frames).toBe(frames);
    const tail = await readAll(audio, { startFrame: frames - 2 });
    expect([tail[0]![1], tail[1]![1], tail[0]![0]]).toEqual([32767 / 32768, -1, 0]);
    await audio.close();
    fs.rmSync(file);
  });
});

describe('AIFF and AIFC: decode → encode is bit-exact', () => {
  const cases: [AiffFlavour, number][] = [
    ['AIFF', 8], ['AIFF', 16], ['AIFF', 24], ['AIFF', 32],
    ['NONE', 16], ['NONE', 24], ['sowt', 16], ['sowt', 24], ['sowt', 32], ['fl32', 32], ['fl64', 64],
  ];
  for (const [flavour, bits] of cases) {
    it(`${flavour} ${bits}-bit × 2 ch, then written out as WAV with identical values`, async () => {
      // Source: AIFF 1.3 and AIFF-C (Apple): big-endian two's complement (8-bit signed), 'sowt'
      // little-endian, 'fl32'/'fl64' big-endian IEEE float; exact identity for the round trip.
      const frames = 777, channels = 2;
      const enc = aiffEncoding({ flavour, bitsPerSample: bits });
      const stored = randomStored(enc, frames * channels, seededRng(bits + flavour.length * 100));
      const header = buildAiffHeader({ flavour, channels, sampleRateHz: 48000, bitsPerSample: bits, frames });
      const file = path.join(dir, `${flavour}-${bits}.aif`);
      fs.writeFileSync(file, concatBytes([header, stored, aiffTrailer(stored.length)]));
      const audio = await openAudio(file);
      expect(audio.info.format).toBe(flavour === 'AIFF' ? 'AIFF' : 'AIFC');
      expect([audio.bitsPerSample, audio.sampleFormat, audio.frames, audio.sampleRateHz])
        .toEqual([bits, enc.sampleFormat, frames, 48000]);
      const planar = await readAll(audio);
      const back = new Uint8Array(stored.length);
      encodeSamples(planar, 0, frames, enc, back, 0);
      expect(firstDifference(back, stored)).toBe('equal');
      const out = path.join(dir, `${flavour}-${bits}.wav`);
      await writeAudio(out, { sampleRateHz: 48000, channelCount: channels, blocks: audio.blocks({ blockFrames: 256 }) }, {
        bitsPerSample: bits as 8 | 16 | 24 | 32 | 64, sampleFormat: enc.sampleFormat, dither: false, copyFrom: audio,
      });
      const wav = await openAudio(out);
      expect(await readAll(wav)).toEqual(planar);
      // AIFF chunks are not copied into a WAV (their ids mean nothing there).
      expect(wav.info.chunks).toEqual(['JUNK', 'fmt ', ...(enc.sampleFormat === 'float' ? ['fact'] : []), 'bext', 'data']);
      await wav.close();
      await audio.close();
      expect(tempLeftovers(dir)).toEqual([]);
    });
  }

  it('decoding matches an independent byte-level reading of the same AIFF (8-bit is signed)', () => {
    // Source: AIFF 1.3 — sample points are signed two's complement; here checked against DataView.
    const header = buildAiffHeader({ flavour: 'AIFF', channels: 1, sampleRateHz: 8000, bitsPerSample: 8, frames: 4 });
    expect(fourcc(header, 0)).toBe('FORM');
    const samples = Uint8Array.from([0x80, 0xff, 0x00, 0x7f]);
    const out = [new Float64Array(4)];
    decodeSamples(samples, 0, aiffEncoding({ flavour: 'AIFF', bitsPerSample: 8 }), 1, 4, out);
    expect(Array.from(out[0]!)).toEqual([-1, -1 / 128, 0, 127 / 128]);
  });
});
