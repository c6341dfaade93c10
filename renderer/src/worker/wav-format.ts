/**
 * WAV / BWF / RF64 layout parsing and PCM decoding/encoding for the editor's workers.
 * Interim: the project's pure parsers in dsp/formats replace this module once they land on main;
 * the rest of the editor only uses the names exported here.
 * Layouts: RIFF/WAVE (EBU Tech 3285 for bext), RF64 (EBU Tech 3306, ds64 sizes), WAVE_FORMAT_EXTENSIBLE.
 */
import { InputError } from '../../../dsp/errors.ts';

export interface ChunkInfo {
  readonly id: string;
  /** Payload offset in the file (after the 8-byte header). */
  readonly offset: number;
  readonly size: number;
}

export interface PcmLayout {
  readonly container: 'RIFF' | 'RF64';
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly bitsPerSample: number;
  readonly sampleFormat: 'int' | 'float';
  readonly blockAlign: number;
  readonly dataOffset: number;
  readonly dataBytes: number;
  readonly frames: number;
  readonly chunks: readonly ChunkInfo[];
}

const ascii = (b: Uint8Array, at: number, n: number) => String.fromCharCode(...b.subarray(at, at + n));

/**
 * Parses the chunk list from the first bytes of a file. Returns `needBytes` when the header runs
 * past what was given (call again with at least that many bytes).
 */
export function parseWavLayout(head: Uint8Array, fileSize: number): PcmLayout | { needBytes: number } {
  const dv = new DataView(head.buffer, head.byteOffset, head.byteLength);
  if (head.length < 12) return { needBytes: 12 };
  const riff = ascii(head, 0, 4);
  if ((riff !== 'RIFF' && riff !== 'RF64' && riff !== 'BW64') || ascii(head, 8, 4) !== 'WAVE') {
    throw new InputError('not a WAV, BWF or RF64 file (no RIFF/RF64 WAVE header)', undefined, 0);
  }
  let ds64Data: number | undefined;
  let fmt: { tag: number; channels: number; rate: number; align: number; bits: number } | undefined;
  const chunks: ChunkInfo[] = [];
  let dataOffset = -1;
  let dataBytes = 0;
  let at = 12;
  while (at + 8 <= fileSize) {
    if (at + 8 > head.length) return { needBytes: at + 8 };
    const id = ascii(head, at, 4);
    let size = dv.getUint32(at + 4, true);
    if (id === 'data') {
      if (size === 0xffffffff && ds64Data !== undefined) size = ds64Data;
      dataOffset = at + 8;
      dataBytes = Math.min(size, fileSize - dataOffset);
      chunks.push({ id, offset: dataOffset, size: dataBytes });
      at = dataOffset + dataBytes + (dataBytes & 1);
      if (fmt) {
        // Chunks after the data (LIST, iXML…) are read when they fit in what was given.
        while (at + 8 <= Math.min(fileSize, head.length)) {
          const id2 = ascii(head, at, 4);
          const s2 = dv.getUint32(at + 4, true);
          chunks.push({ id: id2, offset: at + 8, size: s2 });
          at += 8 + s2 + (s2 & 1);
        }
        break;
      }
      continue;
    }
    if (at + 8 + size > head.length && (id === 'fmt ' || id === 'ds64')) return { needBytes: at + 8 + size };
    if (id === 'ds64') ds64Data = dv.getUint32(at + 8 + 8, true) + dv.getUint32(at + 8 + 12, true) * 2 ** 32;
    if (id === 'fmt ') {
      let tag = dv.getUint16(at + 8, true);
      const bits = dv.getUint16(at + 22, true);
      if (tag === 0xfffe && size >= 40) tag = dv.getUint16(at + 8 + 24, true);
      fmt = { tag, channels: dv.getUint16(at + 10, true), rate: dv.getUint32(at + 12, true), align: dv.getUint16(at + 20, true), bits };
    }
    chunks.push({ id, offset: at + 8, size });
    at += 8 + size + (size & 1);
  }
  if (!fmt) throw new InputError('no fmt chunk before the audio data', undefined, 12);
  if (dataOffset < 0) throw new InputError('no data chunk', undefined, at);
  if (fmt.tag !== 1 && fmt.tag !== 3) throw new InputError(`unsupported WAV encoding (format tag ${fmt.tag}); PCM and IEEE float are read`);
  if (fmt.channels < 1 || fmt.rate < 1 || fmt.align < 1) throw new InputError('fmt chunk has zero channels, rate or block size');
  const bits = fmt.align / fmt.channels * 8;
  return {
    container: riff === 'RIFF' ? 'RIFF' : 'RF64',
    sampleRateHz: fmt.rate,
    channelCount: fmt.channels,
    bitsPerSample: bits,
    sampleFormat: fmt.tag === 3 ? 'float' : 'int',
    blockAlign: fmt.align,
    dataOffset,
    dataBytes,
    frames: Math.floor(dataBytes / fmt.align),
    chunks,
  };
}

