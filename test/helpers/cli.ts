/** Shared helpers for command-line tests. */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { io, main } from '../../main/cli/index.ts';

export const repoRoot = path.resolve(new URL('../..', import.meta.url).pathname);
export const demoPath = path.join(repoRoot, 'assets/demo/thornbury-reel7.wav');

/** Runs the CLI in-process, capturing stdout and stderr. */
export async function runCli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '', err = '';
  const saved = { ...io };
  io.out = (s) => void (out += s.endsWith('\n') ? s : s + '\n');
  io.err = (s) => void (err += s.endsWith('\n') ? s : s + '\n');
  try {
    return { code: await main(argv), out, err };
  } finally {
    Object.assign(io, saved);
  }
}

/** The data chunk's bytes, found by an independent RIFF walk (not our parser). */
export function dataChunkBytes(file: string): Buffer {
  const b = readFileSync(file);
  let at = 12;
  while (at + 8 <= b.length) {
    const id = b.toString('latin1', at, at + 4);
    const size = b.readUInt32LE(at + 4);
    if (id === 'data') return b.subarray(at + 8, at + 8 + size);
    at += 8 + size + (size & 1);
  }
  throw new Error(`${file}: no data chunk`);
}
