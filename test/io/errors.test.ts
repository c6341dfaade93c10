import { afterAll, describe, expect, it } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';
import { buildAiffHeader } from '../../dsp/formats/aiff.ts';
import { concatBytes, putFourcc, putU16le, putU32le } from '../../dsp/formats/bytes.ts';
import { InputError, ParameterError } from '../../dsp/errors.ts';
import type { Block } from '../../dsp/source.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import { FIXTURES, fileBytes, tempDir, tempLeftovers } from './helpers.ts';

const dir = tempDir('errors');
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

/**
 * wave_16bit.wav (Python's wave module) has the canonical 44-byte header: 'RIFF' 0, size 4,
 * 'WAVE' 8, 'fmt ' 12, fmt size 16, wFormatTag 20, nChannels 22, nSamplesPerSec 24,
 * nAvgBytesPerSec 28, nBlockAlign 32, wBitsPerSample 34, 'data' 36, data size 40, samples 44.
 */
const BASE = fileBytes(path.join(FIXTURES, 'wave_16bit.wav')).slice();

let n = 0;
function save(bytes: Uint8Array, ext = 'wav'): string {
  const file = path.join(dir, `bad-${++n}.${ext}`);
  fs.writeFileSync(file, bytes);
  return file;
}
function patched(edit: (b: Uint8Array) => void, base = BASE): Uint8Array {
  const b = base.slice();
  edit(b);
  return b;
}
const esc = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');

async function expectInputError(file: string, byte: number, problem: RegExp): Promise<void> {
  const err = await openAudio(file).then(
    async (a) => {
      await a.close();
      return undefined;
    },
    (e: unknown) => e,
  );
  expect(err, `${file} should be refused`).toBeInstanceOf(InputError);
  const line = (err as InputError).oneLine();
  expect(line).not.toContain('\n');
  expect(line).toMatch(new RegExp(`^${esc(file)}: at byte ${byte}: `));
  expect(line.slice(`${file}: at byte ${byte}: `.length)).toMatch(problem);
}