/** Decodes whole frames from `bytes` (starting on a frame boundary) into planar float64 at `outAt`. */
export function decodePcm(bytes: Uint8Array, layout: PcmLayout, out: Float64Array[], outAt: number): number {
  const n = layout.channelCount;
  const frames = Math.floor(bytes.length / layout.blockAlign);
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const bps = layout.blockAlign / n;
  for (let c = 0; c < n; c++) {
    const o = out[c]!;
    let p = c * bps;
    const step = layout.blockAlign;
    if (layout.sampleFormat === 'float') {
      if (bps === 4) for (let i = 0; i < frames; i++, p += step) o[outAt + i] = dv.getFloat32(p, true);
      else for (let i = 0; i < frames; i++, p += step) o[outAt + i] = dv.getFloat64(p, true);
    } else if (bps === 2) {
      for (let i = 0; i < frames; i++, p += step) o[outAt + i] = dv.getInt16(p, true) / 32768;
    } else if (bps === 3) {
      for (let i = 0; i < frames; i++, p += step) {
        const v = bytes[p]! | (bytes[p + 1]! << 8) | (bytes[p + 2]! << 16);
        o[outAt + i] = ((v << 8) >> 8) / 8388608;
      }
    } else if (bps === 4) {
      for (let i = 0; i < frames; i++, p += step) o[outAt + i] = dv.getInt32(p, true) / 2147483648;
    } else if (bps === 1) {
      for (let i = 0; i < frames; i++, p += step) o[outAt + i] = (bytes[p]! - 128) / 128;
    }
  }
  return frames;
}

/**
 * Decodes whole frames into planar float32 (the overview's fast path): typed-array views over the
 * bytes when aligned, so a 1-hour 96 kHz stereo file decodes in about a second.
 */
export function decodePcmFloat32(bytes: Uint8Array, layout: PcmLayout, out: Float32Array[]): number {
  const n = layout.channelCount;
  const frames = Math.floor(bytes.length / layout.blockAlign);
  const bps = layout.blockAlign / n;
  const aligned = (size: number) => bytes.byteOffset % size === 0;
  if (layout.sampleFormat === 'int' && bps === 2 && aligned(2)) {
    const v = new Int16Array(bytes.buffer, bytes.byteOffset, frames * n);
    const k = 1 / 32768;
    for (let c = 0; c < n; c++) { const o = out[c]!; for (let i = 0, p = c; i < frames; i++, p += n) o[i] = v[p]! * k; }
    return frames;
  }
  if (layout.sampleFormat === 'float' && bps === 4 && aligned(4)) {
    const v = new Float32Array(bytes.buffer, bytes.byteOffset, frames * n);
    for (let c = 0; c < n; c++) { const o = out[c]!; for (let i = 0, p = c; i < frames; i++, p += n) o[i] = v[p]!; }
    return frames;
  }
  if (layout.sampleFormat === 'int' && bps === 3) {
    const k = 1 / 8388608, step = layout.blockAlign;
    for (let c = 0; c < n; c++) {
      const o = out[c]!;
      for (let i = 0, p = c * 3; i < frames; i++, p += step) o[i] = ((bytes[p]! | (bytes[p + 1]! << 8) | (bytes[p + 2]! << 16)) << 8 >> 8) * k;
    }
    return frames;
  }
  const tmp = Array.from({ length: n }, () => new Float64Array(frames));
  decodePcm(bytes, layout, tmp, 0);
  for (let c = 0; c < n; c++) out[c]!.set(tmp[c]!);
  return frames;
}

export interface EncodeFormat {
  readonly bitsPerSample: 16 | 24 | 32;
  readonly sampleFormat: 'int' | 'float';
  /** TPDF dither of ±1 LSB when writing integers. */
  readonly dither: boolean;
}

/** Encodes planar float64 into interleaved little-endian PCM; `rng` feeds the dither. */
export function encodePcm(block: readonly Float64Array[], fmt: EncodeFormat, rng: () => number): Uint8Array {
  const n = block.length;
  const frames = block[0]?.length ?? 0;
  const bps = fmt.bitsPerSample / 8;
  const out = new Uint8Array(frames * n * bps);
  const dv = new DataView(out.buffer);
  if (fmt.sampleFormat === 'float') {
    for (let i = 0, p = 0; i < frames; i++) for (let c = 0; c < n; c++, p += 4) dv.setFloat32(p, block[c]![i]!, true);
    return out;
  }
  const full = 2 ** (fmt.bitsPerSample - 1);
  const lo = -full, hi = full - 1;
  for (let i = 0, p = 0; i < frames; i++) {
    for (let c = 0; c < n; c++, p += bps) {
      let v = block[c]![i]! * full;
      if (fmt.dither) v += rng() - rng();
      let q = Math.round(v);
      q = q < lo ? lo : q > hi ? hi : q;
      if (bps === 2) dv.setInt16(p, q, true);
      else if (bps === 3) { out[p] = q & 255; out[p + 1] = (q >> 8) & 255; out[p + 2] = (q >> 16) & 255; }
      else dv.setInt32(p, q, true);
    }
  }
  return out;
}

