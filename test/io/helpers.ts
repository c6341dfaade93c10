/** Shared helpers for the file I/O tests: temp folders, in-memory file building, stored-byte access. */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { SampleEncoding } from '../../dsp/formats/codec.ts';
import { buildWavHeader, buildWavTrailer, type WavLayoutSpec } from '../../dsp/formats/wav-writer.ts';
import { concatBytes } from '../../dsp/formats/bytes.ts';

export const FIXTURES = path.join(path.dirname(fileURLToPath(import.meta.url)), '..', 'fixtures', 'io');

export function tempDir(tag: string): string {
  return fs.mkdtempSync(path.join(os.tmpdir(), `reelwright-test-${tag}-`));
}

/**
 * Random stored bytes: any bit pattern for integers, finite values for floats with magnitudes
 * 2^lo … 2^hi (default 2^−6 … 2^2).
 */
export function randomStored(enc: SampleEncoding, samples: number, rng: () => number, [lo, hi]: [number, number] = [-6, 2]): Uint8Array {
  const b = new Uint8Array(samples * enc.bytesPerSample);
  if (enc.sampleFormat === 'int') {
    for (let i = 0; i < b.length; i++) b[i] = Math.floor(rng() * 256);
    return b;
  }
  const dv = new DataView(b.buffer);
  for (let i = 0; i < samples; i++) {
    const v = (rng() * 2 - 1) * Math.pow(2, Math.floor(rng() * (hi - lo)) + lo);
    if (enc.bytesPerSample === 4) dv.setFloat32(i * 4, v, !enc.bigEndian);
    else dv.setFloat64(i * 8, v, !enc.bigEndian);
  }
  return b;
}

/** A complete WAV file in memory from the pure builder and already-encoded sample bytes. */
export function wavFile(spec: WavLayoutSpec, stored: Uint8Array): Uint8Array {
  const frames = stored.length / (spec.format.channels * (spec.format.bitsPerSample / 8));
  const { header } = buildWavHeader(spec, stored.length, frames);
  return concatBytes([header, stored, buildWavTrailer(spec, stored.length)]);
}

/** Bytes [offset, offset+length) of a file. */
export function fileBytes(file: string, offset = 0, length?: number): Uint8Array {
  const all = fs.readFileSync(file);
  return new Uint8Array(all.buffer, all.byteOffset + offset, length ?? all.length - offset);
}

/** Names of leftover temp files in a folder. */
export function tempLeftovers(dir: string): string[] {
  return fs.readdirSync(dir).filter((n) => n.startsWith('.reelwright-tmp-'));
}

/** Byte-array equality with a fast path; on mismatch reports the first differing offset. */
export function firstDifference(a: Uint8Array, b: Uint8Array): string {
  if (a.length !== b.length) return `lengths ${a.length} and ${b.length}`;
  if (Buffer.from(a.buffer, a.byteOffset, a.length).equals(Buffer.from(b.buffer, b.byteOffset, b.length))) return 'equal';
  let i = 0;
  while (a[i] === b[i]) i++;
  return `first difference at byte ${i}: ${a[i]} vs ${b[i]}`;
}
