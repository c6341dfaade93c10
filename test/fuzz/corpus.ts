/**
 * The fuzzing corpus: valid files of every container Reelwright reads, made by independent
 * writers (Python's wave and aifc modules, scipy.io.wavfile, npm wavefile, the reference FLAC
 * encoder: test/fixtures/io, see make_fixtures.py) plus variants derived from them (RF64 and BW64
 * through our writer, AIFF-C float, FLAC without a total length, FLAC behind an ID3v2 tag), and
 * deterministic mutations of them. Case i of a run with seed s is always the same bytes.
 *
 * Mutations (common practice in file-format fuzzing: bit flips, "interesting" integers at field
 * offsets, truncation, insertion and deletion, splicing, and structure-aware field edits):
 * offsets are drawn mostly from the first 160 bytes, where the header fields are.
 */
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildAiffHeader } from '../../dsp/formats/aiff.ts';
import { concatBytes } from '../../dsp/formats/bytes.ts';
import { seededRng } from '../../dsp/random.ts';
import { MemorySource } from '../../dsp/source.ts';
import { writeAudio } from '../../main/io/writer.ts';

const FIXTURES = path.join(path.dirname(fileURLToPath(import.meta.url)), '..', 'fixtures', 'io');

export type Family = 'WAV' | 'BWF' | 'RF64' | 'BW64' | 'AIFF' | 'AIFF-C' | 'FLAC';

export interface Seed {
  name: string;
  family: Family;
  bytes: Uint8Array;
}

const fixture = (name: string) => new Uint8Array(fs.readFileSync(path.join(FIXTURES, name)));

/** The valid files every mutation starts from. `scratch` is a folder for the files our writer makes. */
export async function buildSeeds(scratch: string): Promise<Seed[]> {
  const seeds: Seed[] = [
    { name: 'wave_16bit.wav', family: 'WAV', bytes: fixture('wave_16bit.wav') },
    { name: 'wave_8bit.wav', family: 'WAV', bytes: fixture('wave_8bit.wav') },
    { name: 'wave_24bit.wav', family: 'WAV', bytes: fixture('wave_24bit.wav') },
    { name: 'scipy_float32.wav', family: 'WAV', bytes: fixture('scipy_float32.wav') },
    { name: 'scipy_float64.wav', family: 'WAV', bytes: fixture('scipy_float64.wav') },
    { name: 'scipy_int32.wav', family: 'WAV', bytes: fixture('scipy_int32.wav') },
    { name: 'wavefile_32float.wav', family: 'WAV', bytes: fixture('wavefile_32float.wav') },
    { name: 'chunks_bwf.wav', family: 'BWF', bytes: fixture('chunks_bwf.wav') },
    { name: 'wavefile_24bit_bwf.wav', family: 'BWF', bytes: fixture('wavefile_24bit_bwf.wav') },
    { name: 'aifc_16bit.aiff', family: 'AIFF', bytes: fixture('aifc_16bit.aiff') },
    { name: 'aifc_24bit.aiff', family: 'AIFF', bytes: fixture('aifc_24bit.aiff') },
    { name: 'aifc_8bit.aiff', family: 'AIFF', bytes: fixture('aifc_8bit.aiff') },
    { name: 'aifc_none_16bit.aifc', family: 'AIFF-C', bytes: fixture('aifc_none_16bit.aifc') },
    { name: 'aifc_sowt_16bit.aifc', family: 'AIFF-C', bytes: fixture('aifc_sowt_16bit.aifc') },
    { name: 'flac_16bit.flac', family: 'FLAC', bytes: fixture('flac_16bit.flac') },
    { name: 'flac_24bit.flac', family: 'FLAC', bytes: fixture('flac_24bit.flac') },
  ];
  // AIFF-C with 32-bit float samples (header by our builder, samples a ramp).
  const frames = 300;
  const fl32 = new Uint8Array(frames * 2 * 4);
  const dv = new DataView(fl32.buffer);
  for (let i = 0; i < frames * 2; i++) dv.setFloat32(i * 4, Math.sin(i / 7) * 0.5, false);
  seeds.push({ name: 'fl32.aifc', family: 'AIFF-C', bytes: concatBytes([buildAiffHeader({ flavour: 'fl32', channels: 2, sampleRateHz: 48000, bitsPerSample: 32, frames }), fl32]) });
  // RF64 and BW64: the BWF fixture rewritten by our writer with the RF64 container forced.
  const rf64Path = path.join(scratch, 'seed-rf64.wav');
  const src = new MemorySource([Float64Array.from({ length: 400 }, (_, i) => Math.sin(i / 9) * 0.4), Float64Array.from({ length: 400 }, (_, i) => Math.cos(i / 5) * 0.3)], 44100);
  await writeAudio(rf64Path, { sampleRateHz: 44100, channelCount: 2, blocks: src.blocks() }, { bitsPerSample: 24, sampleFormat: 'int', dither: false, forceRf64: true, overwrite: true });
  const rf64 = new Uint8Array(fs.readFileSync(rf64Path));
  fs.rmSync(rf64Path, { force: true });
  seeds.push({ name: 'rf64.wav', family: 'RF64', bytes: rf64 });
  const bw64 = rf64.slice();
  bw64.set([0x42, 0x57, 0x36, 0x34], 0); // 'BW64' (ITU-R BS.2088 uses the RF64 layout)
  seeds.push({ name: 'bw64.wav', family: 'BW64', bytes: bw64 });
  // FLAC whose STREAMINFO does not give the length (total samples 0), and FLAC behind an ID3v2 tag.
  const flac = fixture('flac_16bit.flac');
  const unknown = flac.slice();
  unknown[8 + 13] = unknown[8 + 13]! & 0xf0;
  unknown.fill(0, 8 + 14, 8 + 18);
  seeds.push({ name: 'flac_unknown_length.flac', family: 'FLAC', bytes: unknown });
  const tag = new Uint8Array(10 + 40);
  tag.set([0x49, 0x44, 0x33, 4, 0, 0, 0, 0, 0, 40]);
  seeds.push({ name: 'flac_id3.flac', family: 'FLAC', bytes: concatBytes([tag, fixture('flac_24bit.flac')]) });
  return seeds;
}