describe('bad input: one-line InputError naming the file and the byte offset', () => {
  // Source: the structures of RIFF/WAVE (Microsoft/IBM 1991), AIFF 1.3 / AIFF-C (Apple) and
  // RFC 9639 (FLAC); offsets of the canonical 44-byte WAV header listed above.
  it('empty and too-short files', async () => {
    await expectInputError(save(new Uint8Array(0)), 0, /^truncated: 0 bytes is too short for a WAV, AIFF or FLAC header/);
    await expectInputError(save(BASE.subarray(0, 11)), 0, /^truncated: 11 bytes/);
  });

  it('truncated header (cut inside the fmt chunk)', async () => {
    await expectInputError(save(BASE.subarray(0, 30)), 12, /^chunk 'fmt ' claims 16 bytes from byte 20 but the file ends at byte 30/);
    await expectInputError(save(BASE.subarray(0, 17)), 12, /^truncated: expected a chunk header \(8 bytes\) but the file ends at byte 17/);
  });

  it('truncated audio data', async () => {
    await expectInputError(save(BASE.subarray(0, 144)), 36, /^chunk 'data' claims 1200 bytes from byte 44 but the file ends at byte 144: the audio data is truncated/);
  });

  it('a chunk whose size runs past the end of the file', async () => {
    const list = new Uint8Array(12);
    putFourcc(list, 0, 'LIST');
    putU32le(list, 4, 5000);
    putFourcc(list, 8, 'INFO');
    const bytes = concatBytes([BASE, list]);
    putU32le(bytes, 4, BASE.length + 8 + 5000 - 8); // the RIFF size agrees with the LIST chunk's claim
    const file = save(bytes);
    await expectInputError(file, BASE.length, /^chunk 'LIST' claims 5000 bytes from byte 1252 but the file ends at byte 1256: the chunk runs past the end of the file/);
  });

  it('not a RIFF, AIFF or FLAC file', async () => {
    await expectInputError(save(new TextEncoder().encode('Transfer notes: reel 14, side A, heads cleaned.'), 'txt'), 0,
      /^not a WAV, RF64, AIFF or FLAC file: expected 'RIFF', 'RF64', 'BW64', 'FORM' or 'fLaC' at the start, found 'Tran'/);
    await expectInputError(save(patched((b) => putFourcc(b, 8, 'AVI '))), 8, /^expected form type 'WAVE' after 'RIFF', found 'AVI '/);
    await expectInputError(save(Uint8Array.from([0xff, 0xfb, 0x90, 0x64, ...new Uint8Array(200)]), 'mp3'), 0, /^MPEG audio \(MP3\) is not supported/);
    const id3 = Uint8Array.from([0x49, 0x44, 0x33, 4, 0, 0, 0, 0, 0, 10, ...new Uint8Array(10), 0xff, 0xfb, 0x90, 0x64, ...new Uint8Array(40)]);
    await expectInputError(save(id3, 'mp3'), 20, /^expected 'fLaC' after the ID3v2 tag \(MP3 and other compressed formats are not supported\)/);
    await expectInputError(save(patched((b) => putFourcc(b, 0, 'RIFX'))), 0, /^big-endian RIFX files are not supported/);
  });

  it('compressed WAV encodings are refused by name', async () => {
    // Source: Microsoft mmreg.h format tags.
    for (const [tag, name] of [[0x0002, 'Microsoft ADPCM'], [0x0006, 'A-law'], [0x0007, 'μ-law'], [0x0011, 'IMA ADPCM'], [0x0050, 'MPEG'], [0x0055, 'MPEG Layer 3 \\(MP3\\)']] as const) {
      const hex = tag.toString(16).toUpperCase().padStart(4, '0');
      await expectInputError(save(patched((b) => putU16le(b, 20, tag))), 20,
        new RegExp(`^unsupported WAV encoding 0x${hex} \\(${name}\\); only uncompressed PCM and IEEE float can be read`));
    }
  });

  it('WAVE_FORMAT_EXTENSIBLE with a compressed SubFormat', async () => {
    // fmt of 40 bytes: EXTENSIBLE with SubFormat {00000002-0000-0010-8000-00AA00389B71} (ADPCM).
    const fmt = new Uint8Array(48);
    putFourcc(fmt, 0, 'fmt ');
    putU32le(fmt, 4, 40);
    putU16le(fmt, 8, 0xfffe); putU16le(fmt, 10, 2); putU32le(fmt, 12, 44100); putU32le(fmt, 16, 176400);
    putU16le(fmt, 20, 4); putU16le(fmt, 22, 16); putU16le(fmt, 24, 22); putU16le(fmt, 26, 16); putU32le(fmt, 28, 3);
    fmt.set([2, 0, 0, 0, 0, 0, 0x10, 0, 0x80, 0, 0, 0xaa, 0, 0x38, 0x9b, 0x71], 32);
    const bytes = concatBytes([BASE.subarray(0, 12), fmt, BASE.subarray(36)]);
    putU32le(bytes, 4, bytes.length - 8);
    await expectInputError(save(bytes), 44, /^unsupported WAVE_FORMAT_EXTENSIBLE SubFormat 0200000000001000800000aa00389b71 \(format 0x0002 \(Microsoft ADPCM\)\); PCM or IEEE float expected/);
  });

  it('compressed AIFC is refused', async () => {
    for (const comp of ['ulaw', 'ima4', 'alaw']) {
      const header = buildAiffHeader({ flavour: 'NONE', channels: 1, sampleRateHz: 8000, bitsPerSample: 16, frames: 10 });
      // FORM(12) + FVER(12) + COMM header(8) → COMM payload at 32; compressionType at payload + 18.
      putFourcc(header, 32 + 18, comp);
      await expectInputError(save(concatBytes([header, new Uint8Array(20)]), 'aifc'), 50,
        new RegExp(`^compressed AIFC \\('${comp}'\\) is not supported`));
    }
  });

  it('zero channels, zero sample rate, zero-length audio', async () => {
    await expectInputError(save(patched((b) => putU16le(b, 22, 0))), 22, /^the fmt chunk says zero channels/);
    await expectInputError(save(patched((b) => putU32le(b, 24, 0))), 24, /^the fmt chunk says a sample rate of 0 Hz/);
    const empty = patched((b) => putU32le(b, 40, 0)).subarray(0, 44);
    putU32le(empty, 4, 36);
    await expectInputError(save(empty), 36, /^no audio: the 'data' chunk holds 0 bytes, less than one 4-byte frame/);
    const aiff = buildAiffHeader({ flavour: 'AIFF', channels: 2, sampleRateHz: 44100, bitsPerSample: 16, frames: 0 });
    await expectInputError(save(aiff, 'aiff'), 22, /^no audio: the COMM chunk says 0 sample frames/);
    const aiffRate = buildAiffHeader({ flavour: 'AIFF', channels: 2, sampleRateHz: 0, bitsPerSample: 16, frames: 4 });
    await expectInputError(save(concatBytes([aiffRate, new Uint8Array(16)]), 'aiff'), 28, /^the COMM chunk says a sample rate of 0 Hz/);
  });

  it('unsupported word lengths', async () => {
    // 40-bit integers (5-byte container), 16-bit float, 64-bit integers.
    await expectInputError(save(patched((b) => { putU16le(b, 34, 40); putU16le(b, 32, 10); })), 34, /^integer samples of 40 bits are not supported \(8, 16, 24 or 32 expected\)/);
    await expectInputError(save(patched((b) => { putU16le(b, 20, 3); })), 34, /^16-bit float samples are not supported \(32 or 64 expected\)/);
    await expectInputError(save(patched((b) => { putU16le(b, 34, 64); putU16le(b, 32, 16); })), 34, /^integer samples of 64 bits are not supported/);
    await expectInputError(save(patched((b) => putU16le(b, 34, 0))), 34, /^the fmt chunk says 0 bits per sample/);
  });

  it('missing fmt or data chunk, RF64 without ds64, AIFF with too little sound data', async () => {
    await expectInputError(save(patched((b) => putFourcc(b, 12, 'fmx '))), 12, /^no 'fmt ' chunk/);
    await expectInputError(save(patched((b) => putFourcc(b, 36, 'date'))), 12, /^no 'data' chunk: the file holds no audio/);
    await expectInputError(save(patched((b) => putFourcc(b, 0, 'RF64'))), 12, /^RF64 file must start with a 'ds64' chunk, found 'fmt '/);
    const aiff = buildAiffHeader({ flavour: 'AIFF', channels: 2, sampleRateHz: 44100, bitsPerSample: 16, frames: 100 });
    // SSND claims 400 bytes of samples (+8) but the file has only 40: chunk past the end of the file.
    await expectInputError(save(concatBytes([aiff, new Uint8Array(40)]), 'aiff'), 38, /^chunk 'SSND' claims 408 bytes from byte 46 but the file ends at byte 94: the audio data is truncated/);
  });

  it('missing files and folders', async () => {
    const missing = path.join(dir, 'no-such-reel.wav');
    const e1 = await openAudio(missing).catch((e: unknown) => e);
    expect(e1).toBeInstanceOf(InputError);
    expect((e1 as InputError).oneLine()).toBe(`${missing}: cannot open the file: no such file or folder (ENOENT)`);
    const e2 = await openAudio(dir).catch((e: unknown) => e);
    expect((e2 as InputError).oneLine()).toBe(`${dir}: is a folder, not an audio file`);
  });
});

