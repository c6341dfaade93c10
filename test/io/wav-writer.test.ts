import { describe, expect, it } from 'vitest';
import { concatBytes, fourcc, u16le, u32le, u64le } from '../../dsp/formats/bytes.ts';
import { decodeSamples } from '../../dsp/formats/codec.ts';
import { parseAudioLayoutFromBytes } from '../../dsp/formats/layout.ts';
import { buildWavHeader, WavStreamEncoder, type WavLayoutSpec } from '../../dsp/formats/wav-writer.ts';
import { seededRng } from '../helpers/rng.ts';

const spec = (over: Partial<WavLayoutSpec> = {}): WavLayoutSpec => ({
  format: { sampleFormat: 'int', bitsPerSample: 24, channels: 2, sampleRateHz: 96000 },
  chunksBefore: [{ id: 'LIST', data: new TextEncoder().encode('INFOtest') }],
  chunksAfter: [{ id: 'zzzz', data: Uint8Array.from([1, 2, 3]) }],
  ...over,
});

describe('pure streaming WAV writer (browser-usable)', () => {
  it('header + encoded parts + trailer form a file the parser reads back exactly', () => {
    // Source: exact identity; layout per RIFF/WAVE (Microsoft/IBM 1991).
    const enc = new WavStreamEncoder(spec());
    const rng = seededRng(3);
    const blocks = [100, 257, 1, 64].map((n) => [0, 1].map(() => Float64Array.from({ length: n }, () => Math.round((rng() * 2 - 1) * 8388607) / 8388608)));
    const parts = blocks.map((b) => enc.encode(b));
    const done = enc.finish();
    expect(done.header.length).toBe(enc.provisionalHeader.length);
    const file = concatBytes([done.header, ...parts, done.trailer]);
    expect(file.length).toBe(done.totalBytes);
    const layout = parseAudioLayoutFromBytes(file, 'memory.wav');
    expect(layout.frames).toBe(422);
    expect(layout.chunks.map((c) => [c.id, c.position])).toEqual([
      ['JUNK', 'before-data'], ['fmt ', 'before-data'], ['LIST', 'before-data'], ['data', 'before-data'], ['zzzz', 'after-data'],
    ]);
    const out = [new Float64Array(422), new Float64Array(422)];
    decodeSamples(file, layout.dataOffset, layout.encoding, 2, 422, out);
    expect(out[1]).toEqual(Float64Array.from(blocks.flatMap((b) => Array.from(b[1]!))));
  });

  it('switches to RF64 in the same header length once the RIFF size passes 4 GiB (in-place upgrade)', () => {
    // Source: EBU Tech 3306 §3 — RIFF size field limit 2^32 − 1; the 28-byte JUNK placeholder becomes
    // ds64 {riffSize, dataSize, sampleCount (64-bit), tableLength}.
    const s = spec();
    const small = buildWavHeader(s, 6 * 1000, 1000);
    const frames = 1_000_000_000; // 6 GB of 24-bit stereo
    const big = buildWavHeader(s, 6 * frames, frames);
    expect(small.container).toBe('RIFF');
    expect(big.container).toBe('RF64');
    expect(big.header.length).toBe(small.header.length);
    const h = big.header;
    const trailer = 8 + 3 + 1;
    expect(fourcc(h, 0)).toBe('RF64');
    expect(u32le(h, 4)).toBe(0xffffffff);
    expect(fourcc(h, 12)).toBe('ds64');
    expect(u64le(h, 20)).toBe(h.length + 6 * frames + trailer - 8);
    expect(u64le(h, 28)).toBe(6 * frames);
    expect(u64le(h, 36)).toBe(frames);
    expect(u32le(h, 44)).toBe(0);
    expect(u32le(h, h.length - 4)).toBe(0xffffffff);
    // Near the limit: a RIFF size of 2^32 − 2 or less stays RIFF; 2^32 or more needs RF64.
    const headerBytes = small.header.length;
    let maxData = 0xfffffffe + 8 - headerBytes - trailer;
    if (maxData % 2) maxData -= 1; // keep the data even so no pad byte is added
    const riffSize = (d: number) => headerBytes + d + trailer - 8;
    expect(riffSize(maxData)).toBeLessThanOrEqual(0xfffffffe);
    expect(buildWavHeader(s, maxData, Math.floor(maxData / 6)).container).toBe('RIFF');
    expect(u32le(buildWavHeader(s, maxData, Math.floor(maxData / 6)).header, 4)).toBe(riffSize(maxData));
    expect(buildWavHeader(s, maxData + 2, Math.floor(maxData / 6)).container).toBe('RF64');
  });

  it('writes WAVE_FORMAT_EXTENSIBLE for more than two channels and a fact chunk for float', () => {
    // Source: Microsoft WAVEFORMATEXTENSIBLE (cbSize 22, SubFormat GUID); fact chunk for non-PCM data.
    const ext = buildWavHeader({ format: { sampleFormat: 'float', bitsPerSample: 32, channels: 6, sampleRateHz: 48000, channelMask: 0x3f } }, 24 * 10, 10).header;
    const fmtAt = 12 + 36;
    expect(fourcc(ext, fmtAt)).toBe('fmt ');
    expect(u32le(ext, fmtAt + 4)).toBe(40);
    expect(u16le(ext, fmtAt + 8)).toBe(0xfffe);
    expect(u16le(ext, fmtAt + 24)).toBe(22);
    expect(u32le(ext, fmtAt + 28)).toBe(0x3f);
    expect(Array.from(ext.subarray(fmtAt + 32, fmtAt + 48))).toEqual([3, 0, 0, 0, 0, 0, 0x10, 0, 0x80, 0, 0, 0xaa, 0, 0x38, 0x9b, 0x71]);
    expect(fourcc(ext, fmtAt + 48)).toBe('fact');
    expect(u32le(ext, fmtAt + 56)).toBe(10);
    const plain = buildWavHeader({ format: { sampleFormat: 'int', bitsPerSample: 16, channels: 2, sampleRateHz: 44100 } }, 40, 10).header;
    expect(u32le(plain, fmtAt + 4)).toBe(16);
    expect(u16le(plain, fmtAt + 8)).toBe(1);
    expect(u32le(plain, fmtAt + 16)).toBe(44100 * 4);
  });
});

