/** Helpers for the benches: timing, memory, and running the same work in numpy/scipy. */
import { spawnSync } from 'node:child_process';

export function timeIt(fn: () => void, minSeconds = 1): { seconds: number; runs: number } {
  fn(); // warm-up
  let runs = 0;
  const t0 = process.hrtime.bigint();
  let elapsed = 0;
  do {
    fn();
    runs++;
    elapsed = Number(process.hrtime.bigint() - t0) / 1e9;
  } while (elapsed < minSeconds);
  return { seconds: elapsed / runs, runs };
}

export async function timeAsync(fn: () => Promise<void>): Promise<number> {
  const t0 = process.hrtime.bigint();
  await fn();
  return Number(process.hrtime.bigint() - t0) / 1e9;
}

/** Runs a Python snippet that prints one JSON object; null when python3/scipy is unavailable. */
export function python(code: string): Record<string, number | string> | null {
  const r = spawnSync('python3', ['-c', code], { encoding: 'utf8', maxBuffer: 1 << 20 });
  if (r.status !== 0) {
    if (process.env.REELWRIGHT_DEBUG) process.stderr.write(r.stderr);
    return null;
  }
  try {
    return JSON.parse(r.stdout.trim().split('\n').pop()!);
  } catch {
    return null;
  }
}

export const fmt = (v: number, digits = 2) => (Number.isFinite(v) ? v.toFixed(digits) : '—');

export function line(area: string, what: string, value: string, extra = ''): void {
  process.stdout.write(`${area.padEnd(9)} ${what.padEnd(52)} ${value.padStart(14)}${extra ? '  ' + extra : ''}\n`);
}

export const mb = (bytes: number) => `${(bytes / 1048576).toFixed(0)} MB`;
