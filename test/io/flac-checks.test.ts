/**
 * FLAC checked against itself (issue 17, items 1–3): every frame header against STREAMINFO, the
 * bytes after the metadata, every frame's CRC-16 and the STREAMINFO MD5 — refused at the first bad
 * frame with its byte offset and time, as the reference decoder refuses them.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { InputError } from '../../dsp/errors.ts';
import { MemorySource, readAll } from '../../dsp/source.ts';
import { seededRng } from '../../dsp/random.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import { runCli } from '../helpers/cli.ts';
import { ensureTool, FLAC_TOOL } from '../setup/system-tools.ts';
import { FIXTURES, tempDir } from './helpers.ts';

const dir = tempDir('flac-checks');
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));
const esc = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');

let n = 0;
function save(bytes: Uint8Array, name = `case-${++n}.flac`): string {
  const file = path.join(dir, name);
  fs.writeFileSync(file, bytes);
  return file;
}

/** The refusal of opening and reading `file` completely (null when it reads). */
async function refusal(file: string): Promise<InputError | null> {
  try {
    const a = await openAudio(file);
    try {
      await readAll(a);
      await a.audioMd5();
    } finally {
      await a.close();
    }
    return null;
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    return e as InputError;
  }
}

/** The reference decoder's verdict: `flac -t` exit status and its messages. */
function reference(file: string): { ok: boolean; text: string } {
  const r = spawnSync(ensureTool(FLAC_TOOL), ['-t', file], { encoding: 'utf8' });
  return { ok: r.status === 0, text: `${r.stdout}${r.stderr}` };
}

/**
 * Frame boundaries found independently of the reader: sync code, then the frame ends where the
 * CRC-16 (computed bit by bit, RFC 9639 §9.3: x^16+x^15+x^2+1, initial 0) over it is 0 and the
 * next sync code follows.
 */
function frameStarts(b: Uint8Array, from: number): number[] {
  const starts: number[] = [];
  let p = from;
  while (p < b.length) {
    starts.push(p);
    let crc = 0;
    let q = p;
    for (; q < b.length; q++) {
      if (q > p + 8 && crc === 0 && b[q] === 0xff && (b[q + 1]! & 0xfe) === 0xf8) break;
      crc ^= b[q]! << 8;
      for (let k = 0; k < 8; k++) crc = crc & 0x8000 ? ((crc << 1) ^ 0x8005) & 0xffff : (crc << 1) & 0xffff;
    }
    p = q;
  }
  return starts;
}

/** Offset of the first audio frame: after the last metadata block (RFC 9639 §8.1). */
function audioStart(b: Uint8Array): number {
  let p = 4;
  for (;;) {
    const last = (b[p]! & 0x80) !== 0;
    p += 4 + ((b[p + 1]! << 16) | (b[p + 2]! << 8) | b[p + 3]!);
    if (last) return p;
  }
}

/** STREAMINFO fields (RFC 9639 §8.2), at byte 8 of a file without an ID3v2 tag. */
const SI = 8;
function setChannels(b: Uint8Array, channels: number): void {
  b[SI + 12] = (b[SI + 12]! & ~0x0e) | ((channels - 1) << 1);
}
function setBits(b: Uint8Array, bits: number): void {
  b[SI + 12] = (b[SI + 12]! & ~1) | (((bits - 1) >> 4) & 1);
  b[SI + 13] = (b[SI + 13]! & 0x0f) | (((bits - 1) & 0x0f) << 4);
}
function clearTotal(b: Uint8Array): void {
  b[SI + 13] = b[SI + 13]! & 0xf0;
  b.fill(0, SI + 14, SI + 18);
}

// One second of stereo 44.1 kHz 16-bit material, encoded by the reference encoder (4096-sample
// blocks, its default), so the frames are the size and shape of real files.
let oneSecond: Uint8Array;
beforeAll(async () => {
  const rng = seededRng(17);
  const l = Float64Array.from({ length: 44100 }, (_, i) => 0.4 * Math.sin((2 * Math.PI * 440 * i) / 44100) + 0.01 * (rng() - 0.5));
  const r = Float64Array.from({ length: 44100 }, (_, i) => 0.3 * Math.sin((2 * Math.PI * 660 * i) / 44100) + 0.01 * (rng() - 0.5));
  const wav = path.join(dir, 'one-second.wav');
  await writeAudio(wav, { sampleRateHz: 44100, channelCount: 2, blocks: new MemorySource([l, r], 44100).blocks() }, { bitsPerSample: 16, sampleFormat: 'int', dither: false });
  const out = path.join(dir, 'one-second.flac');
  const enc = spawnSync(ensureTool(FLAC_TOOL), ['--silent', '--force', '-o', out, wav], { encoding: 'utf8' });
  expect(enc.status, enc.stderr).toBe(0);
  oneSecond = new Uint8Array(fs.readFileSync(out));
});