describe('NaN/Inf float samples: read as 0, counted, reportable in one line', () => {
  it('counts them in scanNonFinite(), audioMd5() and a full blocks() pass', async () => {
    const base = fileBytes(path.join(FIXTURES, 'scipy_float32.wav')).slice();
    const audio0 = await openAudio(path.join(FIXTURES, 'scipy_float32.wav'));
    const at = audio0.layout.dataOffset;
    await audio0.close();
    const dv = new DataView(base.buffer, base.byteOffset);
    dv.setFloat32(at + 4 * 10, NaN, true);
    dv.setFloat32(at + 4 * 11, Infinity, true);
    dv.setFloat32(at + 4 * 499, -Infinity, true);
    const file = save(base);
    const a = await openAudio(file);
    expect(a.nonFiniteSamples).toBeUndefined();
    expect(await a.scanNonFinite()).toBe(3);
    for await (const block of a.blocks({ blockFrames: 64 })) for (const ch of block) for (const v of ch) expect(Number.isFinite(v)).toBe(true);
    expect(a.nonFiniteSamples).toBe(3);
    await a.audioMd5();
    expect(a.nonFiniteSamples).toBe(3);
    await a.close();
  });
});

describe('the writer leaves nothing behind on failure', () => {
  const opts = { bitsPerSample: 24 as const, sampleFormat: 'int' as const, dither: false };

  it('an exception from the rendering mid-way: no output, no temp file, an existing file untouched', async () => {
    const out = path.join(dir, 'keep.wav');
    fs.writeFileSync(out, 'previous take');
    async function* failing(): AsyncGenerator<Block> {
      yield [new Float64Array(1000), new Float64Array(1000)];
      yield [new Float64Array(1000), new Float64Array(1000)];
      throw new Error('processing stopped by the user');
    }
    await expect(writeAudio(out, { sampleRateHz: 48000, channelCount: 2, blocks: failing() }, { ...opts, overwrite: true })).rejects.toThrow('processing stopped by the user');
    expect(fs.readFileSync(out, 'utf8')).toBe('previous take');
    expect(tempLeftovers(dir)).toEqual([]);
    const fresh = path.join(dir, 'never.wav');
    async function* failingAtOnce(): AsyncGenerator<Block> {
      throw new Error('nothing rendered');
    }
    await expect(writeAudio(fresh, { sampleRateHz: 48000, channelCount: 2, blocks: failingAtOnce() }, opts)).rejects.toThrow('nothing rendered');
    expect(fs.existsSync(fresh)).toBe(false);
    expect(tempLeftovers(dir)).toEqual([]);
  });

  it('refuses to write onto the source (same path, symlink, hard link) and leaves it unchanged', async () => {
    const src = path.join(dir, 'source.wav');
    fs.copyFileSync(path.join(FIXTURES, 'wave_16bit.wav'), src);
    const before = fs.readFileSync(src);
    const link = path.join(dir, 'link.wav');
    fs.symlinkSync(src, link);
    const hard = path.join(dir, 'hard.wav');
    fs.linkSync(src, hard);
    const audio = await openAudio(src);
    for (const target of [src, link, hard, path.join(dir, '.', 'source.wav')]) {
      const err = await writeAudio(target, { sampleRateHz: 44100, channelCount: 2, blocks: audio.blocks() }, { ...opts, copyFrom: audio, sourcePath: src })
        .catch((e: unknown) => e);
      expect(err, target).toBeInstanceOf(ParameterError);
      expect((err as Error).message).toBe(`refusing to write onto the source file ${src}`);
    }
    await audio.close();
    expect(fs.readFileSync(src).equals(before)).toBe(true);
    expect(tempLeftovers(dir)).toEqual([]);
  });

  it('bad options, a missing folder, an empty rendering or mismatched blocks: ParameterError, nothing written', async () => {
    async function* blocks(channels: number, frames: number): AsyncGenerator<Block> {
      yield Array.from({ length: channels }, () => new Float64Array(frames));
    }
    const out = path.join(dir, 'nothing.wav');
    const cases: [Promise<unknown>, RegExp][] = [
      [writeAudio(out, { sampleRateHz: 48000, channelCount: 2, blocks: blocks(2, 10) }, { ...opts, bitsPerSample: 64 }), /cannot write 64-bit int samples/],
      [writeAudio(path.join(dir, 'no-folder', 'x.wav'), { sampleRateHz: 48000, channelCount: 2, blocks: blocks(2, 10) }, opts), /cannot write into its folder: no such file or folder \(ENOENT\)/],
      [writeAudio(out, { sampleRateHz: 48000, channelCount: 2, blocks: blocks(2, 0) }, opts), /the rendering produced no audio; nothing was written/],
      [writeAudio(out, { sampleRateHz: 48000, channelCount: 2, blocks: blocks(3, 10) }, opts), /a block of 3 channels; 2 expected/],
      [writeAudio(out, { sampleRateHz: 0, channelCount: 2, blocks: blocks(2, 10) }, opts), /sample rate of 0 Hz/],
    ];
    for (const [p, msg] of cases) {
      const err = await p.catch((e: unknown) => e);
      expect(err).toBeInstanceOf(ParameterError);
      expect((err as Error).message).toMatch(msg);
    }
    expect(fs.existsSync(out)).toBe(false);
    expect(tempLeftovers(dir)).toEqual([]);
  });
});