const INTERESTING_8 = [0x00, 0x01, 0x7f, 0x80, 0xfe, 0xff, 0x10, 0x20, 0x40];
const INTERESTING_32 = [0, 1, 2, 3, 4, 7, 8, 16, 0x7f, 0x80, 0xff, 0x100, 0x7fff, 0x8000, 0xffff, 0x10000, 0x7fffffff, 0x80000000, 0xfffffffe, 0xffffffff];

/** A byte offset, mostly inside the header (the first 160 bytes). */
function offset(rng: () => number, length: number): number {
  if (length === 0) return 0;
  const head = Math.min(length, 160);
  return rng() < 0.75 ? Math.floor(rng() * head) : Math.floor(rng() * length);
}

function putInt(b: Uint8Array, at: number, value: number, bytes: 1 | 2 | 4, bigEndian: boolean): void {
  for (let k = 0; k < bytes && at + k < b.length; k++) {
    const shift = 8 * (bigEndian ? bytes - 1 - k : k);
    b[at + k] = Math.floor(value / 2 ** shift) & 0xff;
  }
}

/** Chunk size fields of a RIFF or AIFF file (offsets of the 4-byte sizes), found by a walk. */
function sizeFields(b: Uint8Array): { at: number; bigEndian: boolean }[] {
  const id = (at: number) => String.fromCharCode(b[at]!, b[at + 1]!, b[at + 2]!, b[at + 3]!);
  if (b.length < 12) return [];
  const big = id(0) === 'FORM';
  const out = [{ at: 4, bigEndian: big }];
  let at = 12;
  for (let n = 0; n < 32 && at + 8 <= b.length; n++) {
    out.push({ at: at + 4, bigEndian: big });
    const size = big ? ((b[at + 4]! << 24) | (b[at + 5]! << 16) | (b[at + 6]! << 8) | b[at + 7]!) >>> 0 : (b[at + 4]! | (b[at + 5]! << 8) | (b[at + 6]! << 16) | (b[at + 7]! << 24)) >>> 0;
    at += 8 + size + (size & 1);
  }
  return out;
}

/** Offsets of FLAC frame headers (a sync code 0xFFF8/0xFFF9) in the audio. */
function flacSyncs(b: Uint8Array): number[] {
  const out: number[] = [];
  for (let i = 0; i + 1 < b.length; i++) if (b[i] === 0xff && (b[i + 1]! & 0xfe) === 0xf8) out.push(i);
  return out;
}

export interface Mutation {
  bytes: Uint8Array;
  /** What was done, for a reproduction note. */
  what: string;
}