describe('BW64', () => {
  it('reads a BW64 file (ITU-R BS.2088: RF64 structure with the id BW64)', () => {
    // Source: ITU-R BS.2088-1 — same ds64 mechanism as EBU Tech 3306, outer id 'BW64'.
    const enc = new WavStreamEncoder({ format: { sampleFormat: 'int', bitsPerSample: 16, channels: 2, sampleRateHz: 48000 }, container: 'rf64' });
    const part = enc.encode([Float64Array.from([0.5, -0.25, 0]), Float64Array.from([-1, 0.125, 0.75])]);
    const d = enc.finish();
    const file = concatBytes([d.header, part, d.trailer]);
    file.set([0x42, 0x57, 0x36, 0x34], 0); // 'BW64'
    const layout = parseAudioLayoutFromBytes(file, 'object-audio.wav');
    expect(layout.container).toBe('BW64');
    expect([layout.frames, layout.dataBytes, layout.ds64!.sampleCount]).toEqual([3, 12, 3]);
    const out = [new Float64Array(3), new Float64Array(3)];
    decodeSamples(file, layout.dataOffset, layout.encoding, 2, 3, out);
    expect(Array.from(out[1]!)).toEqual([-1, 0.125, 0.75]);
  });
});

describe('tolerated quirks of real files', () => {
  const base = () => {
    const enc = new WavStreamEncoder({ format: { sampleFormat: 'int', bitsPerSample: 8, channels: 1, sampleRateHz: 8000 } });
    const part = enc.encode([Float64Array.from({ length: 11 }, (_, i) => i / 16)]);
    const d = enc.finish();
    return concatBytes([d.header, part, d.trailer]);
  };

  it('a missing final pad byte, trailing bytes after the RIFF, and an unset RIFF size are accepted', () => {
    // Source: common practice — these come from real writers (streaming recorders, tag appenders).
    const b = base();
    expect(b.length % 2).toBe(0);
    const noPad = b.subarray(0, b.length - 1);
    expect(parseAudioLayoutFromBytes(noPad, 'nopad.wav').frames).toBe(11);
    const trailing = concatBytes([b, new TextEncoder().encode('TAG trailing bytes')]);
    expect(parseAudioLayoutFromBytes(trailing, 'tagged.wav').chunks.map((c) => c.id)).toEqual(['JUNK', 'fmt ', 'data']);
    const unset = b.slice();
    unset.fill(0, 4, 8);
    expect(parseAudioLayoutFromBytes(unset, 'unset.wav').frames).toBe(11);
  });
});
