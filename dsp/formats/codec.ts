/**
 * Sample codecs: interleaved stored samples ⇄ planar floating point, full scale ±1.
 *
 * Integer samples of a b-bit container map to value / 2^(b−1) (so the most negative code is −1
 * exactly and the most positive is 1 − 2^(1−b)); this is lossless, and encoding the decoded values
 * returns the identical bytes. Samples narrower than their container (WAVE_FORMAT_EXTENSIBLE
 * wValidBitsPerSample, AIFF sampleSize 20 in 3 bytes) are left-justified, so decoding the whole
 * container gives the same value. 8-bit WAV is unsigned (offset 128); 8-bit AIFF is signed.
 *
 * Hot loops use Int16Array/Int32Array/Float32Array/Float64Array views when the bytes are aligned
 * and the order matches the (little-endian) host, and byte arithmetic otherwise.
 */
import { BugError } from '../errors.ts';
import { HOST_LITTLE_ENDIAN } from './bytes.ts';

export type SampleFormat = 'int' | 'float';

/** How one sample is stored. */
export interface SampleEncoding {
  readonly sampleFormat: SampleFormat;
  /** Container bytes per sample: 1, 2, 3, 4 for int; 4, 8 for float. */
  readonly bytesPerSample: number;
  readonly bigEndian: boolean;
  /** 8-bit samples are unsigned with offset 128 (WAV) rather than signed (AIFF). */
  readonly unsigned8: boolean;
}

/** Planar output arrays: float64 normally, float32 on request. */
export type PlanarOut = readonly (Float64Array | Float32Array)[];

/** The encoding a WAV file of this format uses. */
export function wavEncoding(sampleFormat: SampleFormat, bitsPerSample: number): SampleEncoding {
  return { sampleFormat, bytesPerSample: bitsPerSample / 8, bigEndian: false, unsigned8: true };
}

/** Why this encoding cannot be decoded/encoded here, or undefined when it can. */
export function encodingProblem(enc: SampleEncoding): string | undefined {
  if (enc.sampleFormat === 'int' && ![1, 2, 3, 4].includes(enc.bytesPerSample)) {
    return `integer samples of ${enc.bytesPerSample * 8} bits are not supported (8, 16, 24 or 32 expected)`;
  }
  if (enc.sampleFormat === 'float' && ![4, 8].includes(enc.bytesPerSample)) {
    return `float samples of ${enc.bytesPerSample * 8} bits are not supported (32 or 64 expected)`;
  }
  return undefined;
}

const aligned = (src: Uint8Array, at: number, bytes: number) => (src.byteOffset + at) % bytes === 0;

/**
 * Decodes `frames` interleaved frames starting at byte `srcOffset` of `src` into planar `out`
 * (one array per channel) starting at `outOffset`. Non-finite float samples (NaN, ±Inf) are
 * written as 0 and counted.
 * @returns the number of non-finite samples replaced by 0 (always 0 for integer formats)
 */
