/** The editor's interim WAV layer against an independent reader/writer (the `wavefile` package). */
import { describe, expect, it } from 'vitest';
import wavefile from 'wavefile';
import { buildBext, buildWavHeader, codingHistoryOf, decodePcm, decodePcmFloat32, encodePcm, parseWavLayout, type PcmLayout } from '../../renderer/src/worker/wav-format.ts';
import { seededRng } from '../helpers/rng.ts';

const rng = seededRng(3285);
const frames = 1000;
const ints = [0, 1].map(() => Int32Array.from({ length: frames }, () => Math.floor((rng() * 2 - 1) * 8388608)));

function layoutOf(bytes: Uint8Array): PcmLayout {
  const l = parseWavLayout(bytes, bytes.length);
  if ('needBytes' in l) throw new Error('short');
  return l;
}

describe('WAV layout and PCM', () => {
  it('reads what wavefile writes (24-bit stereo, 16-bit, 32-bit float)', () => {
    for (const [depth, scale] of [['24', 8388608], ['16', 32768], ['32f', 1]] as const) {
      const w = new wavefile.WaveFile();
      const data = ints.map((c) => Array.from(c, (v) => (depth === '16' ? v >> 8 : depth === '32f' ? v / 8388608 : v)));
      w.fromScratch(2, 44100, depth, data);
      const bytes = w.toBuffer();
      const l = layoutOf(bytes);
      expect([l.sampleRateHz, l.channelCount, l.frames, l.sampleFormat]).toEqual([44100, 2, frames, depth === '32f' ? 'float' : 'int']);
      const out = [new Float64Array(frames), new Float64Array(frames)];
      decodePcm(bytes.subarray(l.dataOffset, l.dataOffset + l.dataBytes), l, out, 0);
      const f32 = [new Float32Array(frames), new Float32Array(frames)];
      decodePcmFloat32(bytes.slice(l.dataOffset, l.dataOffset + l.dataBytes), l, f32);
      for (let i = 0; i < frames; i += 97) {
        expect(out[1]![i]).toBeCloseTo(data[1]![i]! / scale, 7);
        expect(f32[1]![i]).toBeCloseTo(data[1]![i]! / scale, 6);
      }
    }
  });

  it('writes a BWF that wavefile reads back: samples exact without dither, CodingHistory kept', () => {
    const planar = ints.map((c) => Float64Array.from(c, (v) => v / 8388608));
    const history = 'A=PCM,F=44100,W=24,M=stereo,T=source\r\nA=PCM,F=44100,W=24,M=stereo,T=reelwright test\r\n';
    const bext = buildBext(null, history, new Date('2026-03-01T10:20:30Z'), 'Interview, reel 14');
    const header = buildWavHeader({ sampleRateHz: 44100, channelCount: 2, format: { bitsPerSample: 24, sampleFormat: 'int', dither: false }, frames, bext, extra: [], rf64: false });
    const pcm = encodePcm(planar, { bitsPerSample: 24, sampleFormat: 'int', dither: false }, rng);
    const file = new Uint8Array(header.length + pcm.length);
    file.set(header); file.set(pcm, header.length);
    const w = new wavefile.WaveFile(file);
    const got = w.getSamples(false, Int32Array) as unknown as Int32Array[];
    expect(Array.from(got[0]!)).toEqual(Array.from(ints[0]!));
    expect(Array.from(got[1]!)).toEqual(Array.from(ints[1]!));
    const b = (w as unknown as { bext: { codingHistory: string; description: string; originationDate: string } }).bext;
    expect(b.codingHistory).toBe(history);
    expect(b.description.replace(/\0+$/, '')).toBe('Interview, reel 14'); // fixed 256-byte field, NUL-padded (EBU Tech 3285)
    expect(b.originationDate).toBe('2026-03-01');
    expect(codingHistoryOf(file.subarray(layoutOf(file).chunks.find((c) => c.id === 'bext')!.offset, layoutOf(file).chunks.find((c) => c.id === 'bext')!.offset + bext.length))).toBe(history);
  });

  it('writes RF64 sizes in ds64 (EBU Tech 3306) and reads them back', () => {
    const header = buildWavHeader({ sampleRateHz: 96000, channelCount: 2, format: { bitsPerSample: 24, sampleFormat: 'int', dither: true }, frames, bext: null, extra: [], rf64: true });
    const pcm = new Uint8Array(frames * 6);
    const file = new Uint8Array(header.length + pcm.length);
    file.set(header);
    expect(String.fromCharCode(...file.subarray(0, 4))).toBe('RF64');
    expect(new DataView(file.buffer).getUint32(4, true)).toBe(0xffffffff);
    const l = layoutOf(file);
    expect([l.container, l.frames, l.dataBytes]).toEqual(['RF64', frames, frames * 6]);
  });

  it('dithers with TPDF of at most ±1 LSB and clips at full scale', () => {
    const x = [Float64Array.from({ length: 4000 }, (_, i) => (i % 2 ? 0.25 : 2))];
    const pcm = encodePcm(x, { bitsPerSample: 16, sampleFormat: 'int', dither: true }, seededRng(9));
    const v = new Int16Array(pcm.buffer);
    for (let i = 0; i < v.length; i++) {
      if (i % 2) expect(Math.abs(v[i]! - 8192)).toBeLessThanOrEqual(1);
      else expect(v[i]).toBe(32767);
    }
  });
});