describe('item 1: every frame header is checked against STREAMINFO', () => {
  it('STREAMINFO claiming 2 channels on a mono stream is refused at the first frame, as by the reference decoder', async () => {
    const b = new Uint8Array(fs.readFileSync(path.join(FIXTURES, 'flac_24bit.flac')));
    setChannels(b, 2);
    const file = save(b);
    const e = await refusal(file);
    // Source: RFC 9639 §9.1.3 (channel assignment) against §8.2; flac 1.4.2 says "channels is 1 in frame but 2 in STREAMINFO".
    expect(e!.oneLine()).toBe(`${file}: at byte ${audioStart(b)}: the first FLAC frame contradicts STREAMINFO: the frame has 1 channel but STREAMINFO says 2`);
    const ref = reference(file);
    expect(ref.ok).toBe(false);
    expect(ref.text).toContain('channels is 1 in frame but 2 in STREAMINFO');
  });

  it('STREAMINFO claiming 8 bits on 16-bit frames is refused (not requantised); 1 bit is refused outright', async () => {
    const b = new Uint8Array(fs.readFileSync(path.join(FIXTURES, 'flac_16bit.flac')));
    setBits(b, 8);
    const file = save(b);
    expect((await refusal(file))!.oneLine()).toBe(`${file}: at byte ${audioStart(b)}: the first FLAC frame contradicts STREAMINFO: the frame has 16-bit samples but STREAMINFO says 8 bits`);
    const ref = reference(file);
    expect(ref.ok).toBe(false);
    expect(ref.text).toContain('bits-per-sample is 16 in frame but 8 in STREAMINFO');
    // `reverse` writes nothing (it used to write an 8-bit file 50 dB off).
    const out = path.join(dir, 'eight-bit-reversed.wav');
    const cli = await runCli('reverse', file, out);
    expect(cli.code).toBe(2);
    expect(fs.existsSync(out)).toBe(false);
    setBits(b, 1);
    const one = save(b);
    // Source: RFC 9639 §8.2: bits per sample 4 to 32.
    expect((await refusal(one))!.oneLine()).toBe(`${one}: at byte 20: FLAC STREAMINFO says 1 bits per sample (RFC 9639 allows 4 to 32)`);
  });

  it('a frame in the middle whose sample rate disagrees is refused at its own offset', async () => {
    // Frame 5's header says 48 kHz (code 0b1010) with its CRC-8 and CRC-16 recomputed, so the
    // header is the only thing wrong.
    const b = oneSecond.slice();
    const starts = frameStarts(b, audioStart(b));
    const at = starts[5]!, end = starts[6]!;
    b[at + 2] = (b[at + 2]! & 0xf0) | 0x0a;
    // Header: 4 bytes, frame number 5 in one byte, no extra size or rate bytes, then its CRC-8.
    const headerEnd = at + 5;
    const crc8 = (from: number, to: number) => {
      let c = 0;
      for (let i = from; i < to; i++) {
        c ^= b[i]!;
        for (let k = 0; k < 8; k++) c = c & 0x80 ? ((c << 1) ^ 0x07) & 0xff : (c << 1) & 0xff;
      }
      return c;
    };
    b[headerEnd] = crc8(at, headerEnd);
    let crc = 0;
    for (let i = at; i < end - 2; i++) {
      crc ^= b[i]! << 8;
      for (let k = 0; k < 8; k++) crc = crc & 0x8000 ? ((crc << 1) ^ 0x8005) & 0xffff : (crc << 1) & 0xffff;
    }
    b[end - 2] = crc >> 8;
    b[end - 1] = crc & 0xff;
    const file = save(b);
    // Source: reference decoder: "sample rate is 48000 in frame but 44100 in STREAMINFO".
    const ref = reference(file);
    expect(ref.ok).toBe(false);
    expect(ref.text).toContain('sample rate is 48000 in frame but 44100 in STREAMINFO');
    expect((await refusal(file))!.oneLine()).toBe(`${file}: at byte ${at}: FLAC frame at sample 20480 (0:00:00.464): the frame's sample rate is 48000 Hz but STREAMINFO says 44100 Hz; the file contradicts itself`);
  });
});

describe('item 2: fewer bytes than a frame after the metadata', () => {
  it('1, 2 or 3 bytes of audio are refused in one line, with the total known or not', async () => {
    const whole = new Uint8Array(fs.readFileSync(path.join(FIXTURES, 'flac_16bit.flac')));
    const start = audioStart(whole);
    for (const keep of [1, 2, 3]) {
      for (const unknown of [false, true]) {
        const b = whole.slice(0, start + keep);
        if (unknown) clearTotal(b);
        const file = save(b);
        expect((await refusal(file))!.oneLine()).toBe(`${file}: at byte ${start}: no audio: only ${keep} byte${keep === 1 ? '' : 's'} after the FLAC metadata, not a whole frame`);
        expect(reference(file).ok).toBe(false);
      }
    }
  });
});

