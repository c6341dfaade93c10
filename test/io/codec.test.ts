import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { PYTHON3, ensureTool } from '../setup/system-tools.ts';
import {
  countNonFinite,
  decodeSamples,
  ditherByDefault,
  encodeSamples,
  type SampleEncoding,
} from '../../dsp/formats/codec.ts';
import { readExtended80, writeExtended80 } from '../../dsp/formats/bytes.ts';
import { seededRng } from '../helpers/rng.ts';
import { firstDifference, randomStored } from './helpers.ts';

const ENCODINGS: SampleEncoding[] = [];
for (const bigEndian of [false, true]) {
  ENCODINGS.push({ sampleFormat: 'int', bytesPerSample: 1, bigEndian, unsigned8: true });
  ENCODINGS.push({ sampleFormat: 'int', bytesPerSample: 1, bigEndian, unsigned8: false });
  for (const b of [2, 3, 4]) ENCODINGS.push({ sampleFormat: 'int', bytesPerSample: b, bigEndian, unsigned8: false });
  for (const b of [4, 8]) ENCODINGS.push({ sampleFormat: 'float', bytesPerSample: b, bigEndian, unsigned8: false });
}
const label = (e: SampleEncoding) =>
  `${e.sampleFormat}${e.bytesPerSample * 8}${e.bytesPerSample > 1 ? (e.bigEndian ? 'be' : 'le') : e.unsigned8 ? 'u' : 's'}`;

describe('sample codecs: bit-exact round trips', () => {
  // Source: exact identity — decoding maps each stored code to code/2^(b−1) (or the float itself)
  // and encoding must invert it exactly, for every byte pattern.
  for (const enc of ENCODINGS) {
    for (const channels of [1, 2, 3]) {
      it(`${label(enc)} × ${channels} ch: decode → encode returns the identical bytes (aligned and unaligned)`, () => {
        const frames = 1001;
        const rng = seededRng(77 + enc.bytesPerSample * 10 + channels);
        const stored = randomStored(enc, frames * channels, rng, [-10, 10]);
        for (const shift of [0, 1, 3]) {
          const src = new Uint8Array(stored.length + shift);
          src.set(stored, shift);
          const out = Array.from({ length: channels }, () => new Float64Array(frames));
          expect(decodeSamples(src, shift, enc, channels, frames, out)).toBe(0);
          const back = new Uint8Array(stored.length + shift);
          encodeSamples(out, 0, frames, enc, back, shift);
          expect(firstDifference(back.subarray(shift), stored)).toBe('equal');
        }
      });
    }
  }
});

