/**
 * Exact copies: `convert IN OUT` (FLAC/AIFF/WAV → BWF/RF64) and `varispeed` when every output frame
 * falls on an input frame. Bit-exactness is checked on the stored bytes, found by an independent
 * RIFF walk, against files written by other tools (the reference FLAC encoder, Python's `wave`,
 * hand-assembled AIFF; test/fixtures/convert/make_convert_fixtures.py).
 */
import { afterAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { dataChunkBytes, demoPath, repoRoot, runCli } from '../helpers/cli.ts';
import { openAudio } from '../../main/io/reader.ts';

const FIX = path.join(repoRoot, 'test/fixtures/convert');
const IO_FIX = path.join(repoRoot, 'test/fixtures/io');
const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'rw-convert-'));
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

const md5 = (b: Uint8Array) => createHash('md5').update(b).digest('hex');
const out = (name: string) => path.join(dir, name);

/** Top-level RIFF chunks (id → payloads), walked here independently of dsp/formats. */
function riffChunks(file: string): Map<string, Buffer[]> {
  const b = fs.readFileSync(file);
  expect(b.toString('latin1', 0, 4)).toBe('RIFF');
  const m = new Map<string, Buffer[]>();
  for (let at = 12; at + 8 <= b.length; ) {
    const id = b.toString('latin1', at, at + 4);
    const size = b.readUInt32LE(at + 4);
    m.set(id, [...(m.get(id) ?? []), b.subarray(at + 8, at + 8 + size)]);
    at += 8 + size + (size & 1);
  }
  return m;
}

/** LIST/INFO sub-chunks as id → text (RIFF 1.0 §3: zero-terminated strings, even-padded). */
function infoFields(file: string): Record<string, string> {
  const list = (riffChunks(file).get('LIST') ?? []).find((p) => p.toString('latin1', 0, 4) === 'INFO');
  const f: Record<string, string> = {};
  if (!list) return f;
  for (let at = 4; at + 8 <= list.length; ) {
    const size = list.readUInt32LE(at + 4);
    f[list.toString('latin1', at, at + 4)] = list.toString('utf8', at + 8, at + 8 + size).replace(/\0+$/, '');
    at += 8 + size + (size & 1);
  }
  return f;
}

/** bext CodingHistory (EBU Tech 3285: after the 602-byte fixed part). */
const codingHistory = (file: string) => (riffChunks(file).get('bext')?.[0] ?? Buffer.alloc(602)).toString('latin1', 602).replace(/\0+$/, '');

describe('varispeed without a change of sample positions', () => {
  it('--factor 1 at the same rate writes the input samples bit for bit', async () => {
    const r = await runCli('varispeed', demoPath, out('f1.wav'), '--factor', '1', '--json');
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(/exact copy/);
    // Source: exact identity — output frame n is input frame n (ratio 1), so nothing may change.
    expect(md5(dataChunkBytes(out('f1.wav')))).toBe(md5(dataChunkBytes(demoPath)));
    expect(JSON.parse(r.out).varispeed.parameters).toMatchObject({ factor: 1, quality: 'copy' });
  });

  it('--cents 0 is the same exact copy', async () => {
    expect((await runCli('varispeed', demoPath, out('c0.wav'), '--cents', '0', '--quiet')).code).toBe(0);
    expect(md5(dataChunkBytes(out('c0.wav')))).toBe(md5(dataChunkBytes(demoPath)));
  });

  it('--factor 2 --rate 96000 from 48 kHz keeps every sample and relabels the rate', async () => {
    // Source: x(2t) sampled at 2·fs has the samples of x(t) at fs (exact identity).
    expect((await runCli('varispeed', demoPath, out('f2.wav'), '--factor', '2', '--rate', '96000', '--quiet')).code).toBe(0);
    expect(md5(dataChunkBytes(out('f2.wav')))).toBe(md5(dataChunkBytes(demoPath)));
    expect(riffChunks(out('f2.wav')).get('fmt ')![0]!.readUInt32LE(4)).toBe(96000);
  });

  it('a factor close to 1 still resamples (the copy is only for exact ratio 1)', async () => {
    expect((await runCli('varispeed', demoPath, out('f1001.wav'), '--factor', '1.001', '--quality', 'draft', '--quiet')).code).toBe(0);
    expect(dataChunkBytes(out('f1001.wav')).length).not.toBe(dataChunkBytes(demoPath).length);
  });
});