/** Case `index` of a run with `seed`: a seed file and one to three mutations of it. */
export function mutate(seeds: readonly Seed[], seed: number, index: number): Mutation & { base: Seed } {
  const rng = seededRng((seed * 0x9e3779b1 + index * 0x85ebca77) >>> 0);
  const base = seeds[Math.floor(rng() * seeds.length)]!;
  let b: Uint8Array = base.bytes.slice();
  const what: string[] = [];
  const steps = 1 + Math.floor(rng() * rng() * 3);
  for (let s = 0; s < steps; s++) {
    const kind = Math.floor(rng() * 10);
    switch (kind) {
      case 0:
      case 1: {
        const n = 1 + Math.floor(rng() * 4);
        for (let k = 0; k < n; k++) {
          const at = offset(rng, b.length);
          const bit = Math.floor(rng() * 8);
          if (at < b.length) b[at] = b[at]! ^ (1 << bit);
          what.push(`flip bit ${bit} of byte ${at}`);
        }
        break;
      }
      case 2: {
        const at = offset(rng, b.length);
        const v = INTERESTING_8[Math.floor(rng() * INTERESTING_8.length)]!;
        if (at < b.length) b[at] = v;
        what.push(`byte ${at} = ${v}`);
        break;
      }
      case 3: {
        const at = offset(rng, b.length);
        const v = INTERESTING_32[Math.floor(rng() * INTERESTING_32.length)]!;
        const bytes = rng() < 0.5 ? 4 : 2;
        const be = rng() < 0.5;
        putInt(b, at, v, bytes, be);
        what.push(`${bytes * 8}-bit ${be ? 'BE' : 'LE'} ${v} at ${at}`);
        break;
      }
      case 4: {
        const len = rng() < 0.6 ? Math.floor(rng() * Math.min(b.length, 200)) : Math.floor(rng() * b.length);
        b = b.slice(0, len);
        what.push(`truncate to ${len}`);
        break;
      }
      case 5: {
        const at = offset(rng, b.length);
        const n = 1 + Math.floor(rng() * 64);
        const ins = Uint8Array.from({ length: n }, () => Math.floor(rng() * 256));
        b = concatBytes([b.subarray(0, at), ins, b.subarray(at)]);
        what.push(`insert ${n} bytes at ${at}`);
        break;
      }
      case 6: {
        const at = offset(rng, b.length);
        const n = 1 + Math.floor(rng() * 64);
        b = concatBytes([b.subarray(0, at), b.subarray(Math.min(b.length, at + n))]);
        what.push(`delete ${n} bytes at ${at}`);
        break;
      }
      case 7: {
        const other = seeds[Math.floor(rng() * seeds.length)]!.bytes;
        const at = offset(rng, b.length);
        const from = Math.floor(rng() * other.length);
        const n = Math.min(other.length - from, 1 + Math.floor(rng() * 256));
        b = concatBytes([b.subarray(0, at), other.subarray(from, from + n), b.subarray(Math.min(b.length, at + n))]);
        what.push(`splice ${n} bytes of another file at ${at}`);
        break;
      }
      case 8: {
        // Structure-aware: a chunk size, or a FLAC STREAMINFO / frame-header byte.
        if (base.family === 'FLAC') {
          const start = base.name.includes('id3') ? 50 : 0;
          const fields = [start + 8 + 10, start + 8 + 11, start + 8 + 12, start + 8 + 13, start + 8 + 0, start + 8 + 2, start + 8 + 7];
          const syncs = flacSyncs(b);
          const at = rng() < 0.5 || syncs.length === 0 ? fields[Math.floor(rng() * fields.length)]! : syncs[Math.floor(rng() * syncs.length)]! + 2 + Math.floor(rng() * 3);
          const v = Math.floor(rng() * 256);
          if (at < b.length) b[at] = v;
          what.push(`FLAC field byte ${at} = ${v}`);
        } else {
          const fields = sizeFields(b);
          if (fields.length === 0) break;
          const f = fields[Math.floor(rng() * fields.length)]!;
          const v = INTERESTING_32[Math.floor(rng() * INTERESTING_32.length)]!;
          putInt(b, f.at, v, 4, f.bigEndian);
          what.push(`chunk size at ${f.at} = ${v}`);
        }
        break;
      }
      default: {
        // Appended bytes (junk after the audio, a second chunk, an extra frame).
        const n = 1 + Math.floor(rng() * 128);
        b = concatBytes([b, Uint8Array.from({ length: n }, () => Math.floor(rng() * 256))]);
        what.push(`append ${n} bytes`);
      }
    }
  }
  return { base, bytes: b, what: what.join('; ') };
}