describe('sample codecs: values', () => {
  it('integer codes map to code / 2^(b−1)', () => {
    // Source: RIFF/WAVE PCM (Microsoft/IBM Multimedia Programming Interface and Data Specifications
    // 1.0, 1991): 8-bit samples unsigned with 128 = silence, wider samples two's complement
    // little-endian; AIFF 1.3: big-endian two's complement, 8-bit signed.
    const cases: [SampleEncoding, number[], number][] = [
      [{ sampleFormat: 'int', bytesPerSample: 1, bigEndian: false, unsigned8: true }, [0x00], -1],
      [{ sampleFormat: 'int', bytesPerSample: 1, bigEndian: false, unsigned8: true }, [0x80], 0],
      [{ sampleFormat: 'int', bytesPerSample: 1, bigEndian: false, unsigned8: true }, [0xff], 127 / 128],
      [{ sampleFormat: 'int', bytesPerSample: 1, bigEndian: true, unsigned8: false }, [0x80], -1],
      [{ sampleFormat: 'int', bytesPerSample: 2, bigEndian: false, unsigned8: false }, [0x00, 0x80], -1],
      [{ sampleFormat: 'int', bytesPerSample: 2, bigEndian: false, unsigned8: false }, [0xff, 0x7f], 32767 / 32768],
      [{ sampleFormat: 'int', bytesPerSample: 2, bigEndian: true, unsigned8: false }, [0x40, 0x00], 0.5],
      [{ sampleFormat: 'int', bytesPerSample: 3, bigEndian: false, unsigned8: false }, [0x00, 0x00, 0x80], -1],
      [{ sampleFormat: 'int', bytesPerSample: 3, bigEndian: false, unsigned8: false }, [0x01, 0x00, 0x00], 1 / 8388608],
      [{ sampleFormat: 'int', bytesPerSample: 3, bigEndian: true, unsigned8: false }, [0xff, 0xff, 0xff], -1 / 8388608],
      [{ sampleFormat: 'int', bytesPerSample: 4, bigEndian: false, unsigned8: false }, [0xff, 0xff, 0xff, 0x7f], 2147483647 / 2147483648],
      [{ sampleFormat: 'float', bytesPerSample: 4, bigEndian: false, unsigned8: false }, [0x00, 0x00, 0x80, 0xbf], -1],
      [{ sampleFormat: 'float', bytesPerSample: 4, bigEndian: true, unsigned8: false }, [0x3f, 0x00, 0x00, 0x00], 0.5],
    ];
    for (const [enc, bytes, want] of cases) {
      const out = [new Float64Array(1)];
      decodeSamples(Uint8Array.from(bytes), 0, enc, 1, 1, out);
      expect(out[0]![0], `${label(enc)} ${bytes}`).toBe(want);
    }
  });

  it('encoding rounds to nearest and clamps to the code range', () => {
    // Source: common practice (round to nearest, saturate at the most positive/negative code).
    const enc: SampleEncoding = { sampleFormat: 'int', bytesPerSample: 2, bigEndian: false, unsigned8: false };
    const x = Float64Array.from([1, -1, 1.5, -7, 0.4 / 32768, 0.6 / 32768, -0.6 / 32768, NaN]);
    const b = new Uint8Array(x.length * 2);
    encodeSamples([x], 0, x.length, enc, b, 0);
    const v = Array.from(new Int16Array(b.buffer));
    expect(v).toEqual([32767, -32768, 32767, -32768, 0, 1, -1, 0]);
  });

  it('decodes into Float32Array on request (same values, float32-exact for 16/24-bit)', () => {
    const enc: SampleEncoding = { sampleFormat: 'int', bytesPerSample: 3, bigEndian: false, unsigned8: false };
    const stored = randomStored(enc, 2000, seededRng(5), [-10, 10]);
    const f64 = [new Float64Array(1000), new Float64Array(1000)];
    const f32 = [new Float32Array(1000), new Float32Array(1000)];
    decodeSamples(stored, 0, enc, 2, 1000, f64);
    decodeSamples(stored, 0, enc, 2, 1000, f32);
    // Source: exact identity — a 24-bit code / 2^23 has at most 24 significant bits, which binary32 holds.
    expect(Array.from(f32[1]!)).toEqual(Array.from(f64[1]!));
  });

  it('NaN and ±Inf float samples read as 0 and are counted', () => {
    // Decision (documented in codec.ts and OpenedAudio.nonFiniteSamples): non-finite samples become 0.
    const enc: SampleEncoding = { sampleFormat: 'float', bytesPerSample: 4, bigEndian: false, unsigned8: false };
    const x = Float32Array.from([0.25, NaN, Infinity, -Infinity, -0.5, 3e38]);
    const bytes = new Uint8Array(x.buffer);
    const out = [new Float64Array(6)];
    expect(decodeSamples(bytes, 0, enc, 1, 6, out)).toBe(3);
    expect(Array.from(out[0]!)).toEqual([0.25, 0, 0, 0, -0.5, Math.fround(3e38)]);
    expect(countNonFinite(bytes, 0, enc, 6)).toBe(3);
    const x64 = Float64Array.from([NaN, 1, -Infinity, Number.MAX_VALUE]);
    const enc64: SampleEncoding = { ...enc, bytesPerSample: 8 };
    expect(countNonFinite(new Uint8Array(x64.buffer), 0, enc64, 4)).toBe(2);
    // Big-endian too.
    const be = new Uint8Array(8);
    new DataView(be.buffer).setFloat32(0, NaN, false);
    new DataView(be.buffer).setFloat32(4, 2, false);
    expect(countNonFinite(be, 0, { ...enc, bigEndian: true }, 2)).toBe(1);
  });
});