export interface HeaderSpec {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly format: EncodeFormat;
  readonly frames: number;
  /** bext payload (602 bytes + CodingHistory), or null for plain WAV. */
  readonly bext: Uint8Array | null;
  /** Other chunks to carry over before the data (id, payload). */
  readonly extra: readonly { id: string; payload: Uint8Array }[];
  readonly rf64: boolean;
}

/** Builds everything before the sample bytes: RIFF or RF64 (with ds64), fmt, bext, copied chunks, data header. */
export function buildWavHeader(spec: HeaderSpec): Uint8Array {
  const bps = spec.format.bitsPerSample / 8;
  const dataBytes = spec.frames * spec.channelCount * bps;
  const parts: Uint8Array[] = [];
  const chunk = (id: string, payload: Uint8Array) => {
    const h = new Uint8Array(8 + payload.length + (payload.length & 1));
    for (let i = 0; i < 4; i++) h[i] = id.charCodeAt(i);
    new DataView(h.buffer).setUint32(4, payload.length, true);
    h.set(payload, 8);
    parts.push(h);
  };
  const fmt = new Uint8Array(16);
  const f = new DataView(fmt.buffer);
  f.setUint16(0, spec.format.sampleFormat === 'float' ? 3 : 1, true);
  f.setUint16(2, spec.channelCount, true);
  f.setUint32(4, spec.sampleRateHz, true);
  f.setUint32(8, spec.sampleRateHz * spec.channelCount * bps, true);
  f.setUint16(12, spec.channelCount * bps, true);
  f.setUint16(14, spec.format.bitsPerSample, true);
  const ds64 = new Uint8Array(28);
  chunk(spec.rf64 ? 'ds64' : 'JUNK', ds64);
  chunk('fmt ', fmt);
  if (spec.bext) chunk('bext', spec.bext);
  for (const e of spec.extra) chunk(e.id, e.payload);
  const headLen = 12 + parts.reduce((s, p) => s + p.length, 0) + 8;
  const total = headLen + dataBytes + (dataBytes & 1);
  const out = new Uint8Array(headLen);
  const dv = new DataView(out.buffer);
  const put = (at: number, s: string) => { for (let i = 0; i < 4; i++) out[at + i] = s.charCodeAt(i); };
  put(0, spec.rf64 ? 'RF64' : 'RIFF');
  dv.setUint32(4, spec.rf64 ? 0xffffffff : total - 8, true);
  put(8, 'WAVE');
  let at = 12;
  for (const p of parts) { out.set(p, at); at += p.length; }
  put(at, 'data');
  dv.setUint32(at + 4, spec.rf64 ? 0xffffffff : dataBytes, true);
  if (spec.rf64) {
    // ds64 payload starts at 12 + 8: riffSize, dataSize, sampleCount (64-bit, low/high), tableLength 0.
    const set64 = (o: number, v: number) => { dv.setUint32(o, v % 2 ** 32, true); dv.setUint32(o + 4, Math.floor(v / 2 ** 32), true); };
    set64(20, total - 8);
    set64(28, dataBytes);
    set64(36, spec.frames);
  }
  return out;
}

/** A bext payload (EBU Tech 3285 v1 layout, 602 bytes + CodingHistory), keeping the source's fixed part when given. */
export function buildBext(sourceBext: Uint8Array | null, codingHistory: string, now: Date, description: string): Uint8Array {
  const history = new TextEncoder().encode(codingHistory);
  const out = new Uint8Array(602 + history.length);
  if (sourceBext && sourceBext.length >= 602) out.set(sourceBext.subarray(0, 602));
  else {
    const put = (at: number, n: number, s: string) => { const b = new TextEncoder().encode(s).subarray(0, n); out.set(b, at); };
    put(0, 256, description);
    put(256, 32, 'Reelwright');
    put(320, 10, now.toISOString().slice(0, 10));
    put(330, 8, now.toISOString().slice(11, 19));
    new DataView(out.buffer).setUint16(346, 1, true);
  }
  out.set(history, 602);
  return out;
}

/** The CodingHistory text already in a bext payload ('' when none). */
export function codingHistoryOf(bext: Uint8Array | null): string {
  if (!bext || bext.length <= 602) return '';
  return new TextDecoder('latin1').decode(bext.subarray(602)).replace(/\u0000+$/, '');
}