describe('item 3: CRC-16 of every frame and the STREAMINFO MD5', () => {
  it('one flipped bit in the middle is refused at the damaged frame, total known or unknown (it used to give 0.48 s of 1.0 s)', async () => {
    const starts = frameStarts(oneSecond, audioStart(oneSecond));
    const flip = Math.floor(oneSecond.length / 2);
    const k = starts.filter((s) => s <= flip).length - 1;
    const frameAt = starts[k]!;
    // Source: the reference encoder's fixed 4096-sample blocks (RFC 9639 §9.1.5: frame k starts at k × 4096).
    const first = k * 4096;
    const time = `0:00:00.${String(Math.round((first / 44100) * 1000)).padStart(3, '0')}`;
    for (const unknown of [false, true]) {
      const b = oneSecond.slice();
      b[flip] = b[flip]! ^ 0x10;
      if (unknown) clearTotal(b);
      const file = save(b);
      expect(reference(file).ok).toBe(false);
      expect((await refusal(file))!.oneLine()).toBe(`${file}: at byte ${frameAt}: FLAC frame at sample ${first} (${time}) fails its CRC-16 check: the audio is damaged there`);
      const info = await runCli('info', file, '--json');
      expect(info.code).toBe(2);
      expect(info.out).toBe('');
      expect(info.err).toBe(`reelwright info: ${file}: at byte ${frameAt}: FLAC frame at sample ${first} (${time}) fails its CRC-16 check: the audio is damaged there\n`);
    }
  });

  it('the undamaged file reads whole and its decoded MD5 is STREAMINFO’s', async () => {
    const file = save(oneSecond, 'good.flac');
    expect(reference(file).ok).toBe(true);
    const a = await openAudio(file);
    expect(a.frames).toBe(44100);
    // Source: RFC 9639 §8.2 — the encoder's MD5 of the samples.
    expect(await a.audioMd5()).toBe(a.layout.flac!.md5);
    await a.close();
  });

  it('a wrong MD5 in STREAMINFO is refused after a whole pass, as by the reference decoder', async () => {
    const b = oneSecond.slice();
    b[SI + 18 + 5] = b[SI + 18 + 5]! ^ 0xff;
    const file = save(b);
    const ref = reference(file);
    expect(ref.ok).toBe(false);
    expect(ref.text).toContain('MD5 signature mismatch');
    const e = await refusal(file);
    expect(e!.oneLine()).toMatch(new RegExp(`^${esc(file)}: at byte 26: the decoded audio's MD5 \\([0-9a-f]{32}\\) differs from the one in STREAMINFO \\([0-9a-f]{32}\\): the file is damaged or was altered after encoding$`));
    // A correction refuses it too and leaves no output.
    const out = path.join(dir, 'bad-md5-reversed.wav');
    expect((await runCli('reverse', file, out)).code).toBe(2);
    expect(fs.existsSync(out)).toBe(false);
  });

  it('diagnose on a damaged FLAC prints exactly one line (no warnings before it)', async () => {
    const b = oneSecond.slice();
    const at = Math.floor(b.length * 0.4);
    b[at] = b[at]! ^ 0x01;
    const file = save(b);
    const r = await runCli('diagnose', file, '--json');
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err.split('\n').filter(Boolean)).toHaveLength(1);
    expect(r.err).toMatch(new RegExp(`^reelwright diagnose: ${esc(file)}: at byte \\d+: FLAC frame at sample \\d+ \\(0:00:00\\.\\d{3}\\) fails its CRC-16 check`));
  });

  it('junk after the last frame is refused (as by the reference decoder); an ID3v1 tag is allowed', async () => {
    const junk = save(new Uint8Array([...oneSecond, ...new TextEncoder().encode('reel 7 side B')]));
    expect(reference(junk).ok).toBe(false);
    expect((await refusal(junk))!.oneLine()).toMatch(/the last FLAC frame, at sample \d+ \(0:00:00\.\d{3}\), fails its CRC-16 check at the end of the file/);
    // Source: ID3v1 (a 128-byte tag starting "TAG" at the end of the file). Reference flac -t
    // reports lost sync there; a tag is metadata, not damage, so it is accepted (documented).
    const tag = new Uint8Array(128);
    tag.set(new TextEncoder().encode('TAGThornbury reel 7'));
    const tagged = save(new Uint8Array([...oneSecond, ...tag]));
    expect(await refusal(tagged)).toBeNull();
  });
});