describe('TPDF dither', () => {
  it('±1 LSB triangular dither: mean error ≈ 0, error variance ≈ LSB²/4, independent of the signal', () => {
    // Source: Wannamaker, Lipshitz & Vanderkooy, "A Theory of Nonsubtractive Dither", IEEE Trans.
    // Signal Processing 48(2), 2000: TPDF dither of 2 LSB peak-to-peak gives total error variance
    // Δ²/12 (rounding) + Δ²/6 (dither) = Δ²/4, with mean and variance independent of the input.
    const enc: SampleEncoding = { sampleFormat: 'int', bytesPerSample: 2, bigEndian: false, unsigned8: false };
    const n = 200_000;
    const rng = seededRng(4242);
    for (const offsetLsb of [0, 0.25, 0.5]) {
      const x = new Float64Array(n);
      for (let i = 0; i < n; i++) x[i] = (1000 + offsetLsb + 0.3 * Math.sin(i * 0.001)) / 32768;
      const b = new Uint8Array(2 * n);
      encodeSamples([x], 0, n, enc, b, 0, rng);
      const q = new Int16Array(b.buffer);
      let sum = 0, sum2 = 0;
      for (let i = 0; i < n; i++) {
        const e = q[i]! - x[i]! * 32768;
        sum += e;
        sum2 += e * e;
      }
      const mean = sum / n;
      const variance = sum2 / n - mean * mean;
      // Standard errors at n = 2·10^5: mean ≈ 0.5/√n ≈ 0.0011, variance ≈ 0.0009.
      expect(Math.abs(mean), `offset ${offsetLsb}`).toBeLessThan(0.006);
      expect(variance, `offset ${offsetLsb}`).toBeGreaterThan(0.25 - 0.01);
      expect(variance, `offset ${offsetLsb}`).toBeLessThan(0.25 + 0.01);
    }
  });

  it('without dither the error is plain rounding (variance ≈ LSB²/12 on a busy signal)', () => {
    // Source: common practice — uniform quantisation error of a busy signal has variance Δ²/12.
    const enc: SampleEncoding = { sampleFormat: 'int', bytesPerSample: 2, bigEndian: false, unsigned8: false };
    const n = 100_000;
    const rng = seededRng(9);
    const x = Float64Array.from({ length: n }, () => (rng() * 2 - 1) * 0.5);
    const b = new Uint8Array(2 * n);
    encodeSamples([x], 0, n, enc, b, 0);
    const q = new Int16Array(b.buffer);
    let sum2 = 0;
    for (let i = 0; i < n; i++) sum2 += (q[i]! - x[i]! * 32768) ** 2;
    expect(sum2 / n).toBeCloseTo(1 / 12, 2);
  });

  it('is on by default only when reducing word length', () => {
    // Source: common practice — requantising to fewer bits needs dither; equal or longer words are exact.
    expect(ditherByDefault({ bitsPerSample: 24, sampleFormat: 'int' }, { bitsPerSample: 24, sampleFormat: 'int' })).toBe(false);
    expect(ditherByDefault({ bitsPerSample: 16, sampleFormat: 'int' }, { bitsPerSample: 24, sampleFormat: 'int' })).toBe(false);
    expect(ditherByDefault({ bitsPerSample: 24, sampleFormat: 'int' }, { bitsPerSample: 32, sampleFormat: 'float' })).toBe(false);
    expect(ditherByDefault({ bitsPerSample: 24, sampleFormat: 'int' }, { bitsPerSample: 16, sampleFormat: 'int' })).toBe(true);
    expect(ditherByDefault({ bitsPerSample: 32, sampleFormat: 'float' }, { bitsPerSample: 24, sampleFormat: 'int' })).toBe(true);
  });
});

describe('80-bit extended float (AIFF sample rate)', () => {
  const rates = [8000, 11025, 22050, 44100, 48000, 88200, 96000, 192000, 22254.545454545456, 1, 0.5, 352800];
  it('matches the bytes written by Python\'s aifc module and reads back exactly', () => {
    // Source: Python 3.11 standard library aifc._write_float (an independent implementation of the
    // IEEE 754 80-bit extended format used by AIFF 1.3's COMM sampleRate).
    const code = [
      'import aifc, io, sys, json',
      `rates=${JSON.stringify(rates)}`,
      'out=[]',
      'for r in rates:',
      '  f=io.BytesIO(); aifc._write_float(f, r); out.append(f.getvalue().hex())',
      'print(json.dumps(out))',
    ].join('\n');
    const r = spawnSync(ensureTool(PYTHON3), ['-W', 'ignore', '-c', code], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const want = JSON.parse(r.stdout) as string[];
    rates.forEach((rate, i) => {
      const b = new Uint8Array(10);
      writeExtended80(b, 0, rate);
      expect(Buffer.from(b).toString('hex'), `rate ${rate}`).toBe(want[i]);
      expect(readExtended80(b, 0)).toBe(rate);
    });
    // Source: AIFF 1.3 practice, 44100 Hz is stored as 40 0E AC 44 00 00 00 00 00 00 (from memory).
    const b = new Uint8Array(10);
    writeExtended80(b, 0, 44100);
    expect(Buffer.from(b).toString('hex')).toBe('400eac44000000000000');
  });
});