describe('convert', () => {
  it('FLAC 24-bit → BWF: the audio MD5 equals the encoder’s STREAMINFO MD5 and the WAV it was made from; tags become INFO', async () => {
    const src = path.join(FIX, 'tagged_24bit.flac');
    const r = await runCli('convert', src, out('flac.wav'), '--json');
    expect(r.code, r.err).toBe(0);
    const data = dataChunkBytes(out('flac.wav'));
    // Source: the reference encoder (flac 1.4.2) stores the MD5 of the PCM in STREAMINFO (RFC 9639 §8.2).
    const flac = await openAudio(src);
    expect(md5(data)).toBe(flac.layout.flac!.md5);
    await flac.close();
    // Source: Python's `wave` wrote the encoder's input; FLAC is lossless.
    expect(md5(data)).toBe(md5(dataChunkBytes(path.join(FIX, 'tagged_24bit.wav'))));
    expect(riffChunks(out('flac.wav')).get('fmt ')![0]!.readUInt16LE(14)).toBe(24);
    // Source: Vorbis comment names (Xiph) → RIFF INFO ids (RIFF 1.0 §3); fields without an id keep NAME=value.
    expect(infoFields(out('flac.wav'))).toEqual({
      INAM: 'Thornbury reel 7, side A',
      IART: 'Edith Marwood',
      ICRD: '1961-05-14',
      ICMT: 'Transferred from ¼-inch tape\nCATALOGUE=TH-R7',
    });
    const history = codingHistory(out('flac.wav'));
    expect(history).toMatch(/^A=PCM,F=96000,W=24,M=stereo,T=reelwright convert\r\n$/);
    expect(JSON.parse(r.out).convert.output.notCarried).toBeUndefined();
  });

  it('AIFF 16-bit → BWF: the samples equal the same audio written by Python’s wave; text chunks become INFO; markers are reported', async () => {
    const src = path.join(FIX, 'texts_16bit.aiff');
    const r = await runCli('convert', src, out('aiff.wav'), '--json');
    expect(r.code, r.err).toBe(0);
    expect(md5(dataChunkBytes(out('aiff.wav')))).toBe(md5(dataChunkBytes(path.join(FIX, 'texts_16bit.wav'))));
    // Source: AIFF 1.3 text chunks NAME/AUTH/(c) /ANNO and COMT comments → INAM/IART/ICOP/ICMT.
    expect(infoFields(out('aiff.wav'))).toEqual({
      INAM: 'Harbour office, take 3',
      IART: 'Jonas Pell',
      ICOP: '1974 Harbour Trust',
      ICMT: 'Dictation machine, 9.5 cm/s\nSecond half noisy',
    });
    expect(JSON.parse(r.out).convert.output.notCarried).toEqual(['MARK']);
    expect(r.err).toMatch(/not carried into .*aiff\.wav: MARK/);
  });

  it('WAV/BWF → BWF: data, chunks and coding history kept, one history line added', async () => {
    const src = path.join(IO_FIX, 'chunks_bwf.wav');
    const r = await runCli('convert', src, out('bwf.wav'), '--quiet');
    expect(r.code, r.err).toBe(0);
    expect(md5(dataChunkBytes(out('bwf.wav')))).toBe(md5(dataChunkBytes(src)));
    const before = riffChunks(src), after = riffChunks(out('bwf.wav'));
    for (const [id, payloads] of before) {
      if (['fmt ', 'data', 'bext', 'JUNK', 'PAD ', 'fact'].includes(id)) continue;
      expect(after.get(id), id).toEqual(payloads);
    }
    const old = codingHistory(src), now = codingHistory(out('bwf.wav'));
    expect(now.startsWith(old.replace(/\r?\n?$/, ''))).toBe(true);
    expect(now.trimEnd().split('\r\n').at(-1)).toMatch(/^A=PCM,F=\d+,W=\d+,M=\w+,T=reelwright convert$/);
  });

  it('--rf64 writes the RF64 container with the same audio', async () => {
    expect((await runCli('convert', demoPath, out('demo.rf64.wav'), '--rf64', '--quiet')).code).toBe(0);
    const b = fs.readFileSync(out('demo.rf64.wav'));
    // Source: EBU Tech 3306 (RF64): 'RF64' header, 'ds64' first.
    expect(b.toString('latin1', 0, 4)).toBe('RF64');
    expect(b.toString('latin1', 12, 16)).toBe('ds64');
    const a = await openAudio(out('demo.rf64.wav')), s = await openAudio(demoPath);
    expect(await a.audioMd5()).toBe(await s.audioMd5());
    await a.close();
    await s.close();
  });

  it('--float keeps 24-bit values exactly (float32 holds 24-bit integers); --bits 16 dithers within ±1.5 LSB', async () => {
    const src = path.join(FIX, 'tagged_24bit.flac');
    expect((await runCli('convert', src, out('f32.wav'), '--float', '--quiet')).code).toBe(0);
    expect((await runCli('convert', src, out('i16.wav'), '--bits', '16', '--quiet')).code).toBe(0);
    const ints = dataChunkBytes(path.join(FIX, 'tagged_24bit.wav'));
    const f32 = dataChunkBytes(out('f32.wav')), i16 = dataChunkBytes(out('i16.wav'));
    const n = ints.length / 3;
    let worst = 0, sum = 0, differsFromRounding = 0;
    for (let i = 0; i < n; i++) {
      const code = ints.readIntLE(3 * i, 3);
      // Source: exact identity — code / 2^23 is representable in binary32 (24-bit significand).
      expect(f32.readFloatLE(4 * i)).toBe(code / 2 ** 23);
      const e = i16.readInt16LE(2 * i) - code / 256;
      worst = Math.max(worst, Math.abs(e));
      sum += e;
      if (i16.readInt16LE(2 * i) !== Math.max(-32768, Math.min(32767, Math.round(code / 256)))) differsFromRounding++;
    }
    // Source: TPDF dither of ±1 LSB before rounding (Vanderkooy & Lipshitz 1987): error ≤ 1.5 LSB, mean 0.
    expect(worst).toBeLessThanOrEqual(1.5);
    expect(Math.abs(sum / n)).toBeLessThan(0.05);
    expect(differsFromRounding).toBeGreaterThan(n / 10);
    expect(codingHistory(out('i16.wav'))).toMatch(/W=16,M=stereo,T=reelwright convert/);
  });

  it('refuses to write onto its input and leaves nothing behind on a bad input', async () => {
    const bad = out('truncated.flac');
    fs.writeFileSync(bad, fs.readFileSync(path.join(FIX, 'tagged_24bit.flac')).subarray(0, 30));
    const r = await runCli('convert', bad, out('never.wav'));
    expect(r.code).toBe(2);
    expect(r.err.trim().split('\n')).toHaveLength(1);
    expect(r.err).toContain('truncated.flac');
    expect(fs.existsSync(out('never.wav'))).toBe(false);
    expect((await runCli('convert', demoPath, demoPath)).code).toBe(2);
  });
});