export function decodeSamples(
  src: Uint8Array,
  srcOffset: number,
  enc: SampleEncoding,
  channels: number,
  frames: number,
  out: PlanarOut,
  outOffset = 0,
): number {
  const bps = enc.bytesPerSample;
  const stride = bps * channels;
  if (srcOffset + frames * stride > src.length) {
    throw new BugError(`decodeSamples: ${frames} frames at ${srcOffset} overrun ${src.length} bytes`);
  }
  const le = !enc.bigEndian;
  if (enc.sampleFormat === 'int') {
    switch (bps) {
      case 1: {
        const off = enc.unsigned8 ? 128 : 0;
        const k = 1 / 128;
        for (let c = 0; c < channels; c++) {
          const o = out[c]!;
          let j = srcOffset + c;
          if (enc.unsigned8) {
            for (let i = 0; i < frames; i++, j += stride) o[outOffset + i] = (src[j]! - off) * k;
          } else {
            for (let i = 0; i < frames; i++, j += stride) o[outOffset + i] = ((src[j]! << 24) >> 24) * k;
          }
        }
        return 0;
      }
      case 2: {
        const k = 1 / 32768;
        if (le && HOST_LITTLE_ENDIAN && aligned(src, srcOffset, 2)) {
          const v = new Int16Array(src.buffer, src.byteOffset + srcOffset, frames * channels);
          for (let c = 0; c < channels; c++) {
            const o = out[c]!;
            for (let i = 0, j = c; i < frames; i++, j += channels) o[outOffset + i] = v[j]! * k;
          }
          return 0;
        }
        const a = le ? 0 : 1, b = le ? 1 : 0;
        for (let c = 0; c < channels; c++) {
          const o = out[c]!;
          let j = srcOffset + 2 * c;
          for (let i = 0; i < frames; i++, j += stride) {
            o[outOffset + i] = (((src[j + a]! | (src[j + b]! << 8)) << 16) >> 16) * k;
          }
        }
        return 0;
      }
      case 3: {
        // The 24-bit code shifted into the top of a 32-bit int, then scaled by 2^-31.
        const k = 1 / 2147483648;
        for (let c = 0; c < channels; c++) {
          const o = out[c]!;
          let j = srcOffset + 3 * c;
          if (le) {
            for (let i = 0; i < frames; i++, j += stride) {
              o[outOffset + i] = ((src[j]! << 8) | (src[j + 1]! << 16) | (src[j + 2]! << 24)) * k;
            }
          } else {
            for (let i = 0; i < frames; i++, j += stride) {
              o[outOffset + i] = ((src[j + 2]! << 8) | (src[j + 1]! << 16) | (src[j]! << 24)) * k;
            }
          }
        }
        return 0;
      }
      case 4: {
        const k = 1 / 2147483648;
        if (le && HOST_LITTLE_ENDIAN && aligned(src, srcOffset, 4)) {
          const v = new Int32Array(src.buffer, src.byteOffset + srcOffset, frames * channels);
          for (let c = 0; c < channels; c++) {
            const o = out[c]!;
            for (let i = 0, j = c; i < frames; i++, j += channels) o[outOffset + i] = v[j]! * k;
          }
          return 0;
        }
        for (let c = 0; c < channels; c++) {
          const o = out[c]!;
          let j = srcOffset + 4 * c;
          if (le) {
            for (let i = 0; i < frames; i++, j += stride) {
              o[outOffset + i] = (src[j]! | (src[j + 1]! << 8) | (src[j + 2]! << 16) | (src[j + 3]! << 24)) * k;
            }
          } else {
            for (let i = 0; i < frames; i++, j += stride) {
              o[outOffset + i] = (src[j + 3]! | (src[j + 2]! << 8) | (src[j + 1]! << 16) | (src[j]! << 24)) * k;
            }
          }
        }
        return 0;
      }
    }
  } else if (bps === 4 || bps === 8) {
    let bad = 0;
    if (le && HOST_LITTLE_ENDIAN && aligned(src, srcOffset, bps)) {
      const v = bps === 4
        ? new Float32Array(src.buffer, src.byteOffset + srcOffset, frames * channels)
        : new Float64Array(src.buffer, src.byteOffset + srcOffset, frames * channels);
      for (let c = 0; c < channels; c++) {
        const o = out[c]!;
        for (let i = 0, j = c; i < frames; i++, j += channels) {
          const x = v[j]!;
          if (x - x === 0) o[outOffset + i] = x;
          else {
            o[outOffset + i] = 0;
            bad++;
          }
        }
      }
      return bad;
    }
    const dv = new DataView(src.buffer, src.byteOffset, src.byteLength);
    for (let c = 0; c < channels; c++) {
      const o = out[c]!;
      let j = srcOffset + bps * c;
      for (let i = 0; i < frames; i++, j += stride) {
        const x = bps === 4 ? dv.getFloat32(j, le) : dv.getFloat64(j, le);
        if (x - x === 0) o[outOffset + i] = x;
        else {
          o[outOffset + i] = 0;
          bad++;
        }
      }
    }
    return bad;
  }
  throw new BugError(encodingProblem(enc) ?? 'unsupported sample encoding');
}

/** Counts NaN/±Inf samples in stored float data without decoding (fixity/validation pass). */
export function countNonFinite(src: Uint8Array, srcOffset: number, enc: SampleEncoding, samples: number): number {
  if (enc.sampleFormat !== 'float') return 0;
  const bps = enc.bytesPerSample;
  let bad = 0;
  if (bps === 4) {
    // Exponent all ones ⇔ NaN or infinity (IEEE 754 binary32): bits 23–30.
    const hiByte = enc.bigEndian ? 0 : 3, nextByte = enc.bigEndian ? 1 : 2;
    for (let i = 0, j = srcOffset; i < samples; i++, j += 4) {
      if ((src[j + hiByte]! & 0x7f) === 0x7f && (src[j + nextByte]! & 0x80) !== 0) bad++;
    }
  } else {
    // binary64: exponent bits 52–62.
    const hiByte = enc.bigEndian ? 0 : 7, nextByte = enc.bigEndian ? 1 : 6;
    for (let i = 0, j = srcOffset; i < samples; i++, j += 8) {
      if ((src[j + hiByte]! & 0x7f) === 0x7f && (src[j + nextByte]! & 0xf0) === 0xf0) bad++;
    }
  }
  return bad;
}

/**
 * Encodes `frames` frames of planar input (starting at `inOffset` in each channel) into interleaved
 * stored samples at byte `dstOffset` of `dst`.
 *
 * Integers: round to nearest (ties to even) of x·2^(b−1) (+ TPDF dither when `rng` is given),
 * clamped to the code range. Float32: nearest binary32. NaN encodes as 0 in integer formats.
 *
 * Dither: triangular PDF spanning ±1 LSB, the sum of two independent uniform ±½ LSB values
 * (rng() − rng()), added before rounding. Source: Wannamaker, Lipshitz & Vanderkooy, "A Theory of
 * Nonsubtractive Dither", IEEE Trans. Signal Processing 48(2), 2000 — TPDF of 2 LSB peak-to-peak
 * makes the first two moments of the total error independent of the signal.
 */
export function encodeSamples(
  planar: readonly ArrayLike<number>[],
  inOffset: number,
  frames: number,
  enc: SampleEncoding,
  dst: Uint8Array,
  dstOffset = 0,
  rng?: () => number,
): void {
  const channels = planar.length;
  const bps = enc.bytesPerSample;
  const stride = bps * channels;
  if (dstOffset + frames * stride > dst.length) {
    throw new BugError(`encodeSamples: ${frames} frames at ${dstOffset} overrun ${dst.length} bytes`);
  }
  const le = !enc.bigEndian;
  if (enc.sampleFormat === 'int') {
    if (bps < 1 || bps > 4) throw new BugError(encodingProblem(enc));
    const scale = Math.pow(2, 8 * bps - 1);
    const max = scale - 1, min = -scale;
    if (le && HOST_LITTLE_ENDIAN && (bps === 2 || bps === 4) && aligned(dst, dstOffset, bps)) {
      const view = bps === 2
        ? new Int16Array(dst.buffer, dst.byteOffset + dstOffset, frames * channels)
        : new Int32Array(dst.buffer, dst.byteOffset + dstOffset, frames * channels);
      for (let c = 0; c < channels; c++) {
        const x = planar[c]!;
        for (let i = 0, j = c; i < frames; i++, j += channels) view[j] = quantize(x[inOffset + i]!, scale, min, max, rng);
      }
      return;
    }
    // Byte positions of the least … most significant byte within one stored sample.
    const b0 = le ? 0 : bps - 1, b1 = le ? 1 : bps - 2, b2 = le ? 2 : bps - 3, b3 = le ? 3 : 0;
    for (let c = 0; c < channels; c++) {
      const x = planar[c]!;
      let j = dstOffset + bps * c;
      if (bps === 1) {
        const off = enc.unsigned8 ? 128 : 256;
        for (let i = 0; i < frames; i++, j += stride) dst[j] = (quantize(x[inOffset + i]!, scale, min, max, rng) + off) & 0xff;
      } else if (bps === 2) {
        for (let i = 0; i < frames; i++, j += stride) {
          const q = quantize(x[inOffset + i]!, scale, min, max, rng);
          dst[j + b0] = q;
          dst[j + b1] = q >> 8;
        }
      } else if (bps === 3) {
        for (let i = 0; i < frames; i++, j += stride) {
          const q = quantize(x[inOffset + i]!, scale, min, max, rng);
          dst[j + b0] = q;
          dst[j + b1] = q >> 8;
          dst[j + b2] = q >> 16;
        }
      } else {
        for (let i = 0; i < frames; i++, j += stride) {
          const q = quantize(x[inOffset + i]!, scale, min, max, rng);
          dst[j + b0] = q;
          dst[j + b1] = q >> 8;
          dst[j + b2] = q >> 16;
          dst[j + b3] = q >> 24;
        }
      }
    }
    return;
  }
  if (bps !== 4 && bps !== 8) throw new BugError(encodingProblem(enc));
  if (le && HOST_LITTLE_ENDIAN && aligned(dst, dstOffset, bps)) {
    const v = bps === 4
      ? new Float32Array(dst.buffer, dst.byteOffset + dstOffset, frames * channels)
      : new Float64Array(dst.buffer, dst.byteOffset + dstOffset, frames * channels);
    for (let c = 0; c < channels; c++) {
      const x = planar[c]!;
      for (let i = 0, j = c; i < frames; i++, j += channels) v[j] = x[inOffset + i]!;
    }
    return;
  }
  const dv = new DataView(dst.buffer, dst.byteOffset, dst.byteLength);
  for (let c = 0; c < channels; c++) {
    const x = planar[c]!;
    let j = dstOffset + bps * c;
    for (let i = 0; i < frames; i++, j += stride) {
      if (bps === 4) dv.setFloat32(j, x[inOffset + i]!, le);
      else dv.setFloat64(j, x[inOffset + i]!, le);
    }
  }
}

/** 1.5 · 2^52: adding and subtracting it rounds a double of magnitude < 2^51 to the nearest integer (ties to even). */
const ROUND_MAGIC = 6755399441055744;

/** Round to nearest integer code (ties to even), with optional TPDF dither, clamped; NaN → 0. */
function quantize(x: number, scale: number, min: number, max: number, rng: (() => number) | undefined): number {
  let v = rng ? x * scale + (rng() - rng()) : x * scale;
  v = v > max ? max : v < min ? min : v;
  return (v + ROUND_MAGIC - ROUND_MAGIC) | 0;
}

/**
 * Whether TPDF dither should be on by default: only when the output is integer and has fewer bits
 * than the source (a float source counts as wider than any integer output). Writing at the same or
 * a greater word length keeps the samples exact, so dither stays off.
 */
export function ditherByDefault(
  source: { bitsPerSample: number; sampleFormat: SampleFormat },
  output: { bitsPerSample: number; sampleFormat: SampleFormat },
): boolean {
  if (output.sampleFormat === 'float') return false;
  if (source.sampleFormat === 'float') return true;
  return output.bitsPerSample < source.bitsPerSample;
}
